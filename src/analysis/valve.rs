//! Rectifier valves: the data-sheet limits a supply's valve is held to, the plate supply
//! impedance its winding presents, the warm-up soar of a directly heated one, and the same
//! supply with silicon junctions in its place (the solid-state replacement a restorer is
//! asked about).

use crate::circuit::diode::{self, ValveLimits};
use crate::circuit::{self, CircuitError, Conditions, Figures, LoadOverride};
use crate::supply::{DiodeSpec, Supply, Topology};
use serde::Serialize;

/// The limits the valve is held to: the file's `[rectifier]` figures where stated, else its
/// preset's (typical of the class); None when the rectifier is no valve. A valve of the file's
/// own law whose filament the file does not describe is taken as directly heated: the rail's
/// warm-up soar is then checked rather than assumed away.
pub fn limits(supply: &Supply) -> Option<ValveLimits> {
    if !supply.has_valve_rectifier() {
        return None;
    }
    let class = match &supply.rectifier.diode {
        DiodeSpec::Preset(name) => diode::preset(name).and_then(|p| p.valve),
        DiodeSpec::Fixed { .. } | DiodeSpec::Junction { .. } | DiodeSpec::Valve { .. } => None,
    };
    let mut out = class.unwrap_or(ValveLimits {
        directly_heated: true,
        ..ValveLimits::default()
    });
    let r = &supply.rectifier;
    if let Some(uf) = r.max_first_uf {
        out.max_first_uf = Some(uf);
    }
    if let Some(ohms) = r.min_plate_ohms {
        // A stated minimum holds at any plate voltage.
        out.min_plate_ohms = Some([(0.0, ohms), (1.0, ohms)]);
    }
    if let Some(a) = r.rated_peak_a {
        out.peak_a = Some(a);
    }
    if let Some(v) = r.rated_piv_v {
        out.piv_v = Some(v);
    }
    if let Some(a) = r.rated_dc_a {
        out.dc_a = Some(a);
    }
    if let Some(direct) = r.directly_heated {
        out.directly_heated = direct;
    }
    Some(out)
}

/// Whether the rail soars towards its no-load peak at switch-on: a directly heated valve
/// conducts within seconds, before the amplifier's own valves draw current.
pub fn warm_up_soar(supply: &Supply) -> bool {
    limits(supply).is_some_and(|l| l.directly_heated)
}

/// The plate supply impedance per plate, ohms: the winding resistance one plate's current
/// flows through, the primary's reflected into it, and the leakage reactance at the mains
/// frequency where the file gives leakage (added, as data sheets add them). None when the
/// supply cannot be built.
pub fn plate_supply_ohms(supply: &Supply) -> Option<f64> {
    let net = circuit::network(supply, &Conditions::default()).ok()?;
    let p = net.paths.first()?;
    let omega = std::f64::consts::TAU * supply.mains.hz;
    Some(p.ohms + omega * p.leakage_h)
}

/// The RMS voltage one plate sees from its winding, volts: half the secondary of a center
/// tap, the whole of any other.
pub fn plate_vrms(supply: &Supply) -> Option<f64> {
    let winding = supply.winding().ok()?;
    let whole = supply.mains.vrms / winding.ratio;
    Some(match supply.rectifier.topology {
        Topology::CenterTap | Topology::SplitRail => 0.5 * whole,
        Topology::HalfWave
        | Topology::Bridge
        | Topology::Doubler
        | Topology::ThreePhaseBridge
        | Topology::ThreePhaseStar => whole,
    })
}

/// The same supply with silicon junctions (the silicon preset) in place of its valve: what a
/// solid-state replacement does to the rail and the peak currents. The valve's limits are
/// dropped with it; the PIV and current ratings stay as stated.
pub fn solid_state(supply: &Supply) -> Supply {
    let mut out = supply.clone();
    out.rectifier.diode = DiodeSpec::Preset("silicon".into());
    out.rectifier.max_first_uf = None;
    out.rectifier.min_plate_ohms = None;
    out.rectifier.directly_heated = None;
    out
}

/// What a solid-state replacement does: the valve's nominal figures beside the same supply's
/// with silicon junctions (volts, amps).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SolidState {
    pub valve_dc_v: f64,
    pub silicon_dc_v: f64,
    /// One plate's (one diode's) peak current.
    pub valve_peak_a: f64,
    pub silicon_peak_a: f64,
    /// The first capacitor's RMS ripple current.
    pub valve_cap_ripple_a: f64,
    pub silicon_cap_ripple_a: f64,
    /// The rail with silicon at switch-on, before the amplifier's valves draw current: no
    /// load, nominal mains (a silicon rectifier conducts at once).
    pub silicon_no_load_v: f64,
}

/// Solves the supply with silicon junctions in place of its valve (see [`solid_state`]) at
/// nominal, and at no load for the switch-on soar; `valve` is the valve's own nominal.
pub fn solid_state_what_if(supply: &Supply, valve: &Figures) -> Result<SolidState, CircuitError> {
    let silicon = solid_state(supply);
    let loaded = circuit::solve(&silicon, &Conditions::default())?.figures;
    let idle = circuit::solve(
        &silicon,
        &Conditions {
            load: Some(LoadOverride::Amps(0.0)),
            ..Conditions::default()
        },
    )?
    .figures;
    Ok(SolidState {
        valve_dc_v: valve.dc_v,
        silicon_dc_v: loaded.dc_v,
        valve_peak_a: valve.diode_peak_a,
        silicon_peak_a: loaded.diode_peak_a,
        valve_cap_ripple_a: valve.cap_ripple_rms_a,
        silicon_cap_ripple_a: loaded.cap_ripple_rms_a,
        silicon_no_load_v: idle.max_v,
    })
}

impl SolidState {
    /// The what-if in a technician's words, one line each.
    pub fn lines(&self) -> Vec<String> {
        vec![
            format!(
                "B+ {:.1} V -> {:.1} V with silicon ({:+.1} V): the valve's drop is gone",
                self.valve_dc_v,
                self.silicon_dc_v,
                self.silicon_dc_v - self.valve_dc_v
            ),
            format!(
                "peak current a plate {:.3} A -> {:.3} A a diode ({:.1} times): the winding \
                 and the first capacitor take the harder pulses",
                self.valve_peak_a,
                self.silicon_peak_a,
                self.silicon_peak_a / self.valve_peak_a.max(1e-12)
            ),
            format!(
                "first capacitor ripple current {:.3} A -> {:.3} A RMS",
                self.valve_cap_ripple_a, self.silicon_cap_ripple_a
            ),
            format!(
                "at switch-on the rail reaches {:.0} V at once (no load until the amplifier's \
                 valves warm): the capacitors and the valves' plates see it; a series resistor \
                 or a slow-start restores the valve's drop and delay",
                self.silicon_no_load_v
            ),
        ]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn valve_supply(diode: &str, extra: &str) -> Supply {
        let text = format!(
            "format = 1\nname = \"t\"\n[mains]\nvrms = 230.0\nhz = 50.0\n[transformer]\n\
             ratio = 0.328571\nsecondary_ohms = 300\nprimary_ohms = 12\n[rectifier]\n\
             topology = \"center-tap\"\ndiode = {diode}\n{extra}\n[filter]\nkind = \
             \"capacitor\"\nuf = 40.0\n[load]\namps = 0.1\n"
        );
        Supply::from_toml_str(&text).unwrap_or_else(|e| panic!("{e}\n{text}"))
    }

    #[test]
    fn a_preset_gives_its_class_limits_and_the_file_overrides_them() {
        let s = valve_supply("\"valve-high-drop\"", "");
        let l = limits(&s).unwrap();
        assert_eq!(l.max_first_uf, Some(20.0));
        assert!(l.directly_heated);
        let s = valve_supply(
            "\"valve-high-drop\"",
            "max_first_uf = 32.0\ndirectly_heated = false",
        );
        let l = limits(&s).unwrap();
        assert_eq!(l.max_first_uf, Some(32.0));
        assert!(!l.directly_heated);
        assert!(limits(&valve_supply("\"silicon\"", "")).is_none());
    }

    #[test]
    fn a_center_tap_plate_sees_half_the_winding_and_the_primary_through_twice_the_ratio() {
        // Hand arithmetic: 300 ohm whole secondary, half 150; 12 ohm primary reflected through
        // 2 x 0.328571 is 12 / 0.43184 = 27.79 ohm.
        let s = valve_supply("\"valve-low-drop\"", "");
        let r = plate_supply_ohms(&s).unwrap();
        let want = 150.0 + 12.0 / (2.0f64 * 0.328571).powi(2);
        assert!((r - want).abs() < 1e-9 * want, "{r} vs {want}");
        let v = plate_vrms(&s).unwrap();
        assert!((v - 0.5 * 230.0 / 0.328571).abs() < 1e-9, "{v}");
    }
}
