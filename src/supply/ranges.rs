//! Every number's range and the reason for its floor: one table, read by the validator, the
//! form and the README (a test keeps the README equal to it).

use super::SupplyError;
use crate::units::format_number;

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
    pub(crate) fn check(&self, value: f64) -> Result<(), SupplyError> {
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
pub const LINE_OHMS: Range = range(
    "line.ohms",
    ZeroOr(1e-6),
    1e3,
    "ohms",
    "0 is a stiff line; under a micro-ohm no line or reactor has; over 1 kohm is no mains",
);
pub const LINE_MH: Range = range(
    "line.mh",
    ZeroOr(1e-6),
    1e4,
    "mH",
    "0 is no reactor; under a nanohenry is the wiring's own",
);
pub const REACTOR_PCT: Range = range(
    "line.reactor_pct",
    AtLeast(0.1),
    20.0,
    "%",
    "line reactors and DC link chokes are 1-5 % (practice); over 20 % the drive would not run",
);
pub const REACTOR_RATED_A: Range = range(
    "line.reactor_rated_a",
    AtLeast(1e-3),
    1e4,
    "A",
    "the current the reactor's percent impedance is stated at",
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
pub const LEAKAGE_MH: Range = range(
    "transformer.leakage_mh",
    ZeroOr(1e-6),
    1e6,
    "mH",
    "0 is no leakage; under a nanohenry is the wiring's own, not the transformer's",
);
pub const IMPEDANCE_PCT: Range = range(
    "transformer.impedance_pct",
    AtLeast(0.1),
    50.0,
    "%",
    "power transformers are 1-15 % (practice); under 0.1 % is a short, above 50 % no supply",
);
pub const SHORT_TEST_VOLTS: Range = range(
    "transformer.short_test.volts",
    AtLeast(1e-3),
    1e5,
    "V",
    "a short-circuit test reads at least a millivolt on the primary",
);
pub const SHORT_TEST_AMPS: Range = range(
    "transformer.short_test.amps",
    AtLeast(1e-6),
    1e5,
    "A",
    "a short-circuit test runs the primary at its rated current, never near zero",
);
pub const SHORT_TEST_WATTS: Range = range(
    "transformer.short_test.watts",
    AtLeast(0.0),
    1e7,
    "W",
    "0 is a winding of no resistance; the copper loss is never negative",
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
pub const MAX_FIRST_UF: Range = range(
    "rectifier.max_first_uf",
    AtLeast(0.1),
    1e4,
    "uF",
    "a valve's data sheet allows its first capacitor a few to a hundred-odd microfarads",
);
pub const MIN_PLATE_OHMS: Range = range(
    "rectifier.min_plate_ohms",
    AtLeast(0.0),
    1e5,
    "ohms",
    "0 asks for no impedance at all",
);
pub const RATED_PEAK_A: Range = range(
    "rectifier.rated_peak_a",
    AtLeast(1e-3),
    1e6,
    "A",
    "a plate or diode rated under 1 mA peak is no rectifier",
);
pub const RATED_DC_A: Range = range(
    "rectifier.rated_dc_a",
    AtLeast(1e-3),
    1e6,
    "A",
    "a rectifier rated under 1 mA of output is none",
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
pub const VALVE_DROP_V: Range = range(
    "rectifier.diode.drop_v",
    AtLeast(1.0),
    200.0,
    "V",
    "a rectifier valve's plate drops from about 15 V (indirectly heated, close spaced) to \
     60 V or so (directly heated) at its rated current",
);
pub const VALVE_AT_A: Range = range(
    "rectifier.diode.at_a",
    AtLeast(1e-3),
    5.0,
    "A",
    "the plate current the drop is read at; a rectifier valve's lies between tens of mA and \
     about an ampere",
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
pub const RATED_LIFE_H: Range = range(
    "filter.rated_life_h",
    AtLeast(100.0),
    1e6,
    "h",
    "electrolytics are rated from 1,000 h (practice)",
);
pub const RATED_LIFE_C: Range = range(
    "filter.rated_life_c",
    AtLeast(40.0),
    200.0,
    "degC",
    "life ratings are given at 85, 105, 125 or 150 degC (practice)",
);
pub const RATED_RIPPLE_HZ: Range = range(
    "filter.rated_ripple_hz",
    AtLeast(1.0),
    1e6,
    "Hz",
    "catalogues rate ripple at 100 or 120 Hz, switching parts at 10-100 kHz",
);
pub const RISE_C: Range = range(
    "filter.rise_c",
    AtLeast(0.0),
    40.0,
    "degC",
    "0 is no heating by the rated ripple; makers allow a few degrees",
);
pub const AMBIENT_C: Range = range(
    "filter.ambient_c",
    AtLeast(-55.0),
    150.0,
    "degC",
    "the coldest electrolytics are rated down to -55 degC",
);
pub const DUTY_H_PER_DAY: Range = range(
    "filter.duty_h_per_day",
    AtLeast(0.1),
    24.0,
    "h",
    "a day has 24 hours; under 6 minutes a day is storage, not service",
);
pub const TAN_DELTA: Range = range(
    "filter.tan_delta",
    AtLeast(1e-4),
    2.0,
    "",
    "data sheets give 0.03 to 0.3 or so for electrolytics",
);
pub const TAN_DELTA_HZ: Range = range(
    "filter.tan_delta_hz",
    AtLeast(1.0),
    1e6,
    "Hz",
    "data sheets give tan delta at 100 or 120 Hz",
);
pub const SERIES_OHMS: Range = range(
    "filter.series_ohms",
    AtLeast(1e-3),
    1e6,
    "ohms",
    "under 1 milliohm the CRC's resistor is the wire between its capacitors",
);
pub const SECOND_UF: Range = range("filter.second_uf", AtLeast(1e-6), 1e7, "uF", UF_WHY);
pub const CHOKE_H: Range = range(
    "filter.choke_h",
    AtLeast(1e-6),
    1000.0,
    "H",
    "under a microhenry a choke filters nothing at the mains' harmonics",
);
pub const CHOKE_OHMS: Range = range(
    "filter.choke_ohms",
    ZeroOr(1e-6),
    1e5,
    "ohms",
    "0 is an ideal choke; every real one has some copper",
);
pub const CHOKE_LIGHT_H: Range = range(
    "filter.choke_light_h",
    AtLeast(1e-6),
    1000.0,
    "H",
    "under a microhenry a choke filters nothing at the mains' harmonics",
);
pub const CHOKE_RATED_A: Range = range(
    "filter.choke_rated_a",
    AtLeast(1e-4),
    1e4,
    "A",
    "a choke rated under 0.1 mA carries no supply's current",
);
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
pub const LOAD_WATTS: Range = range(
    "load.watts",
    ZeroOr(1e-3),
    1e6,
    "W",
    "0 is no load; under a milliwatt a converter idles on its own leakage",
);
pub const CUTOFF_V: Range = range(
    "load.cutoff_v",
    AtLeast(0.1),
    1e4,
    "V",
    "the converter's undervoltage stop; under 0.1 V it never stops and P / V would run away",
);
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
pub const VISIT_LINE_VRMS: Range = range("visit.line_vrms", AtLeast(0.0), 1e5, "V", READING_WHY);
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
    LINE_OHMS,
    LINE_MH,
    REACTOR_PCT,
    REACTOR_RATED_A,
    RATIO,
    RATIO_PCT,
    PRIMARY_VRMS,
    SECONDARY_VRMS,
    RATED_VA,
    REGULATION_PCT,
    SECONDARY_OHMS,
    PRIMARY_OHMS,
    LEAKAGE_MH,
    IMPEDANCE_PCT,
    SHORT_TEST_VOLTS,
    SHORT_TEST_AMPS,
    SHORT_TEST_WATTS,
    TEMP_C,
    DROP_SPREAD_PCT,
    RATED_PIV_V,
    DIODE_RATED_A,
    SURGE_A,
    MAX_FIRST_UF,
    MIN_PLATE_OHMS,
    RATED_PEAK_A,
    RATED_DC_A,
    DROP_V,
    DIODE_OHMS,
    IS_A,
    EMISSION_N,
    RS_OHMS,
    VALVE_DROP_V,
    VALVE_AT_A,
    FILTER_UF,
    ESR_OHMS,
    CAP_LOW_PCT,
    CAP_HIGH_PCT,
    CAP_RATED_V,
    RATED_RIPPLE_A,
    RATED_LIFE_H,
    RATED_LIFE_C,
    RATED_RIPPLE_HZ,
    RISE_C,
    AMBIENT_C,
    DUTY_H_PER_DAY,
    TAN_DELTA,
    TAN_DELTA_HZ,
    SERIES_OHMS,
    SECOND_UF,
    CHOKE_H,
    CHOKE_OHMS,
    CHOKE_LIGHT_H,
    CHOKE_RATED_A,
    BLEEDER_OHMS,
    AGED_PCT,
    LOAD_AMPS,
    LOAD_OHMS,
    MIN_AMPS,
    MAX_AMPS,
    MIN_OHMS,
    MAX_OHMS,
    LOAD_WATTS,
    CUTOFF_V,
    OUTPUT_V,
    DROPOUT_V,
    REGULATOR_RATED_W,
    CALIBRATION_WINDING,
    CALIBRATION_CREST,
    CALIBRATION_CAP,
    VISIT_MAINS_VRMS,
    VISIT_LINE_VRMS,
    VISIT_SECONDARY_VAC,
    VISIT_DC_V,
    VISIT_RIPPLE_PP_V,
    VISIT_RIPPLE_RMS_V,
    VISIT_RIPPLE_HZ,
    VISIT_LOAD_A,
];
