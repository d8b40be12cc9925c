//! The supply form: grouped fields, the one being edited with its text, a refused value's
//! reason beside it.

use super::app::{App, Mode, Panel};
use super::fields::FIELDS;
use super::style::Look;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

pub struct FormPanel<'a>(pub &'a App);

impl Widget for &FormPanel<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let app = self.0;
        let look = Look::new(app.color);
        let Some(open) = &app.open else {
            let msg = match app.visible().get(app.selected).map(|&i| &app.entries[i]) {
                Some(e) => match &e.state {
                    crate::library::EntryState::Unreadable { error } => format!(
                        "Unreadable file, left as it is.\n{}\n{error}",
                        e.file.display()
                    ),
                    _ => String::new(),
                },
                None => "The library is empty: n makes a new supply.".into(),
            };
            Paragraph::new(msg)
                .wrap(Wrap { trim: true })
                .block(look.panel("Supply", app.panel == Panel::Form))
                .render(area, buf);
            return;
        };
        let title = if open.what_if.is_some() {
            "Supply (WHAT-IF)".to_string()
        } else if open.dirty() {
            "Supply (edited)".to_string()
        } else {
            "Supply".to_string()
        };
        let inner_width = area.width.saturating_sub(2) as usize;
        let label_w = 14.min(inner_width / 2);
        let mut lines: Vec<Line> = Vec::new();
        let mut cursor_line = 0;
        let mut group = "";
        let focused = app.panel == Panel::Form;
        for (i, f) in FIELDS.iter().enumerate() {
            // Only the rows that apply: the nameplate's when the transformer is given by it,
            // a CRC's when the filter is one, and so on.
            if !f.applies(&open.supply) {
                continue;
            }
            if f.group != group {
                group = f.group;
                lines.push(Line::from(Span::styled(group.to_string(), look.heading())));
            }
            if i == open.field {
                cursor_line = lines.len();
            }
            let here = i == open.field && focused;
            let editing = match (&app.mode, i == open.field) {
                (Mode::Editing { editor }, true) => Some(editor.shown()),
                _ => None,
            };
            let guess = open.supply.unconfirmed.iter().any(|p| p == f.path);
            let value = editing.clone().unwrap_or_else(|| f.show(&open.supply));
            let mut spans = vec![
                Span::raw(if here { ">" } else { " " }),
                Span::raw(format!("{:<w$} ", f.label, w = label_w)),
                Span::styled(
                    value,
                    if here {
                        look.selected()
                    } else if guess {
                        look.dim()
                    } else {
                        ratatui::style::Style::default()
                    },
                ),
            ];
            // A value the template or the form filled in, not yet set by the technician.
            if guess && editing.is_none() {
                spans.push(Span::styled(" ?guess", look.warn()));
            }
            if let Some(before) = &open.what_if
                && f.show(&before.0) != f.show(&open.supply)
            {
                spans.push(Span::styled(
                    format!(" (was {})", f.show(&before.0)),
                    look.dim(),
                ));
            }
            lines.push(Line::from(spans));
            if let Some((fi, why)) = &open.field_error
                && *fi == i
            {
                // Wrapped here, so that every line drawn is one line counted for the scroll.
                let text: Vec<char> = format!("  ! {why}").chars().collect();
                for chunk in text.chunks(inner_width.max(8)) {
                    let chunk: String = chunk.iter().collect();
                    lines.push(Line::from(Span::styled(chunk, look.fail())));
                }
            }
        }
        // Keep the field under the cursor in view, with its refusal under it when there is one
        // (lines are cut at the panel's edge, never wrapped, so the count is exact).
        let rows = area.height.saturating_sub(2) as usize;
        let below = match &open.field_error {
            Some((fi, why)) if *fi == open.field => {
                (why.chars().count() + 4) / inner_width.max(8) + 2
            }
            _ => 2,
        };
        let top = (cursor_line + below).saturating_sub(rows);
        Paragraph::new(lines)
            .scroll((top as u16, 0))
            .block(look.panel(&title, app.panel == Panel::Form))
            .render(area, buf);
    }
}
