//! The corpus of malformed architecture files in tests/malformed/: every file has one mistake
//! (or, for `many_errors.toml`, three) and a `.expected` file beside it listing the
//! diagnostics it must produce: `LINE:COL | fragment` (a diagnostic at that position whose
//! text contains the fragment; `0:0` for one without a position) and optionally `errors: N`
//! (exactly N errors). Loading must fail, and must not panic.

use std::path::{Path, PathBuf};

use concord::model::{self, ModelError};

fn corpus() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/malformed");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("the corpus directory exists")
        .map(|e| e.expect("a directory entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    files.sort();
    files
}

struct Expectation {
    at: Vec<((usize, usize), String)>,
    errors: Option<usize>,
}

fn expectation(toml: &Path) -> Expectation {
    let path = toml.with_extension("expected");
    let text = std::fs::read_to_string(&path)
        .unwrap_or_else(|_| panic!("{} has no .expected file", toml.display()));
    let mut at = Vec::new();
    let mut errors = None;
    for line in text.lines() {
        let line = line.trim();
        if line.is_empty() || line.starts_with('#') {
            continue;
        }
        if let Some(n) = line.strip_prefix("errors:") {
            errors = Some(n.trim().parse().expect("errors: N"));
            continue;
        }
        let (pos, fragment) = line.split_once(" | ").expect("LINE:COL | fragment");
        let (l, c) = pos.split_once(':').expect("LINE:COL");
        at.push((
            (l.parse().expect("line"), c.parse().expect("column")),
            fragment.to_string(),
        ));
    }
    assert!(!at.is_empty(), "{} expects nothing", path.display());
    Expectation { at, errors }
}

fn load_without_panic(path: &Path) -> Result<(), ModelError> {
    let p = path.to_path_buf();
    match std::panic::catch_unwind(move || model::load(&p).map(|_| ())) {
        Ok(r) => r,
        Err(_) => panic!("loading {} panicked", path.display()),
    }
}

#[test]
fn corpus_has_at_least_forty_files() {
    assert!(corpus().len() >= 40, "only {} files", corpus().len());
}

#[test]
fn every_malformed_file_fails_with_its_expected_diagnostics() {
    let mut failures = Vec::new();
    for file in corpus() {
        let exp = expectation(&file);
        let err = match load_without_panic(&file) {
            Ok(()) => {
                failures.push(format!("{}: loaded without error", file.display()));
                continue;
            }
            Err(e) => e,
        };
        let diags = err.diagnostics();
        assert!(diags.iter().all(|d| d.is_error()));
        for ((line, col), fragment) in &exp.at {
            let found = diags
                .iter()
                .any(|d| d.line == *line && d.column == *col && d.to_string().contains(fragment));
            if !found {
                failures.push(format!(
                    "{}: no diagnostic at {line}:{col} containing {fragment:?}; got:\n{err}",
                    file.display()
                ));
            }
        }
        if let Some(n) = exp.errors
            && diags.len() != n
        {
            failures.push(format!(
                "{}: expected {n} errors, got {}:\n{err}",
                file.display(),
                diags.len()
            ));
        }
        // every diagnostic names the file and says how to fix it
        for d in diags {
            if !d
                .file
                .ends_with(file.file_name().and_then(|n| n.to_str()).unwrap_or(""))
            {
                failures.push(format!(
                    "{}: diagnostic names file {}",
                    file.display(),
                    d.file
                ));
            }
            if d.fix.is_empty() {
                failures.push(format!("{}: diagnostic without a fix: {d}", file.display()));
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n\n"));
}

#[test]
fn three_mistakes_are_reported_together() {
    let file = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/malformed/many_errors.toml");
    let err = load_without_panic(&file).expect_err("the file is invalid");
    let keys: Vec<&str> = err.diagnostics().iter().map(|d| d.key.as_str()).collect();
    assert_eq!(keys, ["sources.vref.sigma", "output.of[1]", "safety.limit"]);
    let text = err.to_string();
    assert!(
        text.ends_with("3 errors in the architecture file"),
        "{text}"
    );
}

#[test]
fn arbitrary_bytes_never_panic() {
    // A deterministic stream of mutated corpus texts: truncations and byte flips of every file.
    let mut state: u64 = 0x9e37_79b9_7f4a_7c15;
    let mut next = move || {
        // xorshift64 (Marsaglia 2003)
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    for file in corpus() {
        let bytes = std::fs::read(&file).expect("readable");
        for _ in 0..20 {
            let mut b = bytes.clone();
            let cut = (next() as usize) % (b.len() + 1);
            b.truncate(cut);
            if !b.is_empty() {
                let i = (next() as usize) % b.len();
                b[i] = (next() & 0x7f) as u8;
            }
            let text = String::from_utf8_lossy(&b).to_string();
            let r = std::panic::catch_unwind(|| model::load_str(&text, "mutated.toml").map(|_| ()));
            assert!(r.is_ok(), "panic on a mutation of {}", file.display());
        }
    }
}
