//! Golden-file (snapshot) tests of every output format of `analyze`, `compare`, `tune`,
//! `sweep`, `check`, `sensitivity` and `report` on the bundled examples, and of `selftest`.
//!
//! These are regression guards, not correctness checks: a golden file holds what concord
//! wrote when it was last reviewed by eye, and the test fails on any byte that differs. The
//! numbers in them are checked against outside sources by the other tests (`cli_analyze`,
//! `analysis_reference`, `report_html`, ...), never here.
//!
//! To rewrite the golden files on purpose after a change of an output:
//!
//!     CONCORD_UPDATE_SNAPSHOTS=1 cargo test --release --test report_snapshots
//!
//! then read `git diff tests/snapshots/` and commit the files with the change. On a
//! mismatch the test writes what it got beside the target directory
//! (`target/tmp/snapshots/NAME`) for a diff.
//!
//! Machine-dependent parts are pinned: the files are given by relative paths from the crate
//! root (the working directory of integration tests), the report date is fixed, and the
//! wall-clock seconds of `compare` are set to zero before rendering (they are the only
//! timing any output carries). `tool_version` comes from Cargo.toml and changes with a
//! release, on purpose. The figures are printed in full precision, so a platform whose
//! floating-point functions round differently in the last bit would show here first.

use std::path::{Path, PathBuf};
use std::process::Command;

use concord::analysis::AnalysisOptions;
use concord::analysis::compare::summarise;
use concord::model::load;
use concord::report::compare;

/// The fast examples (the four-channel one takes seconds and is left out).
const EXAMPLES: [&str; 4] = [
    "plovrant_swa2_mean",
    "plovrant_swa2_plausibility",
    "plovrant_swa2_shared_ref",
    "plovrant_swa3_median",
];

const UPDATE: &str = "CONCORD_UPDATE_SNAPSHOTS";

fn example(name: &str) -> String {
    format!("architectures/{name}.toml")
}

/// Compares `actual` with the golden file `tests/snapshots/NAME`, or rewrites that file when
/// `CONCORD_UPDATE_SNAPSHOTS=1`.
fn assert_snapshot(name: &str, actual: &str) {
    let golden = Path::new("tests/snapshots").join(name);
    if std::env::var(UPDATE).is_ok_and(|v| v == "1") {
        std::fs::create_dir_all("tests/snapshots").expect("create tests/snapshots");
        std::fs::write(&golden, actual).expect("write the golden file");
        return;
    }
    let Ok(expected) = std::fs::read_to_string(&golden) else {
        panic!(
            "no golden file {}; write it with {UPDATE}=1 and review it",
            golden.display()
        );
    };
    if expected == actual {
        return;
    }
    let got = PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
        .join("snapshots")
        .join(name);
    if let Some(dir) = got.parent() {
        let _ = std::fs::create_dir_all(dir);
    }
    let _ = std::fs::write(&got, actual);
    let line = expected
        .lines()
        .zip(actual.lines())
        .position(|(e, a)| e != a)
        .unwrap_or_else(|| expected.lines().count().min(actual.lines().count()));
    panic!(
        "{name} differs from its golden file {} from line {} on:\n  golden: {:?}\n  got:    {:?}\n\
         the whole output is in {}; if the change is intended, rerun with {UPDATE}=1 and \
         review the diff",
        golden.display(),
        line + 1,
        expected.lines().nth(line).unwrap_or("<end>"),
        actual.lines().nth(line).unwrap_or("<end>"),
        got.display()
    );
}

/// Runs the binary and returns its standard output (it must succeed).
fn concord(args: &[&str]) -> String {
    let out = Command::new(env!("CARGO_BIN_EXE_concord"))
        .args(args)
        .env("RAYON_NUM_THREADS", "2")
        .env_remove("SOURCE_DATE_EPOCH")
        .output()
        .expect("run concord");
    assert!(
        out.status.success(),
        "concord {args:?} failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).expect("UTF-8 output")
}

/// A fresh scratch file for an output the binary writes to a path.
fn scratch(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("snapshot-outputs");
    std::fs::create_dir_all(&dir).expect("scratch folder");
    let path = dir.join(name);
    let _ = std::fs::remove_file(&path);
    path
}

fn read(path: &Path) -> String {
    std::fs::read_to_string(path).expect("the written output")
}

#[test]
fn analyze_table() {
    for name in EXAMPLES {
        let out = concord(&["analyze", &example(name), "--format", "table"]);
        assert_snapshot(&format!("analyze_{name}.txt"), &out);
    }
}

#[test]
fn analyze_json() {
    for name in EXAMPLES {
        let out = concord(&["analyze", &example(name), "--format", "json"]);
        assert_snapshot(&format!("analyze_{name}.json"), &out);
    }
}

#[test]
fn analyze_csv() {
    for name in EXAMPLES {
        let out = concord(&["analyze", &example(name), "--format", "csv"]);
        assert_snapshot(&format!("analyze_{name}.csv"), &out);
    }
}

#[test]
fn check_summary_and_dot() {
    for name in EXAMPLES {
        let out = concord(&["check", &example(name)]);
        assert_snapshot(&format!("check_{name}.txt"), &out);
        let dot = concord(&["check", &example(name), "--dot"]);
        assert_snapshot(&format!("check_{name}.dot"), &dot);
    }
}

/// `compare` through the library, with the wall-clock seconds pinned to zero.
#[test]
fn compare_every_format() {
    let options = AnalysisOptions::default();
    let mut rows = Vec::new();
    for name in EXAMPLES {
        let arch = load(Path::new(&example(name))).expect("a bundled example");
        let mut row = summarise(&arch, &options).expect("its analysis");
        row.seconds = 0.0;
        rows.push(row);
    }
    for (all_dangerous, figure) in [(false, "dc"), (true, "dc_all_dangerous")] {
        assert_snapshot(
            &format!("compare_{figure}.txt"),
            &compare::table(&rows, all_dangerous),
        );
        assert_snapshot(
            &format!("compare_{figure}.json"),
            &compare::json(&rows, all_dangerous).expect("JSON"),
        );
        assert_snapshot(
            &format!("compare_{figure}.csv"),
            &compare::csv(&rows, all_dangerous),
        );
    }
}

#[test]
fn tune_every_format() {
    for name in ["plovrant_swa2_mean", "plovrant_swa2_shared_ref"] {
        let file = example(name);
        let curve = scratch(&format!("tune_{name}.csv"));
        let plot = scratch(&format!("tune_{name}.svg"));
        let text = concord(&[
            "tune",
            &file,
            "--target-dc",
            "99%",
            "--curve-csv",
            curve.to_str().expect("UTF-8 path"),
            "--plot",
            plot.to_str().expect("UTF-8 path"),
        ]);
        assert_snapshot(&format!("tune_{name}.txt"), &text);
        assert_snapshot(&format!("tune_{name}.curve.csv"), &read(&curve));
        assert_snapshot(&format!("tune_{name}.svg"), &read(&plot));
        let json = concord(&[
            "tune",
            &file,
            "--target-dc",
            "0.95",
            "--figure",
            "dc",
            "--points",
            "9",
            "--format",
            "json",
        ]);
        assert_snapshot(&format!("tune_{name}.json"), &json);
    }
}

#[test]
fn sweep_every_format() {
    let file = example("plovrant_swa2_mean");
    let plot = scratch("sweep_parameter.svg");
    let csv = concord(&[
        "sweep",
        &file,
        "--vary",
        "checks.ab.limit=1.5:3.5",
        "--points",
        "5",
        "--series",
        "safety.limit=2,3",
        "--plot",
        plot.to_str().expect("UTF-8 path"),
    ]);
    assert_snapshot("sweep_parameter.csv", &csv);
    assert_snapshot("sweep_parameter.svg", &read(&plot));
    let json = concord(&[
        "sweep",
        &file,
        "--vary",
        "checks.ab.limit=2,2.5,3",
        "--format",
        "json",
    ]);
    assert_snapshot("sweep_parameter.json", &json);
    let plot = scratch("sweep_spread.svg");
    let json = concord(&[
        "sweep",
        &file,
        "--spread",
        "a_drift",
        "--points",
        "20",
        "--format",
        "json",
        "--plot",
        plot.to_str().expect("UTF-8 path"),
    ]);
    assert_snapshot("sweep_spread.json", &json);
    assert_snapshot("sweep_spread.svg", &read(&plot));
    let csv = concord(&["sweep", &file, "--spread", "b_offset", "--points", "20"]);
    assert_snapshot("sweep_spread.csv", &csv);
}

#[test]
fn report_html() {
    for name in ["plovrant_swa2_mean", "plovrant_swa3_median"] {
        let html = scratch(&format!("report_{name}.html"));
        concord(&[
            "report",
            &example(name),
            "-o",
            html.to_str().expect("UTF-8 path"),
            "--date",
            "2026-01-15",
        ]);
        assert_snapshot(&format!("report_{name}.html"), &read(&html));
    }
}

#[test]
fn selftest_every_format() {
    assert_snapshot("selftest.txt", &concord(&["selftest"]));
    assert_snapshot("selftest.json", &concord(&["selftest", "--format", "json"]));
}

#[test]
fn sensitivity_every_format() {
    // The two-channel example (7 ms); the three-channel one takes seconds.
    let file = example("plovrant_swa2_mean");
    for (format, ext) in [("table", "txt"), ("json", "json"), ("csv", "csv")] {
        let out = concord(&["sensitivity", &file, "--format", format]);
        assert_snapshot(&format!("sensitivity_plovrant_swa2_mean.{ext}"), &out);
    }
    let dir = scratch("sensitivity-plots");
    let _ = std::fs::remove_dir_all(&dir);
    let dir_text = dir.to_string_lossy().to_string();
    concord(&["sensitivity", &file, "--plot", &dir_text]);
    assert_snapshot(
        "sensitivity_plovrant_swa2_mean_spfm.svg",
        &read(&dir.join("sensitivity-spfm.svg")),
    );
}
