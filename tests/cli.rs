//! The command line as a technician uses it: reports of the example supplies, JSON for
//! scripts, and clear refusals (exit status 2) for bad files.

mod common;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn railcheck(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_railcheck"))
        .args(args)
        .output()
        .expect("railcheck runs")
}

fn examples() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples");
    let mut files: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    files.sort();
    files
}

const FIGURES: [&str; 16] = [
    "dc_v",
    "max_v",
    "min_v",
    "ripple_pp_v",
    "ripple_rms_v",
    "ripple_hz",
    "load_a",
    "diode_peak_a",
    "diode_avg_a",
    "diode_rms_a",
    "diode_piv_v",
    "winding_rms_a",
    "winding_va",
    "cap_ripple_rms_a",
    "conduction_deg",
    "inrush_peak_a",
];

#[test]
fn examples_cover_every_topology_and_report() {
    let files = examples();
    let mut topologies = std::collections::BTreeSet::new();
    let args: Vec<String> = files.iter().map(|p| p.display().to_string()).collect();
    let mut argv = vec!["report", "--json"];
    argv.extend(args.iter().map(String::as_str));
    let out = railcheck(&argv);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.len(), files.len(), "one JSON line per file");
    for line in lines {
        let v: serde_json::Value = serde_json::from_str(line).expect("each line parses");
        topologies.insert(v["topology"].as_str().unwrap().to_string());
        for key in FIGURES {
            assert!(
                v["nominal"].get(key).is_some(),
                "{key} missing for {}",
                v["name"]
            );
        }
        let wave = &v["nominal"]["waveform"];
        assert!(wave["v_out"].as_array().unwrap().len() >= 200);
        assert!(v["hand_estimate"]["dc_v"].as_f64().unwrap() > 0.0);
        assert!(
            v["cautions"]
                .as_array()
                .unwrap()
                .iter()
                .any(|c| c.as_str().unwrap().contains("local codes"))
        );
        for key in ["name", "file", "worst_case", "checks"] {
            assert!(v.get(key).is_some(), "{key} missing");
        }
    }
    for t in ["half-wave", "center-tap", "bridge", "doubler", "split-rail"] {
        assert!(topologies.contains(t), "no example of {t}");
    }
}

#[test]
fn text_report_names_figures_with_units() {
    let file = examples()[0].display().to_string();
    let out = railcheck(&["report", &file]);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    for needle in [
        "DC (meter, average)",
        "Ripple peak-peak",
        "Hand estimate",
        "Cautions",
        " V",
    ] {
        assert!(text.contains(needle), "{needle:?} not in:\n{text}");
    }
}

fn write_temp(name: &str, text: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("railcheck-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path
}

const GOOD: &str = r#"format = 1
name = "cli test"
[mains]
vrms = 230.0
hz = 50.0
[transformer]
ratio = 9.58
secondary_ohms = 1.8
[rectifier]
topology = "bridge"
[filter]
kind = "capacitor"
uf = 2200.0
[load]
amps = 0.35
"#;

#[test]
fn bad_files_are_refused_with_file_key_value_and_range() {
    let cases = [
        (
            "missing.toml",
            GOOD.replace("amps = 0.35\n", ""),
            vec!["load.amps"],
        ),
        (
            "negative.toml",
            GOOD.replace("uf = 2200.0", "uf = -47.0"),
            vec!["filter.uf", "-47", "between 1e-6 and 1e7 uF", "line 13"],
        ),
        (
            "topology.toml",
            GOOD.replace("\"bridge\"", "\"triple\""),
            vec!["rectifier.topology", "triple", "half-wave"],
        ),
        (
            "ratio.toml",
            GOOD.replace("ratio = 9.58", "ratio = 0.0"),
            vec!["transformer.ratio", "got 0"],
        ),
        (
            "text.toml",
            GOOD.replace("hz = 50.0", "hz = \"fifty\""),
            vec!["mains.hz", "line 5"],
        ),
        (
            "nottoml.toml",
            "this is [not toml".to_string(),
            vec!["line 1"],
        ),
    ];
    for (name, text, needles) in cases {
        let path = write_temp(name, &text);
        let out = railcheck(&["report", &path.display().to_string()]);
        assert_eq!(out.status.code(), Some(2), "{name} should exit 2");
        let err = String::from_utf8(out.stderr).unwrap();
        assert!(
            err.contains(name),
            "{name}: the message names the file: {err}"
        );
        for n in needles {
            assert!(err.contains(n), "{name}: {n:?} not in {err}");
        }
        assert!(!err.contains("panicked"), "{name}: {err}");
    }
}

#[test]
fn absurd_but_legal_values_solve_or_are_refused_with_a_reason() {
    // A 1 F reservoir and a 10 kV secondary: legal, extreme, and must not hang or panic.
    for (name, text) in [
        (
            "one_farad.toml",
            GOOD.replace("uf = 2200.0", "uf = 1000000.0"),
        ),
        (
            "ten_kv.toml",
            GOOD.replace("vrms = 230.0", "vrms = 1000.0")
                .replace("ratio = 9.58", "ratio = 0.1"),
        ),
    ] {
        let path = write_temp(name, &text);
        let out = railcheck(&["report", "--json", &path.display().to_string()]);
        let code = out.status.code();
        assert!(code == Some(0) || code == Some(2), "{name}: {code:?}");
        if code == Some(0) {
            let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
            assert!(v["nominal"]["dc_v"].as_f64().unwrap().is_finite());
        } else {
            assert!(!out.stderr.is_empty());
        }
    }
}

#[test]
fn one_bad_file_among_good_ones_still_reports_the_rest() {
    let bad = write_temp("bad_among.toml", "format = 1\n");
    let good = examples()[0].display().to_string();
    let out = railcheck(&["report", "--json", &good, &bad.display().to_string()]);
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(String::from_utf8(out.stdout).unwrap().lines().count(), 1);
}

#[test]
fn size_answers_for_every_example() {
    for file in examples() {
        let f = file.display().to_string();
        let supply =
            railcheck::supply::Supply::from_toml_str(&std::fs::read_to_string(&file).unwrap())
                .unwrap();
        // A headroom is over a regulator's needs: for a supply without one the rail's own
        // minimum is the target.
        let valley = if supply.regulator.is_some() {
            ["--headroom", "2.0"]
        } else {
            ["--min-valley", "2.0"]
        };
        for target in [["--ripple-pp", "1.0"], valley] {
            let out = railcheck(&["size", &f, target[0], target[1], "--json"]);
            let err = String::from_utf8_lossy(&out.stderr);
            if out.status.code() == Some(2) {
                // A target a winding cannot reach is refused with its reason, not a guess.
                assert!(
                    err.contains("no capacitance up to"),
                    "{f} {target:?}: {err}"
                );
                continue;
            }
            assert!(out.status.success(), "{f} {target:?}: {err}");
            let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
            let caps = v["capacitors"].as_array().unwrap();
            assert_eq!(caps.len(), 2, "E12 and E6");
            for c in caps {
                let uf = c["uf"].as_f64().unwrap();
                assert!((1.0..=1e6).contains(&uf));
                if target[0] == "--ripple-pp" {
                    assert!(c["worst_ripple_pp_v"].as_f64().unwrap() <= 1.0);
                }
                if target[0] == "--min-valley" {
                    assert!(c["worst_valley_v"].as_f64().unwrap() >= 2.0);
                }
                if let Some(r) = c["rated_v"].as_f64() {
                    assert!(r * 0.8 >= c["worst_peak_v"].as_f64().unwrap());
                }
            }
            // E6 is a subset of E12, so its answer is never smaller.
            assert!(caps[1]["uf"].as_f64().unwrap() >= caps[0]["uf"].as_f64().unwrap());
        }
    }
}

/// Issue 11: `--headroom` on a supply without a regulator was answered as if there were one
/// ("2.00 V above what the regulator needs", 82 uF with 28 V of ripple for a 2200 uF supply).
/// Now it is refused, naming the option and the one that fits; with a regulator it still
/// answers, against the regulator's output plus dropout.
#[test]
fn headroom_without_a_regulator_is_refused_naming_the_option() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples");
    let plain = dir.join("pump-house-relay-rail.toml").display().to_string();
    let out = railcheck(&["size", &plain, "--headroom", "2.0"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(out.stdout.is_empty(), "no answer on stdout");
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("--headroom") && err.contains("no regulator") && err.contains("--min-valley"),
        "{err}"
    );
    let regulated = dir.join("valve-actuator-split.toml").display().to_string();
    let out = railcheck(&["size", &regulated, "--headroom", "0.5"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(text.contains("output plus"), "{text}");
    // The sized capacitors in microfarads with their voltage rating, never in millifarads.
    assert!(text.contains(" uF ") && !text.contains("mF"), "{text}");
    // The JSON target of a rail minimum.
    let out = railcheck(&["size", &plain, "--min-valley", "20", "--json"]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["target"]["min_valley"], 20.0);
}

#[test]
fn size_is_the_smallest_preferred_value_that_meets_the_target() {
    let f = examples()
        .into_iter()
        .find(|p| p.ends_with("pump-house-relay-rail.toml"))
        .unwrap()
        .display()
        .to_string();
    let out = railcheck(&["size", &f, "--ripple-pp", "0.5", "--json"]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let e12 = v["capacitors"][0]["uf"].as_f64().unwrap();
    // The next E12 value down must miss the target.
    let e12_values: Vec<f64> =
        railcheck::analysis::sizing::preferred_uf(&railcheck::analysis::sizing::E12);
    let i = e12_values.iter().position(|&x| x == e12).unwrap();
    let text = std::fs::read_to_string(&f).unwrap();
    let mut s = railcheck::supply::Supply::from_toml_str(&text).unwrap();
    s.filter.uf = Some(e12_values[i - 1]);
    let wc = railcheck::analysis::worst_case::worst_case(&s).unwrap();
    assert!(
        wc.extent(railcheck::circuit::Figure::from_key("ripple_pp_v").unwrap())
            .unwrap()
            .max
            > 0.5
    );
}

#[test]
fn diagnose_answers_for_every_example_and_saves_a_visit() {
    for file in examples() {
        let f = file.display().to_string();
        // Readings of our own invention: a little low DC and half as much ripple again.
        let report = railcheck(&["report", "--json", &f]);
        let v: serde_json::Value = serde_json::from_slice(&report.stdout).unwrap();
        let dc = v["nominal"]["dc_v"].as_f64().unwrap() * 0.97;
        let pp = v["nominal"]["ripple_pp_v"].as_f64().unwrap() * 1.5;
        let hz = v["nominal"]["ripple_hz"].as_f64().unwrap();
        let out = railcheck(&[
            "diagnose",
            &f,
            "--dc",
            &format!("{dc:.3}"),
            "--ripple-pp",
            &format!("{pp:.3}"),
            "--ripple-hz",
            &format!("{hz}"),
            "--json",
        ]);
        assert!(
            out.status.success(),
            "{f}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let d: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        assert!(["healthy", "suspect", "fault"].contains(&d["verdict"].as_str().unwrap()));
        let hyps = d["hypotheses"].as_array().unwrap();
        let total: f64 = hyps.iter().map(|h| h["score"].as_f64().unwrap()).sum();
        assert!((total - 1.0).abs() < 1e-9);
        let scores: Vec<f64> = hyps.iter().map(|h| h["score"].as_f64().unwrap()).collect();
        assert!(scores.windows(2).all(|w| w[0] >= w[1]), "best first");
        for h in hyps {
            for k in ["fault", "score", "estimate", "why", "next_check"] {
                assert!(h.get(k).is_some(), "{k}");
            }
        }
        assert_eq!(d["readings"].as_array().unwrap().len(), 3);
    }
    // --save records a visit with the verdict; log shows it and the trend.
    let dir = std::env::temp_dir().join(format!("railcheck-cli-diag-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let d = dir.display().to_string();
    let name = "Pump-house 2, relay rail";
    let before = railcheck(&["--library", &d, "log", name, "--json"]);
    let before: serde_json::Value = serde_json::from_slice(&before.stdout).unwrap();
    let n = before["visits"].as_array().unwrap().len();
    let out = railcheck(&[
        "--library",
        &d,
        "diagnose",
        name,
        "--dc",
        "26.0",
        "--ripple-pp",
        "2.6",
        "--ripple-hz",
        "100",
        "--save",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let after = railcheck(&["--library", &d, "log", name, "--json"]);
    let after: serde_json::Value = serde_json::from_slice(&after.stdout).unwrap();
    assert_eq!(after["visits"].as_array().unwrap().len(), n + 1);
    assert!(after["trend"]["points"].as_array().unwrap().len() > n);
    let text = std::fs::read_to_string(dir.join("pump-house-2-relay-rail.toml")).unwrap();
    assert!(
        text.contains("[visit.diagnosis]") && text.contains("verdict"),
        "{text}"
    );
    let log = railcheck(&["--library", &d, "log", name]);
    assert!(String::from_utf8_lossy(&log.stdout).contains("Capacitance the readings imply"));
    // Bad readings: a clear message and exit status 2.
    let out = railcheck(&["--library", &d, "diagnose", name, "--dc", "-3"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("must not be negative"));
}

#[test]
fn a_failed_rating_check_exits_with_status_1() {
    // A 25 V capacitor on the pump-house rail, whose high-line peak is near 35 V.
    let text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/pump-house-relay-rail.toml"),
    )
    .unwrap()
    .replace("rated_v = 50.0", "rated_v = 25.0");
    let path = write_temp("failing_check.toml", &text);
    let out = railcheck(&["report", &path.display().to_string()]);
    assert_eq!(out.status.code(), Some(1));
    let shown = String::from_utf8(out.stdout).unwrap();
    assert!(shown.contains("FAIL  cap-voltage"), "{shown}");
}

/// Calibrating a unit from the command line: refused without a visit, on readings no healthy
/// unit shows, and on a date with no visit, each without touching the file; stored with its
/// baseline marked otherwise, and the windows of later diagnoses narrower. The readings are
/// those of a simulated real unit (tests/reference/field_calibration.csv, ngspice-39, unit
/// ct_amp-101), judged against its file with the winding resistance left out.
#[test]
fn calibrate_stores_the_fit_marks_the_baseline_and_narrows_the_windows() {
    let dir = std::env::temp_dir().join(format!("railcheck-cli-cal-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let d = dir.display().to_string();
    let src =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/field/ct_amp-unstated.toml");
    let out = railcheck(&[
        "--library",
        &d,
        "--no-demo",
        "import",
        &src.display().to_string(),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let file = dir.join("field-ct-amp.toml");
    let name = "field ct_amp";
    let lib = |args: &[&str]| {
        let mut argv = vec!["--library", d.as_str(), "--no-demo"];
        argv.extend_from_slice(args);
        railcheck(&argv)
    };
    let unchanged = std::fs::read(&file).unwrap();
    // No visit yet: nothing to calibrate on.
    let out = lib(&["calibrate", name]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("no visits to calibrate on"));
    // A rail far below anything a healthy unit shows is refused as a baseline.
    let out = lib(&[
        "diagnose",
        name,
        "--mains",
        "229",
        "--dc",
        "12.0",
        "--ripple-pp",
        "0.75",
        "--baseline",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("would hide a fault") && err.contains("dc_v 12"),
        "{err}"
    );
    assert_eq!(std::fs::read(&file).unwrap(), unchanged, "nothing written");
    // The baseline visit, recorded as an ordinary visit first.
    let baseline = [
        "--mains",
        "228.967",
        "--dc",
        "18.6564",
        "--ripple-pp",
        "0.754535",
        "--ripple-hz",
        "100",
    ];
    let mut argv = vec!["diagnose", name];
    argv.extend_from_slice(&baseline);
    argv.push("--save");
    assert!(lib(&argv).status.success());
    let later = [
        "--mains",
        "236.701",
        "--dc",
        "19.1502",
        "--ripple-pp",
        "1.0589",
        "--ripple-hz",
        "100",
        "--json",
    ];
    let window = |json: &[u8], reading: &str| -> (f64, f64) {
        let v: serde_json::Value = serde_json::from_slice(json).unwrap();
        let r = v["readings"]
            .as_array()
            .unwrap()
            .iter()
            .find(|r| r["reading"] == reading)
            .unwrap()
            .clone();
        (r["min"].as_f64().unwrap(), r["max"].as_f64().unwrap())
    };
    let mut argv = vec!["diagnose", name];
    argv.extend_from_slice(&later);
    let before = lib(&argv);
    // A date with no visit is refused, naming the dates there are.
    let out = lib(&["calibrate", name, "--visit", "1999-01-01"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("no visit on that date"));
    let out = lib(&["calibrate", name, "--json"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let cal: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    for key in ["winding_factor", "crest", "cap_factor"] {
        assert!(cal[key].as_f64().is_some(), "{key}: {cal}");
    }
    let text = std::fs::read_to_string(&file).unwrap();
    assert!(
        text.contains("[calibration]") && text.contains("baseline = true"),
        "{text}"
    );
    let after = lib(&argv);
    assert!(after.status.success());
    for reading in ["dc_v", "ripple_pp_v"] {
        let (b0, b1) = window(&before.stdout, reading);
        let (a0, a1) = window(&after.stdout, reading);
        println!("{reading}: {b0:.3}..{b1:.3} -> {a0:.3}..{a1:.3}");
        assert!(
            a1 - a0 < 0.5 * (b1 - b0),
            "{reading}: {b0}..{b1} -> {a0}..{a1}"
        );
    }
    // The text form says what was fitted and shows the windows before and after.
    let out = lib(&["calibrate", name]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("winding resistance") && text.contains("->"),
        "{text}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

/// Issue 11: capacitances print in microfarads ("2200 uF", as a technician orders them), the
/// report's filter with its voltage rating, and no "mF" anywhere in the text report.
#[test]
fn capacitances_print_in_microfarads() {
    let file = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("examples/pump-house-relay-rail.toml")
        .display()
        .to_string();
    let out = railcheck(&["report", &file]);
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        text.contains("2200 uF 50 V capacitor filter"),
        "{}",
        &text[..400.min(text.len())]
    );
    assert!(!text.contains("mF"), "{text}");
    let out = railcheck(&["size", &file, "--ripple-pp", "1.0"]);
    let text = String::from_utf8(out.stdout).unwrap();
    // 3900 uF from E12 and 4700 uF from E6, each with the 50 V rating its peak needs.
    assert!(
        text.contains("3900 uF 50 V") && text.contains("4700 uF 50 V"),
        "{text}"
    );
    assert!(!text.contains("mF"), "{text}");
}

/// Issue 11: `diagnose` and `log` in words and units, not internal keys; the JSON unchanged.
/// The supply is the trade's bench supply (center tap, 80 V 60 Hz, 4.85:1, 47 uF, 680 ohm:
/// 9.62 V DC and about 2.8 V p-p, common practice), its capacitance taken as low.
#[test]
fn diagnose_and_log_speak_in_words_and_units() {
    let bench = "format = 1\nname = \"bench\"\n[mains]\nvrms = 80.0\nhz = 60.0\n\
                 [transformer]\nratio = 4.85\n[rectifier]\ntopology = \"center-tap\"\n\
                 diode = \"silicon\"\n[filter]\nkind = \"capacitor\"\nuf = 47.0\n[load]\n\
                 ohms = 680.0\n";
    let path = write_temp("bench_words.toml", bench);
    let f = path.display().to_string();
    let args = [
        "diagnose",
        &f,
        "--mains",
        "80",
        "--dc",
        "9.62",
        "--ripple-pp",
        "2.8",
    ];
    let out = railcheck(&args);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    for want in [
        "mains 80 V, expected",
        "DC 9.62 V, expected",
        "ripple peak to peak 2.8 V, expected",
        "V (nominal",
        "filter capacitance low",
        "uF of its 47 uF",
        "next: ",
        "Caution: discharge the filter",
    ] {
        assert!(text.contains(want), "{want:?} not in:\n{text}");
    }
    for key in [
        "dc_v",
        "ripple_pp_v",
        "mains_vrms",
        "capacitance-low",
        "[uf",
    ] {
        assert!(!text.contains(key), "{key:?} in:\n{text}");
    }
    // The JSON keeps its keys.
    let mut json_args = args.to_vec();
    json_args.push("--json");
    let v: serde_json::Value = serde_json::from_slice(&railcheck(&json_args).stdout).unwrap();
    assert_eq!(v["readings"][1]["reading"], "dc_v");
    assert_eq!(v["hypotheses"][0]["fault"], "capacitance-low");
    assert!(v["hypotheses"][0]["estimate"]["uf"].as_f64().is_some());

    // The log of a demo supply: readings in words, capacitances in uF.
    let dir = std::env::temp_dir().join(format!("railcheck-cli-words-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let d = dir.display().to_string();
    let out = railcheck(&["--library", &d, "log", "Pump-house 2, relay rail"]);
    let text = String::from_utf8(out.stdout).unwrap();
    for want in [
        "mains 226 V",
        "DC 26.9 V",
        "ripple peak to peak 2.2 V",
        " uF",
    ] {
        assert!(text.contains(want), "{want:?} not in:\n{text}");
    }
    for key in ["dc_v", "ripple_pp_v", "mains_vrms", "load_a"] {
        assert!(!text.contains(key), "{key:?} in:\n{text}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}

const SUBCOMMANDS: [&str; 10] = [
    "report",
    "size",
    "list",
    "import",
    "export",
    "diagnose",
    "calibrate",
    "log",
    "record",
    "completions",
];

/// Issue 11: a completion script for each shell clap_complete knows, naming every command.
#[test]
fn completions_for_each_shell_name_the_commands() {
    for shell in ["bash", "zsh", "fish", "powershell", "elvish"] {
        let out = railcheck(&["completions", shell]);
        assert!(
            out.status.success(),
            "{shell}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let script = String::from_utf8(out.stdout).unwrap();
        assert!(script.len() > 1000, "{shell}: {} bytes", script.len());
        for sub in SUBCOMMANDS.iter().chain(&["manpage"]) {
            assert!(script.contains(sub), "{shell}: no {sub}");
        }
        assert!(script.contains("min-valley"), "{shell}: options too");
    }
    let out = railcheck(&["completions", "tcsh"]);
    assert_eq!(out.status.code(), Some(2), "an unknown shell is refused");
    assert!(String::from_utf8_lossy(&out.stderr).contains("bash"));
}

/// Issue 11: the manual page, roff with its title line and every command in it.
#[test]
fn the_manual_page_is_roff_with_every_command() {
    let out = railcheck(&["manpage"]);
    assert!(out.status.success());
    let page = String::from_utf8(out.stdout).unwrap();
    assert!(
        page.lines().any(|l| l.starts_with(".TH railcheck 1")),
        "{page}"
    );
    for sub in SUBCOMMANDS.iter().chain(&["manpage"]) {
        assert!(
            page.contains(&format!(".SS \"railcheck {sub}\"")),
            "no section for {sub}"
        );
    }
    for section in [
        ".SH NAME",
        ".SH SYNOPSIS",
        ".SH \"EXIT STATUS\"",
        ".SH CAUTION",
    ] {
        assert!(page.contains(section), "{section}");
    }
    // One copy of roff's string definitions, not one per command.
    assert_eq!(page.matches(".ds Aq \\(aq").count(), 1);
}

/// A value filled in by a template and never confirmed is said so in the report, text and
/// JSON alike.
#[test]
fn the_report_names_values_not_yet_confirmed() {
    let text = GOOD.replace(
        "name = \"cli test\"",
        "name = \"cli test\"\nunconfirmed = [\"filter.esr_ohms\"]",
    );
    let f = write_temp("unconfirmed.toml", &text).display().to_string();
    let out = railcheck(&["report", &f]);
    let shown = String::from_utf8_lossy(&out.stdout);
    assert!(
        shown.contains("not yet confirmed") && shown.contains("filter.esr_ohms"),
        "{shown}"
    );
    let out = railcheck(&["report", "--json", &f]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["unconfirmed"][0], "filter.esr_ohms");
}

/// Each example that states in its comments what `railcheck report` gives ("gives DC 329 V")
/// still gives it: the comment sits beside a hand estimate (the demo's check that its figures
/// make physical sense), and would otherwise rot as the engine changes. To the comment's
/// three figures.
#[test]
fn the_examples_report_what_their_comments_say() {
    let mut checked = 0;
    let files = examples();
    for file in files {
        let text = std::fs::read_to_string(&file).unwrap();
        let Some(at) = text.find("`railcheck report` gives DC ") else {
            continue;
        };
        let rest = &text[at + "`railcheck report` gives DC ".len()..];
        let said: f64 = rest.split_whitespace().next().unwrap().parse().unwrap();
        let out = railcheck(&["report", "--json", file.to_str().unwrap()]);
        let json: serde_json::Value =
            serde_json::from_slice(out.stdout.split(|b| *b == b'\n').next().unwrap()).unwrap();
        let dc = json["nominal"]["dc_v"].as_f64().unwrap();
        assert!(
            (dc / said - 1.0).abs() < 0.002,
            "{}: the comment says DC {said} V, the report gives {dc} V",
            file.display()
        );
        checked += 1;
    }
    assert!(checked >= 3, "{checked} examples state their DC");
}

/// Issue 15: the report says where the unit is and what its file says of it, under its name
/// and file; the JSON has both. The values checked are the example file's own lines.
#[test]
fn the_report_shows_the_site_and_notes_under_the_name() {
    let file = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("examples/backwash-actuator-rail.toml")
        .display()
        .to_string();
    let site = "Larchmere Valley Water Co-op, pump house 3";
    let notes = "Demo data (invented). The filter backwash valve's motor drive on a 400 VA \
                 toroid: a bridge and a large capacitor bank. The toroid's label gives its \
                 percent impedance, which the leakage comes from.";
    let out = railcheck(&["report", &file]);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "Pump house 3, backwash actuator rail");
    assert!(lines[1].starts_with("  file: "), "{text}");
    assert_eq!(lines[2], format!("  site: {site}"));
    assert_eq!(lines[3], format!("  notes: {notes}"));
    let out = railcheck(&["report", "--json", &file]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["site"], site);
    assert_eq!(v["notes"], notes);

    // Notes of several lines keep them, each escaped (an ESC would drive the terminal); a file
    // without a site has no site line, and JSON null.
    let text = GOOD.replace(
        "name = \"cli test\"",
        "name = \"cli test\"\nnotes = \"Fed from DB-2, way 7.\\nBench PSU \\u001b[2J nearby, \
         Süd wing\"",
    );
    let f = write_temp("site_notes.toml", &text).display().to_string();
    let out = railcheck(&["report", &f]);
    let shown = String::from_utf8(out.stdout).unwrap();
    let lines: Vec<&str> = shown.lines().collect();
    assert_eq!(lines[2], "  notes: Fed from DB-2, way 7.");
    assert_eq!(lines[3], "         Bench PSU \\x1b[2J nearby, Süd wing");
    assert!(
        !shown.contains('\u{1b}') && !shown.contains("  site:"),
        "{shown}"
    );
    let out = railcheck(&["report", "--json", &f]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert!(v["site"].is_null());
    assert_eq!(
        v["notes"],
        "Fed from DB-2, way 7.\nBench PSU \u{1b}[2J nearby, Süd wing"
    );
}

/// A scope shows the ripple's peak to peak and its RMS from one capture: `diagnose` takes
/// both, sets each against its window and weighs both. The readings are the simulated unit
/// ct_amp-04 of tests/reference/field_population.csv (ngspice-39: its filter capacitor at
/// half its value), judged against its file with the winding stated.
#[test]
fn diagnose_takes_the_ripples_peak_to_peak_and_rms_together() {
    let file = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/field/ct_amp.toml"
    );
    let out = railcheck(&[
        "diagnose",
        file,
        "--mains",
        "234.339",
        "--dc",
        "18.7207",
        "--ripple-pp",
        "1.59852",
        "--ripple-rms",
        "0.498928",
        "--ripple-hz",
        "100",
        "--json",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let d: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let keys: Vec<&str> = d["readings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["reading"].as_str().unwrap_or(""))
        .collect();
    for k in ["ripple_pp_v", "ripple_rms_v"] {
        assert!(keys.contains(&k), "{k} in {keys:?}");
    }
    // Both ripples well above their windows: the filter capacitor, worn one way or the
    // other, comes first.
    let top = d["hypotheses"][0]["fault"].as_str().unwrap();
    assert!(["capacitance-low", "esr-high"].contains(&top), "{top}");
}

/// When two faults of one part are nearly tied, `diagnose` names the part first. The readings
/// are the simulated unit sr_preamp-04 of tests/reference/field_population.csv (ngspice-39:
/// its + rail's capacitor at 0.31 of its value), judged against its file with the winding
/// stated: from a DC and a ripple peak to peak, a lost capacitance and a risen ESR fit alike.
#[test]
fn diagnose_names_the_likely_part_when_its_faults_tie() {
    let file = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/field/sr_preamp.toml"
    );
    let args = [
        "diagnose",
        file,
        "--mains",
        "224.478",
        "--dc",
        "23.691",
        "--ripple-pp",
        "1.50719",
        "--ripple-hz",
        "100",
    ];
    let out = railcheck(&args);
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    let line = text
        .lines()
        .find(|l| l.contains("Likely part:"))
        .unwrap_or_else(|| panic!("no likely part in\n{text}"));
    assert!(
        line.contains("the filter capacitor")
            && line.contains("ESR high")
            && line.contains("capacitance low")
            && line.contains("the next checks below tell which"),
        "{line}"
    );
    // Before the ranking, which keeps both faults in their order.
    assert!(text.find("Likely part:") < text.find("Most likely first:"));
    let mut json_args = args.to_vec();
    json_args.push("--json");
    let d: serde_json::Value = serde_json::from_slice(&railcheck(&json_args).stdout).unwrap();
    let p = &d["likely_part"];
    assert_eq!(p["part"], "filter-capacitor", "{p}");
    let score = p["score"].as_f64().unwrap();
    let each: f64 = p["faults"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["score"].as_f64().unwrap())
        .sum();
    assert!(score > 0.5 && (score - each).abs() < 0.01, "{p}");
    let top = d["hypotheses"][0]["fault"].as_str().unwrap();
    assert!(["capacitance-low", "esr-high"].contains(&top), "{top}");
}

/// A healthy unit's readings name no part. The readings are the simulated unit ct_amp-00 of
/// tests/reference/field_population.csv (ngspice-39, healthy), against its file.
#[test]
fn diagnose_names_no_part_on_a_healthy_unit() {
    let file = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/field/ct_amp.toml"
    );
    let unit = common::field::population()
        .unwrap()
        .into_iter()
        .find(|u| u.unit == "ct_amp-00")
        .unwrap();
    assert_eq!(unit.condition, "healthy");
    let r = unit.readings;
    let (dc, pp) = (
        r.dc_v.unwrap().to_string(),
        r.ripple_pp_v.unwrap().to_string(),
    );
    let mains = r.mains_vrms.map(|v| v.to_string());
    let mut args = vec!["diagnose", file, "--dc", &dc, "--ripple-pp", &pp];
    if let Some(m) = &mains {
        args.extend(["--mains", m]);
    }
    args.push("--json");
    let d: serde_json::Value = serde_json::from_slice(&railcheck(&args).stdout).unwrap();
    assert_eq!(d["verdict"], "healthy", "{d}");
    assert!(d["likely_part"].is_null(), "{}", d["likely_part"]);
}
