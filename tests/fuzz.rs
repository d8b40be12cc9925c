//! Fuzzing by property test (cargo-fuzz needs a nightly compiler, which this machine does not
//! have): the loader on random bytes, on byte-mutated valid files and on valid files with a
//! number replaced by any f64; the unit parser and formatters on any text and any number.
//! Nothing may panic, a refusal must read as a message, and whatever loads must be valid.
//!
//! 256 cases per property by default; `PROPTEST_CASES=1000000 cargo test --release --test
//! fuzz` is the long run (see README, "How it is checked").

use proptest::prelude::*;
use railcheck::circuit::hand_estimate;
use railcheck::library::{EntryState, read_entry};
use railcheck::supply::Supply;
use railcheck::units::{format_number, format_si, parse_si};
use std::path::PathBuf;

const VALID: &str = r#"# hand-written, with a visit and every optional table
format = 1
name = "Fuzz base"
site = "bench"
[mains]
vrms = 230
hz = 50.0
low_pct = 10.0
crest = 1.40
[transformer]
ratio = 9.58
secondary_ohms = 1.8
primary_ohms = 42.0
ratio_pct = 2.0
[rectifier]
topology = "bridge"
diode = { is_a = 7e-9, n = 1.8, rs_ohms = 0.034 }
rated_piv_v = 100.0
[filter]
kind = "crc"
uf = 2200.0
esr_ohms = 0.05
series_ohms = 10.0
second_uf = 470.0
bleeder_ohms = 4700.0
[load]
amps = 0.35
min_amps = 0.05
max_amps = 0.4
[regulator]
output_v = 15.0
dropout_v = 2.0
[[visit]]
date = 2025-01-02
dc_v = 27.0
ripple_pp_v = 0.5
"#;

/// One file per test thread, rewritten each case (a fresh folder per case would measure the
/// file system, not the loader).
fn scratch() -> PathBuf {
    let dir = std::env::temp_dir().join(format!("railcheck-fuzz-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir.join(format!("{:?}.toml", std::thread::current().id()).replace(['(', ')'], ""))
}

/// A message a person can read: not empty, no run of more than 24 digits.
fn readable(message: &str) -> bool {
    let mut run = 0;
    !message.is_empty()
        && message.chars().all(|c| {
            run = if c.is_ascii_digit() { run + 1 } else { 0 };
            run <= 24
        })
}

fn load(bytes: &[u8]) -> Result<(), TestCaseError> {
    let path = scratch();
    std::fs::write(&path, bytes).unwrap();
    match read_entry(&path).state {
        EntryState::Ok { supply, .. } => {
            prop_assert!(supply.validate().is_ok());
            // The paper estimate of anything that loads is never negative.
            let h = hand_estimate(&supply).expect("a valid supply has a hand estimate");
            prop_assert!(h.dc_v >= 0.0 && h.ripple_pp_v >= 0.0, "{h:?}");
        }
        EntryState::Unreadable { error } => prop_assert!(readable(&error), "{error}"),
    }
    Ok(())
}

fn mutate(base: &[u8], edits: &[(usize, u8)]) -> Vec<u8> {
    let mut v = base.to_vec();
    for &(at, byte) in edits {
        let i = at % (v.len() + 1);
        match byte % 3 {
            0 if i < v.len() => v[i] = byte,
            1 => v.insert(i, byte),
            _ if i < v.len() => {
                v.remove(i);
            }
            _ => v.push(byte),
        }
    }
    v
}

/// The valid file with its `which`-th number (of those after an `=`) written as `number`.
fn with_number(which: usize, number: &str) -> String {
    let lines: Vec<&str> = VALID.lines().collect();
    let numeric: Vec<usize> = lines
        .iter()
        .enumerate()
        .filter(|(_, l)| {
            l.split_once('=').is_some_and(|(_, v)| {
                v.trim()
                    .starts_with(|c: char| c.is_ascii_digit() || c == '-')
                    && !l.starts_with("date")
            })
        })
        .map(|(i, _)| i)
        .collect();
    let at = numeric[which % numeric.len()];
    let mut out: Vec<String> = lines.iter().map(|l| l.to_string()).collect();
    let key = lines[at].split_once('=').unwrap().0;
    out[at] = format!("{key}= {number}");
    out.join("\n")
}

/// Numbers as TOML can write them, the awkward ones most often.
fn toml_number() -> impl Strategy<Value = String> {
    prop_oneof![
        any::<f64>().prop_map(|x| if x.is_finite() {
            format!("{x:e}")
        } else {
            "nan".into()
        }),
        any::<i64>().prop_map(|x| x.to_string()),
        prop::sample::select(vec![
            "0",
            "-0.0",
            "5e-324",
            "1e-300",
            "1e308",
            "1.7976931348623157e308",
            "inf",
            "-inf",
            "nan",
            "1e-6",
            "0.0999",
            "1e12",
            "1e13",
        ])
        .prop_map(str::to_string),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: std::env::var("PROPTEST_CASES").ok().and_then(|v| v.parse().ok()).unwrap_or(256),
        failure_persistence: None,
        ..ProptestConfig::default()
    })]

    #[test]
    fn loader_on_random_bytes(bytes in prop::collection::vec(any::<u8>(), 0..600)) {
        load(&bytes)?;
    }

    #[test]
    fn loader_on_mutated_files(edits in prop::collection::vec((any::<usize>(), any::<u8>()), 1..16)) {
        load(&mutate(VALID.as_bytes(), &edits))?;
    }

    #[test]
    fn loader_on_any_number_in_any_key(which in any::<usize>(), number in toml_number()) {
        load(with_number(which, &number).as_bytes())?;
        // The same text straight through the parser: the same verdict without the file.
        let _ = Supply::from_toml_str(&with_number(which, &number));
    }

    #[test]
    fn unit_parser_on_any_text(text in any::<String>()) {
        if let Ok(v) = parse_si(&text) {
            prop_assert!(v.is_finite(), "{text:?} -> {v}");
        }
    }

    #[test]
    fn unit_parser_on_number_like_text(text in "[-+]?[0-9.eE]{0,8}[pnumkKMGRrVAFµ]?[0-9.eE]{0,6}( ?(ohms|ohm|Hz|VA|uF|V|A|F))?") {
        match parse_si(&text) {
            Ok(v) => prop_assert!(v.is_finite(), "{text:?} -> {v}"),
            Err(e) => prop_assert!(e.to_string().contains("cannot read")),
        }
    }

    #[test]
    fn formatters_on_any_number(x in any::<f64>()) {
        let si = format_si(x, "V");
        prop_assert!(readable(&si) && si.len() <= 16, "{x:e} -> {si}");
        let typed = format_number(x);
        prop_assert!(typed.len() <= 24, "{x:e} -> {typed}");
        if x.is_finite() {
            prop_assert_eq!(typed.parse::<f64>().unwrap(), x);
            // What format_si prints reads back within its three digits.
            // Femto is printed but not a prefix a technician types: from pico up.
            if x != 0.0 && (1e-12..1e12).contains(&x.abs()) {
                let back = parse_si(&si.replace(' ', "")).unwrap();
                prop_assert!(((back - x) / x).abs() < 5e-3, "{x:e} -> {si} -> {back}");
            }
        }
    }
}
