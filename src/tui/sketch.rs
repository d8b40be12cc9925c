//! The ripple sketch: one period of the rail and of the rectified source in braille, with the
//! rail's highest and lowest marked and the regulator's dropout line when there is one.

use super::app::App;
use super::style::{Look, sig3, wrap_words};
use super::trend_chart::row_of;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::{Color, Style};
use ratatui::symbols::Marker;
use ratatui::text::Line as TextLine;
use ratatui::widgets::canvas::{Canvas, Line, Points};
use ratatui::widgets::{Paragraph, Widget};

pub struct Sketch<'a>(pub &'a App);

impl Widget for &Sketch<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let app = self.0;
        let look = Look::new(app.color);
        let Some(solved) = app
            .open
            .as_ref()
            .and_then(|o| o.solved.as_ref().as_ref().ok())
        else {
            Paragraph::new("")
                .block(look.panel("Ripple sketch", false))
                .render(area, buf);
            return;
        };
        let op = match (&solved.low, app.sketch_low) {
            (Some((_, op)), true) => op,
            _ => &solved.nominal,
        };
        let w = &op.waveform;
        let f = &op.figures;
        let regulator = app
            .open
            .as_ref()
            .and_then(|o| o.supply.regulator.as_ref())
            .map(|r| r.output_v + r.dropout_v);
        // The vertical scale spans the ripple with room for the source's crest and the dropout
        // line, so a small ripple on a tall rail is still visible.
        let top = w
            .v_source
            .iter()
            .copied()
            .fold(f.max_v, f64::max)
            .min(f.max_v + 2.0 * f.ripple_pp_v.max(0.05 * f.max_v.abs()));
        let mut bottom = f.min_v - 0.6 * f.ripple_pp_v.max(0.02 * f.max_v.abs());
        if let Some(r) = regulator {
            bottom = bottom.min(r - 0.1 * f.ripple_pp_v.max(0.1));
        }
        let bottom = bottom.max(0.0).min(f.min_v);
        let period = w.t_ms.last().copied().unwrap_or(1.0) * (w.t_ms.len() as f64)
            / (w.t_ms.len().max(2) as f64 - 1.0);
        let (dim, rail, source, mark) = if app.color {
            (
                Style::default().fg(Color::DarkGray),
                Color::Yellow,
                Color::Blue,
                Color::Red,
            )
        } else {
            (Style::default(), Color::Reset, Color::Reset, Color::Reset)
        };
        // The title whole or shorter, never cut: the corner's conditions go inside.
        let range = format!("{:.2} to {:.2} V", f.min_v, f.max_v);
        let (titles, corner) = match (&solved.low, app.sketch_low) {
            (Some((words, _)), true) => (
                [
                    format!("Ripple, worst low corner: {range} (w: nominal)"),
                    format!("Ripple, worst low: {range} (w: nominal)"),
                    format!("Worst low: {range}"),
                ],
                Some(format!("worst low: {words}")),
            ),
            _ => (
                [
                    format!("Ripple, nominal: {range} (w: worst low)"),
                    format!("Ripple, nominal: {range} (w)"),
                    format!("Nominal: {range}"),
                ],
                None,
            ),
        };
        let room = area.width.saturating_sub(4) as usize;
        let title = titles
            .iter()
            .find(|t| t.chars().count() <= room)
            .unwrap_or(&titles[2])
            .clone();
        let canvas = Canvas::default()
            .marker(Marker::Braille)
            .x_bounds([0.0, 2.0 * period])
            .y_bounds([bottom, top.max(bottom + 1e-6)])
            .paint(|ctx| {
                // Two periods, as a scope shows them.
                let mut src: Vec<(f64, f64)> = Vec::new();
                for k in 0..2 {
                    let off = k as f64 * period;
                    for (t, v) in w.t_ms.iter().zip(&w.v_source) {
                        if *v >= bottom {
                            src.push((t + off, *v));
                        }
                    }
                }
                ctx.draw(&Points {
                    coords: &src,
                    color: source,
                });
                ctx.draw(&Line::new(0.0, f.max_v, 2.0 * period, f.max_v, mark));
                ctx.draw(&Line::new(0.0, f.min_v, 2.0 * period, f.min_v, mark));
                if let Some(r) = regulator {
                    ctx.draw(&Line::new(0.0, r, 2.0 * period, r, Color::Magenta));
                }
                for k in 0..2 {
                    let off = k as f64 * period;
                    for pair in w.t_ms.windows(2).zip(w.v_out.windows(2)) {
                        let (t, v) = pair;
                        ctx.draw(&Line::new(t[0] + off, v[0], t[1] + off, v[1], rail));
                    }
                }
            });
        // What each mark is, in words on the frame's foot, so that nothing rests on colour.
        let legend = if regulator.is_some() {
            " rail line, source dots, max/min lines, dropout line "
        } else {
            " rail line, source dots, max/min lines "
        };
        let block = look
            .panel(&title, false)
            .title_bottom(TextLine::styled(legend, dim));
        let inner = block.inner(area);
        block.render(area, buf);
        let labels = if app.color {
            Style::default().fg(Color::Cyan)
        } else {
            Style::default()
        };
        // The worst low corner's conditions in full, above the trace, as many lines as they
        // take (at most half the panel).
        let mut plot = inner;
        if let Some(words) = &corner {
            let lines = wrap_words(words, inner.width as usize, 2);
            let n = (lines.len() as u16).min(inner.height / 2);
            let text: Vec<TextLine> = lines
                .into_iter()
                .take(n as usize)
                .map(|l| TextLine::styled(l, dim))
                .collect();
            Paragraph::new(text).render(Rect { height: n, ..inner }, buf);
            plot.y += n;
            plot.height -= n;
        }
        // A volts scale on the left (the rail's max and min at their rows, the frame's top
        // and bottom where they are free) and a milliseconds scale on the last row, as a
        // scope's graticule gives them.
        let volts = |v: f64| format!("{} V", sig3(v));
        let max_label = format!("max {}", volts(f.max_v));
        let min_label = format!("min {}", volts(f.min_v));
        let label_w = [
            max_label.len(),
            min_label.len(),
            volts(top).len(),
            volts(bottom).len(),
        ]
        .into_iter()
        .max()
        .unwrap_or(0) as u16
            + 1;
        if plot.height < 3 || plot.width < label_w + 12 {
            canvas.render(plot, buf);
            return;
        }
        let trace = Rect {
            x: plot.x + label_w,
            width: plot.width - label_w,
            height: plot.height - 1,
            ..plot
        };
        canvas.render(trace, buf);
        let hi = top.max(bottom + 1e-6);
        let rows = trace.height;
        let mut used: Vec<u16> = Vec::new();
        let mut label = |row: u16, text: &str, buf: &mut Buffer| {
            if used.contains(&row) {
                return;
            }
            used.push(row);
            buf.set_stringn(plot.x, trace.y + row, text, label_w as usize - 1, labels);
        };
        label(row_of(f.max_v, bottom, hi, rows), &max_label, buf);
        label(row_of(f.min_v, bottom, hi, rows), &min_label, buf);
        if let Some(r) = regulator {
            label(row_of(r, bottom, hi, rows), "dropout", buf);
        }
        label(0, &volts(hi), buf);
        label(rows - 1, &volts(bottom), buf);
        // Time ticks at a round step, a label every few columns, "ms" in the label column.
        let span = 2.0 * period;
        let cols = trace.width as f64;
        let step = [
            0.5, 1.0, 2.0, 2.5, 5.0, 10.0, 20.0, 25.0, 50.0, 100.0, 200.0, 500.0,
        ]
        .into_iter()
        .find(|s| span / s * 7.0 <= cols)
        .unwrap_or(1000.0);
        let y = trace.y + trace.height;
        buf.set_stringn(plot.x, y, "ms", label_w as usize - 1, labels);
        let mut next_free = trace.x;
        let mut k = 0.0;
        while k * step <= span + 1e-9 {
            let t = k * step;
            let x = trace.x + ((t / span) * (cols - 1.0)).round() as u16;
            let text = if step.fract() == 0.0 {
                format!("{t:.0}")
            } else {
                format!("{t:.1}")
            };
            let w = text.len() as u16;
            // The last tick's label ends at the edge rather than running past it.
            let x = x.min(trace.x + trace.width - w);
            if x >= next_free {
                buf.set_stringn(x, y, &text, w as usize, labels);
                next_free = x + w + 1;
            }
            k += 1.0;
        }
    }
}
