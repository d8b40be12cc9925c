//! Calibrating a unit from a known-good visit: the unknowns its file cannot state (the
//! winding's resistance in service, the site's mains crest, the capacitors' effective value)
//! fitted to that visit's readings, each within its physical range, so that later
//! expectations and diagnoses of the unit start from the unit as it really is.
//!
//! The fit is a damped Gauss-Newton least squares over at most three parameters, each solved by
//! the engine (not linearised): the readings weighed by the meter's uncertainty alone (what
//! the model leaves out of this unit is what the calibration is to absorb), and a weak pull
//! towards each range's nominal that settles what the readings cannot tell apart (a warm
//! winding and a flattened mains both lower the rail).

use super::{
    Diagnosis, Expectation, ReadingError, Readings, diagnose, meter_uncertainty, predicted,
};
use crate::analysis::worst_case::{AxisKind, ToleranceBox};
use crate::calibration::Calibration;
use crate::circuit::{self, Conditions};
use crate::supply::{FilterKind, Supply};
use crate::visit::Date;
use serde::Serialize;

/// Why a visit cannot serve as a baseline.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CalibrationError {
    #[error(
        "a baseline needs {0} read at the same visit (the calibration fits the unit to it); \
         nothing was calibrated"
    )]
    Missing(&'static str),
    #[error(
        "{reading} {value} is outside what a healthy unit of this file can show ({min:.3} .. \
         {max:.3}): calibrating on it would hide a fault. Repair first, or check the file's \
         values; nothing was calibrated"
    )]
    NotHealthy {
        reading: &'static str,
        value: f64,
        min: f64,
        max: f64,
    },
    #[error("{0}")]
    Readings(#[from] ReadingError),
}

/// A calibration with what it changed: each reading's window before and after, and the
/// fitted values that ended at the end of their range.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Fitted {
    #[serde(skip)]
    pub calibration: Calibration,
    /// The windows at the baseline's mains without the calibration, as the file alone gives.
    pub before: Vec<Expectation>,
    /// The same windows with it.
    pub after: Vec<Expectation>,
    /// Fitted values pinned at the end of their physical range, in words: the file may be
    /// wrong there (a wrong ratio, a wrong capacitor value).
    pub at_limit: Vec<String>,
}

/// The pull towards each range's nominal, against the readings' chi-square: a tenth of the
/// diagnosis's, so the readings decide wherever they can.
const PRIOR_WEIGHT: f64 = 0.1;

/// One free parameter of the fit: its axis, range and nominal, fitted on a log scale for
/// factors (a winding or a capacitance is as likely halved as doubled).
struct Free {
    kind: AxisKind,
    low: f64,
    high: f64,
    nominal: f64,
    log: bool,
}

impl Free {
    fn to_u(&self, v: f64) -> f64 {
        if self.log { v.ln() } else { v }
    }
    fn to_v(&self, u: f64) -> f64 {
        if self.log { u.exp() } else { u }
    }
    fn clamp(&self, u: f64) -> f64 {
        u.clamp(self.to_u(self.low), self.to_u(self.high))
    }
    /// The value in z units: 0 at nominal, +-2 at the range's ends.
    fn z(&self, v: f64) -> f64 {
        let end = if v >= self.nominal {
            self.high
        } else {
            self.low
        };
        if (end - self.nominal).abs() < 1e-12 {
            0.0
        } else {
            2.0 * (v - self.nominal) / (end - self.nominal).abs()
        }
    }
}

/// Fits `supply`'s unknowns to `readings` taken on `date` at a known-good visit (volts;
/// the mains and the DC must be read, a ripple reading adds the capacitance), and returns the
/// calibration with the windows before and after. Refuses readings outside what a healthy
/// unit of the file can show.
pub fn calibrate(
    supply: &Supply,
    readings: &Readings,
    date: Date,
) -> Result<Fitted, CalibrationError> {
    let mains = readings
        .mains_vrms
        .ok_or(CalibrationError::Missing("the mains (mains_vrms)"))?;
    readings
        .dc_v
        .ok_or(CalibrationError::Missing("the rail's DC (dc_v)"))?;
    let mut fresh = supply.clone();
    fresh.calibration = None;
    let before: Diagnosis = diagnose(&fresh, readings)?;
    if let Some(e) = before.expectations.iter().find(|e| e.status != "within") {
        return Err(CalibrationError::NotHealthy {
            reading: e.reading,
            value: e.value,
            min: e.min,
            max: e.max,
        });
    }
    let base = Conditions {
        mains_vrms: Some(mains),
        ..Conditions::default()
    };
    let ripple_read = readings.ripple_pp_v.is_some() || readings.ripple_rms_v.is_some();
    let filtered = fresh.filter.kind != FilterKind::None;
    let free: Vec<Free> = ToleranceBox::of(&fresh)
        .axes
        .iter()
        .filter(|a| match a.kind {
            AxisKind::Winding | AxisKind::Crest => true,
            AxisKind::Capacitance => filtered && ripple_read,
            // What varies between visits (the load, the mains) or is a spread of parts stays
            // a range: only the unit's own unknowns are calibrated.
            AxisKind::Mains
            | AxisKind::LoadAmps
            | AxisKind::LoadOhms
            | AxisKind::DiodeDrop
            | AxisKind::Ratio
            | AxisKind::ChokeOhms
            | AxisKind::Leakage => false,
        })
        .map(|a| Free {
            kind: a.kind,
            low: a.low,
            high: a.high,
            nominal: a.nominal,
            log: a.kind != AxisKind::Crest,
        })
        .collect();
    let used: Vec<(&'static str, f64)> = readings
        .present()
        .into_iter()
        .filter(|(k, _)| {
            matches!(
                *k,
                "dc_v" | "ripple_pp_v" | "ripple_rms_v" | "secondary_vac" | "load_a"
            )
        })
        .collect();
    let conditions_at = |u: &[f64]| -> Conditions {
        let mut c = base;
        for (f, &x) in free.iter().zip(u) {
            let v = f.to_v(x);
            match f.kind {
                AxisKind::Winding => c.winding_factor = v,
                AxisKind::Crest => c.crest = Some(v),
                AxisKind::Capacitance => c.cap_factor = v,
                AxisKind::Mains
                | AxisKind::LoadAmps
                | AxisKind::LoadOhms
                | AxisKind::DiodeDrop
                | AxisKind::Ratio
                | AxisKind::ChokeOhms
                | AxisKind::Leakage => {}
            }
        }
        c
    };
    // Residuals: each reading in units of its meter's uncertainty, then each parameter's pull.
    let residuals = |u: &[f64]| -> Option<Vec<f64>> {
        let cond = conditions_at(u);
        let f = circuit::solve(&fresh, &cond).ok()?.figures;
        let mut r: Vec<f64> = used
            .iter()
            .map(|&(k, v)| (predicted(&f, k, &cond, &fresh) - v) / meter_uncertainty(k, v))
            .collect();
        r.extend(
            free.iter()
                .zip(u)
                .map(|(f, &x)| PRIOR_WEIGHT.sqrt() * f.z(f.to_v(x))),
        );
        Some(r)
    };
    let cost = |r: &[f64]| r.iter().map(|x| x * x).sum::<f64>();
    let mut u: Vec<f64> = free.iter().map(|f| f.to_u(f.nominal)).collect();
    let mut r = residuals(&u).ok_or(CalibrationError::Readings(ReadingError::Solve(
        "the supply could not be solved at the baseline's mains".into(),
    )))?;
    let mut lambda = 1e-3;
    for _ in 0..12 {
        if free.is_empty() {
            break;
        }
        // Forward differences, one solve per parameter.
        let h = 1e-4;
        let mut jac = vec![vec![0.0; free.len()]; r.len()];
        for j in 0..free.len() {
            let mut up = u.clone();
            up[j] += h;
            let Some(rj) = residuals(&up) else { continue };
            for (i, row) in jac.iter_mut().enumerate() {
                row[j] = (rj[i] - r[i]) / h;
            }
        }
        let n = free.len();
        let mut improved = false;
        for _ in 0..6 {
            // (J'J + lambda diag) d = -J'r
            let mut a = vec![vec![0.0; n + 1]; n];
            for (p, row_a) in a.iter_mut().enumerate() {
                for q in 0..n {
                    row_a[q] = jac.iter().map(|row| row[p] * row[q]).sum::<f64>();
                }
                row_a[p] *= 1.0 + lambda;
                row_a[p] += 1e-12;
                row_a[n] = -jac.iter().zip(&r).map(|(row, ri)| row[p] * ri).sum::<f64>();
            }
            let Some(d) = solve_small(a) else { break };
            let trial: Vec<f64> = free
                .iter()
                .zip(u.iter().zip(&d))
                .map(|(f, (x, dx))| f.clamp(x + dx))
                .collect();
            if let Some(rt) = residuals(&trial)
                && cost(&rt) < cost(&r)
            {
                let step = trial
                    .iter()
                    .zip(&u)
                    .map(|(a, b)| (a - b).abs())
                    .fold(0.0, f64::max);
                u = trial;
                r = rt;
                lambda = (lambda / 10.0).max(1e-7);
                improved = step > 1e-6;
                break;
            }
            lambda *= 10.0;
        }
        if !improved {
            break;
        }
    }
    let value = |kind: AxisKind| -> Option<f64> {
        free.iter()
            .zip(&u)
            .find(|(f, _)| f.kind == kind)
            .map(|(f, &x)| f.to_v(x))
    };
    let round = |x: f64| (x * 1e4).round() / 1e4;
    let calibration = Calibration {
        visit: date,
        winding_factor: value(AxisKind::Winding).map(round),
        crest: value(AxisKind::Crest).map(round),
        cap_factor: value(AxisKind::Capacitance).map(round),
    };
    let at_limit = free
        .iter()
        .zip(&u)
        .filter(|(f, x)| f.z(f.to_v(**x)).abs() > 1.98)
        .map(|(f, &x)| {
            let v = f.to_v(x);
            let what = match f.kind {
                AxisKind::Winding => "the winding's resistance",
                AxisKind::Crest => "the mains crest",
                AxisKind::Capacitance
                | AxisKind::Mains
                | AxisKind::LoadAmps
                | AxisKind::LoadOhms
                | AxisKind::DiodeDrop
                | AxisKind::Ratio
                | AxisKind::ChokeOhms
                | AxisKind::Leakage => "the capacitance",
            };
            let end = if v > f.nominal { "top" } else { "bottom" };
            format!(
                "{what} came out at the {end} of its range ({v:.3}): the file's transformer, \
                 mains or capacitor may not be what the unit has"
            )
        })
        .collect();
    let mut calibrated = fresh.clone();
    calibrated.calibration = Some(calibration.clone());
    let after = diagnose(&calibrated, readings)?;
    Ok(Fitted {
        calibration,
        before: before.expectations,
        after: after.expectations,
        at_limit,
    })
}

/// Gaussian elimination with partial pivoting on an augmented n x (n+1) system.
fn solve_small(mut a: Vec<Vec<f64>>) -> Option<Vec<f64>> {
    let n = a.len();
    for col in 0..n {
        let pivot = (col..n).max_by(|&i, &j| a[i][col].abs().total_cmp(&a[j][col].abs()))?;
        if a[pivot][col].abs() < 1e-300 {
            return None;
        }
        a.swap(col, pivot);
        let pivot_row = a[col].clone();
        for row in a.iter_mut().skip(col + 1) {
            let m = row[col] / pivot_row[col];
            for (x, p) in row.iter_mut().zip(&pivot_row).skip(col) {
                *x -= m * p;
            }
        }
    }
    let mut x = vec![0.0; n];
    for row in (0..n).rev() {
        let s: f64 = (row + 1..n).map(|k| a[row][k] * x[k]).sum();
        x[row] = (a[row][n] - s) / a[row][row];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}
