//! One line of text being typed, as terminal line editors behave: a cursor that Left/Right and
//! Home/End move, Backspace and Delete on either side of it, Ctrl-U to clear, Ctrl-W to delete
//! the word before the cursor. A value opened for editing is selected as a whole: the first
//! character typed replaces it, Backspace or Delete clears it, and a cursor key keeps it for
//! editing instead.

/// What a key does to the line.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LineKey {
    Char(char),
    Left,
    Right,
    Home,
    End,
    Backspace,
    Delete,
    /// Ctrl-U: the whole line.
    Clear,
    /// Ctrl-W: the word before the cursor.
    DeleteWord,
}

/// The line and its cursor (a position between characters, 0 to the length).
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct LineEditor {
    pub text: String,
    pub cursor: usize,
    /// The text is the old value, not yet touched: a typed character replaces it.
    pub fresh: bool,
}

impl LineEditor {
    /// The line holding `old`, the cursor at its end, selected as a whole.
    pub fn new(old: &str) -> LineEditor {
        LineEditor {
            text: old.to_string(),
            cursor: old.chars().count(),
            fresh: !old.is_empty(),
        }
    }

    /// An empty line.
    pub fn empty() -> LineEditor {
        LineEditor::default()
    }

    fn byte_at(&self, chars: usize) -> usize {
        self.text
            .char_indices()
            .nth(chars)
            .map_or(self.text.len(), |(i, _)| i)
    }

    fn len(&self) -> usize {
        self.text.chars().count()
    }

    /// Applies one key.
    pub fn key(&mut self, key: LineKey) {
        let fresh = std::mem::replace(&mut self.fresh, false);
        match key {
            LineKey::Char(c) => {
                if fresh {
                    self.text.clear();
                    self.cursor = 0;
                }
                let at = self.byte_at(self.cursor);
                self.text.insert(at, c);
                self.cursor += 1;
            }
            LineKey::Left => self.cursor = self.cursor.saturating_sub(1),
            LineKey::Right => self.cursor = (self.cursor + 1).min(self.len()),
            LineKey::Home => self.cursor = 0,
            LineKey::End => self.cursor = self.len(),
            // A value still selected as a whole goes as a whole, as selected text does.
            LineKey::Backspace | LineKey::Delete if fresh => {
                self.text.clear();
                self.cursor = 0;
            }
            LineKey::Backspace => {
                if self.cursor > 0 {
                    let at = self.byte_at(self.cursor - 1);
                    self.text.remove(at);
                    self.cursor -= 1;
                }
            }
            LineKey::Delete => {
                if self.cursor < self.len() {
                    let at = self.byte_at(self.cursor);
                    self.text.remove(at);
                }
            }
            LineKey::Clear => {
                self.text.clear();
                self.cursor = 0;
            }
            LineKey::DeleteWord => {
                let chars: Vec<char> = self.text.chars().collect();
                let mut start = self.cursor;
                while start > 0 && chars[start - 1].is_whitespace() {
                    start -= 1;
                }
                while start > 0 && !chars[start - 1].is_whitespace() {
                    start -= 1;
                }
                let (a, b) = (self.byte_at(start), self.byte_at(self.cursor));
                self.text.replace_range(a..b, "");
                self.cursor = start;
            }
        }
    }

    /// The line with a cursor mark (`_` at the end, `|` inside), for drawing.
    pub fn shown(&self) -> String {
        if self.fresh {
            return format!("[{}]", self.text);
        }
        if self.cursor >= self.len() {
            format!("{}_", self.text)
        } else {
            let at = self.byte_at(self.cursor);
            format!("{}|{}", &self.text[..at], &self.text[at..])
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn typed(e: &mut LineEditor, keys: &[LineKey]) {
        for k in keys {
            e.key(*k);
        }
    }

    #[test]
    fn the_first_character_replaces_a_fresh_value_and_a_cursor_key_keeps_it() {
        let mut e = LineEditor::new("2200");
        e.key(LineKey::Char('4'));
        assert_eq!(e.text, "4");
        let mut e = LineEditor::new("2200");
        e.key(LineKey::Backspace);
        assert_eq!(e.text, "", "a selected value goes whole");
        let mut e = LineEditor::new("2200");
        typed(
            &mut e,
            &[LineKey::Home, LineKey::Delete, LineKey::Char('3')],
        );
        assert_eq!((e.text.as_str(), e.cursor), ("3200", 1));
        typed(
            &mut e,
            &[LineKey::End, LineKey::Backspace, LineKey::Char('7')],
        );
        assert_eq!(e.text, "3207");
    }

    #[test]
    fn ctrl_u_clears_and_ctrl_w_deletes_the_word_before_the_cursor() {
        let mut e = LineEditor::new("Pump house relay rail");
        typed(&mut e, &[LineKey::End, LineKey::DeleteWord]);
        assert_eq!(e.text, "Pump house relay ");
        typed(&mut e, &[LineKey::DeleteWord]);
        assert_eq!(e.text, "Pump house ");
        e.key(LineKey::Clear);
        assert_eq!((e.text.as_str(), e.cursor), ("", 0));
    }

    #[test]
    fn cursor_moves_stay_inside_the_line_and_keep_multibyte_text_whole() {
        let mut e = LineEditor::new("4µ7");
        typed(
            &mut e,
            &[LineKey::Right, LineKey::Right, LineKey::Left, LineKey::Left],
        );
        assert_eq!(e.cursor, 1);
        e.key(LineKey::Delete);
        assert_eq!(e.text, "47");
        typed(&mut e, &[LineKey::Home, LineKey::Left, LineKey::Backspace]);
        assert_eq!((e.text.as_str(), e.cursor), ("47", 0));
    }
}
