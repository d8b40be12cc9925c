//! The calendar date from the system clock, for the shells that date a visit (the command
//! line's `diagnose --save`, the screen's visit form). The core never reads the clock.

/// Today's date as YYYY-MM-DD (UTC), from the system clock; a clock set before 1970 gives
/// 1970-01-01.
pub fn today() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0);
    crate::visit::civil_from_days((secs / 86_400) as i64)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn today_is_a_date_the_visit_table_reads() {
        let text = today();
        // YYYY-MM-DD, and a TOML date as a visit stores it.
        assert_eq!(text.len(), 10, "{text}");
        let date: crate::visit::Date = text.parse().expect("a TOML date");
        assert_eq!(date.to_string(), text);
        assert!(text.as_str() >= "2025-01-01", "the clock reads {text}");
    }
}
