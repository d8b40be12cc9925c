//! A unit's calibration: what one known-good visit (a baseline: after a repair, at
//! commissioning, or simply known good) told of the unknowns its file cannot state, kept in the
//! supply file as a `[calibration]` table:
//!
//! ```toml
//! [calibration]
//! visit = 2026-03-14       # the baseline visit's date
//! winding_factor = 1.18    # the windings' resistance in service over the file's
//! crest = 1.372            # the site's mains crest (peak over RMS)
//! cap_factor = 0.97        # the filter capacitors' effective capacitance over `uf`
//! ```
//!
//! Each factor is on what the file gives: the measured or nameplate winding, or the one
//! railcheck assumes for a transformer sized for the load. Every solve of the supply uses the
//! calibration in force, and the tolerance box narrows around it. Replacing a part resets
//! what it concerned: a visit after the baseline that replaced a filter capacitor ends the
//! capacitance's calibration, one that replaced the transformer ends the winding's. The fit
//! itself is in [`crate::diagnose::calibrate`]; this module holds only the data and its
//! rules, no I/O.

use crate::visit::{Date, Visit};
use serde::{Deserialize, Serialize};

/// The `[calibration]` table of a supply file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Calibration {
    /// The date of the baseline visit the values were fitted to.
    pub visit: Date,
    /// The windings' resistance in service over the file's (stated, nameplate or assumed).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub winding_factor: Option<f64>,
    /// The site's mains crest factor, peak over RMS (a sine is 1.414).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub crest: Option<f64>,
    /// The filter capacitors' effective capacitance over the file's `uf` (and `second_uf`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cap_factor: Option<f64>,
}

/// The calibration as it stands after the visits since the baseline: factors of 1 and no
/// crest where nothing is calibrated or a replacement reset it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InForce {
    /// Multiplies both windings' resistance.
    pub winding_factor: f64,
    /// The mains crest, when calibrated.
    pub crest: Option<f64>,
    /// Multiplies every filter capacitance.
    pub cap_factor: f64,
    /// Whether the winding's calibration is in force.
    pub winding: bool,
    /// Whether the capacitance's calibration is in force.
    pub capacitance: bool,
}

impl Default for InForce {
    fn default() -> Self {
        InForce {
            winding_factor: 1.0,
            crest: None,
            cap_factor: 1.0,
            winding: false,
            capacitance: false,
        }
    }
}

impl InForce {
    /// Whether anything of the unit is calibrated.
    pub fn any(&self) -> bool {
        self.winding || self.capacitance || self.crest.is_some()
    }
}

impl Calibration {
    /// The calibration still in force given the unit's `visits`: a visit dated after the
    /// baseline that replaced a filter capacitor resets the capacitance, one that replaced the
    /// transformer resets the winding. The baseline visit's own replacements (a repair, then
    /// the known-good readings) do not.
    pub fn in_force(&self, visits: &[Visit]) -> InForce {
        let baseline = Visit::day_of(&self.visit);
        let after: Vec<&Visit> = visits
            .iter()
            .filter(|v| match (v.days(), baseline) {
                (Some(d), Some(b)) => d > b,
                _ => false,
            })
            .collect();
        let capacitor_replaced = after.iter().any(|v| v.replaced_capacitor());
        let transformer_replaced = after.iter().any(|v| v.replaced_transformer());
        let winding = self.winding_factor.filter(|_| !transformer_replaced);
        let cap = self.cap_factor.filter(|_| !capacitor_replaced);
        InForce {
            winding_factor: winding.unwrap_or(1.0),
            crest: self.crest,
            cap_factor: cap.unwrap_or(1.0),
            winding: winding.is_some(),
            capacitance: cap.is_some(),
        }
    }
}

#[cfg(test)]
mod tests {
    use crate::supply::Supply;

    fn unit(visits: &str) -> Supply {
        let text = format!(
            "format = 1\nname = \"t\"\n[mains]\nvrms = 230.0\nhz = 50.0\n[transformer]\n\
             ratio = 10.0\n[rectifier]\ntopology = \"bridge\"\n[filter]\nkind = \"capacitor\"\n\
             uf = 1000.0\n[load]\nohms = 100.0\n[calibration]\nvisit = 2026-03-14\n\
             winding_factor = 1.2\ncrest = 1.38\ncap_factor = 0.9\n{visits}"
        );
        Supply::from_toml_str(&text).unwrap()
    }

    #[test]
    fn a_later_replacement_resets_what_it_concerned() {
        let none = unit("");
        let f = none.calibration_in_force();
        assert_eq!(
            (f.winding_factor, f.crest, f.cap_factor),
            (1.2, Some(1.38), 0.9)
        );
        assert!(f.winding && f.capacitance);
        // A new capacitor after the baseline: its value is the label's again.
        let cap = unit("[[visit]]\ndate = 2026-06-01\nreplaced = [\"C3 4700uF 35V\"]\n");
        let f = cap.calibration_in_force();
        assert_eq!(
            (f.winding_factor, f.cap_factor, f.capacitance),
            (1.2, 1.0, false)
        );
        // A new transformer: the winding's.
        let t = unit("[[visit]]\ndate = 2026-06-01\nreplaced = [\"T1\"]\n");
        let f = t.calibration_in_force();
        assert_eq!(
            (f.winding_factor, f.winding, f.cap_factor),
            (1.0, false, 0.9)
        );
        // The baseline's own repair was before the known-good readings; a diode (CR2) is no
        // capacitor.
        let own = unit(
            "[[visit]]\ndate = 2026-03-14\nreplaced = [\"C3\", \"T1\"]\n[[visit]]\ndate = 2026-07-01\nreplaced = [\"CR2\"]\n",
        );
        assert_eq!(own.calibration_in_force(), none.calibration_in_force());
    }

    #[test]
    fn calibrated_values_outside_their_range_are_refused_by_key() {
        let text = unit("")
            .to_toml_string()
            .replace("crest = 1.38", "crest = 2.5");
        let e = Supply::from_toml_str(&text).unwrap_err().to_string();
        assert!(e.contains("calibration.crest") && e.contains("2.5"), "{e}");
    }
}
