//! The final pass: one mains period from the steady start, with the running integrals of the
//! figures appended to the state, the even samples for the sketch, and the extremes.

// Runge-Kutta stages read best with their indices written out.
#![allow(clippy::needless_range_loop)]

use super::integrator::{Method, Outcome, Run, Steps, hermite, integrate};
use super::shooting::tolerance_v;
use super::{
    MAX_STATES, PeriodicCircuit, Probe, QUADRATURES, SAMPLES, SolveError, SteadyState, Vector,
    WIDTH,
};

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

/// Integrates one mains period from the steady start, with the running integrals appended to
/// the state so the averages are as accurate as the integration itself.
pub(super) fn final_pass<Ckt: PeriodicCircuit + ?Sized>(
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
        for i in 0..n {
            atol[i] = tolerance_v(c) * c.state_scale(i);
        }
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
