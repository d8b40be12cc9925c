//! railcheck's command line: parse, dispatch, map the outcome to an exit status.

use anyhow::{Context, Result, bail};
use clap::{Parser, Subcommand};
use railcheck::analysis::cautions::SAFE_TOUCH_V;
use railcheck::analysis::sizing::{self, Target};
use railcheck::report;
use railcheck::supply::Supply;
use railcheck::units::format_si;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

const EXIT_STATUS: &str = "Exit status: 0 success; 1 a rating check failed (report); \
                           2 bad input or I/O trouble.\n\
                           Mains and charged capacitors can kill: verify with a meter before \
                           touching; follow local codes and licensed practice.";

/// What a transformer-rectifier-capacitor DC supply should read, from the real circuit.
#[derive(Parser)]
#[command(name = "railcheck", version, after_help = EXIT_STATUS)]
struct Cli {
    #[command(subcommand)]
    command: Option<Command>,
}

#[derive(Subcommand)]
enum Command {
    /// Solve supplies: nominal and worst-case figures, hand estimate, rating checks, cautions.
    Report {
        /// Supply files (TOML).
        #[arg(required = true)]
        files: Vec<PathBuf>,
        /// One JSON object per line per file instead of text.
        #[arg(long)]
        json: bool,
        /// Voltage taken as safe to touch, for the discharge caution (volts DC).
        #[arg(long, default_value_t = SAFE_TOUCH_V, value_name = "V")]
        touch_v: f64,
    },
    /// The smallest E6 and E12 filter capacitor meeting a target at the worst case.
    Size {
        /// Supply file (TOML).
        file: PathBuf,
        /// Worst-case ripple peak-peak at most this (volts).
        #[arg(
            long,
            value_name = "V",
            conflicts_with = "headroom",
            required_unless_present = "headroom"
        )]
        ripple_pp: Option<f64>,
        /// Worst-case valley this far above the regulator's output plus dropout (volts); with
        /// no regulator, the lowest valley itself.
        #[arg(long, value_name = "V")]
        headroom: Option<f64>,
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
        Some(Command::Report {
            files,
            json,
            touch_v,
        }) => run_report(&files, json, touch_v),
        Some(Command::Size {
            file,
            ripple_pp,
            headroom,
            json,
        }) => run_size(&file, ripple_pp, headroom, json),
    }
}

fn load(path: &Path) -> Result<Supply> {
    let text = std::fs::read_to_string(path)
        .with_context(|| format!("{}: cannot read the file", path.display()))?;
    Supply::from_toml_str(&text).map_err(|e| anyhow::anyhow!("{}: {e}", path.display()))
}

/// Reports each file in turn; a file that cannot be read or solved is named on stderr and the
/// rest still report (exit status 2 if any failed, else 1 if a rating check failed).
fn run_report(files: &[PathBuf], json: bool, touch_v: f64) -> Result<ExitCode> {
    if !(touch_v.is_finite() && touch_v > 0.0 && touch_v <= 1000.0) {
        bail!("--touch-v must be between 0 and 1000 V (got {touch_v})");
    }
    let mut bad = false;
    let mut check_failed = false;
    for (i, path) in files.iter().enumerate() {
        let outcome = load(path).and_then(|supply| {
            report::build(supply, &path.display().to_string(), touch_v)
                .map_err(|e| anyhow::anyhow!("{}: {e}", path.display()))
        });
        match outcome {
            Ok(r) => {
                check_failed |= r.any_failed();
                if json {
                    println!("{}", r.json());
                } else {
                    if i > 0 {
                        println!();
                    }
                    print!("{}", r.text());
                }
            }
            Err(e) => {
                eprintln!("railcheck: {e:#}");
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

fn run_size(
    path: &Path,
    ripple_pp: Option<f64>,
    headroom: Option<f64>,
    json: bool,
) -> Result<ExitCode> {
    let supply = load(path)?;
    let target = match (ripple_pp, headroom) {
        (Some(v), _) => Target::RipplePp(v),
        (None, Some(v)) => Target::Headroom(v),
        (None, None) => bail!("give --ripple-pp V or --headroom V"),
    };
    let sized =
        sizing::size(&supply, target).map_err(|e| anyhow::anyhow!("{}: {e}", path.display()))?;
    if json {
        println!(
            "{}",
            serde_json::json!({
                "name": supply.name,
                "file": path.display().to_string(),
                "target": target,
                "derating": sizing::DERATING,
                "capacitors": sized,
            })
        );
        return Ok(ExitCode::SUCCESS);
    }
    println!("{}", supply.name);
    if supply.filter.kind == railcheck::supply::FilterKind::None {
        println!("  no filter capacitor now: sizing the capacitor to add across the rail");
    }
    match target {
        Target::RipplePp(v) => println!(
            "  target: worst-case ripple at most {}",
            format_si(v, "V p-p")
        ),
        Target::Headroom(v) => println!(
            "  target: worst-case valley at least {} above what the regulator needs",
            format_si(v, "V")
        ),
    }
    for s in &sized {
        let rating = match s.rated_v {
            Some(r) => format!("{r} V"),
            None => "above 450 V: use capacitors in series with balancing resistors".into(),
        };
        println!(
            "  {:<4} {:>9}  rated {}  ripple current {} RMS  (worst ripple {}, valley {}, peak {})",
            s.series,
            format_si(s.uf * 1e-6, "F"),
            rating,
            format_si(s.ripple_a, "A"),
            format_si(s.worst_ripple_pp_v, "V"),
            format_si(s.worst_valley_v, "V"),
            format_si(s.worst_peak_v, "V"),
        );
    }
    println!(
        "  voltage rating keeps the worst peak within {:.0} % of it (usual derating)",
        sizing::DERATING * 100.0
    );
    Ok(ExitCode::SUCCESS)
}
