//! The library list: supply names, unreadable files marked, the filter on top.

use super::app::{App, Mode, Panel};
use super::style::Look;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{List, ListItem, ListState, StatefulWidget, Widget};

pub struct ListPanel<'a>(pub &'a App);

impl Widget for &ListPanel<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let app = self.0;
        let look = Look::new(app.color);
        let title = if app.mode == Mode::Filter || !app.filter.is_empty() {
            format!("Supplies /{}", app.filter)
        } else {
            format!("Supplies ({})", app.entries.len())
        };
        let block = look.panel(&title, app.panel == Panel::List);
        let items: Vec<ListItem> = app
            .visible()
            .iter()
            .map(|&i| {
                let e = &app.entries[i];
                match e.supply() {
                    Some(s) => ListItem::new(Line::from(s.name.clone())),
                    None => ListItem::new(Line::from(vec![
                        Span::styled("! ", look.fail()),
                        Span::raw(e.name()),
                        Span::styled(" unreadable", look.dim()),
                    ])),
                }
            })
            .collect();
        let list = List::new(items)
            .block(block)
            .highlight_style(look.selected())
            .highlight_symbol("> ");
        let mut state = ListState::default().with_selected(Some(app.selected));
        StatefulWidget::render(list, area, buf, &mut state);
    }
}
