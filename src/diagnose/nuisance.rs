//! What the file leaves out, fitted to the readings: where a unit may sit inside its stated and
//! assumed tolerances (mains, capacitance, load, diode drop, winding, crest). Each hypothesis,
//! healthy or faulty, is judged with these nuisance parameters at their best for it, so a
//! healthy unit whose winding runs warm and whose mains is flat-topped is not taken for a
//! fault, and a fault must explain the readings better than every healthy unit.
//!
//! Each axis is measured in z units: 0 at its nominal, +-2 at the ends of its range, so the
//! ends are two standard deviations out and a unit at an end pays 4 in chi-square (a Gaussian
//! belief over the range; the range's ends are possible but not likely). How each reading's
//! figure moves along an axis is taken from one solve either side of the nominal, as a relative
//! change (the same proportion under a fault as in health: the rail scales with the mains
//! whatever the capacitor does).

use super::{Readings, frequency_misfit, predicted, sigma};
use crate::analysis::worst_case::{AxisKind, ToleranceBox};
use crate::circuit::{self, CircuitError, Conditions, Figures};
use crate::supply::Supply;

/// The readings that a nuisance axis moves (the ripple frequency is a matter of which
/// harmonic, and the mains reading is an input).
const MOVED: [&str; 5] = [
    "dc_v",
    "ripple_pp_v",
    "ripple_rms_v",
    "load_a",
    "secondary_vac",
];

/// One axis: its bounds in z and each moved reading's relative change per unit z, on the
/// axis's high side and on its low side.
struct Axis {
    kind: AxisKind,
    z_low: f64,
    z_high: f64,
    up: [f64; MOVED.len()],
    down: [f64; MOVED.len()],
}

/// The nuisance axes of one supply under one set of base conditions.
pub(super) struct Nuisance {
    axes: Vec<Axis>,
    /// Whether the unit is calibrated (the readings' model share is then smaller).
    calibrated: bool,
}

impl Nuisance {
    /// Solves `supply` once either side of the nominal on every axis of `tbox` (half way to
    /// each end), over `base` (a measured mains, say), whose solve is `nominal`.
    pub(super) fn new(
        supply: &Supply,
        tbox: &ToleranceBox,
        base: &Conditions,
        nominal: &Figures,
    ) -> Result<Nuisance, CircuitError> {
        let value = |cond: &Conditions, f: &Figures| -> [f64; MOVED.len()] {
            MOVED.map(|k| predicted(f, k, cond, supply))
        };
        let at_nominal = value(base, nominal);
        let mut axes = Vec::new();
        for a in &tbox.axes {
            let z_high = if a.high > a.nominal { 2.0 } else { 0.0 };
            let z_low = if a.low < a.nominal { -2.0 } else { 0.0 };
            let slope = |end: f64, z_end: f64| -> Result<[f64; MOVED.len()], CircuitError> {
                if z_end == 0.0 {
                    return Ok([0.0; MOVED.len()]);
                }
                // Half way to the end: one unit of z.
                let mut cond = *base;
                a.set(a.nominal + 0.5 * (end - a.nominal), &mut cond);
                let f = circuit::solve(supply, &cond)?.figures;
                let v = value(&cond, &f);
                let z = z_end / 2.0;
                Ok(std::array::from_fn(|i| {
                    if at_nominal[i].abs() > 1e-12 {
                        (v[i] / at_nominal[i] - 1.0) / z
                    } else {
                        0.0
                    }
                }))
            };
            axes.push(Axis {
                kind: a.kind,
                z_low,
                z_high,
                up: slope(a.high, z_high)?,
                down: slope(a.low, z_low)?,
            });
        }
        Ok(Nuisance {
            axes,
            calibrated: supply.calibration_in_force().any(),
        })
    }

    /// The least chi-square of `readings` against `figures` (solved under `cond`) with the
    /// nuisance axes free within their ranges, each paying its z squared; the axes of the
    /// kinds in `held` stay at nominal (a fault hypothesis that sets the same quantity).
    pub(super) fn misfit(
        &self,
        readings: &Readings,
        figures: &Figures,
        cond: &Conditions,
        supply: &Supply,
        held: &[AxisKind],
    ) -> f64 {
        // Residuals in units of their uncertainty, and each axis's pull on them.
        let mut resid = Vec::new();
        let mut pull: Vec<Vec<(f64, f64)>> = vec![Vec::new(); self.axes.len()];
        let mut fixed = 0.0;
        for (k, v) in readings.present() {
            if k == "mains_vrms" {
                continue;
            }
            let p = predicted(figures, k, cond, supply);
            if k == "ripple_hz" {
                fixed += frequency_misfit(v, p);
                continue;
            }
            let s = sigma(k, v, p, self.calibrated);
            let Some(m) = MOVED.iter().position(|x| *x == k) else {
                continue;
            };
            resid.push((v - p) / s);
            for (j, a) in self.axes.iter().enumerate() {
                pull[j].push((p * a.up[m] / s, p * a.down[m] / s));
            }
        }
        let free: Vec<bool> = self.axes.iter().map(|a| !held.contains(&a.kind)).collect();
        // Coordinate descent on a convex piecewise-quadratic objective: each axis in turn at
        // its best with the others fixed, on each side of nominal.
        let mut z = vec![0.0; self.axes.len()];
        let mut r = resid.clone();
        for _ in 0..30 {
            let mut moved = 0.0f64;
            for (j, a) in self.axes.iter().enumerate() {
                if !free[j] {
                    continue;
                }
                // Take axis j out of the residuals.
                let old = z[j];
                for (i, ri) in r.iter_mut().enumerate() {
                    let g = if old >= 0.0 {
                        pull[j][i].0
                    } else {
                        pull[j][i].1
                    };
                    *ri += g * old;
                }
                // Best z on each side: minimise sum (r - g z)^2 + z^2.
                let best_on = |side_up: bool| -> f64 {
                    let (num, den) = r.iter().enumerate().fold((0.0, 1.0), |(n, d), (i, ri)| {
                        let g = if side_up { pull[j][i].0 } else { pull[j][i].1 };
                        (n + g * ri, d + g * g)
                    });
                    let z = num / den;
                    if side_up {
                        z.clamp(0.0, a.z_high)
                    } else {
                        z.clamp(a.z_low, 0.0)
                    }
                };
                let cost = |zz: f64| -> f64 {
                    let up = zz >= 0.0;
                    r.iter()
                        .enumerate()
                        .map(|(i, ri)| {
                            let g = if up { pull[j][i].0 } else { pull[j][i].1 };
                            (ri - g * zz).powi(2)
                        })
                        .sum::<f64>()
                        + zz * zz
                };
                let (zu, zd) = (best_on(true), best_on(false));
                let new = if cost(zu) <= cost(zd) { zu } else { zd };
                for (i, ri) in r.iter_mut().enumerate() {
                    let g = if new >= 0.0 {
                        pull[j][i].0
                    } else {
                        pull[j][i].1
                    };
                    *ri -= g * new;
                }
                moved = moved.max((new - old).abs());
                z[j] = new;
            }
            if moved < 1e-4 {
                break;
            }
        }
        fixed + r.iter().map(|x| x * x).sum::<f64>() + z.iter().map(|x| x * x).sum::<f64>()
    }
}
