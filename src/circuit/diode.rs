//! Rectifier diode laws, and the current through a string of diodes in series with a resistance.

use crate::supply::{
    DIODE_OHMS, DROP_V, DiodeSpec, EMISSION_N, IS_A, RS_OHMS, SupplyError, VALVE_AT_A, VALVE_DROP_V,
};

/// Boltzmann constant over the electron charge, volts per kelvin.
const K_OVER_Q: f64 = 8.617_333_262e-5;

/// A diode's forward law.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DiodeLaw {
    /// A fixed drop plus a resistance: the textbook "0.7 V" model when `ohms` is 0.
    Fixed { drop_v: f64, ohms: f64 },
    /// Shockley diode equation with emission coefficient and series resistance:
    /// i = is (exp(v_j / (n vt)) - 1), v = v_j + i rs.
    Junction { is_a: f64, n_vt: f64, rs_ohms: f64 },
    /// A rectifier valve's plate: the three-halves-power law of space-charge-limited
    /// emission (Child-Langmuir), i = perveance v^1.5 for v > 0 and nothing below,
    /// `perveance` in amps per volt^1.5.
    Valve { perveance: f64 },
}

impl DiodeLaw {
    /// Builds the law from validated parameters; the thermal voltage is kT/q at `temp_c`.
    pub fn from_params(p: DiodeParams) -> DiodeLaw {
        match p {
            DiodeParams::Fixed { drop_v, ohms } => DiodeLaw::Fixed { drop_v, ohms },
            DiodeParams::Junction {
                is_a,
                n,
                rs_ohms,
                temp_c,
            } => DiodeLaw::Junction {
                is_a,
                n_vt: n * K_OVER_Q * (temp_c + 273.15),
                rs_ohms,
            },
            DiodeParams::Valve { drop_v, at_a } => DiodeLaw::Valve {
                perveance: valve_perveance(drop_v, at_a),
            },
        }
    }

    /// The same law with every forward drop scaled by `factor` (diode spread in the worst case;
    /// a valve's emission spread and ageing: at the same current a weak valve drops more).
    pub fn with_drop_scaled(self, factor: f64) -> DiodeLaw {
        match self {
            DiodeLaw::Fixed { drop_v, ohms } => DiodeLaw::Fixed {
                drop_v: drop_v * factor,
                ohms: ohms * factor,
            },
            DiodeLaw::Junction {
                is_a,
                n_vt,
                rs_ohms,
            } => DiodeLaw::Junction {
                is_a,
                n_vt: n_vt * factor,
                rs_ohms: rs_ohms * factor,
            },
            // v = (i / G)^(2/3): scaling v by k at every i divides G by k^1.5.
            DiodeLaw::Valve { perveance } => DiodeLaw::Valve {
                perveance: perveance / factor.powf(1.5),
            },
        }
    }

    /// Whether the law is a rectifier valve's.
    pub fn is_valve(&self) -> bool {
        matches!(self, DiodeLaw::Valve { .. })
    }

    /// Forward voltage of one diode at `amps`, volts.
    pub fn forward_v(&self, amps: f64) -> f64 {
        match *self {
            DiodeLaw::Fixed { drop_v, ohms } => drop_v + amps * ohms,
            DiodeLaw::Junction {
                is_a,
                n_vt,
                rs_ohms,
            } => n_vt * (amps / is_a).ln_1p() + amps * rs_ohms,
            DiodeLaw::Valve { perveance } => (amps.max(0.0) / perveance).powf(2.0 / 3.0),
        }
    }

    /// Voltage across `diodes` in series with `ohms` at `amps` (volts).
    pub fn string_v(&self, amps: f64, ohms: f64, diodes: u32) -> f64 {
        amps * ohms + diodes as f64 * self.forward_v(amps)
    }

    /// Current through `diodes` in series with `ohms` when `volts` is across the string (amps).
    /// Below conduction it returns the (negligible) reverse current, never a NaN.
    pub fn string_current(&self, volts: f64, ohms: f64, diodes: u32) -> f64 {
        let m = diodes as f64;
        match *self {
            DiodeLaw::Fixed { drop_v, ohms: rd } => {
                let r = ohms + m * rd;
                let over = volts - m * drop_v;
                if over <= 0.0 {
                    0.0
                } else if r > 0.0 {
                    over / r
                } else {
                    // An ideal string with no resistance is a constraint, not a law; the
                    // circuit always adds a small resistance before asking, so this is a guard.
                    f64::MAX.sqrt()
                }
            }
            DiodeLaw::Junction {
                is_a,
                n_vt,
                rs_ohms,
            } => {
                let a = m * n_vt;
                let r = ohms + m * rs_ohms;
                if volts <= 0.0 || r <= 0.0 {
                    let x = (volts / a).min(60.0);
                    return is_a * x.exp_m1();
                }
                // volts = i r + a ln(1 + i/is). With y = i + is and z = r y / a this is
                // z + ln z = w, solved by the Wright omega function (Newton from a close start).
                let w = (volts + r * is_a) / a + (r * is_a / a).ln();
                let z = wright_omega(w);
                (a * z / r - is_a).max(0.0)
            }
            DiodeLaw::Valve { perveance } => {
                if volts <= 0.0 {
                    return 0.0;
                }
                // With u = (i / G)^(1/3): volts = r G u^3 + m u^2, increasing and convex for
                // u > 0, so Newton from above (the smaller of the two terms' own roots, each
                // at or above the root) falls onto it without overshooting.
                let a = ohms.max(0.0) * perveance;
                let mut u = (volts / m).sqrt();
                if a > 0.0 {
                    u = u.min((volts / a).cbrt());
                }
                for _ in 0..60 {
                    let f = a * u * u * u + m * u * u - volts;
                    let slope = 3.0 * a * u * u + 2.0 * m * u;
                    if slope <= 0.0 {
                        break;
                    }
                    let next = u - f / slope;
                    let settled = (u - next).abs() <= 1e-15 * u;
                    u = next.max(0.0);
                    if settled {
                        break;
                    }
                }
                perveance * u * u * u
            }
        }
    }
}

/// A valve plate's perveance (amps per volt^1.5) from one point of its data sheet: `drop_v`
/// volts at `at_a` amps.
pub fn valve_perveance(drop_v: f64, at_a: f64) -> f64 {
    at_a / drop_v.powf(1.5)
}

/// Solves z + ln z = w for z > 0 (the Wright omega function).
///
/// Start from the asymptotic series (large w) or from e^w (small w), then the iteration of
/// Fritsch, Shafer and Crowley (Comm. ACM 16, 1973), which is fourth order: two steps reach
/// machine precision from either start, with one logarithm each.
fn wright_omega(w: f64) -> f64 {
    let mut z = if w > 2.0 {
        let lw = w.ln();
        w - lw + lw / w
    } else if w > -1.0 {
        // Near z = 1 a Pade-like blend of the two ends keeps the first step small.
        let ew = w.exp();
        ew / (1.0 + ew).powf(0.5) * 1.1
    } else {
        w.exp()
    };
    for _ in 0..6 {
        let r = w - z - z.ln();
        if r.abs() <= 1e-15 * (1.0 + w.abs()) {
            break;
        }
        let q = 2.0 * (1.0 + z) * (1.0 + z + 2.0 * r / 3.0);
        z *= 1.0 + (r / (1.0 + z)) * (q - r) / (q - 2.0 * r);
        if z <= 0.0 {
            // Never reached from these starts; a guard keeps the logarithm defined.
            z = f64::MIN_POSITIVE;
        }
    }
    z
}

#[cfg(test)]
mod tests {
    use super::*;

    fn silicon() -> DiodeLaw {
        DiodeLaw::from_params(DiodeParams::Junction {
            is_a: 7e-9,
            n: 1.8,
            rs_ohms: 0.034,
            temp_c: 27.0,
        })
    }

    #[test]
    fn string_current_inverts_string_voltage() {
        let d = silicon();
        for &amps in &[1e-9, 1e-6, 1e-3, 0.1, 1.0, 10.0, 300.0] {
            for &ohms in &[1e-6, 0.1, 1.8, 680.0] {
                for diodes in [1, 2] {
                    let v = d.string_v(amps, ohms, diodes);
                    let back = d.string_current(v, ohms, diodes);
                    assert!(
                        (back - amps).abs() <= 1e-9 * amps + 1e-15,
                        "{amps} A, {ohms} ohm, {diodes}: got {back}"
                    );
                }
            }
        }
    }

    #[test]
    fn silicon_preset_drops_near_0_9_v_at_one_amp() {
        // Domain notes (practice): 0.8-1.1 V at rated current for a silicon rectifier.
        let v = silicon().forward_v(1.0);
        assert!((0.8..1.1).contains(&v), "{v}");
    }

    #[test]
    fn no_current_below_the_knee_of_a_fixed_drop() {
        let d = DiodeLaw::Fixed {
            drop_v: 0.7,
            ohms: 0.0,
        };
        assert_eq!(d.string_current(1.3, 1.0, 2), 0.0);
        assert!((d.string_current(2.4, 1.0, 2) - 1.0).abs() < 1e-12);
    }
}

/// A diode as the circuit model takes it (volts, amps, ohms, degC).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DiodeParams {
    Fixed {
        drop_v: f64,
        ohms: f64,
    },
    Junction {
        is_a: f64,
        n: f64,
        rs_ohms: f64,
        temp_c: f64,
    },
    /// A rectifier valve's plate through its data-sheet point: `drop_v` volts at `at_a` amps.
    Valve {
        drop_v: f64,
        at_a: f64,
    },
}

/// A named diode the file can give as `diode = "NAME"`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Preset {
    pub name: &'static str,
    /// The law at 27 degC (a junction's temperature is the file's `temp_c`).
    pub law: DiodeParams,
    /// The drop the paper estimate takes for it, volts (the textbook's round figure).
    pub paper_drop_v: f64,
    /// A rectifier valve's data-sheet limits, typical of its class; None for a junction.
    pub valve: Option<ValveLimits>,
}

/// What a rectifier valve's data sheet limits, per valve (both plates of a full-wave one).
/// Each is None where the file states none and no preset gives one.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct ValveLimits {
    /// The largest first (reservoir) capacitance, microfarads.
    pub max_first_uf: Option<f64>,
    /// The least plate supply impedance per plate, ohms, at two RMS plate voltages (volts,
    /// ohms), drawn straight between them and held beyond: data sheets ask more of the winding
    /// the higher its voltage.
    pub min_plate_ohms: Option<[(f64, f64); 2]>,
    /// The peak current of one plate, amps.
    pub peak_a: Option<f64>,
    /// The peak inverse voltage, volts.
    pub piv_v: Option<f64>,
    /// The DC output current, amps.
    pub dc_a: Option<f64>,
    /// A directly heated filament: the valve conducts within seconds, before the amplifier's
    /// own valves draw current, so the rail first soars to its no-load peak.
    pub directly_heated: bool,
}

impl ValveLimits {
    /// The least plate supply impedance per plate at `plate_vrms` volts RMS, ohms.
    pub fn min_plate_ohms_at(&self, plate_vrms: f64) -> Option<f64> {
        let [(v0, r0), (v1, r1)] = self.min_plate_ohms?;
        let s = ((plate_vrms - v0) / (v1 - v0)).clamp(0.0, 1.0);
        Some(r0 + (r1 - r0) * s)
    }
}

/// Every preset, in the order the form offers them. One table: the law, the name the file
/// uses, the paper estimate's drop and a valve's limits.
///
/// The three valve classes stand for the usual range of full-wave rectifier valves. Their
/// drop points are the typical published figures of each class (common practice: about 60 V
/// at 125 mA, 45 V at 225 mA, 17 V at 250 mA per plate); their limits are typical published
/// values of the class from memory, rounded, not any one maker's sheet: a technician with the
/// valve's own sheet states its figures in `[rectifier]`, which take precedence.
pub const PRESETS: [Preset; 7] = [
    // Junction parameters near a generic 1 A silicon rectifier's simulator model (domain
    // notes, memory): 0.9 V at 1 A.
    Preset {
        name: "silicon",
        law: DiodeParams::Junction {
            is_a: 7.0e-9,
            n: 1.8,
            rs_ohms: 0.034,
            temp_c: 27.0,
        },
        paper_drop_v: 0.7,
        valve: None,
    },
    // Fast-recovery silicon: about 1.0 V at 1 A (our own round figures).
    Preset {
        name: "fast",
        law: DiodeParams::Junction {
            is_a: 1.0e-8,
            n: 2.0,
            rs_ohms: 0.06,
            temp_c: 27.0,
        },
        paper_drop_v: 0.7,
        valve: None,
    },
    // Schottky: about 0.37 V at 1 A, inside the 0.3-0.6 V of practice.
    Preset {
        name: "schottky",
        law: DiodeParams::Junction {
            is_a: 1.0e-5,
            n: 1.05,
            rs_ohms: 0.05,
            temp_c: 27.0,
        },
        paper_drop_v: 0.4,
        valve: None,
    },
    Preset {
        name: "ideal",
        law: DiodeParams::Fixed {
            drop_v: 0.0,
            ohms: 0.0,
        },
        paper_drop_v: 0.0,
        valve: None,
    },
    // A high-drop, directly heated valve of modest current (the small receiver and
    // practice-amplifier class).
    Preset {
        name: "valve-high-drop",
        law: DiodeParams::Valve {
            drop_v: 60.0,
            at_a: 0.125,
        },
        paper_drop_v: 60.0,
        valve: Some(ValveLimits {
            max_first_uf: Some(20.0),
            min_plate_ohms: Some([(350.0, 50.0), (500.0, 140.0)]),
            peak_a: Some(0.44),
            piv_v: Some(1400.0),
            dc_a: Some(0.125),
            directly_heated: true,
        }),
    },
    // A medium-drop, directly heated valve for larger amplifiers.
    Preset {
        name: "valve-medium-drop",
        law: DiodeParams::Valve {
            drop_v: 45.0,
            at_a: 0.225,
        },
        paper_drop_v: 45.0,
        valve: Some(ValveLimits {
            max_first_uf: Some(40.0),
            min_plate_ohms: Some([(300.0, 21.0), (450.0, 67.0)]),
            peak_a: Some(1.0),
            piv_v: Some(1550.0),
            dc_a: Some(0.275),
            directly_heated: true,
        }),
    },
    // A low-drop, indirectly heated valve (close spaced, slow to warm, like the amplifier's
    // own valves).
    Preset {
        name: "valve-low-drop",
        law: DiodeParams::Valve {
            drop_v: 17.0,
            at_a: 0.25,
        },
        paper_drop_v: 17.0,
        valve: Some(ValveLimits {
            max_first_uf: Some(60.0),
            min_plate_ohms: Some([(300.0, 75.0), (450.0, 150.0)]),
            peak_a: Some(0.75),
            piv_v: Some(1500.0),
            dc_a: Some(0.25),
            directly_heated: false,
        }),
    },
];

/// The preset called `name`.
pub fn preset(name: &str) -> Option<&'static Preset> {
    PRESETS.iter().find(|p| p.name == name)
}

impl crate::supply::Supply {
    /// Whether the rectifier is a valve (a valve preset or the file's own valve law): the
    /// report, the screen, the worst case and the diagnosis treat its figures and faults as a
    /// valve's. False when the diode cannot be resolved.
    pub fn has_valve_rectifier(&self) -> bool {
        matches!(self.rectifier_diode(), Ok(DiodeParams::Valve { .. }))
    }

    /// The diode law parameters after presets are resolved.
    pub fn rectifier_diode(&self) -> Result<DiodeParams, SupplyError> {
        let temp_c = self.rectifier.temp_c.unwrap_or(27.0);
        let params = match &self.rectifier.diode {
            DiodeSpec::Preset(name) => match preset(name).map(|p| p.law) {
                Some(DiodeParams::Junction {
                    is_a, n, rs_ohms, ..
                }) => DiodeParams::Junction {
                    is_a,
                    n,
                    rs_ohms,
                    temp_c,
                },
                Some(other @ (DiodeParams::Fixed { .. } | DiodeParams::Valve { .. })) => other,
                None => {
                    let names: Vec<&str> = PRESETS.iter().map(|p| p.name).collect();
                    return Err(SupplyError::out_of_range(
                        "rectifier.diode",
                        format!("{name:?}"),
                        format!(
                            "{}, or a table {{ drop_v, ohms }}, {{ is_a, n, rs_ohms }} or \
                             {{ law = \"valve\", drop_v, at_a }}",
                            names.join(", ")
                        ),
                    ));
                }
            },
            DiodeSpec::Fixed { drop_v, ohms } => {
                DROP_V.check(*drop_v)?;
                DIODE_OHMS.check(*ohms)?;
                DiodeParams::Fixed {
                    drop_v: *drop_v,
                    ohms: *ohms,
                }
            }
            DiodeSpec::Valve { drop_v, at_a, .. } => {
                VALVE_DROP_V.check(*drop_v)?;
                VALVE_AT_A.check(*at_a)?;
                DiodeParams::Valve {
                    drop_v: *drop_v,
                    at_a: *at_a,
                }
            }
            DiodeSpec::Junction { is_a, n, rs_ohms } => {
                IS_A.check(*is_a)?;
                EMISSION_N.check(*n)?;
                RS_OHMS.check(*rs_ohms)?;
                DiodeParams::Junction {
                    is_a: *is_a,
                    n: *n,
                    rs_ohms: *rs_ohms,
                    temp_c,
                }
            }
        };
        Ok(params)
    }
}
