//! The physics: mains wave, winding, diodes, filter and load as a network; the steady-state
//! solver; and the figures a technician reads off a supply.

pub mod diode;
pub mod network;
pub mod solver;
pub mod waveform;

use crate::supply::{FilterKind, Supply, SupplyError, Topology};
use diode::DiodeLaw;
use network::{Arrangement, LoadLaw, Network, Path, Polarity, Reservoir, SecondStage};
use serde::Serialize;
use solver::{SolveError, SteadyState};
use std::f64::consts::PI;
use waveform::MainsWave;

/// Departures from the supply as described: tolerance corners and fault states. The default is
/// the supply as it stands.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Conditions {
    /// Mains RMS volts instead of the nominal (a reading, or a fault hypothesis).
    pub mains_vrms: Option<f64>,
    /// Multiplies the mains RMS (1.1 for +10 %).
    pub mains_factor: f64,
    /// Multiplies every filter capacitance (their tolerance, or all of them ageing alike).
    pub cap_factor: f64,
    /// Multiplies the reservoir capacitor's capacitance alone, on top of `cap_factor`: the
    /// capacitor a fault concerns, which is the one the rectifier charges (a CRC's first, the
    /// first of a doubler's pair; the others keep their value, as a real unit's do when one
    /// part fails).
    pub reservoir_factor: f64,
    /// The reservoir capacitor's ESR instead of the stated one, ohms (the others keep theirs).
    pub esr_ohms: Option<f64>,
    /// Multiplies the turns ratio (above 1: a lower secondary).
    pub ratio_factor: f64,
    /// Multiplies the diode's forward drop.
    pub drop_factor: f64,
    /// A load instead of the stated one.
    pub load: Option<LoadOverride>,
    /// One leg of a full-wave rectifier open (a diode or half a winding).
    pub leg_open: bool,
    /// The reservoir capacitor open or missing: a capacitor filter's only one, a CRC's first
    /// (its resistor and second capacitor then filter alone), a doubler's whole stack (the
    /// rail then follows one diode).
    pub capacitor_open: bool,
    /// Multiplies both windings' resistances (a warm winding, or an assumed one's range).
    pub winding_factor: f64,
    /// The mains crest factor instead of the file's (peak over RMS).
    pub crest: Option<f64>,
}

impl Default for Conditions {
    fn default() -> Self {
        Conditions {
            mains_vrms: None,
            mains_factor: 1.0,
            cap_factor: 1.0,
            reservoir_factor: 1.0,
            esr_ohms: None,
            ratio_factor: 1.0,
            drop_factor: 1.0,
            load: None,
            leg_open: false,
            capacitor_open: false,
            winding_factor: 1.0,
            crest: None,
        }
    }
}

/// A load in place of the supply's own (amps or ohms).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LoadOverride {
    Amps(f64),
    Ohms(f64),
}

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

/// A rectifier's input knee for a constant-current load with no regulator: an electronic
/// load keeps its current down to about a volt.
const CURRENT_LOAD_KNEE_V: f64 = 1.0;

/// Builds the network for `supply` under `cond` (the supply must be valid).
pub fn network(supply: &Supply, cond: &Conditions) -> Result<Network, SupplyError> {
    let winding = supply.winding()?;
    let diode = DiodeLaw::from_params(supply.rectifier_diode()?).with_drop_scaled(cond.drop_factor);
    let mains = cond.mains_vrms.unwrap_or(supply.mains.vrms) * cond.mains_factor;
    let ratio = winding.ratio * cond.ratio_factor;
    let emf_rms_v = mains / ratio;
    // A calibrated unit is solved as the baseline visit found it; the conditions' factors
    // act on top of that.
    let cal = supply.calibration_in_force();
    let winding_factor = cond.winding_factor * cal.winding_factor;
    let winding = crate::supply::WindingModel {
        secondary_ohms: winding.secondary_ohms * winding_factor,
        primary_ohms: winding.primary_ohms * winding_factor,
        ..winding
    };
    let cap_factor = cond.cap_factor * cal.cap_factor;
    let whole = winding.secondary_ohms + winding.primary_ohms / (ratio * ratio);
    let half = 0.5 * winding.secondary_ohms;
    let topology = supply.rectifier.topology;
    let path = |emf_share, polarity, ohms, diodes, reservoir| Path {
        emf_share,
        polarity,
        ohms,
        diodes,
        reservoir,
    };
    let full_wave = if cond.leg_open {
        Polarity::OneLegOpen
    } else {
        Polarity::Rectified
    };
    let (paths, arrangement) = match topology {
        Topology::HalfWave => (
            vec![path(1.0, Polarity::Forward, whole, 1, 0)],
            Arrangement::Direct,
        ),
        // One half conducts at a time: the primary reflects through twice the ratio.
        Topology::CenterTap => (
            vec![path(
                0.5,
                full_wave,
                half + winding.primary_ohms / (4.0 * ratio * ratio),
                1,
                0,
            )],
            Arrangement::CenterTap,
        ),
        Topology::Bridge => (vec![path(1.0, full_wave, whole, 2, 0)], Arrangement::Bridge),
        Topology::Doubler => (
            vec![
                path(1.0, Polarity::Forward, whole, 1, 0),
                path(
                    1.0,
                    if cond.leg_open {
                        Polarity::OneLegOpen
                    } else {
                        Polarity::Inverted
                    },
                    whole,
                    1,
                    1,
                ),
            ],
            Arrangement::Direct,
        ),
        // Both halves conduct together (one per rail) with matched rails, so the primary
        // carries twice one rail's share: half of it reflects to each half winding.
        Topology::SplitRail => (
            vec![path(
                0.5,
                full_wave,
                half + winding.primary_ohms / (2.0 * ratio * ratio),
                1,
                0,
            )],
            Arrangement::SplitRail,
        ),
    };
    let f = &supply.filter;
    let stated = Reservoir {
        farads: f.uf.unwrap_or(0.0) * 1e-6 * cap_factor,
        esr_ohms: f.esr_ohms,
    };
    // The capacitor a fault concerns is the first the rectifier charges.
    let faulted = Reservoir {
        farads: stated.farads * cond.reservoir_factor,
        esr_ohms: cond.esr_ohms.unwrap_or(f.esr_ohms),
    };
    let crc = match (f.kind, f.series_ohms, f.second_uf) {
        (FilterKind::Crc, Some(ohms), Some(uf)) => Some(SecondStage {
            ohms,
            farads: uf * 1e-6 * cap_factor,
        }),
        _ => None,
    };
    let mut paths = paths;
    let (reservoirs, second) = match (f.kind, crc) {
        (FilterKind::None, _) => (Vec::new(), None),
        // A CRC whose first capacitor is open: the rectifier charges the second one through
        // the resistor, which is then simply more resistance in every charging path (nothing
        // else hangs on the rectifier's side of it).
        (_, Some(stage)) if cond.capacitor_open => {
            for p in &mut paths {
                p.ohms += stage.ohms;
            }
            (
                vec![Reservoir {
                    farads: stage.farads,
                    esr_ohms: 0.0,
                }],
                None,
            )
        }
        _ if cond.capacitor_open => (Vec::new(), None),
        (_, stage) => {
            let reservoirs = if topology == Topology::Doubler {
                vec![faulted, stated]
            } else {
                vec![faulted]
            };
            (reservoirs, stage)
        }
    };
    let filtered = !reservoirs.is_empty();
    let farads = reservoirs.first().map_or(0.0, |r| r.farads);
    let load = load_law(supply, cond);
    // Zero source resistance makes conduction a constraint; a time constant of 1e-4 of the
    // period stands in for it, moving the figures by well under 1e-4 relative.
    let period = 1.0 / supply.mains.hz;
    let min_path_ohms = if filtered {
        1e-4 * period / farads.max(1e-18)
    } else {
        0.0
    };
    let paths = if paths.len() == 2 && !filtered {
        paths[..1].to_vec()
    } else {
        paths
    };
    Ok(Network {
        wave: MainsWave::with_crest(
            cond.crest
                .or(cal.crest.filter(|_| supply.mains.crest.is_none()))
                .unwrap_or(supply.mains.crest()),
        ),
        emf_rms_v,
        line_hz: supply.mains.hz,
        paths,
        reservoirs,
        second,
        load,
        diode,
        arrangement,
        min_path_ohms,
    })
}

/// The load the rail sees: a regulator turns whatever it feeds into a constant current drawn
/// from the rail while it has headroom.
fn load_law(supply: &Supply, cond: &Conditions) -> LoadLaw {
    let (amps, ohms) = match cond.load {
        Some(LoadOverride::Amps(a)) => (Some(a), None),
        Some(LoadOverride::Ohms(r)) => (None, Some(r)),
        None => (supply.load.amps, supply.load.ohms),
    };
    match (&supply.regulator, amps, ohms) {
        (Some(reg), a, r) => {
            let amps = a.unwrap_or_else(|| reg.output_v / r.unwrap_or(f64::INFINITY));
            LoadLaw::Current {
                amps,
                knee_v: reg.output_v + reg.dropout_v,
            }
        }
        (None, Some(amps), _) => LoadLaw::Current {
            amps,
            knee_v: CURRENT_LOAD_KNEE_V,
        },
        (None, None, Some(ohms)) => LoadLaw::Resistance { ohms },
        (None, None, None) => LoadLaw::Current {
            amps: 0.0,
            knee_v: CURRENT_LOAD_KNEE_V,
        },
    }
}

/// The nominal figures of a solved supply: volts, amps, hertz, degrees, volt-amperes.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Figures {
    /// Average rail voltage: what a DMM on DC volts reads.
    pub dc_v: f64,
    pub max_v: f64,
    pub min_v: f64,
    pub ripple_pp_v: f64,
    /// What a true-RMS meter on AC volts across the rail reads.
    pub ripple_rms_v: f64,
    /// The ripple's strongest frequency: the line's or twice it.
    pub ripple_hz: f64,
    pub load_a: f64,
    pub diode_peak_a: f64,
    pub diode_avg_a: f64,
    pub diode_rms_a: f64,
    pub diode_piv_v: f64,
    pub winding_rms_a: f64,
    pub winding_va: f64,
    pub cap_ripple_rms_a: f64,
    pub conduction_deg: f64,
    /// Switch-on at the mains peak into an empty capacitor; None when nothing but the diodes
    /// limits it (no winding resistance or ESR given).
    pub inrush_peak_a: Option<f64>,
    /// Highest voltage across the first filter capacitor (one of a doubler's two).
    pub cap_peak_v: f64,
    /// What an AC meter across the whole secondary reads under this load (RMS volts).
    pub secondary_rms_v: f64,
}

impl Figures {
    /// A weighted sum of several solves' figures (same units; weights summing to 1), for
    /// interpolating between solves of neighbouring conditions. The ripple frequency, one
    /// harmonic or another rather than a quantity, comes from the heaviest part.
    /// Parts of weight zero are left out (an interpolation's unused slots).
    pub fn blend(parts: &[(f64, &Figures)]) -> Figures {
        let used = || parts.iter().filter(|(w, _)| *w != 0.0);
        let sum = |g: fn(&Figures) -> f64| used().map(|(w, f)| w * g(f)).sum::<f64>();
        let heaviest = used()
            .max_by(|a, b| a.0.total_cmp(&b.0))
            .map_or(0.0, |(_, f)| f.ripple_hz);
        let inrush = used()
            .map(|(w, f)| f.inrush_peak_a.map(|a| w * a))
            .sum::<Option<f64>>();
        Figures {
            dc_v: sum(|f| f.dc_v),
            max_v: sum(|f| f.max_v),
            min_v: sum(|f| f.min_v),
            ripple_pp_v: sum(|f| f.ripple_pp_v),
            ripple_rms_v: sum(|f| f.ripple_rms_v),
            ripple_hz: heaviest,
            load_a: sum(|f| f.load_a),
            diode_peak_a: sum(|f| f.diode_peak_a),
            diode_avg_a: sum(|f| f.diode_avg_a),
            diode_rms_a: sum(|f| f.diode_rms_a),
            diode_piv_v: sum(|f| f.diode_piv_v),
            winding_rms_a: sum(|f| f.winding_rms_a),
            winding_va: sum(|f| f.winding_va),
            cap_ripple_rms_a: sum(|f| f.cap_ripple_rms_a),
            conduction_deg: sum(|f| f.conduction_deg),
            inrush_peak_a: inrush,
            cap_peak_v: sum(|f| f.cap_peak_v),
            secondary_rms_v: sum(|f| f.secondary_rms_v),
        }
    }

    /// Every figure with its JSON name, in the report's order.
    pub fn named(&self) -> [(&'static str, Option<f64>); 18] {
        [
            ("dc_v", Some(self.dc_v)),
            ("max_v", Some(self.max_v)),
            ("min_v", Some(self.min_v)),
            ("ripple_pp_v", Some(self.ripple_pp_v)),
            ("ripple_rms_v", Some(self.ripple_rms_v)),
            ("ripple_hz", Some(self.ripple_hz)),
            ("load_a", Some(self.load_a)),
            ("diode_peak_a", Some(self.diode_peak_a)),
            ("diode_avg_a", Some(self.diode_avg_a)),
            ("diode_rms_a", Some(self.diode_rms_a)),
            ("diode_piv_v", Some(self.diode_piv_v)),
            ("winding_rms_a", Some(self.winding_rms_a)),
            ("winding_va", Some(self.winding_va)),
            ("cap_ripple_rms_a", Some(self.cap_ripple_rms_a)),
            ("conduction_deg", Some(self.conduction_deg)),
            ("inrush_peak_a", self.inrush_peak_a),
            ("cap_peak_v", Some(self.cap_peak_v)),
            ("secondary_rms_v", Some(self.secondary_rms_v)),
        ]
    }
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
}

/// Solves `supply` under `cond` for its periodic steady state and figures.
pub fn solve(supply: &Supply, cond: &Conditions) -> Result<Operating, CircuitError> {
    let net = network(supply, cond)?;
    let steady = match solver::steady_state(&net) {
        Ok(s) => s,
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
    let figures = figures(supply, &net, &steady);
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
    }
    out.join("; ")
}

fn figures(supply: &Supply, net: &Network, s: &SteadyState) -> Figures {
    let dc = s.mean_v_out;
    let offset = dc - s.ripple_ref_v;
    let ripple_rms = (s.mean_sq_ripple - offset * offset).max(0.0).sqrt();
    let topology = supply.rectifier.topology;
    let halves = matches!(topology, Topology::CenterTap | Topology::SplitRail);
    let winding_rms = s.mean_sq_i_winding.max(0.0).sqrt();
    // Volt-amperes as the transformer's rating counts them: its RMS EMF times RMS current,
    // each half of a center-tapped winding counted.
    let winding_va = if halves {
        2.0 * 0.5 * net.emf_rms_v * winding_rms
    } else {
        net.emf_rms_v * winding_rms
    };
    let threshold = 1e-3 * s.i_diode_peak.max(1e-12);
    let on = s.probes.iter().filter(|p| p.i_diode > threshold).count();
    Figures {
        dc_v: dc,
        max_v: s.v_out_max,
        min_v: s.v_out_min,
        ripple_pp_v: (s.v_out_max - s.v_out_min).max(0.0),
        ripple_rms_v: ripple_rms,
        ripple_hz: ripple_frequency(net.line_hz, &s.probes),
        load_a: s.mean_i_load,
        diode_peak_a: s.i_diode_peak,
        diode_avg_a: s.mean_i_diode,
        diode_rms_a: s.mean_sq_i_diode.max(0.0).sqrt(),
        diode_piv_v: s.v_reverse_max.max(0.0),
        winding_rms_a: winding_rms,
        winding_va,
        cap_ripple_rms_a: s.mean_sq_i_cap.max(0.0).sqrt(),
        conduction_deg: 360.0 * on as f64 / s.probes.len().max(1) as f64,
        inrush_peak_a: inrush(net),
        cap_peak_v: s.v_cap_max,
        secondary_rms_v: (s
            .probes
            .iter()
            .map(|p| p.v_secondary * p.v_secondary)
            .sum::<f64>()
            / s.probes.len().max(1) as f64)
            .sqrt(),
    }
}

/// The stronger of the line-frequency and twice-line components of the rail (hertz).
fn ripple_frequency(line_hz: f64, probes: &[solver::Probe]) -> f64 {
    let n = probes.len() as f64;
    // One DFT bin, the phasor turned by a fixed rotation each sample instead of a sine call.
    let amplitude = |k: f64| {
        let (step_sin, step_cos) = (2.0 * PI * k / n).sin_cos();
        let (mut c, mut s) = (1.0f64, 0.0f64);
        let (mut re, mut im) = (0.0, 0.0);
        for p in probes {
            re += p.v_out * c;
            im += p.v_out * s;
            (c, s) = (c * step_cos - s * step_sin, s * step_cos + c * step_sin);
        }
        (re * re + im * im).sqrt()
    };
    if amplitude(1.0) >= amplitude(2.0) {
        line_hz
    } else {
        2.0 * line_hz
    }
}

/// Switch-on at the crest into empty capacitors: only the path's resistance and the ESR limit
/// the first pulse (amps).
fn inrush(net: &Network) -> Option<f64> {
    let p = net.paths.first()?;
    let esr = net.reservoirs.first().map_or(0.0, |r| r.esr_ohms);
    let ohms = p.ohms + esr;
    let peak = p.emf_share * net.emf_rms_v * net.wave.crest();
    if net.reservoirs.is_empty() {
        // No capacitor: the first pulse is an ordinary one.
        let load_ohms = match net.load {
            LoadLaw::Resistance { ohms } => ohms,
            LoadLaw::Current { .. } => 0.0,
        };
        if ohms + load_ohms <= 0.0 {
            return None;
        }
        return Some(net.diode.string_current(peak, ohms + load_ohms, p.diodes));
    }
    if ohms <= 0.0 {
        return None;
    }
    Some(net.diode.string_current(peak, ohms, p.diodes))
}

/// The paper estimate a technician makes: volts, amps, hertz.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HandEstimate {
    /// Winding peak less the textbook diode drops.
    pub working_peak_v: f64,
    pub dc_v: f64,
    pub ripple_pp_v: f64,
    pub load_a: f64,
    pub ripple_hz: f64,
    /// Volts per conducting diode assumed.
    pub diode_drop_v: f64,
    /// Why the paper method says nothing about this supply, when it does not (the figures are
    /// then clamped at what the winding gives, never negative, and are not to be read).
    pub not_applicable: Option<&'static str>,
}

impl HandEstimate {
    /// Whether the paper method applies to this supply at all.
    pub fn applies(&self) -> bool {
        self.not_applicable.is_none()
    }
}

/// The paper method assumes a capacitor that sags a little between pulses; once its ripple
/// reaches the whole working peak the capacitor would empty, and the method's straight-line
/// discharge gives a negative rail (-22,695 V for 10 kA from a small bridge).
pub const BEYOND_THE_WINDING: &str = "does not apply: the load is beyond what the winding can give (the capacitor would empty \
     between pulses)";
/// The winding's peak does not pass the textbook diode drops: the paper method gives 0 V.
pub const BELOW_THE_DROPS: &str =
    "does not apply: the winding's peak does not pass the textbook diode drops";

/// The textbook estimate: working peak = winding peak minus 0.7 V per conducting diode;
/// unfiltered DC = working peak times 2/pi (full-wave) or 1/pi (half-wave); with a capacitor,
/// ripple = I / (f_ripple C) and DC = working peak - ripple/2 (any rectifier textbook).
pub fn hand_estimate(supply: &Supply) -> Result<HandEstimate, SupplyError> {
    let winding = supply.winding()?;
    let topology = supply.rectifier.topology;
    let drop = match &supply.rectifier.diode {
        crate::supply::DiodeSpec::Preset(p) if p == "schottky" => 0.4,
        crate::supply::DiodeSpec::Preset(p) if p == "ideal" => 0.0,
        crate::supply::DiodeSpec::Fixed { drop_v, .. } => *drop_v,
        _ => 0.7,
    };
    let secondary_peak = supply.mains.vrms / winding.ratio * supply.mains.crest();
    let (share, diodes) = match topology {
        Topology::HalfWave | Topology::Doubler => (1.0, 1.0),
        Topology::CenterTap | Topology::SplitRail => (0.5, 1.0),
        Topology::Bridge => (1.0, 2.0),
    };
    let mut working = (share * secondary_peak - diodes * drop).max(0.0);
    if topology == Topology::Doubler {
        working *= 2.0;
    }
    let pulses = topology.pulses_per_cycle() as f64;
    let ripple_hz = pulses * supply.mains.hz;
    let load_at = |v: f64| match (&supply.regulator, supply.load.amps, supply.load.ohms) {
        (Some(reg), None, Some(r)) => reg.output_v / r,
        (_, Some(a), _) => a,
        (None, None, Some(r)) => v / r,
        _ => 0.0,
    };
    let f = &supply.filter;
    let (dc, ripple, load) = match (f.kind, f.uf) {
        (FilterKind::Capacitor | FilterKind::Crc, Some(uf)) => {
            let c = uf * 1e-6;
            // The paper habit: the load current at the working peak.
            let i = load_at(working);
            // A full-wave doubler's two capacitors each recharge once a cycle.
            let f_charge = if topology == Topology::Doubler {
                supply.mains.hz
            } else {
                ripple_hz
            };
            let ripple = i / (f_charge * c);
            let dc = working - ripple / 2.0;
            match (f.kind, f.series_ohms, f.second_uf) {
                (FilterKind::Crc, Some(r), Some(uf2)) => {
                    // The RC stage divides the ripple by its reactance ratio.
                    let xc = 1.0 / (2.0 * PI * ripple_hz * uf2 * 1e-6);
                    (dc - i * r, ripple * xc / (r * r + xc * xc).sqrt(), i)
                }
                _ => (dc, ripple, i),
            }
        }
        _ => {
            let dc = working * if pulses == 2.0 { 2.0 / PI } else { 1.0 / PI };
            (dc, working, load_at(dc))
        }
    };
    let not_applicable = if working <= 0.0 {
        Some(BELOW_THE_DROPS)
    } else if ripple >= working || dc <= 0.0 {
        Some(BEYOND_THE_WINDING)
    } else {
        None
    };
    Ok(HandEstimate {
        working_peak_v: working,
        // Clamped so that no figure of the estimate is ever negative or above the peak.
        dc_v: dc.clamp(0.0, working),
        ripple_pp_v: ripple.clamp(0.0, working),
        load_a: load,
        ripple_hz,
        diode_drop_v: drop,
        not_applicable,
    })
}

/// Why the solved figures differ from the paper estimate, in words with the sizes involved.
pub fn hand_differences(supply: &Supply, op: &Operating, hand: &HandEstimate) -> Vec<String> {
    let mut out = Vec::new();
    // An estimate that does not apply has no differences worth a reason.
    if !hand.applies() {
        return out;
    }
    let f = &op.figures;
    let Ok(net) = network(supply, &Conditions::default()) else {
        return out;
    };
    let p = net.paths[0];
    let per_diode = net.diode.forward_v(f.diode_peak_a);
    if (per_diode - hand.diode_drop_v).abs() > 0.05 {
        out.push(format!(
            "each diode drops {:.2} V at the {:.3} A pulse peak, not the {:.2} V of the estimate",
            per_diode, f.diode_peak_a, hand.diode_drop_v
        ));
    }
    let resistive = f.diode_peak_a * (p.ohms + net.reservoirs.first().map_or(0.0, |r| r.esr_ohms));
    if resistive > 0.01 {
        out.push(format!(
            "winding, primary and ESR resistance drop {:.2} V at the pulse peak",
            resistive
        ));
    }
    if !net.reservoirs.is_empty() {
        out.push(format!(
            "the capacitor recharges over {:.0} degrees of each pulse, not instantly at the crest",
            f.conduction_deg
        ));
    }
    if (supply.mains.crest() - std::f64::consts::SQRT_2).abs() > 0.002 {
        out.push(format!(
            "the mains peak is {:.3} x RMS (flat-topped), which both take into account",
            supply.mains.crest()
        ));
    }
    out
}

/// Nominal solve plus hand estimate; the shared entry point of the report, TUI and diagnosis.
pub fn solve_nominal(supply: &Supply) -> Result<(Operating, HandEstimate), CircuitError> {
    let op = solve(supply, &Conditions::default())?;
    let hand = hand_estimate(supply)?;
    Ok((op, hand))
}
