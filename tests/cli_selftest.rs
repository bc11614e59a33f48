//! `concord selftest` end to end: the suite passes in this build, its JSON parses back into
//! the documented form, is byte-identical across runs and thread counts, the table names
//! every group and source, and the compiled reference data still equal the stored tables
//! of tests/reference/ that they were taken from (written by
//! tests/reference/selftest_reference.py).

use std::process::Command;

use concord::analysis::selftest::{self, Case, Measure, REFERENCE_JSON, SelfTest};
use concord::report::selftest::{SelfTestJson, render_table};

fn concord(args: &[&str], threads: &str) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_concord"))
        .args(args)
        // run from a folder without tests/ and architectures/: the suite must not need them
        .current_dir(std::env::temp_dir())
        .env("RAYON_NUM_THREADS", threads)
        .output()
        .expect("run concord")
}

#[test]
fn every_case_passes_and_the_binary_exits_zero() {
    let out = concord(&["selftest", "--format", "json"], "2");
    let doc: SelfTestJson = serde_json::from_slice(&out.stdout).expect("the JSON document");
    let failed: Vec<_> = doc.cases.iter().filter(|c| !c.pass).collect();
    assert!(failed.is_empty(), "failed cases: {failed:#?}");
    assert_eq!(out.status.code(), Some(0));
    assert_eq!(doc.verdict, "pass");
    assert_eq!(doc.passed, doc.cases_total);
    assert_eq!(doc.cases.len(), doc.cases_total);
    // every group of the suite is there, with enough cases to mean something
    let groups: Vec<&str> = doc.groups.iter().map(|g| g.group.as_str()).collect();
    for g in [
        "normal distribution",
        "bivariate normal",
        "bivariate normal, closed form",
        "gaussian vector in a box",
        "adaptive quadrature",
        "whole analysis, closed form",
        "whole analysis, reference table",
        "whole analysis, Monte Carlo agreement",
    ] {
        assert!(groups.contains(&g), "group {g} missing: {groups:?}");
    }
    assert!(doc.cases_total >= 150, "{} cases", doc.cases_total);
    for c in &doc.cases {
        assert!(!c.source.is_empty(), "{} names no source", c.name);
        assert!(c.computed.is_some() && c.error.is_some(), "{c:?}");
        assert!(c.bound > 0.0 || c.error == Some(0.0), "{c:?}");
    }
    assert!(!doc.cautions.is_empty());
}

#[test]
fn json_is_byte_identical_across_runs_and_thread_counts() {
    let one = concord(&["selftest", "--format", "json"], "1");
    let two = concord(&["selftest", "--format", "json"], "2");
    let again = concord(&["selftest", "--format", "json"], "2");
    assert!(one.status.success());
    assert_eq!(one.stdout, two.stdout);
    assert_eq!(two.stdout, again.stdout);
}

#[test]
fn table_lists_every_case_with_its_verdict() {
    let out = concord(&["selftest"], "2");
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).expect("UTF-8");
    let suite = selftest::run().expect("the suite runs");
    assert!(text.contains(&format!(
        "{} cases: {} passed, 0 failed. Verdict: pass.",
        suite.cases.len(),
        suite.cases.len()
    )));
    assert_eq!(text.matches("  pass").count(), suite.cases.len());
    assert!(text.contains("source: Sheppard (1899)"));
    assert!(text.lines().all(|l| l.chars().count() <= 100), "{text}");
    assert!(text.contains("analyst remains responsible"));
}

#[test]
fn a_failing_case_fails_the_suite_and_is_shown() {
    // The verdict logic itself: a case outside its bound, and one that failed to compute.
    let off = Case::new(
        "demo group",
        "one",
        "a source",
        Ok((1.0 + 1e-9, 1e-12)),
        1.0,
        1e-12,
        Measure::Absolute,
    );
    assert!(!off.pass);
    let broken = Case::new(
        "demo group",
        "two",
        "a source",
        Err("engine failed".into()),
        1.0,
        1e-12,
        Measure::Relative,
    );
    assert!(!broken.pass);
    let within = Case::new(
        "demo group",
        "three",
        "a source",
        Ok((2.0e-300 * (1.0 + 1e-15), 0.0)),
        2.0e-300,
        1e-14 * 2.0e-300,
        Measure::Relative,
    );
    assert!(within.pass, "{within:?}");
    let suite = SelfTest {
        cases: vec![off, broken, within],
    };
    assert_eq!(suite.failed(), 2);
    let text = render_table(&suite);
    assert!(text.contains("Verdict: fail."), "{text}");
    assert!(text.contains("FAIL"));
    assert!(text.contains("engine failed"));
}

fn stored(name: &str) -> String {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference")
        .join(name);
    std::fs::read_to_string(path).expect("stored table")
}

#[test]
fn compiled_reference_data_equal_the_stored_tables() {
    let data = selftest::reference_data().expect("parses");
    // normal: every compiled row is a row of normal_cdf.csv
    let normal = stored("normal_cdf.csv");
    for row in &data.normal {
        let found = normal.lines().skip(1).any(|l| {
            let f: Vec<&str> = l.split(',').collect();
            f.len() >= 3
                && f[0].parse::<f64>().ok() == Some(row.x)
                && f[1].parse::<f64>().ok() == Some(row.cdf)
                && f[2].parse::<f64>().ok() == Some(row.sf)
        });
        assert!(found, "normal row x = {} not in the stored table", row.x);
    }
    let bivariate = stored("bivariate_orthant.csv");
    for row in &data.bivariate {
        let found = bivariate.lines().skip(1).any(|l| {
            let f: Vec<f64> = l.split(',').filter_map(|v| v.parse().ok()).collect();
            f == [row.h, row.k, row.rho, row.lower_orthant]
        });
        assert!(found, "bivariate row {row:?} not in the stored table");
    }
    let analysis: serde_json::Value =
        serde_json::from_str(&stored("analysis_reference.json")).expect("JSON");
    let cases = analysis["cases"].as_array().expect("cases");
    assert_eq!(cases.len(), data.analysis.len());
    for (stored, compiled) in cases.iter().zip(&data.analysis) {
        assert_eq!(stored["toml"].as_str(), Some(compiled.toml.as_str()));
        for (s, c) in stored["results"]
            .as_array()
            .expect("results")
            .iter()
            .zip(&compiled.results)
        {
            assert_eq!(s["p_vu"]["value"].as_f64(), Some(c.p_vu.value));
            assert_eq!(s["p_vd"]["value"].as_f64(), Some(c.p_vd.value));
        }
    }
    let polytope: serde_json::Value =
        serde_json::from_str(&stored("polytope_scipy.json")).expect("JSON");
    for row in &data.polytope {
        let s = polytope["cases"]
            .as_array()
            .expect("cases")
            .iter()
            .find(|c| c["name"].as_str() == Some(row.name.as_str()))
            .expect("case in the stored table");
        assert_eq!(s["value"].as_f64(), Some(row.value));
    }
    assert!(REFERENCE_JSON.contains("tests/reference/selftest_reference.py"));
}
