//! Every example architecture in architectures/ loads without warnings, and its compiled mean
//! vector and covariance equal the ones computed by hand from the file's numbers with
//! `mean = m + G mu_s` and `Sigma = D R D + G diag(sigma_s^2) G^T` (docs/architecture-format.md,
//! "Random part").
//! The arithmetic is written out beside each matrix.

use std::path::Path;

use concord::model::{self, Amplitude, Architecture, Detection, FaultMode};

/// Hand arithmetic is exact to a few ulps; 1e-12 leaves room for the order of summation.
const TOL: f64 = 1e-12;

fn load(name: &str) -> Architecture {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("architectures")
        .join(name);
    match model::load(&path) {
        Ok(a) => a,
        Err(e) => panic!("{name} does not load:\n{e}"),
    }
}

fn assert_model(a: &Architecture, mean: &[f64], cov: &[&[f64]]) {
    let m = &a.model;
    assert!(a.warnings.is_empty(), "warnings: {:?}", a.warnings);
    assert_eq!(m.mean.len(), mean.len());
    for (i, (got, want)) in m.mean.iter().zip(mean).enumerate() {
        assert!(
            (got - want).abs() <= TOL,
            "mean[{i}] = {got}, expected {want}"
        );
    }
    assert_eq!(m.covariance.nrows(), cov.len());
    for (i, row) in cov.iter().enumerate() {
        for (j, want) in row.iter().enumerate() {
            let got = m.covariance[(i, j)];
            assert!(
                (got - want).abs() <= TOL,
                "cov[{i},{j}] = {got}, expected {want}"
            );
        }
    }
}

#[test]
fn every_example_file_loads_without_warnings() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("architectures");
    let mut n = 0;
    for e in std::fs::read_dir(dir).expect("architectures/ exists") {
        let p = e.expect("entry").path();
        if p.extension().is_some_and(|x| x == "toml") {
            let a = model::load(&p).unwrap_or_else(|e| panic!("{}:\n{e}", p.display()));
            assert!(a.warnings.is_empty(), "{}: {:?}", p.display(), a.warnings);
            assert!(!concord::report::describe::describe(&a).is_empty());
            assert!(concord::report::dot::to_dot(&a).starts_with("digraph"));
            n += 1;
        }
    }
    assert!(n >= 4, "only {n} example files");
}

#[test]
fn swa2_mean_two_channels_averaged() {
    let a = load("plovrant_swa2_mean.toml");
    // No sources: mean = own means.
    // cov = D R D: 0.50^2 = 0.25; 0.55^2 = 0.3025; 0.1 * 0.50 * 0.55 = 0.0275.
    assert_model(&a, &[0.15, -0.10], &[&[0.25, 0.0275], &[0.0275, 0.3025]]);
    let m = &a.model;
    assert_eq!(m.output_description, "mean(hall_a, hall_b)");
    // mean output at x = (1, 3): (1 + 3) / 2 = 2; difference check: 1 - 3 = -2.
    assert!((m.output.eval(&[1.0, 3.0]) - 2.0).abs() <= TOL);
    assert!((m.checks[0].function.eval(&[1.0, 3.0]) + 2.0).abs() <= TOL);
    assert_eq!((m.checks[0].lower, m.checks[0].upper), (-2.5, 2.5));
    assert_eq!((m.safety_lower, m.safety_upper), (-2.0, 2.0));
    assert_eq!(m.detection, Detection::Any);
    // Default unknown-sigma range: 1e-3 x the smallest half-width (2.0, the safety limit)
    // = 0.002, to 10 x the largest |full_scale| end (540) = 5400.
    assert_eq!(
        m.faults[0].amplitude,
        Amplitude::GaussianUnknownSigma {
            mean: 0.0,
            sigma_lo: 0.002,
            sigma_hi: 5400.0,
            defaulted: true
        }
    );
    assert_eq!(
        m.faults[1].amplitude,
        Amplitude::Gaussian {
            mean: 1.0,
            sigma: 0.8
        }
    );
    assert_eq!(
        m.faults[2].mode,
        FaultMode::Replace {
            channel: 0,
            gain: 1.0
        }
    );
    assert_eq!(
        m.faults[2].amplitude,
        Amplitude::Points(vec![(540.0, 0.5), (-540.0, 0.5)])
    );
    assert_eq!(m.faults[2].latent_coverage, 0.6);
    assert_eq!(
        m.faults[3].amplitude,
        Amplitude::Uniform {
            lower: -540.0,
            upper: 540.0
        }
    );
    assert!(m.faults[3].uniform_is_full_scale);
    assert_eq!(m.faults[0].latent_coverage, 0.0);
}

#[test]
fn swa3_median_with_shared_temperature() {
    let a = load("plovrant_swa3_median.toml");
    // Source die_temp: mean 0, sigma 0.2 (variance 0.04), gains G = (1, 1, -0.5).
    // mean = own means + G * 0 = (0.10, -0.05, 0.0).
    // aa = 0.5^2 + 1 * 1 * 0.04 = 0.29;            bb likewise 0.29
    // cc = 0.35^2 + 0.25 * 0.04 = 0.1225 + 0.01 = 0.1325
    // ab = 0.3 * 0.5 * 0.5 + 1 * 1 * 0.04 = 0.075 + 0.04 = 0.115
    // ac = bc = 0 + 1 * (-0.5) * 0.04 = -0.02
    assert_model(
        &a,
        &[0.10, -0.05, 0.0],
        &[
            &[0.29, 0.115, -0.02],
            &[0.115, 0.29, -0.02],
            &[-0.02, -0.02, 0.1325],
        ],
    );
    let m = &a.model;
    // which reading is the middle and which lies below it: 3 x 2 rank patterns
    // (combinatorics, common practice), each with two guards: below before middle before above
    assert_eq!(m.output.pieces.len(), 6);
    assert!(m.output.pieces.iter().all(|p| p.guards.len() == 2));
    // median of (3, -1, 2) is 2
    assert!((m.output.eval(&[3.0, -1.0, 2.0]) - 2.0).abs() <= TOL);
    assert_eq!(m.detection, Detection::AtLeast(2));
    // The temperature fault reaches the channels through the source gains.
    assert_eq!(
        m.faults[3].mode,
        FaultMode::Add {
            direction: vec![1.0, 1.0, -0.5]
        }
    );
    // Explicit range, not defaulted.
    assert_eq!(
        m.faults[0].amplitude,
        Amplitude::GaussianUnknownSigma {
            mean: 0.0,
            sigma_lo: 0.05,
            sigma_hi: 500.0,
            defaulted: false
        }
    );
    // Default range: smallest half-width is the safety limit 1.5 -> 0.0015.
    match m.faults[3].amplitude {
        Amplitude::GaussianUnknownSigma {
            sigma_lo,
            sigma_hi,
            defaulted,
            ..
        } => {
            assert!((sigma_lo - 0.0015).abs() <= TOL);
            assert_eq!(sigma_hi, 5400.0);
            assert!(defaulted);
        }
        ref other => panic!("unexpected amplitude {other:?}"),
    }
    // Total correlation of the two Hall channels: 0.115 / 0.29 = 0.396551...
    let r = m.total_correlation();
    assert!((r[(0, 1)] - 0.115 / 0.29).abs() <= TOL);
}

#[test]
fn swa2_plausibility_with_model_estimate() {
    let a = load("plovrant_swa2_plausibility.toml");
    // No sources. aa = bb = 0.6^2 = 0.36; ab = 0.2 * 0.6 * 0.6 = 0.072; est: 3^2 = 9.
    assert_model(
        &a,
        &[0.2, -0.1, 0.8],
        &[&[0.36, 0.072, 0.0], &[0.072, 0.36, 0.0], &[0.0, 0.0, 9.0]],
    );
    let m = &a.model;
    // The output does not use the estimate: coefficient 0 on rack_est.
    assert_eq!(m.output.pieces[0].value.coeffs, vec![0.5, 0.5, 0.0]);
    // plausibility = rack_est - mean(a, b); at (1, 2, 10): 10 - 1.5 = 8.5.
    let plaus = &m.checks[1];
    assert_eq!(plaus.description, "rack_est - output");
    assert!((plaus.function.eval(&[1.0, 2.0, 10.0]) - 8.5).abs() <= TOL);
    assert_eq!(
        m.faults[3].amplitude,
        Amplitude::Uniform {
            lower: -60.0,
            upper: 60.0
        }
    );
    assert!(!m.faults[3].uniform_is_full_scale);
}

#[test]
fn swa2_shared_reference_common_cause() {
    let a = load("plovrant_swa2_shared_ref.toml");
    // Source vref: mean 0.05, sigma 0.2 (variance 0.04); gains G = (1.0, 0.9).
    // mean = (0.1 + 1.0 * 0.05, 0.0 + 0.9 * 0.05) = (0.15, 0.045)
    // aa = 0.45^2 + 1.0^2 * 0.04 = 0.2025 + 0.04 = 0.2425
    // bb = 0.45^2 + 0.9^2 * 0.04 = 0.2025 + 0.0324 = 0.2349
    // ab = 0 + 1.0 * 0.9 * 0.04 = 0.036
    assert_model(&a, &[0.15, 0.045], &[&[0.2425, 0.036], &[0.036, 0.2349]]);
    let m = &a.model;
    assert_eq!(m.source_gains[(1, 0)], 0.9);
    // weighted output 0.6 a + 0.4 b
    assert_eq!(m.output.pieces[0].value.coeffs, vec![0.6, 0.4]);
    // The common-cause faults hit the source and reach both channels with its gains.
    assert_eq!(
        m.faults[0].mode,
        FaultMode::Add {
            direction: vec![1.0, 0.9]
        }
    );
    assert_eq!(m.faults[0].hits, vec![("vref".to_string(), 1.0)]);
    assert_eq!(
        m.faults[1].amplitude,
        Amplitude::Points(vec![(-30.0, 0.7), (30.0, 0.3)])
    );
}

#[test]
fn swa4_dual_pair_median_of_four() {
    let a = load("plovrant_swa4_dual_pair.toml");
    // Sources temp_p1, temp_p2: sigma 0.15 (variance 0.0225), each feeding its package.
    // diagonal: 0.4^2 + 0.0225 = 0.16 + 0.0225 = 0.1825
    // same package: 0.5 * 0.4 * 0.4 + 0.0225 = 0.08 + 0.0225 = 0.1025; across: 0.
    let d = 0.1825;
    let s = 0.1025;
    assert_model(
        &a,
        &[0.05, -0.05, 0.1, 0.0],
        &[
            &[d, s, 0.0, 0.0],
            &[s, d, 0.0, 0.0],
            &[0.0, 0.0, d, s],
            &[0.0, 0.0, s, d],
        ],
    );
    let m = &a.model;
    // which pair is in the middle (C(4, 2) = 6) and which of the other two lies below:
    // 12 rank patterns, not the 4! = 24 orderings (combinatorics, common practice)
    assert_eq!(m.output.pieces.len(), 12);
    // median of four = mean of the middle two: (1, 4, 2, 3) -> (2 + 3) / 2 = 2.5
    assert!((m.output.eval(&[1.0, 4.0, 2.0, 3.0]) - 2.5).abs() <= TOL);
    // spread: 4 - 1 = 3; one-sided band (upper only)
    let spread = &m.checks[0];
    assert!((spread.function.eval(&[1.0, 4.0, 2.0, 3.0]) - 3.0).abs() <= TOL);
    assert_eq!(spread.lower, f64::NEG_INFINITY);
    assert_eq!(spread.upper, 3.0);
    // package check over derived signals: (1 + 4)/2 - (2 + 3)/2 = 0
    assert!(m.checks[1].function.eval(&[1.0, 4.0, 2.0, 3.0]).abs() <= TOL);
    assert_eq!(
        m.faults[0].mode,
        FaultMode::Add {
            direction: vec![1.0, 1.0, 0.0, 0.0]
        }
    );
    assert_eq!(
        m.faults[3].mode,
        FaultMode::Add {
            direction: vec![0.0, 0.0, 1.0, 1.0]
        }
    );
}

#[test]
fn the_design_example_loads() {
    // The example of the architecture-file section of the design notes, as documented.
    let text = r#"
name = "Dual hall channels, averaged"
unit = "deg"
full_scale = [-540.0, 540.0]
[sources.vref]
mean = 0.0
sigma = 0.15
[channels.a]
mean = 0.2
sigma = 0.6
from = { vref = 1.0 }
[channels.b]
mean = -0.1
sigma = 0.6
from = { vref = 1.0 }
[[correlations]]
between = ["a", "b"]
rho = 0.2
[output]
kind = "mean"
of = ["a", "b"]
[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = 3.0
[detection]
fires = "any"
[safety]
limit = 2.0
[faults.a_drift]
fit = 12.0
hits = { a = 1.0 }
mode = "add"
amplitude = { gaussian = { mean = 0.0, sigma = "unknown" } }
[faults.a_stuck]
fit = 3.0
hits = { a = 1.0 }
mode = "replace"
amplitude = { uniform = "full_scale" }
latent_coverage = 0.9
"#;
    let a = model::load_str(text, "design.toml").unwrap_or_else(|e| panic!("{e}"));
    // aa = 0.36 + 0.0225 = 0.3825; ab = 0.2 * 0.36 + 0.0225 = 0.072 + 0.0225 = 0.0945
    assert_model(&a, &[0.2, -0.1], &[&[0.3825, 0.0945], &[0.0945, 0.3825]]);
}
