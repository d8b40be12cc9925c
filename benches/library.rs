//! Loading a large personal library: 1,000 supplies with 10 visits each.
//! Run: cargo bench --bench library

use criterion::{Criterion, criterion_group, criterion_main};
use railcheck::diagnose::trend;
use railcheck::library::Library;
use railcheck::supply::Supply;
use std::hint::black_box;
use std::path::PathBuf;

/// Writes `count` supplies of 10 visits each into a fresh folder and returns it.
pub fn big_library(count: usize) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("railcheck-bench-library-{count}"));
    if dir.join(format!("unit-{:04}.toml", count - 1)).exists() {
        return dir;
    }
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let base = include_str!("../examples/pump-house-relay-rail.toml");
    for i in 0..count {
        let mut text = base.replace("Pump-house 2, relay rail", &format!("Unit {i:04}"));
        for v in 0..10 {
            text.push_str(&format!(
                "\n[[visit]]\ndate = {}-0{}-1{}\ntechnician = \"bench\"\nmains_vrms = 229.0\n\
                 dc_v = {:.2}\nripple_pp_v = {:.2}\nload_a = 0.35\nnotes = \"visit {v}\"\n",
                2015 + v,
                1 + v % 9,
                v % 9,
                28.3 - 0.1 * v as f64,
                1.1 + 0.08 * v as f64
            ));
        }
        std::fs::write(dir.join(format!("unit-{i:04}.toml")), text).unwrap();
    }
    dir
}

fn load_library(c: &mut Criterion) {
    let dir = big_library(1000);
    let lib = Library::open(&dir, false).unwrap();
    assert_eq!(
        lib.load()
            .unwrap()
            .iter()
            .filter(|e| e.supply().is_some())
            .count(),
        1000
    );
    let mut g = c.benchmark_group("library");
    g.sample_size(20);
    g.bench_function("load_1000_supplies_10_visits", |b| {
        b.iter(|| black_box(lib.load().unwrap()))
    });
    g.finish();
}

/// The pump-house example with `count` daily visits whose mains readings wander over 215-245 V
/// at a meter's 0.1 V resolution (invented readings of a slowly drying capacitor).
fn long_history(count: usize) -> Supply {
    let mut text = include_str!("../examples/pump-house-relay-rail.toml").to_string();
    let mut seed: u64 = 0x9E37_79B9_7F4A_7C15;
    let mut next = || {
        seed ^= seed << 13;
        seed ^= seed >> 7;
        seed ^= seed << 17;
        (seed >> 11) as f64 / (1u64 << 53) as f64
    };
    for v in 0..count {
        let mains = (2150.0 + 300.0 * next()).round() / 10.0;
        let dc = 28.3 * mains / 230.0 - 0.00006 * v as f64 + 0.1 * (next() - 0.5);
        let ripple = 1.1 + 0.0001 * v as f64 + 0.04 * (next() - 0.5);
        text.push_str(&format!(
            "\n[[visit]]\ndate = {}\nmains_vrms = {mains}\ndc_v = {dc:.2}\n\
             ripple_pp_v = {ripple:.2}\nload_a = 0.35\n",
            railcheck::visit::civil_from_days(15_341 + v as i64)
        ));
    }
    Supply::from_toml_str(&text).unwrap()
}

fn long_trend(c: &mut Criterion) {
    let supply = long_history(5000);
    let mut g = c.benchmark_group("library");
    g.sample_size(10);
    // What `railcheck log` and the screen's visits view work out for a unit with 5,000 visits.
    g.bench_function("trend_5000_visits", |b| {
        b.iter(|| black_box(trend::trend(black_box(&supply))))
    });
    g.finish();
}

criterion_group!(benches, load_library, long_trend);
criterion_main!(benches);
