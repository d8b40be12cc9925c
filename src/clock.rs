//! Today's date from the system clock: a shell concern (the core takes dates as values).

/// Today's date as YYYY-MM-DD (UTC), from the system clock.
pub fn today() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0);
    crate::visit::civil_from_days((secs / 86_400) as i64)
}
