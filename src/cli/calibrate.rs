//! `railcheck calibrate` (and `diagnose --baseline`): what was fitted, and each reading's
//! window before and after, in words and units.

use super::files::{library_holding, resolve};
use super::words::{reading, reading_value, window};
use super::written;
use crate::diagnose::{self, calibrate::Fitted};
use crate::escape::printable;
use crate::supply::Supply;
use crate::units::format_uf;
use anyhow::{Context, Result};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// The calibration as JSON: its values, the windows before and after, the values at a limit
/// (keys unchanged).
pub fn json(supply: &Supply, fit: &Fitted) -> serde_json::Value {
    let c = &fit.calibration;
    serde_json::json!({
        "visit": c.visit.to_string(),
        "winding_factor": c.winding_factor,
        "crest": c.crest,
        "cap_factor": c.cap_factor,
        "uf": c.cap_factor.map(|f| f * supply.filter.uf.unwrap_or(0.0)),
        "before": fit.before,
        "after": fit.after,
        "at_limit": fit.at_limit,
    })
}

/// The calibration in words: what was fitted, and each reading's window before and after
/// ("DC 18.66 V: 16.10 .. 19.40 V before, 18.31 .. 18.98 V after").
pub fn render_text(out: &mut impl Write, supply: &Supply, fit: &Fitted) -> std::io::Result<()> {
    let c = &fit.calibration;
    writeln!(out, "Calibrated on the visit of {}:", c.visit)?;
    if let Some(w) = c.winding_factor {
        writeln!(
            out,
            "  winding resistance  {w:.3} times the file's (stated, nameplate or assumed)"
        )?;
    }
    if let Some(k) = c.crest {
        writeln!(out, "  mains crest         {k:.3} (a sine is 1.414)")?;
    }
    if let Some(f) = c.cap_factor {
        writeln!(
            out,
            "  capacitance         {} effective, {f:.3} of the label's {}",
            format_uf(f * supply.filter.uf.unwrap_or(0.0)),
            format_uf(supply.filter.uf.unwrap_or(0.0))
        )?;
    }
    writeln!(out, "  Windows at the visit's mains, before -> after:")?;
    for (b, a) in fit.before.iter().zip(&fit.after) {
        if b.reading == "mains_vrms" {
            continue;
        }
        let (_, unit) = reading(b.reading);
        writeln!(
            out,
            "  {:<30} {}  ->  {}",
            reading_value(b.reading, b.value),
            window(b.min, b.max, unit),
            window(a.min, a.max, unit)
        )?;
    }
    for note in &fit.at_limit {
        writeln!(out, "  Note: {note}")?;
    }
    Ok(())
}

/// Calibrates the library's supply `name` on its visit of `date` (the latest when None),
/// stores the calibration and writes what was fitted.
pub fn run(
    out: &mut impl Write,
    name: &str,
    date: Option<&str>,
    json_out: bool,
    cli_dir: &Option<PathBuf>,
    no_demo: bool,
) -> Result<ExitCode> {
    let (supply, file) = resolve(name, cli_dir, no_demo)?;
    let lib = library_holding(
        &file,
        "calibrate stores the calibration in the library",
        cli_dir,
        no_demo,
    )?;
    let dates = || {
        let mut d: Vec<String> = supply.visits.iter().map(|v| v.date_text()).collect();
        d.dedup();
        d.join(", ")
    };
    let visit = match date {
        Some(want) => supply
            .visits
            .iter()
            .rev()
            .find(|v| v.date_text() == want)
            .with_context(|| {
                format!(
                    "--visit {}: {} has no visit on that date (its visits: {})",
                    printable(want),
                    printable(&supply.name),
                    if supply.visits.is_empty() {
                        "none".into()
                    } else {
                        dates()
                    }
                )
            })?,
        None => supply
            .visits
            .iter()
            .max_by_key(|v| v.days())
            .with_context(|| {
                format!(
                    "{} has no visits to calibrate on: record one with `railcheck diagnose {} \
                 --mains V --dc V --ripple-pp V --baseline`",
                    printable(&supply.name),
                    printable(name)
                )
            })?,
    };
    let fit = diagnose::calibrate::calibrate(&supply, &visit.readings, visit.date)
        .map_err(|e| anyhow::anyhow!("the visit of {}: {e}", visit.date_text()))?;
    let saved = lib.record_calibration(
        Path::new(&file),
        &supply,
        fit.calibration.clone(),
        &visit.readings,
        None,
    )?;
    if json_out {
        let mut v = json(&supply, &fit);
        v["name"] = serde_json::json!(supply.name);
        v["file"] = serde_json::json!(saved.file.display().to_string());
        written(writeln!(out, "{v}"))?;
        return Ok(ExitCode::SUCCESS);
    }
    written(writeln!(
        out,
        "{}: calibration stored in {}",
        printable(&supply.name),
        printable(&saved.file.display().to_string())
    ))?;
    written(render_text(out, &supply, &fit))?;
    Ok(ExitCode::SUCCESS)
}
