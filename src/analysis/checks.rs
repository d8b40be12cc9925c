//! Rating checks: each part's rating against the worst it sees over the tolerance box.

use super::worst_case::WorstCase;
use crate::circuit::{Figure, Figures};
use crate::supply::{Supply, Topology};
use serde::Serialize;

/// A limit within this fraction counts as a warning: too close for comfort in the field.
pub const WARN_MARGIN: f64 = 0.05;

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Status {
    Ok,
    Warn,
    Fail,
}

impl Status {
    /// The word shown beside the check, so that meaning never rests on colour.
    pub fn word(self) -> &'static str {
        match self {
            Status::Ok => "OK",
            Status::Warn => "WARN",
            Status::Fail => "FAIL",
        }
    }
}

/// One rating check.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Check {
    pub id: &'static str,
    pub status: Status,
    /// What the part sees at its worst (volts, amps, volt-amperes or watts).
    pub value: f64,
    /// Its rating, or for headroom the voltage the regulator needs.
    pub limit: f64,
    pub message: String,
}

/// A rectifier valve's own limits: the largest first capacitor its cathode survives the
/// charging pulses of, and the least plate supply impedance that holds those pulses down.
fn valve_checks(
    supply: &Supply,
    v: &crate::circuit::diode::ValveLimits,
    out: &mut Vec<Check>,
    not_rated: &mut Vec<&'static str>,
) {
    let f = &supply.filter;
    match (
        v.max_first_uf,
        f.uf.filter(|_| f.kind.has_capacitor() && !f.kind.is_choke_input()),
    ) {
        (Some(limit), Some(uf)) => {
            // At its upper tolerance: the part fitted may be the largest the label allows.
            let high = uf * (1.0 + f.high_pct / 100.0);
            out.push(at_most(
                "valve-first-cap",
                high,
                limit,
                "first capacitor",
                "uF",
                &format!("{} uF at +{} %", fmt_value(uf), fmt_value(f.high_pct)),
            ));
        }
        (None, Some(_)) => not_rated.push("valve-first-cap"),
        (_, None) => {}
    }
    let plate = super::valve::plate_vrms(supply);
    match (
        plate.and_then(|p| v.min_plate_ohms_at(p)),
        super::valve::plate_supply_ohms(supply),
    ) {
        (Some(need), Some(ohms)) => out.push(at_least(
            "valve-plate-impedance",
            ohms,
            need,
            "plate supply impedance per plate",
            "ohm",
            &format!(
                "winding, reflected primary and leakage reactance at {} V RMS a plate",
                fmt_value(plate.unwrap_or(0.0))
            ),
        )),
        _ => not_rated.push("valve-plate-impedance"),
    }
}

/// A number as the checks' words give it: three significant figures, no more than the
/// values they come from carry.
fn fmt_value(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return crate::units::format_number(v);
    }
    let decimals = (2 - v.abs().log10().floor() as i32).max(0) as usize;
    format!("{v:.decimals$}")
}

/// A value that must stay at or below `limit` (a rating).
fn at_most(id: &'static str, value: f64, limit: f64, what: &str, unit: &str, at: &str) -> Check {
    let status = if value > limit {
        Status::Fail
    } else if value > limit * (1.0 - WARN_MARGIN) {
        Status::Warn
    } else {
        Status::Ok
    };
    let verb = match status {
        Status::Fail => "exceeds",
        Status::Warn => "is within 5 % of",
        Status::Ok => "is within",
    };
    Check {
        id,
        status,
        value,
        limit,
        message: format!("{what} {value:.3} {unit} ({at}) {verb} the {limit} {unit} rating"),
    }
}

/// A value that must stay at or above `limit` (the headroom a regulator needs).
fn at_least(id: &'static str, value: f64, limit: f64, what: &str, unit: &str, at: &str) -> Check {
    let status = if value < limit {
        Status::Fail
    } else if value < limit * (1.0 + WARN_MARGIN) {
        Status::Warn
    } else {
        Status::Ok
    };
    let verb = match status {
        Status::Fail => "is below",
        Status::Warn => "is within 5 % of",
        Status::Ok => "clears",
    };
    Check {
        id,
        status,
        value,
        limit,
        message: format!("{what} {value:.3} {unit} ({at}) {verb} the {limit:.3} {unit} needed"),
    }
}

/// The rating checks of `supply` over its worst case; `stress` is the voltage-stress solve
/// (high line, lightest load, or no load when `no_load` says none was stated). Returns the
/// checks made and the ids of those skipped for want of a rating.
pub fn checks(
    supply: &Supply,
    wc: &WorstCase,
    stress: &Figures,
    no_load: bool,
) -> (Vec<Check>, Vec<&'static str>) {
    let mut out = Vec::new();
    let mut not_rated = Vec::new();
    let valve = super::valve::limits(supply);
    let stress_words = if valve.is_some_and(|v| v.directly_heated) {
        "high line, no load at warm-up: a directly heated valve conducts before the \
         amplifier's valves draw current, so the rail first soars to its no-load peak"
    } else if no_load {
        "high line, no load: no minimum load is stated"
    } else {
        "high line, lightest load"
    };
    let max_of = |figure: Figure| wc.extent(figure).map(|e| (e.max, e.max_at.clone()));
    let f = &supply.filter;
    let filtered = f.kind != crate::supply::FilterKind::None;
    if filtered {
        match f.rated_v {
            Some(rated) => {
                let what = if supply.rectifier.topology == Topology::Doubler {
                    "each capacitor's peak"
                } else {
                    "capacitor peak"
                };
                out.push(at_most(
                    "cap-voltage",
                    stress.cap_peak_v,
                    rated,
                    what,
                    "V",
                    stress_words,
                ));
            }
            None => not_rated.push("cap-voltage"),
        }
        match (f.rated_ripple_a, max_of(Figure::CapRippleRmsA)) {
            (Some(rated), Some((v, at))) => out.push(at_most(
                "cap-ripple-current",
                v,
                rated,
                "capacitor ripple current",
                "A RMS",
                &at,
            )),
            _ => not_rated.push("cap-ripple-current"),
        }
    }
    if let Some(c) = super::choke::critical(supply, stress.dc_v) {
        let below = c.henries < c.critical_henries;
        let formula = if supply.rectifier.topology.is_full_wave() {
            "R / 3w"
        } else {
            "pi R / 2w"
        };
        let load = if c.lightest_ohms.is_finite() {
            format!(
                "the lightest load, {}",
                crate::units::format_si(c.lightest_ohms, "ohm")
            )
        } else {
            "no load (nothing stated draws current; a bleeder would)".to_string()
        };
        out.push(Check {
            id: "choke-critical",
            status: if below { Status::Warn } else { Status::Ok },
            value: c.henries,
            limit: c.critical_henries,
            message: if below {
                format!(
                    "choke {} at {load} is below the critical {} ({formula}): its current \
                     stops each cycle and the rail rises towards the peak; a larger \
                     filter.choke_h (a swinging choke's choke_light_h) or a smaller \
                     filter.bleeder_ohms holds it",
                    crate::units::format_si(c.henries, "H"),
                    crate::units::format_si(c.critical_henries, "H"),
                )
            } else {
                format!(
                    "choke {} at {load} clears the critical {} ({formula})",
                    crate::units::format_si(c.henries, "H"),
                    crate::units::format_si(c.critical_henries, "H"),
                )
            },
        });
    }
    if f.kind.has_choke() {
        match (f.choke_rated_a, max_of(Figure::ChokeRmsA)) {
            (Some(rated), Some((v, at))) => out.push(at_most(
                "choke-current",
                v,
                rated,
                "choke current",
                "A RMS",
                &at,
            )),
            _ => not_rated.push("choke-current"),
        }
    }
    let r = &supply.rectifier;
    match r.rated_piv_v.or(valve.and_then(|v| v.piv_v)) {
        Some(rated) => {
            let piv = stress
                .diode_piv_v
                .max(max_of(Figure::DiodePivV).map_or(0.0, |m| m.0));
            out.push(at_most(
                "diode-piv",
                piv,
                rated,
                "diode reverse peak",
                "V",
                stress_words,
            ));
        }
        None => not_rated.push("diode-piv"),
    }
    match (r.rated_a, max_of(Figure::DiodeAvgA)) {
        (Some(rated), Some((v, at))) => out.push(at_most(
            "diode-current",
            v,
            rated,
            "diode average current",
            "A",
            &at,
        )),
        _ => not_rated.push("diode-current"),
    }
    match (
        r.rated_peak_a.or(valve.and_then(|v| v.peak_a)),
        max_of(Figure::DiodePeakA),
    ) {
        (Some(rated), Some((v, at))) => out.push(at_most(
            "peak-current",
            v,
            rated,
            if valve.is_some() {
                "one plate's peak current"
            } else {
                "diode peak current"
            },
            "A",
            &at,
        )),
        // A junction rectifier is usually rated by its average and surge currents: its
        // peak is said as not rated only for a valve, whose data sheet always gives one.
        _ if valve.is_some() => not_rated.push("peak-current"),
        _ => {}
    }
    match (
        r.rated_dc_a.or(valve.and_then(|v| v.dc_a)),
        max_of(Figure::LoadA),
    ) {
        (Some(rated), Some((v, at))) => out.push(at_most(
            "dc-output",
            v,
            rated,
            "rectifier's DC output current",
            "A",
            &at,
        )),
        _ if valve.is_some() => not_rated.push("dc-output"),
        _ => {}
    }
    if let Some(v) = valve {
        valve_checks(supply, &v, &mut out, &mut not_rated);
    }
    match (r.surge_a, stress.inrush_peak_a) {
        (Some(rated), Some(surge)) => out.push(at_most(
            "diode-surge",
            surge,
            rated,
            "switch-on surge at the mains crest",
            "A",
            "high line, empty capacitor",
        )),
        // With no winding resistance or ESR given nothing bounds the surge to check against.
        (Some(_), None) | (None, _) => not_rated.push("diode-surge"),
    }
    match (supply.transformer.rated_va, max_of(Figure::WindingVa)) {
        (Some(rated), Some((v, at))) => out.push(at_most(
            "transformer-va",
            v,
            rated,
            "winding volt-amperes",
            "VA",
            &at,
        )),
        // Straight off the line there is no transformer to rate.
        _ if supply.transformer.is_absent() => {}
        _ => not_rated.push("transformer-va"),
    }
    if let Some(reg) = &supply.regulator {
        let need = reg.output_v + reg.dropout_v;
        if let Some(e) = wc.extent(Figure::MinV) {
            out.push(at_least(
                "regulator-headroom",
                e.min,
                need,
                "lowest ripple valley",
                "V",
                &e.min_at,
            ));
        }
        match reg.rated_w {
            Some(rated) => {
                // (input DC - output) times the load current, the regulator's heat.
                let worst = wc
                    .solved
                    .iter()
                    .map(|(w, f)| ((f.dc_v - reg.output_v).max(0.0) * f.load_a, w))
                    .max_by(|a, b| a.0.total_cmp(&b.0));
                if let Some((w, at)) = worst {
                    out.push(at_most(
                        "regulator-dissipation",
                        w,
                        rated,
                        "regulator dissipation",
                        "W",
                        at,
                    ));
                }
            }
            None => not_rated.push("regulator-dissipation"),
        }
    }
    (out, not_rated)
}
