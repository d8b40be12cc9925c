//! The ripple sketch: one period of the rail and of the rectified source in braille, with the
//! rail's highest and lowest marked and the regulator's dropout line when there is one.

use super::app::App;
use super::style::Look;
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
        let (what, op) = match (&solved.low, app.sketch_low) {
            (Some((words, op)), true) => (format!("worst low: {words}"), op),
            _ => ("nominal".to_string(), &solved.nominal),
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
        let title = format!(
            "Sketch {what}: {:.2} to {:.2} V (w toggles)",
            f.min_v, f.max_v
        );
        let canvas = Canvas::default()
            .block(look.panel(&title, false))
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
        canvas.render(area, buf);
        // A legend in words under the frame's title line.
        if area.height > 3 {
            let legend = if regulator.is_some() {
                "rail line, source dots, max/min lines, dropout line"
            } else {
                "rail line, source dots, max/min lines"
            };
            let y = area.y + area.height - 1;
            let x = area.x + 2;
            let width = area.width.saturating_sub(4);
            Paragraph::new(TextLine::styled(legend, dim)).render(
                Rect {
                    x,
                    y,
                    width,
                    height: 1,
                },
                buf,
            );
        }
    }
}
