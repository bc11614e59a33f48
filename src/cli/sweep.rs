//! `concord sweep FILE --vary KEY=VALUES [--series KEY=VALUES]` and
//! `concord sweep FILE --spread SITE [--sigma FROM:TO]`.

use std::fs::File;
use std::io::{self, BufWriter, Write};

use indicatif::{ProgressBar, ProgressStyle};

use crate::analysis::AnalysisError;
use crate::analysis::spread::{default_spread_range, spread_curve};
use crate::analysis::sweep::{Axis, SweepPlan, prepare_sweep, sweep};
use crate::report::sweep::{
    IsolationPicture, SweepFormat, SweepPicture, SweepWriter, spread_csv, spread_json,
    spread_summary, spread_svg,
};

use super::args::{SweepArgs, SweepFormatArg};
use super::{CliError, load, values, write_output};

/// Default points of a parameter sweep.
const DEFAULT_POINTS: usize = 50;
/// Default points of a spread sweep.
const DEFAULT_SPREAD_POINTS: usize = 200;

/// Why a streamed sweep stopped.
enum Stop {
    Analysis(AnalysisError),
    Write(io::Error),
}

impl From<AnalysisError> for Stop {
    fn from(e: AnalysisError) -> Self {
        Stop::Analysis(e)
    }
}

/// Runs the sweep; rows go to standard output or `--output` as they are computed.
pub fn run(args: &SweepArgs) -> Result<String, CliError> {
    match (&args.vary, &args.spread) {
        (Some(vary), None) => parameter_sweep(args, vary),
        (None, Some(site)) => spread_sweep(args, site),
        _ => Err(CliError::Usage(
            "give --vary KEY=VALUES (a parameter sweep) or --spread SITE (a fault site over \
             its spread)"
                .into(),
        )),
    }
}

fn output_writer(args: &SweepArgs) -> Result<Box<dyn Write>, CliError> {
    Ok(match &args.output {
        Some(path) => Box::new(BufWriter::new(
            File::create(path).map_err(|e| CliError::write(path, e))?,
        )),
        None => Box::new(BufWriter::new(io::stdout().lock())),
    })
}

fn parameter_sweep(args: &SweepArgs, vary: &str) -> Result<String, CliError> {
    let arch = load(&args.file)?;
    let vary = values::axis(
        vary,
        args.points.unwrap_or(DEFAULT_POINTS),
        args.log.then_some("--log"),
        "--vary",
    )?;
    let series = match &args.series {
        Some(spec) => Some(values::axis(
            spec,
            args.series_points,
            args.series_log.then_some("--series-log"),
            "--series",
        )?),
        None => None,
    };
    let plan = SweepPlan::new(vary, series)?;
    let sites = prepare_sweep(&arch, &plan)?;
    if args.plot_isolation.is_some() && arch.model.isolation.is_none() {
        return Err(CliError::Value {
            flag: "--plot-isolation".into(),
            message: format!(
                "{} has no [isolation] section, so a sweep has no end states to draw; add one \
                 (docs/architecture-format.md, \"Isolation\") or leave the option out",
                arch.path
            ),
        });
    }
    let mut isolation_plot = args
        .plot_isolation
        .as_ref()
        .map(|_| IsolationPicture::new(&plan));
    let format = match args.format {
        SweepFormatArg::Csv => SweepFormat::Csv,
        SweepFormatArg::Json => SweepFormat::Json,
    };
    let mut writer = SweepWriter::start(
        output_writer(args)?,
        format,
        &plan,
        &sites,
        arch.model.isolation.is_some(),
        &arch.path,
        &arch.source,
    )
    .map_err(CliError::Stream)?;
    let progress = ProgressBar::new(plan.len() as u64);
    progress.set_style(
        ProgressStyle::with_template(
            "{bar:40} {pos}/{len} points, {elapsed} elapsed, about {eta} left",
        )
        .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    // The picture keeps two numbers per point and line, and only when one is asked for.
    let mut plot = match &args.plot {
        Some(_) => Some(
            SweepPicture::new(&plan, &sites, args.site.as_deref()).map_err(|error| {
                CliError::Value {
                    flag: "--site".into(),
                    message: error.to_string(),
                }
            })?,
        ),
        None => None,
    };
    let options = args.accuracy.options()?;
    let outcome = sweep(&arch, &plan, &options, |row| {
        writer.row(&row).map_err(Stop::Write)?;
        if let Some(picture) = plot.as_mut() {
            picture.add(&row);
        }
        if let Some(picture) = isolation_plot.as_mut() {
            picture.add(&row);
        }
        progress.inc(1);
        Ok::<(), Stop>(())
    });
    progress.finish_and_clear();
    match outcome {
        Ok(()) => {}
        Err(Stop::Analysis(e)) => return Err(e.into()),
        Err(Stop::Write(e)) => return Err(CliError::Stream(e)),
    }
    writer.finish().map_err(CliError::Stream)?;
    if let (Some(path), Some(picture)) = (&args.plot, &plot) {
        write_output(path, picture.svg(&arch.model.unit)?)?;
    }
    if let (Some(path), Some(picture)) = (&args.plot_isolation, &isolation_plot) {
        write_output(path, picture.svg(&arch.model.unit)?)?;
    }
    Ok(String::new())
}

fn spread_sweep(args: &SweepArgs, site: &str) -> Result<String, CliError> {
    let arch = load(&args.file)?;
    let (from, to) = match &args.sigma {
        Some(text) => values::range(text, "--sigma")?,
        None => default_spread_range(&arch.model, site)?,
    };
    let sigmas = Axis::log(
        "sigma",
        from,
        to,
        args.points.unwrap_or(DEFAULT_SPREAD_POINTS),
    )
    .map_err(|error| CliError::Request {
        flag: "--sigma".into(),
        error,
    })?
    .values;
    let options = args.accuracy.options()?;
    let curve = spread_curve(&arch.model, site, &sigmas, &options)?;
    let text = match args.format {
        SweepFormatArg::Csv => spread_csv(&curve),
        SweepFormatArg::Json => spread_json(&curve, &arch.path, &arch.source)?,
    };
    if let Some(path) = &args.plot {
        write_output(path, spread_svg(&curve, &arch.model.unit)?)?;
    }
    eprintln!("{}", spread_summary(&curve, &arch.model.unit));
    match &args.output {
        Some(path) => {
            write_output(path, text)?;
            Ok(String::new())
        }
        None => Ok(text),
    }
}
