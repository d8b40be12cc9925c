//! railcheck's command line: parse, dispatch, map the outcome to an exit status.

use anyhow::{Context, Result};
use clap::{Parser, Subcommand};
use railcheck::report;
use railcheck::supply::Supply;
use std::process::ExitCode;

const EXIT_STATUS: &str = "Exit status: 0 success; 1 a check failed; 2 bad input or I/O trouble.";

/// What a transformer-rectifier-capacitor DC supply should read, from the real circuit.
#[derive(Parser)]
#[command(name = "railcheck", version, after_help = EXIT_STATUS)]
struct Cli {
    #[command(subcommand)]
    command: Option<Command>,
}

#[derive(Subcommand)]
enum Command {
    /// Solve supplies and print their figures, hand estimate and cautions.
    Report {
        /// Supply files (TOML).
        #[arg(required = true)]
        files: Vec<std::path::PathBuf>,
        /// One JSON object per line per file instead of text.
        #[arg(long)]
        json: bool,
    },
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match try_main(cli) {
        Ok(code) => code,
        // Bad input or I/O trouble: the message goes to stderr and the exit status is 2.
        Err(e) => {
            eprintln!("railcheck: {e:#}");
            ExitCode::from(2)
        }
    }
}

fn try_main(cli: Cli) -> Result<ExitCode> {
    match cli.command {
        None => {
            use clap::CommandFactory;
            Cli::command().print_help().ok();
            println!();
            Ok(ExitCode::SUCCESS)
        }
        Some(Command::Report { files, json }) => run_report(&files, json),
    }
}

fn load(path: &std::path::Path) -> Result<Supply> {
    let text = std::fs::read_to_string(path)
        .with_context(|| format!("{}: cannot read the file", path.display()))?;
    Supply::from_toml_str(&text).map_err(|e| anyhow::anyhow!("{}: {e}", path.display()))
}

/// Reports each file in turn; a file that cannot be read or solved is named on stderr and the
/// rest still report (exit status 2 if any failed).
fn run_report(files: &[std::path::PathBuf], json: bool) -> Result<ExitCode> {
    let mut failed = false;
    let mut first = true;
    for path in files {
        let outcome = load(path).and_then(|supply| {
            report::build(supply, &path.display().to_string())
                .map_err(|e| anyhow::anyhow!("{}: {e}", path.display()))
        });
        match outcome {
            Ok(r) if json => println!("{}", r.json()),
            Ok(r) => {
                if !first {
                    println!();
                }
                print!("{}", r.text());
            }
            Err(e) => {
                eprintln!("railcheck: {e:#}");
                failed = true;
            }
        }
        first = false;
    }
    Ok(if failed {
        ExitCode::from(2)
    } else {
        ExitCode::SUCCESS
    })
}
