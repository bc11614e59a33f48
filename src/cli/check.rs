//! `concord check FILE [--dot]`.

use super::args::CheckArgs;
use super::{CliError, load};

/// Validates the file and returns the summary (or the DOT graph).
pub fn run(args: &CheckArgs) -> Result<String, CliError> {
    let arch = load(&args.file)?;
    Ok(if args.dot {
        crate::report::dot::to_dot(&arch)
    } else {
        let options = crate::analysis::AnalysisOptions::default();
        let work = crate::analysis::workload::estimate(&arch.model, &options);
        crate::report::describe::describe_with_workload(&arch, work.as_ref())
    })
}
