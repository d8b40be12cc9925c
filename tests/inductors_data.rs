//! The stored ngspice references for supplies with inductors (issue 12,
//! tests/reference/ngspice_inductors.csv, written by tests/reference/inductors.py from Debian's
//! ngspice) are what the script says they are: these checks guard the CSV against a hand edit
//! or a run that had not reached steady state. They read only the CSV; railcheck's own solves
//! against it come with the inductor model.

use std::collections::BTreeMap;

const CSV: &str = include_str!("reference/ngspice_inductors.csv");

struct Row {
    name: String,
    cells: BTreeMap<String, Option<f64>>,
}

impl Row {
    fn get(&self, key: &str) -> f64 {
        self.cells[key].unwrap_or_else(|| panic!("{}: {key} is empty", self.name))
    }
}

fn rows() -> Vec<Row> {
    let mut lines = CSV.lines();
    let version = lines.next().expect("a version line");
    assert!(
        version.starts_with("# ngspice-"),
        "first line names the ngspice version: {version}"
    );
    let header: Vec<&str> = lines.next().expect("a header").split(',').collect();
    assert_eq!(header[0], "case");
    lines
        .map(|line| {
            let cells: Vec<&str> = line.split(',').collect();
            assert_eq!(cells.len(), header.len(), "{line}");
            Row {
                name: cells[0].to_string(),
                cells: header[1..]
                    .iter()
                    .zip(&cells[1..])
                    .map(|(k, v)| {
                        let value = (!v.is_empty()).then(|| {
                            v.parse::<f64>()
                                .unwrap_or_else(|_| panic!("{}: {k} = {v:?}", cells[0]))
                        });
                        (k.to_string(), value)
                    })
                    .collect(),
            }
        })
        .collect()
}

/// The mains frequency, from the case's name (every name carries _50 or _60).
fn line_hz(name: &str) -> f64 {
    if name.contains("_50") {
        50.0
    } else if name.contains("_60") {
        60.0
    } else {
        panic!("{name}: no line frequency in the name")
    }
}

/// One diode path delivers the load's whole charge (half-wave, doubler's top capacitor) or half
/// of it (full wave).
fn single_path(name: &str) -> bool {
    name.contains("_hw_") || name.contains("_dbl_")
}

#[test]
fn at_least_14_cases_of_each_kind_the_issue_asks() {
    let rows = rows();
    assert!(rows.len() >= 14, "{} cases", rows.len());
    let count = |prefix: &str| rows.iter().filter(|r| r.name.starts_with(prefix)).count();
    assert!(count("lc_") >= 4 && count("clc_") >= 3 && count("leak_") >= 5);
    let above = rows.iter().filter(|r| r.name.ends_with("_above")).count();
    let below = rows.iter().filter(|r| r.name.ends_with("_below")).count();
    assert!(
        above >= 2 && below >= 2,
        "{above} above, {below} below critical"
    );
    for kind in ["_br_", "_ct_", "_hw_", "_dbl_"] {
        assert!(
            rows.iter()
                .any(|r| r.name.starts_with("leak_") && r.name.contains(kind)),
            "no leakage case of {kind}"
        );
    }
}

#[test]
fn choke_columns_exactly_for_supplies_with_a_choke() {
    for r in rows() {
        let choke = r.name.starts_with("lc_") || r.name.starts_with("clc_");
        for key in ["choke_rms_a", "choke_peak_a", "choke_dc_drop_v"] {
            assert_eq!(r.cells[key].is_some(), choke, "{}: {key}", r.name);
        }
        if choke {
            // The choke carries the load's whole DC, so its RMS and peak are at least that.
            assert!(
                r.get("choke_rms_a") >= r.get("load_a") * 0.999,
                "{}",
                r.name
            );
            assert!(r.get("choke_peak_a") >= r.get("choke_rms_a"), "{}", r.name);
            assert!(r.get("choke_dc_drop_v") > 0.0, "{}", r.name);
        }
    }
}

#[test]
fn every_period_is_in_steady_state_by_charge_balance() {
    // In steady state the capacitors gain no charge over a period, so the diodes deliver the
    // load's average current (Kirchhoff's current law averaged over the period): on full wave
    // each of the two paths half of it. 0.2 % allows the trapezoid averages of ngspice's points.
    for r in rows() {
        let share = if single_path(&r.name) { 1.0 } else { 0.5 };
        let expected = share * r.get("load_a");
        let avg = r.get("diode_avg_a");
        assert!(
            (avg - expected).abs() <= 2e-3 * expected,
            "{}: diodes deliver {avg} A a path, the load takes {expected} A",
            r.name
        );
    }
}

#[test]
fn figures_are_ordered_as_waveforms_must_be() {
    for r in rows() {
        let n = &r.name;
        let (dc, max, min) = (r.get("dc_v"), r.get("max_v"), r.get("min_v"));
        assert!(min <= dc && dc <= max, "{n}");
        assert!(
            (r.get("ripple_pp_v") - (max - min)).abs() <= 1e-5 * max,
            "{n}"
        );
        // The RMS of a waveform's AC part cannot exceed half its peak to peak.
        assert!(
            r.get("ripple_rms_v") <= 0.5 * r.get("ripple_pp_v") * 1.0001,
            "{n}"
        );
        assert!(r.get("diode_avg_a") <= r.get("diode_rms_a"), "{n}");
        assert!(r.get("diode_rms_a") <= r.get("diode_peak_a"), "{n}");
        let deg = r.get("conduction_deg");
        assert!(deg > 0.0 && deg < 360.0, "{n}: {deg}");
    }
}

#[test]
fn conduction_above_and_below_critical_inductance() {
    // Standard choke-input behaviour (the critical inductance R_load / (3 w), from memory, as
    // in tests/reference/inductors.py): above it the choke's current never stops and each
    // diode of a full-wave rectifier carries it for half a period (180 degrees; a little more
    // where both pairs share it near the zero crossing); below it the current stops each cycle.
    for r in rows() {
        let deg = r.get("conduction_deg");
        if r.name.ends_with("_above") {
            assert!((179.0..=190.0).contains(&deg), "{}: {deg} degrees", r.name);
        } else if r.name.ends_with("_below") {
            assert!(deg < 170.0, "{}: {deg} degrees", r.name);
        } else {
            // Capacitor input (also the CLC's first capacitor): short pulses.
            assert!(deg < 150.0, "{}: {deg} degrees", r.name);
        }
    }
}

#[test]
fn ripple_frequency_is_twice_the_line_except_on_half_wave() {
    // Common practice: a full-wave rectifier's ripple is at twice the line frequency, a
    // half-wave rectifier's at the line frequency; the full-wave doubler's rail (two
    // capacitors in series, charged on alternate half cycles) gets a pulse every half period,
    // so twice the line too (as generate.py's doubler references show).
    for r in rows() {
        let f = line_hz(&r.name);
        let expected = if r.name.contains("_hw_") { f } else { 2.0 * f };
        assert_eq!(r.get("ripple_hz"), expected, "{}", r.name);
    }
}
