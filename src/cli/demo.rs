//! `concord demo [--out DIR]`: the bundled invented scenario (demo/, the Wren brake-pedal
//! travel sensor) run end to end into a folder: each candidate architecture analysed, the
//! candidates compared, the comparator bands tuned to a coverage target, and one HTML report
//! per candidate. Prints what it wrote. demo/README.md walks a new user through the output.
//!
//! Each step is one call of a command's `run` (or of [`super::report::build`]) with the
//! arguments a user would type, so that the demo shows exactly what the commands do.

use std::path::{Path, PathBuf};

use super::args::{AnalyzeArgs, CompareArgs, CoverageArg, Format, Method, TuneArgs, TuneFormat};
use super::{CliError, analyze, compare, report, tune, write_output};

/// The scenario's architecture files, bundled into the binary: (file name, text).
pub const FILES: [(&str, &str); 2] = [
    (
        "wren_dual_mean.toml",
        include_str!("../../demo/wren_dual_mean.toml"),
    ),
    (
        "wren_dual_plausibility.toml",
        include_str!("../../demo/wren_dual_plausibility.toml"),
    ),
];

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
                "concord analyze --format json --curve: the same as JSON",
            ),
        ] {
            let text = analyze::run(&AnalyzeArgs {
                file: file.clone(),
                format,
                method: Method::Exact,
                samples: 1_000_000,
                seed: REPORT_SEED,
                verify: None,
                curve: format == Format::Json,
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
    let text = compare::run(&CompareArgs {
        files: files.clone(),
        figure: CoverageArg::Dc,
        sort: None,
        format: Format::Table,
    })?;
    write(
        dir,
        "compare.txt",
        &text,
        "concord compare: the candidates side by side",
        &mut list,
    )?;

    // 3. Tune the comparator bands of the plausibility candidate to a coverage target.
    let curve = dir.join("tune-curve.csv");
    let plot = dir.join("tune-trade-off.svg");
    let text = tune::run(&TuneArgs {
        file: files[1].clone(),
        target_dc: "95%".to_string(),
        figure: CoverageArg::DcAllDangerous,
        check: None,
        site: vec!["a_drift".to_string()],
        scale: "0.1:10".to_string(),
        points: 41,
        format: TuneFormat::Text,
        curve: Some(curve.clone()),
        plot: Some(plot.clone()),
    })?;
    write(
        dir,
        "tune.txt",
        &text,
        "concord tune: the widest bands that meet 95 % on a_drift",
        &mut list,
    )?;
    list.push(Entry {
        path: curve,
        what: "the tuning's trade-off curve (coverage against false alarm), CSV".into(),
    });
    list.push(Entry {
        path: plot,
        what: "the same curve drawn (SVG)".into(),
    });

    // 4. One report per candidate, for the safety case.
    let mut reports = Vec::new();
    for (file, (name, _)) in files.iter().zip(FILES) {
        let (html, written) =
            report::build(file, args.date.as_deref(), REPORT_SAMPLES, REPORT_SEED)?;
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
        "concord demo: the Wren brake-pedal travel sensor (an invented scenario), {} candidates, written to {}\n\n",
        FILES.len(),
        dir.display()
    );
    let width = list
        .iter()
        .map(|e| e.path.display().to_string().chars().count())
        .max()
        .unwrap_or(0);
    for e in &list {
        out.push_str(&format!(
            "  {:<width$}  {}\n",
            e.path.display().to_string(),
            e.what
        ));
    }
    let disagree = reports
        .iter()
        .filter_map(|w| w.agreement)
        .any(|(a, n)| a < n);
    out.push_str(&format!(
        "\nNext: open {} in a browser, then read demo/README.md (or `concord help`).\n",
        dir.join("report-wren_dual_plausibility.html").display()
    ));
    if disagree {
        return Err(CliError::CrossCheckDisagrees {
            shown_in: "section 9 of the reports",
            output: out,
        });
    }
    Ok(out)
}
