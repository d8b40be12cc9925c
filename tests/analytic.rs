//! The engine against closed-form results for ideal circuits (textbook), the large-omega-C-R
//! limit of Schade's curves, and bench facts of the trade.

use railcheck::{Conditions, Supply, solve};
use std::f64::consts::{PI, SQRT_2};

/// A supply with an ideal diode and an ideal winding (its resistance stated as zero: a file
/// that leaves it out has one assumed): `vrms` on the (whole) secondary.
fn ideal(topology: &str, filter: &str, load: &str) -> Supply {
    let text = format!(
        r#"
format = 1
name = "ideal {topology}"
[mains]
vrms = 100.0
hz = 50.0
[transformer]
ratio = 1.0
secondary_ohms = 0.0
[rectifier]
topology = "{topology}"
diode = "ideal"
[filter]
{filter}
[load]
{load}
"#
    );
    Supply::from_toml_str(&text).unwrap_or_else(|e| panic!("{e}"))
}

fn within(got: f64, want: f64, tol: f64, what: &str) {
    let err = (got - want).abs() / want.abs();
    println!("{what}: {:.4} % off", 100.0 * err);
    assert!(
        err <= tol,
        "{what}: got {got:.6}, want {want:.6} ({:.4} %)",
        100.0 * err
    );
}

#[test]
fn unfiltered_average_and_rms_match_the_textbook() {
    // Textbook, ideal diode and no source resistance: half-wave DC = Vpk/pi, RMS = Vpk/2;
    // full-wave DC = 2 Vpk/pi, RMS = Vpk/sqrt 2.
    let vpk = 100.0 * SQRT_2;
    for (topology, dc, rms) in [
        ("half-wave", vpk / PI, vpk / 2.0),
        ("bridge", 2.0 * vpk / PI, vpk / SQRT_2),
        // A center tap gives each diode half the secondary.
        ("center-tap", vpk / PI, vpk / 2.0 / SQRT_2),
    ] {
        let s = ideal(topology, "kind = \"none\"", "ohms = 100.0");
        let f = solve(&s, &Conditions::default()).unwrap().figures;
        within(f.dc_v, dc, 1e-4, &format!("{topology} DC"));
        let total_rms = (f.dc_v * f.dc_v + f.ripple_rms_v * f.ripple_rms_v).sqrt();
        within(total_rms, rms, 1e-4, &format!("{topology} RMS"));
    }
}

/// The ideal capacitor-input rectifier solved piecewise (textbook): the capacitor follows
/// the sine until the sine falls faster than the RC discharge (tan theta1 = -omega R C), decays
/// exponentially, and is caught by the next half-sine at theta2. Returns (dc, min, max) per
/// volt of peak; `period` is pi for full-wave, 2 pi for half-wave.
fn piecewise_ideal(wrc: f64, period: f64) -> (f64, f64, f64) {
    let theta1 = PI - wrc.atan();
    let decay = |theta: f64| theta1.sin() * (-(theta - theta1) / wrc).exp();
    // The next rising half-sine, sin(theta - period), meets the decay once in (period, period + pi/2).
    let rise = |theta: f64| (theta - period).sin();
    let (mut lo, mut hi) = (period, period + PI / 2.0);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if rise(mid) < decay(mid) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let theta2 = 0.5 * (lo + hi);
    let v_min = rise(theta2);
    // Area: the conduction arc from theta2 - period to theta1, then the exponential.
    let conduction = (theta2 - period).cos() - theta1.cos();
    let discharge = theta1.sin() * wrc * (1.0 - (-(theta2 - theta1) / wrc).exp());
    ((conduction + discharge) / period, v_min, 1.0)
}

#[test]
fn ideal_capacitor_input_matches_the_piecewise_solution() {
    let vpk = 100.0 * SQRT_2;
    let omega = 2.0 * PI * 50.0;
    for (topology, period) in [("bridge", PI), ("half-wave", 2.0 * PI)] {
        for (uf, ohms) in [
            (1000.0, 100.0),
            (100.0, 100.0),
            (470.0, 1000.0),
            (47.0, 220.0),
        ] {
            let s = ideal(
                topology,
                &format!("kind = \"capacitor\"\nuf = {uf}"),
                &format!("ohms = {ohms}"),
            );
            let f = solve(&s, &Conditions::default()).unwrap().figures;
            let wrc = omega * ohms * uf * 1e-6;
            let (dc, v_min, v_max) = piecewise_ideal(wrc, period);
            let what = format!("{topology} wRC={wrc:.1}");
            within(f.dc_v, dc * vpk, 0.002, &format!("{what} DC"));
            within(f.min_v, v_min * vpk, 0.002, &format!("{what} min"));
            within(f.max_v, v_max * vpk, 0.002, &format!("{what} max"));
        }
    }
}

#[test]
fn schade_limit_for_large_omega_c_r() {
    // Schade (Proc. IRE 1943) curves of DC/Vpk against omega C R_load flatten, for large
    // omega C R, onto the constant-capacitor-voltage solution: DC/Vpk = cos(phi) where
    // tan(phi) - phi = pi Rs / (n RL), n = 2 for full-wave, 1 for half-wave (derived from the
    // average charging current; textbook). No intermediate curve values were read from memory.
    // At omega C R = 2000 the ripple still lowers the DC by about pi/(n omega C R) / 2.
    for (topology, n) in [("bridge", 2.0), ("half-wave", 1.0)] {
        for rs_over_rl in [0.002, 0.01, 0.05, 0.2] {
            let rl = 100.0;
            let wrc: f64 = 2000.0;
            let uf = wrc / (2.0 * PI * 50.0 * rl) * 1e6;
            let text = format!(
                r#"
format = 1
name = "schade"
[mains]
vrms = 100.0
hz = 50.0
[transformer]
ratio = 1.0
secondary_ohms = {rs}
[rectifier]
topology = "{topology}"
diode = "ideal"
[filter]
kind = "capacitor"
uf = {uf}
[load]
ohms = {rl}
"#,
                rs = rs_over_rl * rl
            );
            let s = Supply::from_toml_str(&text).unwrap();
            let f = solve(&s, &Conditions::default()).unwrap().figures;
            let target = PI * rs_over_rl / n;
            let (mut lo, mut hi) = (0.0f64, PI / 2.0 - 1e-9);
            for _ in 0..200 {
                let mid = 0.5 * (lo + hi);
                if mid.tan() - mid < target {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            let cos_phi = (0.5 * (lo + hi)).cos();
            let ripple_share = PI / (n * wrc) / 2.0;
            let want = cos_phi * (1.0 - ripple_share) * 100.0 * SQRT_2;
            within(
                f.dc_v,
                want,
                0.01,
                &format!("{topology} Rs/RL={rs_over_rl}"),
            );
        }
    }
}

fn bench_fact(filter: &str) -> Supply {
    let text = format!(
        r#"
format = 1
name = "bench fact"
[mains]
vrms = 80.0
hz = 60.0
[transformer]
ratio = 4.85
[rectifier]
topology = "center-tap"
diode = "silicon"
[filter]
{filter}
[load]
ohms = 680.0
"#
    );
    Supply::from_toml_str(&text).unwrap()
}

#[test]
fn bench_readings_of_a_center_tapped_supply() {
    // Fact of the trade (bench readings, common practice): a center-tapped supply on 80 V rms
    // 60 Hz, 4.85:1 to the whole secondary, silicon diodes, 680 ohm: 6.69 V DC with no
    // filter capacitor, 9.62 V DC with 47 uF. Within 10 %, the usual allowance for parts.
    let bare = solve(&bench_fact("kind = \"none\""), &Conditions::default()).unwrap();
    within(bare.figures.dc_v, 6.69, 0.10, "unfiltered DC");
    let filtered = bench_fact("kind = \"capacitor\"\nuf = 47.0");
    let f = solve(&filtered, &Conditions::default()).unwrap().figures;
    within(f.dc_v, 9.62, 0.10, "47 uF DC");
}

#[test]
fn hand_estimate_reproduces_the_paper_method() {
    // Fact of the trade: the usual hand estimate of that supply gives 10.96 V working peak,
    // 6.98 V unfiltered, 9.53 V DC and 2.86 V p-p ripple with 47 uF (within 1 %).
    let bare = railcheck::circuit::hand_estimate(&bench_fact("kind = \"none\"")).unwrap();
    within(bare.working_peak_v, 10.96, 0.01, "working peak");
    within(bare.dc_v, 6.98, 0.01, "unfiltered DC");
    let c =
        railcheck::circuit::hand_estimate(&bench_fact("kind = \"capacitor\"\nuf = 47.0")).unwrap();
    within(c.dc_v, 9.53, 0.01, "filtered DC");
    within(c.ripple_pp_v, 2.86, 0.01, "ripple");
}
