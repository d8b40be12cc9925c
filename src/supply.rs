//! The supply as a technician describes it: mains, transformer, rectifier, filter, load and an
//! optional regulator, read from one TOML file and checked field by field.
//!
//! Every value is in plain SI units except where the key says otherwise (`uf` is microfarads,
//! `_pct` is percent). Validation names the key, the value and the allowed range, so the same
//! message serves the command line and the form next to the field.

use crate::units::format_number;
use serde::{Deserialize, Deserializer, Serialize};
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
    fn out_of_range(
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
    fn placed_in(mut self, text: &str) -> Self {
        match &mut self {
            SupplyError::OutOfRange {
                key, line, visit, ..
            } => *line = line_of_key(text, key, *visit),
            SupplyError::Missing { key, line, .. } => *line = line_of_key(text, key, None),
            _ => {}
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
    /// Keys whose values came from a template or were filled in by the form, not yet
    /// confirmed by the technician (`unconfirmed = ["filter.esr_ohms", ...]`): the screen
    /// marks them as guesses until they are set.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub unconfirmed: Vec<String>,
    /// What a known-good visit told of the unit's unknowns (`[calibration]`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub calibration: Option<crate::calibration::Calibration>,
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
    /// Left out, it is taken as a sine (sqrt 2) with flattened tops down to
    /// [`ASSUMED_CREST_LOW`] allowed for in the worst case and the diagnosis.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub crest: Option<f64>,
}

/// The flattest mains crest assumed when the file states none: building mains flattened by the
/// rectifier loads on the same line read 1.34-1.40 peak over RMS (practice).
pub const ASSUMED_CREST_LOW: f64 = 1.34;

impl Mains {
    /// The crest factor the nominal uses: the stated one, or a sine's sqrt 2.
    pub fn crest(&self) -> f64 {
        self.crest.unwrap_or(std::f64::consts::SQRT_2)
    }
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
#[derive(Debug, Clone, PartialEq, Serialize)]
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

/// Read by hand rather than as an untagged enum, so that a table mixing the two laws
/// (`{ drop_v = 0.7, is_a = 1e-9, n = 2 }`) is refused instead of read as one of them with
/// the other's keys ignored, and a half-given law names the key it lacks.
impl<'de> Deserialize<'de> for DiodeSpec {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        use serde::de::{self, MapAccess, Visitor};
        struct Spec;
        impl<'de> Visitor<'de> for Spec {
            type Value = DiodeSpec;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str(
                    "a preset (silicon, fast, schottky, ideal) or a table \
                     { drop_v, ohms } or { is_a, n, rs_ohms }",
                )
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<DiodeSpec, E> {
                Ok(DiodeSpec::Preset(v.to_string()))
            }
            fn visit_map<M: MapAccess<'de>>(self, mut map: M) -> Result<DiodeSpec, M::Error> {
                let (mut is_a, mut n, mut rs_ohms, mut drop_v, mut ohms) =
                    (None, None, None, None, None);
                while let Some(key) = map.next_key::<String>()? {
                    let slot = match key.as_str() {
                        "is_a" => &mut is_a,
                        "n" => &mut n,
                        "rs_ohms" => &mut rs_ohms,
                        "drop_v" => &mut drop_v,
                        "ohms" => &mut ohms,
                        // Unknown keys are left to the reader, as everywhere in the file.
                        _ => {
                            map.next_value::<de::IgnoredAny>()?;
                            continue;
                        }
                    };
                    *slot = Some(map.next_value::<f64>()?);
                }
                let junction = is_a.is_some() || n.is_some() || rs_ohms.is_some();
                let fixed = drop_v.is_some() || ohms.is_some();
                match (junction, fixed) {
                    (true, true) => Err(de::Error::custom(
                        "the diode table mixes two laws: give { drop_v, ohms } (a fixed drop) \
                         or { is_a, n, rs_ohms } (a Shockley junction), not keys of both",
                    )),
                    (true, false) => Ok(DiodeSpec::Junction {
                        is_a: is_a.ok_or_else(|| de::Error::missing_field("is_a"))?,
                        n: n.ok_or_else(|| de::Error::missing_field("n"))?,
                        rs_ohms: rs_ohms.unwrap_or(0.0),
                    }),
                    (false, true) => Ok(DiodeSpec::Fixed {
                        drop_v: drop_v.ok_or_else(|| de::Error::missing_field("drop_v"))?,
                        ohms: ohms.unwrap_or(0.0),
                    }),
                    (false, false) => Err(de::Error::custom(
                        "the diode table is empty: give { drop_v, ohms } or { is_a, n, rs_ohms }",
                    )),
                }
            }
        }
        deserializer.deserialize_any(Spec)
    }
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
    /// Where the resistance comes from, and the range the worst case and the diagnosis allow
    /// it.
    pub source: WindingSource,
}

/// Where a winding's resistance comes from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum WindingSource {
    /// Measured (cold, with an ohmmeter) and written in the file.
    Measured,
    /// Worked out from the nameplate's regulation and VA rating.
    Nameplate,
    /// Not stated: sized for the load (see [`Supply::assumed_winding`]).
    Assumed {
        /// The rating the transformer is taken to have, volt-amperes.
        rated_va: f64,
        /// The resistance range allowed, whole secondary, ohms.
        low_ohms: f64,
        high_ohms: f64,
    },
}

/// Copper's resistance rises 0.39 %/degC (memory of the handbook value); a winding in service
/// runs 20-40 degC above the cold ohmmeter reading (practice): up to 15.6 % more.
pub const WARM_WINDING_FACTOR: f64 = 1.0 + 0.0039 * 40.0;

/// The regulation of small transformers, 5-25 % (practice), the range assumed for a winding
/// whose resistance the file leaves out.
pub const ASSUMED_REGULATION_PCT: (f64, f64) = (5.0, 25.0);

/// A transformer may be up to this many times larger than its load needs (a bench or
/// general-purpose unit on a light load), which the low end of an assumed winding allows.
pub const ASSUMED_OVERSIZE: f64 = 4.0;

/// Volt-amperes a transformer needs per watt of DC it feeds through a capacitor-input filter:
/// the charging pulses raise the winding's RMS current well above the DC (practice: about 1.8
/// for a bridge; a center tap's halves and a half-wave winding carry pulses less of the time,
/// which costs more).
fn va_per_dc_watt(topology: Topology) -> f64 {
    match topology {
        Topology::Bridge | Topology::SplitRail => 1.8,
        Topology::CenterTap => 2.3,
        Topology::HalfWave | Topology::Doubler => 3.0,
    }
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

/// The lowest value a key accepts.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Floor {
    /// At least this.
    AtLeast(f64),
    /// 0 (an ideal part, or none), or at least this: between the two a value has no physical
    /// meaning and would only show as a long row of zeros.
    ZeroOr(f64),
}

/// The values one key accepts, with the reason for its floor. The floor is where no real
/// supply goes below and above which the physics means something; it is not there to spare
/// the solver (a small capacitance is a stiff circuit, which the solver must handle).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Range {
    pub key: &'static str,
    pub floor: Floor,
    pub high: f64,
    pub unit: &'static str,
    pub why: &'static str,
}

impl Range {
    /// Whether `value` (in the key's unit) is accepted.
    pub fn allows(&self, value: f64) -> bool {
        value.is_finite()
            && value <= self.high
            && match self.floor {
                Floor::AtLeast(low) => value >= low,
                Floor::ZeroOr(low) => value == 0.0 || value >= low,
            }
    }

    /// The accepted values in words: "between 1 and 1000 V", "0, or between 1e-6 and 100000 ohms".
    pub fn allowed(&self) -> String {
        let unit = if self.unit.is_empty() {
            String::new()
        } else {
            format!(" {}", self.unit)
        };
        let span = |low: f64| {
            format!(
                "between {} and {}{unit}",
                format_number(low),
                format_number(self.high)
            )
        };
        match self.floor {
            Floor::AtLeast(low) => span(low),
            Floor::ZeroOr(low) => format!("0, or {}", span(low)),
        }
    }

    /// Refuses `value` outside the range, naming the key, the value and the range.
    fn check(&self, value: f64) -> Result<(), SupplyError> {
        if self.allows(value) {
            Ok(())
        } else {
            Err(SupplyError::out_of_range(
                self.key,
                format_number(value),
                self.allowed(),
            ))
        }
    }
}

const fn range(
    key: &'static str,
    floor: Floor,
    high: f64,
    unit: &'static str,
    why: &'static str,
) -> Range {
    Range {
        key,
        floor,
        high,
        unit,
        why,
    }
}

use Floor::{AtLeast, ZeroOr};

const PCT_NONE: &str = "0 is no spread: exactly the stated value";
const MAINS_V_WHY: &str = "no mains or low-voltage AC feed is below 1 V (under it the diode drops \
                           are all there is); 1000 V AC is the top of low voltage (memory)";
const AMPS_WHY: &str = "0 is no load; under 1 nA is less than the filter capacitor's own leakage";
const OHMS_WHY: &str = "under 1 milliohm is a short through the leads; over 1 Tohm is no load";
const UF_WHY: &str = "1 pF is the stray capacitance of the wiring itself, which the model leaves \
                      out; no filter capacitor comes near it; 10 F is beyond any filter";
const WINDING_OHMS_WHY: &str = "0 is an ideal winding; no winding or lead is under 1 micro-ohm";
const READING_WHY: &str = "what the meter showed, 0 included (a dead rail)";

/// Mains RMS volts.
pub const MAINS_VRMS: Range = range("mains.vrms", AtLeast(1.0), 1000.0, "V", MAINS_V_WHY);
pub const MAINS_HZ: Range = range(
    "mains.hz",
    AtLeast(16.0),
    500.0,
    "Hz",
    "16.7 Hz railway supplies to 400 Hz aircraft mains",
);
pub const MAINS_LOW_PCT: Range = range("mains.low_pct", AtLeast(0.0), 50.0, "%", PCT_NONE);
pub const MAINS_HIGH_PCT: Range = range("mains.high_pct", AtLeast(0.0), 50.0, "%", PCT_NONE);
pub const MAINS_CREST: Range = range(
    "mains.crest",
    AtLeast(1.1),
    1.415,
    "",
    "1.414 is a clean sine, 1.35-1.40 mains flattened by other rectifiers (practice); under \
     1.1 it is a square wave, which the clipped-sine model does not describe",
);
pub const CALIBRATION_WINDING: Range = range(
    "calibration.winding_factor",
    AtLeast(0.05),
    20.0,
    "",
    "the fit keeps within the winding's assumed range, which never spans more than this",
);
pub const CALIBRATION_CREST: Range = range(
    "calibration.crest",
    AtLeast(1.1),
    1.415,
    "",
    "as mains.crest: a clean sine is 1.414, under 1.1 a square wave the model does not describe",
);
pub const CALIBRATION_CAP: Range = range(
    "calibration.cap_factor",
    AtLeast(0.01),
    3.0,
    "",
    "a capacitor at under 1 % of its value is open, and none measures three times its label",
);
pub const RATIO: Range = range(
    "transformer.ratio",
    AtLeast(0.01),
    1e4,
    "",
    "under 0.01 household mains would give a 100 kV secondary",
);
pub const RATIO_PCT: Range = range("transformer.ratio_pct", AtLeast(0.0), 20.0, "%", PCT_NONE);
pub const PRIMARY_VRMS: Range = range(
    "transformer.primary_vrms",
    AtLeast(1.0),
    1e5,
    "V",
    "no AC feed is below 1 V (under it the diode drops are all there is)",
);
pub const SECONDARY_VRMS: Range = range(
    "transformer.secondary_vrms",
    AtLeast(0.1),
    1e5,
    "V",
    "no winding is made for under 0.1 V; a diode drop would swallow it",
);
pub const RATED_VA: Range = range(
    "transformer.rated_va",
    AtLeast(0.1),
    1e7,
    "VA",
    "the smallest encapsulated board transformers are about 0.35 VA (memory)",
);
pub const REGULATION_PCT: Range = range(
    "transformer.regulation_pct",
    AtLeast(0.0),
    100.0,
    "%",
    "0 is a stiff winding; 100 % would halve the voltage at rated load",
);
pub const SECONDARY_OHMS: Range = range(
    "transformer.secondary_ohms",
    ZeroOr(1e-6),
    1e5,
    "ohms",
    WINDING_OHMS_WHY,
);
pub const PRIMARY_OHMS: Range = range(
    "transformer.primary_ohms",
    ZeroOr(1e-6),
    1e6,
    "ohms",
    WINDING_OHMS_WHY,
);
pub const TEMP_C: Range = range(
    "rectifier.temp_c",
    AtLeast(-55.0),
    175.0,
    "degC",
    "the rated junction range of silicon rectifiers (practice)",
);
pub const DROP_SPREAD_PCT: Range = range(
    "rectifier.drop_spread_pct",
    AtLeast(0.0),
    50.0,
    "%",
    PCT_NONE,
);
pub const RATED_PIV_V: Range = range(
    "rectifier.rated_piv_v",
    AtLeast(1.0),
    1e6,
    "V",
    "no rectifier is rated for under 1 V reverse",
);
pub const DIODE_RATED_A: Range = range(
    "rectifier.rated_a",
    AtLeast(1e-3),
    1e6,
    "A",
    "a diode rated under 1 mA is no rectifier",
);
pub const SURGE_A: Range = range(
    "rectifier.surge_a",
    AtLeast(1e-3),
    1e6,
    "A",
    "a diode rated under 1 mA is no rectifier",
);
pub const DROP_V: Range = range(
    "rectifier.diode.drop_v",
    ZeroOr(1e-3),
    10.0,
    "V",
    "0 is an ideal diode; under 1 mV a drop is none",
);
pub const DIODE_OHMS: Range = range(
    "rectifier.diode.ohms",
    ZeroOr(1e-6),
    100.0,
    "ohms",
    "0 is an ideal diode; under 1 micro-ohm is none",
);
pub const IS_A: Range = range(
    "rectifier.diode.is_a",
    AtLeast(1e-20),
    1e-2,
    "A",
    "well below the 1e-16 A or so of the hardest junctions in simulator models (memory)",
);
pub const EMISSION_N: Range = range(
    "rectifier.diode.n",
    AtLeast(0.5),
    5.0,
    "",
    "real junctions lie between 1 and 2, series strings a few times that",
);
pub const RS_OHMS: Range = range(
    "rectifier.diode.rs_ohms",
    ZeroOr(1e-6),
    100.0,
    "ohms",
    "0 is no series resistance; under 1 micro-ohm is none",
);
pub const FILTER_UF: Range = range("filter.uf", AtLeast(1e-6), 1e7, "uF", UF_WHY);
pub const ESR_OHMS: Range = range(
    "filter.esr_ohms",
    ZeroOr(1e-6),
    1000.0,
    "ohms",
    "0 is an ideal capacitor; no capacitor is under 1 micro-ohm",
);
pub const CAP_LOW_PCT: Range = range("filter.low_pct", AtLeast(0.0), 90.0, "%", PCT_NONE);
pub const CAP_HIGH_PCT: Range = range("filter.high_pct", AtLeast(0.0), 200.0, "%", PCT_NONE);
pub const CAP_RATED_V: Range = range(
    "filter.rated_v",
    AtLeast(1.0),
    1e5,
    "V",
    "the lowest electrolytic ratings are 2.5 V (practice)",
);
pub const RATED_RIPPLE_A: Range = range(
    "filter.rated_ripple_a",
    AtLeast(1e-3),
    1e4,
    "A",
    "ripple ratings start at a few mA (practice)",
);
pub const SERIES_OHMS: Range = range(
    "filter.series_ohms",
    AtLeast(1e-3),
    1e6,
    "ohms",
    "under 1 milliohm the CRC's resistor is the wire between its capacitors",
);
pub const SECOND_UF: Range = range("filter.second_uf", AtLeast(1e-6), 1e7, "uF", UF_WHY);
pub const BLEEDER_OHMS: Range = range(
    "filter.bleeder_ohms",
    AtLeast(1.0),
    1e12,
    "ohms",
    "under 1 ohm a bleeder is a short across the rail; over 1 Tohm it bleeds less than the \
     capacitor's own leakage",
);
pub const AGED_PCT: Range = range("filter.aged_pct", AtLeast(0.0), 90.0, "%", PCT_NONE);
pub const LOAD_AMPS: Range = range("load.amps", ZeroOr(1e-9), 1e4, "A", AMPS_WHY);
pub const LOAD_OHMS: Range = range("load.ohms", AtLeast(1e-3), 1e12, "ohms", OHMS_WHY);
pub const MIN_AMPS: Range = range("load.min_amps", ZeroOr(1e-9), 1e4, "A", AMPS_WHY);
pub const MAX_AMPS: Range = range("load.max_amps", ZeroOr(1e-9), 1e4, "A", AMPS_WHY);
pub const MIN_OHMS: Range = range("load.min_ohms", AtLeast(1e-3), 1e12, "ohms", OHMS_WHY);
pub const MAX_OHMS: Range = range("load.max_ohms", AtLeast(1e-3), 1e12, "ohms", OHMS_WHY);
pub const OUTPUT_V: Range = range(
    "regulator.output_v",
    AtLeast(0.1),
    1e4,
    "V",
    "the lowest linear regulator outputs are about 0.5 V (practice)",
);
pub const DROPOUT_V: Range = range(
    "regulator.dropout_v",
    ZeroOr(1e-3),
    100.0,
    "V",
    "0 is an ideal regulator; under 1 mV a dropout is none",
);
pub const REGULATOR_RATED_W: Range = range(
    "regulator.rated_w",
    AtLeast(0.01),
    1e5,
    "W",
    "the smallest regulator packages dissipate a few tenths of a watt (practice)",
);
pub const VISIT_MAINS_VRMS: Range = range("visit.mains_vrms", AtLeast(0.0), 1e5, "V", READING_WHY);
pub const VISIT_SECONDARY_VAC: Range =
    range("visit.secondary_vac", AtLeast(0.0), 1e5, "V", READING_WHY);
pub const VISIT_DC_V: Range = range(
    "visit.dc_v",
    AtLeast(-1e5),
    1e5,
    "V",
    "what the meter showed; a negative rail reads negative",
);
pub const VISIT_RIPPLE_PP_V: Range =
    range("visit.ripple_pp_v", AtLeast(0.0), 1e5, "V", READING_WHY);
pub const VISIT_RIPPLE_RMS_V: Range =
    range("visit.ripple_rms_v", AtLeast(0.0), 1e5, "V", READING_WHY);
pub const VISIT_RIPPLE_HZ: Range = range("visit.ripple_hz", AtLeast(0.0), 1e5, "Hz", READING_WHY);
pub const VISIT_LOAD_A: Range = range("visit.load_a", AtLeast(0.0), 1e5, "A", READING_WHY);

/// Every numeric key's range, in file order: the table the README's file format section
/// repeats.
pub const RANGES: &[Range] = &[
    MAINS_VRMS,
    MAINS_HZ,
    MAINS_LOW_PCT,
    MAINS_HIGH_PCT,
    MAINS_CREST,
    RATIO,
    RATIO_PCT,
    PRIMARY_VRMS,
    SECONDARY_VRMS,
    RATED_VA,
    REGULATION_PCT,
    SECONDARY_OHMS,
    PRIMARY_OHMS,
    TEMP_C,
    DROP_SPREAD_PCT,
    RATED_PIV_V,
    DIODE_RATED_A,
    SURGE_A,
    DROP_V,
    DIODE_OHMS,
    IS_A,
    EMISSION_N,
    RS_OHMS,
    FILTER_UF,
    ESR_OHMS,
    CAP_LOW_PCT,
    CAP_HIGH_PCT,
    CAP_RATED_V,
    RATED_RIPPLE_A,
    SERIES_OHMS,
    SECOND_UF,
    BLEEDER_OHMS,
    AGED_PCT,
    LOAD_AMPS,
    LOAD_OHMS,
    MIN_AMPS,
    MAX_AMPS,
    MIN_OHMS,
    MAX_OHMS,
    OUTPUT_V,
    DROPOUT_V,
    REGULATOR_RATED_W,
    CALIBRATION_WINDING,
    CALIBRATION_CREST,
    CALIBRATION_CAP,
    VISIT_MAINS_VRMS,
    VISIT_SECONDARY_VAC,
    VISIT_DC_V,
    VISIT_RIPPLE_PP_V,
    VISIT_RIPPLE_RMS_V,
    VISIT_RIPPLE_HZ,
    VISIT_LOAD_A,
];

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
        supply.validate().map_err(|e| e.placed_in(text))?;
        Ok(supply)
    }

    /// Writes the supply as TOML text in the file format.
    pub fn to_toml_string(&self) -> String {
        toml::to_string(self).expect("a supply always serialises")
    }

    /// Checks every field against the range the model accepts ([`RANGES`]); the first fault
    /// found is returned, naming its key.
    pub fn validate(&self) -> Result<(), SupplyError> {
        if self.format == 0 {
            let allowed = if FORMAT == 1 {
                "1, the only format so far".to_string()
            } else {
                format!("between 1 and {FORMAT}")
            };
            return Err(SupplyError::out_of_range("format", "0", allowed));
        }
        if self.format > FORMAT {
            return Err(SupplyError::NewerFormat { found: self.format });
        }
        if self.name.trim().is_empty() {
            return Err(SupplyError::Missing {
                key: "name",
                why: "every supply needs a name to find it by",
                line: None,
            });
        }
        let m = &self.mains;
        MAINS_VRMS.check(m.vrms)?;
        MAINS_HZ.check(m.hz)?;
        MAINS_LOW_PCT.check(m.low_pct)?;
        MAINS_HIGH_PCT.check(m.high_pct)?;
        if let Some(c) = m.crest {
            MAINS_CREST.check(c)?;
        }
        self.winding()?;
        if let Some(p) = self.transformer.ratio_pct {
            RATIO_PCT.check(p)?;
        }
        let r = &self.rectifier;
        self.rectifier_diode()?;
        for (range, v) in [
            (&TEMP_C, r.temp_c),
            (&DROP_SPREAD_PCT, r.drop_spread_pct),
            (&RATED_PIV_V, r.rated_piv_v),
            (&DIODE_RATED_A, r.rated_a),
            (&SURGE_A, r.surge_a),
        ] {
            if let Some(v) = v {
                range.check(v)?;
            }
        }
        let f = &self.filter;
        match f.kind {
            FilterKind::None => {
                if r.topology == Topology::Doubler {
                    return Err(SupplyError::out_of_range(
                        "filter.kind",
                        "none",
                        "capacitor or crc for a doubler (its capacitors are part of it)",
                    ));
                }
            }
            FilterKind::Capacitor | FilterKind::Crc => {
                let uf = f.uf.ok_or(SupplyError::Missing {
                    key: "filter.uf",
                    why: "a capacitor filter needs its capacitance in microfarads",
                    line: None,
                })?;
                FILTER_UF.check(uf)?;
                ESR_OHMS.check(f.esr_ohms)?;
                CAP_LOW_PCT.check(f.low_pct)?;
                CAP_HIGH_PCT.check(f.high_pct)?;
            }
        }
        if f.kind == FilterKind::Crc {
            let ohms = f.series_ohms.ok_or(SupplyError::Missing {
                key: "filter.series_ohms",
                why: "a CRC filter needs the resistor between its capacitors",
                line: None,
            })?;
            SERIES_OHMS.check(ohms)?;
            let uf = f.second_uf.ok_or(SupplyError::Missing {
                key: "filter.second_uf",
                why: "a CRC filter needs its second capacitor in microfarads",
                line: None,
            })?;
            SECOND_UF.check(uf)?;
        }
        for (range, v) in [
            (&CAP_RATED_V, f.rated_v),
            (&RATED_RIPPLE_A, f.rated_ripple_a),
            (&BLEEDER_OHMS, f.bleeder_ohms),
            (&AGED_PCT, f.aged_pct),
        ] {
            if let Some(v) = v {
                range.check(v)?;
            }
        }
        self.validate_load()?;
        if let Some(c) = &self.calibration {
            if c.visit.date.is_none() {
                return Err(SupplyError::out_of_range(
                    "calibration.visit",
                    c.visit.to_string(),
                    "a calendar date such as 2026-11-30",
                ));
            }
            for (range, v) in [
                (&CALIBRATION_WINDING, c.winding_factor),
                (&CALIBRATION_CREST, c.crest),
                (&CALIBRATION_CAP, c.cap_factor),
            ] {
                if let Some(v) = v {
                    range.check(v)?;
                }
            }
        }
        for (i, v) in self.visits.iter().enumerate() {
            let in_visit = |e: SupplyError| match e {
                SupplyError::OutOfRange {
                    key,
                    value,
                    allowed,
                    line,
                    ..
                } => SupplyError::OutOfRange {
                    key,
                    value,
                    allowed,
                    line,
                    visit: Some(i + 1),
                },
                other => other,
            };
            if v.date.date.is_none() {
                return Err(in_visit(SupplyError::out_of_range(
                    "visit.date",
                    v.date.to_string(),
                    "a calendar date such as 2026-11-30",
                )));
            }
            let r = &v.readings;
            for (range, value) in [
                (&VISIT_MAINS_VRMS, r.mains_vrms),
                (&VISIT_SECONDARY_VAC, r.secondary_vac),
                (&VISIT_DC_V, r.dc_v),
                (&VISIT_RIPPLE_PP_V, r.ripple_pp_v),
                (&VISIT_RIPPLE_RMS_V, r.ripple_rms_v),
                (&VISIT_RIPPLE_HZ, r.ripple_hz),
                (&VISIT_LOAD_A, r.load_a),
            ] {
                if let Some(value) = value {
                    range.check(value).map_err(in_visit)?;
                }
            }
        }
        if let Some(reg) = &self.regulator {
            OUTPUT_V.check(reg.output_v)?;
            DROPOUT_V.check(reg.dropout_v)?;
            if let Some(w) = reg.rated_w {
                REGULATOR_RATED_W.check(w)?;
            }
        }
        Ok(())
    }

    /// The load: one kind (current or resistance), its range of the same kind, low end not
    /// above the high end.
    fn validate_load(&self) -> Result<(), SupplyError> {
        let l = &self.load;
        let (range_kind, other_kind) = match (l.amps, l.ohms) {
            (Some(a), None) => {
                LOAD_AMPS.check(a)?;
                (
                    [(&MIN_AMPS, l.min_amps), (&MAX_AMPS, l.max_amps)],
                    [(&MIN_OHMS, l.min_ohms), (&MAX_OHMS, l.max_ohms)],
                )
            }
            (None, Some(o)) => {
                LOAD_OHMS.check(o)?;
                (
                    [(&MIN_OHMS, l.min_ohms), (&MAX_OHMS, l.max_ohms)],
                    [(&MIN_AMPS, l.min_amps), (&MAX_AMPS, l.max_amps)],
                )
            }
            (Some(_), Some(_)) => {
                return Err(SupplyError::out_of_range(
                    "load",
                    "both amps and ohms",
                    "either `amps` (constant current) or `ohms` (resistive), not both",
                ));
            }
            (None, None) => {
                return Err(SupplyError::Missing {
                    key: "load.amps",
                    why: "give the load as `amps` (constant current) or `ohms` (resistive)",
                    line: None,
                });
            }
        };
        // A range of the other kind would be silently ignored by the worst case.
        for (range, v) in other_kind {
            if let Some(v) = v {
                let (nominal, its_range) = if l.amps.is_some() {
                    ("`amps` (a current load)", "`min_amps` / `max_amps`")
                } else {
                    ("`ohms` (a resistive load)", "`min_ohms` / `max_ohms`")
                };
                return Err(SupplyError::out_of_range(
                    range.key,
                    format_number(v),
                    format!("left out with {nominal}: its range is {its_range}"),
                ));
            }
        }
        for (range, v) in range_kind {
            if let Some(v) = v {
                range.check(v)?;
            }
        }
        if let [(min_range, Some(min)), (max_range, Some(max))] = range_kind
            && min > max
        {
            return Err(SupplyError::out_of_range(
                min_range.key,
                format_number(min),
                format!(
                    "at most `{}` ({}), being the low end of the range",
                    max_range.key,
                    format_number(max)
                ),
            ));
        }
        Ok(())
    }

    /// The calibration in force (factors of 1 without one): what the baseline visit fitted,
    /// less what a later replacement reset.
    pub fn calibration_in_force(&self) -> crate::calibration::InForce {
        self.calibration
            .as_ref()
            .map(|c| c.in_force(&self.visits))
            .unwrap_or_default()
    }

    /// The supply with a new filter capacitor: its capacitance calibration no longer applies
    /// (sizing a replacement, or a trend measured against the label).
    pub fn forget_capacitance_calibration(&mut self) {
        if let Some(c) = &mut self.calibration {
            c.cap_factor = None;
        }
    }

    /// Whether the filter has two capacitors a fault can tell apart: a CRC's pair, or a
    /// doubler's stack (a split rail's two rails are measured one at a time, each with its own).
    pub fn has_capacitor_pair(&self) -> bool {
        self.filter.kind == FilterKind::Crc
            || (self.filter.kind != FilterKind::None
                && self.rectifier.topology == Topology::Doubler)
    }

    /// The capacitor a capacitor fault concerns, in a technician's words: the one the
    /// rectifier charges.
    pub fn reservoir_words(&self) -> &'static str {
        if self.filter.kind == FilterKind::Crc {
            "CRC's first capacitor"
        } else if self.rectifier.topology == Topology::Doubler {
            "one capacitor of the doubler's pair"
        } else {
            "filter capacitor"
        }
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
        SECONDARY_OHMS.check(secondary_ohms)?;
        PRIMARY_OHMS.check(primary_ohms)?;
        if let Some(ratio) = t.ratio {
            RATIO.check(ratio)?;
            let measured = t.secondary_ohms.is_some() || t.primary_ohms.is_some();
            return Ok(if measured {
                WindingModel {
                    ratio,
                    secondary_ohms,
                    primary_ohms,
                    assumed_regulation_pct: None,
                    source: WindingSource::Measured,
                }
            } else {
                self.assumed_winding(ratio, None)
            });
        }
        let missing = |key| SupplyError::Missing {
            key,
            why: "give either `ratio` or the nameplate `primary_vrms` and `secondary_vrms`",
            line: None,
        };
        let primary = t.primary_vrms.ok_or(missing("transformer.ratio"))?;
        let secondary = t
            .secondary_vrms
            .ok_or(missing("transformer.secondary_vrms"))?;
        PRIMARY_VRMS.check(primary)?;
        SECONDARY_VRMS.check(secondary)?;
        if let Some(va) = t.rated_va {
            RATED_VA.check(va)?;
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
                    line: None,
                });
            }
        };
        REGULATION_PCT.check(regulation)?;
        let no_load = secondary * (1.0 + regulation / 100.0);
        let ratio = primary / no_load;
        if !RATIO.allows(ratio) {
            return Err(SupplyError::out_of_range(
                RATIO.key,
                format!(
                    "{}, from primary_vrms over the no-load secondary_vrms",
                    format_number(ratio)
                ),
                RATIO.allowed(),
            ));
        }
        let measured = t.secondary_ohms.is_some() || t.primary_ohms.is_some();
        Ok(match (measured, t.rated_va) {
            (true, _) => WindingModel {
                ratio,
                secondary_ohms,
                primary_ohms,
                assumed_regulation_pct: assumed,
                source: WindingSource::Measured,
            },
            (false, Some(va)) => WindingModel {
                ratio,
                secondary_ohms: secondary * secondary * regulation / 100.0 / va,
                primary_ohms,
                assumed_regulation_pct: assumed,
                source: WindingSource::Nameplate,
            },
            (false, None) => self.assumed_winding(ratio, Some(regulation)),
        })
    }

    /// The winding of a transformer whose resistance the file leaves out, taken as sized for
    /// its load: the DC power the load draws (its current, or the rail's paper estimate over
    /// its resistance) times the volt-amperes a capacitor-input filter needs per watt, at
    /// least 1 VA. Copper loss as regulation: R = regulation x V^2 / VA on the whole
    /// secondary. The range runs from 5 % regulation on a transformer four times larger to
    /// 25 % on one just large enough (practice); the nominal is the nameplate's regulation on
    /// a transformer that size when given, otherwise the range's middle on a log scale, ohms.
    pub fn assumed_winding(&self, ratio: f64, regulation_pct: Option<f64>) -> WindingModel {
        let secondary_v = self.mains.vrms / ratio;
        let topology = self.rectifier.topology;
        let (share, diodes) = match topology {
            Topology::HalfWave => (1.0, 1.0),
            Topology::CenterTap | Topology::SplitRail => (0.5, 1.0),
            Topology::Bridge => (1.0, 2.0),
            Topology::Doubler => (2.0, 2.0),
        };
        // A rough rail: the peak less about 0.8 V a silicon diode (practice).
        let rail_v = (share * secondary_v * std::f64::consts::SQRT_2 - 0.8 * diodes).max(0.1);
        let amps = match (&self.regulator, self.load.amps, self.load.ohms) {
            (_, Some(a), _) => a,
            (Some(reg), None, Some(r)) => reg.output_v / r,
            (None, None, Some(r)) => rail_v / r,
            _ => 0.0,
        };
        let rated_va = (va_per_dc_watt(topology) * rail_v * amps).max(1.0);
        let ohms = |reg_pct: f64, va: f64| reg_pct / 100.0 * secondary_v * secondary_v / va;
        let low_ohms = ohms(ASSUMED_REGULATION_PCT.0, ASSUMED_OVERSIZE * rated_va);
        let high_ohms = ohms(ASSUMED_REGULATION_PCT.1, rated_va);
        // With no more to go on, the middle of the range on a log scale: neither the tight
        // large unit nor the soft small one.
        let nominal = match regulation_pct {
            Some(r) => ohms(r, rated_va).clamp(low_ohms, high_ohms),
            None => (low_ohms * high_ohms).sqrt(),
        };
        WindingModel {
            ratio,
            secondary_ohms: nominal,
            primary_ohms: 0.0,
            assumed_regulation_pct: regulation_pct,
            source: WindingSource::Assumed {
                rated_va,
                low_ohms,
                high_ohms,
            },
        }
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
                    return Err(SupplyError::out_of_range(
                        "rectifier.diode",
                        format!("{other:?}"),
                        "silicon, fast, schottky or ideal, or a table \
                         { drop_v, ohms } or { is_a, n, rs_ohms }",
                    ));
                }
            },
            DiodeSpec::Fixed { drop_v, ohms } => {
                DROP_V.check(*drop_v)?;
                DIODE_OHMS.check(*ohms)?;
                DiodeParams::Fixed {
                    drop_v: *drop_v,
                    ohms: *ohms,
                }
            }
            DiodeSpec::Junction { is_a, n, rs_ohms } => {
                IS_A.check(*is_a)?;
                EMISSION_N.check(*n)?;
                RS_OHMS.check(*rs_ohms)?;
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
fn shorten_numbers(message: &str) -> String {
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
            e.contains("filter.uf") && e.contains("-47") && e.contains("between 1e-6 and 1e7 uF"),
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
    fn long_numbers_in_parser_messages_are_written_short() {
        let long = format!("floating point `{}.0`, expected u32", "4".repeat(60));
        assert_eq!(
            shorten_numbers(&long),
            "floating point `4.444444444444445e59`, expected u32"
        );
        assert_eq!(shorten_numbers("line 12, 3.5 and 7"), "line 12, 3.5 and 7");
        let bad = BRIDGE.replace("format = 1", "format = 4.2e252");
        let e = Supply::from_toml_str(&bad).unwrap_err().to_string();
        assert!(e.contains("4.2e252") && e.contains("line 2"), "{e}");
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
