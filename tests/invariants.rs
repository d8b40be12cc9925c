//! Invariants of any steady state, over random valid supplies (proptest): charge balance,
//! ordering of the rail's figures, and no NaN or infinity anywhere.

use proptest::prelude::*;
use railcheck::{Conditions, Supply, solve};

#[derive(Debug, Clone)]
struct Case {
    topology: &'static str,
    filter: u8,
    vrms: f64,
    hz: f64,
    ratio: f64,
    secondary_ohms: f64,
    primary_ohms: f64,
    diode: &'static str,
    uf: f64,
    esr: f64,
    load_amps: Option<f64>,
    load_ohms: f64,
    crest: f64,
}

fn case() -> impl Strategy<Value = Case> {
    (
        prop::sample::select(vec![
            "half-wave",
            "center-tap",
            "bridge",
            "doubler",
            "split-rail",
        ]),
        0u8..3,
        prop::sample::select(vec![100.0, 120.0, 230.0, 240.0]),
        prop::sample::select(vec![50.0, 60.0]),
        (1.0f64..40.0, 0.0f64..8.0),
        0.0f64..80.0,
        prop::sample::select(vec!["silicon", "fast", "schottky", "ideal"]),
        1.0f64..4.3, // log10 of microfarads: 10 uF to 20 mF
        0.0f64..1.0,
        prop::option::of(0.001f64..2.0),
        0.7f64..4.0, // log10 of load ohms
        1.3f64..1.4143,
    )
        .prop_map(
            |(
                topology,
                filter,
                vrms,
                hz,
                (ratio, sec),
                pri,
                diode,
                luf,
                esr,
                amps,
                lohm,
                crest,
            )| Case {
                topology,
                filter,
                vrms,
                hz,
                ratio,
                secondary_ohms: sec,
                primary_ohms: pri,
                diode,
                uf: 10f64.powf(luf),
                esr,
                load_amps: amps,
                load_ohms: 10f64.powf(lohm),
                crest,
            },
        )
}

fn supply(c: &Case) -> Supply {
    let filter = match (c.filter, c.topology) {
        (0, t) if t != "doubler" => "kind = \"none\"".to_string(),
        (2, _) => format!(
            "kind = \"crc\"\nuf = {}\nesr_ohms = {}\nseries_ohms = 10.0\nsecond_uf = {}",
            c.uf, c.esr, c.uf
        ),
        _ => format!("kind = \"capacitor\"\nuf = {}\nesr_ohms = {}", c.uf, c.esr),
    };
    let load = match c.load_amps {
        Some(a) => format!("amps = {a}"),
        None => format!("ohms = {}", c.load_ohms),
    };
    let text = format!(
        "format = 1\nname = \"random\"\n[mains]\nvrms = {}\nhz = {}\ncrest = {}\n\
         [transformer]\nratio = {}\nsecondary_ohms = {}\nprimary_ohms = {}\n\
         [rectifier]\ntopology = \"{}\"\ndiode = \"{}\"\n[filter]\n{}\n[load]\n{}\n",
        c.vrms,
        c.hz,
        c.crest,
        c.ratio,
        c.secondary_ohms,
        c.primary_ohms,
        c.topology,
        c.diode,
        filter,
        load
    );
    Supply::from_toml_str(&text).unwrap_or_else(|e| panic!("{e}\n{text}"))
}

/// Diodes whose pulses feed the rail in one mains period.
fn feeding(topology: &str) -> f64 {
    match topology {
        // A doubler's upper diode carries all the load's charge into the top capacitor.
        "half-wave" | "doubler" => 1.0,
        _ => 2.0,
    }
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: std::env::var("PROPTEST_CASES").ok().and_then(|v| v.parse().ok()).unwrap_or(96),
        ..ProptestConfig::default()
    })]

    #[test]
    fn steady_states_balance_and_stay_finite(c in case()) {
        let s = supply(&c);
        let op = solve(&s, &Conditions::default()).expect("a valid supply solves");
        let f = &op.figures;
        let all = serde_json::to_value(f).unwrap();
        for (k, v) in all.as_object().unwrap() {
            if let Some(x) = v.as_f64() {
                prop_assert!(x.is_finite(), "{k} = {x}");
            }
        }
        for p in &op.steady.probes {
            prop_assert!(p.v_out.is_finite() && p.i_diode.is_finite());
        }
        prop_assert!(f.min_v <= f.dc_v + 1e-9 && f.dc_v <= f.max_v + 1e-9,
            "min {} dc {} max {}", f.min_v, f.dc_v, f.max_v);
        // Charge balance: what the diodes deliver in a period is what the load takes.
        let delivered = feeding(c.topology) * f.diode_avg_a;
        prop_assert!((delivered - f.load_a).abs() <= 0.002 * f.load_a.abs() + 1e-9,
            "diodes deliver {delivered} A, load takes {} A", f.load_a);
        // The capacitor's average current is zero in a steady state.
        prop_assert!(railcheck::circuit::network::Integral::Cap.mean(&op.steady).abs() <= 0.002 * f.cap_ripple_rms_a + 1e-9,
            "capacitor average {} A against {} A RMS", railcheck::circuit::network::Integral::Cap.mean(&op.steady), f.cap_ripple_rms_a);
    }
}
