//! `concord selftest [--format table|json]`: runs the built-in validation suite and prints
//! the validation summary; exits with 1 when any case fails.

use crate::analysis::selftest;
use crate::report::selftest::{render_json, render_table};

use super::args::{SelftestArgs, SelftestFormat};
use super::{EXIT_FINDING, Failure};

/// Runs the suite; a failed case is a failure whose output is the whole summary.
pub fn run(args: &SelftestArgs) -> Result<String, Failure> {
    let suite = selftest::run().map_err(|e| Failure::computation(format!("concord: {e}")))?;
    let text = match args.format {
        SelftestFormat::Table => render_table(&suite),
        SelftestFormat::Json => render_json(&suite)
            .map_err(|e| Failure::computation(format!("concord: JSON output failed: {e}")))?,
    };
    if !suite.all_passed() {
        return Err(Failure {
            code: EXIT_FINDING,
            message: format!(
                "concord: selftest failed: {} of {} cases outside their bounds (see the output)",
                suite.failed(),
                suite.cases.len()
            ),
            output: Some(text),
        });
    }
    Ok(text)
}
