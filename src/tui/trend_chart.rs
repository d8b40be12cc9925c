//! The capacitance each visit implies, against time, in braille: the visits as points, the
//! limit as a line.

use crate::diagnose::trend::Trend;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::Color;
use ratatui::symbols::Marker;
use ratatui::widgets::Widget;
use ratatui::widgets::canvas::{Canvas, Line, Points};

pub struct TrendChart<'a> {
    pub trend: &'a Trend,
    pub color: bool,
}

fn day_of(date: &str) -> Option<f64> {
    let mut it = date.split('-').map(|p| p.parse::<i64>().ok());
    let (y, m, d) = (it.next()??, it.next()??, it.next()??);
    Some(crate::visit::days_from_civil(y, m, d) as f64)
}

impl Widget for &TrendChart<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let pts: Vec<(f64, f64)> = self
            .trend
            .points
            .iter()
            .filter_map(|p| Some((day_of(&p.date)?, p.uf?)))
            .collect();
        if pts.len() < 2 {
            return;
        }
        let x0 = pts.iter().map(|p| p.0).fold(f64::INFINITY, f64::min);
        let mut x1 = pts.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max);
        if let Some(c) = self.trend.crossing.as_ref().and_then(|c| day_of(&c.date)) {
            x1 = x1.max(c).min(x0 + 3.0 * (x1 - x0).max(365.0));
        }
        let lim = self.trend.limit_uf;
        let y0 = pts.iter().map(|p| p.1).fold(lim, f64::min) * 0.9;
        let y1 = pts.iter().map(|p| p.1).fold(lim, f64::max) * 1.1;
        let (dots, limit) = if self.color {
            (Color::Yellow, Color::Red)
        } else {
            (Color::Reset, Color::Reset)
        };
        Canvas::default()
            .marker(Marker::Braille)
            .x_bounds([x0, x1.max(x0 + 1.0)])
            .y_bounds([y0, y1.max(y0 + 1e-6)])
            .paint(|ctx| {
                ctx.draw(&Line::new(x0, lim, x1, lim, limit));
                ctx.draw(&Points {
                    coords: &pts,
                    color: dots,
                });
                for w in pts.windows(2) {
                    ctx.draw(&Line::new(w[0].0, w[0].1, w[1].0, w[1].1, dots));
                }
            })
            .render(area, buf);
    }
}
