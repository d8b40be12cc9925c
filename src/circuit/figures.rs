//! The figures a technician reads off a solved supply: the rail's DC, ripple and peaks, the
//! diodes', winding's and capacitor's currents, the conduction angle and the switch-on surge.

use super::network::{Integral, LoadLaw, Network};
use super::solver::SteadyState;
use crate::supply::Supply;
use serde::Serialize;
use std::f64::consts::PI;

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
    /// The winding's (or the line's, straight off it) peak current, amps: each of its pulses
    /// is one diode's, so it is the diode peak (a bridge's phase carries its upper diode's
    /// pulses one way and its lower's the other, alike by symmetry).
    pub winding_peak_a: f64,
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
    /// The choke's RMS and peak current and the DC it drops (its resistance times its
    /// average current); None without a choke.
    pub choke_rms_a: Option<f64>,
    pub choke_peak_a: Option<f64>,
    pub choke_dc_drop_v: Option<f64>,
    /// The output capacitor's ripple current, RMS: a CRC's or CLC's second capacitor; None
    /// with one capacitor (then it is `cap_ripple_rms_a`).
    pub out_cap_ripple_rms_a: Option<f64>,
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
        let optional = |g: fn(&Figures) -> Option<f64>| {
            used()
                .map(|(w, f)| g(f).map(|a| w * a))
                .sum::<Option<f64>>()
        };
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
            winding_peak_a: sum(|f| f.winding_peak_a),
            winding_va: sum(|f| f.winding_va),
            cap_ripple_rms_a: sum(|f| f.cap_ripple_rms_a),
            conduction_deg: sum(|f| f.conduction_deg),
            inrush_peak_a: optional(|f| f.inrush_peak_a),
            cap_peak_v: sum(|f| f.cap_peak_v),
            secondary_rms_v: sum(|f| f.secondary_rms_v),
            choke_rms_a: optional(|f| f.choke_rms_a),
            choke_peak_a: optional(|f| f.choke_peak_a),
            choke_dc_drop_v: optional(|f| f.choke_dc_drop_v),
            out_cap_ripple_rms_a: optional(|f| f.out_cap_ripple_rms_a),
        }
    }

    /// Every figure with its JSON name, in the report's order.
    pub fn named(&self) -> [(&'static str, Option<f64>); 23] {
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
            ("winding_peak_a", Some(self.winding_peak_a)),
            ("winding_va", Some(self.winding_va)),
            ("cap_ripple_rms_a", Some(self.cap_ripple_rms_a)),
            ("conduction_deg", Some(self.conduction_deg)),
            ("inrush_peak_a", self.inrush_peak_a),
            ("cap_peak_v", Some(self.cap_peak_v)),
            ("secondary_rms_v", Some(self.secondary_rms_v)),
            ("choke_rms_a", self.choke_rms_a),
            ("choke_peak_a", self.choke_peak_a),
            ("choke_dc_drop_v", self.choke_dc_drop_v),
            ("out_cap_ripple_rms_a", self.out_cap_ripple_rms_a),
        ]
    }
}

pub(super) fn figures(
    supply: &Supply,
    net: &Network,
    s: &SteadyState,
    cond: &super::Conditions,
) -> Figures {
    let mean = |i: Integral| i.mean(s);
    let dc = mean(Integral::Rail);
    // The ripple was integrated about the rail at the period's start.
    let offset = dc - s.start_probe.v_out;
    let ripple_rms = (mean(Integral::RippleSquare) - offset * offset)
        .max(0.0)
        .sqrt();
    let topology = supply.rectifier.topology;
    let halves = topology.has_half_windings();
    let winding_rms = mean(Integral::WindingSquare).max(0.0).sqrt();
    // The choke's resistance as solved (warmed by the conditions' factor), where there is a
    // choke (a shorted one still carries the current through its copper).
    let choke = supply
        .filter
        .kind
        .has_choke()
        .then(|| supply.filter.choke_ohms.unwrap_or(0.0) * cond.choke_factor);
    // Volt-amperes as the transformer's rating counts them: its RMS EMF times RMS current,
    // each half of a center-tapped winding counted.
    let winding_va = if halves {
        2.0 * 0.5 * net.emf_rms_v * winding_rms
    } else {
        net.emf_rms_v * winding_rms
    };
    // What the rail's capacitors still drift across the period (the solver closes the period
    // to a few hundred of its tolerances) is taken out of the crest and the trough as a
    // straight line through the period, each at the instant of its nearest sample: on a
    // ripple of a few parts in 10^4 of its rail (a drive bus behind a reactor and a choke)
    // the drift was a tenth of the ripple. Samples unfolded from a sub-period drift over each
    // sub-period afresh, so each is placed within its own.
    let drift = net.output_volts(&s.end) - net.output_volts(&s.start);
    let when = |better: fn(f64, f64) -> bool| {
        s.probes
            .iter()
            .zip(&s.t_s)
            .fold(None::<(f64, f64)>, |best, (p, t)| match best {
                Some((v, _)) if !better(p.v_out, v) => best,
                _ => Some((p.v_out, *t)),
            })
            .map_or(0.0, |(_, t)| into_pass(t, s.pass_s))
    };
    let max_v = s.v_out_max - drift * when(|a, b| a > b);
    let min_v = s.v_out_min - drift * when(|a, b| a < b);
    Figures {
        dc_v: dc,
        max_v,
        min_v,
        ripple_pp_v: (max_v - min_v).max(0.0),
        ripple_rms_v: ripple_rms,
        ripple_hz: ripple_frequency(net.line_hz, s, drift),
        load_a: mean(Integral::Load),
        diode_peak_a: s.i_diode_peak,
        diode_avg_a: mean(Integral::Diode),
        diode_rms_a: mean(Integral::DiodeSquare).max(0.0).sqrt(),
        diode_piv_v: s.v_reverse_max.max(0.0),
        winding_rms_a: winding_rms,
        winding_peak_a: s.i_diode_peak,
        winding_va,
        cap_ripple_rms_a: mean(Integral::CapSquare).max(0.0).sqrt(),
        conduction_deg: 360.0 * s.conduction_fraction,
        inrush_peak_a: inrush(net),
        cap_peak_v: s.v_cap_max,
        secondary_rms_v: (s
            .probes
            .iter()
            .map(|p| p.v_secondary * p.v_secondary)
            .sum::<f64>()
            / s.probes.len().max(1) as f64)
            .sqrt(),
        choke_rms_a: choke.map(|_| mean(Integral::ChokeSquare).max(0.0).sqrt()),
        choke_peak_a: choke.map(|_| s.i_choke_peak),
        choke_dc_drop_v: choke.map(|ohms| ohms * mean(Integral::Choke)),
        out_cap_ripple_rms_a: net
            .second
            .map(|_| mean(Integral::OutCapSquare).max(0.0).sqrt()),
    }
}

/// The strongest of the rail's components at the multiples of the line frequency a rectifier
/// shows (hertz). `drift_v` is how far the rail's capacitors ended the pass from where they
/// began (volts): taken out as a straight line through each pass's span, since a ripple
/// filtered down to microvolts (a six-pulse rail behind an RC stage) can be smaller than what
/// a slow stage still drifts within the solver's tolerance, and a drift reads as a
/// line-frequency component.
fn ripple_frequency(line_hz: f64, steady: &SteadyState, drift_v: f64) -> f64 {
    // The rail's samples less the drift, once for the four bins.
    let rail: Vec<f64> = steady
        .probes
        .iter()
        .zip(&steady.t_s)
        .map(|(p, t)| p.v_out - drift_v * into_pass(*t, steady.pass_s))
        .collect();
    let n = rail.len() as f64;
    // One DFT bin, the phasor turned by a fixed rotation each sample instead of a sine call.
    let amplitude = |k: f64| {
        let (step_sin, step_cos) = (2.0 * PI * k / n).sin_cos();
        let (mut c, mut s) = (1.0f64, 0.0f64);
        let (mut re, mut im) = (0.0, 0.0);
        for &v in &rail {
            re += v * c;
            im += v * s;
            (c, s) = (c * step_cos - s * step_sin, s * step_cos + c * step_sin);
        }
        (re * re + im * im).sqrt()
    };
    // Once (half wave, a leg open), twice (full wave, a six-pulse bridge with a phase lost),
    // three times (a three-pulse star) or six times (a six-pulse bridge): the strongest.
    let mut best = (1.0, amplitude(1.0));
    for k in RIPPLE_HARMONICS {
        let a = amplitude(k);
        if a > best.1 {
            best = (k, a);
        }
    }
    best.0 * line_hz
}

/// How far through the final pass's span (0 to 1) the sample at `t_s` seconds was taken:
/// the pass covers the mains period, or a sub-period the samples were unfolded from.
fn into_pass(t_s: f64, pass_s: f64) -> f64 {
    (t_s / pass_s).fract()
}

/// The multiples of the line frequency a rectifier's ripple can have (see
/// [`crate::supply::Topology::pulses_per_cycle`]).
pub const RIPPLE_HARMONICS: [f64; 3] = [2.0, 3.0, 6.0];

/// Switch-on at the crest into empty capacitors: only the path's resistance and the ESR limit
/// the first pulse (amps).
fn inrush(net: &Network) -> Option<f64> {
    let p = net.paths.first()?;
    let esr = net.reservoirs.first().map_or(0.0, |r| r.esr_ohms);
    // A phase of a three-phase bridge charges in series with another phase.
    let phases_in_series = if net.is_coupled_bridge() { 2.0 } else { 1.0 };
    let ohms = phases_in_series * p.ohms + p.series_ohms + esr;
    let peak = net.source_peak(p);
    if !ohms.is_finite() {
        // A path open at its end (an open choke): nothing flows at switch-on either.
        return Some(0.0);
    }
    if net.reservoirs.is_empty() {
        // No capacitor: the first pulse is an ordinary one.
        let load_ohms = match net.load {
            LoadLaw::Resistance { ohms } => ohms,
            LoadLaw::Current { .. } | LoadLaw::Power { .. } => 0.0,
        };
        if ohms + load_ohms <= 0.0 {
            return None;
        }
        return Some(net.diode.string_current(peak, ohms + load_ohms, p.diodes));
    }
    // Inductance in the path (leakage, a choke input) bounds the first pulse too: an
    // undamped LC swing from the crest peaks at V / sqrt(L / C); the smaller bound holds.
    let henries = phases_in_series * p.leakage_h + p.choke.map_or(0.0, |c| c.at(0.0));
    let farads = net.reservoirs.first().map_or(0.0, |r| r.farads);
    let swing = (henries > 0.0 && farads > 0.0).then(|| peak / (henries / farads).sqrt());
    match (ohms > 0.0, swing) {
        (false, None) => None,
        (true, None) => Some(net.diode.string_current(peak, ohms, p.diodes)),
        (false, Some(a)) => Some(a),
        (true, Some(a)) => Some(a.min(net.diode.string_current(peak, ohms, p.diodes))),
    }
}
