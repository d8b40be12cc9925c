//! The results: each figure's nominal, worst-case min and max and the paper estimate, the
//! checks with their status words; or the supply's visits.

use super::app::{App, Panel};
use super::style::Look;
use crate::analysis::checks::Status;
use crate::units::format_si;
use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Cell, Paragraph, Row, Table, Widget, Wrap};

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

/// The figures the panel lists, most asked-for first.
const ROWS: [(&str, &str, &str); 12] = [
    ("DC", "dc_v", "V"),
    ("Ripple p-p", "ripple_pp_v", "V"),
    ("Valley", "min_v", "V"),
    ("Crest", "max_v", "V"),
    ("Ripple RMS", "ripple_rms_v", "V"),
    ("Load", "load_a", "A"),
    ("Diode peak", "diode_peak_a", "A"),
    ("Diode rev.", "diode_piv_v", "V"),
    ("Winding RMS", "winding_rms_a", "A"),
    ("Winding VA", "winding_va", "VA"),
    ("Cap ripple", "cap_ripple_rms_a", "A"),
    ("Surge", "inrush_peak_a", "A"),
];

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
            let mut lines: Vec<Line> = Vec::new();
            if let Some(d) = &open.last_diagnosis {
                let style = match d.verdict {
                    "fault" => look.fail(),
                    "suspect" => look.warn(),
                    _ => look.ok(),
                };
                lines.push(Line::from(vec![
                    Span::styled(format!("{} ", d.verdict.to_uppercase()), style),
                    Span::raw("most likely first:"),
                ]));
                for h in d.hypotheses.iter().take(3) {
                    let est = match h.estimate {
                        Some((k, v)) if !k.is_empty() => format!(" ({k} {v:.3})"),
                        _ => String::new(),
                    };
                    lines.push(Line::from(format!(
                        " {:>3.0} % {}{est}",
                        100.0 * h.score,
                        h.fault.key()
                    )));
                }
                lines.push(Line::from(Span::styled(
                    format!(" next: {}", d.hypotheses[0].next_check),
                    look.dim(),
                )));
            }
            let mut visits: Vec<_> = open.supply.visits.iter().collect();
            visits.sort_by_key(|v| std::cmp::Reverse(v.date_text()));
            if visits.is_empty() {
                lines.push(Line::from("No visits yet: a records one."));
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
                    parts.push(format!(
                        "{:.0} uF",
                        f.cap_factor * open.supply.filter.uf.unwrap_or(0.0)
                    ));
                }
                lines.push(Line::from(Span::styled(
                    format!("Calibrated on {}: {}", c.visit, parts.join(", ")),
                    look.dim(),
                )));
            } else if !visits.is_empty() {
                lines.push(Line::from(Span::styled(
                    "b: the newest visit is known good, calibrate on it",
                    look.dim(),
                )));
            }
            for v in visits {
                let readings: Vec<String> = v
                    .readings
                    .present()
                    .iter()
                    .map(|(k, x)| {
                        format!("{} {x}", k.trim_end_matches("_v").trim_end_matches("_a"))
                    })
                    .collect();
                let mark = if v.baseline { "  baseline" } else { "" };
                lines.push(Line::from(vec![
                    Span::styled(v.date_text(), look.heading()),
                    Span::styled(mark, look.ok()),
                    Span::raw(format!("  {}", readings.join(", "))),
                ]));
                if !v.notes.is_empty() {
                    lines.push(Line::from(Span::styled(
                        format!("  {}", v.notes),
                        look.dim(),
                    )));
                }
            }
            let inner = area.inner(ratatui::layout::Margin::new(1, 1));
            let title = if open.trending {
                "Visits (working out the trend...)"
            } else {
                "Visits (v: back to results)"
            };
            look.panel(title, focused).render(area, buf);
            // The chart takes a third of the panel when that is four rows or more.
            let room = inner.height / 3;
            let chart_h = if room >= 4
                && open
                    .trend
                    .as_ref()
                    .is_some_and(|t| t.points.iter().filter(|p| p.uf.is_some()).count() >= 2)
            {
                room.min(8)
            } else {
                0
            };
            let text_area = Rect {
                height: inner.height.saturating_sub(chart_h + 1),
                ..inner
            };
            Paragraph::new(lines)
                .wrap(Wrap { trim: true })
                .render(text_area, buf);
            if let Some(t) = open.trend.as_ref().filter(|_| inner.height >= 2) {
                let summary = match (&t.crossing, t.uf_per_year) {
                    (Some(c), Some(s)) => format!(
                        "trend {s:+.0} uF/yr; {} the {:.0} uF limit about {}{}",
                        if c.already { "crossed" } else { "reaches" },
                        t.limit_uf,
                        c.date,
                        match (&c.earliest, &c.latest) {
                            (Some(a), Some(b)) => format!(" ({a}..{b})"),
                            (Some(a), None) => format!(" ({a}.., no later bound)"),
                            _ => String::new(),
                        }
                    ),
                    _ => t.note.clone(),
                };
                let y = inner.y + inner.height.saturating_sub(chart_h + 1);
                Paragraph::new(Line::styled(summary, look.heading())).render(
                    Rect {
                        y,
                        height: 1,
                        ..inner
                    },
                    buf,
                );
                if chart_h > 0 {
                    super::trend_chart::TrendChart {
                        trend: t,
                        color: app.color,
                    }
                    .render(
                        Rect {
                            y: y + 1,
                            height: chart_h,
                            ..inner
                        },
                        buf,
                    );
                }
            }
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
            "max_v" => Some(solved.hand.working_peak_v),
            _ => None,
        };
        let mut rows: Vec<Row> = Vec::new();
        for (label, name, unit) in ROWS {
            let e = solved.worst.extent(name);
            let mut cells = vec![
                Cell::from(label),
                Cell::from(show(value_of(name), unit)),
                Cell::from(show(e.map(|e| e.min), unit)),
                Cell::from(show(e.map(|e| e.max), unit)),
            ];
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
            cells.push(Cell::from(last));
            rows.push(Row::new(cells));
        }
        let last_head = if before.is_some() { "Change" } else { "Paper" };
        let header = Row::new(vec!["Figure", "Nominal", "Worst lo", "Worst hi", last_head])
            .style(look.heading());
        let table_height = (ROWS.len() as u16 + 1).min(area.height.saturating_sub(2));
        let inner = area.inner(ratatui::layout::Margin::new(1, 1));
        look.panel(title, focused).render(area, buf);
        let table_area = Rect {
            height: table_height,
            ..inner
        };
        Widget::render(
            Table::new(
                rows,
                [
                    Constraint::Length(12),
                    Constraint::Length(8),
                    Constraint::Length(9),
                    Constraint::Length(9),
                    Constraint::Min(8),
                ],
            )
            .header(header),
            table_area,
            buf,
        );
        let mut lines: Vec<Line> = Vec::new();
        for c in &solved.checks {
            let style = match c.status {
                Status::Fail => look.fail(),
                Status::Warn => look.warn(),
                Status::Ok => look.ok(),
            };
            lines.push(Line::from(vec![
                Span::styled(format!("{:<4} ", c.status.word()), style),
                Span::raw(format!("{} {:.3} / {}", c.id, c.value, c.limit)),
            ]));
        }
        if !solved.not_rated.is_empty() {
            lines.push(Line::from(Span::styled(
                format!("not rated: {}", solved.not_rated.join(", ")),
                look.dim(),
            )));
        }
        // What the file leaves out is a range the worst case includes: said as assumed.
        for a in &solved.worst.assumed {
            lines.push(Line::from(Span::styled(
                format!("assumed: {}", a.why),
                look.dim(),
            )));
        }
        let rest = Rect {
            y: table_area.y + table_height,
            height: inner.height.saturating_sub(table_height),
            ..inner
        };
        Paragraph::new(lines)
            .wrap(Wrap { trim: true })
            .render(rest, buf);
    }
}
