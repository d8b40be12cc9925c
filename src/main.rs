//! railcheck's command line: parse, dispatch, map the outcome to an exit status.

use anyhow::{Context, Result, bail};
use clap::{Parser, Subcommand};
use railcheck::analysis::cautions::SAFE_TOUCH_V;
use railcheck::analysis::sizing::{self, Target};
use railcheck::diagnose::{self, Readings};
use railcheck::escape::printable;
use railcheck::library::{EntryState, Library};
use railcheck::report;
use railcheck::supply::Supply;
use railcheck::units::{format_number, format_si};
use std::io::IsTerminal as _;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// A write to stdout that failed. A reader that went away (`railcheck list | head`) ends the
/// program quietly, as Unix tools do; any other failure (a full disk, `> /dev/full`) is exit
/// status 2 with a message, never a success.
#[derive(Debug)]
struct OutputError(std::io::Error);

impl std::fmt::Display for OutputError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "stdout: {}", self.0)
    }
}

impl std::error::Error for OutputError {}

/// Print a line to stdout; a failed write returns from the command with an [`OutputError`].
macro_rules! outln {
    ($($t:tt)*) => {{
        use std::io::Write as _;
        writeln!(std::io::stdout(), $($t)*).map_err(OutputError)?;
    }};
}

macro_rules! out {
    ($($t:tt)*) => {{
        use std::io::Write as _;
        write!(std::io::stdout(), $($t)*).map_err(OutputError)?;
    }};
}

/// Print a message to stderr, its control characters escaped (it may quote a file). A stderr
/// that cannot be written to has nowhere to be reported, so the failure is let go rather than
/// turned into a panic as `eprintln!` would.
fn warn(message: &str) {
    use std::io::Write as _;
    let _ = writeln!(std::io::stderr(), "railcheck: {}", printable(message));
}

const EXIT_STATUS: &str = "Exit status: 0 success; 1 a rating check failed (report); \
                           2 bad input or I/O trouble.\n\
                           Mains and charged capacitors can kill: verify with a meter before \
                           touching; follow local codes and licensed practice.";

/// What a transformer-rectifier-capacitor DC supply should read, from the real circuit.
/// With no command, opens the screen on the library.
#[derive(Parser)]
#[command(name = "railcheck", version, after_help = EXIT_STATUS)]
struct Cli {
    /// The library folder (default: RAILCHECK_LIBRARY, else the platform's data folder).
    #[arg(long, global = true, value_name = "DIR")]
    library: Option<PathBuf>,
    /// On first use, create an empty library instead of one with the demo supplies.
    #[arg(long, global = true)]
    no_demo: bool,
    #[command(subcommand)]
    command: Option<Command>,
}

#[derive(Subcommand)]
enum Command {
    /// Solve supplies: nominal and worst-case figures, hand estimate, rating checks, cautions.
    Report {
        /// Supply files (TOML), or names of supplies in the library.
        #[arg(required = true, value_name = "NAME_OR_FILE")]
        files: Vec<String>,
        /// One JSON object per line per file instead of text.
        #[arg(long)]
        json: bool,
        /// Voltage taken as safe to touch, for the discharge caution (volts DC).
        #[arg(long, default_value_t = SAFE_TOUCH_V, value_name = "V")]
        touch_v: f64,
        /// Add a seeded statistical spread (2,000 samples): each figure's 1st-99th percentile.
        #[arg(long)]
        spread: bool,
    },
    /// The smallest E6 and E12 filter capacitor meeting a target at the worst case.
    Size {
        /// Supply file (TOML), or the name of a supply in the library.
        #[arg(value_name = "NAME_OR_FILE")]
        file: String,
        /// Worst-case ripple peak-peak at most this (volts).
        #[arg(
            long,
            value_name = "V",
            conflicts_with = "headroom",
            required_unless_present = "headroom",
            allow_negative_numbers = true
        )]
        ripple_pp: Option<f64>,
        /// Worst-case valley this far above the regulator's output plus dropout (volts); with
        /// no regulator, the lowest valley itself.
        #[arg(long, value_name = "V", allow_negative_numbers = true)]
        headroom: Option<f64>,
        #[arg(long)]
        json: bool,
    },
    /// List the library's supplies (unreadable files too, with their error).
    List {
        /// One JSON object per line: name, file, status, error, visits, last_visit.
        #[arg(long)]
        json: bool,
    },
    /// Validate supply files and copy them into the library.
    Import {
        #[arg(required = true)]
        files: Vec<PathBuf>,
        /// Keep both when the name is already in the library, giving the copy a new name.
        #[arg(long)]
        rename: bool,
    },
    /// Write a supply's file (with its visits and comments) to stdout or a file.
    Export {
        #[arg(value_name = "NAME_OR_FILE")]
        name: String,
        /// Write to FILE, which must not exist yet (see --force) and must be outside the
        /// library folder.
        #[arg(short, long, value_name = "FILE")]
        output: Option<PathBuf>,
        /// Replace FILE if it exists (its previous version is kept as FILE.bak).
        #[arg(long, requires = "output")]
        force: bool,
    },
    /// Compare readings with what the supply should read and rank the faults that fit.
    Diagnose {
        #[arg(value_name = "NAME_OR_FILE")]
        name: String,
        /// Mains RMS volts at the outlet.
        #[arg(long, value_name = "V", allow_negative_numbers = true)]
        mains: Option<f64>,
        /// Secondary AC volts, whole winding (RMS).
        #[arg(long, value_name = "V", allow_negative_numbers = true)]
        secondary: Option<f64>,
        /// DC volts on the rail.
        #[arg(long, value_name = "V", allow_negative_numbers = true)]
        dc: Option<f64>,
        /// Ripple peak-peak, scope AC coupled (volts).
        #[arg(
            long,
            value_name = "V",
            conflicts_with = "ripple_rms",
            allow_negative_numbers = true
        )]
        ripple_pp: Option<f64>,
        /// Ripple RMS, true-RMS meter on AC volts across the rail.
        #[arg(long, value_name = "V", allow_negative_numbers = true)]
        ripple_rms: Option<f64>,
        /// Ripple frequency (hertz).
        #[arg(long, value_name = "HZ", allow_negative_numbers = true)]
        ripple_hz: Option<f64>,
        /// Load current (amps).
        #[arg(long, value_name = "A", allow_negative_numbers = true)]
        load: Option<f64>,
        #[arg(long)]
        json: bool,
        /// Record the readings and the verdict as a visit in the library.
        #[arg(long)]
        save: bool,
        /// The unit is known good (after a repair, at commissioning): record the readings as
        /// its baseline visit and calibrate the unit on them (implies --save; needs --mains
        /// and --dc).
        #[arg(long)]
        baseline: bool,
    },
    /// Calibrates a unit on a known-good visit of its own: fits what its file cannot state
    /// (the winding's resistance in service, the mains crest, the capacitors' effective value)
    /// to that visit's readings and stores it in the file's [calibration] table.
    Calibrate {
        #[arg(value_name = "NAME")]
        name: String,
        /// The visit's date (YYYY-MM-DD); the latest visit when left out.
        #[arg(long, value_name = "DATE")]
        visit: Option<String>,
        #[arg(long)]
        json: bool,
    },
    /// A supply's visits, newest first, with their readings and the capacitance trend.
    Log {
        #[arg(value_name = "NAME_OR_FILE")]
        name: String,
        #[arg(long)]
        json: bool,
    },
}

/// The library folder the command line works on: --library, RAILCHECK_LIBRARY, or the
/// default.
fn library_dir(cli_dir: &Option<PathBuf>) -> Result<PathBuf> {
    Ok(match (cli_dir, std::env::var_os("RAILCHECK_LIBRARY")) {
        (Some(d), _) => d.clone(),
        (None, Some(d)) if !d.is_empty() => PathBuf::from(d),
        _ => Library::default_dir().context("no data folder on this system: give --library DIR")?,
    })
}

/// The library the command line works on, opened (created on first use).
fn library(cli_dir: &Option<PathBuf>, no_demo: bool) -> Result<Library> {
    Ok(Library::open(&library_dir(cli_dir)?, !no_demo)?)
}

/// True if `path` names an existing entry that is not a folder: a file to read (or to refuse
/// with the reason it is not a plain file), not a name to look up.
fn names_a_file(path: &Path) -> bool {
    std::fs::symlink_metadata(path).is_ok_and(|m| !m.is_dir())
}

/// A supply named on the command line: an existing file, or a name in the library.
fn resolve(arg: &str, cli_dir: &Option<PathBuf>, no_demo: bool) -> Result<(Supply, String)> {
    let path = Path::new(arg);
    if names_a_file(path) {
        return Ok((load(path)?, path.display().to_string()));
    }
    // Something written as a path is a file that is not there, not a name to look up.
    if arg.contains(['/', '\\']) || arg.ends_with(".toml") {
        bail!("{arg}: no such supply file");
    }
    let lib = library(cli_dir, no_demo)?;
    let entry = lib.find(arg)?;
    match entry.state {
        EntryState::Ok { supply, .. } => Ok((*supply, entry.file.display().to_string())),
        EntryState::Unreadable { error } => bail!("{}: {error}", entry.file.display()),
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let what = match &cli.command {
        None => "the screen",
        Some(Command::Report { .. }) => "the report",
        Some(Command::Size { .. }) => "the sizing",
        Some(Command::List { .. }) => "the list",
        Some(Command::Import { .. }) => "the import summary",
        Some(Command::Export { .. }) => "the exported file",
        Some(Command::Diagnose { .. }) => "the diagnosis",
        Some(Command::Log { .. }) => "the log",
        Some(Command::Calibrate { .. }) => "the calibration",
    };
    // Whatever is still buffered is written here, so that its failure is seen too.
    let outcome = try_main(cli).and_then(|code| {
        use std::io::Write as _;
        std::io::stdout().flush().map_err(OutputError)?;
        Ok(code)
    });
    match outcome {
        Ok(code) => code,
        Err(e) => match e.downcast_ref::<OutputError>() {
            Some(OutputError(io)) if io.kind() == std::io::ErrorKind::BrokenPipe => {
                ExitCode::SUCCESS
            }
            Some(OutputError(io)) => {
                warn(&format!(
                    "{what} was not written (all or part) to stdout: {io}"
                ));
                ExitCode::from(2)
            }
            // Bad input or I/O trouble: the message goes to stderr and the exit status is 2.
            None => {
                warn(&format!("{e:#}"));
                ExitCode::from(2)
            }
        },
    }
}

fn try_main(cli: Cli) -> Result<ExitCode> {
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
            let lib = library(&cli.library, cli.no_demo)?;
            let app = railcheck::tui::app::App::new(lib)?;
            railcheck::tui::run(app)?;
            Ok(ExitCode::SUCCESS)
        }
        Some(Command::Report {
            files,
            json,
            touch_v,
            spread,
        }) => run_report(&files, json, touch_v, spread, &cli.library, cli.no_demo),
        Some(Command::Size {
            file,
            ripple_pp,
            headroom,
            json,
        }) => {
            let (supply, file) = resolve(&file, &cli.library, cli.no_demo)?;
            run_size(supply, &file, ripple_pp, headroom, json)
        }
        Some(Command::List { json }) => run_list(&library(&cli.library, cli.no_demo)?, json),
        Some(Command::Import { files, rename }) => {
            let lib = library(&cli.library, cli.no_demo)?;
            let mut bad = false;
            for f in &files {
                match lib.import(f, rename) {
                    Ok(path) => outln!(
                        "imported {} as {}",
                        printable(&f.display().to_string()),
                        printable(&path.display().to_string())
                    ),
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
            if let Some(out) = &output {
                check_export_target(out, force, &cli.library)?;
            }
            let text = export_text(&name, &cli.library, cli.no_demo)?;
            match output {
                None => out!("{text}"),
                Some(out) => {
                    railcheck::library::store::write_atomic(&out, text.as_bytes()).map_err(
                        |e| {
                            anyhow::anyhow!(
                                "{}: cannot write: {e}; nothing was written",
                                out.display()
                            )
                        },
                    )?;
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
            json,
            save,
            baseline,
        }) => {
            let readings = Readings {
                mains_vrms: mains,
                secondary_vac: secondary,
                dc_v: dc,
                ripple_pp_v: ripple_pp,
                ripple_rms_v: ripple_rms,
                ripple_hz,
                load_a: load,
            };
            let save = if baseline {
                Save::Baseline
            } else if save {
                Save::Visit
            } else {
                Save::No
            };
            run_diagnose(&name, readings, json, save, &cli.library, cli.no_demo)
        }
        Some(Command::Calibrate { name, visit, json }) => {
            run_calibrate(&name, visit.as_deref(), json, &cli.library, cli.no_demo)
        }
        Some(Command::Log { name, json }) => {
            let (supply, _) = resolve(&name, &cli.library, cli.no_demo)?;
            run_log(&supply, json)
        }
    }
}

/// Reads a plain file named on the command line (never waiting on a named pipe).
fn read_text(path: &Path) -> Result<String> {
    let bytes = railcheck::library::store::read_plain(path, true)
        .map_err(|e| anyhow::anyhow!("{}: cannot read the file: {e}", path.display()))?;
    String::from_utf8(bytes).map_err(|_| anyhow::anyhow!("{}: not UTF-8 text", path.display()))
}

fn load(path: &Path) -> Result<Supply> {
    let text = read_text(path)?;
    Supply::from_toml_str(&text).map_err(|e| anyhow::anyhow!("{}: {e}", path.display()))
}

/// `export -o FILE` never replaces a file unasked and never writes into the library folder
/// (where it would overwrite, or shadow, a supply).
fn check_export_target(out: &Path, force: bool, cli_dir: &Option<PathBuf>) -> Result<()> {
    let parent = out
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let parent = std::fs::canonicalize(parent)
        .map_err(|e| anyhow::anyhow!("{}: cannot write there: {e}", out.display()))?;
    if let Ok(lib) = std::fs::canonicalize(library_dir(cli_dir)?)
        && parent == lib
    {
        bail!(
            "{}: is in the library folder, where a file would overwrite or shadow a supply; \
             nothing was written (export elsewhere, or use `railcheck import`)",
            out.display()
        );
    }
    if let Ok(meta) = std::fs::symlink_metadata(out) {
        if meta.file_type().is_symlink() {
            bail!(
                "{}: is a symbolic link; railcheck does not replace a link with a file; nothing \
                 was written (name its target)",
                out.display()
            );
        }
        if !force {
            bail!(
                "{}: already exists; nothing was written (give --force to replace it, keeping \
                 the old one as .bak)",
                out.display()
            );
        }
    }
    Ok(())
}

/// Reports each file in turn; a file that cannot be read or solved is named on stderr and the
/// rest still report (exit status 2 if any failed, else 1 if a rating check failed).
fn run_report(
    files: &[String],
    json: bool,
    touch_v: f64,
    spread: bool,
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
            let built = if spread {
                report::build_with_spread(supply, &file, touch_v)
            } else {
                report::build(supply, &file, touch_v)
            };
            built.map_err(|e| anyhow::anyhow!("{file}: {e}"))
        });
        match outcome {
            Ok(r) => {
                check_failed |= r.any_failed();
                if json {
                    outln!("{}", r.json());
                } else {
                    if i > 0 {
                        outln!("");
                    }
                    out!("{}", r.text());
                }
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

fn run_size(
    supply: Supply,
    file: &str,
    ripple_pp: Option<f64>,
    headroom: Option<f64>,
    json: bool,
) -> Result<ExitCode> {
    let target = match (ripple_pp, headroom) {
        (Some(v), _) => Target::RipplePp(v),
        (None, Some(v)) => Target::Headroom(v),
        (None, None) => bail!("give --ripple-pp V or --headroom V"),
    };
    let sized = sizing::size(&supply, target).map_err(|e| anyhow::anyhow!("{file}: {e}"))?;
    if json {
        outln!(
            "{}",
            serde_json::json!({
                "name": supply.name,
                "file": file,
                "target": target,
                "derating": sizing::DERATING,
                "capacitors": sized,
            })
        );
        return Ok(ExitCode::SUCCESS);
    }
    outln!("{}", printable(&supply.name));
    if supply.filter.kind == railcheck::supply::FilterKind::None {
        outln!("  no filter capacitor now: sizing the capacitor to add across the rail");
    }
    match target {
        Target::RipplePp(v) => outln!(
            "  target: worst-case ripple at most {}",
            format_si(v, "V p-p")
        ),
        Target::Headroom(v) => outln!(
            "  target: worst-case valley at least {} above what the regulator needs",
            format_si(v, "V")
        ),
    }
    for s in &sized {
        let rating = match s.rated_v {
            Some(r) => format!("{r} V"),
            None => "above 450 V: use capacitors in series with balancing resistors".into(),
        };
        outln!(
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
    outln!(
        "  voltage rating keeps the worst peak within {:.0} % of it (usual derating)",
        sizing::DERATING * 100.0
    );
    Ok(ExitCode::SUCCESS)
}

fn run_list(lib: &Library, json: bool) -> Result<ExitCode> {
    let entries = lib.load()?;
    if !json {
        outln!("Library: {}", printable(&lib.dir.display().to_string()));
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
    for e in &entries {
        let file = e.file.display().to_string();
        match &e.state {
            EntryState::Ok { supply, .. } => {
                let last = supply.visits.iter().map(|v| v.date_text()).max();
                if json {
                    outln!(
                        "{}",
                        serde_json::json!({"name": supply.name, "file": file, "status": "ok",
                            "error": null, "visits": supply.visits.len(), "last_visit": last})
                    );
                } else {
                    let same = if shared_name(&supply.name) {
                        format!("  (name shared: {})", printable(&file.to_string()))
                    } else {
                        String::new()
                    };
                    outln!(
                        "  {:<40} {:>2} visits  last {:<10}  {}{same}",
                        printable(&supply.name),
                        supply.visits.len(),
                        last.unwrap_or_else(|| "-".into()),
                        supply.rectifier.topology.key()
                    );
                }
            }
            EntryState::Unreadable { error } => {
                if json {
                    outln!(
                        "{}",
                        serde_json::json!({"name": e.name(), "file": file, "status": "unreadable",
                            "error": error, "visits": null, "last_visit": null})
                    );
                } else {
                    outln!(
                        "  {:<40} UNREADABLE (left untouched): {}",
                        printable(&e.name()),
                        printable(error)
                    );
                }
            }
        }
    }
    Ok(ExitCode::SUCCESS)
}

fn export_text(name: &str, cli_dir: &Option<PathBuf>, no_demo: bool) -> Result<String> {
    let path = Path::new(name);
    if names_a_file(path) {
        return read_text(path);
    }
    let entry = library(cli_dir, no_demo)?.find(name)?;
    match entry.state {
        EntryState::Ok { text, .. } => Ok(text),
        EntryState::Unreadable { error } => bail!("{}: {error}", entry.file.display()),
    }
}

fn run_log(supply: &Supply, json: bool) -> Result<ExitCode> {
    let trend = diagnose::trend::trend(supply);
    let mut visits: Vec<_> = supply.visits.iter().collect();
    visits.sort_by_key(|v| std::cmp::Reverse(v.date_text()));
    if json {
        let list: Vec<_> = visits
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
        outln!(
            "{}",
            serde_json::json!({"name": supply.name, "visits": list, "trend": trend})
        );
        return Ok(ExitCode::SUCCESS);
    }
    outln!("{}: {} visits", printable(&supply.name), visits.len());
    for v in visits {
        let readings: Vec<String> = v
            .readings
            .present()
            .iter()
            .map(|(k, x)| format!("{k} {}", format_number(*x)))
            .collect();
        outln!("  {}  {}", printable(&v.date_text()), readings.join(", "));
        if !v.technician.is_empty() {
            outln!("              by {}", printable(&v.technician));
        }
        if !v.notes.is_empty() {
            outln!("              {}", printable(&v.notes));
        }
        if !v.replaced.is_empty() {
            outln!(
                "              replaced: {}",
                printable(&v.replaced.join(", "))
            );
        }
    }
    outln!("  Capacitance the readings imply:");
    for p in &trend.points {
        match p.uf {
            Some(uf) => outln!("    {}  {:>8.0} uF", printable(&p.date), uf),
            None => outln!("    {}  (no ripple or DC reading)", printable(&p.date)),
        }
    }
    if let Some(s) = trend.uf_per_year {
        outln!(
            "  Drift {s:+.0} uF a year; limit {:.0} uF ({})",
            trend.limit_uf,
            trend.limit
        );
    }
    if let Some(c) = &trend.crossing {
        let range = match (&c.earliest, &c.latest) {
            (Some(a), Some(b)) => format!(" (between {a} and {b})"),
            (Some(a), None) => format!(" (from {a}; how late is not yet clear)"),
            _ => String::new(),
        };
        if c.already {
            outln!(
                "  Below the limit since about {}{range}: replace the capacitor",
                c.date
            );
        } else {
            outln!("  Projected to cross the limit about {}{range}", c.date);
        }
    }
    outln!("  {}", trend.note);
    Ok(ExitCode::SUCCESS)
}

/// What `diagnose` keeps of its readings.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Save {
    No,
    /// A visit with the verdict.
    Visit,
    /// A visit marked as the unit's baseline, and the calibration fitted to it.
    Baseline,
}

/// The library holding `file`, or a refusal naming `what` needs it.
fn library_holding(
    file: &str,
    what: &str,
    cli_dir: &Option<PathBuf>,
    no_demo: bool,
) -> Result<Library> {
    let lib = library(cli_dir, no_demo)?;
    let in_library = Path::new(file)
        .parent()
        .zip(std::fs::canonicalize(&lib.dir).ok())
        .and_then(|(p, lib_dir)| {
            let p = if p.as_os_str().is_empty() {
                Path::new(".")
            } else {
                p
            };
            std::fs::canonicalize(p).ok().filter(|p| *p == lib_dir)
        })
        .is_some();
    if !in_library {
        bail!("{what}, and {file} is not in the library (railcheck import it first)");
    }
    Ok(lib)
}

fn run_diagnose(
    name: &str,
    readings: Readings,
    json: bool,
    save: Save,
    cli_dir: &Option<PathBuf>,
    no_demo: bool,
) -> Result<ExitCode> {
    let (supply, file) = resolve(name, cli_dir, no_demo)?;
    let d = diagnose::diagnose(&supply, &readings).map_err(|e| anyhow::anyhow!("{e}"))?;
    let today = railcheck::clock::today();
    let mut fitted = None;
    match save {
        Save::No => {}
        Save::Visit => {
            let lib = library_holding(
                &file,
                "--save records a visit in the library",
                cli_dir,
                no_demo,
            )?;
            // The visit is appended to the file as it is at the moment of saving, under the
            // library's lock: visits others recorded meanwhile are kept; a change to the
            // supply's values meanwhile is refused (the verdict would be stale).
            let visit = diagnose::visit_of(&readings, &d, &today);
            let written = lib.append_visit(Path::new(&file), &supply, visit)?;
            if !json {
                outln!(
                    "recorded as a visit in {}",
                    printable(&written.file.display().to_string())
                );
            }
        }
        Save::Baseline => {
            let lib = library_holding(
                &file,
                "--baseline records a visit and a calibration in the library",
                cli_dir,
                no_demo,
            )?;
            let date: railcheck::visit::Date = today.parse().context("today's date")?;
            let fit = diagnose::calibrate::calibrate(&supply, &readings, date)
                .map_err(|e| anyhow::anyhow!("{e}"))?;
            let visit = diagnose::visit_of(&readings, &d, &today);
            let written = lib.record_calibration(
                Path::new(&file),
                &supply,
                fit.calibration.clone(),
                &readings,
                Some(visit),
            )?;
            if !json {
                outln!(
                    "recorded as the baseline visit in {}",
                    printable(&written.file.display().to_string())
                );
            }
            fitted = Some(fit);
        }
    }
    if json {
        let mut v = diagnose::json(&supply, &d);
        if let Some(fit) = &fitted {
            v["calibration"] = calibration_json(&supply, fit);
        }
        outln!("{v}");
        return Ok(ExitCode::SUCCESS);
    }
    outln!("{}: {}", printable(&supply.name), d.verdict.to_uppercase());
    for e in &d.expectations {
        outln!(
            "  {:<14} {:>10}  expected {:.3} ({:.3} .. {:.3})  {}",
            e.reading,
            format_number(e.value),
            e.nominal,
            e.min,
            e.max,
            e.status.to_uppercase()
        );
    }
    outln!("  Most likely first:");
    for h in d.hypotheses.iter().take(5) {
        let est = match h.estimate {
            Some((k, v)) if !k.is_empty() => format!(" [{k} {v:.3}]"),
            _ => String::new(),
        };
        outln!("  {:>5.1} %  {}{}", 100.0 * h.score, h.fault.key(), est);
        outln!("           {}", h.why);
        outln!("           next: {}", h.next_check);
    }
    outln!("  Caution: discharge the filter and verify with a meter before touching.");
    if let Some(fit) = &fitted {
        print_calibration(&supply, fit)?;
    }
    Ok(ExitCode::SUCCESS)
}

/// The calibration as JSON: its values, the windows before and after, the values at a limit.
fn calibration_json(supply: &Supply, fit: &diagnose::calibrate::Fitted) -> serde_json::Value {
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

/// The calibration in words: what was fitted, and each reading's window before and after.
fn print_calibration(supply: &Supply, fit: &diagnose::calibrate::Fitted) -> Result<()> {
    let c = &fit.calibration;
    outln!("Calibrated on the visit of {}:", c.visit);
    if let Some(w) = c.winding_factor {
        outln!("  winding resistance  {w:.3} times the file's (stated, nameplate or assumed)");
    }
    if let Some(k) = c.crest {
        outln!("  mains crest         {k:.3} (a sine is 1.414)");
    }
    if let Some(f) = c.cap_factor {
        outln!(
            "  capacitance         {} uF effective, {f:.3} of the label",
            format_number((f * supply.filter.uf.unwrap_or(0.0) * 10.0).round() / 10.0)
        );
    }
    outln!("  Windows at the visit's mains, before -> after:");
    for (b, a) in fit.before.iter().zip(&fit.after) {
        if b.reading == "mains_vrms" {
            continue;
        }
        outln!(
            "  {:<14} {:>10}  {:.3} .. {:.3}  ->  {:.3} .. {:.3}",
            b.reading,
            format_number(b.value),
            b.min,
            b.max,
            a.min,
            a.max
        );
    }
    for note in &fit.at_limit {
        outln!("  Note: {note}");
    }
    Ok(())
}

fn run_calibrate(
    name: &str,
    date: Option<&str>,
    json: bool,
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
    let written = lib.record_calibration(
        Path::new(&file),
        &supply,
        fit.calibration.clone(),
        &visit.readings,
        None,
    )?;
    if json {
        let mut v = calibration_json(&supply, &fit);
        v["name"] = serde_json::json!(supply.name);
        v["file"] = serde_json::json!(written.file.display().to_string());
        outln!("{v}");
        return Ok(ExitCode::SUCCESS);
    }
    outln!(
        "{}: calibration stored in {}",
        printable(&supply.name),
        printable(&written.file.display().to_string())
    );
    print_calibration(&supply, &fit)?;
    Ok(ExitCode::SUCCESS)
}
