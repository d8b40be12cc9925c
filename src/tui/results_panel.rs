//! The results: each figure's nominal, worst-case min and max and the paper estimate, the
//! checks with their status words; or the supply's visits, each reading against its window.
//! Both scroll from `Open::results_scroll`, clamped here to what there is.

use super::app::{App, Open, Panel};
use super::style::{Look, sig3, wrap_words};
use super::worker::{JUDGED_VISITS, Judgement};
use crate::analysis::checks::Status;
use crate::circuit::{Figure, Naming};
use crate::units::{format_si, format_uf};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::Style;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

pub struct ResultsPanel<'a>(pub &'a App);

fn show(v: Option<f64>, unit: &str) -> String {
    match (v, unit) {
        (None, _) => "--".into(),
        (Some(x), _) if !x.is_finite() => "--".into(),
        (Some(x), "deg") => format!("{x:.0} deg"),
        (Some(x), "Hz") => format!("{x:.0} Hz"),
        (Some(x), u) => format_si(x, u),
    }
}

/// The figures the panel lists, most asked-for first; the secondary AC is what a meter
/// across the winding reads (RMS, whole winding).
const ROWS: [Figure; 17] = [
    Figure::DcV,
    Figure::RipplePpV,
    Figure::MinV,
    Figure::MaxV,
    Figure::RippleRmsV,
    Figure::SecondaryRmsV,
    Figure::LoadA,
    Figure::DiodePeakA,
    Figure::DiodePivV,
    Figure::WindingRmsA,
    Figure::WindingVa,
    Figure::CapRippleRmsA,
    Figure::InrushPeakA,
    Figure::ChokeRmsA,
    Figure::ChokePeakA,
    Figure::ChokeDcDropV,
    Figure::OutCapRippleRmsA,
];

/// A reading's words and unit on screen, by its visit key.
fn reading_words(key: &str) -> (&'static str, &'static str) {
    match key {
        "mains_vrms" => ("mains", "V"),
        "secondary_vac" => ("secondary AC", "V"),
        "dc_v" => ("DC", "V"),
        "ripple_pp_v" => ("ripple p-p", "V"),
        "ripple_rms_v" => ("ripple RMS", "V"),
        "ripple_hz" => ("ripple", "Hz"),
        "load_a" => ("load", "A"),
        "line_imbalance_pct" => ("line imbalance", "%"),
        _ => ("reading", ""),
    }
}

/// A fitted estimate as the part value a technician names.
fn estimate_words(key: &str, v: f64) -> String {
    match key {
        "uf" => format!("about {}", format_uf(v)),
        "esr_ohms" => format!("ESR about {} ohm", sig3(v)),
        "plate_drop_v" => format!("valve drops about {} V", sig3(v)),
        "vrms" => format!("mains about {} V", sig3(v)),
        "ratio" => format!("ratio about {}:1", sig3(v)),
        "load_a" => format!("load about {}", format_si(v, "A")),
        "valley_v" => format!("valley {} V", sig3(v)),
        k => format!("{k} {}", sig3(v)),
    }
}

/// Lines of text for a scrolled panel: each either drawn as it is (clipped at the edge) or
/// already broken to the panel's width.
struct Text {
    width: usize,
    lines: Vec<Line<'static>>,
}

impl Text {
    fn new(width: u16) -> Text {
        Text {
            width: width as usize,
            lines: Vec::new(),
        }
    }

    /// One line as it is: built to fit (the figures' table, short headers).
    fn fixed(&mut self, line: Line<'static>) {
        self.lines.push(line);
    }

    /// `text` in `style`, broken at spaces, later lines indented by `indent`.
    fn wrapped(&mut self, text: &str, style: Style, indent: usize) {
        for l in wrap_words(text, self.width, indent) {
            self.lines.push(Line::styled(l, style));
        }
    }

    /// A word in `style` (a status word), then `text` broken to the width after it and
    /// hung under its first word.
    fn marked(&mut self, word: &str, word_style: Style, text: &str) {
        let hang = word.chars().count() + 1;
        for (i, l) in wrap_words(text, self.width.saturating_sub(hang).max(8), 0)
            .into_iter()
            .enumerate()
        {
            let lead = if i == 0 {
                Span::styled(format!("{word} "), word_style)
            } else {
                Span::raw(" ".repeat(hang))
            };
            self.lines.push(Line::from(vec![lead, Span::raw(l)]));
        }
    }
}

/// Draws `text` in `inner` from the open supply's scroll offset, clamped so the last line can
/// reach the bottom and no further, and records that limit for the scroll keys. Returns the
/// offset drawn and whether more lies below.
fn draw_scrolled(open: &Open, text: Text, inner: Rect, buf: &mut Buffer) -> (usize, bool) {
    let max = text.lines.len().saturating_sub(inner.height as usize);
    open.results_scroll_max
        .set(max.min(u16::MAX as usize) as u16);
    let offset = (open.results_scroll as usize).min(max);
    let shown: Vec<Line> = text
        .lines
        .into_iter()
        .skip(offset)
        .take(inner.height as usize)
        .collect();
    Paragraph::new(shown).render(inner, buf);
    (offset, offset < max)
}

/// The frame of a scrolled panel: "more above" in the title, "more below" and the key that
/// shows it on the bottom edge, so that nothing is hidden without saying so.
fn frame(
    look: &Look,
    title: &str,
    focused: bool,
    offset: usize,
    below: bool,
) -> ratatui::widgets::Block<'static> {
    let title = if offset > 0 {
        format!("{title} - more above (k)")
    } else {
        title.to_string()
    };
    let mut block = look.panel(&title, focused);
    if below {
        let hint = if focused {
            " more below (j, PgDn) "
        } else {
            " more below (Tab here, then j) "
        };
        block = block.title_bottom(Line::styled(hint, look.heading()));
    }
    block
}

impl Widget for &ResultsPanel<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let app = self.0;
        let look = Look::new(app.color);
        let focused = app.panel == Panel::Results;
        let Some(open) = &app.open else {
            Paragraph::new("")
                .block(look.panel("Results", focused))
                .render(area, buf);
            return;
        };
        if open.show_visits {
            visits(app, open, &look, focused, area, buf);
            return;
        }
        // While a newer solve is on its way the older figures stay, marked as such.
        let title = if open.solving {
            "Results (working...)"
        } else {
            "Results"
        };
        let solved = match open.solved.as_ref() {
            Ok(s) => s,
            Err(_) if open.solving => {
                Paragraph::new("Working it out... (the keys still answer)")
                    .block(look.panel(title, focused))
                    .render(area, buf);
                return;
            }
            Err(e) => {
                Paragraph::new(format!("Cannot solve this supply: {e}"))
                    .wrap(Wrap { trim: true })
                    .style(look.fail())
                    .block(look.panel("Results", focused))
                    .render(area, buf);
                return;
            }
        };
        let before = open
            .what_if
            .as_ref()
            .and_then(|(_, s)| s.as_ref().as_ref().ok());
        let nominal = solved.nominal.figures.named();
        let value_of = |name: &str| {
            nominal
                .iter()
                .find(|(n, _)| *n == name)
                .and_then(|(_, v)| *v)
        };
        let hand = |name: &str| match name {
            // A paper method that does not apply shows nothing rather than a clamped figure.
            "dc_v" if solved.hand.applies() => Some(solved.hand.dc_v),
            "ripple_pp_v" if solved.hand.applies() => Some(solved.hand.ripple_pp_v),
            "load_a" => Some(solved.hand.load_a),
            "max_v" => Some(solved.hand.crest_v),
            _ => None,
        };
        let inner = area.inner(ratatui::layout::Margin::new(1, 1));
        let mut text = Text::new(inner.width);
        // A valve's law and the limits it is held to, above the figures.
        for line in crate::report::valve_words(&open.supply) {
            text.wrapped(&line, look.dim(), 2);
        }
        let last_head = if before.is_some() { "Change" } else { "Paper" };
        text.fixed(Line::styled(
            format!(
                "{:<12} {:<8} {:<9} {:<9} {last_head}",
                "Figure", "Nominal", "Worst lo", "Worst hi"
            ),
            look.heading(),
        ));
        let naming = Naming::of(&open.supply);
        // A figure the supply does not have (a choke's, without one) is left out.
        for figure in ROWS
            .into_iter()
            .filter(|f| f.applies(&solved.nominal.figures))
        {
            let label = figure.words(naming).1;
            let (name, unit) = (figure.key(), figure.unit());
            let e = solved.worst.extent(figure);
            let last = match before {
                // What-if: the change against the saved supply.
                Some(b) => {
                    let was = b
                        .nominal
                        .figures
                        .named()
                        .iter()
                        .find(|(n, _)| *n == name)
                        .and_then(|(_, v)| *v);
                    match (value_of(name), was) {
                        (Some(now), Some(was)) if was.abs() > 1e-12 => {
                            format!("{:+.1}%", 100.0 * (now - was) / was.abs())
                        }
                        _ => String::new(),
                    }
                }
                None => hand(name).map(|h| show(Some(h), unit)).unwrap_or_default(),
            };
            text.fixed(Line::raw(
                format!(
                    "{label:<12} {:<8} {:<9} {:<9} {last}",
                    show(value_of(name), unit),
                    show(e.map(|e| e.min), unit),
                    show(e.map(|e| e.max), unit),
                )
                .trim_end()
                .to_string(),
            ));
        }
        // The capacitor's life under the figures; in what-if, against the life before.
        if let Some(l) = &solved.capacitor_life {
            let was = before
                .and_then(|b| b.capacitor_life.as_ref())
                .map(|b| {
                    format!(
                        " (was {})",
                        crate::analysis::capacitor_life::years_words(b.nominal.years)
                    )
                })
                .unwrap_or_default();
            text.wrapped(
                &format!(
                    "Capacitor life {}{was}, worst {} (core {:.0} / {:.0} degC, {} h a day)",
                    crate::analysis::capacitor_life::years_words(l.nominal.years),
                    crate::analysis::capacitor_life::years_words(l.worst.years),
                    l.nominal.core_c,
                    l.worst.core_c,
                    crate::units::format_number(l.duty_h_per_day)
                ),
                Style::default(),
                2,
            );
            text.wrapped(&l.end_of_life_words(), look.dim(), 2);
        }
        // The what-if right under the figures it changes, above the checks.
        if open.show_solid_state
            && let Some(w) = &solved.solid_state
        {
            text.fixed(Line::styled(
                "Solid-state replacement (S hides)",
                look.heading(),
            ));
            for line in w.lines() {
                text.wrapped(&format!("- {line}"), Style::default(), 2);
            }
        }
        for c in &solved.checks {
            let style = match c.status {
                Status::Fail => look.fail(),
                Status::Warn => look.warn(),
                Status::Ok => look.ok(),
            };
            text.marked(&format!("{:<4}", c.status.word()), style, &c.message);
        }
        if !solved.not_rated.is_empty() {
            text.wrapped(
                &format!(
                    "not rated: {} (no rating in the file)",
                    solved.not_rated.join(", ")
                ),
                look.dim(),
                2,
            );
        }
        // What the file leaves out is a range the worst case includes: said as assumed.
        for a in &solved.worst.assumed {
            text.wrapped(&format!("assumed: {}", a.why), look.dim(), 2);
        }
        let (offset, below) = draw_scrolled(open, text, inner, buf);
        frame(&look, title, focused, offset, below).render(area, buf);
    }
}

/// The visits view: the newest diagnosis, the calibration, each visit with its readings
/// against their windows and its verdict, and at the foot the capacitance trend and chart.
fn visits(app: &App, open: &Open, look: &Look, focused: bool, area: Rect, buf: &mut Buffer) {
    let inner = area.inner(ratatui::layout::Margin::new(1, 1));
    let mut text = Text::new(inner.width);
    if let Some(d) = &open.last_diagnosis {
        let style = match d.verdict {
            "fault" => look.fail(),
            "suspect" => look.warn(),
            _ => look.ok(),
        };
        text.marked(
            &d.verdict.to_uppercase(),
            style,
            "(the visit just recorded), most likely first:",
        );
        for h in d.hypotheses.iter().take(3) {
            let est = match h.estimate {
                Some((k, v)) if !k.is_empty() => format!(" ({})", estimate_words(k, v)),
                _ => String::new(),
            };
            text.wrapped(
                &format!(" {:>3.0} % {}{est}", 100.0 * h.score, h.fault.key()),
                Style::default(),
                7,
            );
        }
        // The likeliest fault's part, when its faults together hold more than half the
        // belief (a capacitor's ESR and capacitance nearly tied).
        if let Some(p) = d.likely_part() {
            text.wrapped(
                &format!(" likely part: {}, {:.0} %", p.part.words(), 100.0 * p.score),
                Style::default(),
                7,
            );
        }
        if let Some(h) = d.hypotheses.first() {
            text.wrapped(&format!(" next: {}", h.next_check), look.dim(), 7);
        }
    }
    let mut order: Vec<usize> = (0..open.supply.visits.len()).collect();
    order.sort_by_key(|&i| std::cmp::Reverse(open.supply.visits[i].date_text()));
    if order.is_empty() {
        text.wrapped("No visits yet: a records one.", Style::default(), 0);
    }
    if let Some(c) = &open.supply.calibration {
        let f = open.supply.calibration_in_force();
        let mut parts = Vec::new();
        if f.winding {
            parts.push(format!("winding x{:.2}", f.winding_factor));
        }
        if let Some(k) = f.crest {
            parts.push(format!("crest {k:.3}"));
        }
        if f.capacitance {
            parts.push(format_uf(
                f.cap_factor * open.supply.filter.uf.unwrap_or(0.0),
            ));
        }
        text.wrapped(
            &format!("Calibrated on {}: {}", c.visit, parts.join(", ")),
            look.dim(),
            2,
        );
    } else if !order.is_empty() {
        text.wrapped(
            "b: the newest visit is known good, calibrate on it",
            look.dim(),
            2,
        );
    }
    let mut unjudged = false;
    for &i in &order {
        let v = &open.supply.visits[i];
        let judged = open.judgements.as_ref().and_then(|j| j.get(i));
        // The verdict the visit kept when it was recorded; else the one worked out now.
        let verdict = match (&v.diagnosis, judged) {
            (Some(d), _) => Some((d.verdict.clone(), d.fault.clone(), d.score, "recorded")),
            (
                None,
                Some(Judgement::Judged {
                    verdict,
                    fault,
                    score,
                    ..
                }),
            ) => Some((
                verdict.to_string(),
                fault.to_string(),
                *score,
                "worked out now",
            )),
            _ => None,
        };
        let mut head = vec![Span::styled(v.date_text(), look.heading())];
        if let Some((word, fault, score, how)) = &verdict {
            let style = match word.as_str() {
                "fault" => look.fail(),
                "suspect" => look.warn(),
                _ => look.ok(),
            };
            head.push(Span::raw(" "));
            head.push(Span::styled(word.to_uppercase(), style));
            // A healthy verdict's top hypothesis is "healthy": said once.
            let named = if fault == "healthy" || fault.is_empty() {
                String::new()
            } else {
                format!(" {fault} {:.0} %", 100.0 * score)
            };
            head.push(Span::raw(format!("{named} ({how})")));
        }
        if v.baseline {
            head.push(Span::styled(" baseline", look.ok()));
        }
        text.fixed(Line::from(head));
        if !v.technician.is_empty() {
            text.wrapped(&format!("  by {}", v.technician), look.dim(), 4);
        }
        if let Some(c) = v
            .days()
            .and_then(|d| crate::analysis::capacitor_life::storage_caution(&open.supply, d))
        {
            text.wrapped(&format!("  storage: {c}"), look.warn(), 4);
        }
        match judged {
            Some(Judgement::Judged { expectations, .. }) => {
                for e in expectations {
                    let (words, unit) = reading_words(e.reading);
                    let (mark, style) = match e.status {
                        "above" => ("ABOVE", look.fail()),
                        "below" => ("BELOW", look.fail()),
                        _ => ("within", look.ok()),
                    };
                    text.fixed(Line::from(vec![
                        Span::raw(format!("  {words:<12} {:>6} {unit:<2} ", sig3(e.value))),
                        Span::styled(format!("{mark:<6}"), style),
                        Span::raw(format!(" {}..{} {unit}", sig3(e.min), sig3(e.max))),
                    ]));
                }
            }
            other => {
                let readings: Vec<String> = v
                    .readings
                    .present()
                    .iter()
                    .map(|(k, x)| {
                        let (words, unit) = reading_words(k);
                        format!("{words} {} {unit}", sig3(*x))
                    })
                    .collect();
                text.wrapped(&format!("  {}", readings.join(", ")), Style::default(), 4);
                match other {
                    Some(Judgement::Refused(why)) => {
                        text.wrapped(&format!("  not judged: {why}"), look.dim(), 4)
                    }
                    Some(Judgement::NotJudged) => unjudged = true,
                    _ if open.trending => {
                        text.wrapped("  windows: working them out...", look.dim(), 4)
                    }
                    _ => {}
                }
            }
        }
        if !v.replaced.is_empty() {
            text.wrapped(
                &format!("  replaced: {}", v.replaced.join(", ")),
                Style::default(),
                4,
            );
        }
        if !v.notes.is_empty() {
            text.wrapped(&format!("  {}", v.notes), look.dim(), 4);
        }
    }
    if unjudged {
        text.wrapped(
            &format!(
                "Visits older than the newest {JUDGED_VISITS}: readings only (their windows are not worked out)."
            ),
            look.dim(),
            2,
        );
    }

    if let Some(t) = &open.trend {
        text.wrapped(
            &format!("Limit {}: {}.", format_uf(t.limit_uf), t.limit),
            look.dim(),
            2,
        );
    }

    // The foot: the trend in words, then the chart, kept in sight while the visits scroll.
    let mut foot = Text::new(inner.width);
    let mut chart_h = 0;
    if let Some(t) = &open.trend {
        let summary = t.summary();
        foot.wrapped(&summary, look.heading(), 2);
        if let Some(a) = &t.ageing {
            foot.wrapped(&a.words, look.dim(), 2);
        }
        let points = t.points.iter().filter(|p| p.uf.is_some()).count();
        // The chart, when it has two visits to join and the panel room for it beside at
        // least five lines of visits.
        let room = inner.height as usize;
        if points >= 2 && room >= foot.lines.len() + 5 + 5 {
            foot.wrapped(
                "chart: uF each visit implies (dots), the limit (flat line)",
                look.dim(),
                2,
            );
            chart_h = (room / 3).clamp(5, 10).min(room - foot.lines.len() - 5);
        }
    }
    let foot_h = (foot.lines.len() + chart_h).min(inner.height as usize) as u16;
    let text_area = Rect {
        height: inner.height - foot_h,
        ..inner
    };
    let (offset, below) = draw_scrolled(open, text, text_area, buf);
    if foot_h > 0 {
        let y = text_area.y + text_area.height;
        let words_h = foot_h - chart_h as u16;
        Paragraph::new(foot.lines).render(
            Rect {
                y,
                height: words_h,
                ..inner
            },
            buf,
        );
        if let (Some(t), true) = (&open.trend, chart_h > 0) {
            super::trend_chart::TrendChart {
                trend: t,
                color: app.color,
            }
            .render(
                Rect {
                    y: y + words_h,
                    height: chart_h as u16,
                    ..inner
                },
                buf,
            );
        }
    }
    let title = if open.trending {
        "Visits (working out the trend...)"
    } else {
        "Visits (v: back to results)"
    };
    frame(look, title, focused, offset, below).render(area, buf);
}
