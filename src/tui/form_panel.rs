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
        for (i, f) in FIELDS.iter().enumerate() {
            if f.group != group {
                group = f.group;
                lines.push(Line::from(Span::styled(group.to_string(), look.heading())));
            }
            if i == open.field {
                cursor_line = lines.len();
            }
            let editing = matches!(app.mode, Mode::Editing { .. }) && i == open.field;
            let value = match (&app.mode, editing) {
                (Mode::Editing { buffer }, true) => format!("{buffer}_"),
                _ => f.key.show(&open.supply),
            };
            let mut spans = vec![
                Span::raw(if i == open.field && app.panel == Panel::Form {
                    ">"
                } else {
                    " "
                }),
                Span::raw(format!("{:<w$} ", f.label, w = label_w)),
                Span::styled(
                    value,
                    if i == open.field && app.panel == Panel::Form {
                        look.selected()
                    } else {
                        ratatui::style::Style::default()
                    },
                ),
            ];
            if let Some(before) = &open.what_if
                && f.key.show(&before.0) != f.key.show(&open.supply)
            {
                spans.push(Span::styled(
                    format!(" (was {})", f.key.show(&before.0)),
                    look.dim(),
                ));
            }
            lines.push(Line::from(spans));
            if let Some((fi, why)) = &open.field_error
                && *fi == i
            {
                lines.push(Line::from(Span::styled(format!("  ! {why}"), look.fail())));
            }
        }
        // Keep the field under the cursor in view, with its refusal under it when there is one.
        let rows = area.height.saturating_sub(2) as usize;
        let below = match &open.field_error {
            Some((fi, why)) if *fi == open.field => why.len() / inner_width.max(1) + 2,
            _ => 2,
        };
        let top = (cursor_line + below).saturating_sub(rows);
        Paragraph::new(lines)
            .wrap(Wrap { trim: false })
            .scroll((top as u16, 0))
            .block(look.panel(&title, app.panel == Panel::Form))
            .render(area, buf);
    }
}
