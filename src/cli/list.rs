//! `railcheck list`: the library's supplies, unreadable files with their error.

use super::written;
use crate::escape::printable;
use crate::library::{Entry, EntryState, Library};
use anyhow::Result;
use std::io::Write;
use std::path::Path;
use std::process::ExitCode;

/// Writes the entries of the library in `dir`: text, or one JSON object per line.
pub fn render(
    out: &mut impl Write,
    dir: &Path,
    entries: &[Entry],
    json: bool,
) -> std::io::Result<()> {
    if !json {
        writeln!(out, "Library: {}", printable(&dir.display().to_string()))?;
    }
    // Two files may carry one name (copied by hand, synced from two machines): both are
    // listed, with their files, and a command given that name asks which.
    let shared_name = |name: &str| {
        entries
            .iter()
            .filter(|e| {
                e.supply()
                    .is_some_and(|s| s.name.eq_ignore_ascii_case(name))
            })
            .count()
            > 1
    };
    for e in entries {
        let file = e.file.display().to_string();
        match &e.state {
            EntryState::Ok { supply, .. } => {
                let last = supply.visits.iter().map(|v| v.date_text()).max();
                if json {
                    writeln!(
                        out,
                        "{}",
                        serde_json::json!({"name": supply.name, "file": file, "status": "ok",
                            "error": null, "visits": supply.visits.len(), "last_visit": last})
                    )?;
                } else {
                    let same = if shared_name(&supply.name) {
                        format!("  (name shared: {})", printable(&file.to_string()))
                    } else {
                        String::new()
                    };
                    writeln!(
                        out,
                        "  {:<40} {:>2} visits  last {:<10}  {}{same}",
                        printable(&supply.name),
                        supply.visits.len(),
                        last.unwrap_or_else(|| "-".into()),
                        supply.rectifier.topology.key()
                    )?;
                }
            }
            EntryState::Unreadable { error } => {
                if json {
                    writeln!(
                        out,
                        "{}",
                        serde_json::json!({"name": e.name(), "file": file, "status": "unreadable",
                            "error": error, "visits": null, "last_visit": null})
                    )?;
                } else {
                    writeln!(
                        out,
                        "  {:<40} UNREADABLE (left untouched): {}",
                        printable(&e.name()),
                        printable(error)
                    )?;
                }
            }
        }
    }
    Ok(())
}

/// Lists the library `lib`.
pub fn run(out: &mut impl Write, lib: &Library, json: bool) -> Result<ExitCode> {
    let entries = lib.load()?;
    written(render(out, &lib.dir, &entries, json))?;
    Ok(ExitCode::SUCCESS)
}
