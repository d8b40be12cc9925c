//! The capacitance each visit implies, against time, in braille: the visits as points joined
//! by lines, the limit as a flat line labelled with its value; a uF scale on the left and the
//! dates along the foot.

use crate::diagnose::trend::Trend;
use crate::units::format_uf;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::{Color, Style};
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

/// The text row of `rows` rows (top first) on which a braille canvas spanning `lo..hi` puts
/// the value `v` (four dots a row).
pub fn row_of(v: f64, lo: f64, hi: f64, rows: u16) -> u16 {
    let dots = (rows as f64 * 4.0 - 1.0).max(0.0);
    let from_top = ((hi - v) / (hi - lo).max(1e-12) * dots)
        .round()
        .clamp(0.0, dots);
    (from_top as u16 / 4).min(rows.saturating_sub(1))
}

/// Writes `text` at `(x, y)` clipped to `right` (exclusive).
fn put(buf: &mut Buffer, x: u16, y: u16, right: u16, text: &str, style: Style) {
    if x >= right {
        return;
    }
    buf.set_stringn(x, y, text, (right - x) as usize, style);
}

impl Widget for &TrendChart<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let pts: Vec<(f64, f64)> = self
            .trend
            .points
            .iter()
            .filter_map(|p| Some((day_of(&p.date)?, p.uf?)))
            .collect();
        if pts.len() < 2 || area.height < 3 {
            return;
        }
        let x0 = pts.iter().map(|p| p.0).fold(f64::INFINITY, f64::min);
        let mut x1 = pts.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max);
        let first_date = crate::visit::civil_from_days(x0 as i64);
        if let Some(c) = self.trend.crossing.as_ref().and_then(|c| day_of(&c.date)) {
            x1 = x1.max(c).min(x0 + 3.0 * (x1 - x0).max(365.0));
        }
        let x1 = x1.max(x0 + 1.0);
        let last_date = crate::visit::civil_from_days(x1 as i64);
        let lim = self.trend.limit_uf;
        let y0 = pts.iter().map(|p| p.1).fold(lim, f64::min) * 0.9;
        let y1 = (pts.iter().map(|p| p.1).fold(lim, f64::max) * 1.1).max(y0 + 1e-6);
        let (dots, limit, labels) = if self.color {
            (Color::Yellow, Color::Red, Style::default().fg(Color::Cyan))
        } else {
            (Color::Reset, Color::Reset, Style::default())
        };
        // The uF scale on the left, the dates on the last row.
        let scale = [y1, lim, y0].map(format_uf);
        let label_w = scale.iter().map(|s| s.len()).max().unwrap_or(0) as u16 + 1;
        if area.width < label_w + 12 {
            return;
        }
        let plot = Rect {
            x: area.x + label_w,
            y: area.y,
            width: area.width - label_w,
            height: area.height - 1,
        };
        Canvas::default()
            .marker(Marker::Braille)
            .x_bounds([x0, x1])
            .y_bounds([y0, y1])
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
            .render(plot, buf);
        let right = plot.x;
        let top = plot.y;
        let bottom = plot.y + plot.height - 1;
        let lim_row = plot.y + row_of(lim, y0, y1, plot.height);
        put(buf, area.x, top, right, &scale[0], labels);
        if bottom != top {
            put(buf, area.x, bottom, right, &scale[2], labels);
        }
        // The limit's value at its own row, and the word on the line itself at the right.
        if lim_row != top && lim_row != bottom {
            put(buf, area.x, lim_row, right, &scale[1], labels);
        }
        let word = format!(" limit {} ", scale[1]);
        let wx = (plot.x + plot.width).saturating_sub(word.len() as u16);
        put(
            buf,
            wx.max(plot.x),
            lim_row,
            plot.x + plot.width,
            &word,
            labels,
        );
        // The dates: the first visit's at the left, the axis's end at the right.
        let y = area.y + area.height - 1;
        put(buf, plot.x, y, plot.x + plot.width, &first_date, labels);
        let end_x = (plot.x + plot.width).saturating_sub(last_date.len() as u16);
        if end_x > plot.x + first_date.len() as u16 {
            put(buf, end_x, y, plot.x + plot.width, &last_date, labels);
        }
        put(buf, area.x, y, right, "date", labels);
    }
}
