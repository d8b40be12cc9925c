//! The drift across a supply's visits: the capacitance each visit's readings imply, a straight
//! line through them, and the date it crosses the supply's limit, with its uncertainty.

use super::{Readings, meter_uncertainty, misfit, predicted};
use crate::analysis::worst_case::worst_case;
use crate::circuit::{self, Conditions, Figures};
use crate::supply::{FilterKind, Supply};
use crate::visit::civil_from_days;
use serde::Serialize;

/// One visit's estimate.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrendPoint {
    pub date: String,
    /// Microfarads the readings imply, or None when the visit gives none (see `why_none`).
    pub uf: Option<f64>,
    /// Why a visit gives no capacitance, in words (None when it gives one).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub why_none: Option<&'static str>,
}

/// A visit whose ripple came at another frequency than the healthy rectifier's.
pub const FOREIGN_RIPPLE: &str =
    "ripple at another frequency than the healthy rectifier's: not the capacitor's to explain";
/// A visit with nothing the capacitance moves.
pub const NO_READING: &str = "no ripple or DC reading";
/// A visit whose readings this unit cannot show (a mains of 2000 V on a 230 V unit, a DC
/// above the winding's peak): a typo kept in the file, which the diagnosis refuses too.
pub const IMPOSSIBLE_READING: &str = "readings this unit cannot show (a typo or a meter's range): left out, as the diagnosis refuses them";

/// The projected crossing of the limit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Crossing {
    pub date: String,
    /// Whether that date is already past the last visit: the part is below its limit now.
    pub already: bool,
    /// The earliest and latest dates of the 90 % band from the meters' uncertainty and the
    /// visits' scatter: never before the first visit; no latest while the drift is too
    /// unclear to bound it.
    pub earliest: Option<String>,
    pub latest: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Trend {
    pub points: Vec<TrendPoint>,
    /// Fitted drift, microfarads per year (negative: drying out).
    pub uf_per_year: Option<f64>,
    /// The capacitance below which the supply is out of its limit, and why.
    pub limit_uf: f64,
    pub limit: String,
    pub crossing: Option<Crossing>,
    pub note: String,
    /// The measured drift against the temperature rule's life, when the file gives the
    /// capacitor's life rating and the drift projects a crossing.
    pub ageing: Option<Box<crate::analysis::capacitor_life::AgeingCheck>>,
}

impl Trend {
    /// The trend in one line, as the screen and the service record say it: "Trend -180 uF a
    /// year; reaches the 1760 uF limit about 2027-03-01 (2026-09-12..2027-11-30)", or its
    /// note when there is no crossing to project.
    pub fn summary(&self) -> String {
        match (&self.crossing, self.uf_per_year) {
            (Some(c), Some(s)) => format!(
                "Trend {s:+.0} uF a year; {} the {} limit about {}{}",
                if c.already { "crossed" } else { "reaches" },
                crate::units::format_uf(self.limit_uf),
                c.date,
                match (&c.earliest, &c.latest) {
                    (Some(a), Some(b)) => format!(" ({a}..{b})"),
                    (Some(a), None) => format!(" ({a}.., no later bound)"),
                    _ => String::new(),
                }
            ),
            _ => self.note.clone(),
        }
    }
}

/// The capacitance factors a visit is fitted over: 2 % to 160 % of the stated value, the range
/// the diagnosis searches for a shrunken capacitor.
const FACTOR_LO: f64 = 0.02;
const FACTOR_HI: f64 = 1.6;
/// Solves in one table, evenly spaced in log capacitance (a step of 9.6 %): DC and ripple vary
/// smoothly with capacitance, so a cubic through four neighbours stays within parts per
/// million of a solve, far inside any meter's error (checked against direct solves below).
const NODES: usize = 47;
/// The widest mains step between two tables, as a ratio. Over 2 % the rail is all but straight
/// in the mains, so a straight line between the two tables errs by parts per million.
const MAINS_STEP: f64 = 1.02;

/// The figures of `supply` at one mains, solved once at each tabulated capacitance factor.
struct Table {
    figures: Vec<Option<Figures>>,
}

fn node_u(i: usize) -> f64 {
    let (a, b) = (FACTOR_LO.ln(), FACTOR_HI.ln());
    a + (b - a) * i as f64 / (NODES - 1) as f64
}

impl Table {
    fn solve(supply: &Supply, mains_vrms: f64) -> Table {
        let figures = (0..NODES)
            .map(|i| {
                let cond = Conditions {
                    mains_vrms: Some(mains_vrms),
                    cap_factor: node_u(i).exp(),
                    ..Conditions::default()
                };
                circuit::solve(supply, &cond).ok().map(|op| op.figures)
            })
            .collect();
        Table { figures }
    }
}

/// Catmull-Rom weights of the four nodes around log factor `u` (clamped at the table's ends),
/// as (node, weight) pairs.
fn cubic_weights(u: f64) -> [(usize, f64); 4] {
    let h = node_u(1) - node_u(0);
    let pos = ((u - node_u(0)) / h).clamp(0.0, (NODES - 1) as f64);
    let i = (pos.floor() as usize).min(NODES - 2);
    let t = pos - i as f64;
    let (t2, t3) = (t * t, t * t * t);
    let at = |k: isize| (i as isize + k).clamp(0, NODES as isize - 1) as usize;
    [
        (at(-1), (-t3 + 2.0 * t2 - t) / 2.0),
        (at(0), (3.0 * t3 - 5.0 * t2 + 2.0) / 2.0),
        (at(1), (-3.0 * t3 + 4.0 * t2 + t) / 2.0),
        (at(2), (t3 - t2) / 2.0),
    ]
}

/// A placeholder for unused interpolation slots (weight zero).
static DUMMY: Figures = Figures {
    dc_v: 0.0,
    max_v: 0.0,
    min_v: 0.0,
    ripple_pp_v: 0.0,
    ripple_rms_v: 0.0,
    ripple_hz: 0.0,
    load_a: 0.0,
    diode_peak_a: 0.0,
    diode_avg_a: 0.0,
    diode_rms_a: 0.0,
    diode_piv_v: 0.0,
    winding_rms_a: 0.0,
    winding_peak_a: 0.0,
    winding_va: 0.0,
    cap_ripple_rms_a: 0.0,
    conduction_deg: 0.0,
    inrush_peak_a: None,
    cap_peak_v: 0.0,
    secondary_rms_v: 0.0,
    choke_rms_a: None,
    choke_peak_a: None,
    choke_dc_drop_v: None,
    out_cap_ripple_rms_a: None,
};

/// Every visit's implied capacitance from a few tables of solves instead of a fit of its own
/// per visit: visits read at the same mains (or at mains within 2 % of a tabulated one) share
/// the solves, so a unit with thousands of visits costs a few dozen tables, not thousands of
/// fits.
pub struct CapacitanceFit<'a> {
    supply: &'a Supply,
    /// Whether a calibration is in force (it sets the readings' model share).
    calibrated: bool,
    /// Tables in ascending mains volts.
    tables: Vec<(f64, Table)>,
}

impl<'a> CapacitanceFit<'a> {
    /// Tables covering every mains in `mains_vrms` (volts; None for a visit with no mains
    /// reading, solved at the file's nominal): one per distinct value, or a grid with steps
    /// of at most 2 % where that takes fewer solves.
    pub fn new(supply: &'a Supply, mains_vrms: impl IntoIterator<Item = Option<f64>>) -> Self {
        let mut volts: Vec<f64> = mains_vrms
            .into_iter()
            .map(|m| m.unwrap_or(supply.mains.vrms))
            .filter(|v| v.is_finite() && *v > 0.0)
            .collect();
        volts.sort_by(f64::total_cmp);
        volts.dedup();
        let nodes = match (volts.first(), volts.last()) {
            (Some(&lo), Some(&hi)) => {
                let steps = ((hi / lo).ln() / MAINS_STEP.ln()).ceil() as usize;
                if steps + 1 < volts.len() {
                    (0..=steps)
                        .map(|k| lo * (hi / lo).powf(k as f64 / steps as f64))
                        .collect()
                } else {
                    volts
                }
            }
            _ => volts,
        };
        let tables = nodes
            .into_iter()
            .map(|v| (v, Table::solve(supply, v)))
            .collect();
        CapacitanceFit {
            supply,
            calibrated: supply.calibration_in_force().any(),
            tables,
        }
    }

    /// Circuits solved for the tables: the work behind a trend, however many visits share it.
    pub fn solves(&self) -> usize {
        self.tables.len() * NODES
    }

    /// The figures at mains `mains_vrms` volts and capacitance factor `exp(u)`, interpolated;
    /// None where a neighbouring solve failed or the mains lies outside the tables.
    fn figures(&self, mains_vrms: f64, u: f64) -> Option<Figures> {
        let k = self.tables.partition_point(|(v, _)| *v < mains_vrms);
        let (lower, upper, s) = match (k.checked_sub(1), self.tables.get(k)) {
            (_, Some((v, t))) if *v == mains_vrms => (t, t, 0.0),
            (Some(j), Some((v1, t1))) => {
                let (v0, t0) = (self.tables[j].0, &self.tables[j].1);
                (t0, t1, (mains_vrms - v0) / (v1 - v0))
            }
            _ => return None,
        };
        let weights = cubic_weights(u);
        let mut parts = [(0.0, &DUMMY); 8];
        for (n, (i, w)) in weights.into_iter().enumerate() {
            parts[n] = ((1.0 - s) * w, lower.figures[i].as_ref()?);
            parts[n + 4] = (s * w, upper.figures[i].as_ref()?);
        }
        Some(Figures::blend(&parts))
    }

    /// The capacitance, microfarads, that best explains `readings` (which must be read at a
    /// mains these tables cover), or None without a DC or ripple reading or a stated one.
    pub fn uf(&self, readings: &Readings) -> Option<f64> {
        self.estimate(readings).map(|e| e.uf)
    }

    /// As [`CapacitanceFit::uf`], with the spread the meters alone put on it (microfarads,
    /// one standard deviation): from how sharply the readings' misfit, weighed by the meters'
    /// uncertainty only, rises either side of the estimate (a change of one in chi-square is
    /// one standard deviation). The other parts' tolerances are left out: on one unit they
    /// are the same at every visit, so they do not scatter a trend.
    pub fn estimate(&self, readings: &Readings) -> Option<Estimate> {
        let uf = self.fit(readings)?;
        let mains = readings.mains_vrms.unwrap_or(self.supply.mains.vrms);
        let cond = Conditions {
            mains_vrms: readings.mains_vrms,
            ..Conditions::default()
        };
        let meters_only = |u: f64| -> f64 {
            let Some(f) = self.figures(mains, u) else {
                return f64::NAN;
            };
            ["dc_v", "ripple_pp_v", "ripple_rms_v"]
                .into_iter()
                .filter_map(|k| {
                    let v = match k {
                        "dc_v" => readings.dc_v,
                        "ripple_pp_v" => readings.ripple_pp_v,
                        _ => readings.ripple_rms_v,
                    }?;
                    let p = predicted(&f, k, &cond, self.supply);
                    Some(((v - p) / meter_uncertainty(k, v).max(1e-6)).powi(2))
                })
                .sum()
        };
        let u = (uf / self.supply.filter.uf?).ln();
        let h = 0.02;
        let curvature = (meters_only(u + h) - 2.0 * meters_only(u) + meters_only(u - h)) / (h * h);
        // A reading that hardly moves with capacitance (DC alone on a stiff rail) pins it to
        // no better than a factor of e either way.
        let sigma_u = if curvature.is_finite() && curvature > 0.0 {
            (2.0 / curvature).sqrt().min(1.0)
        } else {
            1.0
        };
        Some(Estimate {
            uf,
            sigma_uf: uf * sigma_u,
        })
    }

    fn fit(&self, readings: &Readings) -> Option<f64> {
        let uf = self.supply.filter.uf?;
        if readings.ripple_pp_v.is_none()
            && readings.ripple_rms_v.is_none()
            && readings.dc_v.is_none()
        {
            return None;
        }
        let mains = readings.mains_vrms.unwrap_or(self.supply.mains.vrms);
        let cond = Conditions {
            mains_vrms: readings.mains_vrms,
            ..Conditions::default()
        };
        let cost = |u: f64| match self.figures(mains, u) {
            Some(f) => misfit(readings, &f, &cond, self.supply, self.calibrated),
            None => f64::INFINITY,
        };
        // The best node first (the misfit need not have one valley over so wide a range),
        // then a golden section between its neighbours.
        let (best, chi2) = (0..NODES)
            .map(|i| (i, cost(node_u(i))))
            .min_by(|a, b| a.1.total_cmp(&b.1))?;
        if !chi2.is_finite() {
            return None;
        }
        let (mut a, mut b) = (
            node_u(best.saturating_sub(1)),
            node_u((best + 1).min(NODES - 1)),
        );
        let g = 0.618_033_988_749_895;
        let (mut c, mut d) = (b - g * (b - a), a + g * (b - a));
        let (mut fc, mut fd) = (cost(c), cost(d));
        // To a thousandth of a percent in capacitance, far below any reading's resolution.
        while b - a > 1e-5 {
            if fc < fd {
                (b, d, fd) = (d, c, fc);
                c = b - g * (b - a);
                fc = cost(c);
            } else {
                (a, c, fc) = (c, d, fd);
                d = a + g * (b - a);
                fd = cost(d);
            }
        }
        let u = if fc.min(fd) < chi2 {
            if fc < fd { c } else { d }
        } else {
            node_u(best)
        };
        Some(uf * u.exp())
    }
}

/// One visit's implied capacitance and the spread its meters put on it, microfarads.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Estimate {
    pub uf: f64,
    pub sigma_uf: f64,
}

/// The capacitance that best explains one visit's readings (microfarads).
pub fn capacitance_from(supply: &Supply, readings: &Readings) -> Option<f64> {
    CapacitanceFit::new(supply, [readings.mains_vrms]).uf(readings)
}

/// The capacitance limit: with a regulator, the least capacitance whose worst-case valley
/// still clears output plus dropout; without, the makers' common end-of-life criterion of
/// 20 % below the stated value (from memory of makers' practice).
pub fn limit_uf(supply: &Supply) -> (f64, String) {
    let uf = supply.filter.uf.unwrap_or(0.0);
    if let Some(reg) = &supply.regulator {
        let need = reg.output_v + reg.dropout_v;
        let valley = |c: f64| {
            let mut s = supply.clone();
            s.filter.uf = Some(c);
            worst_case(&s)
                .ok()
                .and_then(|w| w.extent(crate::circuit::Figure::MinV).map(|e| e.min))
                .unwrap_or(0.0)
        };
        if valley(uf) >= need {
            let (mut lo, mut hi) = (uf * 0.01, uf);
            // Fourteen halvings of a hundredfold range: within 0.03 % of the limit.
            for _ in 0..14 {
                let mid = (lo * hi).sqrt();
                if valley(mid) >= need {
                    hi = mid;
                } else {
                    lo = mid;
                }
            }
            return (
                hi,
                format!("worst-case valley reaches the regulator's {need:.2} V"),
            );
        }
        return (
            uf,
            format!("the worst-case valley is already under the regulator's {need:.2} V"),
        );
    }
    (
        0.8 * uf,
        "20 % below the stated capacitance (end of life, makers' practice)".into(),
    )
}

/// A weighted least-squares line through (day, microfarads, spread) points: its slope, the
/// weighted mean point it passes through, the total weight and the weighted spread of the days,
/// and the scale on the points' spreads that their scatter about the line asks for.
struct LineFit {
    slope: f64,
    mean_x: f64,
    mean_y: f64,
    weight: f64,
    sxx: f64,
    /// Reduced chi-square of the residuals, None for two points.
    reduced_chi2: Option<f64>,
    /// Degrees of freedom of the residuals (n - 2).
    dof: f64,
}

fn line_fit(points: &[(f64, f64, f64)]) -> Option<LineFit> {
    if points.len() < 2 {
        return None;
    }
    let w = |p: &(f64, f64, f64)| 1.0 / p.2.max(1e-9).powi(2);
    let weight: f64 = points.iter().map(w).sum();
    let mean_x = points.iter().map(|p| w(p) * p.0).sum::<f64>() / weight;
    let mean_y = points.iter().map(|p| w(p) * p.1).sum::<f64>() / weight;
    let sxx: f64 = points.iter().map(|p| w(p) * (p.0 - mean_x).powi(2)).sum();
    let sxy: f64 = points
        .iter()
        .map(|p| w(p) * (p.0 - mean_x) * (p.1 - mean_y))
        .sum();
    if sxx <= 0.0 {
        return None;
    }
    let slope = sxy / sxx;
    let dof = points.len() as f64 - 2.0;
    let reduced_chi2 = (dof > 0.0).then(|| {
        points
            .iter()
            .map(|p| w(p) * (p.1 - mean_y - slope * (p.0 - mean_x)).powi(2))
            .sum::<f64>()
            / dof
    });
    Some(LineFit {
        slope,
        mean_x,
        mean_y,
        weight,
        sxx,
        reduced_chi2,
        dof,
    })
}

/// The one-sided 95 % point of Student's t with `dof` degrees of freedom (two-sided 90 %),
/// from the standard tables (values from memory of the tables).
fn t_95(dof: f64) -> f64 {
    const TABLE: [(f64, f64); 12] = [
        (1.0, 6.314),
        (2.0, 2.920),
        (3.0, 2.353),
        (4.0, 2.132),
        (5.0, 2.015),
        (6.0, 1.943),
        (8.0, 1.860),
        (10.0, 1.812),
        (15.0, 1.753),
        (20.0, 1.725),
        (30.0, 1.697),
        (120.0, 1.658),
    ];
    TABLE
        .iter()
        .find(|(d, _)| dof <= *d)
        .map_or(1.645, |(_, t)| *t)
}

/// Where a falling line's 90 % band holds the limit, in days: the earliest and (when the drift
/// is clear enough to bound it) the latest day the line may cross `limit`, never before
/// `first_day`.
fn crossing_band(fit: &LineFit, limit: f64, first_day: f64) -> (f64, Option<f64>) {
    // The points' own spreads, scaled up (never down) by their scatter about the line; with
    // the scatter setting the scale, Student's t for the few points there are.
    let (scale, k) = match fit.reduced_chi2 {
        Some(r) if r > 1.0 => (r, t_95(fit.dof)),
        _ => (1.0, 1.645),
    };
    let q = k * k * scale;
    // (A + b d)^2 = q (1/W + d^2/Sxx), with d the day from the mean day: where the band's edge
    // meets the limit.
    let a = fit.mean_y - limit;
    let b = fit.slope;
    let a2 = b * b - q / fit.sxx;
    let half_b = a * b;
    let c = a * a - q / fit.weight;
    let centre = -a / b;
    let disc = half_b * half_b - a2 * c;
    let (earliest, latest) = if disc < 0.0 {
        (f64::NEG_INFINITY, None)
    } else {
        let r = disc.sqrt();
        let (d1, d2) = {
            let x = (-half_b - r) / a2;
            let y = (-half_b + r) / a2;
            (x.min(y), x.max(y))
        };
        if a2 > 0.0 {
            // A clear drift: the crossing lies between the two.
            (d1, Some(d2))
        } else if centre >= d2 {
            // The drift is not clear enough to say how late.
            (d2, None)
        } else {
            (f64::NEG_INFINITY, Some(d1))
        }
    };
    let to_day = |d: f64| (fit.mean_x + d).max(first_day);
    (to_day(earliest), latest.map(to_day))
}

/// The trend of `supply`'s visits.
pub fn trend(supply: &Supply) -> Trend {
    // The trend follows the capacitor against its label, from every visit, the baseline's
    // included: a calibrated capacitance would move the scale it is read on.
    let uncalibrated;
    let supply = if supply.calibration_in_force().capacitance {
        let mut s = supply.clone();
        s.forget_capacitance_calibration();
        uncalibrated = s;
        &uncalibrated
    } else {
        supply
    };
    let (limit_uf, limit) = limit_uf(supply);
    let mut visits: Vec<_> = supply.visits.iter().collect();
    visits.sort_by_key(|v| v.days());
    // A replaced filter capacitor starts the trend again: the readings of the visit that
    // replaced it were taken on the old part, so the new trend begins after it.
    let replaced_at = visits.iter().rposition(|v| v.replaced_capacitor());
    // The trend is the capacitor's: the ripple frequency says nothing of its value, but a
    // ripple at another frequency than the healthy rectifier's (a leg open, a phase lost)
    // says the ripple is not the capacitor's to explain, and that visit gives no point.
    // Visits whose readings cannot be true, and supplies with no filter capacitor, give none
    // either.
    let healthy_hz = supply.rectifier.topology.pulses_per_cycle() as f64 * supply.mains.hz;
    // Each visit's readings for the fit (its ripple frequency set aside: the capacitance does
    // not move it), or why it gives no point; each visit checked once.
    let usable: Vec<Result<Readings, &'static str>> = visits
        .iter()
        .map(|v| {
            let r = Readings {
                ripple_hz: None,
                ..v.readings.with_line_mean()
            };
            let foreign = v
                .readings
                .ripple_hz
                .is_some_and(|hz| (hz - healthy_hz).abs() > 0.1 * healthy_hz);
            if foreign {
                return Err(FOREIGN_RIPPLE);
            }
            match r.check_against(supply) {
                Err(super::ReadingError::Nothing) => Err(NO_READING),
                Err(_) => Err(IMPOSSIBLE_READING),
                Ok(()) if supply.filter.kind == FilterKind::None => Err(NO_READING),
                Ok(()) => Ok(r),
            }
        })
        .collect();
    let tables = CapacitanceFit::new(
        supply,
        usable
            .iter()
            .filter_map(|r| r.as_ref().ok())
            .map(|r| r.mains_vrms),
    );
    let mut points = Vec::new();
    let mut xy = Vec::new();
    let mut old_xy = Vec::new();
    for (i, (v, r)) in visits.iter().zip(&usable).enumerate() {
        let estimate = r.as_ref().ok().and_then(|r| tables.estimate(r));
        if let (Some(e), Some(d)) = (estimate, v.days()) {
            match replaced_at {
                Some(r) if i <= r => old_xy.push((d as f64, e.uf, e.sigma_uf)),
                _ => xy.push((d as f64, e.uf, e.sigma_uf)),
            }
        }
        points.push(TrendPoint {
            date: v.date_text(),
            uf: estimate.map(|e| e.uf),
            why_none: match (estimate, r) {
                (Some(_), _) => None,
                (None, Err(why)) => Some(*why),
                // Readings the fit could not use (a DC alone that no capacitance moves).
                (None, Ok(_)) => Some(NO_READING),
            },
        });
    }
    let mut out = Trend {
        points,
        uf_per_year: None,
        limit_uf,
        limit,
        crossing: None,
        note: String::new(),
        ageing: None,
    };
    if xy.len() < 2 {
        if let Some(r) = replaced_at {
            out.note = format!(
                "the filter capacitor was replaced on {}; its trend starts again with the next visits",
                visits[r].date_text()
            );
            out.uf_per_year = line_fit(&old_xy).map(|f| f.slope * 365.25);
        } else {
            out.note = "a trend needs two visits with ripple or DC readings".into();
        }
        return out;
    }
    let Some(fit) = line_fit(&xy) else {
        out.note = "the visits share one date: no trend".into();
        return out;
    };
    out.uf_per_year = Some(fit.slope * 365.25);
    if fit.slope < 0.0 {
        // The line through the weighted mean point.
        let day = fit.mean_x + (limit_uf - fit.mean_y) / fit.slope;
        let first_day = xy.iter().map(|p| p.0).fold(f64::INFINITY, f64::min);
        let last_day = xy.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max);
        let (earliest, latest) = crossing_band(&fit, limit_uf, first_day);
        let date = |d: f64| civil_from_days(d.round() as i64);
        out.crossing = Some(Crossing {
            date: date(day.max(first_day)),
            already: day <= last_day,
            earliest: Some(date(earliest)),
            latest: latest.map(date),
        });
        // The measured time to the limit against the temperature rule's life.
        // (Solved only when the file rates the part: a trend without one needs no nominal.)
        if crate::analysis::capacitor_life::is_rated(supply)
            && let Ok(op) = circuit::solve(supply, &Conditions::default())
            && let Some(rule) = crate::analysis::capacitor_life::nominal_life(supply, &op.figures)
        {
            // At the measured drift, the years from the label's value to the limit: the
            // part's whole life at this rate, whenever it was fitted (the first visit need
            // not be its first day).
            let stated = supply.filter.uf.unwrap_or(0.0);
            let measured_years = (stated - limit_uf).max(0.0) / (-fit.slope * 365.25);
            out.ageing = Some(Box::new(crate::analysis::capacitor_life::ageing_check(
                measured_years,
                &rule,
            )));
        }
        out.note = match latest {
            Some(_) => "range: 90 % band from the meters' uncertainty and the visits' scatter",
            None => {
                "range: 90 % band from the meters' uncertainty and the visits' scatter; \
                 the drift is not yet clear enough to say how late"
            }
        }
        .into();
    } else {
        out.note = "no downward drift: no crossing projected".into();
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::library::demo;

    /// Readings a good meter would take of `supply` at `mains` volts with its capacitance at
    /// `factor` of the stated value, from a direct solve.
    fn readings_at(supply: &Supply, mains: f64, factor: f64) -> Readings {
        let cond = Conditions {
            mains_vrms: Some(mains),
            cap_factor: factor,
            ..Conditions::default()
        };
        let f = circuit::solve(supply, &cond).unwrap().figures;
        Readings {
            mains_vrms: Some(mains),
            dc_v: Some(f.dc_v),
            ripple_pp_v: Some(f.ripple_pp_v),
            ..Readings::default()
        }
    }

    #[test]
    fn the_tables_recover_a_known_capacitance_between_their_nodes() {
        // Twenty visits at twenty different mains readings make the fit tabulate a 2 % grid
        // of mains rather than a table per reading; readings made by direct solves at known
        // capacitances between the nodes must come back as those capacitances. This checks
        // the interpolation against the solver it stands in for (not the physics, which the
        // ngspice references check). The bound is the solver's own scatter between nearby
        // solves (the ripple is read from the sampled period): the per-visit fit of direct
        // solves that the tables replace missed these same cases by up to 0.23 %.
        for (_, text) in demo::supplies() {
            let s = Supply::from_toml_str(&text).unwrap();
            let Some(uf) = s.filter.uf else { continue };
            let nominal = s.mains.vrms;
            let cases: Vec<(f64, f64)> = (0..20)
                .map(|k| {
                    let mains = nominal * (0.93 + 0.0071 * k as f64);
                    let factor = 0.55 + 0.023 * k as f64;
                    (mains, factor)
                })
                .collect();
            let readings: Vec<Readings> =
                cases.iter().map(|&(m, x)| readings_at(&s, m, x)).collect();
            let fit = CapacitanceFit::new(&s, readings.iter().map(|r| r.mains_vrms));
            assert!(
                fit.tables.len() < cases.len(),
                "{}: {} tables for {} readings",
                s.name,
                fit.tables.len(),
                cases.len()
            );
            // A six-pulse bridge with a line reactor (the demo drive bus) solves its phases'
            // currents with a scatter between nearby solves of about 1.4 % of the implied
            // capacitance (measured; its ripple is a few volts on 500): held to 2 % until
            // that solve is made tighter (issue 13's closing note).
            let bound = if s.mains.phases == 3 { 2e-2 } else { 3e-3 };
            for ((mains, factor), r) in cases.iter().zip(&readings) {
                let got = fit.uf(r).unwrap() / uf;
                assert!(
                    (got / factor - 1.0).abs() < bound,
                    "{} at {mains:.1} V: factor {got:.5}, made at {factor:.5}",
                    s.name
                );
            }
        }
    }

    #[test]
    fn a_single_visit_fit_matches_the_trend_of_many() {
        // The one-visit function and the many-visit tables answer alike for the same reading.
        let s = Supply::from_toml_str(&demo::supplies()[1].1).unwrap();
        let r = readings_at(&s, s.mains.vrms * 0.97, 0.8);
        let one = capacitance_from(&s, &r).unwrap();
        let others = [0.9, 0.95, 1.02, 1.05, 1.08].map(|k| Some(s.mains.vrms * k));
        let many = CapacitanceFit::new(&s, others.into_iter().chain([r.mains_vrms]))
            .uf(&r)
            .unwrap();
        assert!((one / many - 1.0).abs() < 1e-3, "{one} vs {many}");
        assert!(
            (one / s.filter.uf.unwrap() / 0.8 - 1.0).abs() < 3e-3,
            "{one}"
        );
    }

    /// A visit kept in the file with a typo (a mains of ten times the nominal, a DC far
    /// above the winding's peak) gives the trend no point, says why, and leaves the other
    /// visits' points as they were: the diagnosis refuses the same readings.
    #[test]
    fn a_visit_the_diagnosis_refuses_gives_no_point() {
        let s = demo::supplies()
            .into_iter()
            .map(|(_, text)| Supply::from_toml_str(&text).unwrap())
            .find(|s| s.visits.len() >= 2 && s.filter.uf.is_some())
            .expect("a demo supply with visits");
        let before = trend(&s);
        let mut typo = s.visits.last().unwrap().clone();
        typo.readings.mains_vrms = Some(10.0 * s.mains.vrms);
        typo.readings.dc_v = typo.readings.dc_v.map(|v| 10.0 * v);
        typo.date = "2099-01-01".parse().unwrap();
        assert!(crate::diagnose::diagnose(&s, &typo.readings).is_err());
        let mut with_typo = s.clone();
        with_typo.visits.push(typo);
        let after = trend(&with_typo);
        let last = after.points.last().unwrap();
        assert_eq!((last.uf, last.why_none), (None, Some(IMPOSSIBLE_READING)));
        assert_eq!(
            before.points.iter().map(|p| p.uf).collect::<Vec<_>>(),
            after.points[..before.points.len()]
                .iter()
                .map(|p| p.uf)
                .collect::<Vec<_>>()
        );
        assert_eq!(before.uf_per_year, after.uf_per_year);
        // A visit with notes and no readings is no typo: it has nothing to read.
        let mut blank = s.visits.last().unwrap().clone();
        blank.readings = Readings::default();
        blank.date = "2099-02-01".parse().unwrap();
        with_typo.visits.push(blank);
        let last = trend(&with_typo).points.last().unwrap().clone();
        assert_eq!((last.uf, last.why_none), (None, Some(NO_READING)));
    }

    #[test]
    fn thousands_of_visits_share_a_few_dozen_tables() {
        // 5,000 visits read at a meter's 0.1 V resolution anywhere over 215-245 V: the work is
        // bounded by the 2 % mains grid (8 tables), not by the number of visits (one fit of
        // two dozen solves per visit made a 5,000-visit log take tens of seconds).
        let mains = (0..5000).map(|k| Some(215.0 + ((k * 37) % 301) as f64 / 10.0));
        let s = Supply::from_toml_str(&demo::supplies()[0].1).unwrap();
        let fit = CapacitanceFit::new(&s, mains);
        assert_eq!(fit.tables.len(), 8);
        assert_eq!(fit.solves(), 8 * NODES);
        // The grid's ends are the lowest and highest readings.
        assert_eq!(fit.tables[0].0, 215.0);
        assert!((fit.tables[7].0 - 245.0).abs() < 1e-9);
    }
}
