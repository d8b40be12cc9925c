//! The physics: mains wave, winding, diodes, filter and load as a network; the steady-state
//! solver; and the figures a technician reads off a supply. Building the network from a
//! supply is in `build`, the figures in `figures`, the paper estimate in `paper`.

#![deny(clippy::wildcard_enum_match_arm)]
mod build;
pub mod diode;
mod figure;
mod figures;
pub mod network;
mod paper;
pub mod solver;
pub mod waveform;
pub mod winding;

pub use build::{Conditions, LoadOverride, choke_of, network, power_cutoff_v};
pub use figure::{Figure, Naming};
pub use figures::{Figures, RIPPLE_HARMONICS};
pub use paper::{
    BELOW_THE_DROPS, BEYOND_THE_WINDING, HandEstimate, hand_differences, hand_estimate,
};

use crate::supply::{Supply, SupplyError};
use figures::figures;
use network::{LoadLaw, Network};
use serde::Serialize;
use solver::{SolveError, SteadyState};

/// Why a supply could not be solved.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CircuitError {
    #[error("{0}")]
    Supply(#[from] SupplyError),
    #[error("{0}")]
    Solve(#[from] SolveError),
    /// The solver gave up within its work budget: the supply's values that set its time
    /// constants are named, since those are what make a circuit hard to settle.
    #[error("{why}; the values that set its time constants: {values}")]
    Refused { why: SolveError, values: String },
    /// The worst case gave up within its own budget over the whole tolerance box.
    #[error(
        "the worst case spent its {evaluations} circuit evaluations over the tolerance box \
         without finishing; the values that set its time constants: {values}"
    )]
    WorstCaseRefused { evaluations: usize, values: String },
}

/// One mains period of the rail, the rectified source and one diode's current (ms, V, V, A).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Waveform {
    pub t_ms: Vec<f64>,
    pub v_out: Vec<f64>,
    pub v_source: Vec<f64>,
    pub i_diode: Vec<f64>,
}

/// A supply solved at one set of conditions.
#[derive(Debug, Clone, PartialEq)]
pub struct Operating {
    pub figures: Figures,
    pub waveform: Waveform,
    pub steady: SteadyState,
    /// Where the solve stood in for the model the supply asks for, in words (empty when it
    /// did not): a bridge whose phases' own currents did not settle, lumped.
    pub approximations: Vec<&'static str>,
}

/// What a lumped six-pulse bridge leaves out, in words.
pub const LUMPED_PHASES: &str = "the phases' own currents did not settle within the solver's \
     budget: solved with their inductance lumped into one path, the commutation overlap left \
     out (the DC reads 1-2 % high against the full model on the reference drive buses)";

/// Solves `supply` under `cond` for its periodic steady state and figures.
pub fn solve(supply: &Supply, cond: &Conditions) -> Result<Operating, CircuitError> {
    let net = network(supply, cond)?;
    let steady = match solver::steady_state(&net) {
        Ok(s) => s,
        // A six-pulse bridge whose phases' own currents did not settle (an idle bus on a
        // flat-topped line, where the charge creeps in at the crest) is solved again with
        // their inductance lumped in one path: the commutation overlap is lost, which at
        // such light load is small, rather than the figures.
        Err(
            SolveError::WorkLimit(_) | SolveError::NoConvergence(_) | SolveError::TooManySteps(_),
        ) if net.is_coupled_bridge() => {
            let lumped = Conditions {
                lumped_phases: true,
                ..*cond
            };
            let mut op = solve(supply, &lumped)?;
            op.approximations.push(LUMPED_PHASES);
            return Ok(op);
        }
        Err(
            why @ (SolveError::WorkLimit(_)
            | SolveError::NoConvergence(_)
            | SolveError::TooManySteps(_)),
        ) => {
            return Err(CircuitError::Refused {
                why,
                values: time_constants(supply, &net),
            });
        }
        Err(e) => return Err(e.into()),
    };
    let figures = figures(supply, &net, &steady, cond);
    let waveform = Waveform {
        t_ms: steady.t_s.iter().map(|t| t * 1e3).collect(),
        v_out: steady.probes.iter().map(|p| p.v_out).collect(),
        v_source: steady.probes.iter().map(|p| p.v_source).collect(),
        i_diode: steady.probes.iter().map(|p| p.i_diode).collect(),
    };
    Ok(Operating {
        figures,
        waveform,
        steady,
        approximations: Vec::new(),
    })
}

/// The supply's fields behind each time constant of its network at nominal, in words, for a
/// refusal that must name them.
pub fn time_constant_words(supply: &Supply) -> String {
    match network(supply, &Conditions::default()) {
        Ok(net) => time_constants(supply, &net),
        Err(e) => e.to_string(),
    }
}

/// The supply's fields behind each time constant of its network, with the time constant and
/// the period they are measured against, in words (seconds shown with SI prefixes).
fn time_constants(supply: &Supply, net: &Network) -> String {
    use crate::units::format_si;
    let mut out = vec![format!(
        "mains.hz = {} (a period of {})",
        supply.mains.hz,
        format_si(1.0 / supply.mains.hz, "s")
    )];
    if let (Some(r), Some(p)) = (net.reservoirs.first(), net.paths.first()) {
        let ohms = (p.ohms + r.esr_ohms).max(net.min_path_ohms);
        out.push(format!(
            "filter.uf = {} charged through {} of winding and filter.esr_ohms = {} ({})",
            supply.filter.uf.unwrap_or(0.0),
            format_si(p.ohms, "ohm"),
            r.esr_ohms,
            format_si(ohms * r.farads, "s")
        ));
    }
    if let Some(st) = net.second {
        out.push(format!(
            "filter.series_ohms = {} with filter.second_uf = {} ({})",
            st.ohms,
            supply.filter.second_uf.unwrap_or(0.0),
            format_si(st.ohms * st.farads, "s")
        ));
    }
    match net.load {
        LoadLaw::Resistance { ohms } => out.push(format!("load.ohms = {ohms}")),
        LoadLaw::Current { amps, knee_v } => out.push(format!(
            "load.amps = {amps} (below {knee_v} V a resistance)"
        )),
        LoadLaw::Power { watts, cutoff_v } => out.push(format!(
            "load.watts = {watts} (stopping below load.cutoff_v = {cutoff_v} V)"
        )),
    }
    out.join("; ")
}

/// Nominal solve plus hand estimate; the shared entry point of the report, TUI and diagnosis.
pub fn solve_nominal(supply: &Supply) -> Result<(Operating, HandEstimate), CircuitError> {
    let op = solve(supply, &Conditions::default())?;
    let hand = hand_estimate(supply)?;
    Ok((op, hand))
}
