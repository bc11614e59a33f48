//! `concord sweep`, `tune` and `compare` end to end: every number equals what
//! `concord analyze --format json` prints for the same file (edited by hand where a sweep sets
//! a value), the pictures are well-formed SVG with their series, and bad requests fail with
//! the documented exit code and a message naming the fix.

use std::path::{Path, PathBuf};
use std::process::Command;

use concord::report::json::AnalysisJson;
use serde_json::Value;

const MEAN: &str = "architectures/plovrant_swa2_mean.toml";
const PLAUSIBILITY: &str = "architectures/plovrant_swa2_plausibility.toml";
const SHARED_REF: &str = "architectures/plovrant_swa2_shared_ref.toml";

fn concord(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_concord"))
        .args(args)
        .output()
        .expect("run concord")
}

fn ok(out: &std::process::Output) -> String {
    assert!(
        out.status.success(),
        "exit {:?}: {}",
        out.status.code(),
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout.clone()).expect("UTF-8 output")
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("concord-cli-explore-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir.join(name)
}

fn analyze_json(path: &Path) -> AnalysisJson {
    let out = concord(&["analyze", path.to_str().unwrap(), "--format", "json"]);
    serde_json::from_str(&ok(&out)).expect("the analyze JSON contract")
}

/// The data lines of a CSV text of sweep or tune, after checking that it opens with the
/// comment block of the cautions (lines starting with `#`, the rule README.md states).
fn csv_data_lines(text: &str) -> Vec<&str> {
    let comments: Vec<&str> = text.lines().take_while(|l| l.starts_with('#')).collect();
    let block = comments.join("\n");
    for words in ["analyst remains responsible", "assessor", "estimates"] {
        assert!(
            block.contains(words),
            "the CSV comment block lacks '{words}':\n{block}"
        );
    }
    let data: Vec<&str> = text.lines().skip(comments.len()).collect();
    assert!(
        data.iter().all(|l| !l.starts_with('#')),
        "comments only at the top"
    );
    data
}

/// The cautions of a JSON document of sweep, with the same three as `analyze`.
fn assert_cautions(doc: &Value) {
    let single = analyze_json(Path::new(MEAN));
    let cautions: Vec<&str> = doc["cautions"]
        .as_array()
        .expect("a cautions field")
        .iter()
        .filter_map(Value::as_str)
        .collect();
    assert_eq!(cautions, single.cautions, "the same cautions as analyze");
}

fn value(v: &Value, key: &str) -> f64 {
    v[key]["value"].as_f64().unwrap_or(f64::NAN)
}

#[test]
fn sweep_rows_carry_the_isolation_figures_of_analyze() {
    // The three-channel example has an [isolation] section: a sweep row's end states and
    // per-site isolation figures are those `analyze` writes for the file edited by hand, and
    // the CSV has a cell under every column.
    let file = "architectures/plovrant_swa3_median.toml";
    let original = std::fs::read_to_string(file).unwrap();
    let set = "[checks.ab]\nkind = \"difference\"\nof = [\"hall_a\", \"hall_b\"]\nlimit = 2.0\n";
    assert!(original.contains(set));
    let edited = original.replacen(set, &set.replace("limit = 2.0", "limit = 2.5"), 1);
    let path = scratch("swa3_ab_2.5.toml");
    std::fs::write(&path, edited).unwrap();
    let single: Value = serde_json::from_str(&ok(&concord(&[
        "analyze",
        path.to_str().unwrap(),
        "--format",
        "json",
    ])))
    .unwrap();
    let out = concord(&[
        "sweep",
        file,
        "--vary",
        "checks.ab.limit=2.5",
        "--format",
        "json",
    ]);
    let doc: Value = serde_json::from_str(&ok(&out)).expect("the sweep JSON");
    let row = &doc["rows"][0];
    let ends = &single["isolation"]["end_states"];
    for k in ["continues", "shutdown", "fault_stays", "residual"] {
        assert_eq!(
            value(&row["isolation"]["end_states"], k),
            ends[k].as_f64().unwrap(),
            "{k}"
        );
    }
    let sites = single["isolation"]["sites"].as_array().unwrap();
    for (s, j) in row["isolation"]["sites"]
        .as_array()
        .unwrap()
        .iter()
        .zip(sites)
    {
        assert_eq!(s["name"], j["name"]);
        for k in ["isolated", "wrong_channel", "none_blamed"] {
            assert_eq!(value(s, k), j[k].as_f64().unwrap(), "{} {k}", j["name"]);
        }
        assert_eq!(s["sigma"], j["sigma"]);
    }
    let csv = ok(&concord(&["sweep", file, "--vary", "checks.ab.limit=2.5"]));
    let lines = csv_data_lines(&csv);
    let header = lines[0].split(',').count();
    assert_eq!(lines[1].split(',').count(), header);
    assert!(lines[0].contains("a_drift.wrong_channel,a_drift.wrong_channel_error"));
}

#[test]
fn sweep_rows_equal_analyze_on_files_edited_by_hand() {
    let limits = ["1.75", "2.5", "3.25"];
    let out = concord(&[
        "sweep",
        MEAN,
        "--vary",
        &format!("checks.ab.limit={}", limits.join(",")),
        "--format",
        "json",
    ]);
    let doc: Value = serde_json::from_str(&ok(&out)).expect("the sweep JSON");
    assert_cautions(&doc);
    let rows = doc["rows"].as_array().unwrap();
    assert_eq!(rows.len(), 3);
    let original = std::fs::read_to_string(MEAN).unwrap();
    assert!(original.contains("limit = 2.5\n"));
    for (row, limit) in rows.iter().zip(limits) {
        // The file with the value written in, as an analyst would edit it.
        let edited = original.replacen("limit = 2.5\n", &format!("limit = {limit}\n"), 1);
        let path = scratch(&format!("mean_{limit}.toml"));
        std::fs::write(&path, edited).unwrap();
        let single = analyze_json(&path);
        assert_eq!(row["x"].as_f64().unwrap(), limit.parse::<f64>().unwrap());
        assert_eq!(
            value(row, "false_alarm"),
            single.baseline.false_alarm,
            "false alarm at {limit}"
        );
        assert_eq!(value(row, "residual_fit"), single.metrics.residual_fit);
        assert_eq!(value(row, "spfm"), single.metrics.spfm);
        assert_eq!(value(row, "lfm"), single.metrics.lfm);
        let sites = row["sites"].as_array().unwrap();
        assert_eq!(sites.len(), single.sites.len());
        for (s, j) in sites.iter().zip(&single.sites) {
            assert_eq!(s["name"].as_str().unwrap(), j.name);
            assert_eq!(value(s, "p_vu"), j.p_vu, "{} at {limit}", j.name);
            assert_eq!(value(s, "dc_all_dangerous"), j.dc_all_dangerous);
            assert_eq!(s["dc"]["value"].as_f64(), j.dc);
            assert_eq!(s["worst_sigma"].as_f64(), j.worst_sigma);
        }
    }
}

#[test]
fn a_long_sweep_streams_every_row_as_csv_in_order() {
    let out = concord(&[
        "sweep",
        MEAN,
        "--vary",
        "safety.limit=1:4",
        "--points",
        "400",
        "--series",
        "checks.ab.limit=2,3",
    ]);
    let text = ok(&out);
    let lines = csv_data_lines(&text);
    assert_eq!(lines.len(), 801, "header and 800 rows");
    assert!(lines[0].starts_with("safety.limit,checks.ab.limit,false_alarm,"));
    assert!(lines[1].starts_with("1e0,2e0,"));
    assert!(lines[400].starts_with("4e0,2e0,"));
    assert!(lines[401].starts_with("1e0,3e0,"));
    // Nothing on standard error when it is not a terminal (no progress bar).
    assert!(
        out.stderr.is_empty(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

fn parse_svg(path: &Path) -> String {
    let text = std::fs::read_to_string(path).unwrap();
    roxmltree::Document::parse(&text).expect("well-formed SVG");
    text
}

#[test]
fn plots_are_well_formed_svg_with_their_series_and_levels() {
    let vary = scratch("vary.svg");
    ok(&concord(&[
        "sweep",
        MEAN,
        "--vary",
        "safety.limit=1:4",
        "--points",
        "7",
        "--plot",
        vary.to_str().unwrap(),
    ]));
    let svg = parse_svg(&vary);
    for label in [
        "a_drift",
        "b_offset",
        "a_stuck",
        "b_frozen",
        "medium DC 90 %",
        "lowest",
    ] {
        assert!(svg.contains(label), "sweep plot lacks {label}");
    }

    let spread = scratch("spread.svg");
    let out = concord(&[
        "sweep",
        MEAN,
        "--spread",
        "a_drift",
        "--points",
        "40",
        "--plot",
        spread.to_str().unwrap(),
    ]);
    let csv = ok(&out);
    assert_eq!(csv_data_lines(&csv).len(), 41);
    let svg = parse_svg(&spread);
    for label in [
        "dc_all_dangerous = 1 - p_vu",
        "worst case",
        "high DC 99 %",
        "analyst remains responsible",
    ] {
        assert!(svg.contains(label), "spread plot lacks {label}");
    }

    let tune = scratch("tune.svg");
    let curve = scratch("tune.csv");
    ok(&concord(&[
        "tune",
        MEAN,
        "--target-dc",
        "95%",
        "--plot",
        tune.to_str().unwrap(),
        "--curve-csv",
        curve.to_str().unwrap(),
    ]));
    let svg = parse_svg(&tune);
    assert!(svg.contains("chosen: checks.ab.limit"));
    assert!(svg.contains("target 95 %"));
    assert!(svg.contains("analyst remains responsible"));
    let rows = std::fs::read_to_string(&curve).unwrap();
    assert_eq!(
        csv_data_lines(&rows).len(),
        42,
        "header and 41 curve points"
    );
}

#[test]
fn every_csv_output_opens_with_the_cautions() {
    let analyze = ok(&concord(&["analyze", MEAN, "--format", "csv"]));
    let rows = csv_data_lines(&analyze);
    assert!(rows[0].starts_with("scenario,fit,mode,"), "{}", rows[0]);
    assert!(rows[1].starts_with("baseline,"));
    let compared = ok(&concord(&[
        "compare",
        MEAN,
        PLAUSIBILITY,
        "--format",
        "csv",
    ]));
    let rows = csv_data_lines(&compared);
    assert!(rows[0].starts_with("architecture,file,channels,output_channels,checks,"));
    assert_eq!(rows.len(), 3, "header and two architectures");
}

#[test]
fn the_spread_worst_case_equals_analyze_over_the_same_range() {
    // a_drift has an unknown sigma over the default range; the spread sweep over that same
    // range must find the same worst case as analyze (the same search).
    let single = analyze_json(Path::new(MEAN));
    let site = single.sites.iter().find(|s| s.name == "a_drift").unwrap();
    let out = concord(&["sweep", MEAN, "--spread", "a_drift", "--format", "json"]);
    let doc: Value = serde_json::from_str(&ok(&out)).unwrap();
    assert_cautions(&doc);
    assert_eq!(doc["worst"]["sigma"].as_f64(), site.worst_sigma);
    assert_eq!(value(&doc["worst"], "p_vu"), site.p_vu);
}

#[test]
fn compare_prints_the_numbers_of_analyze() {
    let out = concord(&[
        "compare",
        MEAN,
        PLAUSIBILITY,
        SHARED_REF,
        "--format",
        "json",
        "--sort",
        "residual-fit",
    ]);
    let doc: Value = serde_json::from_str(&ok(&out)).unwrap();
    let rows = doc["architectures"].as_array().unwrap();
    assert_eq!(rows.len(), 3);
    let mut last = f64::NEG_INFINITY;
    for row in rows {
        let path = row["path"].as_str().unwrap();
        let single = analyze_json(Path::new(path));
        let residual = value(&row["metrics"], "residual_fit");
        assert_eq!(residual, single.metrics.residual_fit, "{path}");
        assert!(residual >= last, "sorted by residual FIT");
        last = residual;
        assert_eq!(value(&row["metrics"], "spfm"), single.metrics.spfm);
        assert_eq!(value(&row["metrics"], "lfm"), single.metrics.lfm);
        assert_eq!(value(row, "false_alarm"), single.baseline.false_alarm);
        // The channels the output uses, counted from the file's [output] `of` as written
        // (these outputs read channels directly, no derived signals), and every channel.
        let file: toml::Table = std::fs::read_to_string(path).unwrap().parse().unwrap();
        let of = &file["output"]["of"];
        let named = of
            .as_array()
            .map(Vec::len)
            .or_else(|| of.as_table().map(toml::Table::len))
            .unwrap_or(1);
        assert_eq!(
            row["output_channels"].as_u64(),
            Some(named as u64),
            "{path}"
        );
        let declared = file["channels"].as_table().unwrap().len();
        assert_eq!(row["channels"].as_u64(), Some(declared as u64), "{path}");
        assert!(row["cells"].as_u64().is_some(), "cells stays in the JSON");
        for (s, j) in row["sites"].as_array().unwrap().iter().zip(&single.sites) {
            assert_eq!(s["name"].as_str().unwrap(), j.name);
            assert_eq!(s["dc"]["value"].as_f64(), j.dc, "{path} {}", j.name);
            assert_eq!(value(s, "p_vu"), j.p_vu);
        }
    }
    // The table gives a site of the same name in both files one row.
    let table = ok(&concord(&["compare", MEAN, PLAUSIBILITY]));
    let rows: Vec<&str> = table
        .lines()
        .filter(|l| l.starts_with("a_drift "))
        .collect();
    assert_eq!(rows.len(), 1, "{table}");
    assert_eq!(
        rows[0].split_whitespace().count(),
        3,
        "one figure per file: {}",
        rows[0]
    );
    assert!(table.contains("Plovrant SWA-2P"));
    // The internal count of cells is in the JSON only; the words are the README's.
    let head = table
        .lines()
        .find(|l| l.contains("architecture"))
        .expect("a header line");
    assert!(!head.contains("cells"), "{head}");
    for word in ["channels", "false alarm", "time s"] {
        assert!(head.contains(word), "{word} missing: {head}");
    }
    assert!(!table.contains("nuisance"));
}

#[test]
fn bad_requests_fail_as_input_errors_naming_the_fix() {
    let cases: [(&[&str], &str); 6] = [
        (&["sweep", MEAN, "--vary", "checks.ab.limit"], "KEY=FROM:TO"),
        (
            &["sweep", MEAN, "--vary", "checks.nope.limit=1:2"],
            "checks.nope",
        ),
        (
            &["sweep", MEAN, "--vary", "checks.ab.limit=-1:2"],
            "checks.ab.limit = -1",
        ),
        (&["sweep", MEAN, "--spread", "b_frozen"], "uniform"),
        (&["tune", MEAN, "--target-dc", "99"], "percentage"),
        (
            &["tune", MEAN, "--target-dc", "0.9", "--check", "xy"],
            "the checks are: ab",
        ),
    ];
    for (args, needle) in cases {
        let out = concord(args);
        assert_eq!(out.status.code(), Some(2), "{args:?}");
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(err.contains(needle), "{args:?}: {err}");
    }
    let out = concord(&["sweep", MEAN]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--spread"));
}
