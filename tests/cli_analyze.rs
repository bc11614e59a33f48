//! The `concord` binary end to end: the JSON contract parsed back into its typed form,
//! byte-identical output across runs and thread counts, and the documented exit codes.

use std::process::Command;

use concord::analysis::{AnalysisOptions, analyze};
use concord::model::load;
use concord::report::json::AnalysisJson;

const EXAMPLE: &str = "architectures/plovrant_swa2_mean.toml";

fn concord(args: &[&str], threads: &str) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_concord"))
        .args(args)
        .env("RAYON_NUM_THREADS", threads)
        .output()
        .expect("run concord")
}

#[test]
fn json_contract_parses_back_and_matches_the_library() {
    let out = concord(&["analyze", EXAMPLE, "--format", "json"], "2");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let doc: AnalysisJson = serde_json::from_slice(&out.stdout).expect("the JSON contract");
    // Every key of the contract (src/report/json.rs) is present (serde would fail otherwise) and
    // the numbers are those of the library for the same file.
    let arch = load(std::path::Path::new(EXAMPLE)).unwrap();
    let analysis = analyze(&arch.model, &AnalysisOptions::default(), false).unwrap();
    assert_eq!(doc.sites.len(), analysis.sites.len());
    for (j, s) in doc.sites.iter().zip(&analysis.sites) {
        assert_eq!(j.name, s.name);
        assert_eq!(j.p_vu, s.outcome.p_vu.value);
        assert_eq!(j.p_vd, s.outcome.p_vd.value);
        assert_eq!(j.dc_all_dangerous, 1.0 - s.outcome.p_vu.value);
        assert_eq!(j.residual_fit, s.fit * s.outcome.p_vu.value);
    }
    assert_eq!(doc.baseline.p_vu, analysis.baseline.p_vu.value);
    assert_eq!(doc.input_sha256.len(), 64);
    assert!(!doc.cautions.is_empty());
    // The unknown-sigma site reports its worst sigma; the others report null.
    assert!(doc.sites.iter().any(|s| s.worst_sigma.is_some()));
    assert!(doc.sites.iter().any(|s| s.worst_sigma.is_none()));
    // SPFM = 1 - residual / total (ISO 26262-5:2018, 8.4.5), recomputed from the sites.
    let total: f64 = doc.sites.iter().map(|s| s.fit).sum();
    let residual: f64 = doc.sites.iter().map(|s| s.residual_fit).sum();
    assert!((doc.metrics.spfm - (1.0 - residual / total)).abs() < 1e-15);
}

#[test]
fn output_is_byte_identical_across_runs_and_thread_counts() {
    let one = concord(&["analyze", EXAMPLE, "--format", "json"], "1");
    let two = concord(&["analyze", EXAMPLE, "--format", "json"], "2");
    let again = concord(&["analyze", EXAMPLE, "--format", "json"], "2");
    assert!(one.status.success());
    assert_eq!(one.stdout, two.stdout);
    assert_eq!(two.stdout, again.stdout);
}

#[test]
fn invalid_input_exits_with_code_two_and_names_the_file() {
    let out = concord(&["analyze", "tests/malformed/does-not-exist.toml"], "1");
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("does-not-exist.toml"));
    let bad = concord(&["check", "tests/malformed/many_errors.toml"], "1");
    assert_eq!(bad.status.code(), Some(2));
}

#[test]
fn monte_carlo_cross_check_agrees_on_the_example() {
    // The exact figures must lie in the 99.9 % Wilson intervals of an independent sampler
    // (fixed seed, so the test is repeatable).
    let out = concord(
        &["analyze", EXAMPLE, "--format", "json", "--verify", "200000"],
        "2",
    );
    let doc: AnalysisJson = serde_json::from_slice(&out.stdout).expect("JSON");
    let rows = doc.verification.expect("verification rows");
    assert_eq!(rows.len(), 4 * (doc.sites.len() + 1));
    let disagree: Vec<_> = rows.iter().filter(|r| !r.agrees).collect();
    assert!(disagree.is_empty(), "{disagree:?}");
    assert!(out.status.success());
}
