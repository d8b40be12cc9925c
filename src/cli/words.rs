//! Readings and values as a technician says them: "DC 9.62 V", "ripple peak to peak 1.1 V",
//! a window "9.85 .. 10.15 V". The JSON keeps the keys (`dc_v`); the text uses these words.

use crate::units::format_number;

/// A reading's name in words and its unit, from its key in the visit table and the JSON
/// (`"dc_v"` -> ("DC", "V")); an unknown key is shown as it is, with no unit.
pub fn reading(key: &str) -> (&str, &'static str) {
    match key {
        "mains_vrms" => ("mains", "V"),
        "secondary_vac" => ("secondary AC", "V"),
        "dc_v" => ("DC", "V"),
        "ripple_pp_v" => ("ripple peak to peak", "V"),
        "ripple_rms_v" => ("ripple RMS", "V"),
        "ripple_hz" => ("ripple frequency", "Hz"),
        "load_a" => ("load current", "A"),
        "line_imbalance_pct" => ("line imbalance", "%"),
        other => (other, ""),
    }
}

/// A reading as typed, with its name and unit: `("dc_v", 9.62)` -> "DC 9.62 V".
pub fn reading_value(key: &str, value: f64) -> String {
    let (name, unit) = reading(key);
    with_unit(&format!("{name} {}", format_number(value)), unit)
}

/// A three-phase unit's three line-to-line readings: "lines a-b 401 V, b-c 398 V, c-a 404 V".
pub fn lines_value(v: [f64; 3]) -> String {
    format!(
        "lines a-b {} V, b-c {} V, c-a {} V",
        format_number(v[0]),
        format_number(v[1]),
        format_number(v[2])
    )
}

fn with_unit(text: &str, unit: &str) -> String {
    if unit.is_empty() {
        text.to_string()
    } else {
        format!("{text} {unit}")
    }
}

/// Decimals that show a window's edges to about four significant digits of its largest
/// value: 9.85 .. 10.15 V, 207.0 .. 253.0 V, 0.250 .. 0.410 V.
fn decimals(largest: f64) -> usize {
    match largest.abs() {
        m if m >= 100.0 => 1,
        m if m >= 1.0 => 2,
        m if m >= 0.1 => 3,
        _ => 4,
    }
}

/// A window from `min` to `max` in `unit`: "9.85 .. 10.15 V".
pub fn window(min: f64, max: f64, unit: &str) -> String {
    let d = decimals(min.abs().max(max.abs()));
    with_unit(&format!("{min:.d$} .. {max:.d$}"), unit)
}

/// A single value at the precision its window uses: "10.00 V" beside "9.85 .. 10.15 V".
pub fn value_like(value: f64, min: f64, max: f64, unit: &str) -> String {
    let d = decimals(min.abs().max(max.abs()));
    with_unit(&format!("{value:.d$}"), unit)
}

/// A resistance in ohms as a technician reads it off an ESR meter, without prefixes (a
/// "50.0 mohm" beside "1.15 ohm" is harder to compare): "0.05 ohm", "1.15 ohm", "25.7 ohm".
pub fn ohms(value: f64) -> String {
    match value.abs() {
        m if m >= 100.0 => format!("{value:.0} ohm"),
        m if m >= 10.0 => format!("{value:.1} ohm"),
        _ => format!("{value:.2} ohm"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn readings_are_named_as_a_technician_says_them() {
        assert_eq!(reading_value("dc_v", 9.62), "DC 9.62 V");
        assert_eq!(reading_value("mains_vrms", 226.0), "mains 226 V");
        assert_eq!(reading_value("secondary_vac", 19.4), "secondary AC 19.4 V");
        assert_eq!(
            reading_value("ripple_pp_v", 1.1),
            "ripple peak to peak 1.1 V"
        );
        assert_eq!(reading_value("ripple_rms_v", 0.31), "ripple RMS 0.31 V");
        assert_eq!(reading_value("ripple_hz", 100.0), "ripple frequency 100 Hz");
        assert_eq!(reading_value("load_a", 0.34), "load current 0.34 A");
        assert_eq!(
            lines_value([401.0, 398.0, 404.5]),
            "lines a-b 401 V, b-c 398 V, c-a 404.5 V"
        );
        // Every key a visit can hold has words, not the key itself.
        for (key, _) in (crate::visit::Readings {
            mains_vrms: Some(1.0),
            secondary_vac: Some(1.0),
            dc_v: Some(1.0),
            ripple_pp_v: Some(1.0),
            ripple_rms_v: Some(1.0),
            ripple_hz: Some(1.0),
            load_a: Some(1.0),
            line_vrms: Some([1.0; 3]),
        })
        .present()
        .into_iter()
        .chain([("line_imbalance_pct", 0.0)])
        {
            let (name, unit) = reading(key);
            assert!(name != key && !unit.is_empty(), "{key}");
        }
    }

    #[test]
    fn windows_show_four_digits_of_their_largest_edge() {
        assert_eq!(window(9.85, 10.15, "V"), "9.85 .. 10.15 V");
        assert_eq!(window(207.0, 253.0, "V"), "207.0 .. 253.0 V");
        assert_eq!(window(0.25, 0.41, "V"), "0.250 .. 0.410 V");
        assert_eq!(window(0.012, 0.034, "V"), "0.0120 .. 0.0340 V");
        assert_eq!(value_like(10.0, 9.85, 10.15, "V"), "10.00 V");
        assert_eq!(ohms(0.05), "0.05 ohm");
        assert_eq!(ohms(25.66), "25.7 ohm");
    }
}
