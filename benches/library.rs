//! Loading a large personal library: 1,000 supplies with 10 visits each.
//! Run: cargo bench --bench library

use criterion::{Criterion, criterion_group, criterion_main};
use railcheck::library::Library;
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

criterion_group!(benches, load_library);
criterion_main!(benches);
