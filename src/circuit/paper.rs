//! The paper estimate: the textbook formulas a technician would work by hand, and where the
//! solved circuit departs from them and why.

use super::{Conditions, Operating, network};
use crate::supply::{FilterKind, Supply, SupplyError, Topology};
use serde::Serialize;
use std::f64::consts::PI;

/// The paper estimate a technician makes: volts, amps, hertz.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HandEstimate {
    /// Winding peak less the textbook diode drops.
    pub working_peak_v: f64,
    /// The rail's crest on paper: the working peak behind a capacitor input (it charges to
    /// it), the DC plus half the ripple behind a choke (a choke input's rail never sees the
    /// peak while its current flows, a pi filter's output sits behind the choke).
    pub crest_v: f64,
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
        crate::supply::DiodeSpec::Preset(p) => {
            super::diode::preset(p).map_or(0.7, |p| p.paper_drop_v)
        }
        crate::supply::DiodeSpec::Fixed { drop_v, .. } => *drop_v,
        crate::supply::DiodeSpec::Junction { .. } => 0.7,
        // A valve's data-sheet drop at its stated current: the paper figure of a plate.
        crate::supply::DiodeSpec::Valve { drop_v, .. } => *drop_v,
    };
    let secondary_peak = supply.mains.vrms / winding.ratio * supply.mains.crest();
    // Each capacitor of a doubler charges to the winding's peak through one diode (the two
    // are stacked below); on three phases the secondary's peak is the line-to-line one, a
    // star's rail a phase's.
    let (share, diodes) = match topology {
        Topology::Doubler => (1.0, 1.0),
        Topology::HalfWave
        | Topology::CenterTap
        | Topology::SplitRail
        | Topology::Bridge
        | Topology::ThreePhaseBridge
        | Topology::ThreePhaseStar => (topology.peak_share(), topology.diodes_to_peak()),
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
        // A converter: its watts over the rail.
        _ => supply.load.watts.map_or(0.0, |w| w / v.max(1e-3)),
    };
    let f = &supply.filter;
    let (dc, ripple, load) = match (f.kind, f.uf) {
        // A choke input: the choke passes the rectified wave's average (2/pi or 1/pi of the
        // working peak) less its copper's drop; the L section passes the strongest ripple
        // term (2w: 4 Vm / 3 pi; w: Vm / 2 on half wave) divided by (n w)^2 L C - 1.
        (FilterKind::Lc, Some(uf)) => {
            let c = uf * 1e-6;
            let choke = super::choke_of(f);
            let (average, term) = (rectified_average(pulses), rectified_harmonic(pulses));
            let mut dc = working * average;
            let mut i = load_at(dc);
            for _ in 0..20 {
                i = load_at(dc);
                dc = working * average - i * f.choke_ohms.unwrap_or(0.0);
            }
            // A swinging choke at the load's current.
            let henries = choke.map_or(0.0, |ch| ch.at(i));
            let omega = 2.0 * PI * ripple_hz;
            let ripple = 2.0 * working * term / (omega * omega * henries * c - 1.0).abs();
            (dc, ripple, i)
        }
        (FilterKind::Capacitor | FilterKind::Crc | FilterKind::Clc, Some(uf)) => {
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
                (FilterKind::Clc, _, Some(uf2)) => {
                    // The pi section divides the ripple by X_L / X_C2 - 1.
                    let omega = 2.0 * PI * ripple_hz;
                    let henries = super::choke_of(f).map_or(0.0, |ch| ch.at(i));
                    let ratio = omega * omega * henries * uf2 * 1e-6;
                    let r = f.choke_ohms.unwrap_or(0.0);
                    (dc - i * r, ripple / (ratio - 1.0).abs().max(1.0), i)
                }
                _ => (dc, ripple, i),
            }
        }
        _ => {
            let dc = working * rectified_average(pulses);
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
        crest_v: match f.kind {
            FilterKind::Lc | FilterKind::Clc => (dc + ripple / 2.0).clamp(0.0, working),
            FilterKind::None | FilterKind::Capacitor | FilterKind::Crc => working,
        },
        // Clamped so that no figure of the estimate is ever negative or above the peak.
        dc_v: dc.clamp(0.0, working),
        ripple_pp_v: ripple.clamp(0.0, working),
        load_a: load,
        ripple_hz,
        diode_drop_v: drop,
        not_applicable,
    })
}

/// The average of an n-pulse rectified sine over its peak: n / pi sin(pi / n) for n >= 2
/// (2 / pi full wave, 3 sqrt 3 / 2 pi three-pulse, 3 / pi six-pulse: the textbook's 1.17 V
/// phase and 1.35 V line-to-line), 1 / pi for one pulse.
pub fn rectified_average(pulses: f64) -> f64 {
    if pulses >= 2.0 {
        pulses / PI * (PI / pulses).sin()
    } else {
        1.0 / PI
    }
}

/// The amplitude of an n-pulse rectified sine's strongest ripple term (at n times the line
/// frequency) over its peak: the average times 2 / (n^2 - 1) (4 / 3 pi on full wave), and
/// one half on half wave (the fundamental's), from the Fourier series of the rectified sine.
pub fn rectified_harmonic(pulses: f64) -> f64 {
    if pulses >= 2.0 {
        rectified_average(pulses) * 2.0 / (pulses * pulses - 1.0)
    } else {
        0.5
    }
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
