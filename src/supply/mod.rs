//! The supply as a technician describes it: mains, transformer, rectifier, filter, load and an
//! optional regulator, read from one TOML file and checked field by field.
//!
//! Every value is in plain SI units except where the key says otherwise (`uf` is microfarads,
//! `_pct` is percent). Validation names the key, the value and the allowed range, so the same
//! message serves the command line and the form next to the field.

#![deny(clippy::wildcard_enum_match_arm)]
use crate::units::format_number;
use serde::{Deserialize, Deserializer, Serialize};
use std::fmt;

/// The newest supply-file format this build reads.
pub const FORMAT: u32 = 1;

mod error;
mod ranges;
mod validate;

pub use error::SupplyError;
use error::syntax_error;
pub use ranges::*;

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
    /// The line or a line reactor between the mains and the rectifier (`[line]`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub line: Option<Line>,
    /// Left out (no `[transformer]` table), the rectifier runs straight off the line.
    #[serde(default, skip_serializing_if = "Transformer::is_absent")]
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
    /// 1 (single-phase) or 3; with 3, `vrms` is the line-to-line voltage.
    #[serde(default = "one_phase", skip_serializing_if = "is_one_phase")]
    pub phases: u32,
    /// Nominal RMS volts (line to line on three phases).
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

/// The series impedance between the mains and the rectifier: the line itself or a line
/// reactor, per phase on three phases, the whole loop (line and neutral) on one. Give the
/// reactor as `mh` or as its percent impedance at its rated current.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Line {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ohms: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mh: Option<f64>,
    /// A line reactor's percent impedance: its reactance is this share of the phase voltage
    /// over `reactor_rated_a` at the mains frequency.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reactor_pct: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reactor_rated_a: Option<f64>,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
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
    /// Leakage inductance referred to the whole secondary, millihenries (each half of a
    /// center tap gets half of it). Give at most one of this, `impedance_pct` and
    /// `short_test`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub leakage_mh: Option<f64>,
    /// The nameplate's percent impedance (short-circuit voltage) at `rated_va`: its reactive
    /// part, beyond the windings' resistance, is the leakage.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub impedance_pct: Option<f64>,
    /// A short-circuit test: the secondary shorted, the primary raised until rated current
    /// flows; the primary's volts, amps and watts there.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub short_test: Option<ShortTest>,
}

impl Transformer {
    /// Whether the file has no transformer at all (no table, or an empty one): the rectifier
    /// then runs straight off the line.
    pub fn is_absent(&self) -> bool {
        *self == Transformer::default()
    }
}

/// What a short-circuit test reads on the primary (volts RMS, amps RMS, watts): Z = V / I,
/// R = W / I^2, X = sqrt(Z^2 - R^2), all on the primary side.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ShortTest {
    pub volts: f64,
    pub amps: f64,
    pub watts: f64,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Topology {
    HalfWave,
    CenterTap,
    Bridge,
    Doubler,
    SplitRail,
    /// Six diodes on three phases: six pulses a cycle.
    ThreePhaseBridge,
    /// Three diodes from a star's phases to the rail, its star point the return: three pulses.
    ThreePhaseStar,
}

impl Topology {
    pub const ALL: [Topology; 7] = [
        Topology::HalfWave,
        Topology::CenterTap,
        Topology::Bridge,
        Topology::Doubler,
        Topology::SplitRail,
        Topology::ThreePhaseBridge,
        Topology::ThreePhaseStar,
    ];

    /// The word used in the supply file.
    pub fn key(self) -> &'static str {
        match self {
            Topology::HalfWave => "half-wave",
            Topology::CenterTap => "center-tap",
            Topology::Bridge => "bridge",
            Topology::Doubler => "doubler",
            Topology::SplitRail => "split-rail",
            Topology::ThreePhaseBridge => "three-phase-bridge",
            Topology::ThreePhaseStar => "three-phase-star",
        }
    }

    /// The mains phases it runs on.
    pub fn phases(self) -> u32 {
        match self {
            Topology::HalfWave
            | Topology::CenterTap
            | Topology::Bridge
            | Topology::Doubler
            | Topology::SplitRail => 1,
            Topology::ThreePhaseBridge | Topology::ThreePhaseStar => 3,
        }
    }

    /// Rectified pulses per mains cycle into the rail.
    pub fn pulses_per_cycle(self) -> u32 {
        match self {
            Topology::HalfWave => 1,
            Topology::CenterTap | Topology::Bridge | Topology::Doubler | Topology::SplitRail => 2,
            Topology::ThreePhaseStar => 3,
            Topology::ThreePhaseBridge => 6,
        }
    }

    /// Whether both half cycles of every phase feed the rail, so that no winding carries DC
    /// (a choke input then keeps its current flowing).
    pub fn is_full_wave(self) -> bool {
        match self {
            Topology::CenterTap
            | Topology::Bridge
            | Topology::Doubler
            | Topology::SplitRail
            | Topology::ThreePhaseBridge => true,
            Topology::HalfWave | Topology::ThreePhaseStar => false,
        }
    }

    /// The rail's peak as a multiple of the whole secondary's peak, before the drops: half of
    /// it from a center tap (and each rail of a split rail), twice it from a doubler. On three
    /// phases the secondary's voltage is the line-to-line one: a bridge's rail peaks at it, a
    /// star's at one phase's, 1 / sqrt 3 of it.
    pub fn peak_share(self) -> f64 {
        match self {
            Topology::HalfWave | Topology::Bridge | Topology::ThreePhaseBridge => 1.0,
            Topology::CenterTap | Topology::SplitRail => 0.5,
            Topology::Doubler => 2.0,
            Topology::ThreePhaseStar => 1.0 / 3f64.sqrt(),
        }
    }

    /// Diodes conducting in series on the way to the rail's peak (a doubler's rail is charged
    /// through one diode a half cycle, two over the cycle).
    pub fn diodes_to_peak(self) -> f64 {
        match self {
            Topology::HalfWave
            | Topology::CenterTap
            | Topology::SplitRail
            | Topology::ThreePhaseStar => 1.0,
            Topology::Bridge | Topology::Doubler | Topology::ThreePhaseBridge => 2.0,
        }
    }

    /// Filter capacitors the rectifier charges: a doubler stacks two, the others one (a split
    /// rail has one per rail; one rail is worked out, the other mirrors it).
    pub fn reservoirs(self) -> usize {
        match self {
            Topology::Doubler => 2,
            Topology::HalfWave
            | Topology::CenterTap
            | Topology::Bridge
            | Topology::SplitRail
            | Topology::ThreePhaseBridge
            | Topology::ThreePhaseStar => 1,
        }
    }

    /// Whether its capacitors are part of the rectifier itself (a doubler's), so that it has
    /// no unfiltered form.
    pub fn needs_capacitor(self) -> bool {
        match self {
            Topology::Doubler => true,
            Topology::HalfWave
            | Topology::CenterTap
            | Topology::Bridge
            | Topology::SplitRail
            | Topology::ThreePhaseBridge
            | Topology::ThreePhaseStar => false,
        }
    }

    /// Whether the secondary is two halves, each carrying current half the time.
    pub fn has_half_windings(self) -> bool {
        match self {
            Topology::CenterTap | Topology::SplitRail => true,
            Topology::HalfWave
            | Topology::Bridge
            | Topology::Doubler
            | Topology::ThreePhaseBridge
            | Topology::ThreePhaseStar => false,
        }
    }

    /// Rails it gives: a split rail + and -, the others one.
    pub fn rails(self) -> usize {
        match self {
            Topology::SplitRail => 2,
            Topology::HalfWave
            | Topology::CenterTap
            | Topology::Bridge
            | Topology::Doubler
            | Topology::ThreePhaseBridge
            | Topology::ThreePhaseStar => 1,
        }
    }

    /// Volt-amperes a transformer needs per watt of DC it feeds through a capacitor-input
    /// filter: the winding's RMS current runs well above the DC in short pulses (practice:
    /// about 1.8 for a bridge, 2.3 for a center tap, 3 for a half-wave or doubler, whose
    /// winding carries DC or one-sided pulses; a six-pulse bridge's windings carry its
    /// current more evenly, about 1.3, a three-pulse star's one-sided pulses about 2; memory of
    /// the usual utilisation figures, raised for a capacitor input's peaky current).
    pub fn va_per_dc_watt(self) -> f64 {
        match self {
            Topology::Bridge | Topology::SplitRail => 1.8,
            Topology::CenterTap => 2.3,
            Topology::HalfWave | Topology::Doubler => 3.0,
            Topology::ThreePhaseBridge => 1.3,
            Topology::ThreePhaseStar => 2.0,
        }
    }

    /// Where [`Topology::ALL`] holds it: an exhaustive match, so a new topology is a compile
    /// error here until it is listed (and a test checks ALL against this).
    pub fn index(self) -> usize {
        match self {
            Topology::HalfWave => 0,
            Topology::CenterTap => 1,
            Topology::Bridge => 2,
            Topology::Doubler => 3,
            Topology::SplitRail => 4,
            Topology::ThreePhaseBridge => 5,
            Topology::ThreePhaseStar => 6,
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
    /// A rectifier valve's data-sheet limits (a valve preset gives its class's when these
    /// are left out): the largest first capacitance (uF), the least plate supply impedance
    /// per plate (ohms), one plate's peak current and the valve's DC output current (amps),
    /// and whether its filament is directly heated (the warm-up soar).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_first_uf: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_plate_ohms: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rated_peak_a: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rated_dc_a: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub directly_heated: Option<bool>,
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
    /// A rectifier valve's plate through one data-sheet point: `law = "valve"`.
    Valve {
        #[serde(serialize_with = "valve_law")]
        law: (),
        drop_v: f64,
        at_a: f64,
    },
}

/// Writes a valve's table with its `law = "valve"` key.
fn valve_law<S: serde::Serializer>(_: &(), s: S) -> Result<S::Ok, S::Error> {
    s.serialize_str("valve")
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
                    "a preset (silicon, fast, schottky, ideal, valve-high-drop, \
                     valve-medium-drop, valve-low-drop) or a table { drop_v, ohms }, \
                     { is_a, n, rs_ohms } or { law = \"valve\", drop_v, at_a }",
                )
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<DiodeSpec, E> {
                Ok(DiodeSpec::Preset(v.to_string()))
            }
            fn visit_map<M: MapAccess<'de>>(self, mut map: M) -> Result<DiodeSpec, M::Error> {
                let (mut is_a, mut n, mut rs_ohms, mut drop_v, mut ohms, mut at_a) =
                    (None, None, None, None, None, None);
                let mut law: Option<String> = None;
                while let Some(key) = map.next_key::<String>()? {
                    let slot = match key.as_str() {
                        "law" => {
                            law = Some(map.next_value::<String>()?);
                            continue;
                        }
                        "at_a" => &mut at_a,
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
                match law.as_deref() {
                    Some("valve") => {
                        if junction || ohms.is_some() {
                            return Err(de::Error::custom(
                                "a valve's diode table takes { law = \"valve\", drop_v, at_a } \
                                 (its plate's drop at a current), not a junction's or a \
                                 fixed drop's keys",
                            ));
                        }
                        return Ok(DiodeSpec::Valve {
                            law: (),
                            drop_v: drop_v.ok_or_else(|| de::Error::missing_field("drop_v"))?,
                            at_a: at_a.ok_or_else(|| de::Error::missing_field("at_a"))?,
                        });
                    }
                    Some(other) => {
                        return Err(de::Error::custom(format!(
                            "rectifier.diode.law = {other:?}: the one law named this way is \
                             \"valve\" (a junction or a fixed drop is given by its keys)"
                        )));
                    }
                    None if at_a.is_some() => {
                        return Err(de::Error::custom(
                            "rectifier.diode.at_a belongs to a valve: add law = \"valve\"",
                        ));
                    }
                    None => {}
                }
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
    /// Choke input: the rectifier feeds a choke, the choke the capacitor (the output).
    Lc,
    /// A pi filter: a first capacitor on the rectifier, a choke, a second capacitor (the
    /// output).
    Clc,
}

impl FilterKind {
    pub const ALL: [FilterKind; 5] = [
        FilterKind::None,
        FilterKind::Capacitor,
        FilterKind::Crc,
        FilterKind::Lc,
        FilterKind::Clc,
    ];

    /// The word used in the supply file.
    pub fn key(self) -> &'static str {
        match self {
            FilterKind::None => "none",
            FilterKind::Capacitor => "capacitor",
            FilterKind::Crc => "crc",
            FilterKind::Lc => "lc",
            FilterKind::Clc => "clc",
        }
    }

    /// Where [`FilterKind::ALL`] holds it (exhaustive: a new filter is listed or the build
    /// fails).
    pub fn index(self) -> usize {
        match self {
            FilterKind::None => 0,
            FilterKind::Capacitor => 1,
            FilterKind::Crc => 2,
            FilterKind::Lc => 3,
            FilterKind::Clc => 4,
        }
    }

    /// Whether it has a capacitor at all (a filter with none leaves the rail unfiltered).
    pub fn has_capacitor(self) -> bool {
        match self {
            FilterKind::None => false,
            FilterKind::Capacitor | FilterKind::Crc | FilterKind::Lc | FilterKind::Clc => true,
        }
    }

    /// Whether a second stage (a resistor or a choke, and a capacitor) follows the first
    /// capacitor.
    pub fn has_second_stage(self) -> bool {
        match self {
            FilterKind::Crc | FilterKind::Clc => true,
            FilterKind::None | FilterKind::Capacitor | FilterKind::Lc => false,
        }
    }

    /// Whether it has a choke (`choke_h`, `choke_ohms`).
    pub fn has_choke(self) -> bool {
        match self {
            FilterKind::Lc | FilterKind::Clc => true,
            FilterKind::None | FilterKind::Capacitor | FilterKind::Crc => false,
        }
    }

    /// Whether the rectifier feeds a choke rather than a capacitor: its rail is then near
    /// the rectified average under load and rises towards the peak when the load falls below
    /// the critical current.
    pub fn is_choke_input(self) -> bool {
        match self {
            FilterKind::Lc => true,
            FilterKind::None | FilterKind::Capacitor | FilterKind::Crc | FilterKind::Clc => false,
        }
    }
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
    /// CRC and CLC: the second (output) capacitor, microfarads.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub second_uf: Option<f64>,
    /// LC and CLC: the choke's inductance, henries (a swinging choke's at `choke_rated_a`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub choke_h: Option<f64>,
    /// LC and CLC: the choke's DC resistance, ohms.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub choke_ohms: Option<f64>,
    /// A swinging choke: its inductance at light current (a tenth of `choke_rated_a` and
    /// below), henries; between the two currents it falls in a straight line to `choke_h`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub choke_light_h: Option<f64>,
    /// The choke's rated current, amps (the check `choke-current`); for a swinging choke also
    /// where it has `choke_h`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub choke_rated_a: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bleeder_ohms: Option<f64>,
    /// Extra capacitance lost to ageing, percent, on top of the low tolerance.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub aged_pct: Option<f64>,
    /// The first capacitor's life rating off its can or data sheet: hours at degC
    /// ("2,000 h at 105 degC"); the frequency its ripple current is rated at (Hz, 120 when
    /// left out); its core's rise at that rated ripple (degC, 5 when left out).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rated_life_h: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rated_life_c: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rated_ripple_hz: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rise_c: Option<f64>,
    /// The air around the capacitor, or its can's measured temperature, degC (40 nominal and
    /// 55 at worst when left out).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ambient_c: Option<f64>,
    /// The hours a day the unit runs (24 when left out).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub duty_h_per_day: Option<f64>,
    /// The data sheet's dissipation factor and the frequency it is given at (120 Hz when left
    /// out): the ESR when `esr_ohms` is left out.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tan_delta: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tan_delta_hz: Option<f64>,
}

impl Filter {
    /// The first capacitor's ESR, ohms: `esr_ohms`, or from the data sheet's `tan_delta` when
    /// that is given instead (tan delta / (2 pi f C)), else 0.
    pub fn esr(&self) -> f64 {
        match (self.esr_ohms, self.tan_delta, self.uf) {
            (e, _, _) if e > 0.0 => e,
            (_, Some(td), Some(uf)) if uf > 0.0 => {
                crate::analysis::capacitor_life::esr_from_tan_delta(
                    td,
                    self.tan_delta_hz
                        .unwrap_or(crate::analysis::capacitor_life::DEFAULT_RATING_HZ),
                    uf,
                )
            }
            _ => 0.0,
        }
    }
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
    /// A constant-power load (a converter behind the capacitor), watts: it draws P / V.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub watts: Option<f64>,
    /// A constant-power load's undervoltage stop, volts: below it the converter's current
    /// falls to zero over a tenth of it (left out: half the rail's ideal peak).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cutoff_v: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Regulator {
    pub output_v: f64,
    pub dropout_v: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rated_w: Option<f64>,
}

fn one_phase() -> u32 {
    1
}
fn is_one_phase(phases: &u32) -> bool {
    *phases == 1
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
}

#[cfg(test)]
mod tests {
    use super::error::shorten_numbers;
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
