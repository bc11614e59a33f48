//! The JSON Schema of the architecture file (`schema/architecture.schema.json`) held to the
//! reader. Each TOML file is turned into JSON by the `toml` crate (its own reading of the
//! TOML 1.0 data model) and checked with the `jsonschema` crate, an independent validator of
//! JSON Schema draft 2020-12 (json-schema.org/draft/2020-12, "JSON Schema Validation").
//! Sources of the checks: the file format (docs/architecture-format.md, "Rules checked"), and
//! the reader (`concord::model::load`): a file it accepts must validate; a file it rejects for
//! a structural reason (unknown key, wrong type, missing required key, a value out of its
//! documented range) must fail the schema too.

use std::path::{Path, PathBuf};

use concord::model;

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn validator() -> jsonschema::Validator {
    let text = std::fs::read_to_string(root().join("schema/architecture.schema.json"))
        .expect("the schema file exists");
    let schema: serde_json::Value = serde_json::from_str(&text).expect("the schema is JSON");
    // Draft 2020-12 is what the schema declares; the crate is told so explicitly.
    jsonschema::draft202012::new(&schema).expect("the schema is a valid 2020-12 schema")
}

fn toml_files(dir: &Path) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .map(|e| e.expect("a directory entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    files.sort();
    files
}

/// The file as JSON, or `None` when it is not TOML at all (a syntax error: no schema applies).
fn as_json(text: &str) -> Option<serde_json::Value> {
    let value: toml::Value = toml::from_str(text).ok()?;
    serde_json::to_value(value).ok()
}

/// The schema's error messages for the text, empty when it validates.
fn schema_errors(v: &jsonschema::Validator, text: &str) -> Option<Vec<String>> {
    let json = as_json(text)?;
    Some(
        v.iter_errors(&json)
            .map(|e| format!("{} at {}", e, e.instance_path()))
            .collect(),
    )
}

fn assert_accepted_files_validate(files: &[PathBuf]) {
    let v = validator();
    let mut failures = Vec::new();
    for file in files {
        let text = std::fs::read_to_string(file).expect("readable");
        // Source: the reader. A file it accepts is a valid architecture file.
        if model::load(file).is_err() {
            continue;
        }
        match schema_errors(&v, &text) {
            None => failures.push(format!("{}: the toml crate cannot read it", file.display())),
            Some(errors) if !errors.is_empty() => {
                failures.push(format!("{}: {}", file.display(), errors.join("; ")))
            }
            Some(_) => {}
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn every_bundled_example_validates() {
    let files = toml_files(&root().join("architectures"));
    assert!(files.len() >= 6, "the examples are found");
    for f in &files {
        assert!(model::load(f).is_ok(), "{} loads", f.display());
    }
    assert_accepted_files_validate(&files);
}

#[test]
fn every_demo_file_validates() {
    // `concord demo` bundles the files of demo/ (src/cli/demo.rs, include_str!).
    let files = toml_files(&root().join("demo"));
    assert_eq!(files.len(), 3, "the three candidate architectures");
    for f in &files {
        assert!(model::load(f).is_ok(), "{} loads", f.display());
    }
    assert_accepted_files_validate(&files);
}

#[test]
fn every_accepted_corpus_file_validates() {
    // tests/fuzz_found: files the fuzz tests once broke on; the reader accepts them.
    let files = toml_files(&root().join("tests/fuzz_found"));
    assert!(!files.is_empty());
    let accepted = files.iter().filter(|f| model::load(f).is_ok()).count();
    assert!(accepted > 0, "some corpus files are accepted");
    assert_accepted_files_validate(&files);
}

/// Files of tests/malformed that the reader rejects for a reason the schema cannot state: a
/// relation between values or names (docs/architecture-format.md, "Rules checked": 7, 8, 10,
/// 11, 13, 15, 17, 18, 21, 24, 25 and the size limits of rule 27), or a TOML syntax error
/// (no JSON to check). Every other malformed file must fail the schema.
const BEYOND_THE_SCHEMA: &[&str] = &[
    // rule 16 and 18: lower < upper compares two values
    "check_lower_ge_upper",
    "safety_lower_equals_upper",
    "full_scale_inverted",
    // rules 23 and 24: lo < hi, a < b, and "full_scale" needs a full_scale key
    "fault_unknown_range_inverted",
    "fault_uniform_empty_range",
    "fault_uniform_no_full_scale",
    // rule 10 and 11: pairs of channels, once each, and the matrix they make
    "correlation_duplicate_pair",
    "correlation_not_psd",
    "correlation_self",
    // rule 7 and 8: names known, of the right kind, unique across sections
    "correlation_of_source",
    "correlation_unknown_channel",
    "duplicate_name_across",
    "fault_hits_signal",
    "fault_hits_unknown",
    "fault_replace_source",
    "from_names_channel",
    "output_of_source",
    "unknown_reference_output",
    "unknown_source_in_from",
    // rule 15: signals acyclic
    "signal_cycle",
    "signal_self_cycle",
    // rule 13 and 25: sums of weights
    "fault_points_sum",
    "output_weighted_sum",
    // rule 17: at_least at most the number of checks the file has
    "detection_at_least_too_big",
];

#[test]
fn malformed_files_fail_the_schema_too() {
    let v = validator();
    let mut failures = Vec::new();
    let mut structural = 0;
    for file in toml_files(&root().join("tests/malformed")) {
        let name = file
            .file_stem()
            .and_then(|s| s.to_str())
            .unwrap_or_default()
            .to_string();
        // Source: the reader rejects every file of the corpus (tests/model_malformed.rs).
        assert!(
            model::load(&file).is_err(),
            "{name} is rejected by the reader"
        );
        // A file that is not UTF-8 is no TOML: no JSON to check, rejected before the schema.
        let text = String::from_utf8(std::fs::read(&file).expect("readable")).ok();
        let rejected = match text.and_then(|t| schema_errors(&v, &t)) {
            None => true,
            Some(errors) => !errors.is_empty(),
        };
        let listed = BEYOND_THE_SCHEMA.contains(&name.as_str());
        if !rejected && !listed {
            failures.push(format!(
                "{name}: the reader rejects it, the schema accepts it"
            ));
        }
        if rejected && listed {
            failures.push(format!(
                "{name}: listed as beyond the schema, but it fails it"
            ));
        }
        if !listed {
            structural += 1;
        }
    }
    assert!(structural >= 20, "only {structural} structural cases");
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// A file that uses every section and every form the format allows (docs/architecture-format.md),
/// with `{timing}` and `{amplitude}` filled in by the cases below.
fn every_form(timing: &str, amplitude: &str) -> String {
    format!(
        r#"
name = "every form"
unit = "deg"
full_scale = [-100, 100.0]

[sources.vref]
mean = 0
sigma = 0.1

[channels.a]
sigma = 0.5
from = {{ vref = 1.0 }}

[channels.b]
mean = 0.1
sigma = 0.5
from = {{ vref = 0.9 }}

[channels.c]
sigma = 0.6

[[correlations]]
between = ["a", "b"]
rho = 0.2

[signals.mid]
kind = "median"
of = ["a", "b", "c"]

[signals.lin]
kind = "linear"
of = {{ a = 0.5, b = 0.5 }}
constant = 0.0

[output]
kind = "select"
of = ["mid"]

[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = 2

[checks.spread]
kind = "range"
of = ["a", "b", "c"]
upper = 3.0

[checks.est]
kind = "from_output"
of = "c"
lower = -2.5
upper = 2.5

[checks.lin]
kind = "linear"
of = {{ lin = 1.0, c = -1.0 }}
constant = 0.0
limit = 2.0

[detection]
fires = {{ at_least = 2 }}

[safety]
lower = -2.0
upper = 2.0

[faults.f]
fit = 10
hits = {{ a = 1.0 }}
mode = "replace"
amplitude = {amplitude}
latent_coverage = 0.5

{timing}
"#
    )
}

#[test]
fn every_accepted_form_validates() {
    let v = validator();
    let amplitudes = [
        r#"{ gaussian = { sigma = 1.5 } }"#,
        r#"{ gaussian = { mean = 0.5, sigma = "unknown" } }"#,
        r#"{ gaussian = { sigma = { unknown = [0.01, 1000] } } }"#,
        r#"{ uniform = "full_scale" }"#,
        r#"{ uniform = [-10, 10.0] }"#,
        r#"{ points = [[50, 0.5], [-50.0, 0.5]] }"#,
    ];
    let timings = [
        "",
        "[timing]\nsample_period = 0.002\ndeadline = 0.03\n",
        "[timing]\nsample_period = 0.002\ndeadline = 0.03\nconfirm = { consecutive = 3 }\n",
        "[timing]\nsample_period = 0.002\ndeadline = 0.03\nconfirm = { at_least = 3, of_last = 5 }\n\
         danger_samples = 2\nfresh_sources = [\"vref\"]\nconstant_channels = [\"c\"]\n",
        "[timing]\nsample_period = 0.002\ndeadline = 0.03\nconfirm = { up = 2, down = 1, trip = 6 }\n",
        "[isolation]\nrule = \"in_every_fired_check\"\n",
        "[isolation]\nrule = \"farthest_from_median\"\nmargin = 0.2\namong = [\"a\", \"b\", \"c\"]\n",
    ];
    for a in amplitudes {
        for t in timings {
            let text = every_form(t, a);
            // Source: the reader accepts the file.
            if let Err(e) = model::load_str(&text, "every_form.toml") {
                panic!("the reader rejects {a} / {t}: {e}");
            }
            let errors = schema_errors(&v, &text).expect("TOML");
            assert!(errors.is_empty(), "{a} / {t}: {}", errors.join("; "));
        }
    }
}

#[test]
fn malformed_timing_and_amplitudes_fail_both() {
    let v = validator();
    let good_amplitude = r#"{ gaussian = { sigma = 1.5 } }"#;
    let base = "[timing]\nsample_period = 0.002\ndeadline = 0.03\n";
    // (what is wrong, the rule of docs/architecture-format.md, timing section, amplitude)
    let cases: Vec<(&str, String, &str)> = vec![
        (
            "unknown key in timing",
            format!("{base}debounce = 3\n"),
            good_amplitude,
        ),
        (
            "missing deadline",
            "[timing]\nsample_period = 0.002\n".into(),
            good_amplitude,
        ),
        (
            "sample period zero",
            "[timing]\nsample_period = 0\ndeadline = 0.03\n".into(),
            good_amplitude,
        ),
        (
            "sample period a string",
            "[timing]\nsample_period = \"2 ms\"\ndeadline = 0.03\n".into(),
            good_amplitude,
        ),
        (
            "two confirm forms mixed",
            format!("{base}confirm = {{ consecutive = 2, at_least = 3 }}\n"),
            good_amplitude,
        ),
        (
            "window without its count",
            format!("{base}confirm = {{ of_last = 5 }}\n"),
            good_amplitude,
        ),
        (
            "window longer than 16",
            format!("{base}confirm = {{ at_least = 3, of_last = 17 }}\n"),
            good_amplitude,
        ),
        (
            "run longer than 256",
            format!("{base}confirm = {{ consecutive = 257 }}\n"),
            good_amplitude,
        ),
        // `2.0` would pass: JSON Schema's "integer" matches any number with a zero fractional
        // part (2020-12 Validation, section 6.1.1), the reader wants a TOML integer.
        (
            "run as a fraction",
            format!("{base}confirm = {{ consecutive = 2.5 }}\n"),
            good_amplitude,
        ),
        (
            "unknown isolation rule",
            "[isolation]\nrule = \"vote_out\"\n".into(),
            good_amplitude,
        ),
        (
            "isolation without a rule",
            "[isolation]\nmargin = 0.2\n".into(),
            good_amplitude,
        ),
        (
            "a margin on the rule that has none",
            "[isolation]\nrule = \"in_every_fired_check\"\nmargin = 0.2\n".into(),
            good_amplitude,
        ),
        (
            "a negative margin",
            "[isolation]\nrule = \"farthest_from_median\"\nmargin = -0.1\n".into(),
            good_amplitude,
        ),
        (
            "unknown key in isolation",
            "[isolation]\nrule = \"farthest_from_median\"\nlead = 0.1\n".into(),
            good_amplitude,
        ),
        (
            "one channel to blame",
            "[isolation]\nrule = \"farthest_from_median\"\namong = [\"a\"]\n".into(),
            good_amplitude,
        ),
        (
            "danger samples zero",
            format!("{base}danger_samples = 0\n"),
            good_amplitude,
        ),
        (
            "fresh sources not a list",
            format!("{base}fresh_sources = \"vref\"\n"),
            good_amplitude,
        ),
        (
            "gaussian without sigma",
            String::new(),
            r#"{ gaussian = { mean = 1.0 } }"#,
        ),
        (
            "unknown key in gaussian",
            String::new(),
            r#"{ gaussian = { sigma = 1.0, shape = 2 } }"#,
        ),
        (
            "uniform of three numbers",
            String::new(),
            r#"{ uniform = [1, 2, 3] }"#,
        ),
        (
            "zero weight",
            String::new(),
            r#"{ points = [[1, 0.0], [2, 1.0]] }"#,
        ),
        (
            "unknown amplitude model",
            String::new(),
            r#"{ lognormal = { sigma = 1.0 } }"#,
        ),
        (
            "zero lower end of an unknown range",
            String::new(),
            r#"{ gaussian = { sigma = { unknown = [0, 10] } } }"#,
        ),
    ];
    for (what, timing, amplitude) in cases {
        let text = every_form(&timing, amplitude);
        // Source: the reader rejects it.
        assert!(
            model::load_str(&text, "case.toml").is_err(),
            "{what}: the reader accepts it"
        );
        let errors = schema_errors(&v, &text).expect("TOML");
        assert!(!errors.is_empty(), "{what}: the schema accepts it");
    }
}
