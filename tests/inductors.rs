//! Supplies with inductors against ngspice (Debian package `ngspice`, version in the CSV's
//! first line): choke-input (LC) filters above and below their critical inductance, CLC pi
//! filters, and capacitor-input supplies with transformer leakage, solved by ngspice from its
//! own parts (tests/reference/inductors.py) and stored in tests/reference/ngspice_inductors.csv.
//! This test reads only the stored CSV and the case files under tests/reference/inductors/.
//!
//! Tolerances (issue 12): DC, min and max within 0.5 %; ripple peak-peak within 2 %; RMS
//! currents within 2 %; peaks within 2 %.
//!
//! One known gap, kept visible: the diode's reverse peak where a path's inductance stops its
//! current. ngspice's circuit has no capacitance at the diodes (no junction or winding
//! capacitance), so at each turn-off the inductor's current is cut by the exponential law
//! alone and the node swings past the quasi-static reverse voltage the engine reports: up to
//! 13 % more in four cases (a choke input below critical, three capacitor inputs with
//! leakage). A real unit rings there through its capacitances instead. Those four are held to
//! 15 % and listed in the README's limits; the other eleven to 2 %.

mod common;
use railcheck::{Conditions, Figures, Supply, solve};
use std::path::Path;

fn supply(case: &str) -> Supply {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference/inductors")
        .join(format!("{case}.toml"));
    Supply::from_toml_str(&std::fs::read_to_string(&path).unwrap())
        .unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

fn engine(case: &str) -> Figures {
    solve(&supply(case), &Conditions::default())
        .unwrap_or_else(|e| panic!("{case}: {e}"))
        .figures
}

#[test]
fn inductor_supplies_match_ngspice() {
    let cases = common::reference_csv("ngspice_inductors.csv");
    assert!(cases.len() >= 14, "issue 12 asks for at least 14 supplies");
    let checks: [(&str, f64); 14] = [
        ("dc_v", 0.005),
        ("min_v", 0.005),
        ("max_v", 0.005),
        ("ripple_pp_v", 0.02),
        ("ripple_rms_v", 0.02),
        ("diode_rms_a", 0.02),
        ("winding_rms_a", 0.02),
        ("cap_ripple_rms_a", 0.02),
        ("choke_rms_a", 0.02),
        ("diode_peak_a", 0.02),
        ("choke_peak_a", 0.02),
        ("diode_avg_a", 0.005),
        ("choke_dc_drop_v", 0.005),
        ("diode_piv_v", 0.02),
    ];
    // The turn-off swing ngspice shows without capacitance (see the top of this file).
    let swings = [
        "lc_br_60_below",
        "leak_ct_60",
        "leak_hw_50",
        "leak_ct_50_light",
    ];
    let mut compared = common::Comparison::default();
    for (case, want) in &cases {
        let got = serde_json::to_value(engine(case)).unwrap();
        for (key, tol) in checks {
            let Some(&w) = want.get(key) else { continue };
            // The script's capacitor current is the output capacitor's: a CLC's second.
            let engine_key = if key == "cap_ripple_rms_a" && !got["out_cap_ripple_rms_a"].is_null()
            {
                "out_cap_ripple_rms_a"
            } else {
                key
            };
            let tol = if key == "diode_piv_v" && swings.contains(&case.as_str()) {
                0.15
            } else {
                tol
            };
            let g = got[engine_key]
                .as_f64()
                .unwrap_or_else(|| panic!("{case}: {key} missing from the engine's figures"));
            compared.figure(case, key, g, w, tol);
        }
        let hz = got["ripple_hz"].as_f64().unwrap();
        if (hz - want["ripple_hz"]).abs() > 0.5 {
            compared.fail(format!(
                "{case} ripple_hz: engine {hz}, ngspice {}",
                want["ripple_hz"]
            ));
        }
    }
    compared.finish();
}

/// The textbook choke-input relations (derived from the Fourier series of the full-wave
/// rectified sine, as in the standard electronics texts' chapter on rectifier filters, e.g.
/// Millman and Halkias): above critical inductance the choke passes the wave's average,
/// DC = 0.900 V_rms less the resistive and diode drops; the L section passes the 2w term,
/// RMS (sqrt 2 / 3) of the average, divided by (2w)^2 L C - 1.
#[test]
fn choke_input_above_critical_follows_the_textbook() {
    let s = supply("lc_br_50_above");
    let f = engine("lc_br_50_above");
    // The case: 230 V : 30 V bridge, winding 0.5 ohm plus 15 ohm primary over the ratio
    // squared, a 0.2 H 2 ohm choke, 2200 uF, 47 ohm.
    let ratio = 230.0 / 30.0;
    let winding = 0.5 + 15.0 / (ratio * ratio);
    // The silicon preset's law (27 degC): n Vt ln(1 + I / IS) + I RS.
    let vd = |i: f64| 1.8 * 0.025852 * (i / 7e-9f64).ln_1p() + 0.034 * i;
    let mut dc = 0.9 * 30.0;
    for _ in 0..50 {
        let i = dc / 47.0;
        dc = 0.9 * 30.0 - i * (winding + 2.0) - 2.0 * vd(i);
    }
    let err = (f.dc_v - dc).abs() / dc;
    println!("choke input DC: engine {:.4}, textbook {dc:.4} V", f.dc_v);
    assert!(err < 0.005, "engine {} against {dc}", f.dc_v);
    let omega = std::f64::consts::TAU * s.mains.hz;
    let lc = (2.0 * omega).powi(2) * 0.2 * 2200e-6;
    let ripple = (2.0f64.sqrt() / 3.0) * 0.9 * 30.0 / (lc - 1.0);
    println!(
        "L-section ripple RMS: engine {:.5}, textbook {ripple:.5} V",
        f.ripple_rms_v
    );
    assert!((f.ripple_rms_v - ripple).abs() / ripple < 0.03);
}

/// Above the critical inductance (L_crit = R / 3w) each diode of a choke-input full-wave
/// rectifier carries the choke's current for its whole half cycle; below it the current stops
/// each cycle and the rail rises above the rectified average towards the peak (the textbook
/// relation the check `choke-critical` rests on).
#[test]
fn below_critical_the_current_stops_and_the_rail_rises() {
    use railcheck::analysis::choke;
    for case in ["lc_br_50_above", "lc_ct_50_above", "lc_ct_60_above"] {
        let s = supply(case);
        let c = choke::critical(&s, engine(case).dc_v).unwrap();
        assert!(c.henries > c.critical_henries, "{case}");
        assert!(engine(case).conduction_deg > 179.0, "{case}");
    }
    for case in ["lc_br_60_below", "lc_ct_50_below"] {
        let s = supply(case);
        let f = engine(case);
        let c = choke::critical(&s, f.dc_v).unwrap();
        assert!(c.henries < c.critical_henries, "{case}");
        assert!(f.conduction_deg < 170.0, "{case}: {}", f.conduction_deg);
        // Above the 0.9 V_rms (of what the rectifier sees) the drops would leave.
        let w = s.winding().unwrap();
        let seen = s.mains.vrms / w.ratio * s.rectifier.topology.peak_share();
        assert!(
            f.dc_v > 0.9 * seen,
            "{case}: {} against {}",
            f.dc_v,
            0.9 * seen
        );
        let report = railcheck::report::build_default(s, case).unwrap();
        let check = report
            .checks
            .iter()
            .find(|c| c.id == "choke-critical")
            .unwrap();
        assert_eq!(
            check.status,
            railcheck::analysis::checks::Status::Warn,
            "{case}"
        );
    }
}

/// The pi section's textbook estimate: the first capacitor's sawtooth of I_dc / (2 f C1) has a
/// 2w component of RMS sqrt 2 I_dc X_C1, which the L-C2 section divides by X_L / X_C2 - 1 (all
/// reactances at 2w). It holds where the first capacitor's ripple is that sawtooth, the
/// valve-era cases with their long discharge: the engine within 12 % of it (ngspice is 8-9 %
/// under it there too; the sawtooth is an approximation of the real wave).
#[test]
fn the_pi_section_follows_its_textbook_estimate_on_valve_era_supplies() {
    for case in ["clc_ct_valve_50", "clc_ct_valve_60_r"] {
        let s = supply(case);
        let f = engine(case);
        let w2 = 2.0 * std::f64::consts::TAU * s.mains.hz;
        let x_c1 = 1.0 / (w2 * s.filter.uf.unwrap() * 1e-6);
        let x_c2 = 1.0 / (w2 * s.filter.second_uf.unwrap() * 1e-6);
        let x_l = w2 * s.filter.choke_h.unwrap();
        let estimate = 2.0f64.sqrt() * f.load_a * x_c1 / (x_l / x_c2 - 1.0);
        println!(
            "{case}: engine {:.5} V RMS, pi estimate {estimate:.5}",
            f.ripple_rms_v
        );
        assert!(
            (f.ripple_rms_v - estimate).abs() / estimate < 0.12,
            "{case}"
        );
    }
}

/// The leakage from a nameplate's percent impedance and from a short-circuit test
/// (arithmetic: Z = pct V^2 / VA, X = sqrt(Z^2 - R^2); X = sqrt((V/I)^2 - (W/I^2)^2) on the
/// primary, over the ratio squared).
#[test]
fn leakage_from_the_impedance_and_from_a_short_circuit_test() {
    let base = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/inductors/leak_br_50.toml"),
    )
    .unwrap()
    .replace("leakage_mh = 2.2984\n", "");
    // 230 V : 17.97 V, 0.6 + 20 / 12.8^2 = 0.722 ohm referred; 100 VA at 8 %: Z = 0.08 x
    // 17.97^2 / 100 = 0.2583 ohm... below R: refused, naming the key.
    let low = base.replace(
        "[transformer]",
        "[transformer]\nrated_va = 100.0\nimpedance_pct = 8.0",
    );
    let e = Supply::from_toml_str(&low).unwrap_err().to_string();
    assert!(e.contains("transformer.impedance_pct"), "{e}");
    // 25 VA at 8 %: Z = 1.0332 ohm, X = sqrt(1.0332^2 - 0.7221^2) = 0.7390 ohm = 2.352 mH.
    let ok = base.replace(
        "[transformer]",
        "[transformer]\nrated_va = 25.0\nimpedance_pct = 8.0",
    );
    let w = Supply::from_toml_str(&ok).unwrap().winding().unwrap();
    let v: f64 = 230.0 / 12.8;
    let z = 0.08 * v * v / 25.0;
    let r: f64 = 0.6 + 20.0 / (12.8 * 12.8);
    let x = (z * z - r * r).sqrt();
    assert!((w.leakage_h - x / (std::f64::consts::TAU * 50.0)).abs() < 1e-12);
    assert!((w.leakage_h * 1e3 - 2.352).abs() < 0.01, "{}", w.leakage_h);
    // Short-circuit test on the primary: 20 V, 0.5 A, 6 W: Z = 40, R = 24, X = 32 ohm; over
    // 12.8^2 on the secondary, 0.1953 ohm = 0.6217 mH at 50 Hz.
    let test = base.replace(
        "[transformer]",
        "[transformer]\nshort_test = { volts = 20.0, amps = 0.5, watts = 6.0 }",
    );
    let w = Supply::from_toml_str(&test).unwrap().winding().unwrap();
    assert!(
        (w.leakage_h * 1e3 - 32.0 / 163.84 / (std::f64::consts::TAU * 50.0) * 1e3).abs() < 1e-9
    );
    // Two ways at once are refused.
    let both = test.replace("[transformer]", "[transformer]\nleakage_mh = 1.0");
    let e = Supply::from_toml_str(&both).unwrap_err().to_string();
    assert!(e.contains("one of leakage_mh"), "{e}");
}

/// A swinging choke (its inductance falling from `choke_light_h` at light current to `choke_h`
/// at `choke_rated_a`) against ngspice's behavioural inductor of the same law
/// (tests/reference/swinging.py, ngspice-39, tests/reference/ngspice_swinging.csv): the same
/// tolerances as the fixed chokes. At the light load the swing holds the choke above its
/// critical inductance (the current never stops: ngspice's least choke current is 3.5 mA),
/// where the rated inductance alone would not; the check says so both ways.
#[test]
fn a_swinging_choke_matches_ngspice_and_stays_above_critical_at_light_load() {
    let cases = common::reference_csv("ngspice_swinging.csv");
    assert_eq!(cases.len(), 3);
    let load = |case: &str| {
        let path = Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/reference/swinging")
            .join(format!("{case}.toml"));
        Supply::from_toml_str(&std::fs::read_to_string(&path).unwrap()).unwrap()
    };
    for (case, want) in &cases {
        let s = load(case);
        assert!(s.filter.choke_light_h.is_some(), "{case} swings");
        let got = serde_json::to_value(
            solve(&s, &Conditions::default())
                .unwrap_or_else(|e| panic!("{case}: {e}"))
                .figures,
        )
        .unwrap();
        for (key, tol) in [
            ("dc_v", 0.005),
            ("min_v", 0.005),
            ("max_v", 0.005),
            ("ripple_pp_v", 0.02),
            ("choke_rms_a", 0.02),
            ("choke_peak_a", 0.02),
            ("diode_rms_a", 0.02),
        ] {
            let (g, w) = (got[key].as_f64().unwrap(), want[key]);
            println!("{case} {key}: engine {g:.5}, ngspice {w:.5}");
            assert!(
                (g - w).abs() / w < tol,
                "{case} {key}: engine {g}, ngspice {w}"
            );
        }
    }
    let light = load("swing_ct_50_light");
    let status = |s: Supply| {
        let r = railcheck::report::build_default(s, "swing").unwrap();
        r.checks
            .iter()
            .find(|c| c.id == "choke-critical")
            .map(|c| c.status)
            .unwrap()
    };
    use railcheck::analysis::checks::Status;
    assert_eq!(status(light.clone()), Status::Ok);
    let mut fixed = light;
    fixed.filter.choke_light_h = None;
    fixed.filter.choke_rated_a = None;
    assert_eq!(status(fixed), Status::Warn);
}

/// Every fault condition the diagnosis tries, on every choke and leakage reference case,
/// solves or is refused with a reason: never a panic (a choke input with its capacitor open
/// once indexed a state it no longer had).
#[test]
fn every_fault_condition_on_a_choke_or_leaky_supply_solves() {
    let cases = common::reference_csv("ngspice_inductors.csv");
    for (case, _) in &cases {
        let s = supply(case);
        let conditions = [
            Conditions {
                capacitor_open: true,
                ..Conditions::default()
            },
            Conditions {
                leg_open: true,
                ..Conditions::default()
            },
            Conditions {
                reservoir_factor: 0.3,
                ..Conditions::default()
            },
            Conditions {
                esr_ohms: Some(5.0),
                ..Conditions::default()
            },
            Conditions {
                choke_shorted: true,
                ..Conditions::default()
            },
            Conditions {
                load: Some(railcheck::circuit::LoadOverride::Amps(0.0)),
                ..Conditions::default()
            },
        ];
        for c in conditions {
            match solve(&s, &c) {
                Ok(op) => assert!(op.figures.dc_v.is_finite(), "{case} {c:?}"),
                Err(e) => assert!(!e.to_string().is_empty(), "{case} {c:?}"),
            }
        }
    }
}
