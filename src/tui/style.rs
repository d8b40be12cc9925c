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

/// `text` broken at spaces into lines of at most `width` characters, the lines after the
/// first indented by `indent` spaces; a word longer than a line is cut where the line ends,
/// so nothing runs past the panel's edge.
pub fn wrap_words(text: &str, width: usize, indent: usize) -> Vec<String> {
    let width = width.max(1);
    let indent = indent.min(width.saturating_sub(1));
    let mut out: Vec<String> = Vec::new();
    let mut line = String::new();
    let mut len = 0;
    let lead = text.len() - text.trim_start().len();
    // The text's own leading spaces stay on its first line.
    line.push_str(&text[..lead]);
    len += lead;
    for word in text.split_whitespace() {
        let mut chars: Vec<char> = word.chars().collect();
        loop {
            let room = width - len.min(width);
            let fresh = line.trim().is_empty();
            let need = chars.len() + usize::from(!fresh);
            if need <= room {
                if !fresh {
                    line.push(' ');
                }
                line.extend(chars.iter());
                len += need;
                break;
            }
            if fresh && chars.len() > room {
                // Too long for any line: cut it.
                let head: String = chars.drain(..room.max(1)).collect();
                line.push_str(&head);
                out.push(std::mem::take(&mut line));
                line = " ".repeat(indent);
                len = indent;
                if chars.is_empty() {
                    break;
                }
                continue;
            }
            out.push(std::mem::take(&mut line));
            line = " ".repeat(indent);
            len = indent;
        }
    }
    if !line.trim().is_empty() || out.is_empty() {
        out.push(line);
    }
    out
}

/// A value with about three significant digits and no prefix (`27.6`, `1.55`, `0.153`,
/// `230`), so that a reading and its window read in the same unit.
pub fn sig3(x: f64) -> String {
    if !x.is_finite() {
        return "--".into();
    }
    let a = x.abs();
    if a >= 100.0 {
        format!("{x:.0}")
    } else if a >= 10.0 {
        format!("{x:.1}")
    } else if a >= 1.0 {
        format!("{x:.2}")
    } else {
        format!("{x:.3}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wrapping_keeps_every_word_and_the_width() {
        let text = "the filter capacitor was replaced on 2026-11-30; its trend starts again";
        for width in [10, 20, 33, 50, 200] {
            let lines = wrap_words(text, width, 2);
            assert!(
                lines.iter().all(|l| l.chars().count() <= width),
                "{lines:?}"
            );
            // Every character kept, in order.
            let squeeze = |t: &str| t.split_whitespace().collect::<String>();
            assert_eq!(squeeze(&lines.concat()), squeeze(text), "{width}");
            // And every word whole where the lines are wider than the longest word.
            if width >= 20 {
                let words: Vec<&str> = lines.iter().flat_map(|l| l.split_whitespace()).collect();
                assert_eq!(words.join(" "), text, "{width}");
            }
        }
        // A word longer than the line is cut, not lost.
        let lines = wrap_words("abcdefghij", 4, 0);
        assert_eq!(lines, ["abcd", "efgh", "ij"]);
    }

    #[test]
    fn three_figures() {
        assert_eq!(sig3(27.63), "27.6");
        assert_eq!(sig3(1.554), "1.55");
        assert_eq!(sig3(0.1534), "0.153");
        assert_eq!(sig3(230.4), "230");
    }
}
