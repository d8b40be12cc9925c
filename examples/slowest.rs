//! The time bound over many random valid supplies: each is solved once at nominal and then put
//! through the full report (nominal, every tolerance-box point, the voltage-stress point),
//! timed by the wall clock; the slowest are printed with their files.
//!
//! Run: cargo run --release --example slowest [COUNT] [SEED]   (default 10000 supplies)
//! The supplies come from tests/common/random_supply.rs, the generator the proptest in
//! tests/time_bound.rs uses.

#[path = "../tests/common/random_supply.rs"]
mod random_supply;

use railcheck::{Conditions, Supply, report, solve};
use std::time::{Duration, Instant};

fn main() {
    let mut args = std::env::args().skip(1);
    let count: usize = args.next().and_then(|a| a.parse().ok()).unwrap_or(10_000);
    let seed: u64 = args.next().and_then(|a| a.parse().ok()).unwrap_or(0x9_2026);
    let mut u = random_supply::xorshift(seed);
    let mut solves: Vec<(Duration, usize, String)> = Vec::new();
    let mut reports: Vec<(Duration, String)> = Vec::new();
    let (mut refused_solve, mut refused_report) = (0, 0);
    let mut reasons: Vec<String> = Vec::new();
    let started = Instant::now();
    for i in 0..count {
        // Half the supplies typical, half with a value anywhere in its legal range.
        let p_wild = if i % 2 == 0 { 0.1 } else { 0.5 };
        let text = random_supply::valid_supply_text(&mut u, p_wild);
        let supply = match Supply::from_toml_str(&text) {
            Ok(s) => s,
            Err(e) => panic!("the generator wrote an invalid supply ({e}):\n{text}"),
        };
        let t0 = Instant::now();
        let solved = solve(&supply, &Conditions::default());
        let dt = t0.elapsed();
        match &solved {
            Ok(op) => solves.push((dt, op.steady.evaluations, text.clone())),
            Err(e) => {
                refused_solve += 1;
                if let Ok(dir) = std::env::var("SLOWEST_DUMP") {
                    let _ = std::fs::write(format!("{dir}/refused-{i}.toml"), &text);
                }
                solves.push((dt, 0, text.clone()));
                if reasons.len() < 5 {
                    reasons.push(format!("{e}"));
                }
            }
        }
        let t0 = Instant::now();
        let r = report::build_default(supply, "random.toml");
        let dt = t0.elapsed();
        if r.is_err() {
            refused_report += 1;
        }
        reports.push((dt, text));
    }
    // The calibration of the work counters: evaluations a millisecond, overall and at the
    // slowest rate among solves long enough to time (over 1 ms).
    let (evals, secs) = solves.iter().fold((0usize, 0.0f64), |(e, t), s| {
        (e + s.1, t + s.0.as_secs_f64())
    });
    let slowest_rate = solves
        .iter()
        .filter(|s| s.1 > 0 && s.0.as_secs_f64() > 1e-3)
        .map(|s| s.1 as f64 / (s.0.as_secs_f64() * 1e3))
        .fold(f64::INFINITY, f64::min);
    solves.sort_by_key(|s| std::cmp::Reverse(s.0));
    reports.sort_by_key(|r| std::cmp::Reverse(r.0));
    let ms = |d: Duration| d.as_secs_f64() * 1e3;
    println!(
        "{count} random valid supplies (seed {seed}) in {:.1} s",
        started.elapsed().as_secs_f64()
    );
    println!(
        "one solve: slowest {:.2} ms, median {:.3} ms; refused {refused_solve}",
        ms(solves[0].0),
        ms(solves[solves.len() / 2].0)
    );
    println!(
        "full report: slowest {:.1} ms, median {:.2} ms; refused {refused_report}",
        ms(reports[0].0),
        ms(reports[reports.len() / 2].0)
    );
    println!(
        "work: {:.0} evaluations a millisecond over all solves, {slowest_rate:.0} at the slowest",
        evals as f64 / (secs * 1e3)
    );
    for r in &reasons {
        println!("  refused: {r}");
    }
    println!("\nslowest solves:");
    for (d, evals, text) in solves.iter().take(3) {
        println!("--- {:.2} ms, {evals} evaluations\n{text}", ms(*d));
    }
    println!("slowest reports:");
    for (d, text) in reports.iter().take(3) {
        println!("--- {:.1} ms\n{text}", ms(*d));
    }
    if let Ok(dir) = std::env::var("SLOWEST_DUMP") {
        for (i, (_, text)) in reports.iter().take(20).enumerate() {
            let _ = std::fs::write(format!("{dir}/slow-report-{i}.toml"), text);
        }
    }
}
