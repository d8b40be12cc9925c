//! The demo library a first run starts with: the example supplies of an invented scenario
//! (the Larchmere Valley Water Co-op), some with years of visits in which a filter capacitor
//! dries out. Every file says it is demo data in its notes.

/// (file stem, file text) of each demo supply.
pub fn supplies() -> Vec<(&'static str, String)> {
    vec![
        (
            "pump-house-2-relay-rail",
            format!(
                "{}{}",
                include_str!("../../examples/pump-house-relay-rail.toml"),
                PUMP_HOUSE_VISITS
            ),
        ),
        (
            "chlorine-dosing-controller",
            format!(
                "{}{}",
                include_str!("../../examples/dosing-controller.toml"),
                DOSING_VISITS
            ),
        ),
        (
            "tank-telemetry-radio",
            format!(
                "{}{}",
                include_str!("../../examples/telemetry-radio.toml"),
                TELEMETRY_VISITS
            ),
        ),
        (
            "flow-chart-recorder-ht-rail",
            format!(
                "{}{}",
                include_str!("../../examples/chart-recorder-ht.toml"),
                RECORDER_VISITS
            ),
        ),
        (
            "valve-actuator-driver",
            include_str!("../../examples/valve-actuator-split.toml").to_string(),
        ),
        (
            "site-intercom-preamp",
            include_str!("../../examples/intercom-preamp.toml").to_string(),
        ),
        (
            "float-switch-indicator-lamps",
            include_str!("../../examples/float-switch-lamps.toml").to_string(),
        ),
        (
            "members-hall-pa-amplifier-ht",
            format!(
                "{}{}",
                include_str!("../../examples/hall-pa-amplifier-ht.toml"),
                HALL_PA_VISITS
            ),
        ),
        (
            "intake-weir-sluice-solenoid-rail",
            format!(
                "{}{}",
                include_str!("../../examples/sluice-solenoid-rail.toml"),
                SLUICE_VISITS
            ),
        ),
        (
            "pump-house-3-backwash-actuator-rail",
            include_str!("../../examples/backwash-actuator-rail.toml").to_string(),
        ),
        (
            "low-lift-pump-drive-bus",
            format!(
                "{}{}",
                include_str!("../../examples/pump-drive-bus.toml"),
                DRIVE_VISITS
            ),
        ),
        (
            "workshop-bench-converter-front-end",
            include_str!("../../examples/bench-converter-front-end.toml").to_string(),
        ),
        (
            "hall-gramophone-amplifier-ht-rail",
            format!(
                "{}{}",
                include_str!("../../examples/hall-gramophone-amplifier-ht.toml"),
                GRAMOPHONE_VISITS
            ),
        ),
    ]
}

// Invented readings: the drive's bus at commissioning and after a storm tripped one fuse.
const DRIVE_VISITS: &str = r#"
[[visit]]
date = 2025-05-06
technician = "R. Okafor"
mains_vrms = 402.0
dc_v = 536.0
ripple_pp_v = 16.0
ripple_hz = 300.0
notes = "Commissioning, pump at its duty point."

[[visit]]
date = 2026-08-19
technician = "R. Okafor"
mains_vrms = 399.0
dc_v = 513.0
ripple_pp_v = 48.0
ripple_hz = 100.0
notes = "Drive tripping on bus ripple after a storm; L3 fuse found open, replaced."
"#;

// Invented readings: the ripple grows as the 2200 uF can dries out, until it is replaced.
const PUMP_HOUSE_VISITS: &str = r#"
[[visit]]
date = 2021-03-14
technician = "R. Okafor"
mains_vrms = 231.0
dc_v = 28.3
ripple_pp_v = 1.12
load_a = 0.35
notes = "Commissioning check (demo)."

[[visit]]
date = 2023-06-02
technician = "R. Okafor"
mains_vrms = 228.0
dc_v = 27.9
ripple_pp_v = 1.34
load_a = 0.35
notes = "Annual round (demo)."

[[visit]]
date = 2025-09-19
technician = "J. Brandt"
mains_vrms = 226.0
dc_v = 27.4
ripple_pp_v = 1.71
ripple_hz = 100.0
load_a = 0.34
notes = "Relays chatter at pump start (demo)."

[[visit]]
date = 2026-11-30
technician = "J. Brandt"
mains_vrms = 226.0
secondary_vac = 23.6
dc_v = 26.9
ripple_pp_v = 2.2
ripple_hz = 100.0
load_a = 0.34
notes = "Capacitor top domed; replaced (demo)."
replaced = ["C3 2200uF 50V 105C"]
"#;

const DOSING_VISITS: &str = r#"
[[visit]]
date = 2022-01-10
dc_v = 17.4
ripple_pp_v = 1.05
notes = "Demo visit."

[[visit]]
date = 2024-02-21
dc_v = 17.1
ripple_pp_v = 1.38
notes = "Demo visit."

[[visit]]
date = 2026-04-08
dc_v = 16.6
ripple_pp_v = 1.95
notes = "Dosing pump stutters at low line (demo)."
"#;

const TELEMETRY_VISITS: &str = r#"
[[visit]]
date = 2023-05-05
mains_vrms = 233.0
dc_v = 10.8
ripple_rms_v = 0.37
notes = "Demo visit."

[[visit]]
date = 2025-05-12
mains_vrms = 229.0
dc_v = 10.5
ripple_rms_v = 0.52
notes = "Radio drops out on transmit (demo)."
"#;

// Invented readings: the rectifier valve wears, and B+ falls with the ripple's frequency and
// depth as they were (a weak valve, not a capacitor).
const GRAMOPHONE_VISITS: &str = r#"
[[visit]]
date = 2023-04-14
technician = "M. Ferreira"
mains_vrms = 231.0
dc_v = 249.0
ripple_pp_v = 0.18
ripple_hz = 100.0
notes = "Serviced; valves tested good (demo)."

[[visit]]
date = 2026-03-09
technician = "M. Ferreira"
mains_vrms = 230.0
dc_v = 198.0
ripple_pp_v = 0.17
ripple_hz = 100.0
notes = "Quiet and thin at the dance; rectifier valve glows unevenly (demo)."
"#;

const RECORDER_VISITS: &str = r#"
[[visit]]
date = 2020-10-01
dc_v = 303.0
ripple_pp_v = 7.1
notes = "Restored; capacitors reformed (demo)."

[[visit]]
date = 2024-10-03
dc_v = 299.0
ripple_pp_v = 9.4
notes = "Hum on the pen drive (demo)."
"#;

// Invented readings: the first capacitor of the pi filter loses capacitance, and the hum at
// the output grows with it (the output ripple goes as 1 / C1 C2 L).
const HALL_PA_VISITS: &str = r#"
[[visit]]
date = 2022-11-18
technician = "M. Ferreira"
mains_vrms = 232.0
dc_v = 331.0
ripple_pp_v = 0.085
notes = "Restored; capacitors reformed, rectifier valve replaced by silicon (demo)."

[[visit]]
date = 2025-12-06
technician = "M. Ferreira"
mains_vrms = 228.0
dc_v = 325.0
ripple_pp_v = 0.15
ripple_hz = 100.0
notes = "Hum in the hall speakers at the winter concert (demo)."
"#;

// Invented readings: a healthy choke input; the slow gate was its solenoid, not the rail.
const SLUICE_VISITS: &str = r#"
[[visit]]
date = 2024-04-15
technician = "J. Brandt"
mains_vrms = 231.0
dc_v = 25.0
ripple_rms_v = 0.047
load_a = 1.55
notes = "Commissioning check after the gate refit (demo)."

[[visit]]
date = 2026-02-09
technician = "J. Brandt"
mains_vrms = 219.0
dc_v = 23.7
ripple_rms_v = 0.045
load_a = 1.49
notes = "Gate 3 slow to pull at low line; its solenoid's plunger was sticking (demo)."
"#;

#[cfg(test)]
mod tests {
    use super::*;
    use crate::supply::{FilterKind, Supply};

    #[test]
    fn demo_supplies_read_and_say_they_are_demo() {
        let all = supplies();
        assert!(all.len() >= 4);
        let mut topologies = std::collections::BTreeSet::new();
        for (stem, text) in &all {
            let s = Supply::from_toml_str(text).unwrap_or_else(|e| panic!("{stem}: {e}"));
            assert!(s.notes.to_lowercase().contains("demo"), "{stem}");
            topologies.insert(s.rectifier.topology.key());
        }
        assert!(topologies.len() >= 4);
        let with_history = all
            .iter()
            .filter(|(_, t)| Supply::from_toml_str(t).unwrap().visits.len() >= 2)
            .count();
        assert!(with_history >= 4);
        // Issue 12's keys are in the demo: a choke input, a pi filter and a transformer's
        // leakage given by its label or a short-circuit test.
        let parsed: Vec<Supply> = all
            .iter()
            .map(|(_, t)| Supply::from_toml_str(t).unwrap())
            .collect();
        assert!(parsed.iter().any(|s| s.filter.kind == FilterKind::Lc));
        assert!(parsed.iter().any(|s| s.filter.kind == FilterKind::Clc));
        assert!(parsed.iter().any(|s| s.filter.choke_light_h.is_some()));
        assert!(parsed.iter().any(|s| s.transformer.impedance_pct.is_some()));
        assert!(parsed.iter().any(|s| s.transformer.short_test.is_some()));
        // Issue 13's: a three-phase drive bus and a converter straight off the mains.
        assert!(parsed.iter().any(|s| s.mains.phases == 3));
        assert!(
            parsed.iter().any(|s| s.transformer.is_absent()
                && s.load.watts.is_some()
                && s.mains.phases == 1)
        );
    }
}
