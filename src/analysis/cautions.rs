//! The safety cautions a supply calls for: mains hazard, stored energy, discharge time.

use crate::supply::{FilterKind, Supply, Topology};

/// The touch voltage that equipment-safety standards treat as extra-low voltage for DC
/// (60 V, from memory of the usual limit); below it a charged capacitor is taken as safe.
pub const SAFE_TOUCH_V: f64 = 60.0;

/// Energy stored in the filter capacitance at `volts`, joules: C V^2 / 2 (textbook).
pub fn stored_energy_j(supply: &Supply, volts: f64) -> f64 {
    let f = &supply.filter;
    if f.kind == FilterKind::None {
        return 0.0;
    }
    let c = f.uf.unwrap_or(0.0) * 1e-6;
    let c = if supply.rectifier.topology == Topology::Doubler {
        // Two equal capacitors in series across the rail.
        c / 2.0
    } else {
        c
    };
    let second = if f.kind == FilterKind::Crc {
        f.second_uf.unwrap_or(0.0) * 1e-6
    } else {
        0.0
    };
    0.5 * (c + second) * volts * volts
}

/// Seconds for a capacitance of `farads` to fall from `from_v` to `to_v` through `ohms`:
/// tau ln(V0/V), tau = R C (textbook RC discharge).
pub fn discharge_s(farads: f64, ohms: f64, from_v: f64, to_v: f64) -> f64 {
    if from_v <= to_v {
        return 0.0;
    }
    ohms * farads * (from_v / to_v).ln()
}

/// The cautions for `supply` whose rail peaks at `peak_v` volts, in plain words.
pub fn cautions(supply: &Supply, peak_v: f64) -> Vec<String> {
    let mut out = vec![format!(
        "Mains hazard: the primary side runs at {:.0} V and can kill; work on it only isolated \
         and locked out.",
        supply.mains.vrms
    )];
    let energy = stored_energy_j(supply, peak_v);
    if energy > 0.0 {
        let mut line = format!(
            "Stored energy: the filter holds {:.2} J at {:.1} V.",
            energy, peak_v
        );
        if peak_v > SAFE_TOUCH_V {
            line.push_str(&format!(
                " Above {SAFE_TOUCH_V:.0} V DC: discharge through a resistor and check with a meter \
                 before touching."
            ));
        }
        out.push(line);
    }
    if let (Some(r), Some(uf)) = (supply.filter.bleeder_ohms, supply.filter.uf)
        && peak_v > SAFE_TOUCH_V
    {
        let t = discharge_s(uf * 1e-6, r, peak_v, SAFE_TOUCH_V);
        out.push(format!(
            "The {:.0} ohm bleeder takes {:.1} s to bring the rail below {SAFE_TOUCH_V:.0} V.",
            r, t
        ));
    }
    out.push(
        "Verify with a meter before touching; follow local codes and licensed practice.".into(),
    );
    out
}
