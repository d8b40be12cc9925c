//! `railcheck report`: each supply's report (text or one JSON line), in the order given.

use super::files::resolve;
use super::{warn, written};
use crate::report::{self, Report};
use crate::units::format_number;
use anyhow::{Result, bail};
use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

/// Writes one report: a JSON line, or the text (after a blank line unless it is the `first`).
pub fn render(out: &mut impl Write, r: &Report, json: bool, first: bool) -> std::io::Result<()> {
    if json {
        writeln!(out, "{}", r.json())
    } else {
        if !first {
            writeln!(out)?;
        }
        write!(out, "{}", r.text())
    }
}

/// What a report adds on request.
#[derive(Debug, Clone, Copy, Default)]
pub struct Extras {
    /// The seeded statistical spread.
    pub spread: bool,
    /// A valve rectifier's solid-state what-if.
    pub solid_state: bool,
}

/// Reports each file in turn; a file that cannot be read or solved is named on stderr and the
/// rest still report (exit status 2 if any failed, else 1 if a rating check failed).
pub fn run(
    out: &mut impl Write,
    files: &[String],
    json: bool,
    touch_v: f64,
    extras: Extras,
    cli_dir: &Option<PathBuf>,
    no_demo: bool,
) -> Result<ExitCode> {
    if !(touch_v.is_finite() && touch_v > 0.0 && touch_v <= 1000.0) {
        bail!(
            "--touch-v must be above 0 and at most 1000 V (got {})",
            format_number(touch_v)
        );
    }
    let mut bad = false;
    let mut check_failed = false;
    for (i, path) in files.iter().enumerate() {
        let outcome = resolve(path, cli_dir, no_demo).and_then(|(supply, file)| {
            let built = if extras.spread {
                report::build_with_spread(supply, &file, touch_v)
            } else {
                report::build(supply, &file, touch_v)
            };
            let built = match built {
                Ok(r) if extras.solid_state => r.with_solid_state(),
                other => other,
            };
            built.map_err(|e| anyhow::anyhow!("{file}: {e}"))
        });
        match outcome {
            Ok(r) => {
                check_failed |= r.any_failed();
                written(render(out, &r, json, i == 0))?;
            }
            Err(e) => {
                warn(&format!("{e:#}"));
                bad = true;
            }
        }
    }
    Ok(match (bad, check_failed) {
        (true, _) => ExitCode::from(2),
        (false, true) => ExitCode::from(1),
        _ => ExitCode::SUCCESS,
    })
}
