//! The help overlay: every key, in plain words.

use super::style::Look;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::Line;
use ratatui::widgets::{Clear, Paragraph, Widget, Wrap};

pub struct Help {
    pub color: bool,
}

/// Every key the screen knows, as the overlay lists it.
pub const KEYS: [(&str, &str); 19] = [
    ("Up/Down, k/j", "move in the list or the form"),
    (
        "Left/Right, h/l",
        "change a choice field (topology, diode, filter)",
    ),
    ("Tab / Shift-Tab", "next / previous panel"),
    ("Enter", "edit the field; apply the typed value"),
    ("Esc", "cancel, close; then q always quits"),
    ("/", "filter the list by typing; Esc clears"),
    ("s", "save now (applied edits are saved at once anyway)"),
    ("u / U", "undo / redo"),
    ("x", "what-if: scratch changes; x again to keep or discard"),
    ("w", "sketch: nominal or the worst low corner"),
    ("n", "new supply from a topology template"),
    ("c", "copy (duplicate) the supply"),
    ("D", "delete: moves the file to .trash (recoverable)"),
    ("v", "the supply's visits, or back to the results"),
    ("a", "record a visit (readings form; Enter saves)"),
    ("b", "visits: calibrate on the newest visit (known good)"),
    ("R", "reload the library from disk"),
    ("?", "this help"),
    (
        "q, Ctrl-C",
        "quit (edits are saved; what-if scratch is dropped)",
    ),
];

/// Notes shown under the keys when the screen has room.
pub const NOTES: [&str; 4] = [
    "Values: 4k7, 47u, 2m2, 680R; in uF fields a bare number is uF. Empty clears.",
    "Marks: * panel has the keys, ! refused value, FAIL / WARN / OK checks.",
    "File changed on disk: r reloads theirs, k keeps yours as a new supply.",
    "Mains and charged capacitors can kill: meter before touching.",
];

impl Widget for &Help {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let look = Look::new(self.color);
        let rect = super::style::centered(area, 76, (KEYS.len() + NOTES.len()) as u16 + 2);
        let h = rect.height;
        Clear.render(rect, buf);
        let mut lines: Vec<Line> = KEYS
            .iter()
            .map(|(k, what)| Line::from(format!("{k:<16} {what}")))
            .collect();
        let room = (h as usize).saturating_sub(2 + KEYS.len());
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
