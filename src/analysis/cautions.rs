//! The safety cautions a supply calls for: mains hazard, stored energy, discharge time.

use crate::supply::{FilterKind, Supply};

/// The touch voltage that equipment-safety standards treat as extra-low voltage for DC
/// (60 V, from memory of the usual limit); below it a charged capacitor is taken as safe.
pub const SAFE_TOUCH_V: f64 = 60.0;

/// Stored energy above which the rail is treated as a power bus (a drive's, a converter's):
/// the usual "wait and measure" caution follows (tens of joules already give a dangerous
/// shock; from memory of the usual guidance).
pub const BUS_ENERGY_J: f64 = 20.0;

/// The filter capacitance seen across the rail at its highest tolerance, farads: a doubler's
/// two capacitors in series, a CRC's two counted together.
pub fn rail_farads(supply: &Supply) -> f64 {
    let f = &supply.filter;
    if f.kind == FilterKind::None {
        return 0.0;
    }
    let high = 1.0 + f.high_pct / 100.0;
    let c = f.uf.unwrap_or(0.0) * 1e-6 * high;
    // Stacked reservoirs (a doubler's two) are in series across the rail.
    let c = c / supply.rectifier.topology.reservoirs() as f64;
    let second = if f.kind.has_second_stage() {
        f.second_uf.unwrap_or(0.0) * 1e-6 * high
    } else {
        0.0
    };
    c + second
}

/// Energy stored in `farads` at `volts`, joules: C V^2 / 2 (textbook).
pub fn stored_energy_j(farads: f64, volts: f64) -> f64 {
    0.5 * farads * volts * volts
}

/// Seconds for `farads` to fall from `from_v` to `to_v` through `ohms`: tau ln(V0/V),
/// tau = R C (textbook RC discharge).
pub fn discharge_s(farads: f64, ohms: f64, from_v: f64, to_v: f64) -> f64 {
    if from_v <= to_v {
        return 0.0;
    }
    ohms * farads * (from_v / to_v).ln()
}

/// The cautions for `supply` whose rail reaches `peak_v` volts at high line, with `touch_v`
/// the voltage taken as safe to touch (volts).
pub fn cautions(supply: &Supply, peak_v: f64, touch_v: f64) -> Vec<String> {
    let phases = if supply.mains.phases == 3 {
        " three-phase (line to line)"
    } else {
        ""
    };
    let mut out = vec![format!(
        "Mains hazard: the primary side runs at {:.0} V{phases} and can kill; work on it only \
         isolated and locked out.",
        supply.mains.vrms
    )];
    if supply.transformer.is_absent() {
        out.push(
            "Straight off the line: with no transformer the whole DC side sits at mains \
             potential, its negative rail included; a scope's ground clip on it shorts the \
             mains. Use a differential probe or an isolating transformer on the unit, never \
             on the scope's earth."
                .into(),
        );
    }
    let farads = rail_farads(supply);
    if farads > 0.0 {
        let energy = stored_energy_j(farads, peak_v);
        let mut line = format!(
            "Stored energy: the filter holds up to {energy:.2} J at {peak_v:.1} V (high line)."
        );
        if peak_v > touch_v {
            line.push_str(&format!(
                " Above {touch_v:.0} V DC: discharge through a resistor and check with a meter \
                 before touching."
            ));
        }
        out.push(line);
        if peak_v > touch_v {
            out.push(discharge_line(supply, farads, peak_v, touch_v));
        }
        // A drive's or converter's bus: hundreds of joules at hundreds of volts.
        if energy >= BUS_ENERGY_J {
            out.push(format!(
                "DC bus: {energy:.0} J at {peak_v:.0} V is enough to kill. After isolating, \
                 wait the time on the unit's label (often 5-15 min for drives) and then measure \
                 across the bus with a meter rated for it before touching anything; a bus \
                 that does not fall points at failed bleeders or a live input."
            ));
        }
    }
    let f = &supply.filter;
    if f.kind.is_choke_input() {
        out.push(
            "Choke input: below the choke's critical current the rail climbs from the \
             rectified average towards the winding's peak, to the peak at no load; the \
             capacitor voltage check is made there. A bleeder keeps the rail down."
                .into(),
        );
    }
    if f.kind.has_choke() {
        out.push(
            "Choke: a choke carrying current kicks back at a broken connection (an arc, \
             hundreds of volts); switch off before unplugging or lifting a lead."
                .into(),
        );
    }
    if super::valve::warm_up_soar(supply) {
        out.push(format!(
            "Valve warm-up: a directly heated rectifier valve conducts within seconds, before \
             the amplifier's own valves draw current, so the rail first soars towards its \
             no-load peak ({peak_v:.0} V at high line); the capacitor check is made there. \
             A high-tension rail is lethal: discharge it and measure before touching."
        ));
    }
    let leaky = supply.winding().is_ok_and(|w| w.leakage_h > 0.0);
    if leaky || f.kind.is_choke_input() {
        out.push(
            "Diode turn-off: with leakage inductance or a choke input, each diode's turn-off \
             rings through the circuit's small capacitances, and the reverse peak can run \
             above the figure shown (up to 15 % in simulations with no snubbing); keep the \
             usual reverse-voltage margin or fit a snubber."
                .into(),
        );
    }
    out.push(
        "Verify with a meter before touching; follow local codes and licensed practice.".into(),
    );
    out
}

fn discharge_line(supply: &Supply, farads: f64, peak_v: f64, touch_v: f64) -> String {
    if let Some(r) = supply.filter.bleeder_ohms {
        let t = discharge_s(farads, r, peak_v, touch_v);
        return format!(
            "Discharge: the {r:.0} ohm bleeder brings the rail below {touch_v:.0} V in about \
             {t:.1} s after switch-off."
        );
    }
    if let Some(w) = supply.load.watts {
        return format!(
            "Discharge: no bleeder; a {w:.0} W converter stops drawing at its undervoltage \
             cutoff and leaves the capacitor charged there ({:.0} V), for minutes or longer.",
            crate::circuit::power_cutoff_v(supply)
        );
    }
    match (supply.load.ohms, supply.load.amps, &supply.regulator) {
        (Some(r), _, None) => format!(
            "Discharge: no bleeder; the {r:.0} ohm load, if it stays connected, brings the rail \
             below {touch_v:.0} V in about {:.1} s.",
            discharge_s(farads, r, peak_v, touch_v)
        ),
        (_, Some(a), None) if a > 0.0 => format!(
            "Discharge: no bleeder; the {a} A load, if it stays connected and keeps drawing, \
             brings the rail below {touch_v:.0} V in about {:.1} s.",
            farads * (peak_v - touch_v) / a
        ),
        _ => format!(
            "Discharge: no bleeder is given, and the capacitor may hold above {touch_v:.0} V for \
             minutes or days after switch-off."
        ),
    }
}
