//! Three-phase rectifiers: the probe of a star or a bridge whose phases take the current in
//! turn, and a six-pulse bridge whose phases carry inductance (a line reactor, the line's own,
//! or the transformer's leakage), where the outgoing and the incoming phase share the current
//! while it moves from one to the other (commutation overlap).
//!
//! In that bridge each phase's current is a state. Its source's star point floats: whatever
//! potential it takes, the phase currents add to zero. A phase conducts into the + rail
//! through its upper diode, out of the - rail through its lower one, or not at all, held at
//! zero as a blocked path is (see `run` in the parent module). With the conducting set known
//! the circuit is linear in the currents' slopes and the star point's potential: one equation
//! per conducting phase, L di/dt = EMF - R i - diode - rail + star point, and the currents'
//! sum. A DC link choke between the bridge and its capacitor carries the upper phases' sum,
//! so its voltage couples the upper phases' equations; the sums over the upper and the lower
//! phases solve them in closed form.

// Each phase's values sit in several arrays side by side (currents, sources, legs, slopes):
// they read best indexed by the phase.
#![allow(clippy::needless_range_loop)]

use super::{EDGES, Emfs, Flow, MAX_PATHS, Network, Polarity, Probe, RELAX_PER_PERIOD};

/// How a phase of an inductive bridge stands at an instant.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Leg {
    /// Through its upper diode into the + rail.
    Upper,
    /// Through its lower diode from the - rail.
    Lower,
    Blocked,
}

/// The linear solve of one conducting set: the star point's potential (volts, against the -
/// rail) and the upper phases' summed slope (amps per second).
#[derive(Debug, Clone, Copy)]
struct Commutation {
    star_v: f64,
    upper_slope: f64,
}

impl Network {
    /// Whether the network is a six-pulse bridge whose phases carry their own currents.
    pub fn is_coupled_bridge(&self) -> bool {
        self.phases == 3
            && !self.reservoirs.is_empty()
            && self
                .paths
                .iter()
                .all(|p| matches!(p.polarity, Polarity::Phase(_)) && p.leakage_h > 0.0)
            && self.arrangement == super::Arrangement::ThreePhaseBridge
    }

    /// Whether a six-pulse bridge whose phases carry their own currents has a DC link choke
    /// that rings with the bus capacitor slower than the mains (omega^2 L C > 1 at the line's
    /// angular frequency, the choke at zero current): a ring the period map forgets slowly,
    /// which Newton settles only in many steps over much of a tolerance box.
    pub fn dc_link_rings_below_line(&self) -> bool {
        let omega = std::f64::consts::TAU * self.line_hz;
        self.is_coupled_bridge()
            && match (self.paths[0].choke, self.reservoirs.first()) {
                (Some(choke), Some(r)) => omega * omega * choke.at(0.0) * r.farads > 1.0,
                _ => false,
            }
    }

    /// The inductive six-pulse bridge at one instant (see the module's notes): fills the
    /// derivatives of the capacitors and the phase currents.
    pub(super) fn run_coupled_bridge(
        &self,
        src: &Emfs,
        x: &[f64],
        dx: &mut [f64],
        want_probe: bool,
    ) -> Probe {
        let n = self.paths.len();
        let k = self.reservoirs.len();
        let mut raw = [0.0; MAX_PATHS];
        let mut source = [0.0; MAX_PATHS];
        for (j, p) in self.paths.iter().enumerate() {
            raw[j] = x[self.path_state(j)];
            source[j] = match p.polarity {
                Polarity::Phase(ph) => p.emf_share * src.ph[ph],
                Polarity::Forward
                | Polarity::Inverted
                | Polarity::Rectified
                | Polarity::OneLegOpen
                | Polarity::SixPulse
                | Polarity::ThreePulse => 0.0,
            };
        }
        let (raw_all, source_all) = (raw, source);
        let raw = &raw_all[..n];
        let source = &source_all[..n];
        // The DC current is what the upper phases carry; the lower ones return it.
        let i_dc: f64 = raw.iter().map(|i| i.max(0.0)).sum();
        let nodes = self.nodes(x, [i_dc, 0.0]);
        let top = nodes.terminal[..k].iter().sum::<f64>();
        // A DC link choke (a choke input) sits between the bridge's + and the capacitor.
        let first = &self.paths[0];
        let dc_ohms = first.series_ohms;
        let dc_h = first.choke.map_or(0.0, |c| c.at(i_dc));
        let relax = self.line_hz * RELAX_PER_PERIOD;
        let mut legs = [Leg::Blocked; MAX_PATHS];
        for j in 0..n {
            legs[j] = if raw[j] > self.path_knees_a[j] {
                Leg::Upper
            } else if raw[j] < -self.path_knees_a[j] {
                Leg::Lower
            } else {
                Leg::Blocked
            };
        }
        // The + rail at the bridge, before the choke's own voltage.
        let plus_v = top + dc_ohms * i_dc;
        // Each phase's diodes' voltage at its current, once: the conducting set's rounds
        // below ask for it again and again (a logarithm each time was a sixth of a drive
        // bus's solve).
        let mut diode_vs = [0.0; MAX_PATHS];
        for (j, p) in self.paths.iter().enumerate() {
            diode_vs[j] =
                self.diode.forward_v(raw[j].abs().max(self.path_knees_a[j])) * p.diodes as f64;
        }
        let diode_v = |j: usize| diode_vs[j];
        // What drives phase j's current given the star point, less its inductance's share.
        let drive = |j: usize, leg: Leg| -> f64 {
            let p = &self.paths[j];
            let resistive = p.ohms * raw[j];
            match leg {
                Leg::Upper => source[j] - resistive - diode_v(j) - plus_v,
                Leg::Lower => source[j] - resistive + diode_v(j),
                Leg::Blocked => 0.0,
            }
        };
        let total: f64 = raw.iter().sum();
        let solve = |legs: &[Leg]| -> Option<Commutation> {
            let (mut g_up, mut a_up, mut g_down, mut a_down, mut blocked) =
                (0.0, 0.0, 0.0, 0.0, 0.0);
            for j in 0..n {
                let g = 1.0 / self.paths[j].leakage_h;
                match legs[j] {
                    Leg::Upper => {
                        g_up += g;
                        a_up += g * drive(j, Leg::Upper);
                    }
                    Leg::Lower => {
                        g_down += g;
                        a_down += g * drive(j, Leg::Lower);
                    }
                    Leg::Blocked => blocked += -raw[j] * relax,
                }
            }
            let shared = 1.0 + g_up * dc_h;
            let g = g_up / shared + g_down;
            if g <= 0.0 || (g_up == 0.0 && g_down == 0.0) {
                return None;
            }
            // The currents' sum is held at zero by letting any sum decay as a blocked path's
            // current does: the exact law would only conserve it, which leaves the period's
            // map a direction it neither restores nor moves (a singular Jacobian for Newton,
            // whose rounding then stepped along it).
            let star_v = -(blocked + a_up / shared + a_down + relax * total) / g;
            Some(Commutation {
                star_v,
                upper_slope: (a_up + g_up * star_v) / shared,
            })
        };
        let knee_drive = |j: usize, c: &Commutation| -> (f64, f64) {
            let knee_v = self.path_knee_drops_v[j] * self.paths[j].diodes as f64;
            let open = source[j] + c.star_v;
            (
                open - plus_v - dc_h * c.upper_slope - knee_v,
                -open - knee_v,
            )
        };
        // The widest pair's drive against the rail and two diodes: what starts conduction
        // when nothing conducts.
        let pair = extremes(source);
        let pair_drive = {
            let knee_v = 2.0 * self.path_knee_drops_v[pair.0];
            Some(source[pair.0] - source[pair.1] - plus_v - knee_v)
        };
        // The conducting set: start from the currents, let a blocked phase whose drive has
        // overcome its diode join, and solve again (three phases settle within three rounds).
        let mut solved = solve(&legs);
        for _ in 0..3 {
            let mut joined = false;
            match solved {
                Some(c) => {
                    for j in 0..n {
                        if legs[j] == Leg::Blocked {
                            let (up, down) = knee_drive(j, &c);
                            if up > 0.0 {
                                legs[j] = Leg::Upper;
                                joined = true;
                            } else if down > 0.0 {
                                legs[j] = Leg::Lower;
                                joined = true;
                            }
                        }
                    }
                }
                None => {
                    if pair_drive.is_some_and(|d| d > 0.0) {
                        legs[pair.0] = Leg::Upper;
                        legs[pair.1] = Leg::Lower;
                        joined = true;
                    }
                }
            }
            if !joined {
                break;
            }
            solved = solve(&legs);
        }
        // No switching functions for the phases: a step that lands on each phase's turn-on
        // and turn-off (as a lone path's do) tripled the steps here, the outgoing and the
        // incoming phase of a commutation each asking for its own step end, and made the
        // period's map less smooth for Newton; the error control finds the corners as well
        // (the ngspice references hold to the same figures either way).
        let mut edges = [f64::NAN; EDGES];
        let mut slopes = [0.0; MAX_PATHS];
        for j in 0..n {
            let p = &self.paths[j];
            slopes[j] = match (legs[j], solved) {
                (Leg::Upper, Some(c)) => {
                    (drive(j, Leg::Upper) + c.star_v - dc_h * c.upper_slope) / p.leakage_h
                }
                (Leg::Lower, Some(c)) => (drive(j, Leg::Lower) + c.star_v) / p.leakage_h,
                (Leg::Upper | Leg::Lower | Leg::Blocked, _) => -raw[j] * relax,
            };
            dx[self.path_state(j)] = slopes[j];
        }
        let choke_slope = solved.map_or(0.0, |c| c.upper_slope);
        for (i, r) in self.reservoirs.iter().enumerate() {
            dx[i] = (if i == 0 { i_dc } else { 0.0 } - nodes.i_out) / r.farads;
        }
        if let Some(s) = self.second {
            dx[k] = (nodes.i_out - nodes.i_load) / s.farads;
            if let Some(choke) = s.choke {
                dx[self.stage_state()] =
                    (top - s.ohms * nodes.i_out - x[k]) / choke.at(nodes.i_out);
            }
        }
        edges[EDGES - 1] = self.load.corner(nodes.v_out);
        if !want_probe {
            return Probe {
                edges,
                ..Probe::default()
            };
        }
        let (hi, lo) = pair;
        // With nothing conducting the DC side floats: taken centred on the widest pair, as a
        // blocked bridge's diodes share the bus.
        let star_v = solved.map_or(0.5 * (plus_v - source[hi] - source[lo]), |c| c.star_v);
        // Phase a's terminal against the - rail, and the + rail at the bridge.
        let a = self
            .paths
            .iter()
            .position(|p| p.polarity == Polarity::Phase(0))
            .unwrap_or(0);
        let b = self
            .paths
            .iter()
            .position(|p| p.polarity == Polarity::Phase(1))
            .unwrap_or(0);
        let terminal = |j: usize| {
            let p = &self.paths[j];
            star_v + source[j] - p.ohms * raw[j] - p.leakage_h * slopes[j]
        };
        let bridge_plus = plus_v + dc_h * choke_slope;
        // Each phase's current and terminal, this from the middle of the bridge's DC side
        // (half its + against its -): a sixth of a cycle on, the phases' roles move on by
        // one, and with every voltage reversed the + and - rails trade places about it.
        let mut phase_i = [0.0; 3];
        let mut phase_v = [0.0; 3];
        for (j, p) in self.paths.iter().enumerate() {
            if let Polarity::Phase(ph) = p.polarity {
                phase_i[ph] = raw[j];
                phase_v[ph] = terminal(j) - 0.5 * bridge_plus;
            }
        }
        let i_cap = i_dc - nodes.i_out;
        let i_out_cap = if self.second.is_some() {
            nodes.i_out - nodes.i_load
        } else {
            i_cap
        };
        Probe {
            v_out: nodes.v_out,
            v_cap: nodes.terminal[0],
            v_secondary: terminal(a) - terminal(b),
            v_source: (source[hi] - source[lo]).max(0.0),
            i_diode: raw[a].max(0.0),
            v_reverse: bridge_plus - terminal(a),
            i_winding: raw[a],
            i_cap,
            i_load: nodes.i_load,
            i_choke: if self.second.is_some() {
                nodes.i_out
            } else {
                i_dc
            },
            i_out_cap,
            phase_i,
            phase_v,
            edges,
        }
    }

    /// The probe of a three-phase rectifier whose phases take the current in turn (a bridge
    /// or a star without inductance, or a star's phases each with their own): phase a's
    /// current and its upper diode, the line-to-line a-b at the terminals, and that diode's
    /// reverse voltage. While a bridge idles its DC side floats; it is taken centred on the
    /// phases' extremes.
    pub(super) fn three_phase_probe(&self, src: &Emfs, flow: &Flow) -> Probe {
        let mut i_phase = [0.0; 3];
        let mut ohms = [0.0; 3];
        let (hi, lo) = self.phase_extremes(&src.ph);
        let mut conducting_diodes = 0.0;
        for (j, p) in self.paths.iter().enumerate() {
            let i = flow.path_i[j];
            match p.polarity {
                Polarity::SixPulse => {
                    i_phase[hi] += i;
                    i_phase[lo] -= i;
                    // Each phase has half the path's resistance.
                    ohms = [0.5 * p.ohms; 3];
                    if i > 0.0 {
                        conducting_diodes = self.diode.forward_v(i);
                    }
                }
                Polarity::ThreePulse => {
                    i_phase[hi] += i;
                    ohms = [p.ohms; 3];
                }
                Polarity::Phase(k) => {
                    i_phase[k] += i;
                    ohms[k] = p.ohms;
                }
                Polarity::Forward
                | Polarity::Inverted
                | Polarity::Rectified
                | Polarity::OneLegOpen => {}
            }
        }
        let share = self.paths[0].emf_share;
        let terminal = |k: usize| share * src.ph[k] - ohms[k] * i_phase[k];
        // The + rail and the middle of the DC side (a bridge's, between its + and its -; a
        // star's return), against the star point: the phases' terminals are given from that
        // middle, about which a bridge's rails trade places a sixth of a cycle on.
        let (plus, middle) = match self.arrangement {
            super::Arrangement::ThreePhaseBridge => {
                if i_phase[hi] > 0.0 {
                    let plus = terminal(hi) - conducting_diodes;
                    (plus, 0.5 * (plus + terminal(lo) + conducting_diodes))
                } else {
                    let middle = 0.5 * share * (src.ph[hi] + src.ph[lo]);
                    (middle + 0.5 * flow.cathode, middle)
                }
            }
            super::Arrangement::ThreePhaseStar
            | super::Arrangement::Direct
            | super::Arrangement::Bridge
            | super::Arrangement::CenterTap
            | super::Arrangement::SplitRail => (flow.cathode, 0.0),
        };
        Probe {
            v_out: flow.v_out,
            v_secondary: terminal(0) - terminal(1),
            v_cap: flow.v_cap,
            v_source: flow.v_source,
            i_diode: i_phase[0].max(0.0),
            v_reverse: plus - terminal(0),
            i_winding: i_phase[0],
            i_cap: flow.i_cap,
            i_load: flow.i_load,
            i_choke: flow.i_choke,
            i_out_cap: flow.i_out_cap,
            phase_i: i_phase,
            phase_v: std::array::from_fn(|k| terminal(k) - middle),
            edges: [f64::NAN; EDGES],
        }
    }

    /// A probe of a balanced three-phase rectifier `k` sub-periods on (see
    /// [`PeriodicCircuit::unfold`](super::PeriodicCircuit::unfold)): a sixth of a cycle on, a
    /// bridge's phase carries what the next carried, reversed (e_a(t + T/6) = -e_b(t), as
    /// `after_period` has it); a third on, a star's carries what the one before it did
    /// (e_a(t + T/3) = e_c(t)). Phase a's own figures follow from its new current and
    /// terminal; the rail and its currents repeat unchanged.
    #[inline]
    pub(super) fn unfold_phases(&self, p: &Probe, k: usize) -> Probe {
        let (shift, sign) = if self.arrangement == super::Arrangement::ThreePhaseBridge {
            (k % 3, if k % 2 == 1 { -1.0 } else { 1.0 })
        } else {
            ((2 * k) % 3, 1.0)
        };
        let turn =
            |q: &[f64; 3]| -> [f64; 3] { std::array::from_fn(|j| sign * q[(j + shift) % 3]) };
        let (i, v) = (turn(&p.phase_i), turn(&p.phase_v));
        Probe {
            i_diode: i[0].max(0.0),
            i_winding: i[0],
            v_secondary: v[0] - v[1],
            // The + rail stands as far above the middle as it did: phase a's upper diode
            // blocks that less its terminal.
            v_reverse: p.v_reverse + p.phase_v[0] - v[0],
            phase_i: i,
            phase_v: v,
            ..*p
        }
    }
}

/// The indices of the largest and the smallest of `v`.
pub(super) fn extremes(v: &[f64]) -> (usize, usize) {
    let mut hi = 0;
    let mut lo = 0;
    for (j, x) in v.iter().enumerate() {
        if *x > v[hi] {
            hi = j;
        }
        if *x < v[lo] {
            lo = j;
        }
    }
    (hi, lo)
}

#[cfg(test)]
mod tests {
    use super::super::PeriodicCircuit;
    use crate::circuit::{Conditions, network, solve};
    use crate::supply::Supply;

    /// A sub-period's probe unfolded by `k` is the probe the circuit gives `k` sub-periods
    /// later from the state the phase sequence makes of it: a balanced set of phases shifted
    /// by a sixth of a cycle is the set reversed and moved on by one (e_a(t + T/6) =
    /// -e_b(t) for the sequence a, b, c, a third of a cycle apart), by a third moved on by one.
    /// Checked at instants off the phases' crossings, from the solved start of each kind of
    /// three-phase network: a bridge with and without its phases' own currents, and a star.
    #[test]
    fn an_unfolded_probe_is_the_probe_a_sub_period_later() {
        let cases = [
            include_str!("../../../tests/reference/three_phase/vfd_400_bus.toml"),
            include_str!("../../../tests/reference/three_phase/vfd_400_bus_reactor.toml"),
            include_str!("../../../tests/reference/three_phase/vfd_400_dc_choke.toml"),
            include_str!("../../../tests/reference/three_phase/star_400_to_50.toml"),
            include_str!("../../../tests/reference/three_phase/star_480_60_leak.toml"),
        ];
        for text in cases {
            let supply = Supply::from_toml_str(text).unwrap();
            let net = network(&supply, &Conditions::default()).unwrap();
            let images = net.images();
            assert!(
                images == 6 || images == 3,
                "{}: {images} images",
                supply.name
            );
            let span = net.period_s();
            assert!((span * images as f64 - net.line_period_s()).abs() < 1e-12);
            let x = solve(&supply, &Conditions::default()).unwrap().steady.start;
            let n = x.len();
            let mut dx = vec![0.0; n];
            for share in [0.1, 0.37, 0.8] {
                let s = share * span;
                let here = net.evaluate(s, &x, &mut dx);
                for k in 1..images {
                    // The state k sub-periods on: `after_period` maps a sub-period's end onto
                    // its start, so it is applied the images' remaining times.
                    let mut y = x.clone();
                    for _ in 0..images - k {
                        net.after_period(&mut y);
                    }
                    let later = net.evaluate(s + k as f64 * span, &y, &mut dx);
                    let unfolded = net.unfold(&here, k);
                    let scale = net.volts_scale();
                    let amps = here.phase_i.iter().fold(1.0f64, |m, i| m.max(i.abs()));
                    let pairs = [
                        ("v_out", unfolded.v_out, later.v_out, scale),
                        ("v_source", unfolded.v_source, later.v_source, scale),
                        (
                            "v_secondary",
                            unfolded.v_secondary,
                            later.v_secondary,
                            scale,
                        ),
                        ("v_reverse", unfolded.v_reverse, later.v_reverse, scale),
                        ("i_diode", unfolded.i_diode, later.i_diode, amps),
                        ("i_winding", unfolded.i_winding, later.i_winding, amps),
                        ("i_cap", unfolded.i_cap, later.i_cap, amps),
                    ];
                    for (what, got, want, size) in pairs {
                        assert!(
                            (got - want).abs() <= 1e-9 * size,
                            "{} at {share} of the sub-period, {k} on: {what} {got}, {want}",
                            supply.name
                        );
                    }
                }
            }
        }
    }
}
