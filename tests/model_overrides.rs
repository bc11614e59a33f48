//! Overrides set numeric keys by dotted path before validation (used by sweeps).

use std::path::Path;

use concord::model::{self, Amplitude, Detection};

fn text(name: &str) -> String {
    let p = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("architectures")
        .join(name);
    std::fs::read_to_string(p).expect("example file")
}

fn ov(list: &[(&str, f64)]) -> Vec<(String, f64)> {
    list.iter().map(|(k, v)| (k.to_string(), *v)).collect()
}

#[test]
fn overrides_change_the_compiled_model() {
    let t = text("plovrant_swa2_mean.toml");
    let a = model::load_str_with_overrides(
        &t,
        "swa2.toml",
        &ov(&[
            ("safety.limit", 1.5),
            ("checks.ab.limit", 2.0),
            ("channels.hall_a.sigma", 0.3),
            ("correlations[0].rho", 0.5),
            ("faults.a_drift.amplitude.gaussian.sigma", 2.0),
            ("faults.b_offset.latent_coverage", 0.25), // absent in the file: added
        ]),
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let m = &a.model;
    assert_eq!((m.safety_lower, m.safety_upper), (-1.5, 1.5));
    assert_eq!((m.checks[0].lower, m.checks[0].upper), (-2.0, 2.0));
    // aa = 0.3^2 = 0.09; ab = 0.5 * 0.3 * 0.55 = 0.0825
    assert!((m.covariance[(0, 0)] - 0.09).abs() < 1e-15);
    assert!((m.covariance[(0, 1)] - 0.0825).abs() < 1e-15);
    assert_eq!(
        m.faults[0].amplitude,
        Amplitude::Gaussian {
            mean: 0.0,
            sigma: 2.0
        }
    );
    assert_eq!(m.faults[1].latent_coverage, 0.25);
    // the source text is kept as read, before overrides
    assert_eq!(a.source, t);
}

#[test]
fn an_integer_key_takes_an_integral_override() {
    let t = text("plovrant_swa3_median.toml");
    let a =
        model::load_str_with_overrides(&t, "swa3.toml", &ov(&[("detection.fires.at_least", 1.0)]))
            .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(a.model.detection, Detection::AtLeast(1));
}

#[test]
fn unknown_paths_are_errors_naming_them() {
    let t = text("plovrant_swa2_mean.toml");
    let err = model::load_str_with_overrides(
        &t,
        "swa2.toml",
        &ov(&[
            ("channels.zz.sigma", 1.0),
            ("safety.lmit", 1.0),
            ("checks.ab", 1.0),
        ]),
    )
    .expect_err("unknown paths are rejected");
    let text = err.to_string();
    assert_eq!(err.diagnostics().len(), 3, "{text}");
    assert!(
        text.contains("override channels.zz.sigma: `channels` has no key `zz`"),
        "{text}"
    );
    assert!(
        text.contains("override safety.lmit: `safety` has no key `lmit`"),
        "{text}"
    );
    assert!(
        text.contains("override checks.ab: `checks.ab` is a table, not a number"),
        "{text}"
    );
}

#[test]
fn an_invalid_override_is_reported_as_one() {
    let t = text("plovrant_swa2_mean.toml");
    let err = model::load_str_with_overrides(&t, "swa2.toml", &ov(&[("safety.limit", -1.0)]))
        .expect_err("a negative limit is rejected");
    let d = &err.diagnostics()[0];
    assert_eq!(d.key, "safety.limit");
    assert!(d.message.contains("set by an override"), "{d}");
    // it points at the value it replaced: `limit = 2.0` of [safety]
    let line = t
        .lines()
        .position(|l| l.starts_with("limit = 2.0"))
        .map(|i| i + 1);
    assert_eq!(Some(d.line), line);
}
