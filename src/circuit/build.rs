//! A supply and its conditions (a tolerance corner, a fault) turned into a network: the
//! charging paths of its topology, its reservoirs and filter, its load.

use super::diode::DiodeLaw;
use super::network::{
    Arrangement, Inductance, LoadLaw, MAX_PATHS, Network, Path, Polarity, Reservoir, SecondStage,
    Swing,
};
use super::waveform::MainsWave;
use crate::supply::{FilterKind, Supply, SupplyError, Topology};

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
    /// Multiplies the transformer's leakage inductance (its spread, or an assumed one).
    pub leakage_factor: f64,
    /// Multiplies a choke's resistance (a warm choke).
    pub choke_factor: f64,
    /// The choke shorted (turns shorted together or bridged): its inductance gone, its
    /// resistance left.
    pub choke_shorted: bool,
    /// The choke open (a broken winding or lead): nothing reaches the capacitor after it, so
    /// the rail falls to zero and the rectifier idles, its winding reading its open-circuit
    /// EMF. Only for a filter with a choke.
    pub choke_open: bool,
    /// Phase c of a three-phase supply lost (a blown fuse, an open line or leg): the other
    /// two feed the rectifier as one phase.
    pub phase_lost: bool,
    /// The line reactor shorted: the line's inductance (`[line]`) gone, the rest kept.
    pub reactor_shorted: bool,
    /// A six-pulse bridge's phase inductance lumped into one path (twice a phase's) instead
    /// of each phase's current a state: the fallback where the phases' own solve does not
    /// settle (the commutation overlap is then not modelled).
    pub lumped_phases: bool,
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
            leakage_factor: 1.0,
            choke_factor: 1.0,
            choke_shorted: false,
            choke_open: false,
            phase_lost: false,
            reactor_shorted: false,
            lumped_phases: false,
        }
    }
}

/// A load in place of the supply's own (amps, ohms or watts).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LoadOverride {
    Amps(f64),
    Ohms(f64),
    /// A constant-power load's watts.
    Watts(f64),
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
    let winding = crate::circuit::winding::WindingModel {
        secondary_ohms: winding.secondary_ohms * winding_factor,
        primary_ohms: winding.primary_ohms * winding_factor,
        ..winding
    };
    let cap_factor = cond.cap_factor * cal.cap_factor;
    // Each path's resistance and the reflected primary's part of it (ohms).
    let reflected = winding.primary_ohms / (ratio * ratio);
    let whole = (winding.secondary_ohms + reflected, reflected);
    let half = 0.5 * winding.secondary_ohms;
    let topology = supply.rectifier.topology;
    // The leakage in each path's share of the winding: a center tap's half has half of it
    // (as its resistance is half), the whole winding the rest.
    let line_h = supply.line_henries() / (ratio * ratio);
    let leakage_h = if cond.reactor_shorted {
        (winding.leakage_h - line_h).max(0.0) * cond.leakage_factor
    } else {
        winding.leakage_h * cond.leakage_factor
    };
    let path = |emf_share: f64, polarity, (ohms, reflected_ohms), diodes, reservoir| Path {
        emf_share,
        polarity,
        ohms,
        reflected_ohms,
        diodes,
        reservoir,
        leakage_h: leakage_h * emf_share.min(1.0),
        choke: None,
        series_ohms: 0.0,
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
                (half + reflected / 4.0, reflected / 4.0),
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
                (half + reflected / 2.0, reflected / 2.0),
                1,
                0,
            )],
            Arrangement::SplitRail,
        ),
        // Three phases: the winding's figures are per phase of a star. Phases with
        // inductance carry their own currents (a bridge's share the current as it moves from
        // one to the next); without, the widest phase or pair takes it at once. A choke
        // input on a star sums its phases' currents, so there the phases' inductance is
        // lumped with the choke's on the one path.
        Topology::ThreePhaseBridge | Topology::ThreePhaseStar => {
            let bridge = topology == Topology::ThreePhaseBridge;
            let own_currents = leakage_h > 0.0
                && supply.filter.kind.has_capacitor()
                && !(bridge && cond.lumped_phases)
                && (bridge || !supply.filter.kind.is_choke_input());
            let live: &[usize] = if cond.phase_lost { &[0, 1] } else { &[0, 1, 2] };
            let arrangement = if bridge {
                Arrangement::ThreePhaseBridge
            } else {
                Arrangement::ThreePhaseStar
            };
            if own_currents {
                let paths = live
                    .iter()
                    .map(|&k| Path {
                        leakage_h,
                        ..path(1.0, Polarity::Phase(k), whole, 1, 0)
                    })
                    .collect();
                (paths, arrangement)
            } else {
                let (polarity, series, diodes) = if bridge {
                    (Polarity::SixPulse, 2.0, 2)
                } else {
                    (Polarity::ThreePulse, 1.0, 1)
                };
                let p = Path {
                    leakage_h: series * leakage_h,
                    ..path(
                        1.0,
                        polarity,
                        (series * whole.0, series * whole.1),
                        diodes,
                        0,
                    )
                };
                (vec![p], arrangement)
            }
        }
    };
    let f = &supply.filter;
    let stated = Reservoir {
        farads: f.uf.unwrap_or(0.0) * 1e-6 * cap_factor,
        esr_ohms: f.esr(),
    };
    // The capacitor a fault concerns is the first the rectifier charges.
    let faulted = Reservoir {
        farads: stated.farads * cond.reservoir_factor,
        esr_ohms: cond.esr_ohms.unwrap_or(f.esr()),
    };
    let choke = choke_of(f);
    let choke_ohms = f.choke_ohms.unwrap_or(0.0) * cond.choke_factor;
    // A shorted choke is a piece of wire: its resistance stays, its inductance goes.
    let choke = choke.filter(|_| !cond.choke_shorted);
    let crc = match (f.kind, f.series_ohms, f.second_uf) {
        (FilterKind::Crc, Some(ohms), Some(uf)) => Some(SecondStage {
            ohms,
            farads: uf * 1e-6 * cap_factor,
            choke: None,
        }),
        (FilterKind::Clc, _, Some(uf)) => Some(SecondStage {
            ohms: choke_ohms,
            farads: uf * 1e-6 * cap_factor,
            choke,
        }),
        (FilterKind::Crc | FilterKind::Clc | FilterKind::None | FilterKind::Capacitor, ..)
        | (FilterKind::Lc, ..) => None,
    };
    let mut paths = paths;
    if f.kind == FilterKind::Lc {
        for p in &mut paths {
            p.choke = choke;
            p.series_ohms = choke_ohms;
        }
    }
    let (reservoirs, second) = match (f.kind, crc) {
        (FilterKind::None, _) => (Vec::new(), None),
        // A CRC whose first capacitor is open: the rectifier charges the second one through
        // the resistor, which is then simply more resistance in every charging path (nothing
        // else hangs on the rectifier's side of it).
        (_, Some(stage)) if cond.capacitor_open => {
            for p in &mut paths {
                p.series_ohms += stage.ohms;
                p.choke = stage.choke;
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
            // The capacitor a fault concerns first, the others as stated.
            let mut reservoirs = vec![faulted];
            reservoirs.resize(topology.reservoirs(), stated);
            (reservoirs, stage)
        }
    };
    // An open choke: the rectifier's side and the rail part. The rail's capacitor discharges
    // into the load and stays at zero; the rectifier charges nothing (a CLC's first capacitor
    // sits at the peak drawing no current, left out: it moves none of the readings), so one
    // path stays, open at its end, for the winding's terminal voltage.
    let (mut paths, reservoirs, second) = if cond.choke_open && f.kind.has_choke() {
        for p in &mut paths {
            p.choke = None;
            p.series_ohms = f64::INFINITY;
        }
        (paths, Vec::new(), None)
    } else {
        (paths, reservoirs, second)
    };
    // A choke input whose capacitor is open is solved as an unfiltered rectifier (its choke
    // in series with the load is not modelled: the path keeps the choke's resistance only);
    // an unfiltered path carries no current state for an inductance.
    if reservoirs.is_empty() {
        for p in &mut paths {
            p.choke = None;
        }
    }
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
        phases: topology.phases(),
        lost_phase: cond.phase_lost && topology.phases() == 3,
        line_hz: supply.mains.hz,
        paths,
        reservoirs,
        second,
        load,
        diode,
        arrangement,
        min_path_ohms,
        path_scales: [1.0; MAX_PATHS],
        path_knees_a: [0.0; MAX_PATHS],
        path_knee_drops_v: [0.0; MAX_PATHS],
    }
    .with_path_figures())
}

/// The load the rail sees: a regulator turns whatever it feeds into a constant current drawn
/// from the rail while it has headroom.
fn load_law(supply: &Supply, cond: &Conditions) -> LoadLaw {
    let (amps, ohms, watts) = match cond.load {
        Some(LoadOverride::Amps(a)) => (Some(a), None, None),
        Some(LoadOverride::Ohms(r)) => (None, Some(r), None),
        Some(LoadOverride::Watts(w)) => (None, None, Some(w)),
        None => (supply.load.amps, supply.load.ohms, supply.load.watts),
    };
    match (&supply.regulator, amps, ohms, watts) {
        (_, None, None, Some(watts)) => LoadLaw::Power {
            watts,
            cutoff_v: power_cutoff_v(supply),
        },
        (Some(reg), a, r, _) => {
            let amps = a.unwrap_or_else(|| reg.output_v / r.unwrap_or(f64::INFINITY));
            LoadLaw::Current {
                amps,
                knee_v: reg.output_v + reg.dropout_v,
            }
        }
        (None, Some(amps), _, _) => LoadLaw::Current {
            amps,
            knee_v: CURRENT_LOAD_KNEE_V,
        },
        (None, None, Some(ohms), _) => LoadLaw::Resistance { ohms },
        (None, None, None, None) => LoadLaw::Current {
            amps: 0.0,
            knee_v: CURRENT_LOAD_KNEE_V,
        },
    }
}

/// A constant-power load's undervoltage stop, volts: the file's `cutoff_v`, or half the
/// rail's ideal peak at nominal mains (a converter built for this rail stops well below it).
pub fn power_cutoff_v(supply: &Supply) -> f64 {
    supply
        .load
        .cutoff_v
        .unwrap_or_else(|| 0.5 * supply.ideal_peak_v())
}

/// The filter's choke as the circuit takes it (henries, and a swing where both swing keys are
/// given), if it states one.
pub fn choke_of(f: &crate::supply::Filter) -> Option<Inductance> {
    f.choke_h.map(|henries| Inductance {
        henries,
        swing: match (f.choke_light_h, f.choke_rated_a) {
            (Some(light_henries), Some(rated_a)) => Some(Swing {
                light_henries,
                rated_a,
            }),
            _ => None,
        },
    })
}
