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
