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

/// Most states a circuit may have (capacitor voltages and inductor currents: a doubler with
/// leakage and a CLC filter has six), plus the running integrals of the final pass.
pub const MAX_STATES: usize = 6;
/// Running integrals a circuit may ask of the final pass ([`PeriodicCircuit::integrands`]).
pub const QUADRATURES: usize = 11;
/// Switching functions a circuit may report: three charging paths (a star's phases) and the
/// load's knee.
pub const EDGES: usize = 4;
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
    /// The choke's current (a choke-input filter's or a CLC's; 0 without one).
    pub i_choke: f64,
    /// Current into the output capacitor (a CRC's or CLC's second; the first otherwise).
    pub i_out_cap: f64,
    /// Each phase's current into the rectifier (amps) and its terminal's voltage (volts, from
    /// a reference of the circuit's choosing), on three phases; zero otherwise. The solver
    /// never reads them: they let the circuit's [`PeriodicCircuit::unfold`] tell what phase
    /// a's figures are a sub-period on, when another phase has taken its place.
    pub phase_i: [f64; 3],
    pub phase_v: [f64; 3],
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
            i_choke: mix(self.i_choke, other.i_choke),
            i_out_cap: mix(self.i_out_cap, other.i_out_cap),
            phase_i: std::array::from_fn(|k| mix(self.phase_i[k], other.phase_i[k])),
            phase_v: std::array::from_fn(|k| mix(self.phase_v[k], other.phase_v[k])),
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
    /// How many periods of [`PeriodicCircuit::period_s`] make up the mains period as images
    /// of one another, the same waveforms with the circuit's parts trading roles (6 for a
    /// balanced six-pulse bridge, 3 for a star); 1 (the default) for a circuit whose figures
    /// need the whole mains period integrated. With more than 1 the final pass integrates one
    /// period of `period_s` only and unfolds the rest by [`PeriodicCircuit::unfold`]; the
    /// rail's values (`v_out`, `v_cap`, `i_choke`) must then be the same in every image, as
    /// its crests are sought on the integrated period alone.
    fn images(&self) -> usize {
        1
    }
    /// The probe `k` periods of [`PeriodicCircuit::period_s`] after the instant at which `p`
    /// was taken (0 < k < [`PeriodicCircuit::images`]), in the same units: what the circuit's
    /// symmetry makes of it without another evaluation. The even samples are drawn straight
    /// between step ends before they are unfolded, so a probe drawn between two others should
    /// unfold to the probe drawn between their images (it does where its values follow `p`'s
    /// linearly); and the images must close on themselves (k = `images` would give `p`
    /// back), for the crests are sought across the sub-period's ends.
    fn unfold(&self, p: &Probe, _k: usize) -> Probe {
        *p
    }
    /// Volts that set the scale of the tolerances (the winding's peak).
    fn volts_scale(&self) -> f64;
    /// The size of state `i` against a capacitor voltage, in its unit per volt: its error
    /// tolerance, its difference increments and its share of Newton's step norms are a
    /// voltage's times this. 1 for a capacitor voltage (the default); an inductor current
    /// would give amps per volt, say the reciprocal of its path's resistance.
    fn state_scale(&self, _i: usize) -> f64 {
        1.0
    }
    /// The least value state `i` can hold, in its unit: 0 A for a current that flows only
    /// through diodes (they block the reverse), minus infinity for a capacitor voltage or a
    /// current free to reverse (the default). Newton's steps stop at it: a step to a negative
    /// diode current lands on the diodes' kink, and the period that follows spends itself
    /// letting the impossible current back up instead of moving the capacitors.
    fn state_floor(&self, _i: usize) -> f64 {
        f64::NEG_INFINITY
    }
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
    /// What the final pass integrates over the mains period, for the figures' averages and
    /// mean squares: the circuit's own choice, in its own order (unused slots 0). `start` is
    /// the probe at the period's start, a reference that keeps a mean square of a small
    /// ripple on a large level well conditioned. [`SteadyState::means`] holds the averages.
    fn integrands(&self, p: &Probe, start: &Probe) -> [f64; QUADRATURES];
    /// How closely each average must be held, in its own unit (volts for a voltage, amps for
    /// a current), given the probe at the period's start and the solve's voltage tolerance;
    /// None for one that needs no control of its own (a mean square follows its states).
    /// A charge integral held as tightly as the voltages resolves a narrow pulse for its
    /// charge and not only for the jump it leaves.
    fn integral_tolerances(&self, _start: &Probe, _volts: f64) -> [Option<f64>; QUADRATURES] {
        [None; QUADRATURES]
    }
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
    /// The same at the end of the span the final pass integrated (`pass_s`), mapped by
    /// [`PeriodicCircuit::after_period`] where that span is a sub-period: equal to `start`
    /// within the solver's tolerance.
    pub end: Vec<f64>,
    /// The span the final pass integrated, seconds: the mains period, or one period of
    /// [`PeriodicCircuit::period_s`] whose images ([`PeriodicCircuit::unfold`]) gave the
    /// rest of the samples and the figures. The rail repeats over it, and whatever the
    /// states drift within the solver's tolerance, they drift over each such span afresh.
    pub pass_s: f64,
    /// Sample instants in seconds from the mains zero crossing.
    pub t_s: Vec<f64>,
    pub probes: Vec<Probe>,
    /// Largest and smallest rail voltage and largest diode current and reverse voltage, volts
    /// and amps: the best of the step ends and conducting steps' middles, then sought on the
    /// integrator's dense output between its neighbours (issue 12).
    pub v_out_max: f64,
    pub v_out_min: f64,
    pub v_cap_max: f64,
    pub i_diode_peak: f64,
    pub v_reverse_max: f64,
    /// Share of the mains period in which one diode's current exceeds
    /// a thousandth of its peak, with the edges found on the dense output.
    pub conduction_fraction: f64,
    /// The period averages of the circuit's own integrands ([`PeriodicCircuit::integrands`]),
    /// in its order and units.
    pub means: [f64; QUADRATURES],
    /// The probe at the period's start (the reference the integrands were taken about).
    pub start_probe: Probe,
    /// The choke's peak current (amps; 0 without one), sought like the other crests.
    pub i_choke_peak: f64,
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
/// Most circuit evaluations one solve may spend before it is refused: this machine does about
/// 4,000 a millisecond with the stiff formula and 6,000 with the explicit one, so this bounds
/// a solve to about 100 ms (README, "Time bound").
pub const MAX_EVALUATIONS: usize = 400_000;

mod final_pass;
mod integrator;
mod shooting;

pub use shooting::steady_state;

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::TAU;

    /// An RC low-pass driven by a sine of 1 V at 50 Hz: dv/dt = (sin wt - v) / tau. Its output
    /// is reported as a "diode" current and (negated) a reverse voltage too, so that the
    /// crests and the conduction edges the final pass seeks have exact answers.
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
                i_diode: x[0],
                v_reverse: -x[0],
                edges: [f64::NAN; EDGES],
                ..Probe::default()
            }
        }
        fn initial_guess(&self, x: &mut [f64]) {
            x[0] = 0.0;
        }
        fn integrands(&self, p: &Probe, _start: &Probe) -> [f64; QUADRATURES] {
            let mut out = [0.0; QUADRATURES];
            out[0] = p.v_out;
            out[1] = p.v_out * p.v_out;
            out
        }
        fn integral_tolerances(&self, _start: &Probe, volts: f64) -> [Option<f64>; QUADRATURES] {
            // The average to the voltage tolerance; the mean square, of a 1 V sine, to as
            // much in volts squared.
            let mut out = [None; QUADRATURES];
            out[0] = Some(volts);
            out[1] = Some(volts);
            out
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
        // The circuit's own integrals: v and v^2.
        let mean_sq = s.means[1];
        let want = exact_mean_square(c.tau_s);
        // The filtered error estimate lets a quasi-static state drift from its exact path by
        // more than the tolerance (measured 6e-5 of the mean square here, 3e-5 of the
        // amplitude): far below the three figures a report shows.
        assert!(
            (mean_sq - want).abs() < 2e-4 * want,
            "mean square {mean_sq}, exact {want}"
        );
        assert!(s.means[0].abs() < 1e-5, "mean {}", s.means[0]);
    }

    #[test]
    fn a_slow_low_pass_keeps_the_explicit_formula() {
        let c = LowPass { tau_s: 2e-3 };
        let s = steady_state(&c).unwrap();
        assert!(!s.stiff);
        let mean_sq = s.means[1];
        let want = exact_mean_square(c.tau_s);
        assert!(
            (mean_sq - want).abs() < 1e-6 * want,
            "mean square {mean_sq}, exact {want}"
        );
    }

    #[test]
    fn crests_and_edges_come_from_the_solution_between_step_ends() {
        // The periodic solution is A sin(w t - phi), A = 1 / sqrt(1 + (w tau)^2) (the
        // first-order low-pass). Its crest is A and its trough -A; it exceeds a thousandth of
        // its crest for (pi - 2 asin(1e-3)) / (2 pi) of the period.
        let tau = 2e-3;
        let s = steady_state(&LowPass { tau_s: tau }).unwrap();
        let wt = TAU * 50.0 * tau;
        let a = 1.0 / (1.0 + wt * wt).sqrt();
        // The period's steps are at most 1/24 of it: a crest read off step ends and middles
        // alone could be low by up to 1 - cos(pi / 48), 0.2 %.
        for (what, got) in [
            ("crest", s.i_diode_peak),
            ("rail max", s.v_out_max),
            ("rail min", -s.v_out_min),
            ("reverse", s.v_reverse_max),
        ] {
            assert!((got - a).abs() < 1e-6 * a, "{what} {got}, exact {a}");
        }
        let share = (std::f64::consts::PI - 2.0 * 1e-3f64.asin()) / TAU;
        assert!(
            (s.conduction_fraction - share).abs() < 1e-6,
            "share {}, exact {share}",
            s.conduction_fraction
        );
    }
}
