//! Sweeps and tuning against closed forms derived by hand.
//!
//! Two independent channels `a`, `b` with equal sigma `s` and zero means, fed by a shared
//! source `ref`; the output is the mean `y = (a + b) / 2`, the check the difference
//! `d = a - b`. The sum and difference of two independent gaussians of equal variance are
//! independent (a standard property of the bivariate normal, e.g. Feller, Vol. II, III.1;
//! common practice). A fault on the source adds `F ~ N(0, sf^2)` to both channels: it moves
//! `y` and leaves `d` alone, so with `y ~ N(0, s^2 / 2 + sf^2)` and `d ~ N(0, 2 s^2)`:
//!
//! - `p_vu = P(|y| > L) P(|d| <= T)`, `p_vd = P(|y| > L) P(|d| > T)`;
//! - the fault-free alarm probability is `P(|d| > T)`;
//! - `dc_all_dangerous = 1 - p_vu` reaches a target `c` exactly when
//!   `P(|d| <= T) = (1 - c) / P(|y| > L)`, i.e. `T = sqrt(2) s Phi^-1((1 + q) / 2)` with
//!   `q = (1 - c) / P(|y| > L)`: the limit that tuning must find.
//!
//! The normal CDF is `erfc(-x / sqrt 2) / 2` with the `libm` crate (a port of FreeBSD msun,
//! independent of concord's Cody-based CDF); its inverse is `statrs`' normal quantile.

use concord::analysis::AnalysisOptions;
use concord::analysis::spread::spread_curve;
use concord::analysis::sweep::{Axis, SweepPlan, SweepRow, sweep};
use concord::analysis::tune::{CoverageFigure, TuneRequest, tune};
use concord::model::load_str;
use statrs::distribution::{ContinuousCDF, Normal};

fn phi(x: f64) -> f64 {
    0.5 * libm::erfc(-x * std::f64::consts::FRAC_1_SQRT_2)
}

/// `P(|N(0, sd^2)| > limit)`.
fn outside(sd: f64, limit: f64) -> f64 {
    2.0 * phi(-limit / sd)
}

const S: f64 = 0.6;
const SF: f64 = 1.2;

fn file(check_limit: f64, safety_limit: f64) -> String {
    format!(
        r#"
name = "two channels on a shared reference"
unit = "mm"
full_scale = [-40.0, 40.0]

[sources.ref]
mean = 0.0
sigma = 0.0

[channels.a]
mean = 0.0
sigma = {S}
from = {{ ref = 1.0 }}

[channels.b]
mean = 0.0
sigma = {S}
from = {{ ref = 1.0 }}

[output]
kind = "mean"
of = ["a", "b"]

[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = {check_limit}

[safety]
limit = {safety_limit}

[faults.ref_wander]
fit = 10.0
hits = {{ ref = 1.0 }}
mode = "add"
amplitude = {{ gaussian = {{ mean = 0.0, sigma = {SF} }} }}
"#
    )
}

fn sd_y(sf: f64) -> f64 {
    (S * S / 2.0 + sf * sf).sqrt()
}

fn sd_d() -> f64 {
    (2.0f64).sqrt() * S
}

fn assert_within(what: &str, value: f64, error: f64, reference: f64) {
    let diff = (value - reference).abs();
    assert!(
        diff <= error + 1e-13 + 1e-12 * reference.abs(),
        "{what}: computed {value} ± {error:e}, closed form {reference}, difference {diff:e}"
    );
    assert!(
        error < 1e-8,
        "{what}: bound {error:e} too loose to be a check"
    );
}

#[test]
fn every_sweep_row_matches_the_closed_form() {
    // Sweep the check limit in three series of the safety limit (9 points in all).
    let text = file(1.5, 2.0);
    let plan = SweepPlan::new(
        Axis::list("checks.ab.limit", vec![0.8, 1.5, 2.6]).unwrap(),
        Some(Axis::list("safety.limit", vec![1.0, 2.0, 3.5]).unwrap()),
    )
    .unwrap();
    let arch = load_str(&text, "closed.toml").unwrap();
    let mut rows: Vec<SweepRow> = Vec::new();
    sweep::<concord::analysis::AnalysisError>(&arch, &plan, &AnalysisOptions::default(), |row| {
        rows.push(row);
        Ok(())
    })
    .unwrap();
    assert_eq!(rows.len(), 9);
    for (i, row) in rows.iter().enumerate() {
        assert_eq!(row.index, i, "rows arrive in plan order");
        let t = row.x;
        let l = row.series.unwrap();
        let alarm = outside(sd_d(), t);
        assert_within(
            &format!("false alarm at T={t}, L={l}"),
            row.false_alarm.value,
            row.false_alarm.error,
            alarm,
        );
        let p_vu = outside(sd_y(SF), l) * (1.0 - alarm);
        let site = &row.sites[0];
        assert_within(
            &format!("p_vu at T={t}, L={l}"),
            site.p_vu.value,
            site.p_vu.error,
            p_vu,
        );
        // dc = p_vd / (p_vd + p_vu) = P(|d| > T) here (the factors of y cancel).
        let dc = site.dc.unwrap();
        assert!(
            (dc.value - alarm).abs() <= dc.error + 1e-12,
            "dc at T={t}, L={l}: {} vs {alarm}",
            dc.value
        );
        // residual FIT = fit * p_vu (ISO 26262-5:2018, 8.4.5 with one site).
        assert!((row.residual_fit.value - 10.0 * site.p_vu.value).abs() <= 1e-12);
    }
}

#[test]
fn the_spread_curve_matches_the_closed_form_and_finds_the_growing_residual_at_its_end() {
    let text = file(1.5, 2.0);
    let arch = load_str(&text, "closed.toml").unwrap();
    let sigmas = Axis::log("sigma", 0.05, 20.0, 25).unwrap().values;
    let curve = spread_curve(
        &arch.model,
        "ref_wander",
        &sigmas,
        &AnalysisOptions::default(),
    )
    .unwrap();
    assert_eq!(curve.points.len(), 25);
    let quiet_d = 1.0 - outside(sd_d(), 1.5);
    for p in &curve.points {
        let violated = outside(sd_y(p.sigma), 2.0);
        assert_within(
            &format!("p_vu at sigma {}", p.sigma),
            p.outcome.p_vu.value,
            p.outcome.p_vu.error,
            violated * quiet_d,
        );
        assert_within(
            &format!("p_vd at sigma {}", p.sigma),
            p.outcome.p_vd.value,
            p.outcome.p_vd.error,
            violated * (1.0 - quiet_d),
        );
    }
    // P(|y| > L) grows with sf while P(|d| <= T) stays: the worst case is the upper end.
    let worst = curve.worst.as_ref().unwrap().worst.as_ref().unwrap();
    assert!((worst.sigma - 20.0).abs() < 1e-9 * 20.0, "{}", worst.sigma);
    assert!(worst.local_maxima[0].at_range_end);
}

#[test]
fn the_spread_curve_refuses_sites_without_a_gaussian_amplitude() {
    let text = file(1.5, 2.0).replace(
        "amplitude = { gaussian = { mean = 0.0, sigma = 1.2 } }",
        "amplitude = { points = [[3.0, 1.0]] }",
    );
    let arch = load_str(&text, "closed.toml").unwrap();
    let e = spread_curve(
        &arch.model,
        "ref_wander",
        &[1.0],
        &AnalysisOptions::default(),
    )
    .unwrap_err()
    .to_string();
    assert!(e.contains("points") && e.contains("gaussian"), "{e}");
    let e = spread_curve(&arch.model, "nowhere", &[1.0], &AnalysisOptions::default())
        .unwrap_err()
        .to_string();
    assert!(e.contains("ref_wander"), "names the sites: {e}");
}

/// The check limit at which `dc_all_dangerous` equals `target` (header derivation).
fn closed_form_limit(target: f64, safety_limit: f64) -> f64 {
    let q = (1.0 - target) / outside(sd_y(SF), safety_limit);
    let z = Normal::new(0.0, 1.0).unwrap().inverse_cdf((1.0 + q) / 2.0);
    sd_d() * z
}

#[test]
fn tuning_finds_the_closed_form_limit_and_a_slightly_wider_one_fails() {
    let text = file(1.5, 2.0);
    let target = 0.95;
    let request = TuneRequest::new(Some("ab".into()), CoverageFigure::DcAllDangerous, target);
    let arch = load_str(&text, "closed.toml").unwrap();
    let result = tune(&arch, &request, &AnalysisOptions::default(), &|| {}).unwrap();
    let chosen = result.chosen.as_ref().expect("a limit meets 95 %");
    let limit = chosen.limits[0].1;
    assert_eq!(chosen.limits[0].0, "checks.ab.limit");
    let reference = closed_form_limit(target, 2.0);
    // The bisection stops at a relative bracket of 1e-4 on the scale, below the true limit.
    assert!(
        limit <= reference * (1.0 + 1e-9) && limit >= reference * (1.0 - 2e-4),
        "tuned {limit}, closed form {reference}"
    );
    assert!(chosen.coverage.value - chosen.coverage.error >= target);
    // The false-alarm price at that limit: P(|d| > T).
    assert_within(
        "false alarm at the tuned limit",
        chosen.false_alarm.value,
        chosen.false_alarm.error,
        outside(sd_d(), limit),
    );
    // A limit slightly larger (by the bracket) misses the target.
    let failing = result.first_failing.as_ref().unwrap();
    assert!(failing.limits[0].1 > limit && failing.limits[0].1 <= limit * (1.0 + 2e-4));
    assert!(failing.coverage.value - failing.coverage.error < target);
    let wider = concord::analysis::sweep::analyze_with_overrides(
        &arch,
        &[("checks.ab.limit".into(), reference * (1.0 + 1e-3))],
        &AnalysisOptions::default(),
    )
    .unwrap();
    assert!(wider.sites[0].outcome.dc_all_dangerous().value < target);
}

#[test]
fn a_wider_band_never_raises_coverage_nor_false_alarms() {
    // Common practice (and the header's algebra): along the trade-off curve, by increasing
    // scale, both the coverage and the false-alarm probability fall.
    let text = file(1.5, 2.0);
    let request = TuneRequest::new(None, CoverageFigure::DcAllDangerous, 0.9);
    let arch = load_str(&text, "closed.toml").unwrap();
    let result = tune(&arch, &request, &AnalysisOptions::default(), &|| {}).unwrap();
    for pair in result.curve.windows(2) {
        let (a, b) = (&pair[0], &pair[1]);
        assert!(a.scale < b.scale);
        assert!(b.coverage.value <= a.coverage.value + a.coverage.error + b.coverage.error);
        assert!(
            b.false_alarm.value <= a.false_alarm.value + a.false_alarm.error + b.false_alarm.error
        );
    }
}

#[test]
fn an_unreachable_target_is_said_plainly_with_the_best_reachable() {
    // With sf = 1.2 and L = 2, P(|y| > L) is about 0.13, and even the narrowest band of the
    // range (0.15) leaves P(|d| <= 0.15) about 0.14: dc_all_dangerous cannot reach 0.999.
    let text = file(1.5, 2.0);
    let request = TuneRequest::new(Some("ab".into()), CoverageFigure::DcAllDangerous, 0.999);
    let arch = load_str(&text, "closed.toml").unwrap();
    let result = tune(&arch, &request, &AnalysisOptions::default(), &|| {}).unwrap();
    assert!(result.chosen.is_none());
    let best = &result.best_reachable;
    let expected = 1.0 - outside(sd_y(SF), 2.0) * (1.0 - outside(sd_d(), best.limits[0].1));
    assert_within(
        "best reachable coverage",
        best.coverage.value,
        best.coverage.error,
        expected,
    );
    assert!(
        (best.scale - 0.1).abs() < 1e-12,
        "the narrowest band is best"
    );
    let text_out = concord::report::tune::summary(&result, "closed.toml");
    assert!(
        text_out.contains("no band in the range reaches the target"),
        "{text_out}"
    );
}
