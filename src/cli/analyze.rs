//! `concord analyze FILE`.

use crate::analysis::montecarlo::{MonteCarloOptions, analyze_montecarlo, verify};
use crate::analysis::{AnalysisOptions, analyze};
use crate::report::{ReportInput, csv, json, table};

use super::args::{AnalyzeArgs, Format, Method};
use super::{EXIT_FINDING, Failure, load};

/// Runs the analysis and renders it; a disagreeing cross-check is a failure with the
/// rendered report as its message body, so that the figures are still shown.
pub fn run(args: &AnalyzeArgs) -> Result<String, Failure> {
    let arch = load(&args.file)?;
    let options = AnalysisOptions::default();
    let (analysis, method) = match args.method {
        Method::Exact => (
            analyze(&arch.model, &options, args.curve)
                .map_err(|e| Failure::computation(format!("concord: {e}")))?,
            "exact",
        ),
        Method::Montecarlo => {
            let mc = MonteCarloOptions {
                samples: args.samples,
                seed: args.seed,
            };
            (
                analyze_montecarlo(&arch.model, &mc)
                    .map_err(|e| Failure::input(format!("concord: {e}")))?,
                "montecarlo",
            )
        }
    };
    let verification = match args.verify {
        Some(samples) => {
            let mc = MonteCarloOptions {
                samples,
                seed: args.seed,
            };
            Some(
                verify(&arch.model, &analysis, &mc)
                    .map_err(|e| Failure::input(format!("concord: {e}")))?,
            )
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
        Format::Json => json::render(&input)
            .map_err(|e| Failure::computation(format!("concord: JSON output failed: {e}")))?,
        Format::Csv => csv::render(&input),
    };
    if verification
        .as_ref()
        .is_some_and(|rows| rows.iter().any(|r| !r.agrees))
    {
        return Err(Failure {
            code: EXIT_FINDING,
            message:
                "concord: the Monte Carlo cross-check disagrees on some figures (see the output)"
                    .into(),
            output: Some(text),
        });
    }
    Ok(text)
}
