//! `railcheck log`: a supply's visits, newest first, each reading against its window and the
//! visit's verdict, with the readings in words and units, and the capacitance trend in
//! microfarads; as JSON for scripts, or as CSV (oldest first) for a spreadsheet.

use super::diagnose::fault_words;
use super::words::{lines_value, reading, reading_value, window};
use super::written;
use crate::diagnose::Fault;
use crate::diagnose::judge::{self, Judgement};
use crate::diagnose::trend::{self, Trend};
use crate::escape::printable;
use crate::supply::Supply;
use crate::units::format_uf;
use crate::visit::Visit;
use anyhow::Result;
use std::io::Write;
use std::process::ExitCode;
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};

/// What `log` writes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    Text,
    Json,
    Csv,
}

/// Judges every visit of `supply` (in the order of its visits) and, when `with_trend`, works out
/// the capacitance trend, sharing the work among the cores.
///
/// Every visit is judged, not only the newest 12 as on the screen: a log is the unit's whole
/// record, printed, filed or opened in a spreadsheet, and an older row without its windows
/// would read as readings missing; the screen redraws on every key and needs its answer at
/// once, a log is asked for once. Visits read alike share one diagnosis, and the diagnoses
/// and the trend are independent, so they run side by side (about a second each for the demo
/// drive bus, a few tens of milliseconds for a single-phase rail).
pub fn work_out(supply: &Supply, with_trend: bool) -> (Option<Trend>, Vec<Judgement>) {
    let plan = judge::plan(supply, usize::MAX);
    // Job 0 is the trend (when asked), the others one distinct set of readings each.
    let jobs = plan.readings.len() + usize::from(with_trend);
    let next = AtomicUsize::new(0);
    let judged: Mutex<Vec<Option<Judgement>>> = Mutex::new(vec![None; plan.readings.len()]);
    let trend_out: Mutex<Option<Trend>> = Mutex::new(None);
    let threads = std::thread::available_parallelism()
        .map(|n| n.get())
        .unwrap_or(1)
        .min(jobs.max(1));
    let work = || {
        loop {
            let i = next.fetch_add(1, Ordering::Relaxed);
            if i >= jobs {
                return;
            }
            if with_trend && i == 0 {
                let t = trend::trend(supply);
                *trend_out.lock().unwrap_or_else(|e| e.into_inner()) = Some(t);
            } else {
                let k = i - usize::from(with_trend);
                let j = judge::judge(supply, &plan.readings[k]);
                judged.lock().unwrap_or_else(|e| e.into_inner())[k] = Some(j);
            }
        }
    };
    if threads <= 1 {
        work();
    } else {
        std::thread::scope(|s| {
            for _ in 1..threads {
                s.spawn(work);
            }
            work();
        });
    }
    let judged: Vec<Judgement> = judged
        .into_inner()
        .unwrap_or_else(|e| e.into_inner())
        .into_iter()
        .map(|j| j.unwrap_or(Judgement::NotJudged))
        .collect();
    let trend = trend_out.into_inner().unwrap_or_else(|e| e.into_inner());
    (trend, plan.assemble(&judged))
}

/// The verdict a visit shows: the one it kept when it was recorded, else the one worked out
/// now (none when the readings were refused).
struct Shown<'a> {
    verdict: &'a str,
    fault: &'a str,
    score: f64,
    source: &'static str,
}

const RECORDED: &str = "recorded";
const NOW: &str = "worked out now";

fn shown<'a>(v: &'a Visit, j: &'a Judgement) -> Option<Shown<'a>> {
    match (&v.diagnosis, j) {
        (Some(d), _) => Some(Shown {
            verdict: &d.verdict,
            fault: &d.fault,
            score: d.score,
            source: RECORDED,
        }),
        (
            None,
            Judgement::Judged {
                verdict,
                fault,
                score,
                ..
            },
        ) => Some(Shown {
            verdict,
            fault,
            score: *score,
            source: NOW,
        }),
        (None, Judgement::Refused(_) | Judgement::NotJudged) => None,
    }
}

/// A verdict in words: "FAULT  filter capacitance low, 97 %"; a healthy top fault is said
/// once ("HEALTHY"). A fault key the program does not know (a file from a later version) is
/// shown as it is, escaped.
fn verdict_words(verdict: &str, fault: &str, score: f64) -> String {
    let word = printable(verdict).to_uppercase();
    if fault.is_empty() || fault == Fault::Healthy.key() {
        return word;
    }
    let named = match Fault::ALL.iter().find(|f| f.key() == fault) {
        Some(f) => fault_words(*f).to_string(),
        None => printable(fault).into_owned(),
    };
    format!("{word}  {named}, {:.0} %", 100.0 * score)
}

fn newest_first(supply: &Supply) -> Vec<usize> {
    let mut order: Vec<usize> = (0..supply.visits.len()).collect();
    // A stable sort: visits of one day keep the file's order.
    order.sort_by_key(|&i| std::cmp::Reverse(supply.visits[i].date_text()));
    order
}

fn oldest_first(supply: &Supply) -> Vec<usize> {
    let mut order: Vec<usize> = (0..supply.visits.len()).collect();
    order.sort_by_key(|&i| supply.visits[i].date_text());
    order
}

/// The log as one JSON line (keys unchanged: name, visits, trend). Each visit adds its
/// `windows` (each reading against its window, as `diagnose --json` gives them), the
/// `verdict` it shows with its `source` ("recorded" or "worked out now"), the one
/// `worked_out_now`, and `not_judged` with the reason when the readings were refused.
pub fn render_json(
    out: &mut impl Write,
    supply: &Supply,
    trend: &Trend,
    judged: &[Judgement],
) -> std::io::Result<()> {
    let list: Vec<_> = newest_first(supply)
        .into_iter()
        .map(|i| {
            let v = &supply.visits[i];
            let j = &judged[i];
            let mut readings: serde_json::Map<String, serde_json::Value> = v
                .readings
                .present()
                .into_iter()
                .map(|(k, x)| (k.to_string(), x.into()))
                .collect();
            if let Some(lines) = v.readings.line_vrms {
                readings.insert("line_vrms".into(), serde_json::json!(lines));
            }
            let verdict = shown(v, j).map(|s| {
                let estimate = match (&v.diagnosis, s.source) {
                    (Some(d), RECORDED) => d.estimate.clone().into(),
                    _ => serde_json::Value::Null,
                };
                serde_json::json!({"verdict": s.verdict, "fault": s.fault, "score": s.score,
                    "estimate": estimate, "source": s.source})
            });
            let (windows, now, refused) = match j {
                Judgement::Judged {
                    expectations,
                    verdict,
                    fault,
                    score,
                    estimate,
                } => (
                    serde_json::json!(expectations),
                    serde_json::json!({"verdict": verdict, "fault": fault, "score": score,
                        "estimate": estimate.map(|(k, x)| serde_json::json!({ k: x }))}),
                    None,
                ),
                Judgement::Refused(why) => {
                    (serde_json::json!([]), serde_json::Value::Null, Some(why))
                }
                Judgement::NotJudged => (serde_json::json!([]), serde_json::Value::Null, None),
            };
            let storage = v
                .days()
                .and_then(|d| crate::analysis::capacitor_life::storage_caution(supply, d));
            serde_json::json!({"date": v.date_text(), "technician": v.technician,
                "readings": readings, "notes": v.notes, "replaced": v.replaced,
                "baseline": v.baseline, "windows": windows, "verdict": verdict,
                "worked_out_now": now, "not_judged": refused, "storage": storage})
        })
        .collect();
    writeln!(
        out,
        "{}",
        serde_json::json!({"name": supply.name, "visits": list, "trend": trend})
    )
}

/// Where each visit's detail lines start, under its date.
const INDENT: &str = "              ";

/// The log as text: each visit's date and verdict ("FAULT  filter capacitance low, 97 % (worked
/// out now)"), who came, each reading against its window ("DC 26.9 V  BELOW  28.10 .. 33.00 V"),
/// notes and parts replaced; then the capacitance each visit implies, its drift and the
/// projected crossing of the limit.
pub fn render_text(
    out: &mut impl Write,
    supply: &Supply,
    trend: &Trend,
    judged: &[Judgement],
) -> std::io::Result<()> {
    let order = newest_first(supply);
    writeln!(out, "{}: {} visits", printable(&supply.name), order.len())?;
    if !order.is_empty() {
        writeln!(
            out,
            "  Windows as the file stands now; a verdict kept with its visit shows as recorded."
        )?;
    }
    for i in order {
        let v = &supply.visits[i];
        let j = &judged[i];
        let mut head = format!("  {}", printable(&v.date_text()));
        match shown(v, j) {
            Some(s) => head.push_str(&format!(
                "  {} ({})",
                verdict_words(s.verdict, s.fault, s.score),
                s.source
            )),
            None => head.push_str("  no verdict"),
        }
        if v.baseline {
            head.push_str("  baseline");
        }
        writeln!(out, "{head}")?;
        // A verdict kept from the day that the file as it stands now no longer gives (a
        // calibration since, a corrected rating): both, so the windows below are not read
        // against the wrong verdict.
        if let (
            Some(d),
            Judgement::Judged {
                verdict,
                fault,
                score,
                ..
            },
        ) = (&v.diagnosis, j)
            && (d.verdict != *verdict || d.fault != *fault)
        {
            writeln!(
                out,
                "{INDENT}now: {}",
                verdict_words(verdict, fault, *score)
            )?;
        }
        if !v.technician.is_empty() {
            writeln!(out, "{INDENT}by {}", printable(&v.technician))?;
        }
        if let Some(c) = v
            .days()
            .and_then(|d| crate::analysis::capacitor_life::storage_caution(supply, d))
        {
            writeln!(out, "{INDENT}storage: {c}")?;
        }
        if let Some(lines) = v.readings.line_vrms {
            writeln!(out, "{INDENT}{}", lines_value(lines))?;
        }
        match j {
            Judgement::Judged { expectations, .. } => {
                let mut rows: Vec<(String, String)> = expectations
                    .iter()
                    .map(|e| {
                        let (_, unit) = reading(e.reading);
                        let mut value = reading_value(e.reading, e.value);
                        if e.reading == "mains_vrms" && v.readings.mains_vrms.is_none() {
                            value.push_str(" (the lines')");
                        }
                        let mark = match e.status {
                            "above" => "ABOVE ",
                            "below" => "BELOW ",
                            _ => "within",
                        };
                        (value, format!("{mark}  {}", window(e.min, e.max, unit)))
                    })
                    .collect();
                // A reading the diagnosis set no window for is still shown.
                for (k, x) in v.readings.present() {
                    if !expectations.iter().any(|e| e.reading == k) {
                        rows.push((reading_value(k, x), "(no window)".into()));
                    }
                }
                let width = rows
                    .iter()
                    .map(|(a, _)| a.chars().count())
                    .max()
                    .unwrap_or(0);
                for (value, against) in rows {
                    writeln!(out, "{INDENT}{value:<width$}  {against}")?;
                }
            }
            Judgement::Refused(_) | Judgement::NotJudged => {
                let readings: Vec<String> = v
                    .readings
                    .present()
                    .iter()
                    .map(|(k, x)| reading_value(k, *x))
                    .collect();
                if readings.is_empty() && v.readings.line_vrms.is_none() {
                    writeln!(out, "{INDENT}no readings")?;
                } else if !readings.is_empty() {
                    writeln!(out, "{INDENT}{}", readings.join(", "))?;
                }
                if let Judgement::Refused(why) = j {
                    writeln!(out, "{INDENT}not judged: {}", printable(why))?;
                }
            }
        }
        if !v.notes.is_empty() {
            writeln!(out, "{INDENT}{}", printable(&v.notes))?;
        }
        if !v.replaced.is_empty() {
            writeln!(
                out,
                "{INDENT}replaced: {}",
                printable(&v.replaced.join(", "))
            )?;
        }
    }
    writeln!(out, "  Capacitance the readings imply:")?;
    for p in &trend.points {
        match p.uf {
            Some(uf) => writeln!(out, "    {}  {:>10}", printable(&p.date), format_uf(uf))?,
            None => writeln!(
                out,
                "    {}  ({})",
                printable(&p.date),
                p.why_none.unwrap_or(crate::diagnose::trend::NO_READING)
            )?,
        }
    }
    if let Some(s) = trend.uf_per_year {
        writeln!(
            out,
            "  Drift {s:+.0} uF a year; limit {} ({})",
            format_uf(trend.limit_uf),
            trend.limit
        )?;
    }
    if let Some(c) = &trend.crossing {
        let range = match (&c.earliest, &c.latest) {
            (Some(a), Some(b)) => format!(" (between {a} and {b})"),
            (Some(a), None) => format!(" (from {a}; how late is not yet clear)"),
            _ => String::new(),
        };
        if c.already {
            writeln!(
                out,
                "  Below the limit since about {}{range}: replace the capacitor",
                c.date
            )?;
        } else {
            writeln!(
                out,
                "  Projected to cross the limit about {}{range}",
                c.date
            )?;
        }
    }
    if let Some(a) = &trend.ageing {
        writeln!(out, "  Against the temperature rule: {}", a.words)?;
    }
    writeln!(out, "  {}", trend.note)
}

/// The readings a visit can hold, in the CSV's order, with their units.
const READINGS: [(&str, &str); 7] = [
    ("mains_vrms", "V"),
    ("secondary_vac", "V"),
    ("dc_v", "V"),
    ("ripple_pp_v", "V"),
    ("ripple_rms_v", "V"),
    ("ripple_hz", "Hz"),
    ("load_a", "A"),
];

/// The readings that get a window, in the CSV's order: the visit's own, and the lines'
/// imbalance worked out from its three line voltages.
fn windowed() -> impl Iterator<Item = (&'static str, &'static str)> {
    READINGS
        .into_iter()
        .chain(std::iter::once(("line_imbalance_pct", "%")))
}

/// The CSV's header: each column named by its key, a unit in brackets where it has one.
pub fn csv_header() -> Vec<String> {
    let mut h: Vec<String> = vec!["date".into(), "technician".into()];
    h.extend(READINGS.iter().map(|(k, u)| format!("{k} ({u})")));
    for line in ["a-b", "b-c", "c-a"] {
        h.push(format!("line_vrms {line} (V)"));
    }
    h.push("line_imbalance_pct (%)".into());
    for k in [
        "notes",
        "replaced",
        "baseline",
        "recorded verdict",
        "recorded fault",
        "recorded score",
        "recorded estimate",
        "verdict now",
        "fault now",
        "score now",
        "estimate now",
        "not judged",
    ] {
        h.push(k.into());
    }
    for (k, u) in windowed() {
        h.push(format!("{k} window low ({u})"));
        h.push(format!("{k} window high ({u})"));
        h.push(format!("{k} now"));
    }
    h
}

/// A number as the shortest text that reads back to the same value, no unit, no exponent
/// (a spreadsheet reads it as a number); empty for a value that is not a finite number.
fn number(x: f64) -> String {
    if x.is_finite() {
        format!("{x}")
    } else {
        String::new()
    }
}

/// A worked-out value (a window's edge, a score) to six significant digits, far finer than any
/// meter reads: 253.00000000000003 is 253, as a technician would type it.
fn worked(x: f64) -> String {
    number(format!("{x:.5e}").parse().unwrap_or(f64::NAN))
}

fn maybe(x: Option<f64>) -> String {
    x.map(number).unwrap_or_default()
}

/// One field as RFC 4180 writes it: in double quotes, its quotes doubled, when it holds a
/// comma, a quote or a line end. Text typed by people keeps its line ends (the quotes carry
/// them) but any other control character is written as a visible escape (`\x1b`), as
/// everywhere the program prints: a CSV is often looked at in a terminal before a spreadsheet.
fn field(text: &str) -> String {
    let text: String = text
        .split('\n')
        .map(|line| printable(line).into_owned())
        .collect::<Vec<_>>()
        .join("\n");
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text
    }
}

/// Text a person typed, kept from being taken for a formula: a spreadsheet opening the CSV
/// runs a cell that starts with `=`, `+`, `-`, `@`, a tab or a carriage return, so such a cell
/// gets a leading apostrophe, which spreadsheets show as text (OWASP's advice on CSV
/// injection, from memory). Numbers are written by [`number`] and never pass through here.
fn typed(text: &str) -> String {
    if text.starts_with(['=', '+', '-', '@', '\t', '\r']) {
        format!("'{text}")
    } else {
        text.to_string()
    }
}

/// One visit's row, in the order of [`csv_header`].
fn csv_row(v: &Visit, j: &Judgement) -> Vec<String> {
    let r = &v.readings;
    let mut row = vec![v.date_text(), typed(&v.technician)];
    for (k, _) in READINGS {
        let x = r.present().into_iter().find(|(key, _)| *key == k);
        row.push(maybe(x.map(|(_, x)| x)));
    }
    for i in 0..3 {
        row.push(maybe(r.line_vrms.map(|l| l[i])));
    }
    row.push(maybe(r.line_imbalance_pct()));
    row.push(typed(&v.notes));
    // Parts joined as a technician lists them; "; " since a part's own text often has commas
    // ("C3 2200uF, 50V").
    row.push(typed(&v.replaced.join("; ")));
    row.push(v.baseline.to_string());
    match &v.diagnosis {
        Some(d) => {
            row.push(d.verdict.clone());
            row.push(d.fault.clone());
            row.push(number(d.score));
            row.push(d.estimate.clone().unwrap_or_default());
        }
        None => row.extend(std::iter::repeat_n(String::new(), 4)),
    }
    let expectations: &[crate::diagnose::Expectation] = match j {
        Judgement::Judged {
            expectations,
            verdict,
            fault,
            score,
            estimate,
        } => {
            row.push(verdict.to_string());
            row.push(fault.to_string());
            row.push(worked(*score));
            // As a recorded estimate is kept ("uf = 1093.1234"), so the two columns compare.
            row.push(
                estimate
                    .map(|(k, x)| format!("{k} = {x:.4}"))
                    .unwrap_or_default(),
            );
            row.push(String::new());
            expectations
        }
        Judgement::Refused(why) => {
            row.extend(std::iter::repeat_n(String::new(), 4));
            row.push(why.clone());
            &[]
        }
        Judgement::NotJudged => {
            row.extend(std::iter::repeat_n(String::new(), 5));
            &[]
        }
    };
    for (k, _) in windowed() {
        match expectations.iter().find(|e| e.reading == k) {
            Some(e) => {
                row.push(worked(e.min));
                row.push(worked(e.max));
                row.push(e.status.to_string());
            }
            None => row.extend(std::iter::repeat_n(String::new(), 3)),
        }
    }
    row
}

/// The visits as CSV (RFC 4180: fields separated by commas, records by CRLF), one header row
/// then one row per visit, oldest first, as a spreadsheet adds rows at the bottom and a chart
/// reads time left to right.
pub fn render_csv(
    out: &mut impl Write,
    supply: &Supply,
    judged: &[Judgement],
) -> std::io::Result<()> {
    let record = |out: &mut dyn Write, fields: Vec<String>| -> std::io::Result<()> {
        let line: Vec<String> = fields.iter().map(|f| field(f)).collect();
        write!(out, "{}\r\n", line.join(","))
    };
    record(out, csv_header())?;
    for i in oldest_first(supply) {
        record(out, csv_row(&supply.visits[i], &judged[i]))?;
    }
    Ok(())
}

/// Judges the visits of `supply` (and for text and JSON works out its trend) and writes its
/// log in `format`.
pub fn run(out: &mut impl Write, supply: &Supply, format: Format) -> Result<ExitCode> {
    // The CSV has no trend: its work is left out.
    let (trend, judged) = work_out(supply, format != Format::Csv);
    let trend = || trend.unwrap_or_else(|| trend::trend(supply));
    written(match format {
        Format::Json => render_json(out, supply, &trend(), &judged),
        Format::Text => render_text(out, supply, &trend(), &judged),
        Format::Csv => render_csv(out, supply, &judged),
    })?;
    Ok(ExitCode::SUCCESS)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::diagnose::Expectation;
    use crate::diagnose::trend::TrendPoint;

    #[test]
    fn visits_read_in_words_with_their_windows_and_capacitance_in_microfarads() {
        let s = Supply::from_toml_str(
            "format = 1\nname = \"unit\"\n[mains]\nvrms = 230.0\nhz = 50.0\n[transformer]\n\
             ratio = 9.58\n[rectifier]\ntopology = \"bridge\"\n[filter]\nkind = \"capacitor\"\n\
             uf = 4700.0\n[load]\namps = 0.35\n[[visit]]\ndate = 2026-03-01\n\
             mains_vrms = 226.0\ndc_v = 30.9\nripple_pp_v = 1.1\nload_a = 0.34\n",
        )
        .unwrap();
        // A trend and a judgement made by hand: the rendering is under test here, not the fit.
        let trend = Trend {
            points: vec![TrendPoint {
                date: "2026-03-01".into(),
                uf: Some(3901.4),
                why_none: None,
            }],
            uf_per_year: Some(-120.0),
            limit_uf: 3760.0,
            limit: "20 % below the stated capacitance".into(),
            crossing: None,
            note: "one visit".into(),
            ageing: None,
        };
        let window = |reading, value, min, max, status| Expectation {
            reading,
            value,
            uncertainty: 0.0,
            nominal: value,
            min,
            max,
            status,
            outside_pct: 0.0,
        };
        let judged = vec![Judgement::Judged {
            expectations: vec![
                window("mains_vrms", 226.0, 207.0, 253.0, "within"),
                window("dc_v", 30.9, 28.1, 33.0, "within"),
                window("ripple_pp_v", 1.1, 0.25, 0.41, "above"),
            ],
            verdict: "suspect",
            fault: "capacitance-low",
            score: 0.62,
            estimate: Some(("uf", 1900.0)),
        }];
        let mut out = Vec::new();
        render_text(&mut out, &s, &trend, &judged).unwrap();
        let text = String::from_utf8(out).unwrap();
        for want in [
            "2026-03-01  SUSPECT  filter capacitance low, 62 % (worked out now)",
            "mains 226 V                within  207.0 .. 253.0 V",
            "DC 30.9 V                  within  28.10 .. 33.00 V",
            "ripple peak to peak 1.1 V  ABOVE   0.250 .. 0.410 V",
            // No window was given for the load: still shown.
            "load current 0.34 A        (no window)",
            "3901 uF",
            "limit 3760 uF",
        ] {
            assert!(text.contains(want), "{want:?} not in:\n{text}");
        }
        assert!(!text.contains("dc_v") && !text.contains("mF"), "{text}");
    }

    /// RFC 4180, section 2: fields with commas, quotes or line breaks are enclosed in double
    /// quotes, a quote inside doubled.
    #[test]
    fn fields_are_quoted_as_rfc_4180_says() {
        assert_eq!(field("plain"), "plain");
        assert_eq!(field("a,b"), "\"a,b\"");
        assert_eq!(field("say \"hi\""), "\"say \"\"hi\"\"\"");
        assert_eq!(field("two\nlines"), "\"two\nlines\"");
        assert_eq!(field("Süd"), "Süd");
        // Other controls are escaped, never raw.
        assert_eq!(field("a\u{1b}[2Jb"), "a\\x1b[2Jb");
        assert_eq!(number(30.9), "30.9");
        assert_eq!(number(1e-7), "0.0000001");
        assert_eq!(number(f64::NAN), "");
        assert_eq!(worked(253.00000000000003), "253");
        assert_eq!(worked(0.04999999999999999), "0.05");
        assert_eq!(worked(26.022715648321153), "26.0227");
    }

    /// Typed text that a spreadsheet would run as a formula is written as text (OWASP's CSV
    /// injection advice, from memory); ordinary notes are left alone.
    #[test]
    fn typed_text_is_never_a_formula() {
        for (typed_in, written) in [
            ("=HYPERLINK(\"x\")", "'=HYPERLINK(\"x\")"),
            ("+1 spare fuse", "'+1 spare fuse"),
            ("-cap bulging", "'-cap bulging"),
            ("@J. Okafor", "'@J. Okafor"),
            ("\tindented", "'\tindented"),
            ("fan noisy", "fan noisy"),
            ("C3 = 2200uF", "C3 = 2200uF"),
        ] {
            assert_eq!(typed(typed_in), written);
        }
    }
}
