//! What a command can fail with, typed until [`super::run`] prints it, and the one mapping
//! from a failure to the exit code:
//!
//! - 2 ([`EXIT_INPUT`]): the input is invalid — an architecture file that cannot be read or
//!   is not valid, an option value that is malformed or out of range (also when the values a
//!   sweep or a tuning sets make the file invalid, or an input is past a size limit: too many
//!   sweep points, an architecture too large to decompose), a date, or an output file that
//!   cannot be written;
//! - 1 ([`EXIT_FINDING`]): a computation failed, the Monte Carlo cross-check disagreed, or a
//!   selftest case failed.
//!
//! The analysis names the fields of its requests in its own terms ([`RequestField`]);
//! [`flag_of`] turns them into the options a user types.

use std::path::PathBuf;

use thiserror::Error;

use crate::analysis::{AnalysisError, RequestField};
use crate::model::ModelError;
use crate::report::date::DateError;
use crate::report::error::ReportError;
use crate::report::plot::PlotError;

/// Exit code for success.
pub const EXIT_OK: u8 = 0;
/// Exit code when a computation failed, the cross-check disagreed or a selftest case failed.
pub const EXIT_FINDING: u8 = 1;
/// Exit code for invalid input.
pub const EXIT_INPUT: u8 = 2;

/// Why a command failed.
#[derive(Debug, Error)]
pub enum CliError {
    /// The architecture file cannot be read or is not a valid architecture.
    #[error("invalid architecture file\n{0}")]
    File(#[from] ModelError),
    /// A value given on the command line that the command reads itself is malformed.
    #[error("{flag}: {message}")]
    Value {
        /// The option, as typed (e.g. `--vary`).
        flag: String,
        /// What is wrong and how to write it.
        message: String,
    },
    /// The options do not make a command (e.g. neither of two required ones).
    #[error("{0}")]
    Usage(String),
    /// The analysis refused a request built from the option `flag`, or failed on it.
    #[error("{}", analysis_message(.error, Some(.flag.as_str())))]
    Request {
        /// The option the request's values came from.
        flag: String,
        /// The analysis's error.
        error: AnalysisError,
    },
    /// The analysis refused a request or failed.
    #[error("{}", analysis_message(.0, None))]
    Analysis(#[from] AnalysisError),
    /// The date of a report cannot be taken.
    #[error("{0}")]
    Date(#[from] DateError),
    /// An output file (or folder) cannot be written.
    #[error("cannot write {}: {source}; check that its folder exists and is writable", .path.display())]
    Write {
        /// The file or folder.
        path: PathBuf,
        /// The system's error.
        #[source]
        source: std::io::Error,
    },
    /// The output folder of `concord demo` cannot be made.
    #[error("cannot create the folder {}: {source}; give another with --out", .path.display())]
    Folder {
        /// The folder.
        path: PathBuf,
        /// The system's error.
        #[source]
        source: std::io::Error,
    },
    /// Rows streamed to standard output or a file could not be written.
    #[error("writing the rows failed: {0}")]
    Stream(#[source] std::io::Error),
    /// A picture could not be drawn.
    #[error("the plot failed: {0}")]
    Plot(#[from] PlotError),
    /// An output could not be made (JSON serialisation; not expected for finite figures).
    #[error("{0}")]
    Report(#[from] ReportError),
    /// The Monte Carlo cross-check disagrees on some figures; `output` holds what was made all
    /// the same (the figures, or what was written).
    #[error("the Monte Carlo cross-check disagrees on some figures (see {shown_in})")]
    CrossCheckDisagrees {
        /// Where the disagreeing figures are shown.
        shown_in: &'static str,
        /// Standard output all the same.
        output: String,
    },
    /// Some cases of the built-in validation suite lie outside their bounds.
    #[error("selftest failed: {failed} of {total} cases outside their bounds (see the output)")]
    SelftestFailed {
        /// Cases that failed.
        failed: usize,
        /// All cases.
        total: usize,
        /// The whole summary, printed on standard output all the same.
        output: String,
    },
}

impl CliError {
    /// The exit code of this failure (see the module's header for the rule).
    pub fn exit_code(&self) -> u8 {
        match self {
            CliError::File(_)
            | CliError::Value { .. }
            | CliError::Usage(_)
            | CliError::Date(_)
            | CliError::Write { .. }
            | CliError::Folder { .. }
            | CliError::Stream(_) => EXIT_INPUT,
            CliError::Request { error, .. } | CliError::Analysis(error) => match error {
                AnalysisError::InvalidRequest { .. }
                | AnalysisError::Model { .. }
                | AnalysisError::TooLarge { .. }
                | AnalysisError::TooManyPoints { .. }
                | AnalysisError::Unsupported { .. } => EXIT_INPUT,
                AnalysisError::Engine { .. }
                | AnalysisError::NotFinite { .. }
                | AnalysisError::InconsistentModel { .. }
                | AnalysisError::ReferenceData(_) => EXIT_FINDING,
            },
            CliError::Report(error) => match error {
                ReportError::UnknownSite { .. } => EXIT_INPUT,
                ReportError::Json(_) => EXIT_FINDING,
            },
            CliError::Plot(_)
            | CliError::CrossCheckDisagrees { .. }
            | CliError::SelftestFailed { .. } => EXIT_FINDING,
        }
    }

    /// What to print on standard output although the command failed.
    pub fn output(&self) -> Option<&str> {
        match self {
            CliError::CrossCheckDisagrees { output, .. }
            | CliError::SelftestFailed { output, .. } => Some(output),
            _ => None,
        }
    }

    /// A writing error naming `path`.
    pub fn write(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        CliError::Write {
            path: path.into(),
            source,
        }
    }
}

/// The command-line option behind a field of an analysis request, where one option always
/// gives it; `None` for a field the command line does not set, or sets from several options
/// (the values of a sweep axis: the command names the option itself with
/// [`CliError::Request`]).
pub fn flag_of(field: &RequestField) -> Option<&'static str> {
    match field {
        RequestField::TuneTarget => Some("--target-dc"),
        RequestField::TuneCheck => Some("--check"),
        RequestField::TuneSites => Some("--site"),
        RequestField::TuneScaleRange => Some("--scale"),
        RequestField::TuneCurvePoints => Some("--points"),
        RequestField::TuneConfirmation => Some("--with-confirmation"),
        RequestField::TuneScaleTolerance | RequestField::AxisValues(_) => None,
        RequestField::SweepSeries => Some("--series"),
        RequestField::SpreadSite => Some("--spread"),
        RequestField::SpreadSigmas => Some("--sigma"),
        RequestField::MonteCarloSamples => Some("--samples"),
        RequestField::VerifySamples => Some("--verify"),
        RequestField::Tolerances => Some("--within"),
    }
}

/// An analysis error as the command line shows it: a refused request names the option (the
/// one given, else the one that sets the field) and the analysis's message with its fix.
fn analysis_message(error: &AnalysisError, flag: Option<&str>) -> String {
    let AnalysisError::InvalidRequest { field, message } = error else {
        return error.to_string();
    };
    match (flag.or_else(|| flag_of(field)), field) {
        (Some(flag), RequestField::AxisValues(key)) => format!("{flag} {key}: {message}"),
        (Some(flag), _) => format!("{flag}: {message}"),
        (None, _) => format!("{field}: {message}"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refused_requests_name_the_option_and_keep_the_fix() {
        let e = CliError::from(AnalysisError::invalid(
            RequestField::TuneTarget,
            "2 is not a coverage; give a fraction in (0, 1], e.g. 0.99",
        ));
        assert_eq!(
            e.to_string(),
            "--target-dc: 2 is not a coverage; give a fraction in (0, 1], e.g. 0.99"
        );
        assert_eq!(e.exit_code(), EXIT_INPUT);
        let axis = CliError::Request {
            flag: "--vary".into(),
            error: AnalysisError::invalid(
                RequestField::AxisValues("safety.limit".into()),
                "give at least one value",
            ),
        };
        assert_eq!(
            axis.to_string(),
            "--vary safety.limit: give at least one value"
        );
    }

    #[test]
    fn every_option_of_a_request_field_is_an_option_of_the_command_line() {
        // The options of src/cli/args.rs, read back from clap's own description of them.
        use clap::CommandFactory;
        let command = super::super::args::Cli::command();
        let mut longs = Vec::new();
        for sub in command.get_subcommands() {
            for arg in sub.get_arguments() {
                if let Some(long) = arg.get_long() {
                    longs.push(format!("--{long}"));
                }
            }
        }
        for field in [
            RequestField::TuneTarget,
            RequestField::TuneCheck,
            RequestField::TuneSites,
            RequestField::TuneScaleRange,
            RequestField::TuneCurvePoints,
            RequestField::SweepSeries,
            RequestField::SpreadSite,
            RequestField::SpreadSigmas,
            RequestField::MonteCarloSamples,
            RequestField::VerifySamples,
            RequestField::Tolerances,
        ] {
            let flag = flag_of(&field).unwrap_or("none");
            assert!(longs.iter().any(|l| l == flag), "{field:?} -> {flag}");
        }
    }
}
