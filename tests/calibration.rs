//! Calibrating a unit on a known-good visit (issue 10), tried on simulated real units:
//! tests/reference/field_calibration.csv holds 16 units (two of each field supply) simulated
//! by ngspice-39 (Debian package) by tests/reference/field_population.py --calibration, each
//! with a baseline visit and three later ones on other days (another mains, a warmer or
//! cooler winding, another crest, fresh meter errors): still healthy, the first capacitor 25 %
//! low (below its label's 20 % tolerance and 25 % below the baseline), or its ESR 20 times
//! the stated one. Each unit's file is tried with its winding resistance stated and left out.

mod common;
use common::field::{FieldUnit, Variant, calibration_visits, load_supply};
use railcheck::diagnose::calibrate::calibrate;
use railcheck::diagnose::{Expectation, diagnose};
use std::collections::BTreeMap;

fn width(ex: &[Expectation], reading: &str) -> f64 {
    let e = ex.iter().find(|e| e.reading == reading).unwrap();
    e.max - e.min
}

struct Counts {
    units: usize,
    healthy_right: usize,
    cap_low_first: usize,
    cap_low_first_uncalibrated: usize,
    esr_first: usize,
    narrower: usize,
    lines: Vec<String>,
}

fn run(variant: Variant) -> Counts {
    let visits = calibration_visits().unwrap();
    let mut by_unit: BTreeMap<&str, Vec<&FieldUnit>> = BTreeMap::new();
    for v in &visits {
        by_unit.entry(v.unit.as_str()).or_default().push(v);
    }
    let mut c = Counts {
        units: 0,
        healthy_right: 0,
        cap_low_first: 0,
        cap_low_first_uncalibrated: 0,
        esr_first: 0,
        narrower: 0,
        lines: Vec::new(),
    };
    for (unit, visits) in by_unit {
        let of = |name: &str| *visits.iter().find(|v| v.visit == name).unwrap();
        let supply = load_supply(&of("baseline").supply, variant).unwrap();
        let fitted = calibrate(
            &supply,
            &of("baseline").readings,
            "2026-01-10".parse().unwrap(),
        )
        .unwrap_or_else(|e| panic!("{unit} ({}): {e}", variant.label()));
        let mut calibrated = supply.clone();
        calibrated.calibration = Some(fitted.calibration.clone());
        c.units += 1;
        // The windows at the baseline's own mains: narrower for DC and ripple alike.
        let (dc0, dc1) = (width(&fitted.before, "dc_v"), width(&fitted.after, "dc_v"));
        let (pp0, pp1) = (
            width(&fitted.before, "ripple_pp_v"),
            width(&fitted.after, "ripple_pp_v"),
        );
        if dc1 < dc0 && pp1 < pp0 {
            c.narrower += 1;
        }
        let top = |s: &railcheck::Supply, name: &str| {
            diagnose(s, &of(name).readings).unwrap().hypotheses[0]
                .fault
                .key()
                .to_string()
        };
        let healthy = top(&calibrated, "later-healthy");
        let cap = top(&calibrated, "later-capacitance-low");
        let cap_before = top(&supply, "later-capacitance-low");
        let esr = top(&calibrated, "later-esr-high");
        c.healthy_right += usize::from(healthy == "healthy");
        c.cap_low_first += usize::from(cap == "capacitance-low");
        c.cap_low_first_uncalibrated += usize::from(cap_before == "capacitance-low");
        c.esr_first += usize::from(esr == "esr-high");
        c.lines.push(format!(
            "{unit:<14} {:?} dc window {dc0:.3}->{dc1:.3} V, ripple {pp0:.3}->{pp1:.3} V; \
             later healthy -> {healthy}; 25 % low -> {cap} (uncalibrated {cap_before}); \
             ESR x20 -> {esr}",
            fitted.calibration
        ));
    }
    c
}

fn check(variant: Variant) {
    let c = run(variant);
    println!("== {} ==\n{}", variant.label(), c.lines.join("\n"));
    println!(
        "windows narrower {}/{}; later healthy called healthy {}/{}; 25 % low ranked first \
         {}/{} (uncalibrated {}/{}); ESR x20 ranked first {}/{}",
        c.narrower,
        c.units,
        c.healthy_right,
        c.units,
        c.cap_low_first,
        c.units,
        c.cap_low_first_uncalibrated,
        c.units,
        c.esr_first,
        c.units
    );
    assert_eq!(c.units, 16);
    assert_eq!(c.narrower, c.units, "every calibration narrows the windows");
    assert_eq!(
        c.healthy_right, c.units,
        "a later healthy visit stays healthy"
    );
    // Without the calibration 1 of 16 is found. With it 12 of 16 with the winding left out
    // (13 stated); the others are named because the rail's two readings cannot settle them:
    // on ct_amp-101 and sr_preamp-101 an ESR of about 0.26 ohm explains the DC and the ripple
    // as well as the lost capacitance (scores 0.52 against 0.44: the ESR meter of the next
    // check settles it), and br_small-100 sits on the same edge (it turned from
    // capacitance-low to esr-high when the rail's crest and trough began to be corrected for
    // the solver's residual drift across the period); on dbl_bias-101 the doubler's other
    // capacitor was already 14 % under its label, so the top one falling to 0.75 raises the
    // rail's ripple by only 12 %, inside the window.
    assert!(
        c.cap_low_first >= 12,
        "a capacitor 25 % low ranked first on {}/{} units",
        c.cap_low_first,
        c.units
    );
    assert!(c.cap_low_first > c.cap_low_first_uncalibrated + 10);
}

#[test]
fn calibrated_on_a_baseline_with_the_winding_stated() {
    check(Variant::Stated);
}

#[test]
fn calibrated_on_a_baseline_with_the_winding_left_out() {
    check(Variant::Unstated);
}
