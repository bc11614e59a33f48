//! The report layer: everything concord writes. The figures of an analysis as a terminal
//! table, JSON and CSV; the HTML report with its SVG charts and architecture diagram; the
//! selftest summary; the `check` summary and DOT graph; and the outputs of sweep, tune and
//! compare.
//!
//! - [`json`]: the JSON object that scripts rely on (the contract of README.md "JSON output").
//! - [`table`]: the table for a terminal, 100 columns wide.
//! - [`csv`]: one row per scenario, for spreadsheets.
//! - [`selftest`]: the validation summary of `concord selftest` (table and JSON).
//! - [`format`](mod@format): the one number formatter and the one amplitude describer, a style per
//!   output (analysis results carry data; only this layer writes text).
//! - [`describe`], [`dot`]: the summary of `concord check` and its Graphviz DOT graph.
//! - [`error`]: [`error::ReportError`], why an output cannot be made.
//! - [`plot`]: line charts as SVG (curves over sigma, sweeps, tuning).
//! - [`diagram`]: the architecture drawn from the model graph, as SVG.
//! - [`html`]: the self-contained HTML report for a safety case.
//! - [`date`]: the report date (given, `SOURCE_DATE_EPOCH`, or today in UTC).
//! - [`cautions`]: the cautions every report carries.
//! - [`sweep`], [`tune`], [`compare`]: the outputs of the design-exploration commands.

pub mod cautions;
pub mod compare;
pub mod csv;
pub mod date;
pub mod describe;
pub mod diagram;
pub mod dot;
pub mod error;
pub mod format;
pub mod html;
pub mod isolation_json;
pub mod json;
pub mod plot;
pub mod selftest;
pub mod sensitivity;
pub mod sweep;
pub mod table;
pub mod tolerances;
pub mod tune;

use crate::analysis::Analysis;
use crate::analysis::montecarlo::Agreement;
use crate::model::Architecture;

/// What one report is made from.
#[derive(Clone, Copy)]
pub struct ReportInput<'a> {
    /// The loaded architecture file.
    pub architecture: &'a Architecture,
    /// The computed figures.
    pub analysis: &'a Analysis,
    /// `exact` or `montecarlo`.
    pub method: &'a str,
    /// The Monte Carlo cross-check, when it was run.
    pub verification: Option<&'a [Agreement]>,
}

/// The version of concord, as reports print it.
pub const TOOL_VERSION: &str = env!("CARGO_PKG_VERSION");

/// SHA-256 of the input file's text, in lower-case hex, so a reviewer can tell that a report
/// belongs to a file.
pub fn input_sha256(text: &str) -> String {
    use sha2::{Digest, Sha256};
    let digest = Sha256::digest(text.as_bytes());
    digest.iter().map(|b| format!("{b:02x}")).collect()
}

#[cfg(test)]
mod tests {
    #[test]
    fn sha256_of_abc_matches_the_fips_example() {
        // FIPS 180-2, Appendix B.1: SHA-256("abc").
        assert_eq!(
            super::input_sha256("abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }
}
