//! Shooting: Newton with Broyden updates on x -> Phi(x) - x, where Phi is the one-period map,
//! and the closing of the final pass on itself.

// Small dense matrices read best with their indices written out.
#![allow(clippy::needless_range_loop)]

use super::final_pass::{Trace, final_pass, refine};
use super::integrator::{GridStep, Method, Outcome, Run, STIFF_STEPS, Steps, integrate};
use super::{MAX_STATES, PeriodicCircuit, Probe, SolveError, SteadyState, Vector, WIDTH};

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
    let mut atol = [tolerance_v(c); WIDTH];
    for i in 0..n {
        atol[i] *= run.scales[i];
    }
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
            let delta = 1.5e-8 * x[j].abs().max(run.volts * run.scales[j]);
            xp[j] += delta;
            c.derivatives(t, &xp[..n], &mut fp[..n]);
            for i in 0..n {
                // The norm of the scaled system, where every state counts as a voltage.
                rows[i] += ((fp[i] - f0[i]) / delta).abs() * run.scales[j] / run.scales[i];
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
    let mut scales = [1.0; MAX_STATES];
    for (i, s) in scales.iter_mut().enumerate().take(n) {
        *s = c.state_scale(i);
    }
    let mut run = Run {
        h0: c.period_s() / 64.0,
        method: Method::Explicit,
        volts: scale,
        scales,
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
        let mut jac = difference_jacobian(&x, &g, 1e-5 * scale, &scales, |xp| {
            integrations += 1;
            Ok(sub(&period_map(c, xp, run, Steps::Replay(&grid))?, xp))
        })?;
        let limit = 60;
        let tol = tolerance_v(c);
        // Whether `g` came from an error-controlled pass at the present `x`.
        let mut fresh = true;
        // The mismatch of the step before, to tell a replay that has stalled.
        let mut previous_g = f64::INFINITY;
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
            let longest = scaled_norm(&step, &scales);
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
            let worst_g = scaled_norm(&g, &scales);
            // A replay that no longer gains (a path's knee or a diode's turn crossing inside a
            // replayed step leaves the map a kink at this scale) and is within ten times what
            // the final pass accepts ends here: that pass, with steps chosen for itself, and
            // its own closure (on the sub-period's map, cheap) finish the job for less than
            // halving on towards rounding (a drive bus's replays wandered at a thousand
            // tolerances for fifty Newton steps).
            let stalled = !fresh && worst_g <= 3000.0 * tol && worst_g > 0.5 * previous_g;
            // A replay already within a tenth of what the final pass accepts gains nothing
            // more: the final pass's own steps move the fixed point by about as much (a choke
            // input below critical spent a ninth of its solve on one such replay).
            let near = !fresh && worst_g <= 30.0 * tol;
            // An error-controlled period ends Newton a third of the way below what the final
            // pass accepts, not at it: that pass starts from this state, so its gap is this
            // mismatch plus its own steps' difference, and a gap just over the line costs a
            // closure of over a thousand evaluations (a valve CLC's was 1,268 of its 3,022).
            if (fresh && worst_g <= 100.0 * tol)
                || (!fresh && longest <= 1e-2 * tol)
                || stalled
                || near
            {
                break;
            }
            previous_g = worst_g;
            let mut x_new: Vec<f64> = x.iter().zip(&step).map(|(a, b)| a + b).collect();
            floor_step(c, &x, &mut x_new, &mut step);
            // A long step moves the conduction pulses: let the integrator find its steps anew.
            fresh = longest > 1e-4 * scale;
            let steps = if fresh {
                Steps::Adaptive(&mut grid)
            } else {
                Steps::Replay(&grid)
            };
            let mut g_new = sub(&period_map(c, &x_new, run, steps)?, &x_new);
            integrations += 1;
            // A replay thrown far out by a short step (a phase's small current through its
            // diode is stiff, and a replayed step that was short enough at the old start can
            // run away at the new one) is done again with steps chosen for the new start:
            // the Broyden update would otherwise learn the runaway as the map's slope.
            if !fresh && scaled_norm(&g_new, &scales) > 4.0 * worst_g {
                fresh = true;
                g_new = sub(
                    &period_map(c, &x_new, run, Steps::Adaptive(&mut grid))?,
                    &x_new,
                );
                integrations += 1;
            }
            // Where no diode conducts the map is flat and Newton overshoots: halve the step
            // until the mismatch shrinks, and fall back on one plain period (x -> Phi(x)),
            // which a capacitor that only discharges between pulses always gets closer by.
            // Measured on the states' scales, as the steps are: an inductor current in amps
            // would otherwise count for nothing beside a capacitor voltage.
            let norm = |v: &[f64]| scaled_norm(v, &scales);
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
                floor_step(c, &x, &mut x_new, &mut step);
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
    let (mut state, mut trace) = final_pass(c, &x, run, Steps::Adaptive(&mut grid_t))?;
    integrations += 1;
    let tol = tolerance_v(c);
    let gap =
        |s: &SteadyState| -> Vec<f64> { s.end.iter().zip(&s.start).map(|(e, b)| e - b).collect() };
    let worst = |g: &[f64]| scaled_norm(g, &scales);
    let mut g = gap(&state);
    // A replay with the stiff formula can run away where a diode turns within a step that the
    // error control no longer watches; the error-controlled pass then stands as the answer.
    if n > 0 && worst(&g) > 300.0 * tol {
        let controlled: (SteadyState, Trace) = (state.clone(), trace.clone());
        'close: {
            // A circuit that repeats every half cycle is integrated with the first half's steps
            // twice over: the same discrete map on both halves keeps the closed period symmetric,
            // where independent steps would let an ill-conditioned light load split its charge
            // unevenly between the two diodes. (Every sub-period alike: six for a six-pulse
            // bridge, three for a star.) A pass over one sub-period whose images unfold the
            // rest is that sub-period's map already.
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
                if state.pass_s > 0.75 * c.line_period_s() {
                    let repeats = (c.line_period_s() / half).round().max(1.0) as usize;
                    grid_t = first
                        .iter()
                        .cycle()
                        .take(first.len() * repeats)
                        .copied()
                        .collect();
                    (state, trace) = match final_pass(c, &x, run, Steps::Replay(&grid_t)) {
                        Ok(s) => s,
                        Err(SolveError::NotFinite) => {
                            (state, trace) = controlled.clone();
                            break 'close;
                        }
                        Err(e) => return Err(e),
                    };
                    integrations += 1;
                    g = gap(&state);
                }
                // The closed period is the first sub-period's discrete map repeated, so it is
                // closed on that map, a sixth (or a half) of the pass's cost an iteration; one
                // pass over the whole period then confirms it (the drive bus with a line
                // reactor spent three quarters of its solve closing whole-period passes).
                if let Some(closed) = close_sub_period(c, &x, run, &first, &mut integrations)? {
                    match final_pass(c, &closed, run, Steps::Replay(&grid_t)) {
                        Ok((s, t)) if worst(&gap(&s)) < worst(&g) => {
                            integrations += 1;
                            (x, state, trace) = (closed, s, t);
                            g = gap(&state);
                        }
                        Ok(_) => integrations += 1,
                        Err(SolveError::NotFinite) => {}
                        Err(e) => return Err(e),
                    }
                    if worst(&g) <= 1e-3 * tol {
                        break 'close;
                    }
                }
            }
            let jt = match difference_jacobian(&x, &g, 1e-6 * scale, &scales, |xp| {
                let (sp, _) = final_pass(c, xp, run, Steps::Replay(&grid_t))?;
                integrations += 1;
                Ok(gap(&sp))
            }) {
                Ok(jt) => jt,
                Err(SolveError::NotFinite) => {
                    (state, trace) = controlled.clone();
                    break 'close;
                }
                Err(e) => return Err(e),
            };
            // Only a step that closes the period better is kept: across a kink the replayed
            // pass leaves (a path's knee crossing inside a replayed step) the difference
            // Jacobian can point anywhere, and one such step once threw a CLC with leakage to
            // a rail of -12,700 V.
            let controlled_gap = worst(&gap(&controlled.0));
            let mut best = (worst(&g), x.clone(), state.clone(), trace.clone());
            for _ in 0..8 {
                let mut step: Vec<f64> = g.iter().map(|v| -v).collect();
                let mut a = jt;
                if solve_linear(n, &mut a, &mut step).is_none() {
                    break;
                }
                let x_new: Vec<f64> = x.iter().zip(&step).map(|(a, b)| a + b).collect();
                let (s_new, t_new) = match final_pass(c, &x_new, run, Steps::Replay(&grid_t)) {
                    Ok(s) => s,
                    Err(SolveError::NotFinite) => break,
                    Err(e) => return Err(e),
                };
                integrations += 1;
                let g_new = gap(&s_new);
                if worst(&g_new) >= best.0 {
                    break;
                }
                (x, state, trace, g) = (x_new, s_new, t_new, g_new);
                best = (worst(&g), x.clone(), state.clone(), trace.clone());
                if best.0 <= 1e-3 * tol {
                    break;
                }
            }
            (_, x, state, trace) = best;
            let _ = &x;
            // The replayed closure did no better than the error-controlled pass: that stands.
            if worst(&gap(&state)) > controlled_gap {
                (state, trace) = controlled.clone();
            }
        }
    }
    // A period that still does not come back near where it started is no steady state: it is
    // refused rather than reported (a thousandth of the winding's peak, on the states' scales).
    if n > 0 && worst(&gap(&state)) > 1e-3 * scale {
        return Err(SolveError::NoConvergence(newton_steps));
    }
    refine(c, &mut state, &trace, run);
    state.newton_steps = newton_steps;
    state.integrations = integrations;
    state.evaluations = run.evaluations;
    state.steps = run.steps;
    state.stiff = run.method == Method::Stiff;
    Ok(state)
}

/// Holds `x_new` (from `x` by `step`) at the circuit's state floors, and `step` to match, so
/// that Broyden learns from the step taken.
fn floor_step<Ckt: PeriodicCircuit + ?Sized>(
    c: &Ckt,
    x: &[f64],
    x_new: &mut [f64],
    step: &mut [f64],
) {
    for i in 0..x_new.len() {
        let floor = c.state_floor(i);
        if x_new[i] < floor {
            x_new[i] = floor;
            step[i] = floor - x[i];
        }
    }
}

/// Newton on the first sub-period's map replayed on `first` (the final pass's own steps over
/// it), from `x`: the start state it closes best, when that is better than `x`'s own (volts
/// on the states' scales); None when the replay runs away or gains nothing.
fn close_sub_period<Ckt: PeriodicCircuit + ?Sized>(
    c: &Ckt,
    x: &[f64],
    run: &mut Run,
    first: &[GridStep],
    integrations: &mut usize,
) -> Result<Option<Vec<f64>>, SolveError> {
    let scale = c.volts_scale().max(1e-6);
    let mut map = |xp: &[f64], run: &mut Run| -> Result<Vec<f64>, SolveError> {
        *integrations += 1;
        Ok(sub(&period_map(c, xp, run, Steps::Replay(first))?, xp))
    };
    let g0 = match map(x, run) {
        Ok(g) => g,
        Err(SolveError::NotFinite) => return Ok(None),
        Err(e) => return Err(e),
    };
    let scales = run.scales;
    let jac = match difference_jacobian(x, &g0, 1e-6 * scale, &scales, |xp| map(xp, run)) {
        Ok(j) => j,
        Err(SolveError::NotFinite) => return Ok(None),
        Err(e) => return Err(e),
    };
    let n = x.len();
    let worst = |g: &[f64]| scaled_norm(g, &scales);
    let start_gap = worst(&g0);
    let (mut best_gap, mut best_x, mut g) = (start_gap, x.to_vec(), g0);
    let tol = tolerance_v(c);
    let mut shorter = 0;
    for _ in 0..8 {
        let mut step: Vec<f64> = g.iter().map(|v| -v).collect();
        let mut a = jac;
        if solve_linear(n, &mut a, &mut step).is_none() {
            break;
        }
        // A replayed step that a small change of start throws far out (a phase's small
        // current through its diode is stiff: a long replayed step there runs away) is tried
        // again shorter, a quarter at a time, at most twice in all.
        let mut g_new = None;
        let mut fraction = 1.0;
        loop {
            let x_new: Vec<f64> = best_x
                .iter()
                .zip(&step)
                .map(|(a, b)| a + fraction * b)
                .collect();
            let tried = match map(&x_new, run) {
                Ok(g) => Some((worst(&g), x_new, g)),
                Err(SolveError::NotFinite) => None,
                Err(e) => return Err(e),
            };
            match tried {
                // Only a step that closes the map better is kept.
                Some(t) if t.0 < best_gap => {
                    g_new = Some(t);
                    break;
                }
                _ if shorter < 2 => {
                    shorter += 1;
                    fraction *= 0.25;
                }
                _ => break,
            }
        }
        let Some((gap, x_new, gn)) = g_new else { break };
        (best_gap, best_x, g) = (gap, x_new, gn);
        if best_gap <= 1e-3 * tol {
            break;
        }
    }
    Ok((best_gap < start_gap).then_some(best_x))
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
        let moved = scaled_norm(&sub(&next, &x), &run.scales);
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
pub(super) fn tolerance_v<Ckt: PeriodicCircuit + ?Sized>(c: &Ckt) -> f64 {
    let scale = c.volts_scale().max(1e-6);
    (1e-6 * c.volts_resolution()).clamp(1e-10 * scale, 1e-7 * scale)
}

/// The largest of |v_i| / scale_i: a vector of state changes measured as volts.
fn scaled_norm(v: &[f64], scales: &[f64; MAX_STATES]) -> f64 {
    v.iter()
        .zip(scales)
        .fold(0.0f64, |m, (a, s)| m.max((a / s).abs()))
}

/// The forward-difference Jacobian of a residual G at `x` (the shooting mismatch of one map or
/// another), with G(x) in `g`: column j from G at x plus `delta` times state j's scale. The
/// residual's error (an integration that failed) ends it and is handed back.
fn difference_jacobian<R>(
    x: &[f64],
    g: &[f64],
    delta: f64,
    scales: &[f64; MAX_STATES],
    mut residual: R,
) -> Result<[[f64; MAX_STATES]; MAX_STATES], SolveError>
where
    R: FnMut(&[f64]) -> Result<Vec<f64>, SolveError>,
{
    let n = x.len();
    let mut jac = [[0.0; MAX_STATES]; MAX_STATES];
    for j in 0..n {
        let step = delta * scales[j];
        let mut xp = x.to_vec();
        xp[j] += step;
        let gp = residual(&xp)?;
        for i in 0..n {
            jac[i][j] = (gp[i] - g[i]) / step;
        }
    }
    Ok(jac)
}

fn sub(a: &[f64], b: &[f64]) -> Vec<f64> {
    a.iter().zip(b).map(|(x, y)| x - y).collect()
}
