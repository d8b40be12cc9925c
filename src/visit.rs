//! A service visit: the date, who came, what the meters read and what was replaced. Every
//! reading is optional, as in the field.

use serde::{Deserialize, Serialize};

/// A calendar date as TOML writes it (`2026-11-30`).
pub type Date = toml::value::Datetime;

/// One visit to a supply, as stored in its file under `[[visit]]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Visit {
    pub date: Date,
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub technician: String,
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
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub notes: String,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub replaced: Vec<String>,
}

impl Visit {
    /// The date as `YYYY-MM-DD` for sorting and display.
    pub fn date_text(&self) -> String {
        match self.date.date {
            Some(d) => format!("{:04}-{:02}-{:02}", d.year, d.month, d.day),
            None => self.date.to_string(),
        }
    }

    /// The readings taken, by name, with their values (volts, amps, hertz).
    pub fn readings(&self) -> Vec<(&'static str, f64)> {
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
