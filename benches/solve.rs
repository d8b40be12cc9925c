//! Speed of the engine: one steady-state solve (capacitor input, unfiltered, across load time
//! constants, the doubler and CRC with two states, two stiff CRCs, choke inputs, a CLC and a
//! capacitor input with leakage) and a 20-file report in one process.
//! Run: cargo bench --bench solve

use criterion::{BenchmarkId, Criterion, criterion_group, criterion_main};
use railcheck::{Conditions, Supply, report, solve};
use std::hint::black_box;
use std::path::Path;

fn load(path: &str) -> Supply {
    let full = Path::new(env!("CARGO_MANIFEST_DIR")).join(path);
    Supply::from_toml_str(&std::fs::read_to_string(full).unwrap()).unwrap()
}

fn single_solves(c: &mut Criterion) {
    let mut g = c.benchmark_group("solve");
    let bridge = load("examples/pump-house-relay-rail.toml");
    g.bench_function("capacitor_input_bridge", |b| {
        b.iter(|| solve(black_box(&bridge), &Conditions::default()).unwrap())
    });
    let bare = load("examples/float-switch-lamps.toml");
    g.bench_function("unfiltered_bridge", |b| {
        b.iter(|| solve(black_box(&bare), &Conditions::default()).unwrap())
    });
    let doubler = load("examples/chart-recorder-ht.toml");
    g.bench_function("doubler_two_states", |b| {
        b.iter(|| solve(black_box(&doubler), &Conditions::default()).unwrap())
    });
    let crc = load("examples/intercom-preamp.toml");
    g.bench_function("crc_two_states", |b| {
        b.iter(|| solve(black_box(&crc), &Conditions::default()).unwrap())
    });
    // Issue 9's stiff supplies: a CRC whose second capacitor's time constant is microseconds
    // (16 Hz center tap) or nanoseconds (500 Hz split rail) against the period.
    let ct = load("tests/reference/stiff/ct_crc_16hz_stiff.toml");
    g.bench_function("stiff_crc_center_tap_16hz", |b| {
        b.iter(|| solve(black_box(&ct), &Conditions::default()).unwrap())
    });
    let sr = load("tests/reference/stiff/sr_crc_500hz_stiff.toml");
    g.bench_function("stiff_crc_split_rail_500hz", |b| {
        b.iter(|| solve(black_box(&sr), &Conditions::default()).unwrap())
    });
    // Issue 12's inductors: a choke input above and below its critical inductance, a
    // valve-era CLC, and a capacitor input with transformer leakage (ngspice reference cases).
    for case in [
        "lc_br_50_above",
        "lc_ct_50_below",
        "clc_ct_valve_50",
        "leak_br_50",
    ] {
        let s = load(&format!("tests/reference/inductors/{case}.toml"));
        g.bench_function(case, |b| {
            b.iter(|| solve(black_box(&s), &Conditions::default()).unwrap())
        });
    }
    // Issue 13's: six-pulse drive buses without and with a line reactor (the phases' own
    // currents), a three-pulse star, a 400 Hz transformer-rectifier unit, an off-line bridge
    // into a constant-power converter (ngspice reference cases).
    for case in [
        "vfd_400_bus",
        "vfd_400_bus_reactor",
        "star_400_to_50",
        "tru_400hz_28v",
        "offline_230_cp150",
    ] {
        let s = load(&format!("tests/reference/three_phase/{case}.toml"));
        g.bench_function(case, |b| {
            b.iter(|| solve(black_box(&s), &Conditions::default()).unwrap())
        });
    }
    // Issue 14's: valve rectifiers, a capacitor input and a CLC (ngspice reference cases).
    for case in ["ci_ct_high_50", "clc_ct_medium_50"] {
        let s = load(&format!("tests/reference/valves/{case}.toml"));
        g.bench_function(case, |b| {
            b.iter(|| solve(black_box(&s), &Conditions::default()).unwrap())
        });
    }
    g.finish();
}

/// A full report (nominal, worst case over the tolerance box, checks) of a six-pulse drive
/// bus with a line reactor: issue 13's 30 ms target.
fn three_phase_report(c: &mut Criterion) {
    let s = load("examples/pump-drive-bus.toml");
    c.bench_function("report_six_pulse_drive_bus", |b| {
        b.iter(|| report::build_default(black_box(s.clone()), "bench").unwrap())
    });
    // A valve amplifier's HT rail with the solid-state what-if (issue 14).
    let s = load("examples/hall-gramophone-amplifier-ht.toml");
    c.bench_function("report_valve_with_solid_state", |b| {
        b.iter(|| {
            report::build_default(black_box(s.clone()), "bench")
                .unwrap()
                .with_solid_state()
                .unwrap()
        })
    });
}

fn time_constants(c: &mut Criterion) {
    // The same 2200 uF bridge with a resistive load from 10 ohm to 10 kohm: R C from 22 ms
    // (one period) to 22 s (a thousand periods).
    let mut g = c.benchmark_group("load_time_constant");
    let base = load("examples/pump-house-relay-rail.toml");
    for ohms in [10.0, 100.0, 1000.0, 10000.0] {
        let mut s = base.clone();
        s.load.amps = None;
        s.load.min_amps = None;
        s.load.max_amps = None;
        s.load.ohms = Some(ohms);
        let rc_ms = ohms * 2200e-6 * 1e3;
        g.bench_with_input(BenchmarkId::new("rc_ms", rc_ms as u64), &s, |b, s| {
            b.iter(|| solve(black_box(s), &Conditions::default()).unwrap())
        });
    }
    g.finish();
}

fn twenty_reports(c: &mut Criterion) {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut files: Vec<_> = std::fs::read_dir(root.join("examples"))
        .unwrap()
        .chain(std::fs::read_dir(root.join("tests/reference/supplies")).unwrap())
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    files.sort();
    files.truncate(20);
    assert_eq!(files.len(), 20);
    c.bench_function("report_20_files", |b| {
        b.iter(|| {
            for f in &files {
                let text = std::fs::read_to_string(f).unwrap();
                let s = Supply::from_toml_str(&text).unwrap();
                let r = report::build_default(s, &f.display().to_string()).unwrap();
                black_box(r.json().to_string());
            }
        })
    });
}

fn worst_case_and_sizing(c: &mut Criterion) {
    use railcheck::analysis::{sizing, worst_case};
    let s = load("examples/pump-house-relay-rail.toml");
    c.bench_function("worst_case_pump_house_33_points", |b| {
        b.iter(|| worst_case::worst_case(black_box(&s)).unwrap())
    });
    let mut g = c.benchmark_group("size");
    g.sample_size(10);
    g.bench_function("ripple_target_e12_e6", |b| {
        b.iter(|| sizing::size(black_box(&s), sizing::Target::RipplePp(0.5)).unwrap())
    });
    g.finish();
}

fn diagnosis(c: &mut Criterion) {
    use railcheck::diagnose::{Readings, diagnose, trend};
    let s = load("examples/pump-house-relay-rail.toml");
    let r = Readings {
        mains_vrms: Some(226.0),
        secondary_vac: Some(23.6),
        dc_v: Some(26.9),
        ripple_pp_v: Some(2.2),
        ripple_rms_v: None,
        ripple_hz: Some(100.0),
        load_a: Some(0.34),
        line_vrms: None,
    };
    let mut g = c.benchmark_group("diagnose");
    g.sample_size(20);
    g.bench_function("every_fault_model_fitted", |b| {
        b.iter(|| diagnose(black_box(&s), black_box(&r)).unwrap())
    });
    // A known-good visit of the same unit (readings near its nominal, our own): the fit, and
    // the two diagnoses that give the windows before and after.
    let good = Readings {
        dc_v: Some(27.2),
        ripple_pp_v: Some(1.2),
        secondary_vac: None,
        ..r
    };
    let date: railcheck::visit::Date = "2026-01-10".parse().unwrap();
    g.bench_function("calibrate_on_a_known_good_visit", |b| {
        b.iter(|| {
            railcheck::diagnose::calibrate::calibrate(black_box(&s), black_box(&good), date)
                .unwrap()
        })
    });
    let demo = Supply::from_toml_str(&railcheck::library::demo::supplies()[1].1).unwrap();
    g.bench_function("trend_three_visits", |b| {
        b.iter(|| trend::trend(black_box(&demo)))
    });
    g.finish();
}

criterion_group!(
    benches,
    single_solves,
    time_constants,
    twenty_reports,
    worst_case_and_sizing,
    diagnosis,
    three_phase_report
);
criterion_main!(benches);
