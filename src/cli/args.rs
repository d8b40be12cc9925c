//! The command line's arguments (clap). The completion scripts and the manual page are drawn
//! from the same definitions, so they cannot drift from what the program accepts.

use crate::analysis::cautions::SAFE_TOUCH_V;
use clap::{ArgGroup, Parser, Subcommand};
use std::path::PathBuf;

const EXIT_STATUS: &str = "Exit status: 0 success; 1 a rating check failed (report); \
                           2 bad input or I/O trouble.\n\
                           Mains and charged capacitors can kill: verify with a meter before \
                           touching; follow local codes and licensed practice.";

/// What a transformer-rectifier-capacitor DC supply should read, from the real circuit.
/// With no command, opens the screen on the library.
#[derive(Parser)]
#[command(name = "railcheck", version, after_help = EXIT_STATUS)]
pub struct Cli {
    /// The library folder (default: RAILCHECK_LIBRARY, else the platform's data folder).
    #[arg(long, global = true, value_name = "DIR")]
    pub library: Option<PathBuf>,
    /// On first use, create an empty library instead of one with the demo supplies.
    #[arg(long, global = true)]
    pub no_demo: bool,
    #[command(subcommand)]
    pub command: Option<Command>,
}

#[derive(Subcommand)]
pub enum Command {
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
        /// A rectifier valve's supply: add the same with silicon junctions in the valve's place
        /// (the rise in B+, the peak currents, the switch-on soar).
        #[arg(long)]
        solid_state: bool,
    },
    /// The smallest E6 and E12 filter capacitor meeting a target at the worst case.
    #[command(group(
        ArgGroup::new("target")
            .required(true)
            .args(["ripple_pp", "headroom", "min_valley"])
    ))]
    Size {
        /// Supply file (TOML), or the name of a supply in the library.
        #[arg(value_name = "NAME_OR_FILE")]
        file: String,
        /// Worst-case ripple peak-peak at most this (volts).
        #[arg(long, value_name = "V", allow_negative_numbers = true)]
        ripple_pp: Option<f64>,
        /// Worst-case valley this far above the regulator's output plus dropout (volts); only
        /// for a supply with a regulator.
        #[arg(long, value_name = "V", allow_negative_numbers = true)]
        headroom: Option<f64>,
        /// Worst-case valley, the rail's lowest point, at least this (volts): the minimum the
        /// load needs, with or without a regulator.
        #[arg(long, value_name = "V", allow_negative_numbers = true)]
        min_valley: Option<f64>,
        /// One JSON line instead of text (for scripts).
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
        #[arg(long, value_name = "V", allow_negative_numbers = true)]
        ripple_pp: Option<f64>,
        /// Ripple RMS, true-RMS meter on AC volts across the rail, or the scope's RMS of the
        /// same capture as the peak-peak (the two together tell a dried capacitor from a
        /// high ESR better than either).
        #[arg(long, value_name = "V", allow_negative_numbers = true)]
        ripple_rms: Option<f64>,
        /// Ripple frequency (hertz).
        #[arg(long, value_name = "HZ", allow_negative_numbers = true)]
        ripple_hz: Option<f64>,
        /// Load current (amps).
        #[arg(long, value_name = "A", allow_negative_numbers = true)]
        load: Option<f64>,
        /// A three-phase supply's three line-to-line voltages at the rectifier (RMS volts,
        /// a-b,b-c,c-a): their mean is the mains reading, their spread the imbalance.
        #[arg(
            long,
            value_name = "V,V,V",
            value_delimiter = ',',
            allow_negative_numbers = true
        )]
        lines: Option<Vec<f64>>,
        /// One JSON line instead of text (for scripts).
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
        /// One JSON line instead of text (for scripts).
        #[arg(long)]
        json: bool,
    },
    /// A supply's visits, newest first: each reading against its window, the verdict, the
    /// capacitance trend.
    Log {
        #[arg(value_name = "NAME_OR_FILE")]
        name: String,
        /// One JSON line instead of text (for scripts).
        #[arg(long)]
        json: bool,
        /// The visits as CSV for a spreadsheet, oldest first: every field, the recorded
        /// verdict, and the windows and verdict worked out now.
        #[arg(long, conflicts_with = "json")]
        csv: bool,
    },
    /// A visit's service record: one self-contained printable HTML page (the unit, the visit,
    /// the readings against their windows, the verdict, what the supply should read, the
    /// sketches, the capacitor's life, the checks and cautions, room to sign) to leave with
    /// the customer.
    Record {
        #[arg(value_name = "NAME_OR_FILE")]
        name: String,
        /// The visit's date (YYYY-MM-DD); the newest visit when left out.
        #[arg(long, value_name = "DATE")]
        visit: Option<String>,
        /// Write the page to FILE (which must not exist yet, see --force) instead of stdout.
        #[arg(short, long, value_name = "FILE")]
        output: Option<PathBuf>,
        /// Replace FILE if it exists (its previous version is kept as FILE.bak).
        #[arg(long, requires = "output")]
        force: bool,
    },
    /// Write the completion script for SHELL to stdout (see the README for where it goes).
    Completions {
        #[arg(value_name = "SHELL")]
        shell: clap_complete::Shell,
    },
    /// Write railcheck's manual page (roff) to stdout.
    Manpage,
}

impl Command {
    /// What the command writes to stdout, for the message when that write fails.
    pub fn output_words(command: Option<&Command>) -> &'static str {
        match command {
            None => "the screen",
            Some(Command::Report { .. }) => "the report",
            Some(Command::Size { .. }) => "the sizing",
            Some(Command::List { .. }) => "the list",
            Some(Command::Import { .. }) => "the import summary",
            Some(Command::Export { .. }) => "the exported file",
            Some(Command::Diagnose { .. }) => "the diagnosis",
            Some(Command::Log { .. }) => "the log",
            Some(Command::Record { .. }) => "the service record",
            Some(Command::Calibrate { .. }) => "the calibration",
            Some(Command::Completions { .. }) => "the completion script",
            Some(Command::Manpage) => "the manual page",
        }
    }
}
