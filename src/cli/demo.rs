//! `concord demo [--out DIR]`: the bundled invented scenario (demo/, the Trubelka brake-pedal
//! travel sensor) run end to end into a folder: three candidate architectures (1oo2 with a
//! difference check, 1oo2 with a plausibility check against a model estimate, 2oo3 with a
//! median vote) analysed, compared, their comparator bands tuned to a coverage target on the
//! common-cause fault, the inputs of the first candidate ranked by their effect on every
//! figure, and one HTML report per candidate. Prints what it wrote and the trade
//! in one screen. demo/README.md walks a new user through the output.
//!
//! Each step is one call of a command's `run` (or of [`super::report::build`]) with the
//! arguments a user would type, so that the demo shows exactly what the commands do; the
//! tuning calls the functions behind `concord tune` itself, so that its result also feeds
//! the summary.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use crate::analysis::AnalysisOptions;
use crate::analysis::tune::{CoverageFigure, TuneRequest, TuneResult, tune};
use crate::report::format::probability;
use crate::report::tune::{curve_csv, summary, trade_off_svg};

use super::args::{
    AccuracyArgs, AnalyzeArgs, CompareArgs, CoverageArg, Format, MethodArg, SensitivityArgs,
};
use super::{CliError, analyze, compare, load, report, sensitivity, write_output};

/// The scenario's architecture files, bundled into the binary: (file name, text).
pub const FILES: [(&str, &str); 3] = [
    (
        "trubelka_1oo2_difference.toml",
        include_str!("../../demo/trubelka_1oo2_difference.toml"),
    ),
    (
        "trubelka_1oo2_plausibility.toml",
        include_str!("../../demo/trubelka_1oo2_plausibility.toml"),
    ),
    (
        "trubelka_2oo3_median.toml",
        include_str!("../../demo/trubelka_2oo3_median.toml"),
    ),
];

/// The tuning of every candidate: the fault site whose worst case must meet the target (the
/// drift of the excitation shared by the two inductive channels, the common-cause fault),
/// the target on `dc_all_dangerous`, the range of the scale on the file's bands and the
/// points of the trade-off curve (few, to keep the three-channel tuning to seconds).
/// The target is on the common-cause site because the single-channel faults meet it in
/// every candidate; the difference between the candidates is there.
const TUNE_SITE: &str = "excitation_drift";
const TUNE_TARGET: f64 = 0.95;
const TUNE_SCALE: (f64, f64) = (0.1, 2.0);
const TUNE_POINTS: usize = 9;
/// The bisection stops when the band is known to 1 % (`concord tune` goes to 1e-4).
const TUNE_SCALE_TOL: f64 = 1e-2;

/// Monte Carlo samples per scenario of the reports' cross-check.
const REPORT_SAMPLES: u64 = 200_000;
/// Seed of the cross-check (the default of `concord report`).
const REPORT_SEED: u64 = 0x0C0C_0A7D;

/// One written file and what it holds.
struct Entry {
    path: PathBuf,
    what: String,
}

fn write(
    dir: &Path,
    name: &str,
    text: &str,
    what: &str,
    list: &mut Vec<Entry>,
) -> Result<(), CliError> {
    let path = dir.join(name);
    write_output(&path, text)?;
    list.push(Entry {
        path,
        what: what.to_string(),
    });
    Ok(())
}

fn stem(name: &str) -> &str {
    name.strip_suffix(".toml").unwrap_or(name)
}

/// Tunes the bands of every check of one candidate to the demo's target on [`TUNE_SITE`].
fn tune_candidate(file: &Path) -> Result<(TuneResult, String), CliError> {
    let arch = load(file)?;
    let mut request = TuneRequest::new(None, CoverageFigure::DcAllDangerous, TUNE_TARGET);
    request.sites = vec![TUNE_SITE.to_string()];
    request.scale_range = TUNE_SCALE;
    request.curve_points = TUNE_POINTS;
    request.scale_rel_tol = TUNE_SCALE_TOL;
    let result = tune(&arch, &request, &AnalysisOptions::default(), &|| {})?;
    Ok((result, arch.path))
}

/// One line of the summary for a tuning: the widest bands that meet the target and their
/// false-alarm price, or what is reachable at best.
fn tuned_line(name: &str, result: &TuneResult) -> String {
    match &result.chosen {
        Some(p) => format!(
            "  {name}: bands at {:.2} times the file's, false alarm {}",
            p.scale,
            probability(p.false_alarm.value)
        ),
        None => format!(
            "  {name}: no band from {} to {} times the file's meets it; at best {:.2} % (at {:.2} \
             times, false alarm {})",
            TUNE_SCALE.0,
            TUNE_SCALE.1,
            100.0 * result.best_reachable.coverage.value,
            result.best_reachable.scale,
            probability(result.best_reachable.false_alarm.value)
        ),
    }
}

/// Runs the demo.
pub fn run(args: &super::args::DemoArgs) -> Result<String, CliError> {
    let dir = &args.out;
    std::fs::create_dir_all(dir).map_err(|source| CliError::Folder {
        path: dir.clone(),
        source,
    })?;
    let mut list = Vec::new();
    let mut files = Vec::new();
    for (name, text) in FILES {
        write(
            dir,
            name,
            text,
            "architecture file of a candidate (edit it and re-run the commands)",
            &mut list,
        )?;
        files.push(dir.join(name));
    }

    // 1. Analyse each candidate: the terminal table and the JSON with the curves.
    for (file, (name, _)) in files.iter().zip(FILES) {
        for (format, ext, what) in [
            (
                Format::Table,
                "txt",
                "concord analyze: figures per fault site and metrics",
            ),
            (
                Format::Json,
                "json",
                "concord analyze --format json --with-curves: the same as JSON",
            ),
        ] {
            let text = analyze::run(&AnalyzeArgs {
                accuracy: AccuracyArgs { tolerance: None },
                file: file.clone(),
                format,
                method: MethodArg::Exact,
                samples: 1_000_000,
                seed: REPORT_SEED,
                verify: None,
                curve: format == Format::Json,
                within: Vec::new(),
                with_sensitivity: false,
            })?;
            write(
                dir,
                &format!("analysis-{}.{ext}", stem(name)),
                &text,
                what,
                &mut list,
            )?;
        }
    }

    // 2. Compare the candidates side by side.
    let compared = compare::run(&CompareArgs {
        accuracy: AccuracyArgs { tolerance: None },
        files: files.clone(),
        figure: CoverageArg::DcAllDangerous,
        sort: None,
        format: Format::Table,
    })?;
    write(
        dir,
        "compare.txt",
        &compared,
        "concord compare --figure dc-all-dangerous: the candidates side by side",
        &mut list,
    )?;

    // 3. Tune the bands of each candidate to the target on the common-cause fault.
    let mut tuned = Vec::new();
    for (file, (name, _)) in files.iter().zip(FILES) {
        let (result, path) = tune_candidate(file)?;
        let s = stem(name);
        write(
            dir,
            &format!("tune-{s}.txt"),
            &summary(&result, &path),
            &format!(
                "concord tune (--target-dc 95% --site {TUNE_SITE} --scale 0.1:2 --points 9, \
                 bands to 1 %): the widest bands that meet the target, their false alarms"
            ),
            &mut list,
        )?;
        write(
            dir,
            &format!("tune-{s}.csv"),
            &curve_csv(&result),
            "the tuning's trade-off curve (coverage against false alarm), CSV (--curve-csv)",
            &mut list,
        )?;
        let plot = dir.join(format!("tune-{s}.svg"));
        write_output(&plot, trade_off_svg(&result)?)?;
        list.push(Entry {
            path: plot,
            what: "the same curve drawn, SVG (--plot)".into(),
        });
        tuned.push(tuned_line(s, &result));
    }

    // 4. Which inputs matter: the sensitivity of every figure of the first candidate (two
    // channels, milliseconds) to every number of its file, ranked.
    let (first, first_name) = (&files[0], stem(FILES[0].0));
    for (format, ext, what) in [
        (
            Format::Table,
            "txt",
            "concord sensitivity: every figure's derivative by every input of the file, ranked",
        ),
        (
            Format::Csv,
            "csv",
            "the same as CSV (every input, every figure)",
        ),
    ] {
        let text = sensitivity::run(&SensitivityArgs {
            file: first.clone(),
            format,
            plot: None,
            accuracy: AccuracyArgs { tolerance: None },
        })?;
        write(
            dir,
            &format!("sensitivity-{first_name}.{ext}"),
            &text,
            what,
            &mut list,
        )?;
    }

    // 5. One report per candidate, for the safety case.
    let mut reports = Vec::new();
    for (index, (file, (name, _))) in files.iter().zip(FILES).enumerate() {
        // The first candidate's report also ranks its inputs (milliseconds for two channels).
        let (html, written) = report::build(
            file,
            args.date.as_deref(),
            REPORT_SAMPLES,
            REPORT_SEED,
            index == 0,
            &AnalysisOptions::default(),
        )?;
        let out = format!("report-{}.html", stem(name));
        write(
            dir,
            &out,
            &html,
            "concord report: the HTML report (open it in a browser, print it on A4)",
            &mut list,
        )?;
        reports.push(written);
    }

    let mut out = format!(
        "concord demo: the Trubelka brake-pedal travel sensor (an invented scenario), {} \
         candidates, written to {}\n\n",
        FILES.len(),
        dir.display()
    );
    let width = list
        .iter()
        .map(|e| e.path.display().to_string().chars().count())
        .max()
        .unwrap_or(0);
    for e in &list {
        let _ = writeln!(
            out,
            "  {:<width$}  {}",
            e.path.display().to_string(),
            e.what
        );
    }
    // The trade in one screen: the first table of compare.txt and the tuned bands.
    let table = compared
        .split("\nWorst-case")
        .next()
        .unwrap_or(&compared)
        .trim_end();
    let _ = writeln!(
        out,
        "\nThe trade in one screen (from compare.txt and tune-*.txt)\n"
    );
    let _ = writeln!(out, "{table}\n");
    let _ = writeln!(
        out,
        "Widest bands (all checks scaled together) whose worst case meets dc_all_dangerous >= 95 % \
         on {TUNE_SITE}, the common-cause fault:"
    );
    for line in &tuned {
        let _ = writeln!(out, "{line}");
    }
    let _ = writeln!(
        out,
        "\nFigures are estimates under the files' assumptions; the analyst remains responsible, \
         and the standards, the assessor and local practice decide (see the cautions in every \
         output)."
    );
    let disagree = reports
        .iter()
        .filter_map(|w| w.agreement)
        .any(|(a, n)| a < n);
    let _ = writeln!(
        out,
        "\nNext: open {} in a browser, then read demo/README.md (or `concord help`).",
        dir.join("report-trubelka_2oo3_median.html").display()
    );
    if disagree {
        return Err(CliError::CrossCheckDisagrees {
            shown_in: "section 10 of the reports",
            output: out,
        });
    }
    Ok(out)
}
