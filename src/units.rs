//! SI prefixes as a technician writes and reads them: parse `4k7`, `47u`, `2m2`, `680R`, `1.5M`;
//! format `4.70 mF`, `16.1 mA`.
//!
//! Engineering notation puts the prefix where the decimal point goes (`4k7` is 4.7 k), the
//! habit of schematics and part markings because a decimal point gets lost in a photocopy.

use std::fmt;

/// Why a text could not be read as a number with an SI prefix.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct UnitParseError {
    pub text: String,
    pub reason: &'static str,
}

impl fmt::Display for UnitParseError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "cannot read {:?} as a number: {}",
            self.text, self.reason
        )
    }
}

impl std::error::Error for UnitParseError {}

/// Multiplier of an SI prefix letter; `R` and `V`-style unit letters used as a decimal point
/// (`680R`, `4V7`) count as 1. `M` is mega, `m` milli, as on every schematic.
fn prefix_factor(c: char) -> Option<f64> {
    Some(match c {
        'p' => 1e-12,
        'n' => 1e-9,
        'u' | 'µ' | 'μ' => 1e-6,
        'm' => 1e-3,
        'R' | 'r' | 'V' | 'A' | 'F' => 1.0,
        'k' | 'K' => 1e3,
        'M' => 1e6,
        'G' => 1e9,
        _ => return None,
    })
}

/// Unit words a technician may type after the number; they are checked for nothing but
/// being a unit, since the field itself says which quantity it is.
const UNIT_SUFFIXES: [&str; 9] = ["ohms", "ohm", "Ω", "Hz", "hz", "VA", "F", "V", "A"];

/// Parses engineering notation into a plain SI value (no unit): `"47u"` -> 4.7e-5,
/// `"4k7"` -> 4700.0, `"680R"` -> 680.0, `"47uF"` -> 4.7e-5, `"1.5M"` -> 1.5e6, `"-3.3"` -> -3.3.
pub fn parse_si(text: &str) -> Result<f64, UnitParseError> {
    let err = |reason| UnitParseError {
        text: text.to_string(),
        reason,
    };
    let mut s = text.trim();
    if s.is_empty() {
        return Err(err("it is empty"));
    }
    for unit in UNIT_SUFFIXES {
        if let Some(rest) = s.strip_suffix(unit) {
            // "680R" style and "47uF": strip the unit only when something numeric stays.
            if !rest.is_empty() && rest.trim_end() != "-" {
                s = rest.trim_end();
                break;
            }
        }
    }
    let (sign, body) = match s.strip_prefix('-') {
        Some(rest) => (-1.0, rest),
        None => (1.0, s.strip_prefix('+').unwrap_or(s)),
    };
    if body.starts_with(['-', '+']) {
        return Err(err("more than one sign"));
    }
    if let Ok(plain) = body.parse::<f64>() {
        return if plain.is_finite() {
            Ok(sign * plain)
        } else {
            Err(err("not a finite number"))
        };
    }
    let chars: Vec<char> = body.chars().collect();
    let prefix_at: Vec<usize> = chars
        .iter()
        .enumerate()
        .filter(|(_, c)| !c.is_ascii_digit() && **c != '.' && **c != 'e' && **c != 'E')
        .map(|(i, _)| i)
        .collect();
    let value = match prefix_at.as_slice() {
        [] => body.parse::<f64>().map_err(|_| err("not a number"))?,
        [i] => {
            let factor = prefix_factor(chars[*i]).ok_or_else(|| err("unknown unit prefix"))?;
            let head: String = chars[..*i].iter().collect();
            let tail: String = chars[*i + 1..].iter().collect();
            if head.is_empty() || head.contains('e') || head.contains('E') {
                return Err(err("a prefix must follow digits"));
            }
            let number = if tail.is_empty() {
                head.parse::<f64>().map_err(|_| err("not a number"))?
            } else {
                // The prefix stands for the decimal point: "4k7" is "4.7k".
                if head.contains('.') || !tail.chars().all(|c| c.is_ascii_digit()) {
                    return Err(err("digits after a prefix must be plain digits"));
                }
                format!("{head}.{tail}")
                    .parse::<f64>()
                    .map_err(|_| err("not a number"))?
            };
            number * factor
        }
        _ => return Err(err("more than one unit prefix")),
    };
    if !value.is_finite() {
        return Err(err("not a finite number"));
    }
    Ok(sign * value)
}

/// A capacitance as technicians order it: microfarads, with no prefix games
/// (`format_uf(3900.0)` -> `"3900 uF"`, `format_uf(4.7)` -> `"4.7 uF"`, `format_uf(0.0047)`
/// -> `"0.0047 uF"`), three significant digits at most, whole microfarads from 100 up.
pub fn format_uf(uf: f64) -> String {
    if !uf.is_finite() {
        return "-- uF".to_string();
    }
    if uf.abs() >= 100.0 {
        return format!("{:.0} uF", uf);
    }
    format!("{} uF", format_number(round_sig(uf, 3)))
}

/// `x` rounded to `digits` significant digits.
fn round_sig(x: f64, digits: i32) -> f64 {
    if x == 0.0 {
        return 0.0;
    }
    let scale = 10f64.powi(digits - 1 - x.abs().log10().floor() as i32);
    (x * scale).round() / scale
}

/// Formats an SI value (volts, amps, farads, ohms...) with three significant digits and a
/// prefix: `format_si(0.0161, "A")` -> `"16.1 mA"`, `format_si(4.7e-3, "F")` -> `"4.70 mF"`.
pub fn format_si(value: f64, unit: &str) -> String {
    if !value.is_finite() {
        return "--".to_string();
    }
    if value == 0.0 {
        return format!("0.00 {unit}");
    }
    const PREFIXES: [(f64, &str); 9] = [
        (1e9, "G"),
        (1e6, "M"),
        (1e3, "k"),
        (1.0, ""),
        (1e-3, "m"),
        (1e-6, "u"),
        (1e-9, "n"),
        (1e-12, "p"),
        (1e-15, "f"),
    ];
    let magnitude = value.abs();
    // Beyond the prefixes (a tera-anything or below a femto) the mantissa would run to
    // hundreds of digits: E notation instead.
    if !(1e-15 * 0.9995..999.95e9).contains(&magnitude) {
        return format!("{value:.2e} {unit}");
    }
    let (scale, prefix) = PREFIXES
        .iter()
        .copied()
        // The 0.9995 keeps 999.7 from printing as "1000 m" once rounded.
        .find(|(scale, _)| magnitude >= scale * 0.9995)
        .unwrap_or((1e-15, "f"));
    let scaled = value / scale;
    let digits = if scaled.abs() >= 99.95 {
        0
    } else if scaled.abs() >= 9.995 {
        1
    } else {
        2
    };
    format!("{scaled:.digits$} {prefix}{unit}")
}

/// A number as it was typed, for messages and headers: plain when of ordinary size (`0.35`,
/// `230`, `100000`), E notation otherwise (`1e308`, `5e-324`), never hundreds of digits.
pub fn format_number(value: f64) -> String {
    let magnitude = value.abs();
    if !value.is_finite() || value == 0.0 || (1e-4..1e6).contains(&magnitude) {
        format!("{value}")
    } else {
        format!("{value:e}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * b.abs().max(1e-30)
    }

    #[test]
    fn reads_engineering_notation() {
        for (text, want) in [
            ("47u", 47e-6),
            ("4k7", 4700.0),
            ("2m2", 2.2e-3),
            ("1.5M", 1.5e6),
            ("47uF", 47e-6),
            ("680R", 680.0),
            ("4R7", 4.7),
            ("0.35", 0.35),
            ("-12", -12.0),
            ("2200u", 2200e-6),
            ("230V", 230.0),
            ("1e-3", 1e-3),
            (" 15 ", 15.0),
            ("10 ohms", 10.0),
        ] {
            let got = parse_si(text).unwrap_or_else(|e| panic!("{text}: {e}"));
            assert!(close(got, want), "{text}: got {got}, want {want}");
        }
    }

    #[test]
    fn refuses_what_is_not_a_number() {
        for text in ["", "abc", "4k7k", "4.2k7", "k", "1x", "nan", "inf", "--3"] {
            assert!(parse_si(text).is_err(), "{text:?} should be refused");
        }
    }

    #[test]
    fn formats_three_digits_with_a_prefix() {
        assert_eq!(format_si(0.0161, "A"), "16.1 mA");
        assert_eq!(format_si(4.7e-3, "F"), "4.70 mF");
        assert_eq!(format_si(9.62, "V"), "9.62 V");
        assert_eq!(format_si(230.0, "V"), "230 V");
        assert_eq!(format_si(0.9997, "V"), "1.00 V");
        assert_eq!(format_si(-0.5, "V"), "-500 mV");
        assert_eq!(format_si(0.0, "A"), "0.00 A");
        assert_eq!(format_si(f64::NAN, "V"), "--");
        // Out of the prefixes' reach: E notation, not 300 digits.
        assert_eq!(format_si(1e308, "ohm"), "1.00e308 ohm");
        assert_eq!(format_si(5e-324, "V"), "4.94e-324 V");
    }

    #[test]
    fn numbers_as_typed_stay_short() {
        assert_eq!(format_uf(3900.0), "3900 uF");
        assert_eq!(format_uf(4.7), "4.7 uF");
        assert_eq!(format_uf(0.0047), "0.0047 uF");
        assert_eq!(format_uf(47.04), "47 uF");
        assert_eq!(format_uf(f64::NAN), "-- uF");
        assert_eq!(format_number(230.0), "230");
        assert_eq!(format_number(0.35), "0.35");
        assert_eq!(format_number(-47.0), "-47");
        assert_eq!(format_number(100000.0), "100000");
        assert_eq!(format_number(1e308), "1e308");
        assert_eq!(format_number(5e-324), "5e-324");
        assert_eq!(format_number(1e-300), "1e-300");
        assert_eq!(format_number(0.0), "0");
        for v in [
            1e308,
            5e-324,
            1.5e-7,
            123456789.0,
            f64::MAX,
            f64::MIN_POSITIVE,
        ] {
            let text = format_number(v);
            assert!(text.len() <= 24, "{v}: {text}");
            assert_eq!(text.parse::<f64>().unwrap(), v, "reads back exactly");
        }
    }

    #[test]
    fn formatted_values_read_back() {
        for v in [16.1e-3, 4.7e-3, 230.0, 1.23e-6, 47e3] {
            let text = format_si(v, "");
            let back = parse_si(&text.replace(' ', "")).unwrap();
            assert!((back - v).abs() / v < 5e-3, "{v} -> {text} -> {back}");
        }
    }
}
