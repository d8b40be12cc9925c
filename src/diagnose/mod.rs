//! Diagnosis from field readings: each reading against its worst-case window, then the single
//! fault that explains the readings best, each fault a changed circuit solved by the engine
//! with at most one free parameter fitted to the readings.

#![deny(clippy::wildcard_enum_match_arm)]
pub mod calibrate;
pub mod judge;
mod nuisance;
pub mod part;
pub mod trend;

use crate::analysis::worst_case::{AxisKind, ToleranceBox, worst_case_in};
use crate::circuit::{self, Conditions, Figures, LoadOverride};
use crate::supply::{FilterKind, Supply};
use serde::Serialize;

pub use crate::visit::Readings;
pub use part::{LikelyPart, Part};

/// Meter uncertainty, as a technician's handheld gear gives it (common practice; an ordinary
/// 4-digit DMM and a scope): DC +-(0.5 % + 2 digits), AC volts +-(1 % + 3 digits), a scope's
/// ripple peak-peak +-5 %, a true-RMS ripple reading +-3 %, a clamp or series ammeter +-2 %.
pub fn meter_uncertainty(reading: &str, value: f64) -> f64 {
    // One digit of a 4-digit display showing `value`.
    let digit = 10f64.powf((value.abs().max(1e-3)).log10().floor() - 3.0);
    match reading {
        "dc_v" => 0.005 * value.abs() + 2.0 * digit,
        "secondary_vac" | "mains_vrms" => 0.01 * value.abs() + 3.0 * digit,
        "ripple_pp_v" => 0.05 * value.abs() + 2.0 * digit,
        "ripple_rms_v" => 0.03 * value.abs() + 3.0 * digit,
        "load_a" => 0.02 * value.abs() + 2.0 * digit,
        "ripple_hz" => 0.02 * value.abs(),
        // Three AC readings of +-1 % each: their spread about their mean is known to about
        // a percentage point.
        "line_imbalance_pct" => 1.0,
        _ => 0.01 * value.abs(),
    }
}

/// Why a set of readings was refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ReadingError {
    #[error("{0} must be a finite number (got {1})")]
    NotFinite(&'static str, f64),
    #[error("{0} must not be negative (got {1}); check the meter leads' polarity")]
    Negative(&'static str, f64),
    #[error(
        "ripple {ripple} V is more than any rectifier rail shows over {dc} V DC (at most pi times \
         the DC peak to peak, or 1.21 times it RMS, for a bare half-wave); check the scope's \
         coupling, the meter's range and the probe ground"
    )]
    RippleAboveDc { ripple: f64, dc: f64 },
    #[error(
        "ripple frequency {got} Hz fits none of the line's multiples a rectifier shows \
         ({line} Hz times 1, 2, 3 or 6: {allowed}): re-measure with the scope triggered on \
         the rail"
    )]
    Frequency {
        got: f64,
        line: f64,
        allowed: String,
    },
    #[error(
        "give at least one reading of the rail: its DC, ripple peak to peak or RMS, or ripple \
         frequency (--dc, --ripple-pp, --ripple-rms, --ripple-hz)"
    )]
    Nothing,
    #[error(
        "{reading} {value} is outside what this unit can show ({low} .. {high}): {hint}; \
         nothing was diagnosed or saved"
    )]
    Implausible {
        reading: &'static str,
        value: f64,
        low: String,
        high: String,
        hint: &'static str,
    },
    #[error(
        "three line voltages (--lines) are read on a three-phase supply; this one is \
         single-phase: give the mains reading (--mains) instead"
    )]
    NotThreePhase,
    #[error("{0}")]
    Solve(String),
}

impl Readings {
    /// Refuses readings that cannot be true of any rail, with the reason.
    pub fn check(&self, line_hz: f64) -> Result<(), ReadingError> {
        for (k, v) in self.present() {
            if !v.is_finite() {
                return Err(ReadingError::NotFinite(k, v));
            }
            if v < 0.0 {
                return Err(ReadingError::Negative(k, v));
            }
        }
        // A rectifier's rail never goes below zero; the widest swing for its DC is the bare
        // half-wave's, peak-peak pi times the DC and AC RMS 1.21 times it (textbook).
        if let (Some(pp), Some(dc)) = (self.ripple_pp_v, self.dc_v)
            && pp > 1.05 * std::f64::consts::PI * dc + 0.05
        {
            return Err(ReadingError::RippleAboveDc { ripple: pp, dc });
        }
        if let (Some(rms), Some(dc)) = (self.ripple_rms_v, self.dc_v)
            && rms > 1.25 * dc + 0.02
        {
            return Err(ReadingError::RippleAboveDc { ripple: rms, dc });
        }
        if let Some(hz) = self.ripple_hz {
            // The line itself and the multiples a rectifier's ripple can have (a six-pulse
            // bridge shows 6f, 2f with a phase lost; a three-pulse star 3f).
            let multiples = std::iter::once(1.0).chain(crate::circuit::RIPPLE_HARMONICS);
            let near = |f: f64| (hz - f).abs() <= 0.1 * f;
            if !multiples.clone().any(|k| near(k * line_hz)) {
                return Err(ReadingError::Frequency {
                    got: hz,
                    line: line_hz,
                    allowed: multiples
                        .map(|k| format!("{} Hz", crate::units::format_number(k * line_hz)))
                        .collect::<Vec<_>>()
                        .join(", "),
                });
            }
        }
        if self.dc_v.is_none()
            && self.ripple_pp_v.is_none()
            && self.ripple_rms_v.is_none()
            && self.ripple_hz.is_none()
        {
            return Err(ReadingError::Nothing);
        }
        Ok(())
    }
}

/// The line-to-line imbalance, percent, above which a three-phase reading is flagged (drives
/// and motors are derated above about 2 %: common practice, from memory).
pub const LINE_IMBALANCE_PCT: f64 = 2.0;

/// One reading against its worst-case window.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Expectation {
    pub reading: &'static str,
    pub value: f64,
    pub uncertainty: f64,
    pub nominal: f64,
    pub min: f64,
    pub max: f64,
    /// "within", "above" or "below".
    pub status: &'static str,
    /// How far outside the window, as a fraction of the window's edge (0 within).
    pub outside_pct: f64,
}

/// The faults railcheck knows, each a changed circuit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Fault {
    Healthy,
    CapacitanceLow,
    EsrHigh,
    CapacitorOpen,
    RectifierLegOpen,
    MainsLow,
    MainsHigh,
    SecondaryLow,
    LoadHeavy,
    LoadLight,
    RegulatorDropout,
    NoOutput,
    ChokeShorted,
    ChokeOpen,
    /// One phase of a three-phase supply lost (a blown fuse, an open line): a six-pulse rail
    /// ripples at twice the line frequency, deeper.
    PhaseLost,
    /// The line reactor (or DC link choke's line side) shorted: its inductance gone.
    ReactorShorted,
    /// A rectifier valve whose emission has fallen: it drops more, B+ sits lower, the ripple
    /// keeps its frequency.
    WeakValve,
}

impl Fault {
    pub const ALL: [Fault; 17] = [
        Fault::Healthy,
        Fault::CapacitanceLow,
        Fault::EsrHigh,
        Fault::CapacitorOpen,
        Fault::RectifierLegOpen,
        Fault::MainsLow,
        Fault::MainsHigh,
        Fault::SecondaryLow,
        Fault::LoadHeavy,
        Fault::LoadLight,
        Fault::RegulatorDropout,
        Fault::NoOutput,
        Fault::ChokeShorted,
        Fault::ChokeOpen,
        Fault::PhaseLost,
        Fault::ReactorShorted,
        Fault::WeakValve,
    ];

    /// The name used in JSON and on screen.
    pub fn key(self) -> &'static str {
        match self {
            Fault::Healthy => "healthy",
            Fault::CapacitanceLow => "capacitance-low",
            Fault::EsrHigh => "esr-high",
            Fault::CapacitorOpen => "capacitor-open",
            Fault::RectifierLegOpen => "rectifier-leg-open",
            Fault::MainsLow => "mains-low",
            Fault::MainsHigh => "mains-high",
            Fault::SecondaryLow => "secondary-low",
            Fault::LoadHeavy => "load-heavy",
            Fault::LoadLight => "load-light",
            Fault::RegulatorDropout => "regulator-dropout",
            Fault::NoOutput => "no-output",
            Fault::ChokeShorted => "choke-shorted",
            Fault::ChokeOpen => "choke-open",
            Fault::PhaseLost => "phase-lost",
            Fault::ReactorShorted => "reactor-shorted",
            Fault::WeakValve => "weak-rectifier-valve",
        }
    }

    /// The tolerance axes this fault sets itself, which its fit holds at nominal: a shrunken
    /// capacitor is not also at the low end of its tolerance.
    fn holds(self) -> &'static [AxisKind] {
        match self {
            Fault::CapacitanceLow | Fault::CapacitorOpen => &[AxisKind::Capacitance],
            Fault::MainsLow | Fault::MainsHigh => &[AxisKind::Mains],
            Fault::LoadHeavy | Fault::LoadLight => &[AxisKind::LoadAmps, AxisKind::LoadOhms],
            Fault::SecondaryLow => &[AxisKind::Ratio],
            Fault::WeakValve => &[AxisKind::DiodeDrop],
            Fault::Healthy
            | Fault::EsrHigh
            | Fault::RectifierLegOpen
            | Fault::RegulatorDropout
            | Fault::NoOutput
            | Fault::ChokeShorted
            | Fault::ChokeOpen
            | Fault::PhaseLost
            | Fault::ReactorShorted => &[],
        }
    }

    /// The check that would tell this fault from the others.
    pub fn next_check(self) -> &'static str {
        match self {
            Fault::Healthy => "nothing to replace; keep the readings for the next visit",
            Fault::CapacitanceLow => {
                "measure the filter capacitor out of circuit, or bridge a known-good one across it"
            }
            Fault::EsrHigh => {
                "ESR meter on the filter capacitor (in circuit, power off, discharged)"
            }
            Fault::CapacitorOpen => {
                "check the capacitor's leads and joints; bridge a known-good one across it"
            }
            Fault::RectifierLegOpen => {
                "measure the ripple frequency, then test each diode and each half winding for an open"
            }
            Fault::MainsLow | Fault::MainsHigh => "read the mains at the outlet, under load",
            Fault::SecondaryLow => {
                "read the secondary AC off load and compare with the nameplate; check the tap"
            }
            Fault::LoadHeavy | Fault::LoadLight => {
                "measure the load current in series with the rail"
            }
            Fault::RegulatorDropout => {
                "scope the regulator's input: its valley against output plus dropout"
            }
            Fault::NoOutput => "check the fuse, then the diodes and capacitor for a short",
            Fault::ChokeShorted => {
                "power off and discharge; measure the choke's inductance out of circuit (an LCR \
                 meter reads a swinging choke at its light-load value) and look for a bridge \
                 across its terminals"
            }
            Fault::ChokeOpen => {
                "power off and discharge; measure the choke's resistance (an open reads no \
                 continuity) and its leads and joints"
            }
            Fault::PhaseLost => {
                "read the three line voltages at the rectifier's input and check each phase's \
                 fuse; then test the bridge's diodes, power off and the bus discharged"
            }
            Fault::ReactorShorted => {
                "power off and discharge; measure the reactor's inductance out of circuit and \
                 look for a bridge across its terminals"
            }
            Fault::WeakValve => {
                "read the DC between each plate and the cathode under load (the drop against \
                 the data sheet's), or try a known-good valve of the type; a valve tester's \
                 emission reading settles it"
            }
        }
    }
}

/// One ranked hypothesis.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Hypothesis {
    pub fault: Fault,
    /// Share of belief, all hypotheses summing to 1.
    pub score: f64,
    /// The fitted part value: {"uf" (the reservoir capacitor) | "uf_each" (every filter
    /// capacitor alike) | "esr_ohms" | "vrms" | "ratio" | "load_a": value}.
    pub estimate: Option<(&'static str, f64)>,
    pub why: String,
    pub next_check: &'static str,
    /// Weighted misfit (chi-square) plus penalties, for the curious.
    pub misfit: f64,
}

/// The diagnosis of one set of readings.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Diagnosis {
    /// "healthy", "suspect" or "fault".
    pub verdict: &'static str,
    pub expectations: Vec<Expectation>,
    pub hypotheses: Vec<Hypothesis>,
}

/// What each reading would be for a solved circuit (volts, amps, hertz).
fn predicted(f: &Figures, reading: &str, cond: &Conditions, supply: &Supply) -> f64 {
    match reading {
        "dc_v" => f.dc_v,
        "ripple_pp_v" => f.ripple_pp_v,
        "ripple_rms_v" => f.ripple_rms_v,
        "ripple_hz" => f.ripple_hz,
        "load_a" => f.load_a,
        "secondary_vac" => f.secondary_rms_v,
        "mains_vrms" => cond.mains_vrms.unwrap_or(supply.mains.vrms) * cond.mains_factor,
        _ => f64::NAN,
    }
}

/// Weighted squared misfit of the readings against a solved circuit, each reading with its
/// [`sigma`] (the smaller model share when the unit is `calibrated`: worked out once by the
/// caller, since it walks the visits).
fn misfit(
    readings: &Readings,
    f: &Figures,
    cond: &Conditions,
    supply: &Supply,
    calibrated: bool,
) -> f64 {
    let mut chi2 = 0.0;
    for (k, v) in readings.present() {
        if k == "mains_vrms" && cond.mains_vrms.is_some() {
            continue;
        }
        let p = predicted(f, k, cond, supply);
        if k == "ripple_hz" {
            chi2 += frequency_misfit(v, p);
            continue;
        }
        chi2 += ((v - p) / sigma(k, v, p, calibrated)).powi(2);
    }
    chi2
}

/// A ripple frequency is one harmonic or another: a reading `v` hertz away from the predicted
/// `p` by more than 10 % weighs as a gross misfit (50 in chi-square).
fn frequency_misfit(v: f64, p: f64) -> f64 {
    if (p - v).abs() > 0.1 * v { 50.0 } else { 0.0 }
}

/// The uncertainty a reading `k` of `v` is judged with against a prediction `p`: the meter's,
/// and a share of the prediction for what the model leaves out (2 % on volts and amps, 10 %
/// on ripple, whose shape the winding's leakage and the mains' harmonics change). On a
/// `calibrated` unit the baseline visit has fitted most of that: what is left is how the
/// leakage's share moves with the working point, taken as 1 % and 4 %.
fn sigma(k: &str, v: f64, p: f64, calibrated: bool) -> f64 {
    let ripple = matches!(k, "ripple_pp_v" | "ripple_rms_v");
    let model_share = match (ripple, calibrated) {
        (true, false) => 0.10,
        (false, false) => 0.02,
        (true, true) => 0.04,
        (false, true) => 0.01,
    };
    (meter_uncertainty(k, v).powi(2) + (model_share * p.abs()).powi(2))
        .sqrt()
        .max(1e-3)
}

/// The conditions a fault sets at parameter `x` (a factor, or ohms for ESR).
fn conditions(fault: Fault, x: f64, base: &Conditions, supply: &Supply) -> Conditions {
    let mut c = *base;
    match fault {
        Fault::CapacitanceLow => c.reservoir_factor = x,
        Fault::EsrHigh => c.esr_ohms = Some(x),
        Fault::CapacitorOpen => c.capacitor_open = true,
        Fault::RectifierLegOpen => c.leg_open = true,
        Fault::MainsLow | Fault::MainsHigh => {
            c.mains_vrms = None;
            c.mains_factor = x;
        }
        Fault::SecondaryLow => c.ratio_factor = x,
        Fault::LoadHeavy | Fault::LoadLight => {
            c.load = Some(
                match (supply.load.amps, supply.load.ohms, &supply.regulator) {
                    (Some(a), _, _) => LoadOverride::Amps(a * x),
                    (None, Some(r), Some(_)) => LoadOverride::Ohms(r / x),
                    (None, Some(r), None) => LoadOverride::Ohms(r / x),
                    (None, None, _) if supply.load.watts.is_some() => {
                        LoadOverride::Watts(supply.load.watts.unwrap_or(0.0) * x)
                    }
                    _ => LoadOverride::Amps(0.0),
                },
            )
        }
        Fault::ChokeShorted => c.choke_shorted = true,
        Fault::ChokeOpen => c.choke_open = true,
        Fault::PhaseLost => c.phase_lost = true,
        Fault::ReactorShorted => c.reactor_shorted = true,
        Fault::WeakValve => c.drop_factor = x,
        Fault::Healthy | Fault::RegulatorDropout | Fault::NoOutput => {}
    }
    c
}

/// The range a fault's parameter is fitted over, outside the normal tolerance band so that a
/// healthy spread is never called a fault; None for faults without a parameter.
fn search_range(fault: Fault, supply: &Supply, mains_known: bool) -> Option<(f64, f64)> {
    let f = &supply.filter;
    let low = 1.0 - supply.mains.low_pct / 100.0;
    let high = 1.0 + supply.mains.high_pct / 100.0;
    match fault {
        // A calibrated capacitor is judged against its own value at the baseline, below the
        // band its calibration allows; otherwise below its tolerance and ageing.
        Fault::CapacitanceLow if supply.calibration_in_force().capacitance => Some((
            0.01,
            1.0 - crate::analysis::worst_case::CALIBRATED_CAP_LOW_PCT / 100.0,
        )),
        Fault::CapacitanceLow => {
            Some((0.01, 1.0 - (f.low_pct + f.aged_pct.unwrap_or(0.0)) / 100.0))
        }
        Fault::EsrHigh => {
            // Twice the initial ESR is the makers' end of life (see capacitor_life).
            let lo = (2.0 * f.esr()).max(f.esr() + 0.1);
            Some((lo, lo.max(0.5) * 200.0))
        }
        Fault::MainsLow if !mains_known => Some((0.4, low)),
        Fault::MainsHigh if !mains_known => Some((high, 1.5)),
        Fault::SecondaryLow => Some((1.03, 3.0)),
        Fault::LoadHeavy => Some((1.15, 8.0)),
        Fault::LoadLight => Some((0.0, 0.85)),
        // Beyond the drop's stated or assumed spread: a worn valve, up to four times the
        // data sheet's drop (past that the rail is all but gone, a dead valve).
        Fault::WeakValve => {
            let high = crate::analysis::worst_case::ToleranceBox::of(supply)
                .axes
                .iter()
                .find(|a| a.kind == AxisKind::DiodeDrop)
                .map_or(1.3, |a| a.high);
            Some((high * 1.02, 4.0))
        }
        Fault::MainsLow
        | Fault::MainsHigh
        | Fault::Healthy
        | Fault::CapacitorOpen
        | Fault::RectifierLegOpen
        | Fault::RegulatorDropout
        | Fault::NoOutput
        | Fault::ChokeShorted
        | Fault::ChokeOpen
        | Fault::PhaseLost
        | Fault::ReactorShorted => None,
    }
}

/// Fits one parameter by golden-section search on its logarithm (or linearly from zero),
/// returning (best parameter, best misfit).
fn fit(lo: f64, hi: f64, mut cost: impl FnMut(f64) -> f64) -> (f64, f64) {
    let log = lo > 0.0;
    let (mut a, mut b) = if log { (lo.ln(), hi.ln()) } else { (lo, hi) };
    let to_x = |u: f64| if log { u.exp() } else { u };
    // A coarse scan first: the misfit need not have one valley over a wide range.
    let n = 9;
    let mut best = (to_x(a), f64::INFINITY);
    let mut best_i = 0;
    for i in 0..=n {
        let u = a + (b - a) * i as f64 / n as f64;
        let c = cost(to_x(u));
        if c < best.1 {
            best = (to_x(u), c);
            best_i = i;
        }
    }
    let step = (b - a) / n as f64;
    let centre = a + step * best_i as f64;
    a = (centre - step).max(a);
    b = (centre + step).min(b);
    let g = 0.618_033_988_749_895;
    let (mut c, mut d) = (b - g * (b - a), a + g * (b - a));
    let (mut fc, mut fd) = (cost(to_x(c)), cost(to_x(d)));
    for _ in 0..12 {
        if fc < fd {
            b = d;
            d = c;
            fd = fc;
            c = b - g * (b - a);
            fc = cost(to_x(c));
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + g * (b - a);
            fd = cost(to_x(d));
        }
    }
    let (u, m) = if fc < fd { (c, fc) } else { (d, fd) };
    if m < best.1 { (to_x(u), m) } else { best }
}

/// A fault must explain the readings clearly better than the healthy supply before it wins:
/// this is its cost in chi-square units (a prior that a given part has failed).
const FAULT_PRIOR: f64 = 4.0;

impl Readings {
    /// Refuses readings that this unit cannot show, as likely typos or a wrong meter range:
    /// a mains reading outside half to one and a half times the nominal (a typed "2k" is
    /// 2000 V), or a DC above the winding's own peak at the highest mains (no rectifier rail
    /// rises above the peak it is charged from, whatever its parts), volts.
    pub fn check_against(&self, supply: &Supply) -> Result<(), ReadingError> {
        let nominal = supply.mains.vrms;
        if let Some(lines) = self.line_vrms {
            if supply.mains.phases != 3 {
                return Err(ReadingError::NotThreePhase);
            }
            // Each line as a mains reading (a phase lost upstream reads low but not zero
            // with the bus charged; a typed "4k" is caught here).
            for v in lines {
                if !v.is_finite() || v < 0.0 || v > 1.5 * nominal {
                    return Err(ReadingError::Implausible {
                        reading: "line_vrms",
                        value: v,
                        low: "0 V".into(),
                        high: format!("{:.0} V", 1.5 * nominal),
                        hint: "more likely a typo or the meter's range than the line",
                    });
                }
            }
        }
        // A mistyped mains first: it is the likeliest slip, whatever else is missing.
        if let Some(m) = self.mains_vrms
            && m.is_finite()
            && m >= 0.0
            && !(0.5 * nominal..=1.5 * nominal).contains(&m)
        {
            return Err(ReadingError::Implausible {
                reading: "mains_vrms",
                value: m,
                low: format!("{:.0} V", 0.5 * nominal),
                high: format!("{:.0} V", 1.5 * nominal),
                hint: "more likely a typo or the meter's range than the mains (a typed \"2k\" \
                       is 2000 V)",
            });
        }
        self.check(supply.mains.hz)?;
        if let (Some(dc), Ok(w)) = (self.dc_v, supply.winding()) {
            let share = supply.rectifier.topology.peak_share();
            let highest_mains = self
                .mains_vrms
                .map_or(nominal * (1.0 + supply.mains.high_pct / 100.0), |m| {
                    m + meter_uncertainty("mains_vrms", m)
                });
            // A sine's crest, the flattest tops only lower it.
            let peak = highest_mains / w.ratio * std::f64::consts::SQRT_2 * share;
            let high = peak + meter_uncertainty("dc_v", peak);
            if dc > high {
                return Err(ReadingError::Implausible {
                    reading: "dc_v",
                    value: dc,
                    low: "0 V".into(),
                    high: format!("{high:.3} V"),
                    hint: "above the winding's peak at the highest mains, which no rail can \
                           pass: check the meter's range, the probe point and the file's \
                           transformer",
                });
            }
        }
        Ok(())
    }
}

/// Diagnoses `supply` from `readings`: expectations, ranked faults, a verdict.
pub fn diagnose(supply: &Supply, readings: &Readings) -> Result<Diagnosis, ReadingError> {
    readings.check_against(supply)?;
    // Three line voltages read at a three-phase rectifier stand for the mains reading.
    let readings = &readings.with_line_mean();
    let solve_err = |e: circuit::CircuitError| ReadingError::Solve(e.to_string());
    let base = Conditions {
        mains_vrms: readings.mains_vrms,
        ..Conditions::default()
    };
    // The worst-case window, at the measured mains when it was read (then only the other
    // tolerances remain).
    let mut tbox = ToleranceBox::of(supply);
    if readings.mains_vrms.is_some() {
        tbox.axes.retain(|a| a.kind != AxisKind::Mains);
    }
    let wc = worst_case_in(supply, &tbox, &base).map_err(solve_err)?;
    let nominal = circuit::solve(supply, &base).map_err(solve_err)?.figures;
    let mut expectations = Vec::new();
    // The mains reading against the supply's stated tolerance: its own term in every
    // hypothesis's misfit.
    let mut mains_term = 0.0;
    // The lines' imbalance against what drives and motors take without derating (about 2 %,
    // common practice): a phase lost upstream reads far beyond it.
    if let Some(pct) = readings.line_imbalance_pct() {
        expectations.push(window(
            "line_imbalance_pct",
            pct,
            0.0,
            0.0,
            LINE_IMBALANCE_PCT,
        ));
    }
    for (k, v) in readings.present() {
        if k == "mains_vrms" {
            let lo = supply.mains.vrms * (1.0 - supply.mains.low_pct / 100.0);
            let hi = supply.mains.vrms * (1.0 + supply.mains.high_pct / 100.0);
            expectations.push(window(k, v, supply.mains.vrms, lo, hi));
            let out = if v < lo {
                lo - v
            } else if v > hi {
                v - hi
            } else {
                0.0
            };
            mains_term += (out / meter_uncertainty(k, v)).powi(2);
            continue;
        }
        // A reading is the figure of the same name, the secondary's AC excepted.
        let figure = match k {
            "secondary_vac" => Some(circuit::Figure::SecondaryRmsV),
            other => circuit::Figure::from_key(other),
        };
        let Some(e) = figure.and_then(|f| wc.extent(f)) else {
            continue;
        };
        let nom = predicted(&nominal, k, &base, supply);
        expectations.push(window(k, v, nom, e.min, e.max));
    }
    // The healthy unit at its best within the stated and assumed tolerances, rather than at
    // nominal.
    let nuisance = nuisance::Nuisance::new(supply, &tbox, &base, &nominal).map_err(solve_err)?;
    let healthy_chi2 = mains_term + nuisance.misfit(readings, &nominal, &base, supply, &[]);
    // A fault's circuit under `cond`, judged with the nuisance free but for what it sets.
    let judged = |fault: Fault, cond: Conditions| match circuit::solve(supply, &cond) {
        Ok(op) => mains_term + nuisance.misfit(readings, &op.figures, &cond, supply, fault.holds()),
        Err(_) => f64::INFINITY,
    };
    let mains_known = readings.mains_vrms.is_some();
    let full_wave = supply.rectifier.topology.is_full_wave();
    let filtered = supply.filter.kind != FilterKind::None;
    let choke = supply.filter.kind.has_choke();
    let three_phase = supply.mains.phases == 3;
    let reactor = supply.line_henries() > 0.0;
    let mut hyps: Vec<Hypothesis> = Vec::new();
    for fault in Fault::ALL {
        let applicable = match fault {
            Fault::CapacitanceLow | Fault::EsrHigh | Fault::CapacitorOpen => filtered,
            // A three-phase leg open is a phase lost to the rail (see PhaseLost).
            Fault::RectifierLegOpen => full_wave && !three_phase,
            Fault::PhaseLost => three_phase,
            Fault::ReactorShorted => reactor,
            Fault::WeakValve => supply.has_valve_rectifier(),
            Fault::MainsLow | Fault::MainsHigh => true,
            Fault::RegulatorDropout => supply.regulator.is_some(),
            Fault::ChokeShorted | Fault::ChokeOpen => choke,
            Fault::Healthy
            | Fault::SecondaryLow
            | Fault::LoadHeavy
            | Fault::LoadLight
            | Fault::NoOutput => true,
        };
        if !applicable {
            continue;
        }
        let (estimate, chi2) = match fault {
            Fault::Healthy => (None, healthy_chi2),
            Fault::NoOutput => {
                let mut chi2 = 0.0;
                for (k, v) in readings.present() {
                    if matches!(k, "dc_v" | "ripple_pp_v" | "ripple_rms_v" | "load_a") {
                        chi2 += (v / meter_uncertainty(k, v).max(0.02)).powi(2);
                    }
                    if k == "ripple_hz" {
                        chi2 += 50.0;
                    }
                    // A blown fuse leaves the winding dead, and a shorted rail blows it or
                    // drags the winding far down: a secondary reading near its working value
                    // argues against both (an open between the rectifier and the rail, a
                    // choke open, leaves it up).
                    if k == "secondary_vac" {
                        let healthy = nominal.secondary_rms_v;
                        let down = (v - 0.5 * healthy).max(0.0);
                        chi2 += (down / sigma(k, v, healthy, false)).powi(2);
                    }
                }
                (None, chi2)
            }
            Fault::RegulatorDropout => {
                let reg = supply.regulator.as_ref().expect("applicable");
                let need = reg.output_v + reg.dropout_v;
                // The rail as read, its valley against what the regulator needs.
                let valley = match (readings.dc_v, readings.ripple_pp_v, readings.ripple_rms_v) {
                    (Some(dc), Some(pp), _) => Some(dc - pp / 2.0),
                    (Some(dc), None, Some(rms)) => Some(dc - rms * 3f64.sqrt()),
                    (Some(dc), None, None) => Some(dc - nominal.ripple_pp_v / 2.0),
                    _ => None,
                };
                match valley {
                    Some(v) if v < need => {
                        // Dropout is a state, not a part: it goes with whichever fault drags
                        // the rail down; as a hypothesis of its own, the readings are taken as
                        // they are, the shortfall against the need scored as its evidence.
                        (
                            Some(("valley_v", v)),
                            (healthy_chi2 - 2.0 * FAULT_PRIOR).max(0.0),
                        )
                    }
                    _ => (None, f64::INFINITY),
                }
            }
            Fault::CapacitanceLow
            | Fault::EsrHigh
            | Fault::CapacitorOpen
            | Fault::RectifierLegOpen
            | Fault::MainsLow
            | Fault::MainsHigh
            | Fault::SecondaryLow
            | Fault::LoadHeavy
            | Fault::LoadLight
            | Fault::ChokeShorted
            | Fault::ChokeOpen
            | Fault::PhaseLost
            | Fault::ReactorShorted
            | Fault::WeakValve => match search_range(fault, supply, mains_known) {
                Some((lo, hi)) if lo < hi => {
                    let (x, chi2) = fit(lo, hi, |x| {
                        judged(fault, conditions(fault, x, &base, supply))
                    });
                    let one = (Some(estimate_of(fault, x, supply, &base)), chi2);
                    if fault == Fault::CapacitanceLow && supply.has_capacitor_pair() {
                        // One capacitor of the pair failing, or both ageing together (they
                        // share the heat and the years): whichever explains the readings.
                        let (x, chi2) = fit(lo, hi, |x| {
                            judged(
                                fault,
                                Conditions {
                                    cap_factor: x,
                                    ..base
                                },
                            )
                        });
                        if chi2 < one.1 {
                            let uf = supply.filter.uf.unwrap_or(0.0)
                                * x
                                * supply.calibration_in_force().cap_factor;
                            (Some(("uf_each", uf)), chi2)
                        } else {
                            one
                        }
                    } else {
                        one
                    }
                }
                Some(_) => continue,
                None => {
                    if matches!(fault, Fault::MainsLow | Fault::MainsHigh) {
                        // The mains was read: these faults are settled by the reading itself.
                        let v = readings.mains_vrms.expect("mains known");
                        let lo = supply.mains.vrms * (1.0 - supply.mains.low_pct / 100.0);
                        let hi = supply.mains.vrms * (1.0 + supply.mains.high_pct / 100.0);
                        let outside = match fault {
                            Fault::MainsLow => v < lo,
                            Fault::MainsHigh => v > hi,
                            Fault::Healthy
                            | Fault::CapacitanceLow
                            | Fault::EsrHigh
                            | Fault::CapacitorOpen
                            | Fault::RectifierLegOpen
                            | Fault::SecondaryLow
                            | Fault::LoadHeavy
                            | Fault::LoadLight
                            | Fault::RegulatorDropout
                            | Fault::NoOutput
                            | Fault::ChokeShorted
                            | Fault::ChokeOpen
                            | Fault::PhaseLost
                            | Fault::ReactorShorted
                            | Fault::WeakValve => false,
                        };
                        if !outside {
                            continue;
                        }
                        let op = circuit::solve(supply, &base).map_err(solve_err)?;
                        (
                            Some(("vrms", v)),
                            nuisance.misfit(readings, &op.figures, &base, supply, fault.holds()),
                        )
                    } else {
                        (None, judged(fault, conditions(fault, 1.0, &base, supply)))
                    }
                }
            },
        };
        let prior = match fault {
            Fault::Healthy => 0.0,
            // Shorted turns are rare beside a low mains, which looks the same from the rail
            // when the mains was not read (common practice).
            Fault::SecondaryLow => FAULT_PRIOR + 1.0,
            Fault::CapacitanceLow
            | Fault::EsrHigh
            | Fault::CapacitorOpen
            | Fault::RectifierLegOpen
            | Fault::MainsLow
            | Fault::MainsHigh
            | Fault::LoadHeavy
            | Fault::LoadLight
            | Fault::RegulatorDropout
            | Fault::NoOutput
            | Fault::ChokeShorted
            | Fault::ChokeOpen
            | Fault::PhaseLost
            | Fault::ReactorShorted
            | Fault::WeakValve => FAULT_PRIOR,
        };
        let penalty = implausibility(fault, estimate, supply);
        hyps.push(Hypothesis {
            fault,
            score: 0.0,
            estimate,
            why: String::new(),
            next_check: fault.next_check(),
            misfit: chi2 + prior + penalty,
        });
    }
    // Scores: likelihoods exp(-misfit/2), normalised.
    let best = hyps.iter().map(|h| h.misfit).fold(f64::INFINITY, f64::min);
    let mut total = 0.0;
    for h in hyps.iter_mut() {
        h.score = if h.misfit.is_finite() {
            (-(h.misfit - best) / 2.0).exp()
        } else {
            0.0
        };
        total += h.score;
    }
    for h in hyps.iter_mut() {
        h.score /= total.max(1e-300);
    }
    hyps.sort_by(|a, b| b.score.total_cmp(&a.score));
    for h in hyps.iter_mut() {
        h.why = reason(h, supply, &expectations);
    }
    let top = &hyps[0];
    let verdict = if top.fault == Fault::Healthy && top.score >= 0.5 {
        "healthy"
    } else if top.fault != Fault::Healthy && top.score >= 0.6 && healthy_chi2 > 9.0 {
        "fault"
    } else {
        "suspect"
    };
    Ok(Diagnosis {
        verdict,
        expectations,
        hypotheses: hyps,
    })
}

fn window(k: &'static str, v: f64, nominal: f64, min: f64, max: f64) -> Expectation {
    let u = meter_uncertainty(k, v);
    let (status, outside_pct) = if v + u < min {
        ("below", 100.0 * (min - v) / min.abs().max(1e-9))
    } else if v - u > max {
        ("above", 100.0 * (v - max) / max.abs().max(1e-9))
    } else {
        ("within", 0.0)
    };
    Expectation {
        reading: k,
        value: v,
        uncertainty: u,
        nominal,
        min,
        max,
        status,
        outside_pct,
    }
}

/// The fitted parameter as the part value a technician would name.
fn estimate_of(fault: Fault, x: f64, supply: &Supply, base: &Conditions) -> (&'static str, f64) {
    match fault {
        Fault::CapacitanceLow => (
            "uf",
            supply.filter.uf.unwrap_or(0.0) * x * supply.calibration_in_force().cap_factor,
        ),
        Fault::EsrHigh => ("esr_ohms", x),
        Fault::MainsLow | Fault::MainsHigh => {
            ("vrms", base.mains_vrms.unwrap_or(supply.mains.vrms) * x)
        }
        Fault::SecondaryLow => ("ratio", supply.winding().map(|w| w.ratio * x).unwrap_or(x)),
        Fault::LoadHeavy | Fault::LoadLight => {
            let cond = conditions(fault, x, base, supply);
            let amps = circuit::solve(supply, &cond)
                .map(|o| o.figures.load_a)
                .unwrap_or(0.0);
            ("load_a", amps)
        }
        Fault::WeakValve => (
            "plate_drop_v",
            match supply.rectifier_diode() {
                Ok(crate::circuit::diode::DiodeParams::Valve { drop_v, .. }) => drop_v * x,
                _ => x,
            },
        ),
        Fault::Healthy
        | Fault::CapacitorOpen
        | Fault::RectifierLegOpen
        | Fault::RegulatorDropout
        | Fault::NoOutput
        | Fault::ChokeShorted
        | Fault::ChokeOpen
        | Fault::PhaseLost
        | Fault::ReactorShorted => ("", x),
    }
}

/// Extra cost for a fitted value no real part takes: a capacitor at under 2 % of its value is
/// as good as open, an ESR above 50 ohms is open too, mains under half is a different fault.
fn implausibility(fault: Fault, estimate: Option<(&'static str, f64)>, supply: &Supply) -> f64 {
    let Some((_, v)) = estimate else { return 0.0 };
    match fault {
        Fault::CapacitanceLow if v < 0.02 * supply.filter.uf.unwrap_or(1.0) => 3.0,
        Fault::EsrHigh if v > 50.0 => 3.0,
        Fault::MainsLow if v < 0.5 * supply.mains.vrms => 3.0,
        // Guards aside, no penalty; listed so a new fault is thought about here too.
        Fault::Healthy
        | Fault::CapacitanceLow
        | Fault::EsrHigh
        | Fault::CapacitorOpen
        | Fault::RectifierLegOpen
        | Fault::MainsLow
        | Fault::MainsHigh
        | Fault::SecondaryLow
        | Fault::LoadHeavy
        | Fault::LoadLight
        | Fault::RegulatorDropout
        | Fault::NoOutput
        | Fault::ChokeShorted
        | Fault::ChokeOpen
        | Fault::PhaseLost
        | Fault::ReactorShorted
        | Fault::WeakValve => 0.0,
    }
}

/// What a shorted choke does to the rail, for the filter it sits in.
pub fn choke_shorted_words(supply: &Supply) -> &'static str {
    match supply.filter.kind {
        FilterKind::Lc => {
            "the choke's inductance gone (turns shorted or bridged): the rail rises towards the \
             peak with a capacitor input's ripple"
        }
        FilterKind::Clc => {
            "the choke's inductance gone (turns shorted or bridged): the pi filter works as a \
             CRC with the choke's resistance, the output's ripple much larger"
        }
        FilterKind::None | FilterKind::Capacitor | FilterKind::Crc => "this supply has no choke",
    }
}

/// What an open choke does to the rail.
pub const CHOKE_OPEN_WORDS: &str = "the choke open: nothing reaches the output capacitor, the rail is dead while the mains and \
     the secondary read normal";

fn reason(h: &Hypothesis, supply: &Supply, ex: &[Expectation]) -> String {
    let off: Vec<String> = ex
        .iter()
        .filter(|e| e.status != "within")
        .map(|e| {
            format!(
                "{} {} {} {:.3}..{:.3}",
                e.reading, e.value, e.status, e.min, e.max
            )
        })
        .collect();
    let off = if off.is_empty() {
        "every reading is within its worst-case window".to_string()
    } else {
        off.join("; ")
    };
    match (h.fault, h.estimate) {
        (Fault::Healthy, _) => format!("fits the supply within its tolerances: {off}"),
        (Fault::CapacitanceLow, Some(("uf_each", uf))) => format!(
            "the filter capacitors behave like about {:.0} uF each of their {:.0} uF ({off})",
            uf,
            supply.filter.uf.unwrap_or(0.0)
        ),
        (Fault::CapacitanceLow, Some((_, uf))) => format!(
            "the {} behaves like about {:.0} uF of its {:.0} uF ({off})",
            supply.reservoir_words(),
            uf,
            supply.filter.uf.unwrap_or(0.0)
        ),
        (Fault::EsrHigh, Some((_, r))) => format!(
            "an ESR of about {r:.2} ohm (stated {:.2}) in the {} would explain it ({off})",
            supply.filter.esr(),
            supply.reservoir_words()
        ),
        (Fault::CapacitorOpen, _) if supply.filter.kind == FilterKind::Crc => {
            format!(
                "the rail looks filtered by the CRC's resistor and second capacitor alone ({off})"
            )
        }
        (Fault::CapacitorOpen, _) => format!("the rail looks unfiltered ({off})"),
        (Fault::RectifierLegOpen, _) => {
            format!("one leg missing: ripple at the line frequency, half the pulses ({off})")
        }
        (Fault::MainsLow | Fault::MainsHigh, Some((_, v))) => {
            format!(
                "mains of about {v:.0} V against {:.0} V nominal ({off})",
                supply.mains.vrms
            )
        }
        (Fault::SecondaryLow, Some((_, r))) => format!(
            "the winding behaves like a {r:.2}:1 ratio (stated {:.2}:1): shorted turns or a wrong tap ({off})",
            supply.winding().map(|w| w.ratio).unwrap_or(0.0)
        ),
        (Fault::LoadHeavy | Fault::LoadLight, Some((_, a))) => {
            format!("a load of about {a:.3} A would explain it ({off})")
        }
        (Fault::RegulatorDropout, Some((_, v))) => {
            let need = supply
                .regulator
                .as_ref()
                .map_or(0.0, |r| r.output_v + r.dropout_v);
            format!("the rail's valley {v:.2} V is under the {need:.2} V the regulator needs")
        }
        (Fault::NoOutput, _) => format!("the rail is dead ({off})"),
        (Fault::ChokeShorted, _) => format!("{} ({off})", choke_shorted_words(supply)),
        (Fault::ChokeOpen, _) => format!("{} ({off})", CHOKE_OPEN_WORDS),
        (Fault::PhaseLost, _) => format!("{} ({off})", PHASE_LOST_WORDS),
        (Fault::ReactorShorted, _) => format!("{} ({off})", REACTOR_SHORTED_WORDS),
        (Fault::WeakValve, Some((_, v))) => format!(
            "the valve behaves as if it dropped about {v:.0} V at its data sheet's current: \
             its emission has fallen ({off})"
        ),
        _ => off,
    }
}

/// What a lost phase does to a six-pulse rail, in words.
pub const PHASE_LOST_WORDS: &str =
    "two phases left feed the rail: it ripples at twice the line frequency, deeper and lower";
/// What a shorted line reactor does, in words.
pub const REACTOR_SHORTED_WORDS: &str =
    "the reactor's inductance gone: the rail higher, the line's current peakier";

/// The diagnosis as the command line's one-line JSON: name, verdict, readings with their
/// windows, hypotheses best first with scores summing to 1.
pub fn json(supply: &Supply, d: &Diagnosis) -> serde_json::Value {
    let hyps: Vec<serde_json::Value> = d
        .hypotheses
        .iter()
        .map(|h| {
            let estimate = match h.estimate {
                Some((k, v)) if !k.is_empty() => serde_json::json!({ k: v }),
                _ => serde_json::json!({}),
            };
            serde_json::json!({"fault": h.fault, "score": h.score, "estimate": estimate,
                "why": h.why, "next_check": h.next_check})
        })
        .collect();
    // The part more likely than not at fault, or null.
    let likely_part = d.likely_part().map(|p| {
        let faults: Vec<serde_json::Value> = p
            .faults
            .iter()
            .map(|(f, s)| serde_json::json!({"fault": f, "score": s}))
            .collect();
        serde_json::json!({"part": p.part, "score": p.score, "faults": faults})
    });
    serde_json::json!({"name": supply.name, "verdict": d.verdict, "readings": d.expectations,
        "likely_part": likely_part, "hypotheses": hyps})
}

/// A visit recording `readings` and the verdict of `d`, dated `date` (YYYY-MM-DD).
pub fn visit_of(readings: &Readings, d: &Diagnosis, date: &str) -> crate::visit::Visit {
    let top = &d.hypotheses[0];
    crate::visit::Visit {
        date: date
            .parse()
            .unwrap_or_else(|_| "1970-01-01".parse().expect("a date")),
        technician: String::new(),
        readings: *readings,
        notes: String::new(),
        replaced: Vec::new(),
        baseline: false,
        diagnosis: Some(crate::visit::VisitDiagnosis {
            verdict: d.verdict.to_string(),
            fault: top.fault.key().to_string(),
            score: top.score,
            estimate: top
                .estimate
                .filter(|(k, _)| !k.is_empty())
                .map(|(k, v)| format!("{k} = {v:.4}")),
        }),
    }
}
