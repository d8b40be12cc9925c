//! The drift across a supply's visits: the capacitance each visit's readings imply, a straight
//! line through them, and the date it crosses the supply's limit, with its uncertainty.

use super::{Readings, fit, misfit};
use crate::analysis::worst_case::worst_case;
use crate::circuit::{self, Conditions};
use crate::supply::{FilterKind, Supply};
use crate::visit::civil_from_days;
use serde::Serialize;

/// One visit's estimate.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrendPoint {
    pub date: String,
    /// Microfarads the readings imply, or None when the visit has no ripple or DC reading.
    pub uf: Option<f64>,
}

/// The projected crossing of the limit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Crossing {
    pub date: String,
    /// Whether that date is already past the last visit: the part is below its limit now.
    pub already: bool,
    /// The same with the slope one standard error steeper and shallower (three visits or more).
    pub earliest: Option<String>,
    pub latest: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Trend {
    pub points: Vec<TrendPoint>,
    /// Fitted drift, microfarads per year (negative: drying out).
    pub uf_per_year: Option<f64>,
    /// The capacitance below which the supply is out of its limit, and why.
    pub limit_uf: f64,
    pub limit: String,
    pub crossing: Option<Crossing>,
    pub note: String,
}

/// The capacitance that best explains one visit's readings (microfarads).
pub fn capacitance_from(supply: &Supply, readings: &Readings) -> Option<f64> {
    let uf = supply.filter.uf?;
    if readings.ripple_pp_v.is_none() && readings.ripple_rms_v.is_none() && readings.dc_v.is_none()
    {
        return None;
    }
    let base = Conditions {
        mains_vrms: readings.mains_vrms,
        ..Conditions::default()
    };
    let (x, chi2) = fit(0.02, 1.6, |x| {
        let cond = Conditions {
            cap_factor: x,
            ..base
        };
        match circuit::solve(supply, &cond) {
            Ok(op) => misfit(readings, &op.figures, &cond, supply),
            Err(_) => f64::INFINITY,
        }
    });
    chi2.is_finite().then_some(uf * x)
}

/// The capacitance limit: with a regulator, the least capacitance whose worst-case valley
/// still clears output plus dropout; without, the makers' common end-of-life criterion of
/// 20 % below the stated value (from memory of makers' practice).
pub fn limit_uf(supply: &Supply) -> (f64, String) {
    let uf = supply.filter.uf.unwrap_or(0.0);
    if let Some(reg) = &supply.regulator {
        let need = reg.output_v + reg.dropout_v;
        let valley = |c: f64| {
            let mut s = supply.clone();
            s.filter.uf = Some(c);
            worst_case(&s)
                .ok()
                .and_then(|w| w.extent("min_v").map(|e| e.min))
                .unwrap_or(0.0)
        };
        if valley(uf) >= need {
            let (mut lo, mut hi) = (uf * 0.01, uf);
            for _ in 0..25 {
                let mid = (lo * hi).sqrt();
                if valley(mid) >= need {
                    hi = mid;
                } else {
                    lo = mid;
                }
            }
            return (
                hi,
                format!("worst-case valley reaches the regulator's {need:.2} V"),
            );
        }
        return (
            uf,
            format!("the worst-case valley is already under the regulator's {need:.2} V"),
        );
    }
    (
        0.8 * uf,
        "20 % below the stated capacitance (end of life, makers' practice)".into(),
    )
}

/// A least-squares line through (day, microfarads) points: its slope and the mean point it
/// passes through, with the spread of the days for the slope's standard error.
struct LineFit {
    slope: f64,
    mean_x: f64,
    mean_y: f64,
    sxx: f64,
}

fn line_fit(xy: &[(f64, f64)]) -> Option<LineFit> {
    if xy.len() < 2 {
        return None;
    }
    let n = xy.len() as f64;
    let mean_x = xy.iter().map(|p| p.0).sum::<f64>() / n;
    let mean_y = xy.iter().map(|p| p.1).sum::<f64>() / n;
    let sxx: f64 = xy.iter().map(|p| (p.0 - mean_x).powi(2)).sum();
    let sxy: f64 = xy.iter().map(|p| (p.0 - mean_x) * (p.1 - mean_y)).sum();
    (sxx > 0.0).then(|| LineFit {
        slope: sxy / sxx,
        mean_x,
        mean_y,
        sxx,
    })
}

/// The trend of `supply`'s visits.
pub fn trend(supply: &Supply) -> Trend {
    let (limit_uf, limit) = limit_uf(supply);
    let mut visits: Vec<_> = supply.visits.iter().collect();
    visits.sort_by_key(|v| v.days());
    // A replaced filter capacitor starts the trend again: the readings of the visit that
    // replaced it were taken on the old part, so the new trend begins after it.
    let replaced_at = visits.iter().rposition(|v| {
        v.replaced
            .iter()
            .any(|p| p.to_lowercase().contains("uf") || p.to_uppercase().starts_with('C'))
    });
    let mut points = Vec::new();
    let mut xy = Vec::new();
    let mut old_xy = Vec::new();
    for (i, v) in visits.iter().enumerate() {
        // The trend is the capacitor's: the ripple frequency says nothing of its value.
        let r = Readings {
            ripple_hz: None,
            ..v.readings
        };
        let uf = if supply.filter.kind == FilterKind::None || r.check(supply.mains.hz).is_err() {
            None
        } else {
            capacitance_from(supply, &r)
        };
        if let (Some(u), Some(d)) = (uf, v.days()) {
            match replaced_at {
                Some(r) if i <= r => old_xy.push((d as f64, u)),
                _ => xy.push((d as f64, u)),
            }
        }
        points.push(TrendPoint {
            date: v.date_text(),
            uf,
        });
    }
    let mut out = Trend {
        points,
        uf_per_year: None,
        limit_uf,
        limit,
        crossing: None,
        note: String::new(),
    };
    if xy.len() < 2 {
        if let Some(r) = replaced_at {
            out.note = format!(
                "the filter capacitor was replaced on {}; its trend starts again with the next visits",
                visits[r].date_text()
            );
            out.uf_per_year = line_fit(&old_xy).map(|f| f.slope * 365.25);
        } else {
            out.note = "a trend needs two visits with ripple or DC readings".into();
        }
        return out;
    }
    let Some(LineFit {
        slope,
        mean_x: mx,
        mean_y: my,
        sxx,
    }) = line_fit(&xy)
    else {
        out.note = "the visits share one date: no trend".into();
        return out;
    };
    let n = xy.len() as f64;
    let intercept = my - slope * mx;
    out.uf_per_year = Some(slope * 365.25);
    let se = if xy.len() >= 3 {
        let resid: f64 = xy
            .iter()
            .map(|p| (p.1 - intercept - slope * p.0).powi(2))
            .sum();
        Some((resid / (n - 2.0) / sxx).sqrt())
    } else {
        None
    };
    let cross = |s: f64| -> Option<i64> {
        if s >= 0.0 {
            return None;
        }
        // The line through the mean point with slope s.
        Some((mx + (limit_uf - my) / s).round() as i64)
    };
    match cross(slope) {
        Some(day) => {
            let (earliest, latest) = match se {
                Some(se) => (
                    cross(slope - se).map(civil_from_days),
                    cross(slope + se).map(civil_from_days),
                ),
                None => (None, None),
            };
            // Whichever way the line's spread falls, the earlier date comes first.
            let (earliest, latest) = match (earliest, latest) {
                (Some(a), Some(b)) if a > b => (Some(b), Some(a)),
                pair => pair,
            };
            let last_day = xy.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max);
            out.crossing = Some(Crossing {
                date: civil_from_days(day),
                already: (day as f64) <= last_day,
                earliest,
                latest,
            });
            out.note = if se.is_none() {
                "two visits: no uncertainty on the date".into()
            } else {
                "range: slope plus or minus one standard error".into()
            };
        }
        None => out.note = "no downward drift: no crossing projected".into(),
    }
    out
}
