//! `railcheck log`: a supply's visits, newest first, with the readings in words and units, and
//! the capacitance trend in microfarads.

use super::words::reading_value;
use super::written;
use crate::diagnose::trend::{self, Trend};
use crate::escape::printable;
use crate::supply::Supply;
use crate::units::format_uf;
use anyhow::Result;
use std::io::Write;
use std::process::ExitCode;

/// The log as one JSON line (keys unchanged: name, visits, trend).
pub fn render_json(out: &mut impl Write, supply: &Supply, trend: &Trend) -> std::io::Result<()> {
    let list: Vec<_> = newest_first(supply)
        .iter()
        .map(|v| {
            let readings: serde_json::Map<String, serde_json::Value> = v
                .readings
                .present()
                .into_iter()
                .map(|(k, x)| (k.to_string(), x.into()))
                .collect();
            serde_json::json!({"date": v.date_text(), "technician": v.technician,
                "readings": readings, "notes": v.notes, "replaced": v.replaced})
        })
        .collect();
    writeln!(
        out,
        "{}",
        serde_json::json!({"name": supply.name, "visits": list, "trend": trend})
    )
}

fn newest_first(supply: &Supply) -> Vec<&crate::visit::Visit> {
    let mut visits: Vec<_> = supply.visits.iter().collect();
    visits.sort_by_key(|v| std::cmp::Reverse(v.date_text()));
    visits
}

/// The log as text: each visit's readings ("DC 30.9 V, ripple peak to peak 1.1 V"), who came,
/// notes and parts replaced; then the capacitance each visit implies, its drift and the
/// projected crossing of the limit.
pub fn render_text(out: &mut impl Write, supply: &Supply, trend: &Trend) -> std::io::Result<()> {
    let visits = newest_first(supply);
    writeln!(out, "{}: {} visits", printable(&supply.name), visits.len())?;
    for v in visits {
        let readings: Vec<String> = v
            .readings
            .present()
            .iter()
            .map(|(k, x)| reading_value(k, *x))
            .collect();
        let readings = if readings.is_empty() {
            "no readings".to_string()
        } else {
            readings.join(", ")
        };
        writeln!(out, "  {}  {}", printable(&v.date_text()), readings)?;
        if !v.technician.is_empty() {
            writeln!(out, "              by {}", printable(&v.technician))?;
        }
        if !v.notes.is_empty() {
            writeln!(out, "              {}", printable(&v.notes))?;
        }
        if !v.replaced.is_empty() {
            writeln!(
                out,
                "              replaced: {}",
                printable(&v.replaced.join(", "))
            )?;
        }
    }
    writeln!(out, "  Capacitance the readings imply:")?;
    for p in &trend.points {
        match p.uf {
            Some(uf) => writeln!(out, "    {}  {:>10}", printable(&p.date), format_uf(uf))?,
            None => writeln!(
                out,
                "    {}  ({})",
                printable(&p.date),
                p.why_none.unwrap_or(crate::diagnose::trend::NO_READING)
            )?,
        }
    }
    if let Some(s) = trend.uf_per_year {
        writeln!(
            out,
            "  Drift {s:+.0} uF a year; limit {} ({})",
            format_uf(trend.limit_uf),
            trend.limit
        )?;
    }
    if let Some(c) = &trend.crossing {
        let range = match (&c.earliest, &c.latest) {
            (Some(a), Some(b)) => format!(" (between {a} and {b})"),
            (Some(a), None) => format!(" (from {a}; how late is not yet clear)"),
            _ => String::new(),
        };
        if c.already {
            writeln!(
                out,
                "  Below the limit since about {}{range}: replace the capacitor",
                c.date
            )?;
        } else {
            writeln!(
                out,
                "  Projected to cross the limit about {}{range}",
                c.date
            )?;
        }
    }
    if let Some(a) = &trend.ageing {
        writeln!(out, "  Against the temperature rule: {}", a.words)?;
    }
    writeln!(out, "  {}", trend.note)
}

/// Works out the trend of `supply` and writes its log.
pub fn run(out: &mut impl Write, supply: &Supply, json: bool) -> Result<ExitCode> {
    let trend = trend::trend(supply);
    written(if json {
        render_json(out, supply, &trend)
    } else {
        render_text(out, supply, &trend)
    })?;
    Ok(ExitCode::SUCCESS)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::diagnose::trend::TrendPoint;

    #[test]
    fn visits_read_in_words_and_capacitance_in_microfarads() {
        let s = Supply::from_toml_str(
            "format = 1\nname = \"unit\"\n[mains]\nvrms = 230.0\nhz = 50.0\n[transformer]\n\
             ratio = 9.58\n[rectifier]\ntopology = \"bridge\"\n[filter]\nkind = \"capacitor\"\n\
             uf = 4700.0\n[load]\namps = 0.35\n[[visit]]\ndate = 2026-03-01\n\
             mains_vrms = 226.0\ndc_v = 30.9\nripple_pp_v = 1.1\nload_a = 0.34\n",
        )
        .unwrap();
        // A trend made by hand: the rendering is under test here, not the fit.
        let trend = Trend {
            points: vec![TrendPoint {
                date: "2026-03-01".into(),
                uf: Some(3901.4),
                why_none: None,
            }],
            uf_per_year: Some(-120.0),
            limit_uf: 3760.0,
            limit: "20 % below the stated capacitance".into(),
            crossing: None,
            note: "one visit".into(),
            ageing: None,
        };
        let mut out = Vec::new();
        render_text(&mut out, &s, &trend).unwrap();
        let text = String::from_utf8(out).unwrap();
        for want in [
            "2026-03-01  mains 226 V, DC 30.9 V, ripple peak to peak 1.1 V, load current 0.34 A",
            "3901 uF",
            "limit 3760 uF",
        ] {
            assert!(text.contains(want), "{want:?} not in:\n{text}");
        }
        assert!(!text.contains("dc_v") && !text.contains("mF"), "{text}");
    }
}
