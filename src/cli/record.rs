//! `railcheck record`: a visit's service record as one printable HTML page, to stdout or a
//! file. The page itself is built by [`crate::record::service_record`]; this shell picks the
//! visit, solves, and writes.

use super::files::resolve;
use super::written;
use crate::escape::printable;
use crate::supply::Supply;
use crate::visit::Visit;
use anyhow::{Result, bail};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// The visit a record is of: the one dated `date` (the last written of that date), or the
/// newest; a date with no visit is refused listing the dates there are.
pub fn pick_visit<'a>(supply: &'a Supply, date: Option<&str>) -> Result<&'a Visit> {
    let dates = || {
        let mut d: Vec<String> = supply.visits.iter().map(|v| v.date_text()).collect();
        d.sort();
        d.dedup();
        d.join(", ")
    };
    if supply.visits.is_empty() {
        bail!(
            "{} has no visits: a service record is of a visit; record one first (`railcheck \
             diagnose NAME --mains V --dc V --save`, or `a` on the screen)",
            printable(&supply.name)
        );
    }
    match date {
        None => Ok(supply
            .visits
            .iter()
            .max_by_key(|v| v.days())
            .expect("visits are not empty")),
        Some(want) => {
            if !is_date(want) {
                bail!(
                    "--visit takes the visit's date as YYYY-MM-DD (got {}); {}'s visits: {}",
                    printable(want),
                    printable(&supply.name),
                    dates()
                );
            }
            supply
                .visits
                .iter()
                .rev()
                .find(|v| v.date_text() == want)
                .ok_or_else(|| {
                    anyhow::anyhow!(
                        "--visit {}: {} has no visit on that date (its visits: {})",
                        printable(want),
                        printable(&supply.name),
                        dates()
                    )
                })
        }
    }
}

/// Whether `text` is written YYYY-MM-DD (digits and hyphens in those places).
fn is_date(text: &str) -> bool {
    let b = text.as_bytes();
    b.len() == 10
        && b.iter().enumerate().all(|(i, c)| match i {
            4 | 7 => *c == b'-',
            _ => c.is_ascii_digit(),
        })
}

/// Writes the service record of `name`'s visit of `date` (the newest when None) to `output`,
/// or to `out` when there is none.
pub fn run(
    out: &mut impl Write,
    name: &str,
    date: Option<&str>,
    output: Option<&Path>,
    force: bool,
    cli_dir: &Option<PathBuf>,
    no_demo: bool,
) -> Result<ExitCode> {
    // Refuse an existing file before the solves, not after them.
    if let Some(target) = output {
        super::files::check_replace(target, force)?;
    }
    let (supply, file) = resolve(name, cli_dir, no_demo)?;
    let visit = pick_visit(&supply, date)?;
    let html = crate::record::of_visit(&supply, visit, &file)
        .map_err(|e| anyhow::anyhow!("{file}: {e}"))?;
    match output {
        None => written(out.write_all(html.as_bytes()))?,
        Some(target) => {
            let result = if force {
                crate::library::store::write_atomic(target, html.as_bytes())
            } else {
                // Created, never replaced: a file that appeared since the check is refused.
                crate::library::store::write_new(target, html.as_bytes())
            };
            result.map_err(|e| {
                anyhow::anyhow!(
                    "{}: cannot write: {e}; nothing was written",
                    target.display()
                )
            })?;
            written(writeln!(
                out,
                "service record of {} ({}) written to {}",
                printable(&supply.name),
                visit.date_text(),
                printable(&target.display().to_string())
            ))?;
        }
    }
    Ok(ExitCode::SUCCESS)
}
