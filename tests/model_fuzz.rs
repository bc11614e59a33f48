//! Structured fuzzing of the reader and compiler (issue: robustness under bad input).
//!
//! 1. A corpus of corrupt files generated deterministically from the bundled architectures
//!    (seeded mutations: truncations, byte flips, deleted and duplicated lines, swapped
//!    values, huge numbers, NaN and infinities, deep nesting, duplicated and renamed tables,
//!    control characters...). Each must load without panic or hang, and either compile or
//!    fail with diagnostics that name the file and say how to fix the problem. Those that
//!    still compile are also summarised (`check`), drawn (DOT) and, when small, analysed.
//! 2. proptest strategies that write random but valid-looking architectures (one to four
//!    channels, every output and check kind, every amplitude model); the same guarantees.
//!
//! A case that does not finish within `HANG_LIMIT` counts as a hang. This is a safety net
//! against endless loops, not a speed requirement (speed is measured in benches/).

use std::path::Path;
use std::sync::mpsc;
use std::time::Duration;

use concord::analysis::{AnalysisOptions, analyze};
use concord::model::{self, Architecture, ModelError};
use proptest::prelude::*;

/// Longest wait for one case before it counts as a hang.
const HANG_LIMIT: Duration = Duration::from_secs(120);

/// Most channels of a compiled mutation that is also analysed (the rest are only checked).
const ANALYSE_MAX_CHANNELS: usize = 3;

/// The bundled architectures, sorted by name.
fn seeds() -> Vec<(String, String)> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("architectures");
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .expect("architectures/ exists")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    files.sort();
    files
        .iter()
        .map(|p| {
            (
                p.file_name()
                    .and_then(|n| n.to_str())
                    .unwrap_or("seed")
                    .to_string(),
                std::fs::read_to_string(p).expect("readable"),
            )
        })
        .collect()
}

/// xorshift64 (Marsaglia 2003): a small seeded generator, so the corpus is the same on
/// every run.
struct XorShift(u64);

impl XorShift {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0
    }
    fn below(&mut self, n: usize) -> usize {
        if n == 0 {
            0
        } else {
            (self.next() % n as u64) as usize
        }
    }
    fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
}

/// Values that break numbers: huge, tiny, non-finite, wrong type.
const BAD_VALUES: [&str; 16] = [
    "1e308",
    "-1e308",
    "1e-308",
    "5e-324",
    "nan",
    "inf",
    "-inf",
    "-0.0",
    "0",
    "9007199254740993",
    "-170141183460469231731687303715884105728",
    "\"text\"",
    "true",
    "[]",
    "{}",
    "1979-05-27T07:32:00Z",
];

/// The mutations, by index (each a function of the text and the generator).
const MUTATIONS: usize = 16;

fn mutate(text: &str, kind: usize, rng: &mut XorShift) -> String {
    let lines: Vec<&str> = text.lines().collect();
    let value_lines: Vec<usize> = lines
        .iter()
        .enumerate()
        .filter(|(_, l)| l.contains(" = ") && !l.trim_start().starts_with('#'))
        .map(|(i, _)| i)
        .collect();
    let with_line = |i: usize, new: String| -> String {
        let mut out: Vec<String> = lines.iter().map(|l| l.to_string()).collect();
        if i < out.len() {
            out[i] = new;
        }
        out.join("\n")
    };
    match kind {
        // truncation at a random byte (on a character boundary)
        0 => {
            let mut cut = rng.below(text.len() + 1);
            while !text.is_char_boundary(cut) {
                cut -= 1;
            }
            text[..cut].to_string()
        }
        // random bytes replaced by random ASCII (incl. control characters)
        1 => {
            let mut b = text.as_bytes().to_vec();
            for _ in 0..1 + rng.below(8) {
                let i = rng.below(b.len());
                if i < b.len() {
                    b[i] = (rng.next() & 0x7f) as u8;
                }
            }
            String::from_utf8_lossy(&b).to_string()
        }
        // a line deleted
        2 => {
            let i = rng.below(lines.len());
            let mut out: Vec<&str> = lines.clone();
            if i < out.len() {
                out.remove(i);
            }
            out.join("\n")
        }
        // a line duplicated (duplicate keys)
        3 => {
            let i = *rng.pick(&value_lines);
            let mut out: Vec<&str> = lines.clone();
            out.insert(i, lines[i]);
            out.join("\n")
        }
        // the values of two entries swapped
        4 => {
            let i = *rng.pick(&value_lines);
            let j = *rng.pick(&value_lines);
            let (ki, vi) = lines[i].split_once(" = ").unwrap_or((lines[i], ""));
            let (kj, vj) = lines[j].split_once(" = ").unwrap_or((lines[j], ""));
            let mut out: Vec<String> = lines.iter().map(|l| l.to_string()).collect();
            out[i] = format!("{ki} = {vj}");
            out[j] = format!("{kj} = {vi}");
            out.join("\n")
        }
        // a value replaced by a huge, tiny, non-finite or wrongly typed one
        5 => {
            let i = *rng.pick(&value_lines);
            let key = lines[i].split_once(" = ").map_or(lines[i], |(k, _)| k);
            with_line(i, format!("{key} = {}", rng.pick(&BAD_VALUES)))
        }
        // every number of a line multiplied by 1e300 (or divided): huge scale spreads
        6 => {
            let i = *rng.pick(&value_lines);
            let scale = if rng.below(2) == 0 { "e300" } else { "e-300" };
            let line: String = lines[i]
                .split(' ')
                .map(|w| {
                    let bare = w.trim_end_matches([',', ']', '}']);
                    if bare.parse::<f64>().is_ok() && !bare.is_empty() {
                        format!("{bare}{scale}{}", &w[bare.len()..])
                    } else {
                        w.to_string()
                    }
                })
                .collect::<Vec<_>>()
                .join(" ");
            with_line(i, line)
        }
        // deep nesting in an array or inline table
        7 => {
            let depth = 1 + rng.below(5000);
            let nest = if rng.below(2) == 0 {
                format!("{}1{}", "[".repeat(depth), "]".repeat(depth))
            } else {
                format!("{}1{}", "{ a = ".repeat(depth), " }".repeat(depth))
            };
            format!("deep = {nest}\n{text}")
        }
        // a table header duplicated
        8 => {
            let headers: Vec<usize> = lines
                .iter()
                .enumerate()
                .filter(|(_, l)| l.starts_with('['))
                .map(|(i, _)| i)
                .collect();
            let i = *rng.pick(&headers);
            format!("{text}\n{}\nmean = 1.0\n", lines[i])
        }
        // a table renamed to an unknown section or a reference to an unknown name
        9 => {
            let from = *rng.pick(&["[channels.", "[checks.", "[faults.", "[output]", "[safety]"]);
            let to = *rng.pick(&[
                "[channel.",
                "[checks.x.",
                "[faults.\"\".",
                "[outputs]",
                "[sfety]",
            ]);
            text.replacen(from, to, 1)
        }
        // the whole file twice (every table defined twice)
        10 => format!("{text}\n{text}"),
        // a byte-order mark, NUL, or a lone carriage return inserted
        11 => {
            let mut cut = rng.below(text.len() + 1);
            while !text.is_char_boundary(cut) {
                cut -= 1;
            }
            let junk = rng.pick(&["\u{feff}", "\0", "\r", "\u{202e}", "\u{10ffff}", "\t\t"]);
            format!("{}{junk}{}", &text[..cut], &text[cut..])
        }
        // a name replaced by a very long or strange one
        12 => {
            let i = *rng.pick(&value_lines);
            let value = lines[i].split_once(" = ").map_or("", |(_, v)| v);
            let key = rng.pick(&["\"\"", "\"a b\"", "x", "\"ä\""]).to_string();
            let long = "k".repeat(1 + rng.below(200));
            with_line(
                i,
                format!("{} = {value}", if rng.below(2) == 0 { key } else { long }),
            )
        }
        // many copies of one fault or channel table (size limits)
        13 => {
            let mut out = text.to_string();
            let n = 1 + rng.below(40);
            for k in 0..n {
                out.push_str(&format!(
                    "\n[channels.extra_{k}]\nmean = 0.0\nsigma = 1.0\n\n[faults.extra_{k}]\n\
                     fit = 1.0\nhits = {{ extra_{k} = 1.0 }}\nmode = \"add\"\n\
                     amplitude = {{ uniform = [-1.0, 1.0] }}\n"
                ));
            }
            out
        }
        // an array value emptied, shortened or lengthened
        14 => {
            let arrays: Vec<usize> = value_lines
                .iter()
                .copied()
                .filter(|&i| lines[i].contains('['))
                .collect();
            let i = *rng.pick(&arrays);
            let key = lines[i].split_once(" = ").map_or(lines[i], |(k, _)| k);
            let value = rng.pick(&["[]", "[1.0]", "[1.0, 2.0, 3.0]", "[[1.0]]", "[\"a\", 1]"]);
            with_line(i, format!("{key} = {value}"))
        }
        // whitespace only, or nothing at all
        _ => {
            if rng.below(2) == 0 {
                String::new()
            } else {
                " \n\t\n".to_string()
            }
        }
    }
}

/// The generated corpus: `(name, text)`.
fn corpus() -> Vec<(String, String)> {
    let mut rng = XorShift(0x00C0_FFEE_D15E_A5E5);
    let mut out = Vec::new();
    for (seed_name, text) in seeds() {
        for kind in 0..MUTATIONS {
            for copy in 0..2 {
                let name = format!("{seed_name}-m{kind:02}-{copy}.toml");
                out.push((name, mutate(&text, kind, &mut rng)));
            }
        }
    }
    out
}

/// Loads (and, when it compiles, summarises, draws and for small models analyses) one text
/// on its own thread; `Err` describes a panic or a hang.
fn exercise(name: &str, text: &str) -> Result<Result<(), ModelError>, String> {
    let (tx, rx) = mpsc::channel();
    let (name_owned, text_owned) = (name.to_string(), text.to_string());
    let handle = std::thread::Builder::new()
        .stack_size(8 * 1024 * 1024)
        .spawn(move || {
            let result = model::load_str(&text_owned, &name_owned).map(|arch| {
                use_compiled(&arch);
            });
            let _ = tx.send(result);
        })
        .map_err(|e| format!("cannot start a thread: {e}"))?;
    match rx.recv_timeout(HANG_LIMIT) {
        Ok(result) => {
            let _ = handle.join();
            Ok(result)
        }
        Err(mpsc::RecvTimeoutError::Timeout) => {
            Err(format!("{name}: no result within {HANG_LIMIT:?} (a hang)"))
        }
        Err(mpsc::RecvTimeoutError::Disconnected) => Err(format!("{name}: panicked")),
    }
}

fn use_compiled(arch: &Architecture) {
    let summary = concord::report::describe::describe(arch);
    assert!(!summary.is_empty());
    let dot = concord::report::dot::to_dot(arch);
    assert!(dot.starts_with("digraph"), "{dot}");
    if arch.model.channels.len() <= ANALYSE_MAX_CHANNELS {
        // any outcome but a panic: figures, or an error that says what went wrong
        match analyze(&arch.model, &AnalysisOptions::default(), false) {
            Ok(a) => {
                // the four figures of a scenario are a partition: they sum to one
                for (name, outcome) in std::iter::once(("baseline", &a.baseline))
                    .chain(a.sites.iter().map(|s| (s.name.as_str(), &s.outcome)))
                {
                    // within their summed bounds (plus rounding of the sum)
                    let sum = outcome.sum();
                    assert!(
                        sum.value.is_finite() && (sum.value - 1.0).abs() <= sum.error + 1e-12,
                        "{}: figures of {name} sum to {} ± {:e}",
                        arch.path,
                        sum.value,
                        sum.error
                    );
                }
            }
            Err(e) => assert!(!e.to_string().is_empty()),
        }
    }
}

/// Checks the diagnostics of a rejected text: each names the file and says how to fix it.
fn diagnostics_are_useful(name: &str, err: &ModelError) -> Vec<String> {
    let mut problems = Vec::new();
    if err.diagnostics().is_empty() {
        problems.push(format!("{name}: rejected without a diagnostic"));
    }
    for d in err.diagnostics() {
        if d.file != name {
            problems.push(format!("{name}: a diagnostic names {}", d.file));
        }
        if d.message.is_empty() || d.fix.is_empty() {
            problems.push(format!("{name}: diagnostic without message or fix: {d}"));
        }
        if !d.is_error() {
            problems.push(format!("{name}: a warning among the errors: {d}"));
        }
    }
    problems
}

#[test]
fn generated_corrupt_corpus_never_panics_or_hangs() {
    let corpus = corpus();
    assert!(corpus.len() >= 100, "only {} files", corpus.len());
    let (mut rejected, mut accepted) = (0, 0);
    let mut problems = Vec::new();
    for (name, text) in &corpus {
        match exercise(name, text) {
            Err(e) => problems.push(e),
            Ok(Ok(())) => accepted += 1,
            Ok(Err(err)) => {
                rejected += 1;
                problems.extend(diagnostics_are_useful(name, &err));
            }
        }
    }
    eprintln!(
        "{} generated files: {rejected} rejected with diagnostics, {accepted} still valid",
        corpus.len()
    );
    assert!(problems.is_empty(), "{}", problems.join("\n"));
    // the corpus must mostly be corrupt, or it tests little
    assert!(
        rejected * 2 > corpus.len(),
        "{rejected} of {}",
        corpus.len()
    );
}

#[test]
fn corpus_is_the_same_on_every_run() {
    assert_eq!(corpus(), corpus());
}

// ---- proptest: random but valid-looking architectures ----

fn number() -> impl Strategy<Value = f64> {
    prop_oneof![
        -5.0f64..5.0,
        Just(0.0),
        (1e-6f64..1e6),
        Just(1e300),
        Just(-1e-300),
    ]
}

/// Sigmas and the like: zero, ordinary, and log-uniform over the decades the issue asks
/// the engine to hold (1e-6 to 1e6 in one file).
fn positive() -> impl Strategy<Value = f64> {
    prop_oneof![
        1e-3f64..10.0,
        Just(0.0),
        (-6.0f64..6.0).prop_map(|e| 10f64.powf(e)),
        Just(1e-6),
        Just(1e6),
    ]
}

/// A strictly positive number (limits, rates), also far below and far above the noise.
fn strictly_positive() -> impl Strategy<Value = f64> {
    prop_oneof![
        1e-2f64..10.0,
        (-6.0f64..6.0).prop_map(|e| 10f64.powf(e)),
        Just(1e3),
    ]
}

fn amplitude() -> impl Strategy<Value = String> {
    prop_oneof![
        (number(), positive())
            .prop_map(|(m, s)| format!("{{ gaussian = {{ mean = {m:?}, sigma = {s:?} }} }}")),
        Just("{ gaussian = { mean = 0.0, sigma = \"unknown\" } }".to_string()),
        (strictly_positive(), 1.0f64..1e6).prop_map(|(a, f)| format!(
            "{{ gaussian = {{ mean = 0.0, sigma = {{ unknown = [{a:?}, {:?}] }} }} }}",
            a * (1.0 + f)
        )),
        Just("{ uniform = \"full_scale\" }".to_string()),
        (number(), number()).prop_map(|(a, b)| format!("{{ uniform = [{a:?}, {b:?}] }}")),
        (number(), number(), 0.0f64..1.0).prop_map(|(a, b, w)| format!(
            "{{ points = [[{a:?}, {w:?}], [{b:?}, {:?}]] }}",
            1.0 - w
        )),
    ]
}

prop_compose! {
    fn architecture()(
        n in 2usize..=4,
        means in prop::collection::vec(number(), 4),
        sigmas in prop::collection::vec(positive(), 4),
        rho in -1.0f64..=1.0,
        output in 0usize..7,
        check_kind in 0usize..4,
        check_limit in strictly_positive(),
        safety_limit in strictly_positive(),
        fit in positive(),
        mode_replace in any::<bool>(),
        amp in amplitude(),
        at_least in 0usize..2,
        with_source in any::<bool>(),
    ) -> String {
        let names: Vec<String> = (0..n).map(|i| format!("c{i}")).collect();
        let quoted: Vec<String> = names.iter().map(|c| format!("\"{c}\"")).collect();
        let mut t = String::from("name = \"generated\"\nunit = \"mm\"\nfull_scale = [-50.0, 50.0]\n\n");
        if with_source {
            t.push_str("[sources.s]\nmean = 0.0\nsigma = 0.1\n\n");
        }
        for (i, c) in names.iter().enumerate() {
            t.push_str(&format!("[channels.{c}]\nmean = {:?}\nsigma = {:?}\n", means[i], sigmas[i]));
            if with_source {
                t.push_str("from = { s = 1.0 }\n");
            }
            t.push('\n');
        }
        if n >= 2 {
            t.push_str(&format!("[[correlations]]\nbetween = [\"c0\", \"c1\"]\nrho = {rho:?}\n\n"));
        }
        let kinds = ["mean", "median", "min", "max", "select", "weighted", "linear"];
        let kind = kinds[output];
        t.push_str(&format!("[output]\nkind = \"{kind}\"\n"));
        match kind {
            "select" => t.push_str("of = \"c0\"\n"),
            "weighted" | "linear" => {
                let share = 1.0 / n as f64;
                let w: Vec<String> = names.iter().map(|c| format!("{c} = {share:?}")).collect();
                t.push_str(&format!("of = {{ {} }}\n", w.join(", ")));
            }
            _ => t.push_str(&format!("of = [{}]\n", quoted.join(", "))),
        }
        t.push('\n');
        let check_kinds = ["difference", "range", "from_output", "linear"];
        let ck = check_kinds[check_kind];
        t.push_str(&format!("[checks.k]\nkind = \"{ck}\"\n"));
        match ck {
            "difference" => t.push_str(&format!("of = [{}]\n", quoted.iter().take(2).cloned().collect::<Vec<_>>().join(", "))),
            "from_output" => t.push_str("of = \"c0\"\n"),
            "linear" => t.push_str("of = { c0 = 1.0 }\n"),
            _ => t.push_str(&format!("of = [{}]\n", quoted.join(", "))),
        }
        t.push_str(&format!("limit = {check_limit:?}\n\n"));
        if at_least > 0 {
            t.push_str(&format!("[detection]\nfires = {{ at_least = {at_least} }}\n\n"));
        }
        t.push_str(&format!("[safety]\nlimit = {safety_limit:?}\n\n"));
        t.push_str(&format!(
            "[faults.f]\nfit = {fit:?}\nhits = {{ c0 = 1.0 }}\nmode = \"{}\"\namplitude = {amp}\n",
            if mode_replace { "replace" } else { "add" }
        ));
        t
    }
}

/// Seed of the property tests: fixed, or `CONCORD_FUZZ_SEED` when set (another stream of
/// cases for a longer hunt).
fn fuzz_seed() -> u64 {
    std::env::var("CONCORD_FUZZ_SEED")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(0x7257_5eed)
}

/// Cases per property: 48, or `CONCORD_FUZZ_CASES` when set.
fn fuzz_cases() -> u32 {
    std::env::var("CONCORD_FUZZ_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(48)
}

proptest! {
    #![proptest_config(ProptestConfig {
        // 48 in CI; set CONCORD_FUZZ_CASES for a longer hunt (DEVELOPERS.md)
        cases: fuzz_cases(),
        rng_seed: proptest::test_runner::RngSeed::Fixed(fuzz_seed()),
        failure_persistence: None,
        ..ProptestConfig::default()
    })]

    #[test]
    fn generated_architectures_load_or_explain(text in architecture()) {
        match exercise("generated.toml", &text) {
            Err(e) => prop_assert!(false, "{e}\n{text}"),
            Ok(Ok(())) => {}
            Ok(Err(err)) => {
                let problems = diagnostics_are_useful("generated.toml", &err);
                prop_assert!(problems.is_empty(), "{}\n{text}", problems.join("\n"));
            }
        }
    }

    #[test]
    fn corrupted_generated_architectures_never_panic(
        text in architecture(),
        kind in 0usize..MUTATIONS,
        seed in 1u64..u64::MAX,
    ) {
        let mut rng = XorShift(seed);
        let bad = mutate(&text, kind, &mut rng);
        match exercise("mutated.toml", &bad) {
            Err(e) => prop_assert!(false, "{e}\n{bad}"),
            Ok(Ok(())) => {}
            Ok(Err(err)) => {
                let problems = diagnostics_are_useful("mutated.toml", &err);
                prop_assert!(problems.is_empty(), "{}\n{bad}", problems.join("\n"));
            }
        }
    }
}

#[test]
fn the_strategy_writes_mostly_valid_architectures() {
    // The strategy is meant to reach the compiler and the engine, not only the reader: a
    // good share of its files must compile (the rest hit validation on purpose: zero
    // sigmas, huge numbers, replace with a source...).
    use proptest::strategy::ValueTree;
    use proptest::test_runner::TestRunner;
    let mut runner = TestRunner::deterministic();
    let strategy = architecture();
    let (mut loaded, mut analysed, total) = (0, 0, 120);
    for _ in 0..total {
        let text = strategy.new_tree(&mut runner).expect("a value").current();
        match exercise("generated.toml", &text) {
            Ok(Ok(())) => {
                loaded += 1;
                if let Ok(arch) = model::load_str(&text, "generated.toml")
                    && arch.model.channels.len() <= ANALYSE_MAX_CHANNELS
                {
                    analysed += 1;
                }
            }
            Ok(Err(_)) => {}
            Err(e) => panic!("{e}\n{text}"),
        }
    }
    eprintln!("{loaded} of {total} generated architectures compiled, {analysed} analysed");
    assert!(loaded * 3 >= total, "only {loaded} of {total} compiled");
    assert!(
        analysed * 10 >= total,
        "only {analysed} of {total} analysed"
    );
}

/// Architectures the proptest strategy found where the figures broke their bounds, kept in
/// tests/fuzz_found/ (each file says what went wrong and what fixed it). The four outcomes
/// of a scenario partition the space, so they sum to 1: the check is that the sum stays
/// within the summed bounds (plus a few ulps of rounding), for the baseline and every
/// fault site.
#[test]
fn found_cases_sum_to_one_within_their_bounds() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fuzz_found");
    let mut paths: Vec<_> = std::fs::read_dir(&dir)
        .expect("tests/fuzz_found")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .collect();
    paths.sort();
    assert!(paths.len() >= 10, "{} files", paths.len());
    for path in &paths {
        let text = std::fs::read_to_string(path).expect("readable");
        let name = path.display().to_string();
        let arch = model::load_str(&text, &name).expect("valid");
        let a = analyze(&arch.model, &AnalysisOptions::default(), false).expect("runs");
        for (scenario, outcome) in std::iter::once(("baseline", &a.baseline))
            .chain(a.sites.iter().map(|s| (s.name.as_str(), &s.outcome)))
        {
            let sum = outcome.sum();
            assert!(
                (sum.value - 1.0).abs() <= sum.error + 1e-12,
                "{name} {scenario}: sum {} ± {:e}",
                sum.value,
                sum.error
            );
        }
        assert!(
            a.warnings.iter().all(|w| !w.contains("instead of 1")),
            "{name}: {:?}",
            a.warnings
        );
    }
}
