//! Text from a file shown on a terminal. A supply's name, site, notes or a visit's technician
//! are typed by people and synced between machines; a control character in one (ESC [2J, an
//! OSC title sequence, a bare CR) would clear the screen, retitle the window or overwrite the
//! line when printed raw. Every text command prints such strings through [`printable`]; JSON
//! output is escaped by serde and the screen's buffer drops control characters itself.

use std::borrow::Cow;
use std::fmt::Write as _;

/// Whether `c` must not reach a terminal raw: the C0 controls, DEL and the C1 controls (ESC,
/// BEL, CR, LF, the 8-bit CSI and OSC introducers...), and the bidirectional overrides and
/// isolates, which reorder what is shown without being seen.
fn needs_escape(c: char) -> bool {
    c.is_control() || matches!(c, '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}')
}

/// `text` with every control character written as a visible escape: `\n`, `\r`, `\t`, `\x1b`
/// for the other C0 controls and DEL, `\u{9d}` for C1 controls and bidirectional overrides.
/// Text without any comes back as it is, unallocated.
pub fn printable(text: &str) -> Cow<'_, str> {
    if !text.chars().any(needs_escape) {
        return Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 16);
    for c in text.chars() {
        match c {
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            '\t' => out.push_str("\\t"),
            c if c.is_ascii() && needs_escape(c) => {
                let _ = write!(out, "\\x{:02x}", c as u32);
            }
            c if needs_escape(c) => {
                let _ = write!(out, "\\u{{{:x}}}", c as u32);
            }
            c => out.push(c),
        }
    }
    Cow::Owned(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn control_characters_become_visible() {
        assert_eq!(printable("Pump-house 2"), "Pump-house 2");
        assert!(matches!(printable("plain"), Cow::Borrowed(_)));
        assert_eq!(printable("a\x1b[2Jb"), "a\\x1b[2Jb");
        assert_eq!(printable("\x1b]0;owned\x07"), "\\x1b]0;owned\\x07");
        assert_eq!(printable("x\ry\nz\t"), "x\\ry\\nz\\t");
        assert_eq!(printable("\x7f\x00"), "\\x7f\\x00");
        // C1: the 8-bit CSI and OSC introducers.
        assert_eq!(printable("\u{9b}2J\u{9d}0;t"), "\\u{9b}2J\\u{9d}0;t");
        assert_eq!(printable("abc\u{202e}txt"), "abc\\u{202e}txt");
        // Ordinary non-ASCII text is left alone.
        assert_eq!(
            printable("Wasserwerk Süd, 2 µF, Ω"),
            "Wasserwerk Süd, 2 µF, Ω"
        );
    }

    #[test]
    fn nothing_escaped_is_left_raw() {
        for c in (0u32..0x110000).filter_map(char::from_u32) {
            let shown = printable(&c.to_string()).into_owned();
            assert!(
                !shown.chars().any(needs_escape),
                "{:x} -> {shown:?}",
                c as u32
            );
        }
    }
}
