//! Overrides set numeric keys by dotted path before validation (used by sweeps and tuning),
//! and the model's operations on a loaded architecture (`Architecture::with_overrides`, the
//! bands of its checks as written), checked against the file edited by hand and read by the
//! `toml` crate.

use std::path::Path;

use concord::analysis::sweep::analyze_with_overrides;
use concord::analysis::{AnalysisOptions, analyze};
use concord::model::{self, Amplitude, BandForm, Detection};

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

/// `text` with the first occurrence of `from` replaced by `to`: the file as an analyst edits
/// it by hand (the independent path the model's operations are checked against).
fn edited(text: &str, from: &str, to: &str) -> String {
    assert!(text.contains(from), "the example holds `{from}`");
    text.replacen(from, to, 1)
}

#[test]
fn with_overrides_is_the_file_edited_by_hand() {
    let t = text("plovrant_swa2_mean.toml");
    let arch = model::load_str(&t, "swa2.toml").unwrap();
    let set = arch
        .with_overrides(&ov(&[("checks.ab.limit", 1.75), ("safety.limit", 2.5)]))
        .unwrap_or_else(|e| panic!("{e}"));
    // `limit = 2.5` first occurs in [checks.ab], before [safety].
    let by_hand = edited(&t, "limit = 2.5\n", "limit = 1.75\n");
    let by_hand = edited(&by_hand, "[safety]\nlimit = 2.0", "[safety]\nlimit = 2.5");
    let hand = model::load_str(&by_hand, "swa2.toml").unwrap();
    assert_eq!(set.model, hand.model);
    // And the whole analysis, bit for bit.
    let options = AnalysisOptions::default();
    assert_eq!(
        analyze(&set.model, &options, false).unwrap(),
        analyze(&hand.model, &options, false).unwrap()
    );
    assert_eq!(
        analyze_with_overrides(
            &arch,
            &ov(&[("checks.ab.limit", 1.75), ("safety.limit", 2.5)]),
            &options
        )
        .unwrap(),
        analyze(&hand.model, &options, false).unwrap()
    );
}

#[test]
fn overrides_build_on_the_ones_an_architecture_has() {
    let t = text("plovrant_swa2_mean.toml");
    let arch = model::load_str(&t, "swa2.toml").unwrap();
    let once = arch
        .with_overrides(&ov(&[("safety.limit", 1.5), ("checks.ab.limit", 3.0)]))
        .unwrap();
    // A second step keeps the first one's values and replaces the key it sets again.
    let twice = once
        .with_overrides(&ov(&[("checks.ab.limit", 4.0)]))
        .unwrap();
    let hand = edited(
        &edited(&t, "[safety]\nlimit = 2.0", "[safety]\nlimit = 1.5"),
        "limit = 2.5\n",
        "limit = 4.0\n",
    );
    assert_eq!(
        twice.model,
        model::load_str(&hand, "swa2.toml").unwrap().model
    );
    assert_eq!(twice.source, t, "the text stays as read");
    assert_eq!(twice.overrides.len(), 3);
}

/// The bands of the checks as the `toml` crate reads them from the text, in name order: an
/// independent reading of the file (the toml crate's own table, not concord's reader).
fn bands_by_toml(text: &str) -> Vec<(String, BandForm)> {
    let table: toml::Table = toml::from_str(text).expect("TOML");
    let number = |v: Option<&toml::Value>| {
        v.and_then(|v| v.as_float().or_else(|| v.as_integer().map(|i| i as f64)))
    };
    let mut list: Vec<(String, BandForm)> = table["checks"]
        .as_table()
        .expect("a checks table")
        .iter()
        .map(|(name, body)| {
            let band = match number(body.get("limit")) {
                Some(limit) => BandForm::Limit(limit),
                None => BandForm::Sides {
                    lower: number(body.get("lower")),
                    upper: number(body.get("upper")),
                },
            };
            (name.clone(), band)
        })
        .collect();
    list.sort_by(|a, b| a.0.cmp(&b.0));
    list
}

#[test]
fn check_bands_are_the_bands_the_file_writes() {
    let folder = Path::new(env!("CARGO_MANIFEST_DIR")).join("architectures");
    let mut files: Vec<std::path::PathBuf> = std::fs::read_dir(&folder)
        .expect("the examples")
        .filter_map(|entry| entry.ok().map(|e| e.path()))
        .filter(|path| path.extension().is_some_and(|x| x == "toml"))
        .collect();
    files.sort();
    assert!(files.len() >= 5, "{files:?}");
    for path in &files {
        let name = path.display().to_string();
        let t = std::fs::read_to_string(path).expect("example file");
        let arch = model::load_str(&t, &name).unwrap();
        // File order: the order of the compiled checks.
        let names: Vec<&str> = arch.check_bands.iter().map(|b| b.name.as_str()).collect();
        let compiled: Vec<&str> = arch.model.checks.iter().map(|c| c.name.as_str()).collect();
        assert_eq!(names, compiled, "{name}");
        let mut ours: Vec<(String, BandForm)> = arch
            .check_bands
            .iter()
            .map(|b| (b.name.clone(), b.band.clone()))
            .collect();
        ours.sort_by(|a, b| a.0.cmp(&b.0));
        assert_eq!(ours, bands_by_toml(&t), "{name}");
    }
}

#[test]
fn a_scaled_band_is_the_band_edited_by_hand() {
    // plovrant_swa4_dual_pair.toml has a one-sided check (`upper = 3.0`) and a `limit`.
    let t = text("plovrant_swa4_dual_pair.toml");
    let arch = model::load_str(&t, "swa4.toml").unwrap();
    let overrides: Vec<(String, f64)> = arch
        .check_bands
        .iter()
        .flat_map(|band| band.scaled(1.5))
        .collect();
    let set = arch
        .with_overrides(&overrides)
        .unwrap_or_else(|e| panic!("{e}"));
    // `limit = 1.5` first occurs in [checks.packages], before [safety].
    let hand = edited(&t, "upper = 3.0", "upper = 4.5");
    let hand = edited(&hand, "limit = 1.5", "limit = 2.25");
    let hand = model::load_str(&hand, "swa4.toml").unwrap();
    assert_eq!(set.model, hand.model);
    // The bands of the result are the scaled ones.
    assert_eq!(set.check_bands, hand.check_bands);
}
