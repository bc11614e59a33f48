//! The command line: argument parsing ([`args`]) and one small file per command. Commands
//! only read arguments, call the library and print; the work is done in the layers below.
//!
//! Exit codes: 0 success; 1 a computation failed, the Monte Carlo cross-check disagreed or a
//! selftest case failed;
//! 2 invalid input (unreadable or invalid architecture file, bad option).

pub mod analyze;
pub mod args;
pub mod check;
pub mod compare;
pub mod demo;
pub mod report;
pub mod selftest;
pub mod sweep;
pub mod tune;
pub mod values;

use std::io::Write as _;
use std::process::ExitCode;

use clap::Parser;

use args::{Cli, Command};

/// Exit code for success.
pub const EXIT_OK: u8 = 0;
/// Exit code when a computation failed or the cross-check disagreed.
pub const EXIT_FINDING: u8 = 1;
/// Exit code for invalid input.
pub const EXIT_INPUT: u8 = 2;

/// A command's failure: the message for standard error and the exit code.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Failure {
    /// The exit code.
    pub code: u8,
    /// What went wrong and how to fix it (printed on standard error).
    pub message: String,
    /// Output to print on standard output all the same (e.g. the figures of an analysis
    /// whose cross-check disagreed).
    pub output: Option<String>,
}

impl Failure {
    /// A failure of the input (exit code 2).
    pub fn input(message: impl Into<String>) -> Self {
        Self {
            code: EXIT_INPUT,
            message: message.into(),
            output: None,
        }
    }

    /// A failure of a computation (exit code 1).
    pub fn computation(message: impl Into<String>) -> Self {
        Self {
            code: EXIT_FINDING,
            message: message.into(),
            output: None,
        }
    }
}

/// Parses the command line, runs the command and returns its exit code.
pub fn run() -> ExitCode {
    let cli = Cli::parse();
    let result = match &cli.command {
        Command::Check(a) => check::run(a),
        Command::Analyze(a) => analyze::run(a),
        Command::Selftest(a) => selftest::run(a),
        Command::Report(a) => report::run(a),
        Command::Demo(a) => demo::run(a),
        Command::Sweep(a) => sweep::run(a),
        Command::Tune(a) => tune::run(a),
        Command::Compare(a) => compare::run(a),
    };
    match result {
        Ok(text) => {
            write_stdout(&text);
            ExitCode::from(EXIT_OK)
        }
        Err(failure) => {
            if let Some(text) = &failure.output {
                write_stdout(text);
            }
            let _ = writeln!(std::io::stderr().lock(), "{}", failure.message);
            ExitCode::from(failure.code)
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

/// Loads an architecture file, turning its diagnostics into an input failure.
pub fn load(path: &std::path::Path) -> Result<crate::model::Architecture, Failure> {
    crate::model::load(path)
        .map_err(|e| Failure::input(format!("concord: invalid architecture file\n{e}")))
}
