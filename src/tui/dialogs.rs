//! The dialogs of the form's choices and the library's trash: a list to pick a word from, a
//! question before values are dropped or typed readings thrown away, the trash to restore from.

use super::app::{App, Confirm, Mode};
use super::fields::FIELDS;
use super::style::Look;
use super::view::dialog;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// Draws the dialog of the mode, if it is one of these.
pub fn render(app: &App, area: Rect, buf: &mut Buffer, look: &Look) {
    match &app.mode {
        Mode::Picker { choice } => {
            let Some(o) = &app.open else { return };
            let f = &FIELDS[o.field];
            let mut lines = vec![format!("{}: {}", f.label, f.help)];
            for (i, w) in f.words().iter().enumerate() {
                lines.push(format!("{} {w}", if i == *choice { ">" } else { " " }));
            }
            lines.push("Up/Down choose, Enter takes it, Esc leaves it as it was".into());
            dialog(area, buf, look, f.label, lines);
        }
        Mode::Confirm(Confirm::Drop { what, drops, .. }) => {
            let mut lines = vec![format!("Change to {what}? These values go:")];
            lines.extend(drops.iter().map(|d| format!("  {d}")));
            lines.push("y: change it (u undoes)   n / Esc: leave it as it was".into());
            dialog(area, buf, look, "Values will be dropped", lines);
        }
        Mode::Confirm(Confirm::DropVisit(form)) => {
            let typed = form
                .values
                .iter()
                .skip(1)
                .filter(|v| !v.trim().is_empty())
                .count();
            dialog(
                area,
                buf,
                look,
                "Leave the visit?",
                vec![
                    format!("{typed} reading(s) typed and not recorded."),
                    "y: leave without recording   n / Esc: back to the form".into(),
                ],
            );
        }
        Mode::Trash { items, selected } => {
            let mut lines = Vec::new();
            if items.is_empty() {
                lines.push("Nothing in the trash.".to_string());
            }
            for (i, t) in items.iter().enumerate() {
                let file = t
                    .file
                    .file_name()
                    .map(|f| f.to_string_lossy().into_owned())
                    .unwrap_or_default();
                lines.push(format!(
                    "{} {}  ({})",
                    if i == *selected { ">" } else { " " },
                    crate::escape::printable(&t.name),
                    crate::escape::printable(&file)
                ));
            }
            lines.push("Up/Down choose, Enter restores into the library, Esc closes".into());
            dialog(area, buf, look, "Trash", lines);
        }
        _ => {}
    }
}
