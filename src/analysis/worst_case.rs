//! The worst case over the stated tolerances: every corner of the tolerance box plus points
//! along each axis, each a full steady-state solve, and for each figure the lowest and highest
//! value with the point that gives it, in words.

use crate::circuit::diode::DiodeParams;
use crate::circuit::winding::{ASSUMED_OVERSIZE, WARM_WINDING_FACTOR, WindingModel, WindingSource};
use crate::circuit::{self, CircuitError, Conditions, Figures, LoadOverride, Operating};
use crate::supply::{ASSUMED_CREST_LOW, Supply};
use crate::units::{format_number, format_uf};
use serde::Serialize;
use std::sync::atomic::{AtomicUsize, Ordering};

/// One axis of the tolerance box: a factor (or a load) from its low end to its high end.
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    pub kind: AxisKind,
    /// The ends of the axis as factors on the nominal (mains, capacitance, drop, ratio) or as
    /// the load in amps or ohms.
    pub low: f64,
    pub high: f64,
    pub nominal: f64,
    /// Why the range was assumed, in words, when the file does not state it; None for a
    /// stated tolerance.
    pub assumed: Option<String>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AxisKind {
    Mains,
    Capacitance,
    /// Constant-current load, amps.
    LoadAmps,
    /// Resistive load, ohms.
    LoadOhms,
    DiodeDrop,
    Ratio,
    /// A factor on the windings' resistance.
    Winding,
    /// The mains crest factor itself (peak over RMS).
    Crest,
    /// A factor on a choke's resistance (its copper warming).
    ChokeOhms,
    /// A factor on the transformer's stated leakage inductance.
    Leakage,
}

/// Circuit evaluations a whole worst case may spend (every point of its box): about 0.7 s at
/// the stiff formula's usual 4,000 a millisecond, which with the nominal and stress solves
/// keeps a report near 1 s (the slowest of 10,000 random supplies took 0.6 s). An ordinary
/// supply spends under a twentieth of it.
pub const WORST_CASE_EVALUATIONS: usize = 2_800_000;

/// A range assumed for something the file leaves out.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Assumed {
    /// Which quantity: its axis's key.
    pub what: &'static str,
    /// The range's ends and its nominal, in the axis's own terms (a factor, ohms or a crest).
    pub low: f64,
    pub nominal: f64,
    pub high: f64,
    /// The range in words and why it was assumed.
    pub why: String,
}

impl AxisKind {
    /// A name for the axis in JSON: what its values are.
    pub fn key(self) -> &'static str {
        match self {
            AxisKind::Mains => "mains_factor",
            AxisKind::Capacitance => "capacitance_factor",
            AxisKind::LoadAmps => "load_a",
            AxisKind::LoadOhms => "load_ohms",
            AxisKind::DiodeDrop => "diode_drop_factor",
            AxisKind::Ratio => "ratio_factor",
            AxisKind::Winding => "winding_factor",
            AxisKind::Crest => "crest",
            AxisKind::ChokeOhms => "choke_ohms_factor",
            AxisKind::Leakage => "leakage_factor",
        }
    }
}

/// The share of the winding's resistance again that a small transformer's leakage inductance
/// may add to the drop under capacitor-input pulses; not modelled yet, so allowed for as extra
/// resistance (practice: the leakage reactance of small laminated units is a fraction of the
/// winding resistance).
pub const LEAKAGE_ALLOWANCE: f64 = 0.5;

/// The diode drop's spread assumed when the file states none, percent either way: a junction's
/// saturation current varies about twofold batch to batch (practice), which moves a silicon
/// rectifier's drop by about 4 %.
pub const ASSUMED_DROP_SPREAD_PCT: f64 = 5.0;
/// A rectifier valve's plate drop, below and above its data-sheet figure, percent, when the
/// file states no spread: new valves of one type differ in emission by some tens of percent,
/// and a valve's emission falls as it wears, so the range reaches further up (a judgement
/// from common practice, not a published figure; the diagnosis names a weak valve beyond it).
pub const ASSUMED_VALVE_DROP_SPREAD_PCT: (f64, f64) = (10.0, 30.0);

/// A resistive load's spread assumed when no range is stated, percent either way (the E24
/// resistors' +-5 %, practice).
pub const ASSUMED_LOAD_PCT: f64 = 5.0;

/// A calibrated winding's resistance may differ from the baseline's by this factor either way:
/// copper's +0.39 %/degC over the 25 degC a winding's temperature varies between a cold start
/// and a warm afternoon (practice), about 10 %.
pub const CALIBRATED_WINDING_SPREAD: f64 = 1.1;

/// A calibrated mains crest may differ by this much at another visit: a building's other
/// rectifier loads come and go through the day (practice; from memory, site surveys show
/// crest factors moving by a few hundredths).
pub const CALIBRATED_CREST_SPREAD: f64 = 0.03;

/// A calibrated capacitance's healthy band, percent below and above the fitted value: the fit's
/// own uncertainty (a scope's ripple reading is good to a few percent) and slow wear since the
/// baseline. Below it the capacitor has lost a tenth since it was known good, which is a
/// fault's beginning (an electrolytic's end of life is usually put at -20 %, practice).
pub const CALIBRATED_CAP_LOW_PCT: f64 = 10.0;
pub const CALIBRATED_CAP_HIGH_PCT: f64 = 5.0;

/// A stated leakage inductance's spread assumed, percent either way. From memory, not looked
/// up: a nameplate's impedance voltage is guaranteed to about +-10 % (power transformer
/// standards give +-7.5 to +-10 %), and the leakage, the reactive part left after the copper
/// is taken out, moves by more than the whole; a short-circuit test at a few percent of the
/// rated voltage reads it no better. 20 % is a judgement, not a published figure.
pub const ASSUMED_LEAKAGE_SPREAD_PCT: f64 = 20.0;

/// The tolerances a worst case spans, exactly as the supply file states them.
#[derive(Debug, Clone, PartialEq)]
pub struct ToleranceBox {
    pub axes: Vec<Axis>,
}

impl ToleranceBox {
    /// The box of `supply`: mains and capacitance always (with their defaults); load range,
    /// diode spread, capacitor ageing and ratio spread when the file states them.
    pub fn of(supply: &Supply) -> ToleranceBox {
        let mut axes = vec![Axis::percent(
            AxisKind::Mains,
            supply.mains.low_pct,
            supply.mains.high_pct,
        )];
        let f = &supply.filter;
        let cal = supply.calibration_in_force();
        let on = supply
            .calibration
            .as_ref()
            .map(|c| c.visit.to_string())
            .unwrap_or_default();
        if f.kind != crate::supply::FilterKind::None {
            let aged = f.aged_pct.unwrap_or(0.0);
            let mut cap = if cal.capacitance {
                // The capacitor's own value is known now: what is left is the fit's
                // uncertainty and the wear since the baseline.
                let mut a = Axis::percent(
                    AxisKind::Capacitance,
                    CALIBRATED_CAP_LOW_PCT,
                    CALIBRATED_CAP_HIGH_PCT,
                );
                a.assumed = Some(format!(
                    "capacitance calibrated on {on}: {} effective ({:.2} of the label), \
                     -{CALIBRATED_CAP_LOW_PCT:.0} % / +{CALIBRATED_CAP_HIGH_PCT:.0} % allowed \
                     for the fit and the wear since",
                    format_uf(f.uf.unwrap_or(0.0) * cal.cap_factor),
                    cal.cap_factor
                ));
                a
            } else {
                Axis::percent(AxisKind::Capacitance, f.low_pct + aged, f.high_pct)
            };
            // A capacitor never goes to nothing within its tolerance, however the file reads.
            cap.low = cap.low.max(0.01);
            axes.push(cap);
        }
        let l = &supply.load;
        if let Some(a) = l.amps {
            axes.extend(Axis::range(AxisKind::LoadAmps, a, l.min_amps, l.max_amps));
        }
        if let Some(r) = l.ohms {
            axes.extend(Axis::range(AxisKind::LoadOhms, r, l.min_ohms, l.max_ohms));
        }
        if let (Some(r), None, None) = (l.ohms, l.min_ohms, l.max_ohms) {
            let mut a = Axis::percent(AxisKind::LoadOhms, ASSUMED_LOAD_PCT, ASSUMED_LOAD_PCT);
            (a.low, a.high, a.nominal) = (r * a.low, r * a.high, r);
            a.assumed = Some(format!(
                "load resistance range not stated: {} ohm +-{ASSUMED_LOAD_PCT:.0} % assumed \
                 (a resistor's usual tolerance)",
                format_number(r)
            ));
            axes.push(a);
        }
        let ideal_diode = matches!(
            supply.rectifier_diode(),
            Ok(DiodeParams::Fixed { drop_v, ohms: _ }) if drop_v == 0.0
        );
        let valve = supply.has_valve_rectifier();
        match supply.rectifier.drop_spread_pct {
            Some(p) => axes.push(Axis::percent(AxisKind::DiodeDrop, p, p)),
            None if valve => {
                let (low, high) = ASSUMED_VALVE_DROP_SPREAD_PCT;
                let mut a = Axis::percent(AxisKind::DiodeDrop, low, high);
                a.assumed = Some(format!(
                    "valve drop spread not stated: -{low:.0} % / +{high:.0} % assumed (valves \
                     of a type differ in emission, and a worn one drops more)"
                ));
                axes.push(a);
            }
            None if !ideal_diode => {
                let p = ASSUMED_DROP_SPREAD_PCT;
                let mut a = Axis::percent(AxisKind::DiodeDrop, p, p);
                a.assumed = Some(format!(
                    "diode drop spread not stated: +-{p:.0} % assumed (junctions differ batch \
                     to batch)"
                ));
                axes.push(a);
            }
            None => {}
        }
        if let Some(p) = supply.transformer.ratio_pct {
            axes.push(Axis::percent(AxisKind::Ratio, p, p));
        }
        if let Ok(w) = supply.winding()
            && (w.secondary_ohms > 0.0 || w.primary_ohms > 0.0)
        {
            if cal.winding {
                let t = CALIBRATED_WINDING_SPREAD;
                axes.push(Axis {
                    kind: AxisKind::Winding,
                    low: 1.0 / t,
                    high: t,
                    nominal: 1.0,
                    assumed: Some(format!(
                        "winding resistance calibrated on {on}: {:.2} times the file's, \
                         -{:.0} % / +{:.0} % allowed for its temperature on the day",
                        cal.winding_factor,
                        (1.0 - 1.0 / t) * 100.0,
                        (t - 1.0) * 100.0
                    )),
                });
            } else {
                axes.push(winding_axis(&w));
            }
        }
        // A choke's copper warms as a winding's does (copper +0.39 %/degC, up to 40 degC):
        // upward only, the stated value being the cold one an ohmmeter reads.
        if f.kind.has_choke()
            && let Some(r) = f.choke_ohms.filter(|r| *r > 0.0)
        {
            axes.push(Axis {
                kind: AxisKind::ChokeOhms,
                low: 1.0,
                high: WARM_WINDING_FACTOR,
                nominal: 1.0,
                assumed: Some(format!(
                    "choke resistance {} ohm as measured cold: up to {:.0} % more assumed for a \
                     warm choke (copper +0.39 %/degC, 40 degC)",
                    format_number(round3(r)),
                    (WARM_WINDING_FACTOR - 1.0) * 100.0
                )),
            });
        }
        if let Ok(w) = supply.winding()
            && w.leakage_h > 0.0
        {
            let p = ASSUMED_LEAKAGE_SPREAD_PCT;
            let mut a = Axis::percent(AxisKind::Leakage, p, p);
            a.assumed = Some(format!(
                "stated leakage inductance {} mH: +-{p:.0} % assumed (a nameplate impedance's \
                 tolerance is about +-10 %, the leakage's share of it spreads further; from \
                 memory)",
                format_number(round3(w.leakage_h * 1e3))
            ));
            axes.push(a);
        }
        if let (None, Some(c)) = (supply.mains.crest, cal.crest) {
            axes.push(Axis {
                kind: AxisKind::Crest,
                low: (c - CALIBRATED_CREST_SPREAD).max(1.1),
                high: (c + CALIBRATED_CREST_SPREAD).min(std::f64::consts::SQRT_2),
                nominal: c,
                assumed: Some(format!(
                    "mains crest calibrated on {on}: {c:.3}, +-{CALIBRATED_CREST_SPREAD} allowed \
                     (the building's other loads change through the day)"
                )),
            });
        } else if supply.mains.crest.is_none() && supply.mains.phases == 1 {
            // Three phases are left a sine unless stated: the model flattens each phase's
            // tops, which raises the line-to-line peak a six-pulse bridge charges to, while
            // on a real three-phase line the rectifiers flatten the line-to-line peaks
            // themselves (a stated crest is taken as given, per phase).
            axes.push(Axis {
                kind: AxisKind::Crest,
                low: ASSUMED_CREST_LOW,
                high: std::f64::consts::SQRT_2,
                nominal: std::f64::consts::SQRT_2,
                assumed: Some(format!(
                    "mains crest not stated: a sine (1.414) down to {ASSUMED_CREST_LOW} assumed \
                     (building mains flattened by other rectifier loads)"
                )),
            });
        }
        ToleranceBox { axes }
    }

    /// The box with only the tolerances the file states (no assumed ranges).
    pub fn stated(supply: &Supply) -> ToleranceBox {
        let mut b = ToleranceBox::of(supply);
        b.axes.retain(|a| a.assumed.is_none());
        b
    }

    /// The assumed ranges, each with what was assumed and why.
    pub fn assumed(&self) -> Vec<Assumed> {
        self.axes
            .iter()
            .filter_map(|a| {
                Some(Assumed {
                    what: a.kind.key(),
                    low: a.low,
                    nominal: a.nominal,
                    high: a.high,
                    why: a.assumed.clone()?,
                })
            })
            .collect()
    }

    /// The tolerances in words, for the report ("mains -10 % / +10 %", ...).
    pub fn describe(&self) -> Vec<String> {
        self.axes
            .iter()
            .map(|a| match a.kind {
                AxisKind::Mains => format!("mains {}", pct_span(a)),
                AxisKind::Capacitance => format!("capacitance {}", pct_span(a)),
                AxisKind::DiodeDrop => format!("diode drop {}", pct_span(a)),
                AxisKind::Ratio => format!("turns ratio {}", pct_span(a)),
                AxisKind::LoadAmps => format!(
                    "load {} A to {} A",
                    format_number(a.low),
                    format_number(a.high)
                ),
                AxisKind::LoadOhms => format!(
                    "load {} ohm to {} ohm",
                    format_number(a.low),
                    format_number(a.high)
                ),
                AxisKind::Winding => format!("winding resistance {}", pct_span(a)),
                AxisKind::Crest => format!("mains crest {:.3} to {:.3}", a.low, a.high),
                AxisKind::ChokeOhms => format!("choke resistance {}", pct_span(a)),
                AxisKind::Leakage => format!("leakage inductance {}", pct_span(a)),
            })
            .collect()
    }
}

fn pct_span(a: &Axis) -> String {
    format!(
        "{:+.0} % / {:+.0} %",
        (a.low - 1.0) * 100.0,
        (a.high - 1.0) * 100.0
    )
}

/// A point of the box: where each axis stands, from 0 (its low end) to 1 (its high end).
#[derive(Debug, Clone, PartialEq)]
pub struct Corner {
    pub positions: Vec<f64>,
}

impl Corner {
    /// The departures from the supply this point means.
    pub fn conditions(&self, tbox: &ToleranceBox) -> Conditions {
        let mut c = Conditions::default();
        for (axis, &s) in tbox.axes.iter().zip(&self.positions) {
            axis.set(axis.value_at(s), &mut c);
        }
        c
    }

    /// The point in a technician's words: "mains -10 %, capacitor -20 %, load heaviest";
    /// axes at nominal are left out.
    pub fn describe(&self, tbox: &ToleranceBox) -> String {
        let mut parts = Vec::new();
        for (axis, &s) in tbox.axes.iter().zip(&self.positions) {
            let v = axis.value_at(s);
            if (v - axis.nominal).abs() <= 1e-12 * axis.nominal.abs().max(1.0) {
                continue;
            }
            let pct = (v / axis.nominal - 1.0) * 100.0;
            parts.push(match axis.kind {
                AxisKind::Mains => format!("mains {pct:+.0} %"),
                AxisKind::Capacitance => format!("capacitor {pct:+.0} %"),
                AxisKind::DiodeDrop => format!("diode drop {pct:+.0} %"),
                AxisKind::Ratio => format!("turns ratio {pct:+.0} %"),
                AxisKind::Winding => format!("winding {pct:+.0} %"),
                AxisKind::Crest => format!("crest {v:.2}"),
                AxisKind::ChokeOhms => format!("choke copper {pct:+.0} %"),
                AxisKind::Leakage => format!("leakage {pct:+.0} %"),
                AxisKind::LoadAmps => match s {
                    s if s >= 1.0 => "load heaviest".to_string(),
                    s if s <= 0.0 => "load lightest".to_string(),
                    _ => format!("load {v:.3} A"),
                },
                AxisKind::LoadOhms => match s {
                    s if s >= 1.0 => "load lightest".to_string(),
                    s if s <= 0.0 => "load heaviest".to_string(),
                    _ => format!("load {v:.1} ohm"),
                },
            });
        }
        if parts.is_empty() {
            "nominal".to_string()
        } else {
            parts.join(", ")
        }
    }
}

impl Axis {
    /// Sets the departure this axis stands for, at value `v`, in `c`.
    pub fn set(&self, v: f64, c: &mut Conditions) {
        match self.kind {
            AxisKind::Mains => c.mains_factor = v,
            AxisKind::Capacitance => c.cap_factor = v,
            AxisKind::LoadAmps => c.load = Some(LoadOverride::Amps(v)),
            AxisKind::LoadOhms => c.load = Some(LoadOverride::Ohms(v)),
            AxisKind::DiodeDrop => c.drop_factor = v,
            // A larger ratio is a lower secondary.
            AxisKind::Ratio => c.ratio_factor = v,
            AxisKind::Winding => c.winding_factor = v,
            AxisKind::Crest => c.crest = Some(v),
            AxisKind::ChokeOhms => c.choke_factor = v,
            AxisKind::Leakage => c.leakage_factor = v,
        }
    }

    /// A factor on the nominal from `low_pct` below to `high_pct` above it.
    fn percent(kind: AxisKind, low_pct: f64, high_pct: f64) -> Axis {
        Axis {
            kind,
            low: 1.0 - low_pct / 100.0,
            high: 1.0 + high_pct / 100.0,
            nominal: 1.0,
            assumed: None,
        }
    }

    /// A stated range around `nominal` (amps or ohms), an end not stated standing at the
    /// nominal; None when neither end is stated.
    fn range(kind: AxisKind, nominal: f64, min: Option<f64>, max: Option<f64>) -> Option<Axis> {
        (min.is_some() || max.is_some()).then(|| Axis {
            kind,
            low: min.unwrap_or(nominal).min(nominal),
            high: max.unwrap_or(nominal).max(nominal),
            nominal,
            assumed: None,
        })
    }

    /// The axis value at position `s` (0 = low end, 1 = high end); the nominal sits wherever
    /// it falls, so the interior points are spread on each side of it.
    pub fn value_at(&self, s: f64) -> f64 {
        if s <= 0.5 {
            self.low + (self.nominal - self.low) * (s / 0.5)
        } else {
            self.nominal + (self.high - self.nominal) * ((s - 0.5) / 0.5)
        }
    }
}

/// The points a worst case solves: every corner, and along each axis its quarter points with
/// the other axes at nominal (a figure that is not monotonic along an axis peaks inside).
/// With four axes or fewer, the whole three-level grid (low, nominal, high on every axis) as
/// well, since a figure such as the diode's peak current can bottom out between corners.
pub fn points(tbox: &ToleranceBox) -> Vec<Corner> {
    let k = tbox.axes.len();
    let mut out = vec![Corner {
        positions: vec![0.5; k],
    }];
    let levels: &[f64] = if k <= 4 {
        &[0.0, 0.5, 1.0]
    } else {
        &[0.0, 1.0]
    };
    let count = levels.len().pow(k as u32);
    for mut index in 0..count {
        let positions: Vec<f64> = (0..k)
            .map(|_| {
                let level = levels[index % levels.len()];
                index /= levels.len();
                level
            })
            .collect();
        if positions.iter().all(|&p| p == 0.5) {
            continue;
        }
        out.push(Corner { positions });
    }
    for i in 0..k {
        for s in [0.25, 0.75] {
            let mut positions = vec![0.5; k];
            positions[i] = s;
            out.push(Corner { positions });
        }
        if levels.len() == 2 {
            for s in [0.0, 1.0] {
                let mut positions = vec![0.5; k];
                positions[i] = s;
                out.push(Corner { positions });
            }
        }
    }
    out
}

/// The lowest and highest value of one figure over the box, with where each occurs.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Extent {
    pub min: f64,
    pub max: f64,
    pub min_at: String,
    pub max_at: String,
}

/// The worst case of a supply: each figure's extent, and the figures at every point solved.
#[derive(Debug, Clone, PartialEq)]
pub struct WorstCase {
    pub tolerances: Vec<String>,
    /// The ranges assumed for what the file leaves out, each with why.
    pub assumed: Vec<Assumed>,
    pub extents: Vec<(&'static str, Extent)>,
    /// Each point solved, its words and its figures.
    pub solved: Vec<(String, Figures)>,
    /// The conditions of each point, in the same order.
    pub conditions: Vec<Conditions>,
    /// How many points the solver could only settle with a stand-in model (a six-pulse
    /// bridge's phases lumped: see [`crate::circuit::Operating::approximations`]).
    pub approximated: usize,
}

impl WorstCase {
    /// The conditions of the point where the rail dips lowest (the low corner).
    pub fn low_corner(&self) -> Option<(&str, Conditions)> {
        let (i, _) = self
            .solved
            .iter()
            .enumerate()
            .min_by(|a, b| a.1.1.min_v.total_cmp(&b.1.1.min_v))?;
        Some((self.solved[i].0.as_str(), self.conditions[i]))
    }

    /// The extent of `figure`.
    pub fn extent(&self, figure: crate::circuit::Figure) -> Option<&Extent> {
        self.extents
            .iter()
            .find(|(n, _)| *n == figure.key())
            .map(|(_, e)| e)
    }
}

/// Solves `supply` at every point of its tolerance box (volts, amps as in [`Figures`]).
pub fn worst_case(supply: &Supply) -> Result<WorstCase, CircuitError> {
    let tbox = ToleranceBox::of(supply);
    worst_case_in(supply, &tbox, &Conditions::default())
}

/// Solves `supply` at each of `conditions`, in their order, shared among the machine's cores
/// (the points are independent; a six-pulse drive bus's 53 took 60 ms on one core).
/// A bound on the whole worst case, not only on each solve: once the solves together spend
/// more than [`WORST_CASE_EVALUATIONS`], the rest are dropped and the supply is refused with
/// its values rather than kept for seconds (the same refusal whatever the order the points
/// finish in, since only the total counts).
fn solve_all(supply: &Supply, conditions: &[Conditions]) -> Result<Vec<Operating>, CircuitError> {
    let spent = AtomicUsize::new(0);
    let over = || CircuitError::WorstCaseRefused {
        evaluations: WORST_CASE_EVALUATIONS,
        values: circuit::time_constant_words(supply),
    };
    let solve_one = |cond: &Conditions| -> Result<Operating, CircuitError> {
        if spent.load(Ordering::Relaxed) > WORST_CASE_EVALUATIONS {
            return Err(over());
        }
        let op = circuit::solve(supply, cond)?;
        if spent.fetch_add(op.steady.evaluations, Ordering::Relaxed) + op.steady.evaluations
            > WORST_CASE_EVALUATIONS
        {
            return Err(over());
        }
        Ok(op)
    };
    let threads = std::thread::available_parallelism()
        .map_or(1, |n| n.get())
        .min(conditions.len().div_ceil(4))
        .max(1);
    let results: Vec<Result<Operating, CircuitError>> = if threads == 1 {
        conditions.iter().map(solve_one).collect()
    } else {
        // Each thread takes the next unsolved point: the dear points (corners with the most
        // ringing) come in runs, which fixed shares would leave to one thread.
        let next = AtomicUsize::new(0);
        let mut shares: Vec<Vec<(usize, Result<Operating, CircuitError>)>> =
            std::thread::scope(|scope| {
                let handles: Vec<_> = (0..threads)
                    .map(|_| {
                        let (solve_one, next) = (&solve_one, &next);
                        scope.spawn(move || {
                            let mut mine = Vec::new();
                            loop {
                                let i = next.fetch_add(1, Ordering::Relaxed);
                                let Some(cond) = conditions.get(i) else { break };
                                mine.push((i, solve_one(cond)));
                            }
                            mine
                        })
                    })
                    .collect();
                handles
                    .into_iter()
                    .map(|h| h.join().expect("a worst-case solve panicked"))
                    .collect()
            });
        let mut all: Vec<(usize, Result<Operating, CircuitError>)> =
            shares.drain(..).flatten().collect();
        all.sort_by_key(|(i, _)| *i);
        all.into_iter().map(|(_, r)| r).collect()
    };
    // The first point's own error comes first, as a sequential run would give it; a budget
    // overrun anywhere refuses the whole box.
    if spent.load(Ordering::Relaxed) > WORST_CASE_EVALUATIONS {
        return Err(over());
    }
    results.into_iter().collect()
}

/// As [`worst_case`] over `tbox`, each point's conditions laid over `base` (a reading of the
/// mains, say).
pub fn worst_case_in(
    supply: &Supply,
    tbox: &ToleranceBox,
    base: &Conditions,
) -> Result<WorstCase, CircuitError> {
    // A six-pulse bridge whose phases' own currents are dear to settle (a reactor and a
    // large DC choke ringing slower than the mains: tens of thousands of evaluations a
    // point) would spend the whole budget on its box: its points are then solved with the
    // phases lumped, each counted as approximated (the nominal keeps the full model). The
    // ring is named for itself: the nominal's own work no longer tells it since the final
    // pass covers a sixth of the period (the reactor-and-choke reference bus's nominal took
    // 6,059 evaluations where it had taken 29,040, while its 157 points still took 3.0
    // million, over the budget).
    let lump = circuit::network(supply, base).is_ok_and(|n| {
        n.is_coupled_bridge()
            && (n.dc_link_rings_below_line()
                || circuit::solve(supply, base)
                    .is_ok_and(|op| op.steady.evaluations > WORST_CASE_EVALUATIONS / 100))
    });
    let points = points(tbox);
    let conditions: Vec<Conditions> = points
        .iter()
        .map(|p| {
            let mut cond = p.conditions(tbox);
            cond.lumped_phases = lump;
            cond.mains_vrms = base.mains_vrms;
            cond.leg_open = base.leg_open;
            cond.capacitor_open = base.capacitor_open;
            if base.esr_ohms.is_some() {
                cond.esr_ohms = base.esr_ohms;
            }
            cond
        })
        .collect();
    let solves = solve_all(supply, &conditions)?;
    let mut approximated = 0;
    let mut solved = Vec::with_capacity(points.len());
    for (p, op) in points.iter().zip(solves) {
        if lump || !op.approximations.is_empty() {
            approximated += 1;
        }
        solved.push((p.describe(tbox), op.figures));
    }
    let names = solved[0].1.named().map(|(n, _)| n);
    let mut extents = Vec::new();
    for (i, name) in names.iter().enumerate() {
        let mut ext: Option<Extent> = None;
        for (words, f) in &solved {
            let Some(v) = f.named()[i].1 else { continue };
            let e = ext.get_or_insert_with(|| Extent {
                min: v,
                max: v,
                min_at: words.clone(),
                max_at: words.clone(),
            });
            if v < e.min {
                e.min = v;
                e.min_at = words.clone();
            }
            if v > e.max {
                e.max = v;
                e.max_at = words.clone();
            }
        }
        if let Some(e) = ext {
            extents.push((*name, e));
        }
    }
    Ok(WorstCase {
        tolerances: tbox.describe(),
        assumed: tbox.assumed(),
        extents,
        solved,
        conditions,
        approximated,
    })
}

/// The stress point for voltage ratings: high mains, the secondary at its highest, the diode
/// drop at its lowest, and the lightest stated load, or no load at all when none is stated.
/// Returns the figures and whether the no-load assumption was made.
pub fn voltage_stress(supply: &Supply) -> Result<(Figures, bool), CircuitError> {
    let tbox = ToleranceBox::of(supply);
    let mut cond = Conditions::default();
    let mut assumed_no_load = true;
    for axis in &tbox.axes {
        // An assumed load spread is no stated lightest load: the stress stays at no load.
        let stated = axis.assumed.is_none();
        match axis.kind {
            AxisKind::Mains => cond.mains_factor = axis.high,
            AxisKind::Ratio => cond.ratio_factor = axis.low,
            AxisKind::DiodeDrop => cond.drop_factor = axis.low,
            AxisKind::LoadAmps if stated => {
                cond.load = Some(LoadOverride::Amps(axis.low));
                assumed_no_load = false;
            }
            AxisKind::LoadOhms if stated => {
                cond.load = Some(LoadOverride::Ohms(axis.high));
                assumed_no_load = false;
            }
            AxisKind::LoadAmps | AxisKind::LoadOhms => {}
            // A cold winding and a full sine give the highest rail.
            AxisKind::Winding => cond.winding_factor = axis.low.min(1.0),
            AxisKind::Crest => cond.crest = Some(axis.high),
            // A cold choke and the least leakage drop the least.
            AxisKind::ChokeOhms => cond.choke_factor = axis.low,
            AxisKind::Leakage => cond.leakage_factor = axis.low,
            AxisKind::Capacitance => {}
        }
    }
    // A directly heated valve conducts before the amplifier's own valves draw current: the
    // rail first soars towards its no-load peak, whatever load is stated.
    if super::valve::warm_up_soar(supply) {
        assumed_no_load = true;
    }
    if assumed_no_load {
        cond.load = Some(LoadOverride::Amps(0.0));
    }
    let op = circuit::solve(supply, &cond)?;
    Ok((op.figures, assumed_no_load))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn box_has_every_corner_and_axis_points() {
        let tbox = ToleranceBox {
            axes: vec![
                Axis {
                    kind: AxisKind::Mains,
                    low: 0.9,
                    high: 1.1,
                    nominal: 1.0,
                    assumed: None,
                },
                Axis {
                    kind: AxisKind::Capacitance,
                    low: 0.8,
                    high: 1.2,
                    nominal: 1.0,
                    assumed: None,
                },
            ],
        };
        let pts = points(&tbox);
        // nominal + the rest of the 3 x 3 grid + 2 quarter points per axis
        assert_eq!(pts.len(), 1 + 8 + 4);
        let words: Vec<String> = pts.iter().map(|p| p.describe(&tbox)).collect();
        assert!(words.contains(&"mains -10 %, capacitor -20 %".to_string()));
        assert!(words.contains(&"mains +5 %".to_string()));
        assert!(words.contains(&"nominal".to_string()));
    }
}

/// The 1st and 99th percentile of one figure over a seeded random spread of the box.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Percentiles {
    pub p1: f64,
    pub p99: f64,
}

/// A seeded statistical spread: `samples` points drawn uniformly over the tolerance box (the
/// tolerances are limits, so every value inside is taken as equally likely, the cautious
/// choice), each solved; per figure the 1st and 99th percentile. The same seed gives the
/// same answer.
pub fn spread(
    supply: &Supply,
    samples: usize,
    seed: u64,
) -> Result<Vec<(&'static str, Percentiles)>, CircuitError> {
    let tbox = ToleranceBox::of(supply);
    let k = tbox.axes.len();
    // xorshift64*: small, fast and reproducible everywhere (Vigna 2016).
    let mut state = seed.max(1);
    let mut uniform = move || {
        state ^= state >> 12;
        state ^= state << 25;
        state ^= state >> 27;
        (state.wrapping_mul(0x2545_f491_4f6c_dd1d) >> 11) as f64 / (1u64 << 53) as f64
    };
    let mut values: Vec<Vec<f64>> = Vec::new();
    for _ in 0..samples {
        let corner = Corner {
            positions: (0..k).map(|_| uniform()).collect(),
        };
        let f = circuit::solve(supply, &corner.conditions(&tbox))?.figures;
        let named = f.named();
        if values.is_empty() {
            values = vec![Vec::with_capacity(samples); named.len()];
        }
        for (i, (_, v)) in named.iter().enumerate() {
            if let Some(v) = v {
                values[i].push(*v);
            }
        }
    }
    let names = circuit::solve(supply, &Conditions::default())?
        .figures
        .named();
    let mut out = Vec::new();
    for (i, (name, _)) in names.iter().enumerate() {
        let Some(vals) = values.get_mut(i) else {
            continue;
        };
        if vals.is_empty() {
            continue;
        }
        vals.sort_by(f64::total_cmp);
        let at =
            |q: f64| vals[((q * (vals.len() - 1) as f64).round() as usize).min(vals.len() - 1)];
        out.push((
            *name,
            Percentiles {
                p1: at(0.01),
                p99: at(0.99),
            },
        ));
    }
    Ok(out)
}

/// The winding's axis: a measured winding may run warm, a nameplate's figure lumps copper and
/// leakage, an unstated one spans the regulation of small transformers sized for the load;
/// leakage inductance the file does not state is allowed for as extra resistance.
fn winding_axis(w: &WindingModel) -> Axis {
    let whole = w.secondary_ohms + w.primary_ohms / (w.ratio * w.ratio);
    // A stated leakage is solved as an inductance; an unstated one is allowed for as extra
    // resistance, which moves the rail about as much (see LEAKAGE_ALLOWANCE).
    let stated_leakage = w.leakage_h > 0.0;
    let leak = if stated_leakage {
        1.0
    } else {
        1.0 + LEAKAGE_ALLOWANCE
    };
    let leak_words = if stated_leakage {
        "; the stated leakage inductance is solved as one".to_string()
    } else {
        format!(
            " and {:.0} % standing in for leakage inductance the file does not state \
             (leakage_mh, impedance_pct or short_test would model it)",
            LEAKAGE_ALLOWANCE * 100.0
        )
    };
    let (low, high, why) = match w.source {
        WindingSource::Measured => (
            1.0,
            WARM_WINDING_FACTOR * leak,
            format!(
                "winding measured cold ({} ohm): up to {:.0} % more assumed for a warm winding \
                 (copper +0.39 %/degC, 40 degC){leak_words}",
                format_number(round3(whole)),
                (WARM_WINDING_FACTOR - 1.0) * 100.0,
            ),
        ),
        WindingSource::Nameplate => (
            0.8,
            1.3 * leak,
            format!(
                "winding resistance from the nameplate ({} ohm): -20 % to +{:.0} % assumed (the \
                 regulation figure lumps copper and leakage)",
                format_number(round3(whole)),
                (1.3 * leak - 1.0) * 100.0
            ),
        ),
        WindingSource::Line { assumed: None } => (
            0.8,
            1.25 * leak,
            format!(
                "line resistance as stated ({} ohm): -20 % to +25 % assumed (a line's \
                 resistance is seldom measured, and it warms){}",
                format_number(round3(whole)),
                if stated_leakage {
                    ""
                } else {
                    " with an allowance for the line's inductance ([line] mh would model it)"
                }
            ),
        ),
        WindingSource::Line {
            assumed: Some((low_ohms, high_ohms)),
        } => (
            low_ohms / w.secondary_ohms,
            high_ohms / w.secondary_ohms * leak,
            format!(
                "line resistance not stated: {}-{} ohm assumed (wiring dropping 0.5-5 % of the \
                 phase voltage at the load's current), with an allowance for its inductance",
                format_number(round3(low_ohms)),
                format_number(round3(high_ohms)),
            ),
        ),
        WindingSource::Assumed {
            rated_va,
            low_ohms,
            high_ohms,
        } => (
            low_ohms / w.secondary_ohms,
            high_ohms / w.secondary_ohms * leak,
            format!(
                "winding resistance not stated: {}-{} ohm assumed for a transformer sized for \
                 the load ({} VA, or up to {:.0} times that; regulation 5-25 %){leak_words}",
                format_number(round3(low_ohms)),
                format_number(round3(high_ohms)),
                format_number(round3(rated_va)),
                ASSUMED_OVERSIZE,
            ),
        ),
    };
    Axis {
        kind: AxisKind::Winding,
        low,
        high,
        nominal: 1.0,
        assumed: Some(why),
    }
}

/// Three significant figures, for a sentence.
fn round3(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    let scale = 10f64.powi(2 - x.abs().log10().floor() as i32);
    (x * scale).round() / scale
}
