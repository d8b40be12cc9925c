//! The final pass: one mains period from the steady start, with the running integrals of the
//! figures appended to the state, the even samples for the sketch, and the extremes. A circuit
//! whose mains period is made of images of one sub-period ([`PeriodicCircuit::images`]) is
//! integrated over that sub-period only, the rest unfolded from it.

// Runge-Kutta stages read best with their indices written out.
#![allow(clippy::needless_range_loop)]

use super::integrator::{Method, Outcome, Run, Steps, hermite, integrate};
use super::shooting::tolerance_v;
use super::{
    MAX_STATES, PeriodicCircuit, Probe, QUADRATURES, SAMPLES, SolveError, SteadyState, Vector,
    WIDTH,
};

/// What `g` reads of the probe `k` sub-periods after `p`'s instant (of `p` itself for k = 0,
/// without a copy: the extremes are read five times over every step end).
fn of_image<Ckt: PeriodicCircuit + ?Sized, G: Fn(&Probe) -> f64>(
    c: &Ckt,
    p: &Probe,
    k: usize,
    g: G,
) -> f64 {
    if k == 0 { g(p) } else { g(&c.unfold(p, k)) }
}

/// The largest value `g` takes over the images of `p`.
fn over_images<Ckt: PeriodicCircuit + ?Sized, G: Fn(&Probe) -> f64>(
    c: &Ckt,
    images: usize,
    p: &Probe,
    g: G,
) -> f64 {
    (0..images).fold(f64::NEG_INFINITY, |m, k| m.max(of_image(c, p, k, &g)))
}

/// The circuit's integrands averaged over the images of `p`: the mean over the mains period
/// of a figure of one part is the mean over the sub-period of its images' figures.
fn integrands_over_images<Ckt: PeriodicCircuit + ?Sized>(
    c: &Ckt,
    images: usize,
    p: &Probe,
    first: &Probe,
) -> [f64; QUADRATURES] {
    let mut sum = c.integrands(p, first);
    for k in 1..images {
        for (acc, v) in sum.iter_mut().zip(c.integrands(&c.unfold(p, k), first)) {
            *acc += v;
        }
    }
    let weight = 1.0 / images as f64;
    sum.map(|v| v * weight)
}

/// Integrates one mains period from the steady start (or the sub-period its images unfold
/// from), with the running integrals appended to the state so the averages are as accurate as
/// the integration itself.
pub(super) fn final_pass<Ckt: PeriodicCircuit + ?Sized>(
    c: &Ckt,
    x: &[f64],
    run: &mut Run,
    mut steps: Steps<'_>,
) -> Result<(SteadyState, Trace), SolveError> {
    let n = c.states();
    let line = c.line_period_s();
    // A circuit without states is sampled over the whole period below, which costs no more.
    let images = if n > 0 { c.images().max(1) } else { 1 };
    // The span integrated: the mains period, or the sub-period the rest unfolds from.
    let period = if images > 1 { c.period_s() } else { line };
    let mut scratch = [0.0; MAX_STATES];
    let first = c.evaluate(0.0, x, &mut scratch[..n]);
    let mut y = [0.0; WIDTH];
    y[..n].copy_from_slice(x);
    let mut f = |t: f64, y: &Vector, dy: &mut Vector| {
        let p = c.evaluate(t, &y[..n], &mut dy[..n]);
        let q = if images == 1 {
            c.integrands(&p, &first)
        } else {
            integrands_over_images(c, images, &p, &first)
        };
        dy[n..n + QUADRATURES].copy_from_slice(&q);
        p
    };
    // The even samples over the mains period. Unfolded, each is taken at its place in the
    // integrated span (its instant less whole sub-periods) and unfolded by as many: image k
    // holds the run of samples `firsts[k]..firsts[k + 1]`, each run in time order, so the
    // pass keeps one cursor a run. Over the whole period there is one run, pushed in order.
    let dt = line / SAMPLES as f64;
    let t_s: Vec<f64> = (0..SAMPLES).map(|i| i as f64 * dt).collect();
    let image_of = |t: f64| ((t / period).floor() as usize).min(images - 1);
    let firsts: Vec<usize> = (0..=images)
        .map(|k| t_s.partition_point(|&t| image_of(t) < k))
        .collect();
    // Sample i's instant within the span (image 0's are there already).
    let within = |i: usize, k: usize| {
        if k == 0 {
            t_s[i]
        } else {
            (t_s[i] - k as f64 * period).clamp(0.0, period)
        }
    };
    let mut probes = Vec::with_capacity(SAMPLES);
    if images > 1 {
        probes.resize(SAMPLES, Probe::default());
    }
    // Probes at the start and at every step end, in time order with
    // their instants: where the extremes and the conduction edges are looked for, then found
    // on the dense output between them.
    // Sized for a period's usual hundred or two steps, and kept below the allocator's
    // mapping threshold (128 KiB in glibc): a block above it is mapped and unmapped on every
    // solve, which costs more than the pass's own work on a small circuit.
    let mut extremes: Vec<(f64, Probe)> = Vec::with_capacity(2 * SAMPLES);
    let mut spans: Vec<Span> = Vec::with_capacity(if n > 0 { SAMPLES } else { 0 });
    let mut stiff = false;
    let mut end = Vec::new();
    if n == 0 {
        // Nothing to integrate but the averages: Simpson's rule on a fine fixed grid.
        // Simpson's rule with every sample instant a node.
        let fine = SAMPLES;
        let h = period / fine as f64;
        for i in 0..=fine {
            let t = i as f64 * h;
            let p = c.evaluate(t, &[], &mut []);
            extremes.push((t, p));
            if i < fine {
                probes.push(p);
            }
        }
        // The averages piece by piece between the circuit's breakpoints, where a current may
        // jump (a three-phase diode taking over): Simpson's rule across a jump would miss a
        // share of a sample's width. Each piece's ends are taken just inside it.
        let mut edges: Vec<f64> = c
            .breakpoints_s()
            .into_iter()
            .filter(|b| *b > 0.0 && *b < period)
            .collect();
        edges.insert(0, 0.0);
        edges.push(period);
        let mut acc = [0.0; QUADRATURES];
        for w in edges.windows(2) {
            let (a, b) = (w[0], w[1]);
            if b - a <= 0.0 {
                continue;
            }
            let inset = 1e-9 * period;
            let pieces = (2 * ((b - a) / period * fine as f64 / 2.0).ceil() as usize).max(2);
            let step = (b - a) / pieces as f64;
            for i in 0..=pieces {
                let t = (a + i as f64 * step).clamp(a + inset, b - inset);
                let p = c.evaluate(t, &[], &mut []);
                let weight = if i == 0 || i == pieces {
                    1.0
                } else if i % 2 == 1 {
                    4.0
                } else {
                    2.0
                };
                for (acc, v) in acc.iter_mut().zip(c.integrands(&p, &first)) {
                    *acc += weight * v * step / 3.0;
                }
            }
            run.evaluations += pieces + 1;
        }
        y[..QUADRATURES].copy_from_slice(&acc);
        run.evaluations += fine + 1;
    } else {
        // The integrals the circuit asks to be held are, per second of the period; the mean
        // squares need no control of their own.
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
        for (q, held) in c
            .integral_tolerances(&first, tolerance_v(c))
            .into_iter()
            .enumerate()
        {
            if let Some(mean) = held {
                atol[n + q] = mean * period;
            }
        }
        loop {
            let mut heads = firsts[..images].to_vec();
            stiff = run.method == Method::Stiff;
            if images == 1 {
                probes.clear();
            }
            extremes.clear();
            extremes.push((0.0, first));
            spans.clear();
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
                    // samples are drawn straight between step ends; the extremes start from
                    // the step ends and are sought between them after the pass.
                    for k in 0..images {
                        while heads[k] < firsts[k + 1] && within(heads[k], k) < t + h {
                            let i = heads[k];
                            let s = ((within(i, k) - t) / h).clamp(0.0, 1.0);
                            let p = start.towards(end, s);
                            if images == 1 {
                                probes.push(p);
                            } else {
                                probes[i] = if k == 0 { p } else { c.unfold(&p, k) };
                            }
                            heads[k] += 1;
                        }
                    }
                    let mut span = Span {
                        t,
                        h,
                        y0: [0.0; MAX_STATES],
                        f0: [0.0; MAX_STATES],
                        y1: [0.0; MAX_STATES],
                        f1: [0.0; MAX_STATES],
                    };
                    span.y0[..n].copy_from_slice(&y0[..n]);
                    span.f0[..n].copy_from_slice(&f0[..n]);
                    span.y1[..n].copy_from_slice(&y1[..n]);
                    span.f1[..n].copy_from_slice(&f1[..n]);
                    spans.push(span);
                    extremes.push((t + h, *end));
                },
            )?;
            // A stiff period is integrated again from its start with the stiff formula.
            if outcome == Outcome::Done {
                break;
            }
        }
        end = y[..n].to_vec();
        if images > 1 {
            c.after_period(&mut end);
        }
        let q: Vec<f64> = y[n..n + QUADRATURES].to_vec();
        y[..QUADRATURES].copy_from_slice(&q);
    }
    // The crests and troughs lie between the probes: each is found on the dense output near
    // the best probe, and the conduction edges between the probes that straddle them.
    // The best probes for now; `refine` seeks the crests between them, over the images too,
    // once the pass is the answer (the closing Newton iterations run many passes whose
    // extremes nobody reads).
    let best = |g: fn(&Probe) -> f64| {
        extremes
            .iter()
            .fold(f64::NEG_INFINITY, |m, (_, p)| m.max(g(p)))
    };
    let i_peak = best(|p| p.i_diode).max(0.0);
    let v_max = best(|p| p.v_out);
    let v_min = -best(|p| -p.v_out);
    let v_cap_max = best(|p| p.v_cap);
    let vr_max = best(|p| p.v_reverse);
    let conduction_fraction = 0.0;
    let mut means = [0.0; QUADRATURES];
    for (q, m) in means.iter_mut().enumerate() {
        *m = y[q] / period;
    }
    let state = SteadyState {
        start: x.to_vec(),
        end,
        pass_s: period,
        t_s,
        probes,
        v_out_max: v_max,
        v_out_min: v_min,
        v_cap_max,
        i_diode_peak: i_peak,
        v_reverse_max: vr_max,
        conduction_fraction,
        means,
        start_probe: first,
        i_choke_peak: best(|p| p.i_choke).max(0.0),
        newton_steps: 0,
        integrations: 0,
        evaluations: 0,
        steps: 0,
        stiff: false,
    };
    let finite = [state.v_out_max, state.v_out_min, state.i_diode_peak]
        .iter()
        .chain(&state.means)
        .all(|v| v.is_finite());
    if finite {
        Ok((
            state,
            Trace {
                extremes,
                spans,
                stiff,
                images,
            },
        ))
    } else {
        Err(SolveError::NotFinite)
    }
}

/// A diode counts as conducting while its current exceeds this share of its peak: its
/// exponential law leaves a trickle below any absolute level (the same threshold as
/// tests/reference/generate.py's conduction angle).
pub(super) const CONDUCTION_SHARE: f64 = 1e-3;
/// Parabolic steps towards a crest: each gains about half again as many correct digits, and
/// the three probes it starts from are a step apart.
const CREST_STEPS: usize = 3;
/// Regula falsi steps towards a conduction edge.
const EDGE_STEPS: usize = 8;

/// What a final pass keeps for `refine`: its probes in time order and its steps.
#[derive(Debug, Clone)]
pub(super) struct Trace {
    extremes: Vec<(f64, Probe)>,
    spans: Vec<Span>,
    stiff: bool,
    /// How many images of the integrated span make up the mains period (1: it is the period).
    images: usize,
}

/// Seeks the crests (diode current, rail max and min, capacitor, reverse voltage) and the
/// conduction edges of the pass `trace` came from on its dense output, and writes them into
/// `state`.
pub(super) fn refine<Ckt: PeriodicCircuit + ?Sized>(
    c: &Ckt,
    state: &mut SteadyState,
    trace: &Trace,
    run: &mut Run,
) {
    let extremes = &trace.extremes;
    let images = trace.images;
    let mut dense = Dense {
        c,
        spans: &trace.spans,
        stiff: trace.stiff,
        period: c.line_period_s(),
        // The largest over the images is the same function a sub-period on: a crest at the
        // span's ends (a six-pulse bridge's pulses straddle them) is sought across the seam.
        cyclic: (images > 1).then_some(state.pass_s),
        evaluations: 0,
    };
    // The rail's values are the same in every image (`PeriodicCircuit::images`); one diode's
    // are another's an image on.
    let all = |g: fn(&Probe) -> f64| move |p: &Probe| over_images(c, images, p, g);
    state.i_diode_peak = dense.largest(extremes, all(|p| p.i_diode)).max(0.0);
    state.v_out_max = dense.largest(extremes, |p| p.v_out);
    state.v_out_min = -dense.largest(extremes, |p| -p.v_out);
    state.v_cap_max = dense.largest(extremes, |p| p.v_cap);
    state.v_reverse_max = dense.largest(extremes, all(|p| p.v_reverse));
    if state.i_choke_peak > 0.0 {
        state.i_choke_peak = dense.largest(extremes, |p| p.i_choke).max(0.0);
    }
    let level = CONDUCTION_SHARE * state.i_diode_peak;
    // Each image's share of the mains period in its own sub-period, added up.
    state.conduction_fraction = if state.i_diode_peak > 0.0 {
        (0..images)
            .map(|k| dense.share_above(extremes, level, |p| of_image(c, p, k, |q| q.i_diode)))
            .sum::<f64>()
            .clamp(0.0, 1.0)
    } else {
        0.0
    };
    run.evaluations += dense.evaluations;
}

/// One accepted step of the final pass: enough to draw the states anywhere inside it.
#[derive(Debug, Clone, Copy)]
struct Span {
    t: f64,
    h: f64,
    y0: [f64; MAX_STATES],
    f0: [f64; MAX_STATES],
    y1: [f64; MAX_STATES],
    f1: [f64; MAX_STATES],
}

/// The solution between step ends (the integrator's dense output) and the circuit's probes on it.
struct Dense<'a, Ckt: ?Sized> {
    c: &'a Ckt,
    /// The period's steps in order; none for a circuit without states.
    spans: &'a [Span],
    /// The stiff formula's steps are drawn straight: a fast state's derivatives are far too
    /// large for a cubic through them to mean anything across the step. Otherwise the cubic
    /// Hermite through each step's end values and slopes (third order).
    stiff: bool,
    period: f64,
    /// The span the steps cover when the functions sought repeat over it (a sub-period's
    /// images), so that a crest at its ends is sought across them; None for the mains period.
    cyclic: Option<f64>,
    /// Circuit evaluations spent.
    evaluations: usize,
}

impl<Ckt: PeriodicCircuit + ?Sized> Dense<'_, Ckt> {
    /// The probe at `t` seconds, from the interpolated state.
    fn probe(&mut self, t: f64) -> Probe {
        let n = self.c.states();
        self.evaluations += 1;
        let t = self.cyclic.map_or(t, |span| t.rem_euclid(span));
        if n == 0 || self.spans.is_empty() {
            return self.c.evaluate(t, &[], &mut []);
        }
        let k = self
            .spans
            .partition_point(|s| s.t + s.h < t)
            .min(self.spans.len() - 1);
        let s = &self.spans[k];
        let u = ((t - s.t) / s.h).clamp(0.0, 1.0);
        let mut x = [0.0; MAX_STATES];
        for i in 0..n {
            x[i] = if self.stiff {
                s.y0[i] + u * (s.y1[i] - s.y0[i])
            } else {
                hermite(s.y0[i], s.f0[i], s.y1[i], s.f1[i], s.h, u)
            };
        }
        let mut dx = [0.0; MAX_STATES];
        self.c.evaluate(t, &x[..n], &mut dx[..n])
    }

    /// The largest value `g` takes: the best of the time-ordered `samples`, then a few steps
    /// of successive parabolic interpolation (Brent's, without the golden fallback) between
    /// its neighbours. Every value kept is one the solution takes, so the result is never
    /// below the best sample. A crest at either end of the period is left at the sample,
    /// unless `g` repeats over the span (`cyclic`): the neighbour across the seam stands in.
    fn largest<G: Fn(&Probe) -> f64>(&mut self, samples: &[(f64, Probe)], g: G) -> f64 {
        // One pass over the probes, each value taken once; a NaN never wins.
        let (mut j, mut fm) = (0, f64::NEG_INFINITY);
        for (k, (_, p)) in samples.iter().enumerate() {
            let v = g(p);
            if v > fm {
                (j, fm) = (k, v);
            }
        }
        if !fm.is_finite() {
            return samples.first().map_or(f64::NAN, |(_, p)| g(p));
        }
        let mut m = samples[j].0;
        let last = samples.len() - 1;
        // The neighbours' indices and the shift of their instants (a span across the seam).
        let (left, right) = if j > 0 && j < last {
            ((j - 1, 0.0), (j + 1, 0.0))
        } else {
            match self.cyclic {
                // The first and the last sample are the same instant a span apart.
                Some(span) if last >= 2 && j == 0 => ((last - 1, -span), (1, 0.0)),
                Some(span) if last >= 2 => ((last - 1, 0.0), (1, span)),
                _ => return fm,
            }
        };
        let (mut a, mut fa) = (samples[left.0].0 + left.1, g(&samples[left.0].1));
        let (mut b, mut fb) = (samples[right.0].0 + right.1, g(&samples[right.0].1));
        for _ in 0..CREST_STEPS {
            // The vertex of the parabola through the three points.
            let (p, q) = ((m - a) * (fm - fb), (m - b) * (fm - fa));
            let den = p - q;
            if den == 0.0 || !den.is_finite() {
                break;
            }
            let u = m - 0.5 * ((m - a) * p - (m - b) * q) / den;
            if !(u > a && u < b) || (u - m).abs() <= 1e-12 * self.period {
                break;
            }
            let fu = g(&self.probe(u));
            if !fu.is_finite() {
                break;
            }
            if fu > fm {
                if u < m {
                    (b, fb) = (m, fm);
                } else {
                    (a, fa) = (m, fm);
                }
                (m, fm) = (u, fu);
            } else if u < m {
                (a, fa) = (u, fu);
            } else {
                (b, fb) = (u, fu);
            }
        }
        fm
    }

    /// The share of the period in which `g` exceeds `level`: each crossing between two
    /// time-ordered `samples` that straddle it is found on the dense output by the Illinois
    /// variant of regula falsi.
    fn share_above<G: Fn(&Probe) -> f64>(
        &mut self,
        samples: &[(f64, Probe)],
        level: f64,
        g: G,
    ) -> f64 {
        let mut on = 0.0;
        for w in samples.windows(2) {
            let (ta, da) = (w[0].0, g(&w[0].1) - level);
            let (tb, db) = (w[1].0, g(&w[1].1) - level);
            if da > 0.0 && db > 0.0 {
                on += tb - ta;
            } else if da > 0.0 || db > 0.0 {
                let tc = self.crossing((ta, da), (tb, db), |p| g(p) - level);
                on += if da > 0.0 { tc - ta } else { tb - tc };
            }
        }
        (on / self.period).clamp(0.0, 1.0)
    }

    /// Where `d` changes sign between `(ta, da)` and `(tb, db)`, seconds.
    fn crossing<D: Fn(&Probe) -> f64>(
        &mut self,
        (mut a, mut fa): (f64, f64),
        (mut b, mut fb): (f64, f64),
        d: D,
    ) -> f64 {
        let mut kept = 0i8;
        // Whether the last point left the value of the end it replaced nearly as it was.
        let mut stalled = false;
        for _ in 0..EDGE_STEPS {
            if b - a <= 1e-9 * self.period {
                break;
            }
            // After a point that gained nothing the bracket is halved instead: across a jump
            // (a six-pulse bridge's phase taking over at a crossing) the secant only creeps
            // from the far end, even with the kept end's value halved, and left the edge half
            // a step out. A smooth edge's secant gains many-fold at each point.
            let t = if stalled {
                0.5 * (a + b)
            } else {
                ((a * fb - b * fa) / (fb - fa)).clamp(a, b)
            };
            let ft = d(&self.probe(t));
            if ft == 0.0 || !ft.is_finite() {
                return t;
            }
            // Illinois: an end kept twice running has its value halved, so the secant does
            // not creep towards the root from one side (convex pulse edges would).
            if (ft > 0.0) == (fb > 0.0) {
                stalled = ft.abs() > 0.5 * fb.abs();
                (b, fb) = (t, ft);
                if kept == -1 {
                    fa *= 0.5;
                }
                kept = -1;
            } else {
                stalled = ft.abs() > 0.5 * fa.abs();
                (a, fa) = (t, ft);
                if kept == 1 {
                    fb *= 0.5;
                }
                kept = 1;
            }
        }
        ((a * fb - b * fa) / (fb - fa)).clamp(a, b)
    }
}
