//! The supply as a technician describes it: mains, transformer, rectifier, filter, load and an
//! optional regulator, read from one TOML file and checked field by field.
//!
//! Every value is in plain SI units except where the key says otherwise (`uf` is microfarads,
//! `_pct` is percent). Validation names the key, the value and the allowed range, so the same
//! message serves the command line and the form next to the field.

use serde::{Deserialize, Serialize};
use std::fmt;

/// The newest supply-file format this build reads.
pub const FORMAT: u32 = 1;

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
    },
    /// A value outside what the model accepts.
    OutOfRange {
        key: &'static str,
        value: String,
        allowed: String,
    },
    /// A file written by a newer railcheck.
    NewerFormat { found: u32 },
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
            SupplyError::Missing { key, why } => write!(f, "`{key}` is missing: {why}"),
            SupplyError::OutOfRange {
                key,
                value,
                allowed,
            } => write!(f, "`{key}` must be {allowed} (got {value})"),
            SupplyError::NewerFormat { found } => write!(
                f,
                "`format` is {found}, newer than this railcheck reads ({FORMAT}); update railcheck"
            ),
        }
    }
}

impl std::error::Error for SupplyError {}

/// One supply: what a technician reads off the unit and its nameplates.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Supply {
    pub format: u32,
    pub name: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub site: Option<String>,
    #[serde(default)]
    pub notes: String,
    pub mains: Mains,
    pub transformer: Transformer,
    pub rectifier: Rectifier,
    pub filter: Filter,
    pub load: Load,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub regulator: Option<Regulator>,
    /// The service history, oldest first as written (`[[visit]]` tables).
    #[serde(default, rename = "visit", skip_serializing_if = "Vec::is_empty")]
    pub visits: Vec<crate::visit::Visit>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Mains {
    /// Nominal RMS volts.
    pub vrms: f64,
    pub hz: f64,
    #[serde(default = "ten")]
    pub low_pct: f64,
    #[serde(default = "ten")]
    pub high_pct: f64,
    /// Peak over RMS of the mains wave; below sqrt 2 when other rectifier loads flatten the tops.
    #[serde(default = "sqrt2")]
    pub crest: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Transformer {
    /// Primary to whole-secondary turns ratio.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ratio: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub primary_vrms: Option<f64>,
    /// Nameplate secondary RMS volts at rated load, whole winding.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub secondary_vrms: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rated_va: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub regulation_pct: Option<f64>,
    /// Whole secondary, end to end, DC resistance.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub secondary_ohms: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub primary_ohms: Option<f64>,
    /// Spread of the turns ratio, percent either way (worst case only).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ratio_pct: Option<f64>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Topology {
    HalfWave,
    CenterTap,
    Bridge,
    Doubler,
    SplitRail,
}

impl Topology {
    pub const ALL: [Topology; 5] = [
        Topology::HalfWave,
        Topology::CenterTap,
        Topology::Bridge,
        Topology::Doubler,
        Topology::SplitRail,
    ];

    /// The word used in the supply file.
    pub fn key(self) -> &'static str {
        match self {
            Topology::HalfWave => "half-wave",
            Topology::CenterTap => "center-tap",
            Topology::Bridge => "bridge",
            Topology::Doubler => "doubler",
            Topology::SplitRail => "split-rail",
        }
    }

    /// Rectified pulses per mains cycle into the rail.
    pub fn pulses_per_cycle(self) -> u32 {
        match self {
            Topology::HalfWave => 1,
            _ => 2,
        }
    }
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Rectifier {
    pub topology: Topology,
    #[serde(default = "silicon")]
    pub diode: DiodeSpec,
    /// Junction temperature for the Shockley law, degC (27 when absent, as simulators assume).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub temp_c: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub drop_spread_pct: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rated_piv_v: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rated_a: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub surge_a: Option<f64>,
}

/// A rectifier diode: a preset name, a fixed drop with resistance, or a Shockley junction.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum DiodeSpec {
    Preset(String),
    Junction {
        is_a: f64,
        n: f64,
        #[serde(default)]
        rs_ohms: f64,
    },
    Fixed {
        drop_v: f64,
        #[serde(default)]
        ohms: f64,
    },
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum FilterKind {
    None,
    Capacitor,
    Crc,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Filter {
    pub kind: FilterKind,
    /// Microfarads; for a doubler, each of its two capacitors.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub uf: Option<f64>,
    #[serde(default)]
    pub esr_ohms: f64,
    #[serde(default = "twenty")]
    pub low_pct: f64,
    #[serde(default = "twenty")]
    pub high_pct: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rated_v: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rated_ripple_a: Option<f64>,
    /// CRC: the resistor between the two capacitors.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub series_ohms: Option<f64>,
    /// CRC: the second (output) capacitor, microfarads.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub second_uf: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bleeder_ohms: Option<f64>,
    /// Extra capacitance lost to ageing, percent, on top of the low tolerance.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub aged_pct: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Load {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub amps: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ohms: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_amps: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_amps: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_ohms: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_ohms: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Regulator {
    pub output_v: f64,
    pub dropout_v: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rated_w: Option<f64>,
}

fn ten() -> f64 {
    10.0
}
fn twenty() -> f64 {
    20.0
}
fn sqrt2() -> f64 {
    std::f64::consts::SQRT_2
}
fn silicon() -> DiodeSpec {
    DiodeSpec::Preset("silicon".into())
}

/// The turns ratio and series resistance the circuit uses, after the nameplate form is
/// turned into the measured form.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WindingModel {
    /// Primary to whole secondary.
    pub ratio: f64,
    /// Whole secondary DC resistance, ohms.
    pub secondary_ohms: f64,
    /// Primary DC resistance, ohms (reflected by the circuit according to the topology).
    pub primary_ohms: f64,
    /// Regulation assumed from the rating when the nameplate gave none, percent.
    pub assumed_regulation_pct: Option<f64>,
}

/// Field practice for small transformers with no regulation figure on the plate: the smaller
/// the unit, the softer it is (domain notes: 10-25 % for small units).
fn regulation_from_rating(rated_va: f64) -> f64 {
    match rated_va {
        va if va < 10.0 => 25.0,
        va if va < 50.0 => 15.0,
        va if va < 300.0 => 10.0,
        _ => 6.0,
    }
}

/// Refuses `value` outside low..=high (or low<..=high when `above_low`), naming the key.
fn in_range(
    key: &'static str,
    value: f64,
    (low, high): (f64, f64),
    above_low: bool,
    allowed: &str,
) -> Result<(), SupplyError> {
    let low_ok = if above_low { value > low } else { value >= low };
    if value.is_finite() && low_ok && value <= high {
        Ok(())
    } else {
        Err(SupplyError::OutOfRange {
            key,
            value: format!("{value}"),
            allowed: allowed.to_string(),
        })
    }
}

/// `value` within low..=high.
fn check(
    key: &'static str,
    value: f64,
    low: f64,
    high: f64,
    allowed: &str,
) -> Result<(), SupplyError> {
    in_range(key, value, (low, high), false, allowed)
}

/// `value` above low and at most high.
fn check_above(
    key: &'static str,
    value: f64,
    low: f64,
    high: f64,
    allowed: &str,
) -> Result<(), SupplyError> {
    in_range(key, value, (low, high), true, allowed)
}

impl Supply {
    /// Reads and validates a supply from TOML text (units: see the module documentation).
    pub fn from_toml_str(text: &str) -> Result<Supply, SupplyError> {
        // The format number is checked before the rest, so a newer file is refused for its
        // number rather than for a key this build does not know yet.
        if let Ok(table) = text.parse::<toml::Table>()
            && let Some(toml::Value::Integer(found)) = table.get("format")
            && *found > FORMAT as i64
        {
            return Err(SupplyError::NewerFormat {
                found: (*found).clamp(0, u32::MAX as i64) as u32,
            });
        }
        let supply: Supply = toml::from_str(text).map_err(|e| syntax_error(text, &e))?;
        supply.validate()?;
        Ok(supply)
    }

    /// Writes the supply as TOML text in the file format.
    pub fn to_toml_string(&self) -> String {
        toml::to_string(self).expect("a supply always serialises")
    }

    /// Checks every field against the range the model accepts; the first fault found is
    /// returned, naming its key.
    pub fn validate(&self) -> Result<(), SupplyError> {
        if self.format == 0 {
            return Err(SupplyError::OutOfRange {
                key: "format",
                value: "0".into(),
                allowed: format!("between 1 and {FORMAT}"),
            });
        }
        if self.format > FORMAT {
            return Err(SupplyError::NewerFormat { found: self.format });
        }
        if self.name.trim().is_empty() {
            return Err(SupplyError::Missing {
                key: "name",
                why: "every supply needs a name to find it by",
            });
        }
        let m = &self.mains;
        check_above(
            "mains.vrms",
            m.vrms,
            0.0,
            1000.0,
            "above 0 V and at most 1000 V",
        )?;
        check("mains.hz", m.hz, 16.0, 500.0, "between 16 and 500 Hz")?;
        check("mains.low_pct", m.low_pct, 0.0, 50.0, "between 0 and 50 %")?;
        check(
            "mains.high_pct",
            m.high_pct,
            0.0,
            50.0,
            "between 0 and 50 %",
        )?;
        check(
            "mains.crest",
            m.crest,
            1.1,
            std::f64::consts::SQRT_2 + 0.001,
            "between 1.1 (flat-topped) and 1.415 (a clean sine)",
        )?;
        self.winding()?;
        let t = &self.transformer;
        if let Some(p) = t.ratio_pct {
            check("transformer.ratio_pct", p, 0.0, 20.0, "between 0 and 20 %")?;
        }
        let r = &self.rectifier;
        self.rectifier_diode()?;
        if let Some(t) = r.temp_c {
            check(
                "rectifier.temp_c",
                t,
                -55.0,
                175.0,
                "between -55 and 175 degC",
            )?;
        }
        if let Some(p) = r.drop_spread_pct {
            check(
                "rectifier.drop_spread_pct",
                p,
                0.0,
                50.0,
                "between 0 and 50 %",
            )?;
        }
        for (key, v) in [
            ("rectifier.rated_piv_v", r.rated_piv_v),
            ("rectifier.rated_a", r.rated_a),
            ("rectifier.surge_a", r.surge_a),
        ] {
            if let Some(v) = v {
                check_above(key, v, 0.0, 1e6, "above 0")?;
            }
        }
        let f = &self.filter;
        match f.kind {
            FilterKind::None => {
                if r.topology == Topology::Doubler {
                    return Err(SupplyError::OutOfRange {
                        key: "filter.kind",
                        value: "none".into(),
                        allowed: "capacitor or crc for a doubler (its capacitors are part of it)"
                            .into(),
                    });
                }
            }
            FilterKind::Capacitor | FilterKind::Crc => {
                let uf = f.uf.ok_or(SupplyError::Missing {
                    key: "filter.uf",
                    why: "a capacitor filter needs its capacitance in microfarads",
                })?;
                check_above(
                    "filter.uf",
                    uf,
                    0.0,
                    1e7,
                    "above 0 uF and at most 10 F (10000000 uF)",
                )?;
                check(
                    "filter.esr_ohms",
                    f.esr_ohms,
                    0.0,
                    1000.0,
                    "between 0 and 1000 ohms",
                )?;
                check("filter.low_pct", f.low_pct, 0.0, 90.0, "between 0 and 90 %")?;
                check(
                    "filter.high_pct",
                    f.high_pct,
                    0.0,
                    200.0,
                    "between 0 and 200 %",
                )?;
            }
        }
        if f.kind == FilterKind::Crc {
            let ohms = f.series_ohms.ok_or(SupplyError::Missing {
                key: "filter.series_ohms",
                why: "a CRC filter needs the resistor between its capacitors",
            })?;
            check_above(
                "filter.series_ohms",
                ohms,
                0.0,
                1e6,
                "above 0 and at most 1 Mohm",
            )?;
            let uf = f.second_uf.ok_or(SupplyError::Missing {
                key: "filter.second_uf",
                why: "a CRC filter needs its second capacitor in microfarads",
            })?;
            check_above(
                "filter.second_uf",
                uf,
                0.0,
                1e7,
                "above 0 uF and at most 10 F",
            )?;
        }
        if let Some(v) = f.rated_v {
            check_above("filter.rated_v", v, 0.0, 1e5, "above 0 V")?;
        }
        if let Some(v) = f.rated_ripple_a {
            check_above("filter.rated_ripple_a", v, 0.0, 1e4, "above 0 A")?;
        }
        if let Some(v) = f.bleeder_ohms {
            check_above("filter.bleeder_ohms", v, 0.0, 1e12, "above 0 ohms")?;
        }
        if let Some(v) = f.aged_pct {
            check("filter.aged_pct", v, 0.0, 90.0, "between 0 and 90 %")?;
        }
        let l = &self.load;
        match (l.amps, l.ohms) {
            (Some(a), None) => check("load.amps", a, 0.0, 1e4, "between 0 and 10000 A")?,
            (None, Some(o)) => check_above("load.ohms", o, 0.0, 1e12, "above 0 ohms")?,
            (Some(_), Some(_)) => {
                return Err(SupplyError::OutOfRange {
                    key: "load",
                    value: "both amps and ohms".into(),
                    allowed: "either `amps` (constant current) or `ohms` (resistive), not both"
                        .into(),
                });
            }
            (None, None) => {
                return Err(SupplyError::Missing {
                    key: "load.amps",
                    why: "give the load as `amps` (constant current) or `ohms` (resistive)",
                });
            }
        }
        for (key, v) in [("load.min_amps", l.min_amps), ("load.max_amps", l.max_amps)] {
            if let Some(v) = v {
                check(key, v, 0.0, 1e4, "between 0 and 10000 A")?;
            }
        }
        for (key, v) in [("load.min_ohms", l.min_ohms), ("load.max_ohms", l.max_ohms)] {
            if let Some(v) = v {
                check_above(key, v, 0.0, 1e12, "above 0 ohms")?;
            }
        }
        for (i, v) in self.visits.iter().enumerate() {
            if v.date.date.is_none() {
                return Err(SupplyError::OutOfRange {
                    key: "visit.date",
                    value: format!("{} (visit {})", v.date, i + 1),
                    allowed: "a calendar date such as 2026-11-30".into(),
                });
            }
            for (key, value) in v.readings.present() {
                let bad = !value.is_finite()
                    || match key {
                        "dc_v" => value.abs() > 1e5,
                        _ => !(0.0..=1e5).contains(&value),
                    };
                if bad {
                    return Err(SupplyError::OutOfRange {
                        key: "visit reading",
                        value: format!("{key} = {value} (visit {})", i + 1),
                        allowed: "a finite reading, not negative (dc_v within 100 kV)".into(),
                    });
                }
            }
        }
        if let Some(reg) = &self.regulator {
            check_above("regulator.output_v", reg.output_v, 0.0, 1e4, "above 0 V")?;
            check(
                "regulator.dropout_v",
                reg.dropout_v,
                0.0,
                100.0,
                "between 0 and 100 V",
            )?;
            if let Some(w) = reg.rated_w {
                check_above("regulator.rated_w", w, 0.0, 1e5, "above 0 W")?;
            }
        }
        Ok(())
    }

    /// Turns the transformer section into a turns ratio and resistances (volts, ohms).
    ///
    /// Nameplate form: no-load secondary = `secondary_vrms * (1 + regulation_pct/100)`; without
    /// measured ohms the whole series resistance follows from the regulation at rated current,
    /// R = secondary_vrms^2 * regulation / rated_va, all put in the secondary.
    pub fn winding(&self) -> Result<WindingModel, SupplyError> {
        let t = &self.transformer;
        let secondary_ohms = t.secondary_ohms.unwrap_or(0.0);
        let primary_ohms = t.primary_ohms.unwrap_or(0.0);
        check(
            "transformer.secondary_ohms",
            secondary_ohms,
            0.0,
            1e5,
            "between 0 and 100000 ohms",
        )?;
        check(
            "transformer.primary_ohms",
            primary_ohms,
            0.0,
            1e6,
            "between 0 and 1000000 ohms",
        )?;
        if let Some(ratio) = t.ratio {
            check_above(
                "transformer.ratio",
                ratio,
                0.0,
                1e4,
                "above 0 and at most 10000 (primary : whole secondary)",
            )?;
            // A ratio below 0.01 would make a 100 kV secondary from household mains.
            check(
                "transformer.ratio",
                ratio,
                0.01,
                1e4,
                "between 0.01 and 10000",
            )?;
            return Ok(WindingModel {
                ratio,
                secondary_ohms,
                primary_ohms,
                assumed_regulation_pct: None,
            });
        }
        let missing = |key| SupplyError::Missing {
            key,
            why: "give either `ratio` or the nameplate `primary_vrms` and `secondary_vrms`",
        };
        let primary = t.primary_vrms.ok_or(missing("transformer.ratio"))?;
        let secondary = t
            .secondary_vrms
            .ok_or(missing("transformer.secondary_vrms"))?;
        check_above("transformer.primary_vrms", primary, 0.0, 1e5, "above 0 V")?;
        check_above(
            "transformer.secondary_vrms",
            secondary,
            0.0,
            1e5,
            "above 0 V",
        )?;
        if let Some(va) = t.rated_va {
            check_above("transformer.rated_va", va, 0.0, 1e7, "above 0 VA")?;
        }
        let (regulation, assumed) = match (t.regulation_pct, t.rated_va) {
            (Some(r), _) => (r, None),
            (None, Some(va)) => {
                let r = regulation_from_rating(va);
                (r, Some(r))
            }
            (None, None) => {
                return Err(SupplyError::Missing {
                    key: "transformer.regulation_pct",
                    why: "the nameplate form needs the regulation or the rated VA to know the no-load voltage",
                });
            }
        };
        check(
            "transformer.regulation_pct",
            regulation,
            0.0,
            100.0,
            "between 0 and 100 %",
        )?;
        let no_load = secondary * (1.0 + regulation / 100.0);
        let ratio = primary / no_load;
        check(
            "transformer.ratio",
            ratio,
            0.01,
            1e4,
            "between 0.01 and 10000",
        )?;
        let measured = t.secondary_ohms.is_some() || t.primary_ohms.is_some();
        let secondary_ohms = match (measured, t.rated_va) {
            (true, _) => secondary_ohms,
            (false, Some(va)) => secondary * secondary * regulation / 100.0 / va,
            (false, None) => 0.0,
        };
        Ok(WindingModel {
            ratio,
            secondary_ohms,
            primary_ohms,
            assumed_regulation_pct: assumed,
        })
    }

    /// The diode law parameters after presets are resolved.
    pub fn rectifier_diode(&self) -> Result<DiodeParams, SupplyError> {
        let temp_c = self.rectifier.temp_c.unwrap_or(27.0);
        let params = match &self.rectifier.diode {
            DiodeSpec::Preset(name) => match name.as_str() {
                // Junction parameters near a generic 1 A silicon rectifier's simulator model
                // (domain notes, memory): 0.9 V at 1 A.
                "silicon" => DiodeParams::Junction {
                    is_a: 7.0e-9,
                    n: 1.8,
                    rs_ohms: 0.034,
                    temp_c,
                },
                // Fast-recovery silicon: about 1.0 V at 1 A (our own round figures).
                "fast" => DiodeParams::Junction {
                    is_a: 1.0e-8,
                    n: 2.0,
                    rs_ohms: 0.06,
                    temp_c,
                },
                // Schottky: about 0.37 V at 1 A, inside the 0.3-0.6 V of practice.
                "schottky" => DiodeParams::Junction {
                    is_a: 1.0e-5,
                    n: 1.05,
                    rs_ohms: 0.05,
                    temp_c,
                },
                "ideal" => DiodeParams::Fixed {
                    drop_v: 0.0,
                    ohms: 0.0,
                },
                other => {
                    return Err(SupplyError::OutOfRange {
                        key: "rectifier.diode",
                        value: format!("{other:?}"),
                        allowed: "silicon, fast, schottky or ideal, or a table \
                                  { drop_v, ohms } or { is_a, n, rs_ohms }"
                            .into(),
                    });
                }
            },
            DiodeSpec::Fixed { drop_v, ohms } => {
                check(
                    "rectifier.diode.drop_v",
                    *drop_v,
                    0.0,
                    10.0,
                    "between 0 and 10 V",
                )?;
                check(
                    "rectifier.diode.ohms",
                    *ohms,
                    0.0,
                    100.0,
                    "between 0 and 100 ohms",
                )?;
                DiodeParams::Fixed {
                    drop_v: *drop_v,
                    ohms: *ohms,
                }
            }
            DiodeSpec::Junction { is_a, n, rs_ohms } => {
                check_above(
                    "rectifier.diode.is_a",
                    *is_a,
                    0.0,
                    1e-2,
                    "above 0 and at most 0.01 A",
                )?;
                check("rectifier.diode.n", *n, 0.5, 5.0, "between 0.5 and 5")?;
                check(
                    "rectifier.diode.rs_ohms",
                    *rs_ohms,
                    0.0,
                    100.0,
                    "between 0 and 100 ohms",
                )?;
                DiodeParams::Junction {
                    is_a: *is_a,
                    n: *n,
                    rs_ohms: *rs_ohms,
                    temp_c,
                }
            }
        };
        Ok(params)
    }
}

/// A diode as the circuit model takes it (volts, amps, ohms, degC).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DiodeParams {
    Fixed {
        drop_v: f64,
        ohms: f64,
    },
    Junction {
        is_a: f64,
        n: f64,
        rs_ohms: f64,
        temp_c: f64,
    },
}

fn syntax_error(text: &str, e: &toml::de::Error) -> SupplyError {
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
    let message = e
        .message()
        .lines()
        .next()
        .unwrap_or("not valid TOML")
        .to_string();
    SupplyError::Syntax {
        line,
        column,
        key,
        message,
    }
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
    let table = lines[..line - 1]
        .iter()
        .rev()
        .map(|l| l.trim())
        .find(|l| l.starts_with('[') && !l.starts_with("[["))
        .map(|l| l.trim_matches(|c| c == '[' || c == ']').trim().to_string());
    Some(match table {
        Some(t) => format!("{t}.{name}"),
        None => name.to_string(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    pub(crate) const BRIDGE: &str = r#"
format = 1
name = "Test bridge"
[mains]
vrms = 230.0
hz = 50.0
[transformer]
ratio = 9.58
secondary_ohms = 1.8
primary_ohms = 42.0
[rectifier]
topology = "bridge"
[filter]
kind = "capacitor"
uf = 2200.0
esr_ohms = 0.05
[load]
amps = 0.35
"#;

    #[test]
    fn reads_the_documented_example_with_defaults() {
        let s = Supply::from_toml_str(BRIDGE).unwrap();
        assert_eq!(s.mains.low_pct, 10.0);
        assert_eq!(s.filter.low_pct, 20.0);
        assert_eq!(s.rectifier.diode, DiodeSpec::Preset("silicon".into()));
        assert_eq!(s.rectifier.topology, Topology::Bridge);
    }

    #[test]
    fn names_key_value_and_range() {
        let bad = BRIDGE.replace("uf = 2200.0", "uf = -47.0");
        let e = Supply::from_toml_str(&bad).unwrap_err().to_string();
        assert!(
            e.contains("filter.uf") && e.contains("-47") && e.contains("above 0 uF"),
            "{e}"
        );
        let bad = BRIDGE.replace("ratio = 9.58", "ratio = 0.0");
        let e = Supply::from_toml_str(&bad).unwrap_err().to_string();
        assert!(
            e.contains("transformer.ratio") && e.contains("got 0"),
            "{e}"
        );
        let bad = BRIDGE.replace("\"bridge\"", "\"full-bridge\"");
        let e = Supply::from_toml_str(&bad).unwrap_err().to_string();
        assert!(
            e.contains("full-bridge") && e.contains("line 12") && e.contains("rectifier.topology"),
            "{e}"
        );
        let bad = BRIDGE.replace("hz = 50.0", "hz = \"fifty\"");
        let e = Supply::from_toml_str(&bad).unwrap_err().to_string();
        assert!(e.contains("line 6") && e.contains("mains.hz"), "{e}");
        let bad = BRIDGE.replace("amps = 0.35", "");
        let e = Supply::from_toml_str(&bad).unwrap_err().to_string();
        assert!(e.contains("load.amps"), "{e}");
    }

    #[test]
    fn refuses_a_newer_format_by_number() {
        let newer = BRIDGE.replace("format = 1", "format = 7\nfuture_key = 3");
        let e = Supply::from_toml_str(&newer).unwrap_err();
        assert_eq!(e, SupplyError::NewerFormat { found: 7 });
    }

    #[test]
    fn nameplate_form_gives_ratio_and_resistance() {
        let plate = BRIDGE.replace(
            "ratio = 9.58\nsecondary_ohms = 1.8\nprimary_ohms = 42.0",
            "primary_vrms = 230.0\nsecondary_vrms = 24.0\nrated_va = 20.0\nregulation_pct = 12.0",
        );
        let w = Supply::from_toml_str(&plate).unwrap().winding().unwrap();
        // 24 V at rated load, 12 % regulation: 26.88 V no-load.
        assert!((w.ratio - 230.0 / 26.88).abs() < 1e-9);
        // 0.833 A rated current drops 2.88 V: 3.456 ohms.
        assert!((w.secondary_ohms - 24.0 * 24.0 * 0.12 / 20.0).abs() < 1e-9);
    }

    #[test]
    fn round_trips_through_toml() {
        let s = Supply::from_toml_str(BRIDGE).unwrap();
        let back = Supply::from_toml_str(&s.to_toml_string()).unwrap();
        assert_eq!(s, back);
    }
}
