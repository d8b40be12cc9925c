//! The one-period integrator: the Dormand-Prince 5(4) pair for ordinary periods and the
//! Rosenbrock 2(3) pair of Shampine and Reichelt for stiff ones, with error control per state,
//! steps cut at the drive's kinks and the diodes' turns, and the cubic Hermite interpolant
//! between step ends (the dense output the final pass reads the peaks and edges from).
//!
//! It knows nothing of circuits: it integrates dy/dt = f(t, y) for a vector holding the states
//! and any running integrals appended to them.

// Small dense matrices and Runge-Kutta stages read best with their indices written out.
#![allow(clippy::needless_range_loop)]

use super::{EDGES, MAX_EVALUATIONS, MAX_STATES, Probe, SolveError, Vector, WIDTH};

/// Relative tolerance of the running integrals (the capacitor voltages use an absolute one).
const RTOL: f64 = 1e-6;
/// Fewest steps in one integration: a pulse shorter than a step could be stepped over unseen.
const MIN_STEPS: f64 = 24.0;

// Dormand-Prince 5(4) tableau (Dormand & Prince 1980; as in Hairer, Norsett & Wanner).
const C: [f64; 7] = [0.0, 0.2, 0.3, 0.8, 8.0 / 9.0, 1.0, 1.0];
const A: [[f64; 6]; 7] = [
    [0.0; 6],
    [0.2, 0.0, 0.0, 0.0, 0.0, 0.0],
    [3.0 / 40.0, 9.0 / 40.0, 0.0, 0.0, 0.0, 0.0],
    [44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0, 0.0, 0.0, 0.0],
    [
        19372.0 / 6561.0,
        -25360.0 / 2187.0,
        64448.0 / 6561.0,
        -212.0 / 729.0,
        0.0,
        0.0,
    ],
    [
        9017.0 / 3168.0,
        -355.0 / 33.0,
        46732.0 / 5247.0,
        49.0 / 176.0,
        -5103.0 / 18656.0,
        0.0,
    ],
    [
        35.0 / 384.0,
        0.0,
        500.0 / 1113.0,
        125.0 / 192.0,
        -2187.0 / 6784.0,
        11.0 / 84.0,
    ],
];
const E: [f64; 7] = [
    71.0 / 57600.0,
    0.0,
    -71.0 / 16695.0,
    71.0 / 1920.0,
    -17253.0 / 339200.0,
    22.0 / 525.0,
    -1.0 / 40.0,
];

/// How the integrator chooses its steps.
pub(super) enum Steps<'a> {
    /// Error-controlled; the accepted steps are recorded.
    Adaptive(&'a mut Vec<GridStep>),
    /// The recorded steps again, with no error control: the one-period map is then a smooth
    /// function of the start state, which Newton and the finite differences need.
    Replay(&'a [GridStep]),
}

/// One recorded step: its length in seconds, and whether the stiff formula took a fresh
/// Jacobian at its start (a replay takes one at the same steps, so the map stays smooth).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct GridStep {
    pub(super) h: f64,
    pub(super) jacobian: bool,
}

impl Steps<'_> {
    /// The same choice again, for a second try at the same integration.
    pub(super) fn again(&mut self) -> Steps<'_> {
        match self {
            Steps::Adaptive(record) => Steps::Adaptive(record),
            Steps::Replay(grid) => Steps::Replay(grid),
        }
    }
}

/// Which formula integrates a solve's periods.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Method {
    /// Dormand-Prince 5(4): explicit, cheap per step, stability-limited to steps of about
    /// 3.3 of the circuit's fastest time constant.
    Explicit,
    /// The Rosenbrock 2(3) pair of Shampine and Reichelt (the MATLAB ODE suite, 1997): L-stable,
    /// so its steps follow the accuracy the waveform needs however fast a time constant is.
    Stiff,
}

/// What a solve carries from one integration to the next, and the work it has done.
pub(super) struct Run {
    /// The last accepted step, seconds: where the next integration starts its step control.
    pub(super) h0: f64,
    pub(super) method: Method,
    /// Volts that set the finite-difference increments of the stiff formula's Jacobian.
    pub(super) volts: f64,
    /// Each state's scale against a voltage ([`super::PeriodicCircuit::state_scale`]).
    pub(super) scales: [f64; MAX_STATES],
    /// Longest explicit step that is stable throughout the period, seconds.
    pub(super) h_stable: f64,
    /// Derivative evaluations (one circuit evaluation each) and accepted steps, in all.
    pub(super) evaluations: usize,
    pub(super) steps: usize,
}

/// Why an integration stopped short without an error.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Outcome {
    Done,
    /// The explicit formula is stability-limited here: the integration is to be done again
    /// with the stiff formula (`Run::method` has been switched).
    Stiff,
}

/// Most steps of one integration (one period) with either formula. The explicit one hands over
/// to the stiff one long before (see `STIFF_STEPS`); the stiff one needs a few hundred to a
/// few thousand at the tightest tolerance, so this is a circuit the model cannot express.
const MAX_STEPS: usize = 100_000;
/// Explicit steps a period would need for stability alone beyond which the stiff formula is
/// cheaper: at the tightest tolerances the stiff one takes up to about 2,500 steps of 3 to 7
/// evaluations a period, the explicit one 6 evaluations a step. Non-stiff supplies need a
/// hundred or so explicit steps a period and never come near it.
pub(super) const STIFF_STEPS: f64 = 2500.0;
/// Steps flagged by Hairer's stiffness test before the projection above is believed.
const STIFF_TESTS_TO_SWITCH: usize = 15;
/// Accepted stiff steps between fresh Jacobians, unless a rejection, kink or turn asks sooner.
const JACOBIAN_EVERY: usize = 1;

/// Shampine and Reichelt's constants: d = 1/(2 + sqrt 2), e32 = 6 + sqrt 2.
const ROS_D: f64 = 1.0 / (2.0 + std::f64::consts::SQRT_2);
const ROS_E32: f64 = 6.0 + std::f64::consts::SQRT_2;

/// LU factors of an n x n matrix (n <= MAX_STATES) with its row order, partial pivoting.
pub(super) struct Lu {
    n: usize,
    a: [[f64; MAX_STATES]; MAX_STATES],
    perm: [usize; MAX_STATES],
}

impl Lu {
    /// Factors `a`; None if it is singular to working precision.
    pub(super) fn factor(n: usize, mut a: [[f64; MAX_STATES]; MAX_STATES]) -> Option<Lu> {
        let mut perm: [usize; MAX_STATES] = std::array::from_fn(|i| i);
        for col in 0..n {
            let pivot = (col..n).max_by(|&i, &j| a[i][col].abs().total_cmp(&a[j][col].abs()))?;
            if a[pivot][col].abs() <= 1e-300 || a[pivot][col].is_nan() {
                return None;
            }
            a.swap(col, pivot);
            perm.swap(col, pivot);
            for row in col + 1..n {
                let factor = a[row][col] / a[col][col];
                a[row][col] = factor;
                for k in col + 1..n {
                    a[row][k] -= factor * a[col][k];
                }
            }
        }
        Some(Lu { n, a, perm })
    }

    /// Overwrites the first n entries of `b` with the solution of A z = b.
    pub(super) fn solve(&self, b: &mut [f64]) {
        let n = self.n;
        let mut z = [0.0; MAX_STATES];
        for i in 0..n {
            let mut acc = b[self.perm[i]];
            for k in 0..i {
                acc -= self.a[i][k] * z[k];
            }
            z[i] = acc;
        }
        for i in (0..n).rev() {
            let mut acc = z[i];
            for k in i + 1..n {
                acc -= self.a[i][k] * z[k];
            }
            z[i] = acc / self.a[i][i];
        }
        b[..n].copy_from_slice(&z[..n]);
    }
}

/// The derivatives' Jacobian for the stiff formula, by forward differences at (t, y) with
/// f(t, y) in `f0`: J[i][j] = df_i/dy_j for every row i and the first `states` columns (the
/// capacitor voltages; the running integrals feed nothing back), and df/dt.
pub(super) struct Jacobian {
    dfdy: [[f64; MAX_STATES]; WIDTH],
    dfdt: Vector,
}

impl Jacobian {
    #[allow(clippy::too_many_arguments)]
    fn at<F>(
        n: usize,
        states: usize,
        f: &mut F,
        t: f64,
        y: &Vector,
        f0: &Vector,
        (volts, scales, period): (f64, &[f64; MAX_STATES], f64),
    ) -> Jacobian
    where
        F: FnMut(f64, &Vector, &mut Vector) -> Probe,
    {
        let mut dfdy = [[0.0; MAX_STATES]; WIDTH];
        let mut probe_y = *y;
        let mut fp = [0.0; WIDTH];
        for j in 0..states {
            // The square root of the rounding unit times the voltage's size: the usual forward
            // difference increment.
            let delta = 1.5e-8 * y[j].abs().max(volts * scales[j]);
            probe_y[j] = y[j] + delta;
            let delta = probe_y[j] - y[j];
            f(t, &probe_y, &mut fp);
            probe_y[j] = y[j];
            for i in 0..n {
                dfdy[i][j] = (fp[i] - f0[i]) / delta;
            }
        }
        // The increment is set by the period, not the step: a step of nanoseconds would leave
        // a difference of a few rounding units of t, all noise.
        let dt = 1.5e-8 * period;
        let dt = (t + dt) - t;
        f(t + dt, y, &mut fp);
        let mut dfdt = [0.0; WIDTH];
        for i in 0..n {
            dfdt[i] = (fp[i] - f0[i]) / dt;
        }
        Jacobian { dfdy, dfdt }
    }
}

/// One Rosenbrock 2(3) step of length `h` from (t, y) with f(t, y) in `f0`: the new state in
/// `y_new`, f at it in `f_new`, and the error estimate h (k1 - 2 k2 + k3) / 6 in `err`; the
/// probe at the step's end is returned. The second-order result is a W-method (Steihaug and
/// Wolfbrandt): second order with any Jacobian, so `jac` may come from an earlier step; the
/// error estimate is sharpest with a fresh one.
#[allow(clippy::too_many_arguments)]
pub(super) fn rosenbrock_step<F>(
    n: usize,
    states: usize,
    f: &mut F,
    t: f64,
    h: f64,
    y: &Vector,
    f0: &Vector,
    jac: &Jacobian,
    y_new: &mut Vector,
    f_new: &mut Vector,
    err: &mut Vector,
) -> Result<Probe, SolveError>
where
    F: FnMut(f64, &Vector, &mut Vector) -> Probe,
{
    let dfdt = &jac.dfdt;
    let jac = &jac.dfdy;
    let hd = h * ROS_D;
    let mut w = [[0.0; MAX_STATES]; MAX_STATES];
    for i in 0..states {
        for j in 0..states {
            w[i][j] = if i == j { 1.0 } else { 0.0 } - hd * jac[i][j];
        }
    }
    let lu = Lu::factor(states, w).ok_or(SolveError::NotFinite)?;
    // W z = b for the whole vector: the states by the LU factors, then the running integrals,
    // whose rows of W are the identity less h d times their dependence on the states.
    let solve = |b: &mut Vector| {
        lu.solve(&mut b[..states]);
        for i in states..n {
            let mut acc = 0.0;
            for j in 0..states {
                acc += jac[i][j] * b[j];
            }
            b[i] += hd * acc;
        }
    };
    let mut k1 = [0.0; WIDTH];
    for i in 0..n {
        k1[i] = f0[i] + hd * dfdt[i];
    }
    solve(&mut k1);
    let mut stage = [0.0; WIDTH];
    for i in 0..n {
        stage[i] = y[i] + 0.5 * h * k1[i];
    }
    let mut f1 = [0.0; WIDTH];
    f(t + 0.5 * h, &stage, &mut f1);
    let mut k2 = [0.0; WIDTH];
    for i in 0..n {
        k2[i] = f1[i] - k1[i];
    }
    solve(&mut k2);
    for i in 0..n {
        k2[i] += k1[i];
        y_new[i] = y[i] + h * k2[i];
    }
    let probe = f(t + h, y_new, f_new);
    let mut k3 = [0.0; WIDTH];
    for i in 0..n {
        k3[i] = f_new[i] - ROS_E32 * (k2[i] - f1[i]) - 2.0 * (k1[i] - f0[i]) + hd * dfdt[i];
    }
    solve(&mut k3);
    for i in 0..n {
        err[i] = h / 6.0 * (k1[i] - 2.0 * k2[i] + k3[i]);
    }
    // The raw estimate does not shrink on a component the circuit forgets within the step (a
    // time constant of nanoseconds), so it would hold the steps to that time constant for an
    // error that is damped before it can matter. Filtered once more through W, as Hairer and
    // Wanner do for Radau5 (Solving ODEs II, IV.8), it keeps its value where h |lambda| is
    // small and falls as 1 / (h |lambda|) where it is large.
    solve(err);
    Ok(probe)
}

/// Integrates dy/dt = f(t, y) from t0 to t1, adapting steps so that the first `controlled`
/// components stay within RTOL (relative) and `atol` (absolute, per component); `on_step` sees each
/// accepted step as (t, h, (y, dy/dt at its start, y, dy/dt at its end), probe at its start,
/// probe at its end). With the explicit formula, a period found stability-limited returns
/// `Outcome::Stiff` (and switches `run.method`) for the caller to integrate it again.
#[allow(clippy::too_many_arguments)]
pub(super) fn integrate<F, S>(
    n: usize,
    states: usize,
    controlled: usize,
    f: &mut F,
    t0: f64,
    t1: f64,
    y: &mut Vector,
    run: &mut Run,
    atol: &Vector,
    breaks: &[f64],
    mut steps_of: Steps<'_>,
    mut on_step: S,
) -> Result<Outcome, SolveError>
where
    F: FnMut(f64, &Vector, &mut Vector) -> Probe,
    S: FnMut(f64, f64, (&Vector, &Vector, &Vector, &Vector), &Probe, &Probe),
{
    let evaluations = std::cell::Cell::new(0usize);
    let mut f = |t: f64, y: &Vector, dy: &mut Vector| {
        evaluations.set(evaluations.get() + 1);
        f(t, y, dy)
    };
    let method = run.method;
    let mut k: [Vector; 7] = [[0.0; WIDTH]; 7];
    let mut t = t0;
    let h_max = match method {
        // Beyond its stability limit an explicit step is only safe while the error control
        // watches it; a replay at a nearby state could excite the fast mode and blow up.
        Method::Explicit => ((t1 - t0) / MIN_STEPS).min(run.h_stable),
        Method::Stiff => (t1 - t0) / MIN_STEPS,
    };
    let mut h = run.h0.min(h_max);
    let mut probe_start = f(t, y, &mut k[0]);
    let mut probe_end = probe_start;
    let mut uncut: Option<f64> = None;
    let mut refinements = 0;
    let mut steps = 0;
    let mut stage = [0.0; WIDTH];
    let mut stage6 = [0.0; WIDTH];
    let mut err_vec = [0.0; WIDTH];
    // Hairer's stiffness test on the explicit formula: steps whose h |lambda| lies beyond its
    // stability boundary, and the run of ordinary steps since the last of them.
    let (mut stiff_tests, mut ordinary) = (0usize, 0usize);
    // The largest |lambda| (1/s) those flagged steps showed.
    let mut stiff_rate = 0.0f64;
    let exponent = match method {
        Method::Explicit => -0.2,
        Method::Stiff => -1.0 / 3.0,
    };
    if let Steps::Adaptive(record) = &mut steps_of {
        record.clear();
    }
    let adaptive = matches!(steps_of, Steps::Adaptive(_));
    let mut replay_at = 0;
    // The stiff formula's Jacobian, and whether the next step takes a fresh one: at the start,
    // after a rejected step, at a kink or a diode's turn, and every JACOBIAN_EVERY steps.
    let mut jacobian: Option<Jacobian> = None;
    let mut refresh = true;
    let mut since_refresh = 0usize;
    // Whether the Jacobian in hand was taken at this step's start.
    let mut fresh_here = false;
    let outcome = loop {
        if t >= t1 {
            break Outcome::Done;
        }
        steps += 1;
        if steps > MAX_STEPS {
            run.evaluations += evaluations.get();
            return Err(SolveError::TooManySteps(MAX_STEPS));
        }
        if run.evaluations + evaluations.get() > MAX_EVALUATIONS {
            run.evaluations += evaluations.get();
            return Err(SolveError::WorkLimit(MAX_EVALUATIONS));
        }
        // Stability-limited explicit steps: the steps taken plus those the rest of the period
        // would take at the fastest rate seen (h |lambda| near 3.3 a step).
        if method == Method::Explicit
            && adaptive
            && stiff_tests >= STIFF_TESTS_TO_SWITCH
            && steps as f64 + (t1 - t) * stiff_rate / 3.3 > STIFF_STEPS
        {
            run.method = Method::Stiff;
            break Outcome::Stiff;
        }
        if let Steps::Replay(grid) = &steps_of {
            let step = grid.get(replay_at).copied();
            h = step.map_or(t1 - t, |g| g.h);
            refresh = step.is_none_or(|g| g.jacobian);
            replay_at += 1;
        }
        let last = t + h >= t1 * (1.0 - 1e-14)
            || matches!(&steps_of, Steps::Replay(g) if replay_at >= g.len());
        if last {
            h = t1 - t;
        }
        // A kink in the source (a clipped crest) must fall on a step's end: inside a step
        // both embedded solutions go wrong alike and the error estimate cannot see it.
        if !last && adaptive {
            let span = 1e-12 * (t1 - t0);
            if let Some(&b) = breaks.iter().find(|&&b| b > t + span && b < t + h - span) {
                uncut = uncut.or(Some(h));
                h = b - t;
            }
        }
        match method {
            Method::Explicit => {
                for s in 1..7 {
                    for i in 0..n {
                        let mut acc = 0.0;
                        for (j, kj) in k.iter().enumerate().take(s) {
                            acc += A[s][j] * kj[i];
                        }
                        stage[i] = y[i] + h * acc;
                    }
                    if s == 5 && adaptive {
                        stage6 = stage;
                    }
                    let (_, rest) = k.split_at_mut(s);
                    let probe = f(t + C[s] * h, &stage, &mut rest[0]);
                    if s == 6 {
                        // The last stage is evaluated at the step's end on the accepted solution.
                        probe_end = probe;
                    }
                }
                // stage now holds the 5th-order solution (the 7th stage's argument, FSAL).
                // A replay controls nothing, so it needs no estimate.
                let controlled = if adaptive { controlled } else { 0 };
                for i in 0..controlled {
                    let mut e = 0.0;
                    for (s, ks) in k.iter().enumerate() {
                        e += E[s] * ks[i];
                    }
                    err_vec[i] = h * e;
                }
            }
            Method::Stiff => {
                if adaptive {
                    refresh = refresh || since_refresh >= JACOBIAN_EVERY;
                }
                let jac = match jacobian.take() {
                    Some(j) if !refresh || fresh_here => j,
                    _ => {
                        since_refresh = 0;
                        fresh_here = true;
                        Jacobian::at(
                            n,
                            states,
                            &mut f,
                            t,
                            y,
                            &k[0],
                            (run.volts, &run.scales, t1 - t0),
                        )
                    }
                };
                let (head, tail) = k.split_at_mut(6);
                let probe = rosenbrock_step(
                    n,
                    states,
                    &mut f,
                    t,
                    h,
                    y,
                    &head[0],
                    &jac,
                    &mut stage,
                    &mut tail[0],
                    &mut err_vec,
                );
                jacobian = Some(jac);
                probe_end = probe?;
            }
        }
        let mut err: f64 = 0.0;
        let controlled = if adaptive { controlled } else { 0 };
        for i in 0..controlled {
            let relative = if i < states { 0.0 } else { RTOL };
            let scale = atol[i] + relative * y[i].abs().max(stage[i].abs());
            err = err.max(err_vec[i].abs() / scale);
        }
        if !err.is_finite() || !stage[..n].iter().all(|v| v.is_finite()) {
            run.evaluations += evaluations.get();
            return Err(SolveError::NotFinite);
        }
        if err <= 1.0 && adaptive && refinements < 6 {
            // A diode law with a corner (a fixed drop) kinks the solution where a path starts
            // or stops conducting; like a source kink it must fall on a step's end. The
            // crossing is found by the secant on the path's overdrive.
            if let Some(s) = first_crossing(&probe_start.edges, &probe_end.edges)
                && s > 1e-3
                && s < 0.999
            {
                uncut = uncut.or(Some(h));
                h *= s * (1.0 + 1e-7);
                refinements += 1;
                continue;
            }
        }
        if err <= 1.0 {
            refinements = 0;
            if method == Method::Explicit && adaptive && states > 0 {
                // h |lambda| estimated from the last two stages, both at t + h (Hairer,
                // Norsett and Wanner, Solving ODEs I, section II.10); 3.25 is near the edge
                // of the formula's stability region.
                let (mut num, mut den) = (0.0, 0.0);
                for i in 0..states {
                    num += (k[6][i] - k[5][i]).powi(2);
                    den += (stage[i] - stage6[i]).powi(2);
                }
                if den > 0.0 && h * h * num > 3.25 * 3.25 * den {
                    stiff_tests += 1;
                    ordinary = 0;
                    stiff_rate = stiff_rate.max((num / den).sqrt());
                } else {
                    ordinary += 1;
                    if ordinary >= 6 {
                        stiff_tests = 0;
                        stiff_rate = 0.0;
                    }
                }
            }
            if let Steps::Adaptive(record) = &mut steps_of {
                record.push(GridStep {
                    h,
                    jacobian: fresh_here,
                });
            }
            fresh_here = false;
            since_refresh += 1;
            // A kink or a diode's turn changes the Jacobian: take a fresh one after it.
            refresh = uncut.is_some();
            on_step(t, h, (y, &k[0], &stage, &k[6]), &probe_start, &probe_end);
            probe_start = probe_end;
            t = if last { t1 } else { t + h };
            y[..n].copy_from_slice(&stage[..n]);
            k[0] = k[6];
            run.steps += 1;
            let grow = if err == 0.0 {
                5.0
            } else {
                (0.9 * err.powf(exponent)).clamp(0.2, 5.0)
            };
            if !last {
                // A discharge at constant current is a straight line with no error to see,
                // so the step would grow past the next conduction pulse: cap it.
                h = (uncut.take().unwrap_or(h * grow)).min(h_max);
                run.h0 = h;
            }
        } else {
            h *= (0.9 * err.powf(exponent)).clamp(0.1, 0.9);
            // A stale Jacobian may be what failed the step.
            refresh = !fresh_here;
        }
    };
    run.evaluations += evaluations.get();
    Ok(outcome)
}

/// Where within a step a switching function first changes sign, as a fraction of the step
/// (linear interpolation), or None; NaN entries mean no function.
pub(super) fn first_crossing(start: &[f64; EDGES], end: &[f64; EDGES]) -> Option<f64> {
    let mut first: Option<f64> = None;
    for (a, b) in start.iter().zip(end) {
        if a.is_finite() && b.is_finite() && (*a > 0.0) != (*b > 0.0) && a != b {
            let s = a / (a - b);
            first = Some(first.map_or(s, |f: f64| f.min(s)));
        }
    }
    first
}

/// Cubic Hermite value at fraction `s` of a step of length `h` (third-order accurate).
#[inline]
pub(super) fn hermite(y0: f64, f0: f64, y1: f64, f1: f64, h: f64, s: f64) -> f64 {
    let s2 = s * s;
    let s3 = s2 * s;
    (2.0 * s3 - 3.0 * s2 + 1.0) * y0
        + (s3 - 2.0 * s2 + s) * h * f0
        + (-2.0 * s3 + 3.0 * s2) * y1
        + (s3 - s2) * h * f1
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::TAU;

    /// A fresh run with the given formula and first step, seconds.
    fn run_with(method: Method, h0: f64) -> Run {
        Run {
            h0,
            method,
            volts: 1.0,
            scales: [1.0; MAX_STATES],
            h_stable: f64::INFINITY,
            evaluations: 0,
            steps: 0,
        }
    }

    /// The probe the test problems report: nothing switches.
    fn quiet() -> Probe {
        Probe {
            edges: [f64::NAN; EDGES],
            ..Probe::default()
        }
    }

    /// Integrates `f` from 0 to `t1` under error control with absolute tolerance `atol` on
    /// the first `n` components; returns the end state and, for every accepted step, the
    /// Hermite interpolant at its middle as (instant, first component).
    fn solve<F>(
        n: usize,
        f: F,
        y0: &[f64],
        t1: f64,
        atol: f64,
        run: &mut Run,
    ) -> (Vector, Vec<(f64, f64)>)
    where
        F: Fn(f64, &Vector, &mut Vector),
    {
        let mut y = [0.0; WIDTH];
        y[..n].copy_from_slice(y0);
        let mut g = |t: f64, y: &Vector, dy: &mut Vector| {
            f(t, y, dy);
            quiet()
        };
        let mut grid = Vec::new();
        let mut mids = Vec::new();
        let outcome = integrate(
            n,
            n,
            n,
            &mut g,
            0.0,
            t1,
            &mut y,
            run,
            &[atol; WIDTH],
            &[],
            Steps::Adaptive(&mut grid),
            |t, h, (y0, f0, y1, f1), _, _| {
                mids.push((t + 0.5 * h, hermite(y0[0], f0[0], y1[0], f1[0], h, 0.5)));
            },
        )
        .unwrap();
        assert_eq!(outcome, Outcome::Done);
        assert_eq!(grid.len(), run.steps, "every accepted step is recorded");
        (y, mids)
    }

    #[test]
    fn exponential_decay_and_its_interpolant_match_the_exact_solution() {
        // y' = -y / tau, y(0) = 1: y(t) = exp(-t / tau) (any calculus text).
        let tau = 0.25;
        let mut run = run_with(Method::Explicit, 1e-3);
        let decay = |_t: f64, y: &Vector, dy: &mut Vector| dy[0] = -y[0] / tau;
        let (y, mids) = solve(1, decay, &[1.0], 1.0, 1e-9, &mut run);
        let exact = (-4.0f64).exp();
        assert!((y[0] - exact).abs() < 1e-8, "{} against {exact}", y[0]);
        // The dense output between step ends: the cubic Hermite is third order, so it holds to
        // about the step's own error.
        let worst = mids
            .iter()
            .map(|&(t, v)| (v - (-t / tau).exp()).abs())
            .fold(0.0, f64::max);
        assert!(worst < 1e-7, "interpolant off by {worst}");
        // A smooth problem needs few steps: MIN_STEPS caps them at 1/24 of the span.
        assert!(run.steps >= 24 && run.steps < 200, "{} steps", run.steps);
    }

    #[test]
    fn a_harmonic_oscillator_comes_back_after_one_period() {
        // y'' = -w^2 y as two states: y(t) = cos(w t), y'(t) = -w sin(w t).
        let w = TAU * 50.0;
        let period = TAU / w;
        let mut run = run_with(Method::Explicit, period / 64.0);
        let spring = |_t: f64, y: &Vector, dy: &mut Vector| {
            dy[0] = w * y[1];
            dy[1] = -w * y[0];
        };
        // The second state is y' / w, so both have the size 1 and one tolerance suits them.
        let (y, mids) = solve(2, spring, &[1.0, 0.0], period, 1e-10, &mut run);
        assert!((y[0] - 1.0).abs() < 1e-8, "y(T) = {}", y[0]);
        assert!(y[1].abs() < 1e-8, "y'(T) / w = {}", y[1]);
        let worst = mids
            .iter()
            .map(|&(t, v)| (v - (w * t).cos()).abs())
            .fold(0.0, f64::max);
        assert!(worst < 1e-7, "interpolant off by {worst}");
    }

    #[test]
    fn the_stiff_formula_follows_a_fast_low_pass_in_few_steps() {
        // dv/dt = (sin wt - v) / tau with tau = 20 ns against a 20 ms period: the periodic
        // solution is (sin wt - w tau cos wt) / (1 + (w tau)^2) (the first-order low-pass,
        // any circuits text). The explicit pair would need about 3 million steps.
        let (w, tau) = (TAU * 50.0, 2e-8);
        let wt = w * tau;
        let exact = |t: f64| ((w * t).sin() - wt * (w * t).cos()) / (1.0 + wt * wt);
        let mut run = run_with(Method::Stiff, 0.02 / 64.0);
        let rc = |t: f64, y: &Vector, dy: &mut Vector| dy[0] = ((w * t).sin() - y[0]) / tau;
        let (y, _) = solve(1, rc, &[exact(0.0)], 0.02, 1e-7, &mut run);
        // The filtered error estimate lets the state drift from its exact path by a few
        // times the tolerance where h / tau is large (see `rosenbrock_step`).
        assert!(
            (y[0] - exact(0.02)).abs() < 1e-5,
            "{} against {}",
            y[0],
            exact(0.02)
        );
        assert!(run.steps < 5_000, "{} steps", run.steps);
        assert!(run.evaluations < 30_000, "{} evaluations", run.evaluations);
    }

    #[test]
    fn first_crossing_finds_the_earliest_sign_change() {
        let nan = f64::NAN;
        // Edge 0 from 1 to -1 crosses at 0.5; edge 2 from -3 to 1 crosses at 0.75.
        assert_eq!(
            first_crossing(&[1.0, nan, -3.0, nan], &[-1.0, nan, 1.0, nan]),
            Some(0.5)
        );
        assert_eq!(
            first_crossing(&[1.0, nan, 2.0, nan], &[0.5, nan, 1.0, nan]),
            None
        );
    }

    #[test]
    fn lu_solves_a_pivoting_system() {
        let mut a = [[0.0; MAX_STATES]; MAX_STATES];
        a[0][..3].copy_from_slice(&[0.0, 2.0, 1.0]);
        a[1][..3].copy_from_slice(&[1.0, 1.0, 0.0]);
        a[2][..3].copy_from_slice(&[3.0, 0.0, 1.0]);
        let lu = Lu::factor(3, a).unwrap();
        // x = (1, 2, 3): b = A x
        let mut b = [7.0, 3.0, 6.0];
        lu.solve(&mut b);
        for (got, want) in b.iter().zip([1.0, 2.0, 3.0]) {
            assert!((got - want).abs() < 1e-12, "{b:?}");
        }
    }
}
