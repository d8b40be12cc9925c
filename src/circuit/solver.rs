//! The periodic steady state of any circuit driven by the mains: shooting on the one-period map.
//!
//! The solver knows nothing of rectifiers. A circuit gives its capacitor voltages' derivatives
//! and the probe values at an instant; the solver finds the start-of-period state that the
//! circuit returns to after one period (Newton with Broyden updates on x -> Phi(x) - x), so the
//! cost does not grow with the load's time constant as a switch-on transient would. Each period
//! is integrated by the Dormand-Prince 5(4) pair with error control, which shortens its steps
//! through the conduction pulses by itself.

// Small dense matrices and Runge-Kutta stages read best with their indices written out.
#![allow(clippy::needless_range_loop)]

/// Most capacitor voltages a circuit may have, plus the running integrals of the final pass.
pub const MAX_STATES: usize = 4;
const QUADRATURES: usize = 8;
/// Switching functions a circuit may report: two charging paths and the load's knee.
pub const EDGES: usize = 3;
const WIDTH: usize = MAX_STATES + QUADRATURES;

type Vector = [f64; WIDTH];

/// What a circuit reports at one instant, in volts and amps.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Probe {
    /// The rail, across the load.
    pub v_out: f64,
    /// Across the first filter capacitor (one of a doubler's two; a CRC's input side).
    pub v_cap: f64,
    /// Across the whole secondary winding, at its terminals.
    pub v_secondary: f64,
    /// The level the rectified winding pulls the rail towards while a diode conducts.
    pub v_source: f64,
    /// One diode's forward current.
    pub i_diode: f64,
    /// One diode's reverse voltage (negative while it conducts).
    pub v_reverse: f64,
    /// The winding current counted for its RMS (whole secondary, or one half of a center tap).
    pub i_winding: f64,
    /// Current into the first filter capacitor.
    pub i_cap: f64,
    pub i_load: f64,
    /// By how much each charging path's drive exceeds its diodes' conduction threshold, volts,
    /// where the diode law has a corner there (a fixed drop), and the rail's height above a
    /// current load's knee; NaN where the law is smooth.
    pub edges: [f64; EDGES],
}

impl Probe {
    /// The probe a fraction `s` of the way from `self` to `other`, each value drawn straight.
    pub fn towards(&self, other: &Probe, s: f64) -> Probe {
        let mix = |a: f64, b: f64| a + (b - a) * s;
        Probe {
            v_out: mix(self.v_out, other.v_out),
            v_cap: mix(self.v_cap, other.v_cap),
            v_secondary: mix(self.v_secondary, other.v_secondary),
            v_source: mix(self.v_source, other.v_source),
            i_diode: mix(self.i_diode, other.i_diode),
            v_reverse: mix(self.v_reverse, other.v_reverse),
            i_winding: mix(self.i_winding, other.i_winding),
            i_cap: mix(self.i_cap, other.i_cap),
            i_load: mix(self.i_load, other.i_load),
            edges: self.edges,
        }
    }
}

/// A circuit the solver can bring to its periodic steady state.
pub trait PeriodicCircuit {
    /// Number of capacitor voltages (0 for an unfiltered rectifier), at most [`MAX_STATES`].
    fn states(&self) -> usize;
    /// The circuit's own period in seconds (half the mains period for a symmetric full-wave).
    fn period_s(&self) -> f64;
    /// Maps the state at the end of [`PeriodicCircuit::period_s`] onto the state the circuit
    /// starts its next period from: a circuit that repeats after half a cycle with its
    /// capacitors traded (a doubler) swaps them here. Most circuits need nothing.
    fn after_period(&self, _x: &mut [f64]) {}
    /// The mains period in seconds, over which the figures are taken.
    fn line_period_s(&self) -> f64;
    /// Volts that set the scale of the tolerances (the winding's peak).
    fn volts_scale(&self) -> f64;
    /// The smallest voltage change that matters, volts: a small part of the expected ripple,
    /// since the charge a period moves is the ripple times the capacitance.
    fn volts_resolution(&self) -> f64;
    /// Instants within the mains period where the drive has a kink (seconds, ascending).
    fn breakpoints_s(&self) -> Vec<f64>;
    /// Fills `dx` with dV/dt of each capacitor (V/s) at `t` seconds and returns the probe.
    fn evaluate(&self, t: f64, x: &[f64], dx: &mut [f64]) -> Probe;
    /// As [`PeriodicCircuit::evaluate`], for when only the derivatives and the switching
    /// functions are wanted (the Newton iterations), which a circuit may compute for less.
    fn derivatives(&self, t: f64, x: &[f64], dx: &mut [f64]) -> [f64; EDGES] {
        self.evaluate(t, x, dx).edges
    }
    /// A start for Newton, volts; a hand estimate is close enough.
    fn initial_guess(&self, x: &mut [f64]);
}

/// Why no steady state was found.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SolveError {
    #[error("the solver did not settle to a steady state after {0} Newton steps")]
    NoConvergence(usize),
    #[error(
        "the integration needed more than {0} steps in one period (a time constant too short for this supply)"
    )]
    TooManySteps(usize),
    #[error("the circuit produced a value that is not a number")]
    NotFinite,
    #[error(
        "the solver spent its {0} circuit evaluations (about 0.1 s) without settling to a steady state"
    )]
    WorkLimit(usize),
}

/// One period of the steady state, sampled evenly, with its exact averages.
#[derive(Debug, Clone, PartialEq)]
pub struct SteadyState {
    /// Capacitor voltages at the start of the period.
    pub start: Vec<f64>,
    /// The same at its end: equal to `start` within the solver's tolerance.
    pub end: Vec<f64>,
    /// Sample instants in seconds from the mains zero crossing.
    pub t_s: Vec<f64>,
    pub probes: Vec<Probe>,
    /// Largest and smallest rail voltage and largest diode current and reverse voltage found at
    /// the sample instants and at every integration step.
    pub v_out_max: f64,
    pub v_out_min: f64,
    pub v_cap_max: f64,
    pub i_diode_peak: f64,
    pub v_reverse_max: f64,
    /// Period averages: rail, diode current, load current; mean squares: ripple (about
    /// `ripple_ref_v`), diode, winding and capacitor currents.
    pub mean_v_out: f64,
    pub mean_i_diode: f64,
    pub mean_i_load: f64,
    /// Average current into the first capacitor: zero in a true steady state.
    pub mean_i_cap: f64,
    pub mean_sq_ripple: f64,
    pub ripple_ref_v: f64,
    pub mean_sq_i_diode: f64,
    pub mean_sq_i_winding: f64,
    pub mean_sq_i_cap: f64,
    /// Newton iterations and one-period integrations spent, for the benchmarks' curiosity.
    pub newton_steps: usize,
    pub integrations: usize,
    /// The work of the whole solve: circuit evaluations (derivatives and probes) and accepted
    /// integration steps; at most [`MAX_EVALUATIONS`] evaluations, which bounds its time.
    pub evaluations: usize,
    pub steps: usize,
    /// Whether the periods were integrated by the stiff (Rosenbrock) formula.
    pub stiff: bool,
}

/// Sample count of the stored period (at least 200 asked for the sketch).
pub const SAMPLES: usize = 256;

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
enum Steps<'a> {
    /// Error-controlled; the accepted steps are recorded.
    Adaptive(&'a mut Vec<GridStep>),
    /// The recorded steps again, with no error control: the one-period map is then a smooth
    /// function of the start state, which Newton and the finite differences need.
    Replay(&'a [GridStep]),
}

/// One recorded step: its length in seconds, and whether the stiff formula took a fresh
/// Jacobian at its start (a replay takes one at the same steps, so the map stays smooth).
#[derive(Debug, Clone, Copy, PartialEq)]
struct GridStep {
    h: f64,
    jacobian: bool,
}

impl Steps<'_> {
    /// The same choice again, for a second try at the same integration.
    fn again(&mut self) -> Steps<'_> {
        match self {
            Steps::Adaptive(record) => Steps::Adaptive(record),
            Steps::Replay(grid) => Steps::Replay(grid),
        }
    }
}

/// Which formula integrates a solve's periods.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Method {
    /// Dormand-Prince 5(4): explicit, cheap per step, stability-limited to steps of about
    /// 3.3 of the circuit's fastest time constant.
    Explicit,
    /// The Rosenbrock 2(3) pair of Shampine and Reichelt (the MATLAB ODE suite, 1997): L-stable,
    /// so its steps follow the accuracy the waveform needs however fast a time constant is.
    Stiff,
}

/// What a solve carries from one integration to the next, and the work it has done.
struct Run {
    /// The last accepted step, seconds: where the next integration starts its step control.
    h0: f64,
    method: Method,
    /// Volts that set the finite-difference increments of the stiff formula's Jacobian.
    volts: f64,
    /// Longest explicit step that is stable throughout the period, seconds.
    h_stable: f64,
    /// Derivative evaluations (one circuit evaluation each) and accepted steps, in all.
    evaluations: usize,
    steps: usize,
}

/// Why an integration stopped short without an error.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Outcome {
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
const STIFF_STEPS: f64 = 2500.0;
/// Steps flagged by Hairer's stiffness test before the projection above is believed.
const STIFF_TESTS_TO_SWITCH: usize = 15;
/// Most circuit evaluations one solve may spend before it is refused: this machine does about
/// 4,000 a millisecond with the stiff formula and 6,000 with the explicit one, so this bounds
/// a solve to about 100 ms (README, "Time bound").
pub const MAX_EVALUATIONS: usize = 400_000;

/// Accepted stiff steps between fresh Jacobians, unless a rejection, kink or turn asks sooner.
const JACOBIAN_EVERY: usize = 1;

/// Shampine and Reichelt's constants: d = 1/(2 + sqrt 2), e32 = 6 + sqrt 2.
const ROS_D: f64 = 1.0 / (2.0 + std::f64::consts::SQRT_2);
const ROS_E32: f64 = 6.0 + std::f64::consts::SQRT_2;

/// LU factors of an n x n matrix (n <= MAX_STATES) with its row order, partial pivoting.
struct Lu {
    n: usize,
    a: [[f64; MAX_STATES]; MAX_STATES],
    perm: [usize; MAX_STATES],
}

impl Lu {
    /// Factors `a`; None if it is singular to working precision.
    fn factor(n: usize, mut a: [[f64; MAX_STATES]; MAX_STATES]) -> Option<Lu> {
        let mut perm = [0, 1, 2, 3];
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
    fn solve(&self, b: &mut [f64]) {
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
struct Jacobian {
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
        (volts, period): (f64, f64),
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
            let delta = 1.5e-8 * y[j].abs().max(volts);
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
fn rosenbrock_step<F>(
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
fn integrate<F, S>(
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
                        Jacobian::at(n, states, &mut f, t, y, &k[0], (run.volts, t1 - t0))
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
fn first_crossing(start: &[f64; EDGES], end: &[f64; EDGES]) -> Option<f64> {
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
fn hermite(y0: f64, f0: f64, y1: f64, f1: f64, h: f64, s: f64) -> f64 {
    let s2 = s * s;
    let s3 = s2 * s;
    (2.0 * s3 - 3.0 * s2 + 1.0) * y0
        + (s3 - 2.0 * s2 + s) * h * f0
        + (-2.0 * s3 + 3.0 * s2) * y1
        + (s3 - s2) * h * f1
}

/// The one-period map: capacitor voltages after one period from `x` (volts).
fn period_map<Ckt: PeriodicCircuit + ?Sized>(
    c: &Ckt,
    x: &[f64],
    run: &mut Run,
    mut steps: Steps<'_>,
) -> Result<Vec<f64>, SolveError> {
    let n = c.states();
    let mut f = |t: f64, y: &Vector, dy: &mut Vector| Probe {
        edges: c.derivatives(t, &y[..n], &mut dy[..n]),
        ..Probe::default()
    };
    let atol = [tolerance_v(c); WIDTH];
    let breaks = c.breakpoints_s();
    let mut own_grid = Vec::new();
    let mut under_control = false;
    loop {
        let mut y = [0.0; WIDTH];
        y[..n].copy_from_slice(x);
        let outcome = match integrate(
            n,
            n,
            n,
            &mut f,
            0.0,
            c.period_s(),
            &mut y,
            run,
            &atol,
            &breaks,
            if under_control {
                Steps::Adaptive(&mut own_grid)
            } else {
                steps.again()
            },
            |_, _, _, _, _| {},
        ) {
            // A replay with the stiff formula can run away where a diode turns within a step
            // that no error control watches: this period is then integrated under control.
            Err(SolveError::NotFinite)
                if run.method == Method::Stiff
                    && !under_control
                    && matches!(steps, Steps::Replay(_)) =>
            {
                under_control = true;
                continue;
            }
            other => other?,
        };
        // A stiff period is integrated again from its start with the stiff formula.
        if outcome == Outcome::Done {
            c.after_period(&mut y[..n]);
            return Ok(y[..n].to_vec());
        }
    }
}

/// Picks the formula before the first period: the stiffness present all period long (the
/// smallest, over eight instants, of the Jacobian's row-sum norm at the starting state, a bound
/// on its fastest rate) sets how many steps the explicit formula would need for stability
/// alone. Beyond `STIFF_STEPS` of them the stiff formula is taken from the start;
/// otherwise the explicit steps are capped at that stability limit. Stiffness that comes and
/// goes (a diode conducting through a small resistance) is left to the error control and to
/// the switch inside `integrate`.
fn choose_method<Ckt: PeriodicCircuit + ?Sized>(c: &Ckt, x: &[f64], run: &mut Run) {
    let n = c.states();
    let period = c.period_s();
    let mut slowest_rate = f64::INFINITY;
    let (mut f0, mut fp) = ([0.0; MAX_STATES], [0.0; MAX_STATES]);
    for k in 0..8 {
        let t = period * k as f64 / 8.0;
        c.derivatives(t, x, &mut f0[..n]);
        let mut rows = [0.0f64; MAX_STATES];
        for j in 0..n {
            let mut xp = [0.0; MAX_STATES];
            xp[..n].copy_from_slice(x);
            let delta = 1.5e-8 * x[j].abs().max(run.volts);
            xp[j] += delta;
            c.derivatives(t, &xp[..n], &mut fp[..n]);
            for i in 0..n {
                rows[i] += ((fp[i] - f0[i]) / delta).abs();
            }
        }
        run.evaluations += n + 1;
        let rate = rows[..n].iter().fold(0.0f64, |m, v| m.max(*v));
        if rate.is_finite() {
            slowest_rate = slowest_rate.min(rate);
        }
    }
    if !slowest_rate.is_finite() || slowest_rate <= 0.0 {
        return;
    }
    // The explicit pair's stability region reaches about 3.3 along the negative axis.
    run.h_stable = 3.0 / slowest_rate;
    if period / run.h_stable > STIFF_STEPS {
        run.method = Method::Stiff;
    }
}

/// Solves `a x = b` for n <= 4 by Gaussian elimination with partial pivoting; None if singular.
fn solve_linear(n: usize, a: &mut [[f64; MAX_STATES]; MAX_STATES], b: &mut [f64]) -> Option<()> {
    for col in 0..n {
        let pivot = (col..n).max_by(|&i, &j| a[i][col].abs().total_cmp(&a[j][col].abs()))?;
        if a[pivot][col].abs() < 1e-300 {
            return None;
        }
        a.swap(col, pivot);
        b.swap(col, pivot);
        for row in col + 1..n {
            let factor = a[row][col] / a[col][col];
            for k in col..n {
                a[row][k] -= factor * a[col][k];
            }
            b[row] -= factor * b[col];
        }
    }
    for col in (0..n).rev() {
        let mut acc = b[col];
        for k in col + 1..n {
            acc -= a[col][k] * b[k];
        }
        b[col] = acc / a[col][col];
    }
    Some(())
}

/// Finds the periodic steady state of `c` and samples one mains period of it.
pub fn steady_state<Ckt: PeriodicCircuit + ?Sized>(c: &Ckt) -> Result<SteadyState, SolveError> {
    let n = c.states();
    assert!(
        n <= MAX_STATES,
        "a circuit with more states than the solver holds"
    );
    let scale = c.volts_scale().max(1e-6);
    let mut x = vec![0.0; n];
    c.initial_guess(&mut x);
    let mut run = Run {
        h0: c.period_s() / 64.0,
        method: Method::Explicit,
        volts: scale,
        h_stable: f64::INFINITY,
        evaluations: 0,
        steps: 0,
    };
    let run = &mut run;
    if n > 0 {
        choose_method(c, &x, run);
    }
    let mut integrations = 0;
    let mut newton_steps = 0;
    if n > 0 {
        let mut grid = Vec::new();
        let mut g = sub(&period_map(c, &x, run, Steps::Adaptive(&mut grid))?, &x);
        integrations += 1;
        // Finite-difference Jacobian of G(x) = Phi(x) - x to start; Broyden keeps it after.
        let mut jac = [[0.0; MAX_STATES]; MAX_STATES];
        let delta = 1e-5 * scale;
        for j in 0..n {
            let mut xp = x.clone();
            xp[j] += delta;
            let gp = sub(&period_map(c, &xp, run, Steps::Replay(&grid))?, &xp);
            integrations += 1;
            for i in 0..n {
                jac[i][j] = (gp[i] - g[i]) / delta;
            }
        }
        let limit = 60;
        let tol = tolerance_v(c);
        // Whether `g` came from an error-controlled pass at the present `x`.
        let mut fresh = true;
        loop {
            newton_steps += 1;
            if newton_steps > limit {
                // Newton can wander where a starved load's knee folds the map; plain periods
                // then converge, since such a circuit forgets its start within a few cycles.
                x = plain_periods(c, &x, run, tol, &mut integrations)?
                    .ok_or(SolveError::NoConvergence(limit))?;
                break;
            }
            let mut step: Vec<f64> = g.iter().map(|v| -v).collect();
            let mut a = jac;
            if solve_linear(n, &mut a, &mut step).is_none() {
                // A flat map means the state is forgotten within one period: Phi(x) is the answer.
                step = g.clone();
            }
            // Never step further than the winding's peak: the map is only piecewise smooth.
            let longest = step.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            if longest > scale {
                for s in step.iter_mut() {
                    *s *= scale / longest;
                }
            }
            // The replayed map is smooth, so Newton is quadratic on it and is run to well below
            // the tolerance. But the replayed steps were chosen for an earlier state, so the
            // answer is confirmed by the final pass, with steps chosen for itself (below).
            // Local errors add up over a period's hundred-odd steps (a lightly loaded
            // capacitor forgets little), so an error-controlled period must come back to
            // within 300 tolerances of where it started: 3e-4 of the ripple, a charge balance
            // good to 0.03 %.
            let worst_g = g.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            if (fresh && worst_g <= 300.0 * tol) || (!fresh && longest <= 1e-2 * tol) {
                break;
            }
            let mut x_new: Vec<f64> = x.iter().zip(&step).map(|(a, b)| a + b).collect();
            // A long step moves the conduction pulses: let the integrator find its steps anew.
            fresh = longest > 1e-4 * scale;
            let steps = if fresh {
                Steps::Adaptive(&mut grid)
            } else {
                Steps::Replay(&grid)
            };
            let mut g_new = sub(&period_map(c, &x_new, run, steps)?, &x_new);
            integrations += 1;
            // Where no diode conducts the map is flat and Newton overshoots: halve the step
            // until the mismatch shrinks, and fall back on one plain period (x -> Phi(x)),
            // which a capacitor that only discharges between pulses always gets closer by.
            let norm = |v: &[f64]| v.iter().fold(0.0f64, |m, a| m.max(a.abs()));
            let mut halvings = 0;
            while fresh && norm(&g_new) > norm(&g) && halvings < 8 {
                halvings += 1;
                for s in step.iter_mut() {
                    *s *= 0.5;
                }
                if halvings == 8 {
                    step.clone_from(&g);
                }
                x_new = x.iter().zip(&step).map(|(a, b)| a + b).collect();
                g_new = sub(
                    &period_map(c, &x_new, run, Steps::Adaptive(&mut grid))?,
                    &x_new,
                );
                integrations += 1;
            }
            let dg: Vec<f64> = g_new.iter().zip(&g).map(|(a, b)| a - b).collect();
            let ss: f64 = step.iter().map(|v| v * v).sum();
            if ss > 0.0 {
                for i in 0..n {
                    let mut jd = 0.0;
                    for j in 0..n {
                        jd += jac[i][j] * step[j];
                    }
                    for j in 0..n {
                        jac[i][j] += (dg[i] - jd) * step[j] / ss;
                    }
                }
            }
            x = x_new;
            g = g_new;
            if !x.iter().all(|v| v.is_finite()) {
                return Err(SolveError::NotFinite);
            }
        }
    }
    // The final pass also holds the charge integrals to tolerance, so it is the most accurate
    // period integrated. Should it not close on itself (a capacitor so lightly loaded that a
    // small error in the map moves the fixed point far), Newton runs on the final pass itself,
    // replaying its steps: that map is smooth, so it closes to rounding, and since the same
    // stages integrate the charge, the charge balance then holds as exactly.
    let mut grid_t = Vec::new();
    let mut state = final_pass(c, &x, run, Steps::Adaptive(&mut grid_t))?;
    integrations += 1;
    let tol = tolerance_v(c);
    let gap =
        |s: &SteadyState| -> Vec<f64> { s.end.iter().zip(&s.start).map(|(e, b)| e - b).collect() };
    let worst = |g: &[f64]| g.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let mut g = gap(&state);
    // A replay with the stiff formula can run away where a diode turns within a step that the
    // error control no longer watches; the error-controlled pass then stands as the answer.
    if n > 0 && worst(&g) > 300.0 * tol {
        let controlled = state.clone();
        'close: {
            // A circuit that repeats every half cycle is integrated with the first half's steps
            // twice over: the same discrete map on both halves keeps the closed period symmetric,
            // where independent steps would let an ill-conditioned light load split its charge
            // unevenly between the two diodes.
            if c.period_s() < 0.75 * c.line_period_s() {
                let half = c.period_s();
                let mut t = 0.0;
                let mut first = Vec::new();
                for &step in &grid_t {
                    if t >= half * (1.0 - 1e-12) {
                        break;
                    }
                    first.push(step);
                    t += step.h;
                }
                grid_t = first.iter().chain(first.iter()).copied().collect();
                state = match final_pass(c, &x, run, Steps::Replay(&grid_t)) {
                    Ok(s) => s,
                    Err(SolveError::NotFinite) => {
                        state = controlled.clone();
                        break 'close;
                    }
                    Err(e) => return Err(e),
                };
                integrations += 1;
                g = gap(&state);
            }
            let delta = 1e-6 * scale;
            let mut jt = [[0.0; MAX_STATES]; MAX_STATES];
            for j in 0..n {
                let mut xp = x.clone();
                xp[j] += delta;
                let sp = match final_pass(c, &xp, run, Steps::Replay(&grid_t)) {
                    Ok(s) => s,
                    Err(SolveError::NotFinite) => {
                        state = controlled.clone();
                        break 'close;
                    }
                    Err(e) => return Err(e),
                };
                integrations += 1;
                let gp = gap(&sp);
                for i in 0..n {
                    jt[i][j] = (gp[i] - g[i]) / delta;
                }
            }
            for _ in 0..8 {
                let mut step: Vec<f64> = g.iter().map(|v| -v).collect();
                let mut a = jt;
                if solve_linear(n, &mut a, &mut step).is_none() {
                    break;
                }
                x = x.iter().zip(&step).map(|(a, b)| a + b).collect();
                state = match final_pass(c, &x, run, Steps::Replay(&grid_t)) {
                    Ok(s) => s,
                    Err(SolveError::NotFinite) => {
                        state = controlled.clone();
                        break 'close;
                    }
                    Err(e) => return Err(e),
                };
                integrations += 1;
                g = gap(&state);
                if worst(&g) <= 1e-3 * tol {
                    break;
                }
            }
        }
    }
    state.newton_steps = newton_steps;
    state.integrations = integrations;
    state.evaluations = run.evaluations;
    state.steps = run.steps;
    state.stiff = run.method == Method::Stiff;
    Ok(state)
}

/// What the final pass integrates over the period: the rail, its ripple about `ripple_ref_v`
/// squared, the diode current and its square, the winding's and capacitor's squares, the
/// load current and the capacitor current.
fn integrands(p: &Probe, ripple_ref_v: f64) -> [f64; QUADRATURES] {
    let r = p.v_out - ripple_ref_v;
    [
        p.v_out,
        r * r,
        p.i_diode,
        p.i_diode * p.i_diode,
        p.i_winding * p.i_winding,
        p.i_cap * p.i_cap,
        p.i_load,
        p.i_cap,
    ]
}

/// Repeats one period from `x` until the state comes back within 300 tolerances, at most 500
/// times (and within the solve's evaluation budget); None if it never does.
fn plain_periods<Ckt: PeriodicCircuit + ?Sized>(
    c: &Ckt,
    x: &[f64],
    run: &mut Run,
    tol: f64,
    integrations: &mut usize,
) -> Result<Option<Vec<f64>>, SolveError> {
    let mut x = x.to_vec();
    let mut grid = Vec::new();
    for _ in 0..500 {
        let next = match period_map(c, &x, run, Steps::Adaptive(&mut grid)) {
            Ok(next) => next,
            Err(SolveError::WorkLimit(n)) => return Err(SolveError::WorkLimit(n)),
            Err(_) => return Ok(None),
        };
        *integrations += 1;
        let moved = next
            .iter()
            .zip(&x)
            .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
        x = next;
        if !x.iter().all(|v| v.is_finite()) {
            return Ok(None);
        }
        if moved <= 300.0 * tol {
            return Ok(Some(x));
        }
    }
    Ok(None)
}

/// Absolute tolerance on the capacitor voltages, volts: 1e-5 of the ripple keeps the charge
/// balance of a period within 1e-4, bounded to 1e-10..1e-7 of the winding's peak.
fn tolerance_v<Ckt: PeriodicCircuit + ?Sized>(c: &Ckt) -> f64 {
    let scale = c.volts_scale().max(1e-6);
    (1e-6 * c.volts_resolution()).clamp(1e-10 * scale, 1e-7 * scale)
}

fn sub(a: &[f64], b: &[f64]) -> Vec<f64> {
    a.iter().zip(b).map(|(x, y)| x - y).collect()
}

/// Integrates one mains period from the steady start, with the running integrals appended to
/// the state so the averages are as accurate as the integration itself.
fn final_pass<Ckt: PeriodicCircuit + ?Sized>(
    c: &Ckt,
    x: &[f64],
    run: &mut Run,
    mut steps: Steps<'_>,
) -> Result<SteadyState, SolveError> {
    let n = c.states();
    let period = c.line_period_s();
    let mut scratch = [0.0; MAX_STATES];
    let first = c.evaluate(0.0, x, &mut scratch[..n]);
    let ripple_ref_v = first.v_out;
    let mut y = [0.0; WIDTH];
    y[..n].copy_from_slice(x);
    let mut f = |t: f64, y: &Vector, dy: &mut Vector| {
        let p = c.evaluate(t, &y[..n], &mut dy[..n]);
        dy[n..n + QUADRATURES].copy_from_slice(&integrands(&p, ripple_ref_v));
        p
    };
    let mut t_s = Vec::with_capacity(SAMPLES);
    let mut probes = Vec::with_capacity(SAMPLES);
    // Probes at every step end as well as the even samples, so a crest between samples counts.
    let mut extremes: Vec<Probe> = Vec::with_capacity(4 * SAMPLES);
    let mut end = Vec::new();
    let dt = period / SAMPLES as f64;
    if n == 0 {
        // Nothing to integrate but the averages: Simpson's rule on a fine fixed grid.
        // Simpson's rule with every sample instant a node.
        let fine = SAMPLES;
        let h = period / fine as f64;
        let mut acc = [0.0; QUADRATURES];
        for i in 0..=fine {
            let t = i as f64 * h;
            let p = c.evaluate(t, &[], &mut []);
            let w = if i == 0 || i == fine {
                1.0
            } else if i % 2 == 1 {
                4.0
            } else {
                2.0
            };
            for (a, v) in acc.iter_mut().zip(integrands(&p, ripple_ref_v)) {
                *a += w * v * h / 3.0;
            }
            extremes.push(p);
            if i < fine {
                t_s.push(t);
                probes.push(p);
            }
        }
        y[..QUADRATURES].copy_from_slice(&acc);
        run.evaluations += fine + 1;
    } else {
        // The charge integrals are held to the same relative accuracy as the voltages, so that
        // a narrow pulse is resolved for its charge and not only for the jump it leaves; the
        // mean squares need no control of their own.
        // A circuit that repeats every half cycle gets a step end at the half, so that the two
        // halves can be integrated alike (see the closure in `steady_state`).
        let mut breaks = c.breakpoints_s();
        if c.period_s() < 0.75 * period {
            breaks.push(c.period_s());
            breaks.sort_by(f64::total_cmp);
        }
        let mut atol = [f64::INFINITY; WIDTH];
        atol[..n].fill(tolerance_v(c));
        let charge = 1e-6 * first.i_load.abs().max(1e-9) * period;
        atol[n] = tolerance_v(c) * period;
        for q in [2, 6, 7] {
            atol[n + q] = charge;
        }
        loop {
            let mut next = 0usize;
            let mut mids = 0usize;
            let stiff = run.method == Method::Stiff;
            t_s.clear();
            probes.clear();
            extremes.clear();
            y = [0.0; WIDTH];
            y[..n].copy_from_slice(x);
            let outcome = integrate(
                n + QUADRATURES,
                n,
                n + QUADRATURES,
                &mut f,
                0.0,
                period,
                &mut y,
                run,
                &atol,
                &breaks,
                steps.again(),
                |t, h, (y0, f0, y1, f1), start, end| {
                    // Steps are short wherever the waveform bends (the pulses), so the even
                    // samples are drawn straight between step ends; the extremes come from the
                    // step ends themselves.
                    while next < SAMPLES && (next as f64) * dt < t + h {
                        let ts = next as f64 * dt;
                        let s = ((ts - t) / h).clamp(0.0, 1.0);
                        t_s.push(ts);
                        probes.push(start.towards(end, s));
                        next += 1;
                    }
                    extremes.push(*end);
                    // A pulse's crest lies between step ends: look at the middle of each step in
                    // which a diode conducts, from the interpolated state.
                    if start.i_diode > 0.0 || end.i_diode > 0.0 {
                        let mut mid = [0.0; MAX_STATES];
                        for i in 0..n {
                            mid[i] = if stiff {
                                // A fast state's derivatives are far too large for a cubic
                                // through them to mean anything across the step.
                                0.5 * (y0[i] + y1[i])
                            } else {
                                hermite(y0[i], f0[i], y1[i], f1[i], h, 0.5)
                            };
                        }
                        let mut dx = [0.0; MAX_STATES];
                        extremes.push(c.evaluate(t + 0.5 * h, &mid[..n], &mut dx[..n]));
                        mids += 1;
                    }
                },
            )?;
            run.evaluations += mids;
            // A stiff period is integrated again from its start with the stiff formula.
            if outcome == Outcome::Done {
                break;
            }
        }
        end = y[..n].to_vec();
        let q: Vec<f64> = y[n..n + QUADRATURES].to_vec();
        y[..QUADRATURES].copy_from_slice(&q);
    }
    let (mut v_max, mut v_min) = (f64::NEG_INFINITY, f64::INFINITY);
    let mut v_cap_max = f64::NEG_INFINITY;
    let (mut i_peak, mut vr_max) = (0.0f64, f64::NEG_INFINITY);
    for p in &extremes {
        v_max = v_max.max(p.v_out);
        v_min = v_min.min(p.v_out);
        v_cap_max = v_cap_max.max(p.v_cap);
        i_peak = i_peak.max(p.i_diode);
        vr_max = vr_max.max(p.v_reverse);
    }
    let mean = |i: usize| y[i] / period;
    let mean_v_out = mean(0);
    let state = SteadyState {
        start: x.to_vec(),
        end,
        t_s,
        probes,
        v_out_max: v_max,
        v_out_min: v_min,
        v_cap_max,
        i_diode_peak: i_peak,
        v_reverse_max: vr_max,
        mean_v_out,
        mean_i_diode: mean(2),
        mean_i_load: mean(6),
        mean_i_cap: mean(7),
        mean_sq_ripple: mean(1),
        ripple_ref_v,
        mean_sq_i_diode: mean(3),
        mean_sq_i_winding: mean(4),
        mean_sq_i_cap: mean(5),
        newton_steps: 0,
        integrations: 0,
        evaluations: 0,
        steps: 0,
        stiff: false,
    };
    let finite = [
        state.mean_v_out,
        state.mean_sq_ripple,
        state.v_out_max,
        state.v_out_min,
        state.i_diode_peak,
    ]
    .iter()
    .all(|v| v.is_finite());
    if finite {
        Ok(state)
    } else {
        Err(SolveError::NotFinite)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::TAU;

    /// An RC low-pass driven by a sine of 1 V at 50 Hz: dv/dt = (sin wt - v) / tau.
    struct LowPass {
        tau_s: f64,
    }

    impl PeriodicCircuit for LowPass {
        fn states(&self) -> usize {
            1
        }
        fn period_s(&self) -> f64 {
            0.02
        }
        fn line_period_s(&self) -> f64 {
            0.02
        }
        fn volts_scale(&self) -> f64 {
            1.0
        }
        fn volts_resolution(&self) -> f64 {
            1.0
        }
        fn breakpoints_s(&self) -> Vec<f64> {
            Vec::new()
        }
        fn evaluate(&self, t: f64, x: &[f64], dx: &mut [f64]) -> Probe {
            let e = (TAU * 50.0 * t).sin();
            dx[0] = (e - x[0]) / self.tau_s;
            Probe {
                v_out: x[0],
                i_load: x[0],
                edges: [f64::NAN; EDGES],
                ..Probe::default()
            }
        }
        fn initial_guess(&self, x: &mut [f64]) {
            x[0] = 0.0;
        }
    }

    /// The exact periodic solution's mean square, (1 / 2) / (1 + (w tau)^2): the first-order
    /// low-pass's gain (any circuits textbook).
    fn exact_mean_square(tau_s: f64) -> f64 {
        let wt = TAU * 50.0 * tau_s;
        0.5 / (1.0 + wt * wt)
    }

    #[test]
    fn a_stiff_low_pass_takes_the_stiff_formula_and_few_steps() {
        // tau = 20 ns against a 20 ms period: the explicit pair would need some 3 million
        // steps a period for stability alone.
        let c = LowPass { tau_s: 2e-8 };
        let s = steady_state(&c).unwrap();
        assert!(s.stiff);
        assert!(
            s.evaluations < 50_000,
            "{} evaluations, {} steps, {} newton, {} integrations",
            s.evaluations,
            s.steps,
            s.newton_steps,
            s.integrations
        );
        // The ripple integrand is (v - v(0))^2; with v(0) known the mean square follows.
        let v0 = s.ripple_ref_v;
        let mean_sq = s.mean_sq_ripple + 2.0 * v0 * s.mean_v_out - v0 * v0;
        let want = exact_mean_square(c.tau_s);
        // The filtered error estimate lets a quasi-static state drift from its exact path by
        // more than the tolerance (measured 6e-5 of the mean square here, 3e-5 of the
        // amplitude): far below the three figures a report shows.
        assert!(
            (mean_sq - want).abs() < 2e-4 * want,
            "mean square {mean_sq}, exact {want}"
        );
        assert!(s.mean_v_out.abs() < 1e-5, "mean {}", s.mean_v_out);
    }

    #[test]
    fn a_slow_low_pass_keeps_the_explicit_formula() {
        let c = LowPass { tau_s: 2e-3 };
        let s = steady_state(&c).unwrap();
        assert!(!s.stiff);
        let v0 = s.ripple_ref_v;
        let mean_sq = s.mean_sq_ripple + 2.0 * v0 * s.mean_v_out - v0 * v0;
        let want = exact_mean_square(c.tau_s);
        assert!(
            (mean_sq - want).abs() < 1e-6 * want,
            "mean square {mean_sq}, exact {want}"
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
