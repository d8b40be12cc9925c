//! Why a supply file or a field value was refused, placed at its line in the file: the key,
//! the value as typed and the allowed range.

use super::FORMAT;
use crate::units::format_number;
use std::fmt;

/// Why a supply file or a field value was refused.
#[derive(Debug, Clone, PartialEq)]
pub enum SupplyError {
    /// The text is not TOML, or a value has the wrong type (text where a number goes).
    Syntax {
        line: Option<usize>,
        column: Option<usize>,
        /// The dotted key on that line, when the line has one (`rectifier.topology`).
        key: Option<String>,
        message: String,
    },
    /// A key the supply cannot do without.
    Missing {
        key: &'static str,
        why: &'static str,
        /// Where the key belongs in the file (its table's line), when read from text.
        line: Option<usize>,
    },
    /// A value outside what the model accepts.
    OutOfRange {
        key: &'static str,
        value: String,
        allowed: String,
        /// The line of the key in the file, when read from text.
        line: Option<usize>,
        /// Which `[[visit]]` (1-based) the key is in, for a visit's keys.
        visit: Option<usize>,
    },
    /// A file written by a newer railcheck.
    NewerFormat { found: u32 },
}

impl SupplyError {
    /// A range error for `key`, not yet placed on a line.
    pub(crate) fn out_of_range(
        key: &'static str,
        value: impl Into<String>,
        allowed: impl Into<String>,
    ) -> Self {
        SupplyError::OutOfRange {
            key,
            value: value.into(),
            allowed: allowed.into(),
            line: None,
            visit: None,
        }
    }

    /// The error with the line of its key in `text` filled in (validation knows keys, not
    /// lines; the README promises the line).
    pub(crate) fn placed_in(mut self, text: &str) -> Self {
        match &mut self {
            SupplyError::OutOfRange {
                key, line, visit, ..
            } => *line = line_of_key(text, key, *visit),
            SupplyError::Missing { key, line, .. } => *line = line_of_key(text, key, None),
            SupplyError::Syntax { .. } | SupplyError::NewerFormat { .. } => {}
        }
        self
    }
}

impl fmt::Display for SupplyError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SupplyError::Syntax {
                line: Some(l),
                column: Some(c),
                key: Some(k),
                message,
            } => write!(f, "line {l}, column {c}, `{k}`: {message}"),
            SupplyError::Syntax {
                line: Some(l),
                column: Some(c),
                message,
                ..
            } => write!(f, "line {l}, column {c}: {message}"),
            SupplyError::Syntax { message, .. } => write!(f, "{message}"),
            SupplyError::Missing { key, why, line } => {
                if let Some(l) = line {
                    write!(f, "line {l}, ")?;
                }
                write!(f, "`{key}` is missing: {why}")
            }
            SupplyError::OutOfRange {
                key,
                value,
                allowed,
                line,
                visit,
            } => {
                if let Some(l) = line {
                    write!(f, "line {l}, ")?;
                }
                write!(f, "`{key}` must be {allowed} (got {value}")?;
                if let Some(v) = visit {
                    write!(f, ", visit {v}")?;
                }
                write!(f, ")")
            }
            SupplyError::NewerFormat { found } => write!(
                f,
                "`format` is {found}, newer than this railcheck reads ({FORMAT}); update railcheck"
            ),
        }
    }
}

impl std::error::Error for SupplyError {}

pub(super) fn syntax_error(text: &str, e: &toml::de::Error) -> SupplyError {
    let (line, column, key) = match e.span() {
        Some(span) => {
            let start = span.start.min(text.len());
            let start = (0..=start)
                .rev()
                .find(|&i| text.is_char_boundary(i))
                .unwrap_or(0);
            let before = &text[..start];
            let line = before.matches('\n').count() + 1;
            let column = before.chars().rev().take_while(|&c| c != '\n').count() + 1;
            // A missing key has no line of its own: the span is the table it should be in.
            let key = if e.message().starts_with("missing field") {
                None
            } else {
                key_at_line(text, line)
            };
            (Some(line), Some(column), key)
        }
        None => (None, None, None),
    };
    // toml's own message repeats the source excerpt; the first line carries the reason.
    let message = shorten_numbers(e.message().lines().next().unwrap_or("not valid TOML"));
    SupplyError::Syntax {
        line,
        column,
        key,
        message,
    }
}

/// `message` with every number of more than 24 characters (toml spells out `4.2e252` when it
/// names a float where an integer goes) written short, as [`format_number`] writes it.
pub(super) fn shorten_numbers(message: &str) -> String {
    let mut out = String::with_capacity(message.len());
    let mut rest = message;
    while let Some(start) = rest.find(|c: char| c.is_ascii_digit()) {
        out.push_str(&rest[..start]);
        let len = rest[start..]
            .find(|c: char| !(c.is_ascii_digit() || c == '.'))
            .unwrap_or(rest.len() - start);
        let number = &rest[start..start + len];
        match number.parse::<f64>() {
            Ok(v) if number.len() > 24 => out.push_str(&format_number(v)),
            _ => out.push_str(number),
        }
        rest = &rest[start + len..];
    }
    out.push_str(rest);
    out
}

/// The line (1-based) where the dotted `key` is written in `text`, or failing that the line of
/// the deepest table on its path that is written; `visit` picks the `[[visit]]` (1-based).
fn line_of_key(text: &str, key: &str, visit: Option<usize>) -> Option<usize> {
    let doc = toml_edit::Document::parse(text).ok()?;
    let mut table: &dyn toml_edit::TableLike = doc.as_table();
    let mut at: Option<usize> = None;
    for part in key.split('.') {
        let Some((k, item)) = table.get_key_value(part) else {
            break;
        };
        if let Some(span) = k.span().or_else(|| item.span()) {
            at = Some(span.start);
        }
        if let Some(tables) = item.as_array_of_tables() {
            let Some(t) = visit.and_then(|i| tables.get(i.checked_sub(1)?)) else {
                break;
            };
            if let Some(span) = t.span() {
                at = Some(span.start);
            }
            table = t;
        } else if let Some(t) = item.as_table_like() {
            table = t;
        } else {
            break;
        }
    }
    Some(text.get(..at?)?.matches('\n').count() + 1)
}

/// The dotted key written on `line` (1-based), with the table header above it.
fn key_at_line(text: &str, line: usize) -> Option<String> {
    let lines: Vec<&str> = text.lines().collect();
    let here = lines.get(line - 1)?;
    let (name, _) = here.split_once('=')?;
    let name = name.trim().trim_matches('"');
    if name.is_empty() || name.starts_with('[') {
        return None;
    }
    // The nearest header above, `[table]` or `[[array]]` (a visit's key is `visit.date`,
    // not the key of the table before the visits).
    let table = lines[..line - 1]
        .iter()
        .rev()
        .map(|l| l.trim())
        .find(|l| l.starts_with('['))
        .and_then(|l| l.trim_start_matches('[').split(']').next())
        .map(|t| t.trim().to_string());
    Some(match table {
        Some(t) => format!("{t}.{name}"),
        None => name.to_string(),
    })
}
