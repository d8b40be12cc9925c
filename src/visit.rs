//! A service visit: the date, who came, what the meters read and what was replaced. Every
//! reading is optional, as in the field.

use serde::{Deserialize, Serialize};

/// A calendar date as TOML writes it (`2026-11-30`).
pub type Date = toml::value::Datetime;

/// An imbalance of the three lines beyond which one of them is taken as lost rather than low
/// (percent): a supply's own imbalance stays within a few percent (practice).
pub const LOST_LINE_IMBALANCE_PCT: f64 = 10.0;

/// What a technician measured; any may be missing (volts, amps, hertz).
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct Readings {
    /// Mains RMS volts at the outlet.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mains_vrms: Option<f64>,
    /// Secondary AC volts (RMS), whole winding.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub secondary_vac: Option<f64>,
    /// DC volts on the rail (a DMM reads the average).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dc_v: Option<f64>,
    /// Ripple peak to peak, scope AC coupled, volts.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ripple_pp_v: Option<f64>,
    /// Ripple RMS, true-RMS meter on AC volts across the rail.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ripple_rms_v: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ripple_hz: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub load_a: Option<f64>,
    /// The three line-to-line voltages at a three-phase rectifier's input (RMS volts, a-b,
    /// b-c, c-a): their mean stands for the mains reading, their spread is the imbalance.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub line_vrms: Option<[f64; 3]>,
}

impl Readings {
    /// The lines' imbalance, percent to a tenth: the largest departure of one line-to-line
    /// voltage from their mean, over the mean (the definition of the motor standard NEMA
    /// MG 1, memory).
    pub fn line_imbalance_pct(&self) -> Option<f64> {
        let v = self.line_vrms?;
        let mean = v.iter().sum::<f64>() / 3.0;
        if mean <= 0.0 {
            return None;
        }
        let pct = 100.0 * v.iter().map(|x| (x - mean).abs()).fold(0.0, f64::max) / mean;
        Some((pct * 10.0).round() / 10.0)
    }

    /// The readings with the three lines standing for the mains reading where the mains
    /// itself was not read: their mean (to a tenth of a volt), or, with one line far out of
    /// step (beyond LOST_LINE_IMBALANCE_PCT: a phase lost, its line reading only what the
    /// rectifier feeds back), the highest, the pair still whole.
    pub fn with_line_mean(&self) -> Readings {
        let mut r = *self;
        if r.mains_vrms.is_none()
            && let Some(v) = r.line_vrms
        {
            let mains = if r
                .line_imbalance_pct()
                .is_some_and(|p| p > LOST_LINE_IMBALANCE_PCT)
            {
                v.iter().copied().fold(0.0, f64::max)
            } else {
                v.iter().sum::<f64>() / 3.0
            };
            r.mains_vrms = Some((mains * 10.0).round() / 10.0);
        }
        r
    }

    /// The readings taken, by name, with their values (volts, amps, hertz).
    pub fn present(&self) -> Vec<(&'static str, f64)> {
        [
            ("mains_vrms", self.mains_vrms),
            ("secondary_vac", self.secondary_vac),
            ("dc_v", self.dc_v),
            ("ripple_pp_v", self.ripple_pp_v),
            ("ripple_rms_v", self.ripple_rms_v),
            ("ripple_hz", self.ripple_hz),
            ("load_a", self.load_a),
        ]
        .into_iter()
        .filter_map(|(k, v)| v.map(|v| (k, v)))
        .collect()
    }
}

/// One visit to a supply, as stored in its file under `[[visit]]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Visit {
    pub date: Date,
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub technician: String,
    /// The readings sit in the visit's table itself (`dc_v = 30.9`).
    #[serde(flatten)]
    pub readings: Readings,
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub notes: String,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub replaced: Vec<String>,
    /// The visit the unit is calibrated on (`baseline = true`): after a repair, at
    /// commissioning, or known good (see [`crate::calibration`]).
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub baseline: bool,
    /// The verdict railcheck gave on these readings, when it was asked.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub diagnosis: Option<VisitDiagnosis>,
}

/// A diagnosis as kept with its visit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct VisitDiagnosis {
    /// healthy, suspect or fault.
    pub verdict: String,
    /// The top-ranked fault.
    pub fault: String,
    pub score: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub estimate: Option<String>,
}

impl Visit {
    /// The date as `YYYY-MM-DD` for sorting and display.
    pub fn date_text(&self) -> String {
        match self.date.date {
            Some(d) => format!("{:04}-{:02}-{:02}", d.year, d.month, d.day),
            None => self.date.to_string(),
        }
    }
}

/// Days since 1970-01-01 of a calendar date (H. Hinnant's days_from_civil).
pub fn days_from_civil(y: i64, m: i64, d: i64) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

/// The calendar date `days` after 1970-01-01, as YYYY-MM-DD (H. Hinnant's civil_from_days).
pub fn civil_from_days(days: i64) -> String {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = if m <= 2 { y + 1 } else { y };
    format!("{y:04}-{m:02}-{d:02}")
}

impl Visit {
    /// The visit's date in days since 1970-01-01.
    pub fn days(&self) -> Option<i64> {
        Visit::day_of(&self.date)
    }

    /// Days since 1970-01-01 of a date (None for a time without a date).
    pub fn day_of(date: &Date) -> Option<i64> {
        date.date
            .map(|d| days_from_civil(d.year as i64, d.month as i64, d.day as i64))
    }

    /// Whether the visit replaced a filter capacitor: a part named by its value in uF or by a
    /// reference designator starting with C ("C12", "C1 4700uF 35V"), as technicians write.
    pub fn replaced_capacitor(&self) -> bool {
        self.replaced.iter().any(|p| {
            let p = p.trim();
            let upper = p.to_uppercase();
            // CR1 is a diode's designator in much of the trade, not a capacitor's.
            let diode = upper
                .strip_prefix("CR")
                .is_some_and(|rest| rest.starts_with(|c: char| c.is_ascii_digit()));
            upper.contains("UF") || (upper.starts_with('C') && !diode)
        })
    }

    /// Whether the visit replaced the transformer: "transformer", or a designator T1, TR1.
    pub fn replaced_transformer(&self) -> bool {
        self.replaced.iter().any(|p| {
            let p = p.trim().to_uppercase();
            let designator = p
                .strip_prefix("TR")
                .or_else(|| p.strip_prefix('T'))
                .is_some_and(|rest| rest.starts_with(|c: char| c.is_ascii_digit()));
            p.contains("TRANSFORMER") || designator
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn calendar_round_trip() {
        assert_eq!(days_from_civil(1970, 1, 1), 0);
        assert_eq!(civil_from_days(days_from_civil(2026, 11, 30)), "2026-11-30");
        assert_eq!(civil_from_days(days_from_civil(2024, 2, 29)), "2024-02-29");
        assert_eq!(
            days_from_civil(2000, 3, 1) - days_from_civil(2000, 2, 28),
            2
        );
    }
}
