//! `concord analyze FILE`.

use crate::analysis::analyze;
use crate::analysis::montecarlo::{MonteCarloOptions, analyze_montecarlo, verify};
use crate::analysis::tolerances::over_box;
use crate::report::{ReportInput, csv, json, table};

use super::args::{AnalyzeArgs, Format, MethodArg};
use super::{CliError, announce_workload, load};

/// `KEY=LO:HI` of `--within`.
fn parse_within(text: &str) -> Result<(String, f64, f64), CliError> {
    let bad = |why: &str| CliError::Value {
        flag: "--within".into(),
        message: format!("`{text}`: {why}; write KEY=LO:HI, e.g. channels.a.sigma=0.4:0.6"),
    };
    let (key, range) = text.split_once('=').ok_or_else(|| bad("no `=`"))?;
    let (lo, hi) = range
        .split_once(':')
        .ok_or_else(|| bad("no `:` in the range"))?;
    let lo: f64 = lo.trim().parse().map_err(|_| bad("LO is not a number"))?;
    let hi: f64 = hi.trim().parse().map_err(|_| bad("HI is not a number"))?;
    Ok((key.trim().to_string(), lo, hi))
}

/// Runs the analysis and renders it; a disagreeing cross-check is a failure that carries the
/// rendered figures, so that they are still shown.
pub fn run(args: &AnalyzeArgs) -> Result<String, CliError> {
    let arch = load(&args.file)?;
    let options = args.accuracy.options()?;
    let (analysis, method) = match args.method {
        MethodArg::Exact => {
            announce_workload(&args.file, &arch.model, &options);
            (analyze(&arch.model, &options, args.curve)?, "exact")
        }
        MethodArg::Montecarlo => {
            let sampling = MonteCarloOptions {
                samples: args.samples,
                seed: args.seed,
            };
            (analyze_montecarlo(&arch.model, &sampling)?, "montecarlo")
        }
    };
    let mut analysis = analysis;
    // The file's [tolerances], then --within (which replaces a key the file gives).
    let mut within = arch.tolerances.clone();
    for text in &args.within {
        let (key, lo, hi) = parse_within(text)?;
        within.retain(|(k, _, _)| *k != key);
        within.push((key, lo, hi));
    }
    if !within.is_empty() && args.method == MethodArg::Exact {
        analysis.tolerances = Some(over_box(&arch, &within, &options)?);
    }
    if args.with_sensitivity && args.method == MethodArg::Exact {
        analysis.sensitivity = Some(crate::analysis::sensitivity::sensitivity(&arch, &options)?);
    }
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
