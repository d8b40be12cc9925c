//! railcheck's command line: parse, dispatch, map the outcome to an exit status. Each command
//! lives in `railcheck::cli`.

use clap::Parser;
use railcheck::cli::{self, Cli, Command, OutputError, warn};
use std::io::Write as _;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = Cli::parse();
    let what = Command::output_words(cli.command.as_ref());
    let mut stdout = std::io::stdout();
    // Whatever is still buffered is written here, so that its failure is seen too.
    let outcome = cli::dispatch(cli, &mut stdout).and_then(|code| {
        stdout.flush().map_err(OutputError)?;
        Ok(code)
    });
    match outcome {
        Ok(code) => code,
        Err(e) => match e.downcast_ref::<OutputError>() {
            // A reader that went away (`railcheck list | head`): quiet, as Unix tools are.
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
