//! `concord tune FILE --target-dc X [--check NAME] [--site SITE]...`.

use indicatif::{ProgressBar, ProgressStyle};

use crate::analysis::timed_tune::{default_rules, tune_with_confirmation};
use crate::analysis::tune::{CoverageFigure, TuneRequest, tune};
use crate::report::tune::{
    confirmation_json, confirmation_summary, confirmation_svg, curve_csv, json, summary,
    trade_off_svg,
};

use super::args::{CoverageArg, TuneArgs, TuneFormat};
use super::{CliError, load, values, write_output};

/// Runs the tuning and renders it; the curve and the plot go to their files.
pub fn run(args: &TuneArgs) -> Result<String, CliError> {
    let arch = load(&args.file)?;
    let target = values::coverage_target(&args.target_dc, "--target-dc")?;
    let figure = match args.figure {
        CoverageArg::Dc => CoverageFigure::Dc,
        CoverageArg::DcAllDangerous => CoverageFigure::DcAllDangerous,
    };
    let mut request = TuneRequest::new(args.check.clone(), figure, target);
    request.sites = args.site.clone();
    request.scale_range = values::range(&args.scale, "--scale")?;
    request.curve_points = args.points;
    if args.with_confirmation {
        let samples = arch.model.timing.as_ref().map_or(0, |t| t.samples);
        let result = tune_with_confirmation(
            &arch,
            &request,
            &default_rules(samples),
            &args.accuracy.options()?,
        )?;
        if let Some(path) = &args.plot {
            write_output(path, confirmation_svg(&result)?)?;
        }
        return match args.format {
            TuneFormat::Text => Ok(confirmation_summary(&result, &request, &arch.path)),
            TuneFormat::Json => Ok(confirmation_json(&result, &request, &arch.path)?),
        };
    }
    // The curve's points, then the bisection (about a dozen more): shown on a terminal only.
    let progress = ProgressBar::new(args.points as u64);
    progress.set_style(
        ProgressStyle::with_template("{bar:40} {pos} analyses, {elapsed} elapsed")
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    let tick = || progress.inc(1);
    let outcome = tune(&arch, &request, &args.accuracy.options()?, &tick);
    progress.finish_and_clear();
    let result = outcome?;
    if let Some(path) = &args.curve {
        write_output(path, curve_csv(&result))?;
    }
    if let Some(path) = &args.plot {
        write_output(path, trade_off_svg(&result)?)?;
    }
    match args.format {
        TuneFormat::Text => Ok(summary(&result, &arch.path)),
        TuneFormat::Json => Ok(json(&result, &arch.path, &arch.source)?),
    }
}
