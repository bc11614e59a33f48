//! `concord analyze FILE`.

use crate::analysis::analyze;
use crate::analysis::montecarlo::{MonteCarloOptions, analyze_montecarlo, verify};
use crate::report::{ReportInput, csv, json, table};

use super::args::{AnalyzeArgs, Format, MethodArg};
use super::{CliError, load};

/// Runs the analysis and renders it; a disagreeing cross-check is a failure that carries the
/// rendered figures, so that they are still shown.
pub fn run(args: &AnalyzeArgs) -> Result<String, CliError> {
    let arch = load(&args.file)?;
    let options = args.accuracy.options()?;
    let (analysis, method) = match args.method {
        MethodArg::Exact => (analyze(&arch.model, &options, args.curve)?, "exact"),
        MethodArg::Montecarlo => {
            let sampling = MonteCarloOptions {
                samples: args.samples,
                seed: args.seed,
            };
            (analyze_montecarlo(&arch.model, &sampling)?, "montecarlo")
        }
    };
    let verification = match args.verify {
        Some(samples) => {
            let sampling = MonteCarloOptions {
                samples,
                seed: args.seed,
            };
            Some(verify(&arch.model, &analysis, &sampling)?)
        }
        None => None,
    };
    let input = ReportInput {
        architecture: &arch,
        analysis: &analysis,
        method,
        verification: verification.as_deref(),
    };
    let text = match args.format {
        Format::Table => table::render(&input),
        Format::Json => json::render(&input)?,
        Format::Csv => csv::render(&input),
    };
    if verification
        .as_ref()
        .is_some_and(|rows| rows.iter().any(|r| !r.agrees))
    {
        return Err(CliError::CrossCheckDisagrees {
            shown_in: "the output",
            output: text,
        });
    }
    Ok(text)
}
