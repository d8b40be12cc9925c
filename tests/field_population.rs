//! The diagnosis on simulated real units (tests/reference/field_population.csv, from ngspice
//! by tests/reference/field_population.py): 96 units on 8 supplies, each real circuit drawn
//! away from its file as real units are (flat-topped mains, a warm winding, leakage
//! inductance, parts within tolerance, meter error), each file tried with its winding
//! resistance stated and left out.
//!
//! The targets of issue 10 are at most 5 % false alarms and at least 90 % detection with the
//! winding stated, at most 10 % and at least 80 % with it left out. The bounds below are what
//! the engine reaches now, as a floor against regressions; where they fall short of the
//! target, the gap is named (the issue stays open for it).

mod common;
use common::field::{Variant, population, tally};

fn figures(variant: Variant) -> ((usize, usize), (usize, usize), String) {
    let units = population().unwrap();
    let t = tally(&units, variant).unwrap();
    let misses: Vec<String> = t
        .misses()
        .iter()
        .map(|o| format!("{} {} -> {}", o.unit, o.truth, o.top))
        .collect();
    (t.false_alarms(), t.detected(), misses.join("\n"))
}

#[test]
fn winding_stated_few_false_alarms_and_most_faults_found() {
    let ((fa, healthy), (found, faulted), misses) = figures(Variant::Stated);
    println!("stated: false alarms {fa}/{healthy}, detected {found}/{faulted}\n{misses}");
    assert_eq!((healthy, faulted), (32, 64));
    // Target met: at most 5 % false alarms (0 of 32 now).
    assert!(fa * 20 <= healthy, "false alarms {fa}/{healthy}");
    // Target 90 %; 47 of 64 (73 %) now: capacitance-low and ESR-high are told apart only by
    // the ripple's shape, and the doubler's and CRC's one-capacitor faults have no fault
    // model of their own yet.
    assert!(found >= 50, "detected {found}/{faulted}");
}

#[test]
fn winding_left_out_few_false_alarms_and_most_faults_found() {
    let ((fa, healthy), (found, faulted), misses) = figures(Variant::Unstated);
    println!("left out: false alarms {fa}/{healthy}, detected {found}/{faulted}\n{misses}");
    assert_eq!((healthy, faulted), (32, 64));
    // Target met: at most 10 % false alarms (0 of 32 now, against 27 of 32 when a winding
    // left out was taken as ideal).
    assert!(fa * 10 <= healthy, "false alarms {fa}/{healthy}");
    // Target 80 %; 39 of 64 (61 %) now, against 29 when a winding left out was ideal: with
    // the winding's range as wide as a soft transformer's, a heavy load or a low mains is
    // harder to tell from a healthy unit.
    assert!(found >= 42, "detected {found}/{faulted}");
}
