//! `concord report FILE [-o report.html]`: the HTML report for a safety case.

use std::path::Path;

use crate::analysis::montecarlo::{MonteCarloOptions, verify};
use crate::analysis::{AnalysisOptions, analyze};
use crate::report::ReportInput;
use crate::report::date::report_date;
use crate::report::html::{self, HtmlOptions};

use super::args::ReportArgs;
use super::{CliError, announce_workload, load, write_output};

/// A written report, for the message the command prints.
#[derive(Debug, Clone, PartialEq)]
pub struct Written {
    /// The architecture's name.
    pub name: String,
    /// Size of the HTML in bytes.
    pub bytes: usize,
    /// Figures of the cross-check that agree, and all of them (`None` when not run).
    pub agreement: Option<(usize, usize)>,
}

/// Analyses `file` (with the curves over sigma and, unless `samples` is 0, the Monte Carlo
/// cross-check) and returns the report's HTML.
///
/// # Errors
/// An invalid file, a date that cannot be read, or a failed computation.
pub fn build(
    file: &Path,
    date: Option<&str>,
    samples: u64,
    seed: u64,
    with_sensitivity: bool,
    options: &AnalysisOptions,
) -> Result<(String, Written), CliError> {
    let epoch = std::env::var("SOURCE_DATE_EPOCH").ok();
    let date = report_date(date, epoch.as_deref())?;
    let arch = load(file)?;
    announce_workload(file, &arch.model, options);
    let mut analysis = analyze(&arch.model, options, true)?;
    if !arch.tolerances.is_empty() {
        analysis.tolerances = Some(crate::analysis::tolerances::over_box(
            &arch,
            &arch.tolerances,
            options,
        )?);
    }
    if with_sensitivity {
        analysis.sensitivity = Some(crate::analysis::sensitivity::sensitivity(&arch, options)?);
    }
    let sampling = MonteCarloOptions { samples, seed };
    let verification = if samples > 0 {
        Some(verify(&arch.model, &analysis, &sampling)?)
    } else {
        None
    };
    let ranked = if with_sensitivity {
        " --with-sensitivity"
    } else {
        ""
    };
    let command = if samples > 0 {
        format!(
            "concord report {} --date {date} --verify {samples} --seed {seed}{ranked}",
            file.display()
        )
    } else {
        format!(
            "concord report {} --date {date} --verify 0{ranked}",
            file.display()
        )
    };
    let input = ReportInput {
        architecture: &arch,
        analysis: &analysis,
        method: "exact",
        verification: verification.as_deref(),
    };
    let text = html::render(
        &input,
        &HtmlOptions {
            date,
            command,
            monte_carlo: (samples > 0).then_some((samples, seed)),
        },
    );
    let written = Written {
        name: arch.model.name.clone(),
        bytes: text.len(),
        agreement: verification
            .as_ref()
            .map(|rows| (rows.iter().filter(|r| r.agrees).count(), rows.len())),
    };
    Ok((text, written))
}

/// One line saying what was written.
pub fn describe(path: &Path, written: &Written) -> String {
    let check = match written.agreement {
        Some((agree, all)) => format!("; cross-check: {agree} of {all} figures agree"),
        None => "; cross-check not run".to_string(),
    };
    format!(
        "wrote {} ({:.1} kB): {}{check}\n",
        path.display(),
        written.bytes as f64 / 1000.0,
        written.name
    )
}

/// Runs `concord report`.
pub fn run(args: &ReportArgs) -> Result<String, CliError> {
    let (text, written) = build(
        &args.file,
        args.date.as_deref(),
        args.verify,
        args.seed,
        args.with_sensitivity,
        &args.accuracy.options()?,
    )?;
    write_output(&args.output, &text)?;
    let line = describe(&args.output, &written);
    if let Some((agree, all)) = written.agreement
        && agree < all
    {
        return Err(CliError::CrossCheckDisagrees {
            shown_in: "section 10 of the report",
            output: line,
        });
    }
    Ok(line)
}
