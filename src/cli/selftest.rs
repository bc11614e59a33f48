//! `concord selftest [--format table|json]`: runs the built-in validation suite and prints
//! the validation summary; exits with 1 when any case fails.

use crate::analysis::selftest;
use crate::report::selftest::{render_json, render_table};

use super::CliError;
use super::args::{SelftestArgs, SelftestFormat};

/// Runs the suite; a failed case is a failure whose output is the whole summary.
pub fn run(args: &SelftestArgs) -> Result<String, CliError> {
    let suite = selftest::run()?;
    let text = match args.format {
        SelftestFormat::Table => render_table(&suite),
        SelftestFormat::Json => render_json(&suite)?,
    };
    if !suite.all_passed() {
        return Err(CliError::SelftestFailed {
            failed: suite.failed(),
            total: suite.cases.len(),
            output: text,
        });
    }
    Ok(text)
}
