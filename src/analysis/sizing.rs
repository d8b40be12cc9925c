//! Sizing a replacement filter capacitor: the smallest preferred value that meets a ripple or
//! headroom target at the worst case, with the voltage rating and ripple current it needs; and
//! for a choke input, the smallest preferred choke above the critical inductance.

use super::choke;
use super::worst_case::{voltage_stress, worst_case};
use crate::circuit::{self, CircuitError, Conditions, Figure};
use crate::supply::{FilterKind, Supply};
use serde::Serialize;

/// IEC 60063 E6 preferred numbers (from memory of the standard).
pub const E6: [f64; 6] = [1.0, 1.5, 2.2, 3.3, 4.7, 6.8];
/// IEC 60063 E12 preferred numbers (from memory of the standard).
pub const E12: [f64; 12] = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];
/// Standard aluminium electrolytic voltage ratings, volts (common practice).
pub const VOLTAGE_RATINGS: [f64; 15] = [
    6.3, 10.0, 16.0, 25.0, 35.0, 50.0, 63.0, 80.0, 100.0, 160.0, 200.0, 250.0, 350.0, 400.0, 450.0,
];
/// The working peak may use this share of a capacitor's rating: the usual 80 % derating that
/// keeps an electrolytic's life and covers surges the model does not see (practice).
pub const DERATING: f64 = 0.8;

/// What the capacitor must achieve at the worst case.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Target {
    /// Worst-case ripple peak to peak at most this, volts.
    RipplePp(f64),
    /// Worst-case valley at least this far above the regulator's output plus dropout, volts.
    /// Only for a supply with a regulator: without one there is nothing to be above.
    Headroom(f64),
    /// Worst-case valley (the rail's lowest point) at least this, volts: the minimum the load
    /// behind the rail needs, with or without a regulator.
    MinValley(f64),
}

/// One recommended capacitor.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sized {
    pub series: &'static str,
    pub uf: f64,
    pub worst_ripple_pp_v: f64,
    pub worst_valley_v: f64,
    /// Highest voltage across it (high line, lightest or no load).
    pub worst_peak_v: f64,
    /// The standard rating it needs, or None above 450 V.
    pub rated_v: Option<f64>,
    /// The RMS ripple current it must carry at the worst case, amps.
    pub ripple_a: f64,
}

/// Why no capacitor was sized.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SizingError {
    #[error("{0}")]
    Circuit(#[from] CircuitError),
    #[error("target must be above 0 V (got {0})")]
    BadTarget(f64),
    /// A headroom target on a supply without a regulator, which has no output plus dropout
    /// for the valley to stay above.
    #[error(
        "a headroom is the margin of the valley over a regulator's output plus dropout, and \
         this supply has no regulator"
    )]
    NoRegulator,
    #[error(
        "no capacitance up to 1 F meets the target: at 1 F the worst ripple is {ripple:.3} V \
         and the worst valley {valley:.2} V; the winding, not the capacitor, limits this rail"
    )]
    Unreachable { ripple: f64, valley: f64 },
    /// Behind a choke a very large capacitor rings slower than a solve's budget allows: the
    /// largest decade that could be solved did not meet the target.
    #[error(
        "no capacitance up to {largest_uf} uF meets the target (larger ones could not be solved \
         behind the filter's choke or resistor within the solver's budget): at {largest_uf} uF \
         the worst ripple is {ripple:.3} V and the worst valley {valley:.2} V"
    )]
    UnreachableSolvable {
        largest_uf: f64,
        ripple: f64,
        valley: f64,
    },
    #[error(
        "no capacitance from 1 uF to 1 F could be solved for this supply within the solver's \
         budget; check the filter's values"
    )]
    Unsolvable,
}

/// Which capacitor `size` sizes for a filter of `kind`, in words (the others keep their stated
/// values).
pub fn sized_capacitor_words(kind: FilterKind) -> &'static str {
    match kind {
        FilterKind::None => "the capacitor to add across the rail",
        FilterKind::Capacitor => "the filter capacitor (uf; a doubler's two each)",
        FilterKind::Crc => {
            "the first capacitor (uf), at the rectifier; the resistor and the second capacitor \
             as stated"
        }
        FilterKind::Lc => "the capacitor after the choke (uf), the filter's only one",
        FilterKind::Clc => {
            "the first capacitor (uf), at the rectifier; the choke and the output capacitor \
             (second_uf) as stated"
        }
    }
}

/// A choke input's smallest preferred choke: the critical inductance at the lightest load
/// (henries, ohms) and the smallest value of `series` at or above it, henries.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SizedChoke {
    pub series: &'static str,
    pub henries: f64,
    pub critical_henries: f64,
    /// The lightest load the choke must stay above critical for, with the bleeder, ohms.
    pub lightest_ohms: f64,
}

/// Why no choke was sized.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ChokeSizingError {
    #[error("{0}")]
    Circuit(#[from] CircuitError),
    #[error(
        "no choke is above the critical inductance of a rail that may draw nothing: state the \
         lightest load (load.min_amps or load.max_ohms) or a bleeder (filter.bleeder_ohms)"
    )]
    NoLightestLoad,
    #[error(
        "the critical inductance at the lightest load is {henries:.3e} H, above the 1000 H the \
         preferred values go to: a bleeder (filter.bleeder_ohms) lowers it"
    )]
    TooLarge { henries: f64 },
}

/// Preferred values of `series` from 1 mH to 1000 H, henries, ascending.
pub fn preferred_henries(series: &[f64]) -> Vec<f64> {
    // The capacitor's list is 1 .. 1e6 in units: a millihenry each.
    preferred_uf(series)
        .into_iter()
        .map(|v| v / 1000.0)
        .collect()
}

/// The smallest E12 and E6 chokes above the critical inductance of `supply`'s choke input at its
/// lightest load (the textbook L_crit = R / (3 w) for full wave, pi R / (2 w) for half wave:
/// `choke::critical_henries`), henries; None when the filter is not a choke input. The rail's
/// voltage for a load stated in amps is the nominal solve's.
pub fn size_choke(supply: &Supply) -> Option<Result<Vec<SizedChoke>, ChokeSizingError>> {
    if !supply.filter.kind.is_choke_input() {
        return None;
    }
    Some((|| {
        let rail_v = circuit::solve(supply, &Conditions::default())?.figures.dc_v;
        let ohms = choke::lightest_load_ohms(supply, rail_v);
        if !ohms.is_finite() {
            return Err(ChokeSizingError::NoLightestLoad);
        }
        let critical = choke::critical_henries(
            ohms,
            supply.mains.hz,
            supply.rectifier.topology.pulses_per_cycle(),
        );
        let mut out = Vec::new();
        for (name, series) in [("E12", &E12[..]), ("E6", &E6[..])] {
            let henries = preferred_henries(series)
                .into_iter()
                .find(|&h| h >= critical)
                .ok_or(ChokeSizingError::TooLarge { henries: critical })?;
            out.push(SizedChoke {
                series: name,
                henries,
                critical_henries: critical,
                lightest_ohms: ohms,
            });
        }
        Ok(out)
    })())
}

/// Preferred values of `series` from 1 uF to 1 F, microfarads, ascending.
pub fn preferred_uf(series: &[f64]) -> Vec<f64> {
    let mut out = Vec::new();
    for decade in 0..6 {
        let scale = 10f64.powi(decade);
        for &m in series {
            // Round to the series' two significant figures so 4.7 * 1000 stays 4700.
            out.push(((m * scale) * 100.0).round() / 100.0);
        }
    }
    out.push(1e6);
    out
}

/// The smallest standard rating at or above `peak_v / DERATING`, volts.
pub fn voltage_rating_for(peak_v: f64) -> Option<f64> {
    VOLTAGE_RATINGS
        .iter()
        .copied()
        .find(|&r| r * DERATING >= peak_v)
}

/// Sizes the filter capacitor of `supply` (its `uf`; a doubler's two each; a CRC's first) for
/// `target`, from E12 and from E6; for an unfiltered supply, the capacitor to add.
pub fn size(supply: &Supply, target: Target) -> Result<Vec<Sized>, SizingError> {
    // An unfiltered supply is sized for the capacitor that would be added to it.
    let mut supply = supply.clone();
    // The candidates are new parts: the old capacitor's calibrated value is not theirs.
    supply.forget_capacitance_calibration();
    if supply.filter.kind == FilterKind::None {
        supply.filter.kind = FilterKind::Capacitor;
    }
    let supply = &supply;
    let goal = match target {
        Target::RipplePp(v) | Target::Headroom(v) | Target::MinValley(v) => v,
    };
    if !(goal.is_finite() && goal > 0.0) {
        return Err(SizingError::BadTarget(goal));
    }
    let need_valley = match (&supply.regulator, target) {
        (Some(r), Target::Headroom(h)) => r.output_v + r.dropout_v + h,
        (None, Target::Headroom(_)) => return Err(SizingError::NoRegulator),
        (_, Target::MinValley(v)) => v,
        (_, Target::RipplePp(_)) => f64::NEG_INFINITY,
    };
    let evaluate = |uf: f64| -> Result<(bool, Sized), SizingError> {
        let mut s = supply.clone();
        s.filter.uf = Some(uf);
        let wc = match worst_case(&s) {
            Ok(wc) => wc,
            // A value the solver cannot settle within its budget (a tiny first capacitor
            // behind a large second one is stiff) is not one to recommend: it does not meet
            // the target, and the search goes on among the larger values.
            Err(CircuitError::Refused { .. } | CircuitError::WorstCaseRefused { .. }) => {
                return Ok((
                    false,
                    Sized {
                        series: "",
                        uf,
                        worst_ripple_pp_v: f64::INFINITY,
                        worst_valley_v: f64::NEG_INFINITY,
                        worst_peak_v: 0.0,
                        rated_v: None,
                        ripple_a: 0.0,
                    },
                ));
            }
            Err(e) => return Err(e.into()),
        };
        let ripple = wc
            .extent(Figure::RipplePpV)
            .map_or(f64::INFINITY, |e| e.max);
        let valley = wc.extent(Figure::MinV).map_or(0.0, |e| e.min);
        let ripple_a = wc.extent(Figure::CapRippleRmsA).map_or(0.0, |e| e.max);
        let meets = match target {
            Target::RipplePp(v) => ripple <= v,
            Target::Headroom(_) | Target::MinValley(_) => valley >= need_valley,
        };
        Ok((
            meets,
            Sized {
                series: "",
                uf,
                worst_ripple_pp_v: ripple,
                worst_valley_v: valley,
                worst_peak_v: 0.0,
                rated_v: None,
                ripple_a,
            },
        ))
    };
    // The largest capacitance the solver settles: 1 F, or the largest decade below it that
    // solves (behind a choke a huge capacitor rings for seconds, beyond a solve's budget).
    let mut largest = None;
    for decade in (0..=6).rev() {
        let uf = 10f64.powi(decade);
        let (meets, sized) = evaluate(uf)?;
        if sized.worst_ripple_pp_v.is_finite() {
            largest = Some((uf, meets, sized));
            break;
        }
    }
    let Some((largest_uf, top_meets, top)) = largest else {
        return Err(SizingError::Unsolvable);
    };
    if !top_meets {
        return Err(if largest_uf >= 1e6 {
            SizingError::Unreachable {
                ripple: top.worst_ripple_pp_v,
                valley: top.worst_valley_v,
            }
        } else {
            SizingError::UnreachableSolvable {
                largest_uf,
                ripple: top.worst_ripple_pp_v,
                valley: top.worst_valley_v,
            }
        });
    }
    let mut out = Vec::new();
    for (name, series) in [("E12", &E12[..]), ("E6", &E6[..])] {
        let mut values = preferred_uf(series);
        values.retain(|&v| v <= largest_uf);
        let top = top.clone();
        // More capacitance never raises the ripple nor lowers the valley: bisect the list.
        let (mut lo, mut hi) = (0usize, values.len() - 1);
        let mut best = top;
        while lo < hi {
            let mid = (lo + hi) / 2;
            let (meets, sized) = evaluate(values[mid])?;
            if meets {
                hi = mid;
                best = sized;
            } else {
                lo = mid + 1;
            }
        }
        if best.uf != values[hi] {
            best = evaluate(values[hi])?.1;
        }
        let mut s = supply.clone();
        s.filter.uf = Some(best.uf);
        let (stress, _) = voltage_stress(&s)?;
        best.worst_peak_v = stress.cap_peak_v;
        best.rated_v = voltage_rating_for(stress.cap_peak_v);
        best.series = name;
        out.push(best);
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn e_series_are_the_iec_60063_numbers() {
        // IEC 60063, from memory of the standard: E6 and the six E12 values between them.
        assert_eq!(E6, [1.0, 1.5, 2.2, 3.3, 4.7, 6.8]);
        for v in E6 {
            assert!(E12.contains(&v), "E6 {v} is in E12");
        }
        let extra: Vec<f64> = E12.iter().copied().filter(|v| !E6.contains(v)).collect();
        assert_eq!(extra, vec![1.2, 1.8, 2.7, 3.9, 5.6, 8.2]);
        // Each E12 step is about the twelfth root of ten (1.21), within rounding.
        for w in E12.windows(2) {
            let r = w[1] / w[0];
            assert!((1.1..1.3).contains(&r), "{w:?}");
        }
    }

    #[test]
    fn preferred_values_span_one_microfarad_to_one_farad() {
        let v = preferred_uf(&E12);
        assert_eq!(v[0], 1.0);
        assert!(v.contains(&4700.0) && v.contains(&2200.0) && v.contains(&82.0));
        assert_eq!(*v.last().unwrap(), 1e6);
        assert!(v.windows(2).all(|w| w[0] < w[1]));
    }

    #[test]
    fn a_headroom_needs_a_regulator() {
        let s = Supply::from_toml_str(
            "format = 1\nname = \"plain\"\n[mains]\nvrms = 230.0\nhz = 50.0\n[transformer]\n\
             ratio = 9.58\n[rectifier]\ntopology = \"bridge\"\n[filter]\nkind = \"capacitor\"\n\
             uf = 2200.0\n[load]\namps = 0.35\n",
        )
        .unwrap();
        // Issue 11: this was sized as if a regulator needed 2 V less than the valley.
        assert_eq!(
            size(&s, Target::Headroom(2.0)),
            Err(SizingError::NoRegulator)
        );
        assert_eq!(
            size(&s, Target::MinValley(-1.0)),
            Err(SizingError::BadTarget(-1.0))
        );
    }

    /// The textbook critical inductance of a full-wave choke input, L_crit = R / (3 w) (derived
    /// from the rectified sine's Fourier series; Millman and Halkias's chapter on filters, from
    /// memory): 12 ohm at 50 Hz is 12 / (3 x 314.16) = 12.73 mH by hand, so the smallest E12
    /// choke above it is 15 mH and the smallest E6 15 mH too; 47 ohm at 50 Hz is 49.87 mH:
    /// E12 56 mH, E6 68 mH. A bleeder of 120 ohm across the 47 ohm makes 33.77 ohm, 35.83 mH:
    /// E12 39 mH, E6 47 mH.
    #[test]
    fn a_choke_input_gets_the_smallest_preferred_choke_above_critical() {
        let text = |ohms: f64, bleeder: &str| {
            format!(
                "format = 1\nname = \"choke\"\n[mains]\nvrms = 230.0\nhz = 50.0\n[transformer]\n\
                 ratio = 7.667\nsecondary_ohms = 0.5\n[rectifier]\ntopology = \"bridge\"\n\
                 [filter]\nkind = \"lc\"\nuf = 2200.0\nchoke_h = 0.2\nchoke_ohms = 2.0\n\
                 {bleeder}[load]\nohms = {ohms:?}\n"
            )
        };
        let sized = |t: String| {
            size_choke(&Supply::from_toml_str(&t).unwrap())
                .unwrap()
                .unwrap()
        };
        let c = sized(text(12.0, ""));
        assert!((c[0].critical_henries - 0.012_732).abs() < 1e-6, "{c:?}");
        assert_eq!((c[0].series, c[0].henries), ("E12", 0.015));
        assert_eq!((c[1].series, c[1].henries), ("E6", 0.015));
        let c = sized(text(47.0, ""));
        assert!((c[0].critical_henries - 0.049_868).abs() < 1e-6, "{c:?}");
        assert!((c[0].henries - 0.056).abs() < 1e-12 && (c[1].henries - 0.068).abs() < 1e-12);
        let c = sized(text(47.0, "bleeder_ohms = 120.0\n"));
        assert!((c[0].lightest_ohms - 33.772).abs() < 1e-3, "{c:?}");
        assert!((c[0].critical_henries - 0.035_833).abs() < 1e-6, "{c:?}");
        assert!((c[0].henries - 0.039).abs() < 1e-12 && (c[1].henries - 0.047).abs() < 1e-12);
        // A capacitor input has no choke to size.
        let cap = text(47.0, "").replace("\"lc\"", "\"capacitor\"");
        let cap = cap.replace("choke_h = 0.2\nchoke_ohms = 2.0\n", "");
        assert!(size_choke(&Supply::from_toml_str(&cap).unwrap()).is_none());
    }

    #[test]
    fn voltage_rating_leaves_the_derating_margin() {
        assert_eq!(voltage_rating_for(12.0), Some(16.0));
        assert_eq!(voltage_rating_for(13.0), Some(25.0));
        assert_eq!(voltage_rating_for(39.0), Some(50.0));
        assert_eq!(voltage_rating_for(400.0), None);
    }
}
