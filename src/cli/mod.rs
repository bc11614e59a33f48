//! The command line: argument parsing ([`args`]) and one small file per command. Commands
//! only read arguments, call the library and print; the work is done in the layers below.
//! A command returns its standard output or a typed [`CliError`]; [`run`] prints the error
//! and maps it to the exit code in one place ([`CliError::exit_code`]).
//!
//! Exit codes: 0 success; 1 a computation failed, the Monte Carlo cross-check disagreed or a
//! selftest case failed; 2 invalid input (an unreadable or invalid architecture file, a bad
//! option value, an output file that cannot be written; the whole rule in [`error`]).

pub mod analyze;
pub mod args;
pub mod check;
pub mod compare;
pub mod demo;
pub mod error;
pub mod report;
pub mod selftest;
pub mod sensitivity;
pub mod sweep;
pub mod tune;
pub mod values;

use std::io::Write as _;
use std::path::Path;
use std::process::ExitCode;

use clap::Parser;

use args::{Cli, Command};
pub use error::{CliError, EXIT_FINDING, EXIT_INPUT, EXIT_OK};

/// Parses the command line, runs the command and returns its exit code.
pub fn run() -> ExitCode {
    let cli = Cli::parse();
    let name = match &cli.command {
        Command::Check(_) => "check",
        Command::Analyze(_) => "analyze",
        Command::Selftest(_) => "selftest",
        Command::Report(_) => "report",
        Command::Demo(_) => "demo",
        Command::Sweep(_) => "sweep",
        Command::Tune(_) => "tune",
        Command::Compare(_) => "compare",
        Command::Sensitivity(_) => "sensitivity",
    };
    let result = match &cli.command {
        Command::Check(a) => check::run(a),
        Command::Analyze(a) => analyze::run(a),
        Command::Selftest(a) => selftest::run(a),
        Command::Report(a) => report::run(a),
        Command::Demo(a) => demo::run(a),
        Command::Sweep(a) => sweep::run(a),
        Command::Tune(a) => tune::run(a),
        Command::Compare(a) => compare::run(a),
        Command::Sensitivity(a) => sensitivity::run(a),
    };
    match result {
        Ok(text) => {
            write_stdout(&text);
            ExitCode::from(EXIT_OK)
        }
        Err(error) => {
            if let Some(text) = error.output() {
                write_stdout(text);
            }
            let _ = writeln!(std::io::stderr().lock(), "concord {name}: {error}");
            ExitCode::from(error.exit_code())
        }
    }
}

/// Writes to standard output; a closed pipe (e.g. `concord selftest | head`) is not an
/// error worth a panic, so write errors end the output quietly.
fn write_stdout(text: &str) {
    let mut out = std::io::stdout().lock();
    let _ = out.write_all(text.as_bytes());
    let _ = out.flush();
}

/// Loads an architecture file (its diagnostics are an input error).
pub fn load(path: &Path) -> Result<crate::model::Architecture, CliError> {
    Ok(crate::model::load(path)?)
}

/// Writes a whole output file (a picture, a curve, a report), naming the path should it fail.
pub fn write_output(path: &Path, contents: impl AsRef<[u8]>) -> Result<(), CliError> {
    std::fs::write(path, contents).map_err(|e| CliError::write(path, e))
}

/// Says on stderr, before a long exact analysis starts, how much work it is and why (see
/// [`crate::analysis::workload`]); silent for the analyses of seconds.
pub fn announce_workload(
    path: &Path,
    model: &crate::model::CompiledModel,
    options: &crate::analysis::AnalysisOptions,
) {
    if let Some(text) =
        crate::analysis::workload::estimate(model, options).and_then(|w| w.announcement())
    {
        eprintln!("note: {}: {text}", path.display());
    }
}
