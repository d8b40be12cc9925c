//! Colours when the terminal may have them (NO_COLOR honoured), and always a word or a mark
//! as well, so that nothing is said by colour alone.

use ratatui::style::{Color, Modifier, Style};
use ratatui::widgets::{Block, BorderType};

#[derive(Debug, Clone, Copy)]
pub struct Look {
    color: bool,
}

impl Look {
    pub fn new(color: bool) -> Look {
        Look { color }
    }

    fn paint(&self, c: Color) -> Style {
        if self.color {
            Style::default().fg(c)
        } else {
            Style::default()
        }
    }

    pub fn fail(&self) -> Style {
        self.paint(Color::Red).add_modifier(Modifier::BOLD)
    }

    pub fn warn(&self) -> Style {
        self.paint(Color::Yellow).add_modifier(Modifier::BOLD)
    }

    pub fn ok(&self) -> Style {
        self.paint(Color::Green)
    }

    pub fn dim(&self) -> Style {
        if self.color {
            Style::default().fg(Color::DarkGray)
        } else {
            Style::default()
        }
    }

    pub fn caution(&self) -> Style {
        self.paint(Color::LightRed).add_modifier(Modifier::BOLD)
    }

    pub fn selected(&self) -> Style {
        Style::default().add_modifier(Modifier::REVERSED)
    }

    pub fn heading(&self) -> Style {
        self.paint(Color::Cyan).add_modifier(Modifier::BOLD)
    }

    /// A panel frame; the one with the keyboard is drawn thick and marked with `*`.
    pub fn panel(&self, title: &str, focused: bool) -> Block<'static> {
        let block = Block::bordered().title(if focused {
            format!("*{title}*")
        } else {
            format!(" {title} ")
        });
        if focused {
            block
                .border_type(BorderType::Thick)
                .border_style(self.paint(Color::Cyan))
        } else {
            block.border_style(self.dim())
        }
    }
}

/// A `width` x `height` rectangle centred in `area` (each clipped to it), for overlays.
pub fn centered(area: ratatui::layout::Rect, width: u16, height: u16) -> ratatui::layout::Rect {
    let w = area.width.min(width);
    let h = area.height.min(height);
    ratatui::layout::Rect {
        x: area.x + (area.width - w) / 2,
        y: area.y + (area.height - h) / 2,
        width: w,
        height: h,
    }
}
