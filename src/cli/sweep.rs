//! `concord sweep FILE --vary KEY=VALUES [--series KEY=VALUES]` and
//! `concord sweep FILE --spread SITE [--sigma FROM:TO]`.

use std::fs::File;
use std::io::{self, BufWriter, Write};

use indicatif::{ProgressBar, ProgressStyle};

use crate::analysis::AnalysisError;
use crate::analysis::AnalysisOptions;
use crate::analysis::sweep::{
    Axis, SweepPlan, default_spread_range, prepare_sweep, spread_curve, sweep,
};
use crate::report::plot::PlotError;
use crate::report::sweep::{
    SweepFormat, SweepPicture, SweepWriter, spread_csv, spread_json, spread_summary, spread_svg,
};

use super::args::{SweepArgs, SweepFormatArg};
use super::{Failure, load, values};

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
pub fn run(args: &SweepArgs) -> Result<String, Failure> {
    match (&args.vary, &args.spread) {
        (Some(vary), None) => parameter_sweep(args, vary),
        (None, Some(site)) => spread_sweep(args, site),
        _ => Err(Failure::input(
            "concord sweep: give --vary KEY=VALUES (a parameter sweep) or --spread SITE \
             (a fault site over its spread)",
        )),
    }
}

fn output_writer(args: &SweepArgs) -> Result<Box<dyn Write>, Failure> {
    Ok(match &args.output {
        Some(path) => Box::new(BufWriter::new(File::create(path).map_err(|e| {
            Failure::input(format!(
                "concord: cannot write {}: {e}; check the folder exists and is writable",
                path.display()
            ))
        })?)),
        None => Box::new(BufWriter::new(io::stdout().lock())),
    })
}

fn parameter_sweep(args: &SweepArgs, vary: &str) -> Result<String, Failure> {
    let arch = load(&args.file)?;
    let vary = values::axis(
        vary,
        args.points.unwrap_or(DEFAULT_POINTS),
        args.log,
        "--vary",
    )?;
    let series = match &args.series {
        Some(s) => Some(values::axis(
            s,
            args.series_points,
            args.series_log,
            "--series",
        )?),
        None => None,
    };
    let plan =
        SweepPlan::new(vary, series).map_err(|e| Failure::input(format!("concord sweep: {e}")))?;
    let sites = prepare_sweep(&arch.source, &arch.path, &plan)
        .map_err(|e| Failure::input(format!("concord sweep: {e}")))?;
    let format = match args.format {
        SweepFormatArg::Csv => SweepFormat::Csv,
        SweepFormatArg::Json => SweepFormat::Json,
    };
    let write_failure = |e: io::Error| {
        Failure::computation(format!(
            "concord: writing the rows failed: {e}; check that the output (a file, a pipe or \
                 the terminal) can take them: free disk space, permissions, a reader at the \
                 other end"
        ))
    };
    let mut writer = SweepWriter::start(
        output_writer(args)?,
        format,
        &plan,
        &sites,
        &arch.path,
        &arch.source,
    )
    .map_err(write_failure)?;
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
            SweepPicture::new(&plan, &sites, args.site.as_deref())
                .map_err(|e| Failure::input(format!("concord sweep: {e}")))?,
        ),
        None => None,
    };
    let options = AnalysisOptions::default();
    let outcome = sweep(&arch.source, &arch.path, &plan, &options, |row| {
        writer.row(&row).map_err(Stop::Write)?;
        if let Some(picture) = plot.as_mut() {
            picture.add(&row);
        }
        progress.inc(1);
        Ok::<(), Stop>(())
    });
    progress.finish_and_clear();
    match outcome {
        Ok(()) => {}
        Err(Stop::Analysis(e)) => {
            return Err(Failure::computation(format!("concord sweep: {e}")));
        }
        Err(Stop::Write(e)) => return Err(write_failure(e)),
    }
    writer.finish().map_err(write_failure)?;
    if let (Some(path), Some(picture)) = (&args.plot, &plot) {
        write_svg(path, picture.svg(&arch.model.unit))?;
    }
    Ok(String::new())
}

fn spread_sweep(args: &SweepArgs, site: &str) -> Result<String, Failure> {
    let arch = load(&args.file)?;
    let (from, to) = match &args.sigma {
        Some(text) => values::range(text, "--sigma")?,
        None => default_spread_range(&arch.model, site)
            .map_err(|e| Failure::input(format!("concord sweep: {e}")))?,
    };
    let sigmas = Axis::log(
        "sigma",
        from,
        to,
        args.points.unwrap_or(DEFAULT_SPREAD_POINTS),
    )
    .map_err(|e| Failure::input(format!("concord sweep: {e}")))?
    .values;
    let options = AnalysisOptions::default();
    let curve = spread_curve(&arch.model, site, &sigmas, &options).map_err(|e| match e {
        AnalysisError::InvalidOption { .. } => Failure::input(format!("concord sweep: {e}")),
        other => Failure::computation(format!("concord sweep: {other}")),
    })?;
    let text = match args.format {
        SweepFormatArg::Csv => spread_csv(&curve),
        SweepFormatArg::Json => spread_json(&curve, &arch.path, &arch.source)
            .map_err(|e| Failure::computation(format!("concord: JSON output failed: {e}")))?,
    };
    if let Some(path) = &args.plot {
        write_svg(path, spread_svg(&curve, &arch.model.unit))?;
    }
    eprintln!("{}", spread_summary(&curve, &arch.model.unit));
    match &args.output {
        Some(path) => {
            std::fs::write(path, text).map_err(|e| {
                Failure::input(format!(
                    "concord: cannot write {}: {e}; check the folder exists and is writable",
                    path.display()
                ))
            })?;
            Ok(String::new())
        }
        None => Ok(text),
    }
}

/// Writes a rendered picture, or says why it could not be drawn or written.
pub(crate) fn write_svg(
    path: &std::path::Path,
    svg: Result<String, PlotError>,
) -> Result<(), Failure> {
    let svg = svg.map_err(|e| Failure::computation(format!("concord: the plot failed: {e}")))?;
    std::fs::write(path, svg).map_err(|e| {
        Failure::input(format!(
            "concord: cannot write {}: {e}; check the folder exists and is writable",
            path.display()
        ))
    })
}
