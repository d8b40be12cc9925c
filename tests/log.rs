//! `railcheck log` (issue 15): each visit's readings against their windows and its verdict,
//! recorded or worked out now, in text and JSON; and the visits as CSV for a spreadsheet,
//! read back here by a reader written to RFC 4180 (section 2's grammar) and checked field by
//! field against the supply files.

use railcheck::cli::log::{csv_header, render_csv, work_out};
use railcheck::diagnose::judge::Judgement;
use railcheck::supply::Supply;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn railcheck(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_railcheck"))
        .args(args)
        .env_remove("RAILCHECK_LIBRARY")
        .output()
        .expect("railcheck runs")
}

fn temp_dir(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("railcheck-log-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// RFC 4180, section 2: records end at CRLF; a field is either plain (no comma, quote or line
/// end) or enclosed in double quotes, where a quote is written twice and commas and line ends
/// are data. Refuses anything else, so a writer that breaks the grammar fails the test.
fn read_csv(text: &str) -> Vec<Vec<String>> {
    let mut records = Vec::new();
    let mut record = Vec::new();
    let mut field = String::new();
    let mut chars = text.chars().peekable();
    let mut at_start = true;
    loop {
        if at_start && chars.peek() == Some(&'"') {
            chars.next();
            loop {
                match chars.next() {
                    Some('"') if chars.peek() == Some(&'"') => {
                        chars.next();
                        field.push('"');
                    }
                    Some('"') => break,
                    Some(c) => field.push(c),
                    None => panic!("a quoted field is not closed"),
                }
            }
            at_start = false;
            continue;
        }
        match chars.next() {
            Some(',') => {
                record.push(std::mem::take(&mut field));
                at_start = true;
            }
            Some('\r') => {
                assert_eq!(
                    chars.next(),
                    Some('\n'),
                    "a CR outside quotes ends a record"
                );
                record.push(std::mem::take(&mut field));
                records.push(std::mem::take(&mut record));
                at_start = true;
            }
            Some(c) => {
                assert!(
                    !at_start || c != '"',
                    "a quote inside a plain field breaks RFC 4180"
                );
                assert!(c != '"' && c != '\n', "{c:?} in a plain field");
                field.push(c);
                at_start = false;
            }
            None => {
                assert!(
                    field.is_empty() && record.is_empty(),
                    "the last record ends with CRLF"
                );
                return records;
            }
        }
    }
}

/// The column `name` of `row` under `header`.
fn cell<'a>(header: &[String], row: &'a [String], name: &str) -> &'a str {
    let i = header
        .iter()
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("no column {name:?} in {header:?}"));
    &row[i]
}

fn number(s: &str) -> Option<f64> {
    if s.is_empty() {
        None
    } else {
        Some(
            s.parse()
                .unwrap_or_else(|_| panic!("{s:?} is not a plain number")),
        )
    }
}

/// Reads `csv` back and checks every visit of `supply` is there, oldest first, field by field,
/// with the windows and verdict of `judged` (one per visit, in the file's order).
fn check_round_trip(supply: &Supply, judged: &[Judgement], csv: &str) {
    let rows = read_csv(csv);
    let header = &rows[0];
    assert_eq!(*header, csv_header());
    // Every reading column carries its unit; the date is the first column.
    for k in [
        "mains_vrms (V)",
        "secondary_vac (V)",
        "dc_v (V)",
        "ripple_pp_v (V)",
        "ripple_rms_v (V)",
        "ripple_hz (Hz)",
        "load_a (A)",
        "line_vrms a-b (V)",
        "line_vrms b-c (V)",
        "line_vrms c-a (V)",
        "dc_v window low (V)",
        "dc_v window high (V)",
    ] {
        assert!(header.contains(&k.to_string()), "{k}");
    }
    assert_eq!(header[0], "date");
    assert!(rows[1..].iter().all(|r| r.len() == header.len()));
    assert_eq!(rows.len() - 1, supply.visits.len(), "{}", supply.name);
    // Oldest first: each visit found by its place in a sort by date, ties in the file's order.
    let mut order: Vec<usize> = (0..supply.visits.len()).collect();
    order.sort_by_key(|&i| {
        let d = supply.visits[i].date.date.unwrap();
        (d.year, d.month, d.day)
    });
    for (row, &i) in rows[1..].iter().zip(&order) {
        let v = &supply.visits[i];
        let c = |name: &str| cell(header, row, name);
        // ISO 8601's calendar date, YYYY-MM-DD, from the file's own date.
        let d = v.date.date.unwrap();
        let date = c("date");
        assert_eq!(date.len(), 10);
        assert_eq!(
            date,
            format!("{:04}-{:02}-{:02}", d.year, d.month, d.day),
            "ISO 8601"
        );
        assert_eq!(c("technician"), v.technician);
        let r = &v.readings;
        for (name, want) in [
            ("mains_vrms (V)", r.mains_vrms),
            ("secondary_vac (V)", r.secondary_vac),
            ("dc_v (V)", r.dc_v),
            ("ripple_pp_v (V)", r.ripple_pp_v),
            ("ripple_rms_v (V)", r.ripple_rms_v),
            ("ripple_hz (Hz)", r.ripple_hz),
            ("load_a (A)", r.load_a),
            ("line_vrms a-b (V)", r.line_vrms.map(|l| l[0])),
            ("line_vrms b-c (V)", r.line_vrms.map(|l| l[1])),
            ("line_vrms c-a (V)", r.line_vrms.map(|l| l[2])),
        ] {
            // Exactly: a reading is written as the shortest text that reads back to itself.
            assert_eq!(number(c(name)), want, "{name} of {date}");
        }
        assert_eq!(c("notes"), v.notes);
        let parts: Vec<String> = if c("replaced").is_empty() {
            Vec::new()
        } else {
            c("replaced").split("; ").map(str::to_string).collect()
        };
        assert_eq!(parts, v.replaced);
        assert_eq!(c("baseline"), if v.baseline { "true" } else { "false" });
        match &v.diagnosis {
            Some(d) => {
                assert_eq!(c("recorded verdict"), d.verdict);
                assert_eq!(c("recorded fault"), d.fault);
                assert_eq!(number(c("recorded score")), Some(d.score));
                assert_eq!(c("recorded estimate"), d.estimate.as_deref().unwrap_or(""));
            }
            None => {
                for k in ["recorded verdict", "recorded fault", "recorded score"] {
                    assert_eq!(c(k), "", "{k}");
                }
            }
        }
        match &judged[i] {
            Judgement::Judged {
                expectations,
                verdict,
                fault,
                score,
                ..
            } => {
                assert_eq!(c("verdict now"), *verdict);
                assert_eq!(c("fault now"), *fault);
                let s = number(c("score now")).unwrap();
                assert!((s - score).abs() <= 1e-5 * score.abs(), "{s} {score}");
                assert!(!expectations.is_empty());
                for e in expectations {
                    let unit = if e.reading == "line_imbalance_pct" {
                        "%"
                    } else if e.reading == "ripple_hz" {
                        "Hz"
                    } else if e.reading == "load_a" {
                        "A"
                    } else {
                        "V"
                    };
                    // Windows to six significant digits.
                    let lo = number(c(&format!("{} window low ({unit})", e.reading))).unwrap();
                    let hi = number(c(&format!("{} window high ({unit})", e.reading))).unwrap();
                    assert!((lo - e.min).abs() <= 1e-5 * e.min.abs(), "{lo} {}", e.min);
                    assert!((hi - e.max).abs() <= 1e-5 * e.max.abs(), "{hi} {}", e.max);
                    assert_eq!(c(&format!("{} now", e.reading)), e.status);
                }
            }
            Judgement::Refused(why) => assert_eq!(c("not judged"), why),
            Judgement::NotJudged => panic!("log judges every visit"),
        }
    }
}

/// Every demo supply's visits (invented), written as CSV and read back.
#[test]
fn the_demo_supplies_round_trip_through_csv() {
    let mut visits = 0;
    for (stem, text) in railcheck::library::demo::supplies() {
        let s = Supply::from_toml_str(&text).unwrap_or_else(|e| panic!("{stem}: {e}"));
        let (trend, judged) = work_out(&s, false);
        assert!(trend.is_none(), "the CSV needs no trend");
        let mut out = Vec::new();
        render_csv(&mut out, &s, &judged).unwrap();
        check_round_trip(&s, &judged, &String::from_utf8(out).unwrap());
        visits += s.visits.len();
    }
    assert!(visits >= 15, "{visits} demo visits");
}

/// A supply's file with the awkward things people type: commas, quotes, a line end and
/// non-ASCII in the notes, a comma in a name and a part, a baseline, a recorded verdict.
const AWKWARD_VISITS: &str = r#"
[[visit]]
date = 2026-02-01
technician = "Brandt, J."
mains_vrms = 229.0
dc_v = 28.4
ripple_pp_v = 1.1
load_a = 0.35
notes = """Replaced C3 ("the big one"), checked fuses.
Süd wing: 2 µF, Ω, ✓"""
replaced = ["C3 2200uF, 50V", "F1 \"slow\" 1A"]
baseline = true

[[visit]]
date = 2026-05-20
technician = "R. Okafor"
dc_v = 27.1
ripple_pp_v = 1.9
notes = "Relays buzz, again"

[visit.diagnosis]
verdict = "suspect"
fault = "capacitance-low"
score = 0.6123456789
estimate = "uf = 1371.0000"

[[visit]]
date = 2026-05-20
technician = "R. Okafor"
dc_v = 300.0
notes = "typo on the day"
"#;

fn awkward_file(dir: &Path) -> PathBuf {
    let text = format!(
        "{}{AWKWARD_VISITS}",
        std::fs::read_to_string(
            Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/pump-house-relay-rail.toml")
        )
        .unwrap()
    );
    let path = dir.join("awkward.toml");
    std::fs::write(&path, text).unwrap();
    path
}

#[test]
fn awkward_notes_round_trip_through_the_commands_csv() {
    let dir = temp_dir("awkward");
    let path = awkward_file(&dir);
    let s = Supply::from_toml_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    assert!(s.visits[0].notes.contains('\n') && s.visits[0].notes.contains('"'));
    let out = railcheck(&["log", path.to_str().unwrap(), "--csv"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let csv = String::from_utf8(out.stdout).unwrap();
    let (_, judged) = work_out(&s, false);
    // The DC of 300 V on a 24 V winding is refused as a typo: its reason is in the row.
    assert!(
        matches!(judged[2], Judgement::Refused(_)),
        "{:?}",
        judged[2]
    );
    check_round_trip(&s, &judged, &csv);
    // Quoted as RFC 4180 says: the notes' quotes doubled inside a quoted field.
    assert!(csv.contains("\"Replaced C3 (\"\"the big one\"\"), checked fuses.\nSüd wing"));

    // A three-phase unit's three line voltages: three columns, and the imbalance's window.
    let bus = railcheck::library::demo::supplies()
        .into_iter()
        .find(|(stem, _)| *stem == "low-lift-pump-drive-bus")
        .unwrap()
        .1;
    let path = dir.join("bus.toml");
    std::fs::write(
        &path,
        format!(
            "{bus}\n[[visit]]\ndate = 2026-09-01\nline_vrms = [401.0, 398.5, 404.0]\n\
             dc_v = 537.0\n"
        ),
    )
    .unwrap();
    let s = Supply::from_toml_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    let out = railcheck(&["log", path.to_str().unwrap(), "--csv"]);
    let csv = String::from_utf8(out.stdout).unwrap();
    let (_, judged) = work_out(&s, false);
    check_round_trip(&s, &judged, &csv);
    let rows = read_csv(&csv);
    let last = rows.last().unwrap();
    // NEMA MG 1's imbalance (memory): the largest departure from the mean over the mean,
    // (404 - 401.1667) / 401.1667 = 0.706 %, to a tenth.
    assert_eq!(cell(&rows[0], last, "line_imbalance_pct (%)"), "0.7");
    assert_eq!(
        cell(&rows[0], last, "line_imbalance_pct window high (%)"),
        "2"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn csv_and_json_together_are_refused() {
    let dir = temp_dir("both");
    let path = awkward_file(&dir);
    let out = railcheck(&["log", path.to_str().unwrap(), "--csv", "--json"]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("--csv") && err.contains("--json") && err.contains("cannot be used"),
        "{err}"
    );
    assert!(out.stdout.is_empty());
    let _ = std::fs::remove_dir_all(&dir);
}

/// The demo pump house (invented): each reading with its window, each visit with a verdict.
/// Its last visit's ripple (2.2 V) is twice its commissioning 1.12 V at the same load: on a
/// capacitor input the ripple goes as 1/C (fact of the trade, common practice), so a filter
/// capacitor gone low or lossy, never healthy. The windows are the ones `diagnose` gives for
/// the same readings.
#[test]
fn the_log_shows_each_reading_against_its_window_and_a_verdict() {
    let dir = temp_dir("pump");
    // A folder not yet there: the library is made with the demo supplies.
    let d = dir.join("library").display().to_string();
    let name = "Pump-house 2, relay rail";
    let out = railcheck(&["--library", &d, "log", name]);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    let last = text
        .lines()
        .find(|l| l.starts_with("  2026-11-30"))
        .unwrap_or_else(|| panic!("{text}"));
    assert!(
        (last.contains("FAULT") || last.contains("SUSPECT"))
            && (last.contains("filter capacitance low") || last.contains("ESR high"))
            && last.ends_with("(worked out now)"),
        "{last}"
    );
    // The last visit's window for its DC, as `diagnose --json` gives it for its readings.
    let diag = railcheck(&[
        "--library",
        &d,
        "diagnose",
        name,
        "--mains",
        "226",
        "--secondary",
        "23.6",
        "--dc",
        "26.9",
        "--ripple-pp",
        "2.2",
        "--ripple-hz",
        "100",
        "--load",
        "0.34",
        "--json",
    ]);
    let v: serde_json::Value = serde_json::from_slice(&diag.stdout).unwrap();
    let verdict = v["verdict"].as_str().unwrap().to_uppercase();
    assert!(last.contains(&format!("  {verdict}  ")), "{last}");
    let mut shown = 0;
    for r in v["readings"].as_array().unwrap() {
        let (min, max) = (r["min"].as_f64().unwrap(), r["max"].as_f64().unwrap());
        let status = match r["status"].as_str().unwrap() {
            "within" => "within",
            "above" => "ABOVE ",
            _ => "BELOW ",
        };
        let d = if max >= 100.0 {
            1
        } else if max >= 1.0 {
            2
        } else {
            3
        };
        let want = format!("{status}  {min:.d$} .. {max:.d$}");
        assert!(text.contains(&want), "{want:?} not in:\n{text}");
        shown += 1;
    }
    assert_eq!(shown, 6);
    assert!(text.contains("ripple peak to peak 2.2 V  ABOVE "), "{text}");
    assert_eq!(text.matches("(worked out now)").count(), 4, "{text}");

    // The JSON: every visit with its windows and the verdict it shows.
    let out = railcheck(&["--library", &d, "log", name, "--json"]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    for visit in v["visits"].as_array().unwrap() {
        let windows = visit["windows"].as_array().unwrap();
        assert!(windows.len() >= 4, "{visit}");
        for w in windows {
            assert!(["within", "above", "below"].contains(&w["status"].as_str().unwrap()));
            assert!(w["min"].as_f64().unwrap() <= w["max"].as_f64().unwrap());
        }
        assert_eq!(visit["verdict"]["source"], "worked out now");
        assert_eq!(
            visit["verdict"]["verdict"],
            visit["worked_out_now"]["verdict"]
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// A visit that kept its verdict shows it as recorded, the one worked out now beside it when
/// they differ; refused readings say why.
#[test]
fn a_recorded_verdict_is_shown_as_recorded() {
    let dir = temp_dir("recorded");
    let path = awkward_file(&dir);
    let file = path.to_str().unwrap();
    let out = railcheck(&["log", file]);
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        text.contains("2026-05-20  SUSPECT  filter capacitance low, 61 % (recorded)"),
        "{text}"
    );
    assert_eq!(text.matches("(recorded)").count(), 1, "{text}");
    // The typo visit: no verdict, its readings and the reason.
    assert!(text.contains("2026-05-20  no verdict"), "{text}");
    assert!(text.contains("not judged: "), "{text}");
    // The notes' second line is escaped onto the visit's line, never raw.
    assert!(text.contains("checked fuses.\\nSüd wing"), "{text}");
    assert!(
        text.contains("2026-02-01  ") && text.contains("  baseline"),
        "{text}"
    );
    let json = railcheck(&["log", file, "--json"]);
    let v: serde_json::Value = serde_json::from_slice(&json.stdout).unwrap();
    let kept = v["visits"]
        .as_array()
        .unwrap()
        .iter()
        .find(|x| x["verdict"]["source"] == "recorded")
        .unwrap();
    assert_eq!(kept["verdict"]["verdict"], "suspect");
    assert_eq!(kept["verdict"]["score"], 0.6123456789);
    assert_eq!(kept["verdict"]["estimate"], "uf = 1371.0000");
    // Worked out now as well; said beside the recorded one when it differs.
    let now = &kept["worked_out_now"];
    assert!(now["verdict"].is_string(), "{kept}");
    let differs = now["verdict"] != "suspect" || now["fault"] != "capacitance-low";
    assert_eq!(
        text.contains("              now: "),
        differs,
        "{kept}\n{text}"
    );
    let refused = v["visits"]
        .as_array()
        .unwrap()
        .iter()
        .find(|x| x["notes"] == "typo on the day")
        .unwrap();
    assert!(refused["not_judged"].as_str().unwrap().contains("300"));
    assert!(refused["verdict"].is_null());
    let _ = std::fs::remove_dir_all(&dir);
}
