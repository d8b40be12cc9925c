//! The service record: one self-contained printable HTML page a technician leaves with the
//! customer at the end of a call-out. Pure formatting, like [`crate::report`]: the page is
//! built from a solved report, the visit, its diagnosis and the capacitance trend, and handed
//! back as a string; the command line and the screen write it.
//!
//! The page names no outside resource at all (no links, no fonts, no scripts, no images by
//! address): the CSS and the two sketches (inline SVG) are in the page itself, so it prints
//! the same years later on a machine with no network. `@page` sets the margins but no paper
//! size, and nothing is wider than A4's printable width (180 mm at 15 mm margins; US Letter's
//! is 186 mm), so one page prints whole on either paper.

use crate::analysis::capacitor_life::CapacitorLife;
use crate::circuit::Figure;
use crate::cli::diagnose::{estimate_words, fault_words, likely_part_line};
use crate::cli::words::{reading, value_like, window};
use crate::diagnose::Diagnosis;
use crate::diagnose::trend::Trend;
use crate::report::{Report, figure_rows, show, supply_line, valve_words};
use crate::units::{format_number, format_uf};
use crate::visit::Visit;
use std::fmt::Write as _;

/// How many of the likeliest causes the record lists (the screen and `diagnose` show more;
/// a customer's copy keeps to the few that matter).
pub const CAUSES_SHOWN: usize = 3;

/// The section headings, in the page's order (the tests look for each).
pub const HEADINGS: [&str; 11] = [
    "Safety cautions",
    "The unit",
    "The visit",
    "Readings against their windows",
    "Verdict and likely causes",
    "What the supply should read",
    "Ripple on the rail",
    "Filter capacitance across visits",
    "Expected capacitor life",
    "Rating checks",
    "Signatures",
];

/// The words at the foot of every record.
pub const DEFERS: &str = "This record defers to local codes and licensed practice: mains and \
     charged capacitors can kill; verify with a meter before touching.";

/// `text` safe to put in HTML text or a quoted attribute: `& < > " '` as entities; a control
/// character (other than a line break or a tab, which the page keeps) or a bidirectional
/// override written visibly as [`crate::escape::printable`] writes it, so nothing typed into
/// a file can add markup, end an attribute or reorder what the customer reads.
pub fn escape_html(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 8);
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            '\n' | '\t' => out.push(c),
            c => {
                let mut buf = [0u8; 4];
                let one = c.encode_utf8(&mut buf);
                // printable() leaves ordinary characters as they are and spells out the rest
                // (`\x1b`, `\u{202e}`), which holds none of the five characters above.
                out.push_str(&crate::escape::printable(one));
            }
        }
    }
    out
}

/// Builds the service record of `visit` to the supply of `report` (read from the file named
/// `file`): its diagnosis (or why the visit's readings gave none) and the trend of all its
/// visits. Returns the whole HTML page.
pub fn service_record(
    report: &Report,
    visit: &Visit,
    diagnosis: Result<&Diagnosis, &str>,
    trend: &Trend,
    file: &str,
) -> String {
    let s = &report.supply;
    let name = escape_html(&s.name);
    let date = escape_html(&visit.date_text());
    let mut h = String::with_capacity(32_000);
    h.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n");
    let _ = writeln!(h, "<title>Service record: {name}, {date}</title>");
    let _ = writeln!(h, "<style>{CSS}</style>\n</head>\n<body>");
    let _ = writeln!(
        h,
        "<header><h1>Service record</h1><p class=\"lead\"><strong>{name}</strong> &middot; \
         visit of {date}</p></header>"
    );

    // The cautions first and boxed: whoever reads the page next may open the unit.
    section(&mut h, 0, "cautions", |h| {
        h.push_str("<ul>");
        for c in &report.cautions {
            let _ = write!(h, "<li><strong>CAUTION:</strong> {}</li>", escape_html(c));
        }
        // A visit long after the one before: the storage (reforming) advice.
        if let Some(c) = visit
            .days()
            .and_then(|d| crate::analysis::capacitor_life::storage_caution(&report.supply, d))
        {
            let _ = write!(h, "<li><strong>STORAGE:</strong> {}</li>", escape_html(&c));
        }
        h.push_str("</ul>");
    });

    section(&mut h, 1, "", |h| {
        h.push_str("<table class=\"facts\">");
        fact(h, "Name", &name);
        if let Some(site) = &s.site {
            fact(h, "Site", &escape_html(site));
        }
        fact(h, "Supply", &escape_html(&supply_line(s)));
        for line in valve_words(s) {
            fact(h, "Rectifier valve", &escape_html(&line));
        }
        if s.rectifier.topology.rails() == 2 {
            fact(
                h,
                "Split rail",
                "the figures below are the + rail's; the - rail mirrors it",
            );
        }
        if !s.notes.trim().is_empty() {
            fact(
                h,
                "Notes",
                &format!("<span class=\"pre\">{}</span>", escape_html(s.notes.trim())),
            );
        }
        h.push_str("</table>");
    });

    section(&mut h, 2, "", |h| {
        h.push_str("<table class=\"facts\">");
        fact(h, "Date", &date);
        fact(
            h,
            "Technician",
            &if visit.technician.trim().is_empty() {
                "(not recorded)".to_string()
            } else {
                escape_html(&visit.technician)
            },
        );
        fact(
            h,
            "Parts replaced",
            &if visit.replaced.is_empty() {
                "none".to_string()
            } else {
                escape_html(&visit.replaced.join("; "))
            },
        );
        if visit.baseline {
            fact(
                h,
                "Baseline",
                "the unit was calibrated on this visit's readings (known good)",
            );
        }
        fact(
            h,
            "Notes",
            &if visit.notes.trim().is_empty() {
                "none".to_string()
            } else {
                format!(
                    "<span class=\"pre\">{}</span>",
                    escape_html(visit.notes.trim())
                )
            },
        );
        h.push_str("</table>");
    });

    section(&mut h, 3, "", |h| match diagnosis {
        Ok(d) => readings_table(h, d),
        Err(why) => {
            let _ = write!(
                h,
                "<p>The visit's readings give no diagnosis: {}</p>",
                escape_html(why)
            );
        }
    });

    section(&mut h, 4, "", |h| match diagnosis {
        Ok(d) => verdict(h, report, d),
        Err(_) => h.push_str("<p>No verdict: see the readings above.</p>"),
    });

    section(&mut h, 5, "", |h| figures_table(h, report));

    section(&mut h, 6, "", |h| {
        ripple_svg(h, report);
    });

    section(&mut h, 7, "", |h| trend_part(h, trend, visit));

    section(&mut h, 8, "", |h| {
        life_part(h, report.capacitor_life.as_ref(), report)
    });

    section(&mut h, 9, "", |h| checks_part(h, report));

    section(&mut h, 10, "signatures", |h| {
        h.push_str(
            "<div class=\"sign\"><div class=\"line\">Technician's signature</div>\
             <div class=\"line short\">Date</div></div>\
             <div class=\"sign\"><div class=\"line\">Customer's signature</div>\
             <div class=\"line short\">Date</div></div>",
        );
    });

    let _ = writeln!(
        h,
        "<footer><p><strong>railcheck</strong> &middot; {} &middot; visit of {date}</p>\
         <p>{}</p></footer>\n</body>\n</html>",
        escape_html(file),
        escape_html(DEFERS)
    );
    h
}

/// The service record of `visit` to `supply`, read from `file` (a path; the page names only
/// its file name): the report solved, the visit's readings diagnosed (a visit whose readings
/// give no diagnosis still gets its record, saying why) and the trend of all the visits.
pub fn of_visit(
    supply: &crate::supply::Supply,
    visit: &Visit,
    file: &str,
) -> Result<String, crate::circuit::CircuitError> {
    let report = crate::report::build_default(supply.clone(), file)?;
    let diagnosis = crate::diagnose::diagnose(supply, &visit.readings).map_err(|e| e.to_string());
    let trend = crate::diagnose::trend::trend(supply);
    let name = std::path::Path::new(file)
        .file_name()
        .map(|f| f.to_string_lossy().into_owned())
        .unwrap_or_else(|| file.to_string());
    Ok(service_record(
        &report,
        visit,
        diagnosis.as_ref().map_err(String::as_str),
        &trend,
        &name,
    ))
}

/// A `<section>` with its heading `HEADINGS[i]`, its body written by `body`.
fn section(h: &mut String, i: usize, class: &str, body: impl FnOnce(&mut String)) {
    if class.is_empty() {
        h.push_str("<section>");
    } else {
        let _ = write!(h, "<section class=\"{class}\">");
    }
    let _ = write!(h, "<h2>{}</h2>", HEADINGS[i]);
    body(h);
    h.push_str("</section>\n");
}

/// One row of a two-column table of facts; `html` is already escaped.
fn fact(h: &mut String, label: &str, html: &str) {
    let _ = write!(h, "<tr><th>{label}</th><td>{html}</td></tr>");
}

/// A value with its unit ("9.62 V"; a bare number when the unit is empty).
fn with_unit(value: f64, unit: &str) -> String {
    if unit.is_empty() {
        format_number(value)
    } else {
        format!("{} {unit}", format_number(value))
    }
}

fn readings_table(h: &mut String, d: &Diagnosis) {
    if d.expectations.is_empty() {
        h.push_str("<p>No readings were recorded on this visit.</p>");
        return;
    }
    h.push_str(
        "<p>Each reading against the window the supply should read within over its \
         tolerances (at the measured mains where it was read).</p>\
         <table class=\"grid\"><thead><tr><th>Reading</th><th class=\"num\">Measured</th>\
         <th class=\"num\">Expected</th><th class=\"num\">Nominal</th><th>Status</th></tr>\
         </thead><tbody>",
    );
    for e in &d.expectations {
        let (label, unit) = reading(e.reading);
        // The status in words, out-of-window ones in capitals and bold: never colour alone.
        // The core counts a reading within its window when the meter's own error reaches
        // into it; the page says so where the figure alone would look outside.
        let status = match e.status {
            "within" if e.value < e.min || e.value > e.max => {
                "within (by the meter's error)".to_string()
            }
            "within" => "within".to_string(),
            other => format!("<strong>{}</strong>", escape_html(&other.to_uppercase())),
        };
        let _ = write!(
            h,
            "<tr><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td>\
             <td class=\"num\">{}</td><td>{status}</td></tr>",
            escape_html(label),
            with_unit(e.value, unit),
            window(e.min, e.max, unit),
            value_like(e.nominal, e.min, e.max, unit),
        );
    }
    h.push_str("</tbody></table>");
}

fn verdict(h: &mut String, report: &Report, d: &Diagnosis) {
    let meaning = match d.verdict {
        "healthy" => "Every reading is within what the supply should read",
        "suspect" => "A reading is outside its window, or a fault fits better than health",
        "fault" => "The readings show a fault",
        _ => "",
    };
    let _ = write!(
        h,
        "<p class=\"verdict\">Verdict: <strong>{}</strong></p><p>{meaning}.</p>",
        escape_html(&d.verdict.to_uppercase())
    );
    if d.hypotheses.is_empty() {
        return;
    }
    if let Some(line) = likely_part_line(d) {
        let _ = write!(h, "<p><strong>{}</strong></p>", escape_html(&line));
    }
    h.push_str(
        "<p>Likeliest causes first, with each one's share of belief and the check that tells \
         it apart:</p><table class=\"grid\"><thead><tr><th class=\"num\">Share</th>\
         <th>Cause</th><th>Next check</th></tr></thead><tbody>",
    );
    for hyp in d.hypotheses.iter().take(CAUSES_SHOWN) {
        let estimate = estimate_words(hyp, &report.supply)
            .map(|w| format!("<br><span class=\"small\">{}</span>", escape_html(&w)))
            .unwrap_or_default();
        let _ = write!(
            h,
            "<tr><td class=\"num\">{:.1} %</td><td>{}{estimate}</td><td>{}</td></tr>",
            100.0 * hyp.score,
            escape_html(fault_words(hyp.fault)),
            escape_html(hyp.next_check)
        );
    }
    h.push_str("</tbody></table>");
}

fn figures_table(h: &mut String, report: &Report) {
    h.push_str(
        "<p>Worked out from the supply's file at nominal, with the lowest and highest over its \
         tolerances (mains, parts, load).</p>\
         <table class=\"grid\"><thead><tr><th>Figure</th><th class=\"num\">Nominal</th>\
         <th class=\"num\">Worst min</th><th class=\"num\">Worst max</th></tr></thead><tbody>",
    );
    for (label, key, value, unit) in figure_rows(&report.nominal.figures, &report.supply) {
        let (lo, hi) = match Figure::from_key(key).and_then(|f| report.worst.extent(f)) {
            Some(e) => (show(Some(e.min), unit), show(Some(e.max), unit)),
            None => ("--".into(), "--".into()),
        };
        let _ = write!(
            h,
            "<tr><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td>\
             <td class=\"num\">{}</td></tr>",
            escape_html(label),
            escape_html(&show(value, unit)),
            escape_html(&lo),
            escape_html(&hi)
        );
    }
    h.push_str("</tbody></table>");
}

fn life_part(h: &mut String, life: Option<&CapacitorLife>, report: &Report) {
    let Some(l) = life else {
        let why = if report.supply.filter.kind.has_capacitor() {
            "The supply's file gives no life rating for the filter capacitor (filter.rated_life_h \
             and filter.rated_life_c, from the capacitor's data sheet), so no life is worked out."
        } else {
            "This supply has no filter capacitor."
        };
        let _ = write!(h, "<p>{why}</p>");
        return;
    };
    let _ = write!(
        h,
        "<p>The first filter capacitor, by the makers' rule (its life doubles every 10 degC \
         cooler): <strong>about {} at nominal</strong>, {} at the worst corner.</p>\
         <p class=\"small\">{}</p><p class=\"small\">Worst corner: {}</p>",
        escape_html(&crate::analysis::capacitor_life::years_words(
            l.nominal.years
        )),
        escape_html(&crate::analysis::capacitor_life::years_words(l.worst.years)),
        escape_html(&l.words()),
        escape_html(&l.worst_at)
    );
    if !l.assumed.is_empty() {
        h.push_str("<ul class=\"small\">");
        for a in &l.assumed {
            let _ = write!(h, "<li>assumed: {}</li>", escape_html(a));
        }
        h.push_str("</ul>");
    }
}

fn checks_part(h: &mut String, report: &Report) {
    if report.checks.is_empty() {
        h.push_str("<p>No rating was given in the file to check against.</p>");
    } else {
        h.push_str(
            "<p>Each part's rating against the worst it sees over the tolerances.</p>\
             <table class=\"grid\"><thead><tr><th>Status</th><th>Check</th><th>What</th></tr>\
             </thead><tbody>",
        );
        for c in &report.checks {
            let word = c.status.word();
            let status = if word == "OK" {
                word.to_string()
            } else {
                format!("<strong>{word}</strong>")
            };
            let _ = write!(
                h,
                "<tr><td>{status}</td><td>{}</td><td>{}</td></tr>",
                escape_html(&c.id.replace('_', " ")),
                escape_html(&c.message)
            );
        }
        h.push_str("</tbody></table>");
    }
    if !report.not_rated.is_empty() {
        let _ = write!(
            h,
            "<p class=\"small\">Not checked (no rating in the file): {}</p>",
            escape_html(&report.not_rated.join(", ").replace('_', " "))
        );
    }
}

/// Tick marks at a round step (1, 2 or 5 times a power of ten) over `lo..hi`, about `want`
/// of them, and the decimals their labels need.
fn ticks(lo: f64, hi: f64, want: usize) -> (Vec<f64>, usize) {
    let span = hi - lo;
    if !(span.is_finite() && span > 0.0) {
        return (vec![lo], 0);
    }
    let raw = span / want.max(1) as f64;
    let power = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * power)
        // Within 0.7 of the raw step, so a span of 2.9 with five wanted gets 0.5 (six marks)
        // rather than 1 (two).
        .find(|s| *s >= 0.7 * raw)
        .unwrap_or(10.0 * power);
    let decimals = (-step.log10().floor()).max(0.0) as usize;
    let first = (lo / step).ceil() as i64;
    let last = (hi / step).floor() as i64;
    let marks = (first..=last).map(|k| k as f64 * step).collect();
    (marks, decimals)
}

/// The plot's box within the SVG's view box: left, top, right, bottom.
const PLOT: (f64, f64, f64, f64) = (64.0, 12.0, 628.0, 188.0);
const VIEW_W: f64 = 640.0;
const VIEW_H: f64 = 228.0;

/// Maps data coordinates into the plot box.
struct Axes {
    x: (f64, f64),
    y: (f64, f64),
}

impl Axes {
    fn px(&self, x: f64) -> f64 {
        PLOT.0 + (x - self.x.0) / (self.x.1 - self.x.0) * (PLOT.2 - PLOT.0)
    }
    fn py(&self, y: f64) -> f64 {
        PLOT.3 - (y - self.y.0) / (self.y.1 - self.y.0) * (PLOT.3 - PLOT.1)
    }
}

/// Opens an SVG of the common view box, with `label` for screen readers, and draws the plot's
/// frame, the vertical axis's ticks (labelled by `y_label`) and its title.
fn svg_open(
    h: &mut String,
    label: &str,
    axes: &Axes,
    y_title: &str,
    y_label: impl Fn(f64) -> String,
) {
    let _ = write!(
        h,
        "<figure><svg viewBox=\"0 0 {VIEW_W} {VIEW_H}\" width=\"100%\" role=\"img\" \
         aria-label=\"{}\" font-family=\"sans-serif\" font-size=\"11\">",
        escape_html(label)
    );
    let _ = write!(
        h,
        "<rect x=\"{:.1}\" y=\"{:.1}\" width=\"{:.1}\" height=\"{:.1}\" fill=\"none\" \
         stroke=\"#000\" stroke-width=\"0.8\"/>",
        PLOT.0,
        PLOT.1,
        PLOT.2 - PLOT.0,
        PLOT.3 - PLOT.1
    );
    let (marks, _) = ticks(axes.y.0, axes.y.1, 5);
    for v in marks {
        let y = axes.py(v);
        let _ = write!(
            h,
            "<line x1=\"{:.1}\" y1=\"{y:.1}\" x2=\"{:.1}\" y2=\"{y:.1}\" stroke=\"#ccc\" \
             stroke-width=\"0.6\"/><text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"end\">{}</text>",
            PLOT.0,
            PLOT.2,
            PLOT.0 - 4.0,
            y + 4.0,
            y_label(v)
        );
    }
    let mid = (PLOT.1 + PLOT.3) / 2.0;
    let _ = write!(
        h,
        "<text x=\"12\" y=\"{mid:.1}\" text-anchor=\"middle\" \
         transform=\"rotate(-90 12 {mid:.1})\">{y_title}</text>"
    );
}

/// A polyline through `pts` (already in view box coordinates).
fn polyline(h: &mut String, pts: &[(f64, f64)], style: &str) {
    if pts.len() < 2 {
        return;
    }
    h.push_str("<polyline fill=\"none\" ");
    h.push_str(style);
    h.push_str(" points=\"");
    for (x, y) in pts {
        let _ = write!(h, "{x:.1},{y:.1} ");
    }
    h.push_str("\"/>");
}

/// The nominal solve's rail over one mains period, with the rectified source where it comes
/// into the rail's range (the charging pulses) and the rail's highest and lowest marked.
fn ripple_svg(h: &mut String, report: &Report) {
    let w = &report.nominal.waveform;
    let f = &report.nominal.figures;
    let period = w.t_ms.last().copied().unwrap_or(0.0);
    let finite = w.v_out.iter().all(|v| v.is_finite());
    if w.t_ms.len() < 2
        || period.is_nan()
        || period <= 0.0
        || !finite
        || !f.max_v.is_finite()
        || !f.min_v.is_finite()
    {
        h.push_str("<p>No waveform to draw.</p>");
        return;
    }
    // The scale spans the ripple with half its height again above and below, so a small
    // ripple on a tall rail is still seen (the axis does not start at zero: its labels say
    // where it is).
    let span = (f.max_v - f.min_v).max(0.002 * f.max_v.abs()).max(1e-3);
    let axes = Axes {
        x: (0.0, period),
        y: (f.min_v - 0.5 * span, f.max_v + 0.5 * span),
    };
    let (_, dec) = ticks(axes.y.0, axes.y.1, 5);
    svg_open(
        h,
        "the rail's voltage over one mains period",
        &axes,
        "rail (V)",
        |v| format!("{v:.dec$}"),
    );
    let (xmarks, xdec) = ticks(0.0, period, 8);
    for t in xmarks {
        let x = axes.px(t);
        let _ = write!(
            h,
            "<line x1=\"{x:.1}\" y1=\"{:.1}\" x2=\"{x:.1}\" y2=\"{:.1}\" stroke=\"#000\" \
             stroke-width=\"0.8\"/><text x=\"{x:.1}\" y=\"{:.1}\" text-anchor=\"middle\">\
             {t:.xdec$}</text>",
            PLOT.3,
            PLOT.3 + 4.0,
            PLOT.3 + 16.0
        );
    }
    let _ = write!(
        h,
        "<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\">time (ms), one mains period \
         from the zero crossing</text>",
        (PLOT.0 + PLOT.2) / 2.0,
        PLOT.3 + 34.0
    );
    // The source only where it is inside the scale: broken into runs, so nothing is drawn
    // outside the frame (no clip path: the page names no reference of any kind).
    let mut run: Vec<(f64, f64)> = Vec::new();
    let source_style = "stroke=\"#777\" stroke-width=\"1\" stroke-dasharray=\"4 3\"";
    for (t, v) in w.t_ms.iter().zip(&w.v_source) {
        if v.is_finite() && *v >= axes.y.0 && *v <= axes.y.1 {
            run.push((axes.px(*t), axes.py(*v)));
        } else {
            polyline(h, &run, source_style);
            run.clear();
        }
    }
    polyline(h, &run, source_style);
    // One decimal finer than the scale's, so the two marks read apart.
    let fine = dec + 1;
    for (v, word) in [(f.max_v, "highest"), (f.min_v, "lowest")] {
        let y = axes.py(v);
        let _ = write!(
            h,
            "<line x1=\"{:.1}\" y1=\"{y:.1}\" x2=\"{:.1}\" y2=\"{y:.1}\" stroke=\"#000\" \
             stroke-width=\"0.6\" stroke-dasharray=\"1 3\"/>\
             <text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"end\" font-size=\"10\">{word} \
             {v:.fine$} V</text>",
            PLOT.0,
            PLOT.2,
            PLOT.2 - 4.0,
            if word == "highest" { y - 4.0 } else { y + 12.0 },
        );
    }
    let rail: Vec<(f64, f64)> = w
        .t_ms
        .iter()
        .zip(&w.v_out)
        .map(|(t, v)| (axes.px(*t), axes.py(*v)))
        .collect();
    polyline(h, &rail, "stroke=\"#000\" stroke-width=\"1.8\"");
    h.push_str("</svg>");
    let _ = write!(
        h,
        "<figcaption>The rail at nominal (solid line): DC {} V, ripple {} V peak to peak at \
         {} Hz. Dashed: the rectified winding, where it comes up to the rail and charges the \
         capacitor. The vertical scale does not start at zero.</figcaption></figure>",
        format_number((f.dc_v * 100.0).round() / 100.0),
        format_number((f.ripple_pp_v * 1000.0).round() / 1000.0),
        format_number(f.ripple_hz.round())
    );
}

fn day_of(date: &str) -> Option<f64> {
    let mut it = date.split('-').map(|p| p.parse::<i64>().ok());
    let (y, m, d) = (it.next()??, it.next()??, it.next()??);
    Some(crate::visit::days_from_civil(y, m, d) as f64)
}

/// The capacitance each visit implies, against time, with the limit line; a table of the
/// points below (what the chart shows, readable as text), or words when there is no trend.
fn trend_part(h: &mut String, trend: &Trend, visit: &Visit) {
    let pts: Vec<(f64, f64)> = trend
        .points
        .iter()
        .filter_map(|p| Some((day_of(&p.date)?, p.uf.filter(|u| u.is_finite())?)))
        .collect();
    let lim = trend.limit_uf;
    let _ = write!(
        h,
        "<p>The capacitance each visit's readings imply (filter capacitor), against its limit \
         of {}: {}.</p>",
        format_uf(lim),
        escape_html(&trend.limit)
    );
    if pts.len() < 2 {
        let _ = write!(
            h,
            "<p>No chart: fewer than two visits give a capacitance ({} of {}), so there is no \
             trend to draw yet. {}.</p>",
            pts.len(),
            trend.points.len(),
            escape_html(&capitalised(&trend.note))
        );
    } else {
        let x0 = pts.iter().map(|p| p.0).fold(f64::INFINITY, f64::min);
        let mut x1 = pts.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max);
        let crossing_day = trend.crossing.as_ref().and_then(|c| day_of(&c.date));
        // Room for the projected crossing, as the screen's chart, but never more than three
        // times the visits' own span (a far projection would squash them).
        if let Some(c) = crossing_day {
            x1 = x1.max(c).min(x0 + 3.0 * (x1 - x0).max(365.0));
        }
        let x1 = x1.max(x0 + 1.0);
        // A margin of 3 % each side, so the first and last visits' marks sit inside the frame.
        let pad = 0.03 * (x1 - x0);
        let finite_lim = if lim.is_finite() && lim > 0.0 {
            Some(lim)
        } else {
            None
        };
        let lo = pts
            .iter()
            .map(|p| p.1)
            .fold(finite_lim.unwrap_or(f64::INFINITY), f64::min);
        let hi = pts
            .iter()
            .map(|p| p.1)
            .fold(finite_lim.unwrap_or(f64::NEG_INFINITY), f64::max);
        let axes = Axes {
            x: (x0 - pad, x1 + pad),
            y: (lo * 0.9, (hi * 1.1).max(lo * 0.9 + 1e-6)),
        };
        let (_, dec) = ticks(axes.y.0, axes.y.1, 5);
        svg_open(
            h,
            "the filter capacitance each visit implies, against time",
            &axes,
            "capacitance (uF)",
            |v| format!("{v:.dec$}"),
        );
        // Years along the foot where the span holds two or more new years, else the ends.
        let first_year = crate::visit::civil_from_days(x0 as i64)[..4]
            .parse::<i64>()
            .unwrap_or(1970);
        let years: Vec<(f64, String)> = (first_year..first_year + 200)
            .map(|y| (crate::visit::days_from_civil(y, 1, 1) as f64, y.to_string()))
            .skip_while(|(d, _)| *d < x0)
            .take_while(|(d, _)| *d <= x1)
            .collect();
        let marks = if years.len() >= 2 {
            let every = years.len().div_ceil(10);
            years.into_iter().step_by(every).collect()
        } else {
            vec![
                (x0, crate::visit::civil_from_days(x0 as i64)),
                (x1, crate::visit::civil_from_days(x1 as i64)),
            ]
        };
        for (i, (d, words)) in marks.iter().enumerate() {
            let x = axes.px(*d);
            let anchor = match (marks.len(), i) {
                (2, 0) => "start",
                (2, 1) => "end",
                _ => "middle",
            };
            let _ = write!(
                h,
                "<line x1=\"{x:.1}\" y1=\"{:.1}\" x2=\"{x:.1}\" y2=\"{:.1}\" stroke=\"#000\" \
                 stroke-width=\"0.8\"/><text x=\"{x:.1}\" y=\"{:.1}\" \
                 text-anchor=\"{anchor}\">{words}</text>",
                PLOT.3,
                PLOT.3 + 4.0,
                PLOT.3 + 16.0
            );
        }
        let _ = write!(
            h,
            "<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\">date of visit</text>",
            (PLOT.0 + PLOT.2) / 2.0,
            PLOT.3 + 34.0
        );
        if let Some(l) = finite_lim {
            let y = axes.py(l);
            let _ = write!(
                h,
                "<line x1=\"{:.1}\" y1=\"{y:.1}\" x2=\"{:.1}\" y2=\"{y:.1}\" stroke=\"#000\" \
                 stroke-width=\"1.2\" stroke-dasharray=\"6 3\"/><text x=\"{:.1}\" y=\"{:.1}\" \
                 text-anchor=\"end\" font-size=\"10\">limit {}</text>",
                PLOT.0,
                PLOT.2,
                PLOT.2 - 4.0,
                y - 4.0,
                format_uf(l)
            );
        }
        if let Some(c) = crossing_day.filter(|c| *c >= x0 && *c <= x1) {
            let x = axes.px(c);
            let _ = write!(
                h,
                "<line x1=\"{x:.1}\" y1=\"{:.1}\" x2=\"{x:.1}\" y2=\"{:.1}\" stroke=\"#000\" \
                 stroke-width=\"0.6\" stroke-dasharray=\"1 3\"/>",
                PLOT.1, PLOT.3
            );
        }
        let line: Vec<(f64, f64)> = pts
            .iter()
            .map(|(d, u)| (axes.px(*d), axes.py(*u)))
            .collect();
        polyline(h, &line, "stroke=\"#000\" stroke-width=\"1.4\"");
        let this_day = visit.days().map(|d| d as f64);
        for ((d, _), (x, y)) in pts.iter().zip(&line) {
            // This visit's point a square, the others dots: told apart by shape, not colour.
            if Some(*d) == this_day {
                let _ = write!(
                    h,
                    "<rect x=\"{:.1}\" y=\"{:.1}\" width=\"9\" height=\"9\" fill=\"#fff\" \
                     stroke=\"#000\" stroke-width=\"1.6\"/>",
                    x - 4.5,
                    y - 4.5
                );
            } else {
                let _ = write!(
                    h,
                    "<circle cx=\"{x:.1}\" cy=\"{y:.1}\" r=\"3.5\" fill=\"#000\"/>"
                );
            }
        }
        h.push_str("</svg>");
        h.push_str(
            "<figcaption>Dots: the capacitance each visit implies; the square: this visit; \
             dashed: the limit; dotted upright: the projected crossing.</figcaption></figure>",
        );
    }
    let _ = write!(h, "<p>{}.</p>", escape_html(&capitalised(&trend.summary())));
    // The points in words too: what the chart shows, readable and searchable as text.
    if !trend.points.is_empty() {
        let this = visit.date_text();
        let each: Vec<String> = trend
            .points
            .iter()
            .map(|p| {
                let value = match (p.uf, p.why_none) {
                    (Some(uf), _) => format_uf(uf),
                    (None, Some(why)) => format!("none ({why})"),
                    (None, None) => "none".into(),
                };
                let mark = if p.date == this { " (this visit)" } else { "" };
                format!("{}{mark}: {value}", p.date)
            })
            .collect();
        let _ = write!(
            h,
            "<p class=\"small\">Each visit: {}.</p>",
            escape_html(&each.join("; "))
        );
    }
}

/// `text` with its first letter a capital, for a sentence made of a core's phrase.
fn capitalised(text: &str) -> String {
    let mut c = text.chars();
    match c.next() {
        Some(first) => first.to_uppercase().chain(c).collect(),
        None => String::new(),
    }
}

/// The page's own style sheet. Print first: 15 mm margins and no paper size (A4 and US
/// Letter both fit), nothing broken across a page that need not be, nothing wider than the
/// printable width; on a screen the same page at a readable width.
const CSS: &str = "
@page { margin: 15mm }
html { background: #fff; color: #000 }
body { font-family: sans-serif; font-size: 10pt; line-height: 1.35; max-width: 180mm;
  margin: 0 auto; padding: 0 }
@media screen { body { padding: 6mm } }
header { border-bottom: 2px solid #000; margin-bottom: 3mm }
h1 { font-size: 17pt; margin: 0 0 1mm 0 }
.lead { font-size: 12pt; margin: 0 0 2mm 0 }
h2 { font-size: 12pt; margin: 4mm 0 1.5mm 0; border-bottom: 1px solid #888;
  break-after: avoid; page-break-after: avoid }
p { margin: 1mm 0 }
section, table, figure, tr { break-inside: avoid; page-break-inside: avoid }
section { margin-bottom: 2mm }
table { border-collapse: collapse; width: 100% }
th, td { text-align: left; vertical-align: top; padding: 0.6mm 1.5mm;
  overflow-wrap: break-word }
th { white-space: nowrap }
.grid th, .grid td { border: 1px solid #999 }
.grid thead th { background: #eee }
.facts { table-layout: fixed }
.facts th { width: 32mm; font-weight: bold }
.facts td { overflow-wrap: anywhere }
.num { text-align: right; white-space: nowrap }
.pre { white-space: pre-wrap }
.small { font-size: 9pt }
.verdict { font-size: 14pt; margin: 1mm 0 }
.cautions { border: 3px solid #000; padding: 1mm 3mm 2mm 3mm }
.cautions h2 { border: none; margin-top: 1mm }
.cautions ul { margin: 0; padding-left: 5mm }
figure { margin: 1mm 0 }
figure svg { display: block; width: 100%; height: auto; max-width: 180mm }
figcaption { font-size: 9pt }
.signatures { margin-top: 5mm }
.sign { display: flex; gap: 8mm; margin-top: 10mm }
.sign .line { flex: 3; border-top: 1px solid #000; padding-top: 1mm; font-size: 9pt }
.sign .line.short { flex: 1 }
footer { margin-top: 6mm; border-top: 1px solid #000; padding-top: 1mm; font-size: 8.5pt }
footer p { margin: 0.5mm 0 }
";

#[cfg(test)]
mod tests {
    use super::*;
    use crate::supply::Supply;

    /// A bridge supply with a life rating and three visits, one with hostile text.
    fn supply() -> Supply {
        Supply::from_toml_str(
            "format = 1\nname = \"Bench <rail> & co\"\nsite = \"Shed 'B'\"\n\
             notes = \"<script>alert(1)</script> & \\\"more\\\"\"\n\
             [mains]\nvrms = 230.0\nhz = 50.0\n[transformer]\nratio = 9.5\n\
             [rectifier]\ntopology = \"bridge\"\n[filter]\nkind = \"capacitor\"\nuf = 2200.0\n\
             rated_v = 50.0\nrated_life_h = 2000.0\nrated_life_c = 105.0\n\
             [load]\nohms = 100.0\n\
             [[visit]]\ndate = 2022-01-10\ntechnician = \"A. Tester\"\ndc_v = 30.0\n\
             ripple_pp_v = 1.2\n\
             [[visit]]\ndate = 2024-03-02\ntechnician = \"A. Tester\"\ndc_v = 29.8\n\
             ripple_pp_v = 1.5\n\
             [[visit]]\ndate = 2026-05-20\ntechnician = \"J. O'Neil <jo>\"\ndc_v = 29.5\n\
             ripple_pp_v = 2.0\nnotes = \"Cap <domed> & warm\"\n\
             replaced = [\"C1 2200uF <50V>\"]\n",
        )
        .unwrap()
    }

    fn page(s: &Supply) -> String {
        let r = crate::report::build_default(s.clone(), "bench.toml").unwrap();
        let v = s.visits.last().unwrap();
        let d = crate::diagnose::diagnose(s, &v.readings).unwrap();
        let t = crate::diagnose::trend::trend(s);
        service_record(&r, v, Ok(&d), &t, "bench.toml")
    }

    #[test]
    fn escape_writes_the_five_characters_as_entities() {
        // The five characters HTML gives meaning in text and quoted attributes (the HTML
        // standard's named and numeric character references).
        assert_eq!(
            escape_html("<script>a & \"b\" 'c'</script>"),
            "&lt;script&gt;a &amp; &quot;b&quot; &#39;c&#39;&lt;/script&gt;"
        );
        assert_eq!(escape_html("line\nbreak\tkept"), "line\nbreak\tkept");
        // A terminal escape and a right-to-left override are spelled out, not passed on.
        assert_eq!(escape_html("a\u{1b}[2Jb"), "a\\x1b[2Jb");
        assert_eq!(escape_html("x\u{202e}y"), "x\\u{202e}y");
        assert_eq!(escape_html("4k7 Ω ok"), "4k7 Ω ok");
    }

    #[test]
    fn the_page_has_every_section_and_escapes_what_files_hold() {
        let s = supply();
        let html = page(&s);
        for heading in HEADINGS {
            assert!(
                html.contains(&format!("<h2>{heading}</h2>")),
                "no section {heading}"
            );
        }
        // The notes, the name, the site, the technician and the parts, escaped.
        for raw in ["<script>", "<rail>", "<domed>", "<jo>", "<50V>"] {
            assert!(!html.contains(raw), "{raw} reached the page raw");
        }
        for escaped in [
            "&lt;script&gt;alert(1)&lt;/script&gt; &amp; &quot;more&quot;",
            "Bench &lt;rail&gt; &amp; co",
            "Shed &#39;B&#39;",
            "Cap &lt;domed&gt; &amp; warm",
            "J. O&#39;Neil &lt;jo&gt;",
            "C1 2200uF &lt;50V&gt;",
        ] {
            assert!(html.contains(escaped), "{escaped} missing");
        }
        // The only tags are the page's own: no script element of any kind.
        assert!(!html.to_lowercase().contains("<script"));
    }

    #[test]
    fn the_page_names_the_likely_part_only_when_the_diagnosis_does() {
        // The last visit's ripple, twice its nominal at a nominal DC: the filter capacitor,
        // its capacitance or its ESR.
        let s = supply();
        let html = page(&s);
        assert!(
            html.contains("Likely part: the filter capacitor,")
                && html.contains("the next checks below tell which"),
            "no likely part"
        );
        // Nominal readings: healthy, no part named.
        let mut s = supply();
        let last = s.visits.last_mut().unwrap();
        last.readings.ripple_pp_v = Some(1.0);
        let html = page(&s);
        assert!(html.contains("<strong>HEALTHY</strong>"));
        assert!(!html.contains("Likely part"));
    }

    #[test]
    fn the_page_names_no_outside_resource() {
        let html = page(&supply()).to_lowercase();
        for bad in [
            "http", "https:", "file:", "src=", "url(", "@import", "<link", "<img",
        ] {
            if let Some(at) = html.find(bad) {
                let from = html.floor_char_boundary(at.saturating_sub(80));
                panic!("{bad} in the page: {}", &html[from..at + bad.len()]);
            }
        }
    }

    #[test]
    fn the_page_draws_both_sketches_and_states_the_figures() {
        let s = supply();
        let html = page(&s);
        // Two inline SVGs that scale with the page.
        assert_eq!(html.matches("<svg viewBox=").count(), 2, "ripple and trend");
        assert!(html.contains("width=\"100%\""));
        assert!(html.contains("rail (V)") && html.contains("time (ms)"));
        assert!(html.contains("capacitance (uF)"));
        // The readings and their windows, the verdict, the cautions and the checks in words.
        assert!(
            html.contains("<td class=\"num\">29.5 V</td>"),
            "the DC reading"
        );
        assert!(html.contains("Verdict: <strong>"));
        assert!(html.contains("CAUTION:"));
        assert!(html.contains("local codes"));
        // Status words, never colour alone.
        assert!(
            html.contains("<td>OK</td>")
                || html.contains("<strong>WARN</strong>")
                || html.contains("<strong>FAIL</strong>")
        );
        // The life rating gives a life; the signature lines and the footer are there.
        assert!(html.contains("at nominal</strong>"), "life in years");
        assert!(html.contains("Customer's signature"));
        assert!(html.contains("<strong>railcheck</strong> &middot; bench.toml"));
        assert!(html.contains("(this visit)"));
    }

    #[test]
    fn one_visit_says_there_is_no_trend_and_no_rating_says_so() {
        let mut s = supply();
        s.visits.truncate(1);
        s.filter.rated_life_h = None;
        s.filter.rated_life_c = None;
        let html = page(&s);
        assert_eq!(html.matches("<svg viewBox=").count(), 1, "the ripple only");
        assert!(html.contains("fewer than two visits give a capacitance"));
        assert!(html.contains("gives no life rating"));
    }

    #[test]
    fn a_visit_without_readings_still_makes_a_record() {
        let s = supply();
        let r = crate::report::build_default(s.clone(), "bench.toml").unwrap();
        let mut v = s.visits[0].clone();
        v.readings = Default::default();
        let why = crate::diagnose::diagnose(&s, &v.readings)
            .unwrap_err()
            .to_string();
        let t = crate::diagnose::trend::trend(&s);
        let html = service_record(&r, &v, Err(&why), &t, "bench.toml");
        assert!(html.contains("give no diagnosis"));
        assert!(html.contains("<h2>Safety cautions</h2>"));
    }

    #[test]
    fn ticks_fall_on_round_steps_inside_the_range() {
        // 1-2-5 steps (the usual choice of chart scales).
        let (t, d) = ticks(26.05, 28.95, 5);
        assert_eq!(t, vec![26.5, 27.0, 27.5, 28.0, 28.5]);
        assert_eq!(d, 1);
        let (t, d) = ticks(0.0, 20.0, 8);
        assert_eq!(t.first(), Some(&0.0));
        assert_eq!(t.last(), Some(&20.0));
        assert_eq!(d, 0);
        assert_eq!(ticks(1.0, 1.0, 5).0, vec![1.0]);
    }
}
