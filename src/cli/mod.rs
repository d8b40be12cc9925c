//! The command line as a shell around the core: its arguments ([`args`]), the dispatch of each
//! command ([`dispatch`]), and each command's text in a module of its own, written to any
//! `std::io::Write` so that it can be read in a test without a process. `main.rs` only parses,
//! calls [`dispatch`] and turns the outcome into an exit status.

pub mod args;
pub mod calibrate;
pub mod diagnose;
mod files;
pub mod list;
pub mod log;
pub mod record;
pub mod report;
pub mod shell;
pub mod size;
pub mod words;

pub use args::{Cli, Command};

use crate::diagnose::Readings;
use crate::escape::printable;
use anyhow::{Result, bail};
use files::{library, resolve};
use std::io::{IsTerminal as _, Write};
use std::process::ExitCode;

/// A write to stdout that failed. A reader that went away (`railcheck list | head`) ends the
/// program quietly, as Unix tools do; any other failure (a full disk, `> /dev/full`) is exit
/// status 2 with a message, never a success.
#[derive(Debug)]
pub struct OutputError(pub std::io::Error);

impl std::fmt::Display for OutputError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "stdout: {}", self.0)
    }
}

impl std::error::Error for OutputError {}

/// A rendering's write failure as an [`OutputError`], so that it is told apart from bad input.
pub(crate) fn written(result: std::io::Result<()>) -> Result<()> {
    result.map_err(|e| OutputError(e).into())
}

/// Print a message to stderr, its control characters escaped (it may quote a file). A stderr
/// that cannot be written to has nowhere to be reported, so the failure is let go rather than
/// turned into a panic as `eprintln!` would.
pub fn warn(message: &str) {
    let _ = writeln!(std::io::stderr(), "railcheck: {}", printable(message));
}

/// What `diagnose` keeps of its readings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Save {
    No,
    /// A visit with the verdict.
    Visit,
    /// A visit marked as the unit's baseline, and the calibration fitted to it.
    Baseline,
}

/// Runs the command of `cli`, writing what it shows to `out`: the exit status, or the error
/// (an [`OutputError`] when `out` failed, anything else bad input or I/O trouble).
pub fn dispatch(cli: Cli, out: &mut impl Write) -> Result<ExitCode> {
    let (dir, no_demo) = (&cli.library, cli.no_demo);
    match cli.command {
        None => {
            // The screen needs a terminal on both ends; without one, say so before the library
            // is opened (or created and seeded) for nothing.
            if !(std::io::stdin().is_terminal() && std::io::stdout().is_terminal()) {
                bail!(
                    "the screen needs a terminal (stdin and stdout are not one): run railcheck \
                     in a terminal, or use a command such as `railcheck list` or \
                     `railcheck report NAME` (see `railcheck --help`)"
                );
            }
            let lib = library(dir, no_demo)?;
            let app = crate::tui::app::App::new(lib)?;
            crate::tui::run(app)?;
            Ok(ExitCode::SUCCESS)
        }
        Some(Command::Report {
            files,
            json,
            touch_v,
            spread,
            solid_state,
        }) => report::run(
            out,
            &files,
            json,
            touch_v,
            report::Extras {
                spread,
                solid_state,
            },
            dir,
            no_demo,
        ),
        Some(Command::Size {
            file,
            ripple_pp,
            headroom,
            min_valley,
            json,
        }) => {
            let (supply, file) = resolve(&file, dir, no_demo)?;
            let target = size::target(&supply, ripple_pp, headroom, min_valley)?;
            size::run(out, &supply, &file, target, json)
        }
        Some(Command::List { json }) => list::run(out, &library(dir, no_demo)?, json),
        Some(Command::Import { files, rename }) => {
            let lib = library(dir, no_demo)?;
            let mut bad = false;
            for f in &files {
                match lib.import(f, rename) {
                    Ok(path) => written(writeln!(
                        out,
                        "imported {} as {}",
                        printable(&f.display().to_string()),
                        printable(&path.display().to_string())
                    ))?,
                    Err(e) => {
                        warn(&e.to_string());
                        bad = true;
                    }
                }
            }
            Ok(if bad {
                ExitCode::from(2)
            } else {
                ExitCode::SUCCESS
            })
        }
        Some(Command::Export {
            name,
            output,
            force,
        }) => {
            if let Some(target) = &output {
                files::check_export_target(target, force, dir)?;
            }
            let text = files::export_text(&name, dir, no_demo)?;
            match output {
                None => written(out.write_all(text.as_bytes()))?,
                Some(target) => {
                    crate::library::store::write_atomic(&target, text.as_bytes()).map_err(|e| {
                        anyhow::anyhow!(
                            "{}: cannot write: {e}; nothing was written",
                            target.display()
                        )
                    })?;
                }
            }
            Ok(ExitCode::SUCCESS)
        }
        Some(Command::Diagnose {
            name,
            mains,
            secondary,
            dc,
            ripple_pp,
            ripple_rms,
            ripple_hz,
            load,
            lines,
            json,
            save,
            baseline,
        }) => {
            let line_vrms = match lines {
                None => None,
                Some(v) => Some(<[f64; 3]>::try_from(v.as_slice()).map_err(|_| {
                    anyhow::anyhow!(
                        "--lines takes the three line-to-line voltages a-b,b-c,c-a (volts); \
                         got {} value(s)",
                        v.len()
                    )
                })?),
            };
            let readings = Readings {
                mains_vrms: mains,
                secondary_vac: secondary,
                dc_v: dc,
                ripple_pp_v: ripple_pp,
                ripple_rms_v: ripple_rms,
                ripple_hz,
                load_a: load,
                line_vrms,
            };
            let save = if baseline {
                Save::Baseline
            } else if save {
                Save::Visit
            } else {
                Save::No
            };
            diagnose::run(out, &name, readings, json, save, dir, no_demo)
        }
        Some(Command::Calibrate { name, visit, json }) => {
            calibrate::run(out, &name, visit.as_deref(), json, dir, no_demo)
        }
        Some(Command::Log { name, json, csv }) => {
            let (supply, _) = resolve(&name, dir, no_demo)?;
            let format = match (json, csv) {
                (true, _) => log::Format::Json,
                (false, true) => log::Format::Csv,
                (false, false) => log::Format::Text,
            };
            log::run(out, &supply, format)
        }
        Some(Command::Record {
            name,
            visit,
            output,
            force,
        }) => record::run(
            out,
            &name,
            visit.as_deref(),
            output.as_deref(),
            force,
            dir,
            no_demo,
        ),
        Some(Command::Completions { shell }) => {
            written(out.write_all(&shell::completions(shell)))?;
            Ok(ExitCode::SUCCESS)
        }
        Some(Command::Manpage) => {
            written(out.write_all(&shell::manpage()?))?;
            Ok(ExitCode::SUCCESS)
        }
    }
}
