//! The stored field population (issue 10) is what tests/reference/field_population.py says it
//! draws: these checks guard the CSV and the supply files against a hand edit or a generator
//! that drifted from its own description, and the held-out population (the same recipe with
//! another seed, tests/reference/field_population_holdout.csv) alike. The diagnosis' counts over
//! the population are printed by `cargo run --release --example field_population`.

#[path = "common/field.rs"]
mod field;

use field::{FieldUnit, Variant};
use std::collections::BTreeMap;

const FAULTS: [&str; 6] = [
    "capacitance-low",
    "esr-high",
    "rectifier-leg-open",
    "capacitor-open",
    "load-heavy",
    "mains-low",
];

/// The population and the held-out one (the same recipe, another seed): both must be what
/// the recipe says.
fn populations() -> [Vec<FieldUnit>; 2] {
    [
        field::population().expect("the stored population parses"),
        field::holdout().expect("the stored held-out population parses"),
    ]
}

#[test]
fn at_least_80_units_on_6_supplies_healthy_and_every_fault_kind() {
    for units in populations() {
        assert!(units.len() >= 80, "{} units", units.len());
        let mut per_supply: BTreeMap<&str, (usize, usize)> = BTreeMap::new();
        for u in &units {
            let e = per_supply.entry(u.supply.as_str()).or_default();
            if u.condition == "healthy" {
                e.0 += 1;
            } else {
                e.1 += 1;
            }
        }
        assert!(per_supply.len() >= 6, "{per_supply:?}");
        for (name, (healthy, faulted)) in &per_supply {
            assert_eq!((*healthy, *faulted), (4, 8), "{name}");
        }
        for fault in FAULTS {
            let n = units.iter().filter(|u| u.condition == fault).count();
            // Spread evenly: 64 faulted units over six kinds is 10 or 11 each.
            assert!((10..=11).contains(&n), "{fault}: {n} units");
        }
        let kinds: Vec<_> = units
            .iter()
            .filter(|u| u.condition != "healthy" && !FAULTS.contains(&u.condition.as_str()))
            .map(|u| &u.condition)
            .collect();
        assert!(kinds.is_empty(), "unknown conditions {kinds:?}");
    }
}

#[test]
fn every_supply_file_loads_in_both_variants_without_crest_and_unstated_lacks_ohms() {
    for units in populations() {
        let mut names: Vec<&str> = units.iter().map(|u| u.supply.as_str()).collect();
        names.dedup();
        for name in names {
            let stated = field::load_supply(name, Variant::Stated).expect("stated file");
            let unstated = field::load_supply(name, Variant::Unstated).expect("unstated file");
            let text = |v: Variant| {
                std::fs::read_to_string(format!("{}/{}", field::FIELD_DIR, v.file_name(name)))
                    .expect("file")
            };
            let has_key = |text: &str, key: &str| {
                text.lines()
                    .any(|l| l.split('=').next().map(str::trim) == Some(key))
            };
            // The mains' shape is unknown in the field: neither file states a crest.
            assert!(!has_key(&text(Variant::Stated), "crest"), "{name}");
            assert!(!has_key(&text(Variant::Unstated), "crest"), "{name}");
            assert!(
                !has_key(&text(Variant::Unstated), "secondary_ohms"),
                "{name}"
            );
            assert!(!has_key(&text(Variant::Unstated), "primary_ohms"), "{name}");
            assert_eq!(stated.mains.crest, unstated.mains.crest, "{name}");
            assert!(
                stated.transformer.secondary_ohms.unwrap_or(0.0) > 0.0,
                "{name}"
            );
            assert_eq!(unstated.transformer.secondary_ohms, None, "{name}");
            assert_eq!(unstated.transformer.primary_ohms, None, "{name}");
            assert_eq!(
                stated.transformer.ratio, unstated.transformer.ratio,
                "{name}"
            );
        }
    }
}

#[test]
fn each_unit_is_drawn_within_the_issues_ranges() {
    for u in populations().into_iter().flatten() {
        let id = &u.unit;
        // The issue's ranges (issue 10), as the generator documents them.
        assert!(
            (1.34..=1.4143).contains(&u.real.crest),
            "{id} crest {}",
            u.real.crest
        );
        assert!((1.0..=1.3).contains(&u.real.winding_factor), "{id}");
        assert!(u.real.leakage_h > 0.0, "{id}");
        assert!((0.8..=1.2).contains(&u.real.cap_factor), "{id}");
        if let Some(c2) = u.real.cap2_factor {
            assert!((0.8..=1.2).contains(&c2), "{id}");
        }
        assert!((0.95..=1.05).contains(&u.real.load_factor), "{id}");
        assert!((0.5..=2.0).contains(&u.real.is_factor), "{id}");
        let supply = field::load_supply(&u.supply, Variant::Stated).expect("file");
        let mains = u.real.mains_vrms / supply.mains.vrms;
        let r = &u.readings;
        match u.condition.as_str() {
            "mains-low" => {
                assert!((0.80..=0.87).contains(&mains), "{id} mains {mains}");
                assert_eq!(r.mains_vrms, None, "{id}: mains-low units leave it unread");
            }
            _ => assert!((0.94..=1.06).contains(&mains), "{id} mains {mains}"),
        }
        if let Some(read) = r.mains_vrms {
            // The mains meter's error, +-0.5 %.
            assert!(
                (read / u.real.mains_vrms - 1.0).abs() <= 0.005 + 1e-6,
                "{id}"
            );
        }
        let x = u.real.fault_param;
        match u.condition.as_str() {
            "capacitance-low" => assert!((0.3..=0.6).contains(&x.expect("factor")), "{id}"),
            "load-heavy" => assert!((1.5..=2.5).contains(&x.expect("factor")), "{id}"),
            "esr-high" => {
                let esr = x.expect("ohms");
                let stated = supply.filter.esr_ohms;
                let ok = if stated > 0.0 {
                    (10.0 * stated..=40.0 * stated).contains(&esr)
                } else {
                    (0.5..=3.0).contains(&esr)
                };
                assert!(ok, "{id} esr {esr}");
            }
            // The stored factor is the true mains over nominal (both to 6 figures).
            "mains-low" => assert!((x.expect("factor") - mains).abs() < 1e-5, "{id}"),
            _ => assert_eq!(x, None, "{id}"),
        }
        // One leg open on a full-wave rail leaves ripple at the line frequency; every healthy
        // full-wave rail ripples at twice it (textbook).
        let line = supply.mains.hz;
        let full_wave = supply.rectifier.topology != railcheck::supply::Topology::HalfWave;
        let hz = r.ripple_hz.expect("ripple frequency");
        let expect = match (u.condition.as_str(), full_wave) {
            ("rectifier-leg-open", _) | (_, false) => line,
            ("healthy", true) => 2.0 * line,
            _ => hz,
        };
        assert_eq!(hz, expect, "{id}");
    }
}

#[test]
fn the_mains_is_read_in_about_half_the_units() {
    for units in populations() {
        let read = units
            .iter()
            .filter(|u| u.readings.mains_vrms.is_some())
            .count();
        let eligible = units.iter().filter(|u| u.condition != "mains-low").count();
        // Every other unit is read, never a mains-low one.
        assert!(
            2 * read >= eligible - 8 && 2 * read <= eligible + 8,
            "{read} of {eligible}"
        );
    }
}

/// railcheck's engine, given each unit's real circuit (flat-topped mains, warm winding, leakage
/// inductance, junction spread, parts off their labels, the fault), against the readings
/// ngspice-39 gave for it (tests/reference/field_population*.csv): the DC within the recipe's
/// meter error (+-0.3 %) and the ripple peak to peak within the scope's (+-3 %), each plus a
/// tenth of a percent for the engine's own error against ngspice. The diagnosis works in the
/// engine's world; this is what carries its judgement over to units that are not their file.
/// The exception is named: a split rail's fault on the measured rail alone that changes what
/// the primary carries (a heavy load, one diode open, its capacitor open), which the engine,
/// its rails matched, solves as on both: through the shared primary it reads that rail up to
/// 1.7 % off ngspice. Both stored populations are held to it.
#[test]
fn the_engine_reproduces_every_real_unit_within_its_meters_error() {
    let mut report = Vec::new();
    let mut failures = Vec::new();
    for u in populations().into_iter().flatten() {
        let s = field::load_supply(&u.supply, Variant::Stated).expect("supply file");
        let f = field::solve_real(&s, &u.condition, &u.real)
            .unwrap_or_else(|e| panic!("{}: {e}", u.unit));
        let dc = 100.0 * (u.readings.dc_v.expect("dc") / f.dc_v - 1.0);
        let pp = 100.0 * (u.readings.ripple_pp_v.expect("ripple") / f.ripple_pp_v - 1.0);
        let hz = u.readings.ripple_hz.expect("ripple_hz");
        report.push(format!("{} {dc:+.3} % {pp:+.2} %", u.unit));
        let one_rail = u.supply == "sr_preamp"
            && matches!(
                u.condition.as_str(),
                "load-heavy" | "rectifier-leg-open" | "capacitor-open"
            );
        let dc_limit = if one_rail { 2.0 } else { 0.4 };
        if dc.abs() > dc_limit || pp.abs() > 3.1 || (f.ripple_hz - hz).abs() > 0.1 * hz {
            failures.push(format!(
                "{} ({}): DC {dc:+.3} %, ripple {pp:+.2} %, {} Hz against {hz} Hz",
                u.unit, u.condition, f.ripple_hz
            ));
        }
    }
    println!("{}", report.join("\n"));
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
