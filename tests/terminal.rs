//! What the command line does to the terminal and the output it writes to (issue 9, points
//! 5-7 and the paper estimate of point 10): a write that fails is an error, a closed pipe is a
//! quiet end, text from a file never drives the terminal, and no terminal is no screen.

use std::io::Read as _;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};

fn command(args: &[&str]) -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_railcheck"));
    c.args(args).env_remove("RAILCHECK_LIBRARY");
    c
}

fn railcheck(args: &[&str]) -> Output {
    command(args).output().expect("railcheck runs")
}

fn temp_dir(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("railcheck-term-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    dir
}

fn example() -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("examples/pump-house-relay-rail.toml")
        .display()
        .to_string()
}

/// Runs with stdout on the full device, which refuses every write with ENOSPC (Linux).
fn to_full_device(args: &[&str]) -> Output {
    let full = std::fs::OpenOptions::new()
        .write(true)
        .open("/dev/full")
        .expect("/dev/full exists on Linux");
    command(args)
        .stdout(full)
        .stderr(Stdio::piped())
        .output()
        .unwrap()
}

#[test]
fn a_write_to_a_full_device_is_an_error_with_a_message() {
    let lib = temp_dir("full");
    let d = lib.display().to_string();
    let file = example();
    let name = "Pump-house 2, relay rail";
    for args in [
        vec!["report", file.as_str()],
        vec!["report", "--json", file.as_str()],
        vec!["export", file.as_str()],
        vec!["--library", &d, "export", name],
        vec!["--library", &d, "list"],
        vec!["--library", &d, "log", name],
        vec!["size", file.as_str(), "--ripple-pp", "2"],
        vec!["diagnose", file.as_str(), "--dc", "30"],
    ] {
        let out = to_full_device(&args);
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
        assert!(
            err.contains("not written") && err.contains("stdout"),
            "{args:?} says what was not written: {err}"
        );
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
}

#[test]
fn a_closed_pipe_ends_quietly() {
    let file = example();
    // Enough output to pass any pipe buffer, so the writes must meet the closed end.
    let many: Vec<&str> = std::iter::repeat_n(file.as_str(), 40).collect();
    let mut args = vec!["report"];
    args.extend(&many);
    let mut child = command(&args)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    // Read one byte, so the program is known to be writing, then hang up.
    let mut stdout = child.stdout.take().unwrap();
    let mut first = [0u8; 1];
    stdout.read_exact(&mut first).unwrap();
    drop(stdout);
    let mut err = String::new();
    child
        .stderr
        .take()
        .unwrap()
        .read_to_string(&mut err)
        .unwrap();
    let status = child.wait().unwrap();
    assert_eq!(status.code(), Some(0), "{err}");
    assert!(err.is_empty(), "nothing said on a closed pipe: {err}");
}

#[test]
fn no_terminal_means_a_message_and_no_library_touched() {
    let lib = temp_dir("noterm");
    let out = command(&["--library", &lib.display().to_string()])
        .stdin(Stdio::null())
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(
        err.contains("terminal") && err.contains("railcheck list"),
        "{err}"
    );
    assert!(!err.contains("panicked"), "{err}");
    assert!(
        !lib.exists(),
        "the library was created without a screen to show it"
    );
}

/// A supply whose every free-text field carries terminal controls: ESC [2J (clear screen), an
/// OSC title sequence ended by BEL, a bare CR, the 8-bit CSI, and a right-to-left override.
const HOSTILE: &str = r#"format = 1
name = "Evil\u001b[2J\u001b]0;owned\u0007\rpump\u009b2J\u202e"
site = "Site\u001b]0;title\u0007"
notes = "Notes\u001b[31m"
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

[[visit]]
date = 2025-03-04
technician = "Tech\u001b[2J"
dc_v = 30.5
ripple_pp_v = 0.8
notes = "cap\u001b]0;x\u0007 bulging\r"
replaced = ["C3\u001b[1A"]
"#;

/// No raw control character (other than the line ends) and no C1 or bidi override.
fn clean(bytes: &[u8]) -> Result<(), String> {
    let text = String::from_utf8_lossy(bytes);
    match text
        .chars()
        .find(|&c| (c.is_control() && c != '\n') || ('\u{202a}'..='\u{202e}').contains(&c))
    {
        Some(c) => Err(format!("raw U+{:04X} in:\n{text}", c as u32)),
        None => Ok(()),
    }
}

#[test]
fn control_characters_from_a_file_print_escaped_everywhere() {
    let lib = temp_dir("hostile");
    std::fs::create_dir_all(&lib).unwrap();
    let path = lib.join("evil.toml");
    std::fs::write(&path, HOSTILE).unwrap();
    let d = lib.display().to_string();
    let file = path.display().to_string();
    // A second, unreadable file whose error quotes its line's key, raw controls and all.
    std::fs::write(lib.join("broken.toml"), "format = 1\nna\x1b[2J\x07me = [\n").unwrap();
    let runs: Vec<(Vec<&str>, bool)> = vec![
        (vec!["--library", &d, "--no-demo", "list"], true),
        (vec!["report", &file], true),
        (vec!["log", &file], true),
        (vec!["diagnose", &file, "--dc", "30"], true),
        (vec!["size", &file, "--ripple-pp", "2"], true),
        // export's messages: a name not in the library is quoted back on stderr.
        (
            vec!["--library", &d, "export", "Evil\x1b[2J\x1b]0;t\x07\r"],
            false,
        ),
        (vec!["--library", &d, "report", "Evil\x1b[2J\x07"], false),
        (vec!["import", "/nonexistent/\x1b[2J.toml"], false),
    ];
    for (args, ok) in runs {
        let out = railcheck(&args);
        assert_eq!(
            out.status.success(),
            ok,
            "{args:?}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        clean(&out.stdout).unwrap_or_else(|e| panic!("{args:?} stdout: {e}"));
        clean(&out.stderr).unwrap_or_else(|e| panic!("{args:?} stderr: {e}"));
        let all = format!(
            "{}{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        );
        // Escaped by the program's helper, or already quoted by Rust's Debug form.
        assert!(
            all.contains("\\x1b[2J") || all.contains("\\u{1b}[2J"),
            "{args:?}: shown escaped:\n{all}"
        );
    }
    // The report's site and notes lines (issue 15), escaped like its name.
    let report = String::from_utf8(railcheck(&["report", &file]).stdout).unwrap();
    for shown in [
        "  site: Site\\x1b]0;title\\x07\n",
        "  notes: Notes\\x1b[31m\n",
    ] {
        assert!(report.contains(shown), "{shown} not in:\n{report}");
    }
    let log = String::from_utf8(railcheck(&["log", &file]).stdout).unwrap();
    for shown in [
        "Evil\\x1b[2J\\x1b]0;owned\\x07\\rpump\\u{9b}2J\\u{202e}",
        "Tech\\x1b[2J",
        "cap\\x1b]0;x\\x07 bulging\\r",
        "C3\\x1b[1A",
    ] {
        assert!(log.contains(shown), "{shown} not in:\n{log}");
    }
}

#[test]
fn the_paper_estimate_never_goes_negative() {
    // 10 kA drawn from a 24 V bridge with 2200 uF: the textbook ripple I/(2fC) is 45 kV, and
    // DC = peak - ripple/2 would be about -22.7 kV. A rail fed by rectifiers is never below 0.
    let text = std::fs::read_to_string(example())
        .unwrap()
        .replace("amps = 0.35", "amps = 10000.0")
        .replace("max_amps = 0.40", "max_amps = 10000.0");
    let dir = temp_dir("paper");
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("ten-ka.toml");
    std::fs::write(&path, text).unwrap();
    let file = path.display().to_string();
    let out = railcheck(&["report", "--json", &file]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout)
        .unwrap_or_else(|_| panic!("{}", String::from_utf8_lossy(&out.stderr)));
    let h = &v["hand_estimate"];
    let peak = h["working_peak_v"].as_f64().unwrap();
    for key in ["dc_v", "ripple_pp_v"] {
        let x = h[key].as_f64().unwrap();
        assert!((0.0..=peak).contains(&x), "{key} = {x}, peak {peak}");
    }
    assert!(h["not_applicable"].as_str().unwrap().contains("beyond"));
    let out = railcheck(&["report", &file]);
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(text.contains("does not apply"), "{text}");
    // (The file line is left out: a temporary folder's name carries the process id.)
    assert!(
        !text
            .lines()
            .filter(|l| !l.contains("file:"))
            .any(|l| l.contains("-22")),
        "{text}"
    );
}
