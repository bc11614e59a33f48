//! Size limits: going past one gives an error that names the limit (and what to change),
//! never a silent slow run. The limits are in src/model/limits.rs and, for the
//! decomposition, `AnalysisOptions::max_polytopes` and `analysis::cells::MAX_CELLS`.
//! (The limit on sweep points belongs to `concord sweep`.)

use concord::analysis::{AnalysisOptions, analyze};
use concord::model::{limits, load_str};

fn channels(n: usize) -> String {
    (0..n)
        .map(|i| format!("[channels.c{i}]\nmean = 0.0\nsigma = 1.0\n\n"))
        .collect()
}

fn names(n: usize) -> String {
    (0..n)
        .map(|i| format!("\"c{i}\""))
        .collect::<Vec<_>>()
        .join(", ")
}

fn file(n: usize, output: &str, checks: &str) -> String {
    format!(
        "name = \"limits\"\nunit = \"mm\"\n\n{}[output]\n{output}\n\n{checks}\n[safety]\nlimit = 2.0\n",
        channels(n)
    )
}

fn first_error(text: &str) -> String {
    match load_str(text, "limits.toml") {
        Ok(_) => panic!("the file was accepted"),
        Err(e) => e.to_string(),
    }
}

#[test]
fn too_many_channels_names_the_limit() {
    let n = limits::MAX_CHANNELS + 1;
    let text = file(
        n,
        &format!("kind = \"mean\"\nof = [{}]", names(n)),
        "[checks.k]\nkind = \"difference\"\nof = [\"c0\", \"c1\"]\nlimit = 1.0\n",
    );
    let e = first_error(&text);
    assert!(
        e.contains(&format!("more than the limit of {}", limits::MAX_CHANNELS)),
        "{e}"
    );
    // at the limit it loads
    let n = limits::MAX_CHANNELS;
    let text = file(
        n,
        &format!("kind = \"mean\"\nof = [{}]", names(n)),
        "[checks.k]\nkind = \"difference\"\nof = [\"c0\", \"c1\"]\nlimit = 1.0\n",
    );
    assert!(load_str(&text, "limits.toml").is_ok());
}

#[test]
fn too_many_checks_names_the_limit() {
    let checks: String = (0..=limits::MAX_CHECKS)
        .map(|k| {
            format!("[checks.k{k}]\nkind = \"difference\"\nof = [\"c0\", \"c1\"]\nlimit = 1.0\n\n")
        })
        .collect();
    let e = first_error(&file(2, "kind = \"mean\"\nof = [\"c0\", \"c1\"]", &checks));
    assert!(
        e.contains(&format!("more than the limit of {}", limits::MAX_CHECKS)),
        "{e}"
    );
}

#[test]
fn too_many_pieces_names_the_limit() {
    // The median of twelve channels has C(12, 2) C(10, 5) = 16632 rank patterns, more than
    // MAX_PIECES = 5040: the file loads (the order-statistic engine needs no pieces), but
    // with two-of-two detection that engine does not fit either, and the analysis must say
    // both.
    let checks = "[checks.ab]\nkind = \"difference\"\nof = [\"c0\", \"c1\"]\nlimit = 1.0\n\n\
                  [checks.cd]\nkind = \"difference\"\nof = [\"c2\", \"c3\"]\nlimit = 1.0\n\n\
                  [detection]\nfires = { at_least = 2 }\n";
    let text = file(
        12,
        &format!("kind = \"median\"\nof = [{}]", names(12)),
        checks,
    );
    let arch = load_str(&text, "limits.toml").expect("a median of twelve loads");
    assert!(!arch.model.pieces_complete);
    let e = analyze(&arch.model, &AnalysisOptions::default(), false)
        .expect_err("neither engine fits")
        .to_string();
    assert!(e.contains(&limits::MAX_PIECES.to_string()), "{e}");
    assert!(e.contains("order-statistic engine"), "{e}");
}

#[test]
fn too_many_order_arguments_names_the_limit() {
    // 16 channels and one derived signal: a median of 17 readings passes MAX_ORDER_ARGS.
    let n = limits::MAX_CHANNELS;
    let mut text = file(
        n,
        &format!("kind = \"median\"\nof = [{}, \"s\"]", names(n)),
        "",
    );
    text.push_str("\n[signals.s]\nkind = \"linear\"\nof = { c0 = 0.5, c1 = 0.5 }\n");
    let e = first_error(&text);
    assert!(
        e.contains(&format!(
            "more than the limit of {}",
            limits::MAX_ORDER_ARGS
        )),
        "{e}"
    );
}

#[test]
fn too_many_polytopes_names_the_limit() {
    // The median of three with two difference checks and two-of-two detection decomposes
    // into more than ten polytopes per figure, and the order-statistic engine does not
    // take k-of-n detection: with max_polytopes = 10 the analysis must refuse and say so.
    let checks = "[checks.ab]\nkind = \"difference\"\nof = [\"c0\", \"c1\"]\nlimit = 1.0\n\n\
                  [checks.bc]\nkind = \"difference\"\nof = [\"c1\", \"c2\"]\nlimit = 1.0\n\n\
                  [detection]\nfires = { at_least = 2 }\n";
    let text = file(
        3,
        &format!("kind = \"median\"\nof = [{}]", names(3)),
        checks,
    );
    let arch = load_str(&text, "limits.toml").expect("valid");
    let options = AnalysisOptions {
        max_polytopes: 10,
        ..AnalysisOptions::default()
    };
    match analyze(&arch.model, &options, false) {
        Err(e) => {
            assert!(e.to_string().contains("more than the limit of 10"), "{e}");
        }
        other => panic!("expected a refusal, got {other:?}"),
    }
    // with the default limit it runs
    assert!(analyze(&arch.model, &AnalysisOptions::default(), false).is_ok());
}

#[test]
fn numbers_beyond_the_magnitude_limit_are_refused() {
    let text = file(
        2,
        "kind = \"mean\"\nof = [\"c0\", \"c1\"]",
        "[checks.k]\nkind = \"difference\"\nof = [\"c0\", \"c1\"]\nlimit = 2e12\n",
    );
    let e = first_error(&text);
    assert!(e.contains("checks.k.limit"), "{e}");
    assert!(e.contains("limit of 1e12"), "{e}");
    // 1e12 itself is allowed
    let text = text.replace("2e12", "1e12");
    assert!(load_str(&text, "limits.toml").is_ok());
}

#[test]
fn files_beyond_the_size_limit_are_refused() {
    let mut text = file(
        2,
        "kind = \"mean\"\nof = [\"c0\", \"c1\"]",
        "[checks.k]\nkind = \"difference\"\nof = [\"c0\", \"c1\"]\nlimit = 1.0\n",
    );
    text.push_str(&"# padding\n".repeat(limits::MAX_FILE_BYTES / 10 + 1));
    let e = first_error(&text);
    assert!(
        e.contains(&format!(
            "more than the limit of {}",
            limits::MAX_FILE_BYTES
        )),
        "{e}"
    );
}

/// Below the limits a file may still be slow: the work is counted before the analysis
/// starts and announced when its least time is long. The counts follow from counting
/// (common practice): an even median of 8 has C(8,2) C(6,3) = 560 rank-pattern pieces; two
/// difference checks with detection on both have 4 detecting patterns (each fires below or
/// above) and 9 - 4 = 5 that do not, so a violated output (2 sides) gives 560 x 2 x 4 = 4480
/// polytopes of p_vd, 560 x 2 x 5 = 5600 of p_vu, and a safe one 560 x 4 = 2240 of p_sd.
#[test]
fn a_long_computation_is_counted_and_announced_before_it_starts() {
    use concord::analysis::workload::estimate;
    let checks = "[checks.a]\nkind = \"difference\"\nof = [\"c0\", \"c1\"]\nlimit = 2.0\n\n\
                  [checks.b]\nkind = \"difference\"\nof = [\"c2\", \"c3\"]\nlimit = 2.0\n\n\
                  [detection]\nfires = { at_least = 2 }\n\n\
                  [faults.f]\nfit = 10.0\nhits = { c0 = 1.0 }\nmode = \"add\"\n\
                  amplitude = { gaussian = { mean = 0.0, sigma = 2.0 } }\n";
    let text = file(
        8,
        &format!("kind = \"median\"\nof = [{}]", names(8)),
        checks,
    );
    let arch = load_str(&text, "slow.toml").expect("valid");
    let options = AnalysisOptions::default();
    let w = estimate(&arch.model, &options).expect("polytopes build");
    assert_eq!(w.polytopes_per_scenario, 4480 + 5600 + 2240);
    // The baseline and the one known amplitude.
    assert_eq!(w.polytope_scenarios, 2);
    assert_eq!(w.integrals, 2 * (4480 + 5600 + 2240));
    assert_eq!(w.dimension, 8);
    let note = w.announcement().expect("announced");
    assert!(note.contains("detection needs 2 firing checks"), "{note}");
    assert!(note.contains("24640 polytope integrals"), "{note}");

    // A two-channel file takes milliseconds: nothing to announce.
    let small = file(
        2,
        "kind = \"mean\"\nof = [\"c0\", \"c1\"]",
        "[checks.d]\nkind = \"difference\"\nof = [\"c0\", \"c1\"]\nlimit = 2.0\n",
    );
    let arch = load_str(&small, "small.toml").expect("valid");
    let w = estimate(&arch.model, &options).expect("polytopes build");
    assert!(w.announcement().is_none());
}
