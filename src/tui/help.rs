//! The help overlay: every key, in plain words.

use super::style::Look;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::Line;
use ratatui::widgets::{Clear, Paragraph, Widget, Wrap};

pub struct Help {
    pub color: bool,
}

/// Notes shown under the keys when the screen has room.
pub const NOTES: [&str; 4] = [
    "Values: 4k7, 47u, 2m2, 680R; in uF fields a bare number is uF. Empty clears.",
    "Marks: * panel has the keys, ! refused value, ?guess a template value, FAIL/WARN/OK.",
    "File changed on disk: r reloads theirs, k keeps yours as a new supply.",
    "Mains and charged capacitors can kill: meter before touching.",
];

impl Widget for &Help {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let look = Look::new(self.color);
        // The keys come from the one table the update reads ([`super::keys`]).
        let keys = super::keys::help_lines();
        let rect = super::style::centered(area, 76, (keys.len() + NOTES.len()) as u16 + 2);
        let h = rect.height;
        Clear.render(rect, buf);
        let mut lines: Vec<Line> = keys
            .iter()
            .map(|(k, what)| Line::from(format!("{k:<16} {what}")))
            .collect();
        let room = (h as usize).saturating_sub(2 + keys.len());
        lines.extend(
            NOTES
                .iter()
                .take(room)
                .map(|n| Line::styled(*n, look.dim())),
        );
        Paragraph::new(lines)
            .wrap(Wrap { trim: true })
            .block(look.panel("Keys (Esc closes)", true))
            .render(rect, buf);
    }
}
