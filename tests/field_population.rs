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

struct Figures {
    false_alarms: (usize, usize),
    detected: (usize, usize),
    part_found: (usize, usize),
    /// Faulted units whose part named as more likely than not is the failed one; faulted
    /// units where it names another; healthy units where it names any.
    likely_part: (usize, usize, usize),
}

fn figures(variant: Variant) -> Figures {
    let units = population().unwrap();
    let t = tally(&units, variant).unwrap();
    let misses: Vec<String> = t
        .misses()
        .iter()
        .map(|o| format!("{} {} -> {}", o.unit, o.truth, o.top))
        .collect();
    let f = Figures {
        false_alarms: t.false_alarms(),
        detected: t.detected(),
        part_found: t.part_found(),
        likely_part: (
            t.likely_part_right().0,
            t.likely_part_wrong(),
            t.likely_part_on_healthy().0,
        ),
    };
    println!(
        "{}: false alarms {:?}, detected {:?}, failed part first {:?}\n{}",
        variant.label(),
        f.false_alarms,
        f.detected,
        f.part_found,
        misses.join("\n")
    );
    f
}

#[test]
fn winding_stated_few_false_alarms_and_most_faults_found() {
    let f = figures(Variant::Stated);
    let ((fa, healthy), (found, faulted)) = (f.false_alarms, f.detected);
    assert_eq!((healthy, faulted), (32, 64));
    // Target met: at most 5 % false alarms (0 of 32 now).
    assert!(fa * 20 <= healthy, "false alarms {fa}/{healthy}");
    // Target 90 %; 50 of 64 (78 %) now. Nine of the fourteen misses are capacitance-low
    // taken for ESR-high or the reverse: from the rail's DC and ripple peak to peak they
    // differ only by the DC's fall at equal ripple (about 2 % on br_small), which a winding
    // 0-30 % warm covers; both name the filter capacitor, and the next check (an ESR meter)
    // tells them apart. With that pair counted as one part, 59 of 64 (92 %).
    assert!(found >= 50, "detected {found}/{faulted}");
    assert!(f.part_found.0 >= 59, "failed part first {:?}", f.part_found);
    // The likeliest fault's part named when its faults together hold more than half the
    // belief (a capacitor's ESR and capacitance nearly tied): right on 56 of 64, a good part
    // named on 1 faulted unit and on no healthy one. When railcheck names a part, it is the
    // failed one 56 times in 57.
    let (right, wrong, on_healthy) = f.likely_part;
    assert!(
        right >= 56 && wrong <= 1 && on_healthy == 0,
        "{:?}",
        f.likely_part
    );
}

#[test]
fn winding_left_out_few_false_alarms_and_most_faults_found() {
    let f = figures(Variant::Unstated);
    let ((fa, healthy), (found, faulted)) = (f.false_alarms, f.detected);
    assert_eq!((healthy, faulted), (32, 64));
    // Target met: at most 10 % false alarms (0 of 32 now, against 27 of 32 when a winding
    // left out was taken as ideal).
    assert!(fa * 10 <= healthy, "false alarms {fa}/{healthy}");
    // Target 80 %; 42 of 64 (66 %) now, against 29 when a winding left out was ideal. A
    // mains 13-20 % low and never read looks, from the rail, like a mains at its -10 % with
    // a winding at the soft end of its assumed range (8 of 11 mains-low units are called
    // healthy or suspect-healthy; the next check reads the mains), and a heavy load is hard
    // to tell from a worn capacitor when the winding's drop is unknown.
    assert!(found >= 42, "detected {found}/{faulted}");
    assert!(f.part_found.0 >= 46, "failed part first {:?}", f.part_found);
    // Left out it names a part less often, and still rightly: right on 37 of 64, a good
    // part on 1 faulted unit, on no healthy one.
    let (right, wrong, on_healthy) = f.likely_part;
    assert!(
        right >= 37 && wrong <= 1 && on_healthy == 0,
        "{:?}",
        f.likely_part
    );
}

/// The likely-part rule (the top fault's part, named past half the belief) and the misfit's
/// margins were chosen while looking at the population above. On 96 more units drawn from the
/// same recipe with another seed (tests/reference/field_population_holdout.csv, ngspice-39),
/// which none of them was chosen on, the false alarms stay within the targets (5 %
/// stated, 10 % left out) and a part named is the failed one at least 9 times in 10, and is
/// never named on more than one healthy unit in 32.
#[test]
fn held_out_units_keep_the_false_alarms_and_the_likely_part_honest() {
    let units = common::field::holdout().unwrap();
    assert_eq!(units.len(), 96);
    for variant in Variant::BOTH {
        let t = tally(&units, variant).unwrap();
        let (fa, healthy) = t.false_alarms();
        let (found, faulted) = t.detected();
        let (right, _) = t.likely_part_right();
        let wrong = t.likely_part_wrong();
        let (on_healthy, _) = t.likely_part_on_healthy();
        println!(
            "held out, {}: false alarms {fa}/{healthy}, detected {found}/{faulted}, failed \
             part first {:?}, likely part right {right}, wrong {wrong}, on healthy {on_healthy}",
            variant.label(),
            t.part_found()
        );
        let limit = match variant {
            Variant::Stated => healthy / 20,
            Variant::Unstated => healthy / 10,
        };
        assert!(
            fa <= limit,
            "{}: false alarms {fa}/{healthy}",
            variant.label()
        );
        assert!(
            10 * wrong <= right + wrong && on_healthy <= 1,
            "{}: likely part right {right}, wrong {wrong}, on healthy {on_healthy}",
            variant.label()
        );
    }
}
