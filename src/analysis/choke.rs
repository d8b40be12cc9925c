//! A choke-input filter's critical inductance: below it the choke's current stops in each
//! cycle and the rail climbs from the rectified average towards the peak.

use crate::circuit::network::Inductance;
use crate::supply::{FilterKind, Supply};
use std::f64::consts::{PI, TAU};

/// The lightest load a choke-input rail sees, as a resistance with the bleeder across it
/// (ohms; infinite when nothing is stated to draw current at all), and the current it draws
/// at `rail_v` volts (amps).
pub fn lightest_load_ohms(supply: &Supply, rail_v: f64) -> f64 {
    let l = &supply.load;
    let load_ohms = match (l.max_ohms, l.ohms, l.min_amps, l.amps) {
        (Some(r), ..) => r,
        (None, _, Some(a), _) | (None, None, None, Some(a)) => {
            if a > 0.0 {
                rail_v / a
            } else {
                f64::INFINITY
            }
        }
        (None, Some(r), None, _) => r,
        (None, None, None, None) => f64::INFINITY,
    };
    match supply.filter.bleeder_ohms {
        Some(b) if load_ohms.is_finite() => load_ohms * b / (load_ohms + b),
        Some(b) => b,
        None => load_ohms,
    }
}

/// The critical inductance for a load of `ohms` on a rectifier of `pulses` pulses a cycle at
/// `hz`, henries. The choke's current stays above zero while the ripple's first harmonic of
/// current, its amplitude over the choke's reactance, does not exceed the DC (the textbook
/// derivation, from the Fourier series of the rectified sine): full wave, the 2w term of
/// 4 Vm / (3 pi) against Vm 2 / (pi R) gives L = R / (3 w); half wave, the w term of Vm / 2
/// against Vm / (pi R) gives L = pi R / (2 w).
pub fn critical_henries(ohms: f64, hz: f64, pulses: u32) -> f64 {
    let omega = TAU * hz;
    if pulses >= 2 {
        ohms / (3.0 * omega)
    } else {
        PI * ohms / (2.0 * omega)
    }
}

/// The choke as the circuit takes it, if the filter has one.
pub fn inductance(supply: &Supply) -> Option<Inductance> {
    crate::circuit::choke_of(&supply.filter)
}

/// What the critical-inductance check compares: the choke's inductance at the lightest
/// load's current (a swinging choke's rises there) and the critical inductance of that load
/// (henries), with the lightest load's resistance (ohms). None without a choke input.
pub struct Critical {
    pub henries: f64,
    pub critical_henries: f64,
    pub lightest_ohms: f64,
}

/// The critical-inductance comparison of a choke-input filter at the rail `rail_v` (volts).
pub fn critical(supply: &Supply, rail_v: f64) -> Option<Critical> {
    if !supply.filter.kind.is_choke_input() {
        return None;
    }
    let choke = inductance(supply)?;
    let ohms = lightest_load_ohms(supply, rail_v);
    let amps = if ohms.is_finite() { rail_v / ohms } else { 0.0 };
    Some(Critical {
        henries: choke.at(amps),
        critical_henries: critical_henries(
            ohms,
            supply.mains.hz,
            supply.rectifier.topology.pulses_per_cycle(),
        ),
        lightest_ohms: ohms,
    })
}

/// A first guess at a choke for `supply`'s filter (henries, ohms): for a choke input, twice
/// the critical inductance at the lightest load with the bleeder (what `choke-critical`
/// compares against, so a guess never starts with a warning; the stated load when nothing
/// lighter is stated); for a CLC, a reactance at twice the line frequency of ten times the
/// load's resistance; its copper about 2 % of the load's resistance. Rounded to two figures;
/// the form marks both as guesses.
pub fn choke_guess(supply: &Supply) -> (f64, f64) {
    let secondary = supply
        .winding()
        .map(|w| supply.mains.vrms / w.ratio)
        .unwrap_or(supply.mains.vrms);
    let t = supply.rectifier.topology;
    // The choke input's rail: the rectified average, 0.9 of the RMS it sees.
    let rail = (0.9 * secondary * t.peak_share()).max(1.0);
    let l = &supply.load;
    let ohms = match (l.ohms, l.amps) {
        (Some(r), _) => r,
        (None, Some(a)) if a > 0.0 => rail / a,
        _ => 1000.0,
    };
    let henries = match supply.filter.kind {
        FilterKind::Clc => 10.0 * ohms / (2.0 * TAU * supply.mains.hz),
        FilterKind::Lc | FilterKind::None | FilterKind::Capacitor | FilterKind::Crc => {
            let lightest = lightest_load_ohms(supply, rail);
            let ohms = if lightest.is_finite() { lightest } else { ohms };
            2.0 * critical_henries(ohms, supply.mains.hz, t.pulses_per_cycle())
        }
    };
    (two_figures(henries), two_figures(0.02 * ohms))
}

fn two_figures(v: f64) -> f64 {
    if v <= 0.0 || !v.is_finite() {
        return v;
    }
    let scale = 10f64.powf(v.log10().floor() - 1.0);
    (v / scale).round() * scale
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The textbook's critical inductance (full wave, L = R / (3 w)): 47 ohm at 50 Hz is
    /// 49.9 mH; and the half-wave's pi R / (2 w) is 4.71 times it (arithmetic).
    #[test]
    fn critical_inductance_follows_the_textbook_relation() {
        let full = critical_henries(47.0, 50.0, 2);
        assert!((full - 47.0 / (3.0 * TAU * 50.0)).abs() < 1e-12);
        assert!((full - 0.04987).abs() < 1e-5, "{full}");
        let half = critical_henries(47.0, 50.0, 1);
        assert!((half / full - 1.5 * PI).abs() < 1e-12);
    }

    /// The form's guess for a choke input clears the critical inductance the check compares
    /// it with (the lightest load and the bleeder), so a switch to `lc` does not greet the
    /// technician with a warning of its own making: the pump-house relay rail (0.35 A, down
    /// to 0.05 A, a 4.7 kohm bleeder) needs about 0.54 H at its lightest, not the 0.07 H of
    /// its stated load.
    #[test]
    fn the_guess_for_a_choke_input_clears_the_critical_at_the_lightest_load() {
        let mut s =
            Supply::from_toml_str(include_str!("../../examples/pump-house-relay-rail.toml"))
                .unwrap();
        s.filter.kind = FilterKind::Lc;
        let (henries, ohms) = choke_guess(&s);
        s.filter.choke_h = Some(henries);
        s.filter.choke_ohms = Some(ohms);
        s.validate().unwrap();
        let (op, _) = crate::circuit::solve_nominal(&s).unwrap();
        let c = critical(&s, op.figures.dc_v).unwrap();
        assert!(
            c.henries > 1.5 * c.critical_henries,
            "guess {henries} H against the critical {} H at {} ohm",
            c.critical_henries,
            c.lightest_ohms
        );
    }

    #[test]
    fn two_figures_rounds_as_a_parts_list_would() {
        assert_eq!(two_figures(0.04987), 0.05);
        assert_eq!(two_figures(12.34), 12.0);
        assert_eq!(two_figures(0.0), 0.0);
    }
}
