//! Facts of the trade (common practice), checked on every example architecture in
//! `architectures/`:
//!
//! - a. a tighter comparator threshold never lowers `dc_all_dangerous` of any site;
//! - b. a tighter safety limit never raises it (and the conditional `dc` obeys no such rule);
//! - c. for a gaussian fault of unknown spread, the residual is small for very small and
//!   very large spreads and peaks in between, and the reported worst case is the peak.
//!
//! a and b are the monotonicity of the events (README.md "What the figures mean"): with pass
//! bands that contain zero, scaling a band by `c < 1` shrinks it, so at every point `x` the
//! set of firing checks can only grow (detection `any` or `at_least k` can only turn on) and
//! a shrunk safety band can only turn a violation on. The residual `p_vu = P(V and not Det)`
//! is the probability of an event that shrinks in case a and grows in case b, for the same
//! gaussian scenario; a worst case over sigma is a maximum of such probabilities, so it
//! moves the same way. Every comparison allows the sum of the two error bounds.
//!
//! The facts need only a few digits, so the analyses here run with the looser tolerances of
//! [`fact_options`] (the changes compared are many orders of magnitude above the bounds; each
//! test also checks that its bounds are small enough to decide).
//!
//! The four-channel example (SWA-4) goes through the lattice rule and is the slow part of
//! this file (about four minutes in release on two cores).

use std::path::Path;
use std::sync::OnceLock;

use concord::analysis::run::Prepared;
use concord::analysis::scenario::FaultScenario;
use concord::analysis::{Analysis, AnalysisOptions, Outcome, analyze};
use concord::model::{Amplitude, Architecture, load_str_with_overrides};

/// The example files; `every_example_file_is_listed` keeps this list complete.
const EXAMPLES: [&str; 6] = [
    "plovrant_swa2_confirmed.toml",
    "plovrant_swa2_mean.toml",
    "plovrant_swa2_plausibility.toml",
    "plovrant_swa2_shared_ref.toml",
    "plovrant_swa3_median.toml",
    "plovrant_swa4_dual_pair.toml",
];

/// Scale of a tightened band (a 20 % tighter threshold).
const TIGHTER: f64 = 0.8;

/// Looser than the defaults: a few digits are all a monotonicity fact needs.
fn fact_options() -> AnalysisOptions {
    AnalysisOptions {
        polytope_abs: 1e-9,
        polytope_rel: 1e-5,
        amplitude_abs: 1e-9,
        amplitude_rel: 1e-5,
        sigma_scan_points: 25,
        sigma_rel_tol: 1e-3,
        ..AnalysisOptions::default()
    }
}

fn text(name: &str) -> String {
    let p = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("architectures")
        .join(name);
    std::fs::read_to_string(p).expect("example file")
}

fn load(name: &str, overrides: &[(String, f64)]) -> Architecture {
    load_str_with_overrides(&text(name), name, overrides).unwrap_or_else(|e| panic!("{e}"))
}

fn run(arch: &Architecture) -> Analysis {
    analyze(&arch.model, &fact_options(), false).unwrap_or_else(|e| panic!("{e}"))
}

/// The analysis of an example as written, computed once per test binary (the three facts
/// share it; the slow examples take seconds per analysis).
fn as_written(name: &str) -> &'static Analysis {
    static DONE: [OnceLock<Analysis>; EXAMPLES.len()] = [const { OnceLock::new() }; EXAMPLES.len()];
    let i = EXAMPLES
        .iter()
        .position(|e| *e == name)
        .expect("a listed example");
    DONE[i].get_or_init(|| run(&load(name, &[])))
}

/// Overrides that scale every band key written in the TOML table `table` (a check or the
/// safety section) by `factor`: `limit`, or whichever of `lower` and `upper` is present.
fn band_overrides(prefix: &str, table: &toml::Table, factor: f64) -> Vec<(String, f64)> {
    let mut out = Vec::new();
    for key in ["limit", "lower", "upper"] {
        if let Some(v) = table.get(key) {
            let v = v
                .as_float()
                .or_else(|| v.as_integer().map(|i| i as f64))
                .expect("a numeric band");
            out.push((format!("{prefix}.{key}"), factor * v));
        }
    }
    assert!(!out.is_empty(), "{prefix} has no band");
    out
}

fn check_overrides(name: &str, factor: f64) -> Vec<(String, f64)> {
    let doc: toml::Table = text(name).parse().expect("TOML");
    let mut out = Vec::new();
    if let Some(checks) = doc.get("checks").and_then(|c| c.as_table()) {
        for (check, body) in checks {
            let body = body.as_table().expect("a check table");
            out.extend(band_overrides(&format!("checks.{check}"), body, factor));
        }
    }
    out
}

fn safety_overrides(name: &str, factor: f64) -> Vec<(String, f64)> {
    let doc: toml::Table = text(name).parse().expect("TOML");
    let safety = doc["safety"].as_table().expect("a safety table");
    band_overrides("safety", safety, factor)
}

/// A band `[lo, hi]` scaled by `c` in (0, 1) is inside the original only when it contains
/// zero; every example's bands do, and the facts rely on it.
fn assert_band_shrunk(what: &str, before: (f64, f64), after: (f64, f64)) {
    assert!(
        before.0 < 0.0 && before.1 > 0.0,
        "{what}: band [{}, {}] does not contain 0: scaling would not shrink it",
        before.0,
        before.1
    );
    // The override took effect: the compiled band is the scaled one (infinite ends stay).
    for (b, a) in [(before.0, after.0), (before.1, after.1)] {
        if b.is_finite() {
            assert!(
                (a - TIGHTER * b).abs() <= 1e-12 * b.abs(),
                "{what}: {b} -> {a}"
            );
        } else {
            assert_eq!(a, b, "{what}");
        }
    }
}

/// `P(V and not Det)` of two outcomes, `a` not above `b` beyond their bounds.
fn residual_not_above(what: &str, a: &Outcome, b: &Outcome) {
    let slack = a.p_vu.error + b.p_vu.error;
    assert!(
        a.p_vu.value <= b.p_vu.value + slack,
        "{what}: residual {:e} ± {:e} above {:e} ± {:e} (dc_all_dangerous {} vs {})",
        a.p_vu.value,
        a.p_vu.error,
        b.p_vu.value,
        b.p_vu.error,
        a.dc_all_dangerous().value,
        b.dc_all_dangerous().value
    );
}

/// Whether `a` is below `b` by more than the bounds allow (a strict change).
fn strictly_below(a: &Outcome, b: &Outcome) -> bool {
    a.p_vu.value + a.p_vu.error < b.p_vu.value - b.p_vu.error
}

/// The residual of the site at a fixed fault sigma (the known-sigma model of an unknown-sigma
/// site), built through the library as `analysis::site` does.
fn outcome_at_sigma(arch: &Architecture, prepared: &Prepared, site: usize, sigma: f64) -> Outcome {
    let fault = &arch.model.faults[site];
    let Amplitude::GaussianUnknownSigma { mean, .. } = fault.amplitude else {
        panic!("{} is not of unknown sigma", fault.name)
    };
    let scenario = FaultScenario::new(&arch.model, fault).unwrap_or_else(|e| panic!("{e}"));
    let g = scenario
        .with_gaussian_amplitude(mean, sigma)
        .unwrap_or_else(|e| panic!("{e}"));
    prepared
        .evaluator
        .outcome(&g)
        .unwrap_or_else(|e| panic!("{e}"))
}

/// Fact a (common practice): a lower comparator threshold never lowers the coverage.
fn tighter_checks_never_lower_coverage(name: &str) {
    let base = load(name, &[]);
    let tight = load(name, &check_overrides(name, TIGHTER));
    for (b, t) in base.model.checks.iter().zip(&tight.model.checks) {
        assert_band_shrunk(
            &format!("{name} check {}", b.name),
            (b.lower, b.upper),
            (t.lower, t.upper),
        );
    }
    let (a0, a1) = (as_written(name), run(&tight));
    // Fault-free: the same shrinking event.
    residual_not_above(&format!("{name} baseline"), &a1.baseline, &a0.baseline);
    let mut improved = 0;
    for (s0, s1) in a0.sites.iter().zip(&a1.sites) {
        let what = format!("{name} site {}", s0.name);
        residual_not_above(&what, &s1.outcome, &s0.outcome);
        if strictly_below(&s1.outcome, &s0.outcome) {
            improved += 1;
        }
        // The same event at one fixed sigma: the worst sigma of the tighter design, which
        // is the sharper form of the fact (the default sigma range starts at 1e-3 of the
        // smallest half-width, so it moves a little with the check bands; both worst cases
        // must lie inside their ranges for the reported figures to compare like with like).
        if let Some(w1) = &s1.worst {
            let w0 = s0.worst.as_ref().expect("same site");
            assert!(
                !w0.local_maxima[0].at_range_end && !w1.local_maxima[0].at_range_end,
                "{what}: worst case at an end of the sigma range"
            );
            let k = base
                .model
                .faults
                .iter()
                .position(|f| f.name == s0.name)
                .expect("site");
            let p0 = Prepared::new(&base.model, &fact_options()).expect("prepared");
            let p1 = Prepared::new(&tight.model, &fact_options()).expect("prepared");
            let at0 = outcome_at_sigma(&base, &p0, k, w1.sigma);
            let at1 = outcome_at_sigma(&tight, &p1, k, w1.sigma);
            residual_not_above(&format!("{what} at sigma {}", w1.sigma), &at1, &at0);
        }
    }
    // The test can fail: tightening changes something in every example, beyond the bounds.
    assert!(
        improved > 0,
        "{name}: no site gained coverage from tighter checks"
    );
}

/// Fact b (common practice): a tighter safety limit never raises `dc_all_dangerous`.
fn tighter_safety_never_raises_coverage(name: &str) {
    let base = load(name, &[]);
    let tight = load(name, &safety_overrides(name, TIGHTER));
    let m = (&base.model, &tight.model);
    assert_band_shrunk(
        &format!("{name} safety"),
        (m.0.safety_lower, m.0.safety_upper),
        (m.1.safety_lower, m.1.safety_upper),
    );
    let (a0, a1) = (as_written(name), run(&tight));
    residual_not_above(&format!("{name} baseline"), &a0.baseline, &a1.baseline);
    let mut worsened = 0;
    for (s0, s1) in a0.sites.iter().zip(&a1.sites) {
        residual_not_above(
            &format!("{name} site {}", s0.name),
            &s0.outcome,
            &s1.outcome,
        );
        if strictly_below(&s0.outcome, &s1.outcome) {
            worsened += 1;
        }
    }
    assert!(
        worsened > 0,
        "{name}: no site lost coverage to a tighter safety limit"
    );
}

/// Fact c (common practice; the worst case as README.md "What the figures mean" defines it):
/// the residual over an unknown sigma.
fn unknown_spread_peaks_in_between(name: &str) {
    let arch = load(name, &[]);
    let analysis = as_written(name);
    let prepared = Prepared::new(&arch.model, &fact_options()).expect("prepared");
    let baseline = analysis.baseline;
    let mut sites = 0;
    for (k, (fault, site)) in arch.model.faults.iter().zip(&analysis.sites).enumerate() {
        let Amplitude::GaussianUnknownSigma {
            sigma_lo, sigma_hi, ..
        } = fault.amplitude
        else {
            continue;
        };
        sites += 1;
        let what = format!("{name} site {}", site.name);
        let worst = site.worst.as_ref().expect("worst case");
        let dc_worst = site.outcome.dc_all_dangerous();
        let at = |s: f64| outcome_at_sigma(&arch, &prepared, k, s);
        let (low, high) = (at(sigma_lo), at(sigma_hi));
        // Tiny spread (a thousandth of the range's lower end): the fault vanishes and the
        // residual is the fault-free one (continuity in sigma; the fault variance is below
        // 1e-6 of the smallest half-width squared).
        let tiny = at(1e-3 * sigma_lo);
        let tol = tiny.p_vu.error + baseline.p_vu.error + 1e-4 * baseline.p_vu.value;
        assert!(
            (tiny.p_vu.value - baseline.p_vu.value).abs() <= tol,
            "{what}: at sigma {} residual {:e}, fault-free {:e}",
            1e-3 * sigma_lo,
            tiny.p_vu.value,
            baseline.p_vu.value
        );
        // Both ends near 100 % (a design whose fault-free residual is below 1 %), and
        // the worst case lower than both by more than the bounds.
        for (end, o) in [(sigma_lo, &low), (sigma_hi, &high)] {
            let dc = o.dc_all_dangerous();
            assert!(
                dc.value >= 0.99,
                "{what}: dc_all_dangerous {} at sigma {end}",
                dc.value
            );
            assert!(
                dc_worst.value + dc_worst.error < dc.value - dc.error,
                "{what}: worst {} ± {:e} not below the end sigma {end}: {} ± {:e}",
                dc_worst.value,
                dc_worst.error,
                dc.value,
                dc.error
            );
        }
        // Huge spread: the faults that escape detection and still violate have amplitudes in
        // a bounded window W, so p_vu -> (integral over W of P(V, not Det | F)) / (sigma
        // sqrt(2 pi)): ten times the sigma, a tenth of the residual (elementary asymptotics;
        // it holds when every large enough fault is detected, as in every example).
        let higher = at(10.0 * sigma_hi);
        let ratio = high.p_vu.value / higher.p_vu.value;
        assert!(
            (ratio - 10.0).abs() < 0.5,
            "{what}: residual {:e} at sigma {sigma_hi}, {:e} at ten times that (ratio {ratio})",
            high.p_vu.value,
            higher.p_vu.value
        );
        // The reported worst case is the lowest coverage: no sigma of an independent grid
        // (log-spaced, not the scan grid) does worse beyond the bounds, and the worst sigma
        // reproduces the reported figures with the known-sigma model.
        let at_worst = at(worst.sigma);
        assert!(
            (at_worst.p_vu.value - site.outcome.p_vu.value).abs()
                <= at_worst.p_vu.error + site.outcome.p_vu.error,
            "{what}: known-sigma model at the worst sigma {} gives {:e}, reported {:e}",
            worst.sigma,
            at_worst.p_vu.value,
            site.outcome.p_vu.value
        );
        let n = 17;
        let ratio = (sigma_hi / sigma_lo).powf(1.0 / (n as f64 + 1.0));
        let mut curve = Vec::new();
        for i in 1..=n {
            let s = sigma_lo * ratio.powf(i as f64 + 0.37);
            let o = at(s);
            assert!(
                o.p_vu.value <= site.outcome.p_vu.value + o.p_vu.error + site.outcome.p_vu.error,
                "{what}: at sigma {s} residual {:e} above the reported worst {:e} at {}",
                o.p_vu.value,
                site.outcome.p_vu.value,
                worst.sigma
            );
            curve.push((s, o.dc_all_dangerous()));
        }
        // Lowest in between: on that grid the coverage falls to its minimum and rises after
        // it (each step allowed its bounds), and the minimum is not at either end.
        let min_at = (0..curve.len())
            .min_by(|&i, &j| curve[i].1.value.total_cmp(&curve[j].1.value))
            .expect("grid");
        assert!(
            min_at > 0 && min_at + 1 < curve.len(),
            "{what}: curve {curve:?}"
        );
        for w in curve.windows(2) {
            let ((s0, d0), (s1, d1)) = (w[0], w[1]);
            let slack = d0.error + d1.error;
            let ok = if s1 <= curve[min_at].0 {
                d1.value <= d0.value + slack
            } else {
                d1.value >= d0.value - slack
            };
            assert!(
                ok,
                "{what}: not one valley between sigma {s0} and {s1}: {curve:?}"
            );
        }
        // The worst sigma lies strictly inside the range, away from both ends.
        assert!(
            worst.sigma > 10.0 * sigma_lo && worst.sigma < sigma_hi / 10.0,
            "{what}: worst sigma {} near an end of [{sigma_lo}, {sigma_hi}]",
            worst.sigma
        );
        eprintln!(
            "{what}: worst sigma {} dc_all_dangerous {}",
            worst.sigma, dc_worst.value
        );
    }
    eprintln!("{name}: {sites} sites of unknown spread");
}

/// The precise form of fact b, and why it is stated for `dc_all_dangerous` only: the
/// conditional `dc = p_vd / (p_vd + p_vu)` of ISO 26262-5 obeys no such rule. A tighter
/// safety limit moves outcomes from "safe" to "violated"; when they are detected they raise
/// `p_vd` and so `dc`. Here (derived by hand) a channel `a` stuck at `F = 3.6` (replace mode)
/// beside a good channel `b ~ N(0, s^2)`, output `(a + b) / 2`, check `|a - b| <= T`:
///
/// - not detected: `|F - b| <= T`, i.e. `b in [F - T, F + T] = [2.1, 5.1]`;
/// - violated with limit `L`: `|F + b| > 2 L`, i.e. `b > 2 L - F` or `b < -2 L - F`;
///   for `L = 2` that is `b > 0.4` or `b < -7.6`; for `L = 1.6`, `b > -0.4` or `b < -6.8`.
///
/// Every undetected outcome violates under both limits, so `p_vu = P(b in [2.1, 5.1])` does
/// not move (nor does `dc_all_dangerous`), while `p_vd = P(V) - p_vu` grows by
/// `P(-0.4 < b <= 0.4) + P(-7.6 <= b < -6.8)`: the conditional `dc` rises from 0.99908 to
/// 0.99969. (Every site of the examples loses `dc` too under a 20 % tighter limit; the
/// example shows that no rule guarantees it.)
#[test]
fn tighter_safety_can_raise_the_conditional_dc_of_a_stuck_channel() {
    const S: f64 = 0.6;
    const T: f64 = 1.5;
    const F: f64 = 3.6;
    let phi = |x: f64| 0.5 * libm::erfc(-x * std::f64::consts::FRAC_1_SQRT_2);
    let text = format!(
        r#"
name = "stuck channel beside a good one"
unit = "mm"
full_scale = [-40.0, 40.0]

[channels.a]
sigma = {S}

[channels.b]
sigma = {S}

[output]
kind = "mean"
of = ["a", "b"]

[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = {T}

[safety]
limit = 2.0

[faults.a_stuck]
fit = 1.0
hits = {{ a = 1.0 }}
mode = "replace"
amplitude = {{ points = [[{F}, 1.0]] }}
"#
    );
    let b_between = |lo: f64, hi: f64| phi(hi / S) - phi(lo / S);
    let p_vu = b_between(F - T, F + T);
    let mut dcs = Vec::new();
    for limit in [2.0, TIGHTER * 2.0] {
        let ov = vec![("safety.limit".to_string(), limit)];
        let arch =
            load_str_with_overrides(&text, "stuck.toml", &ov).unwrap_or_else(|e| panic!("{e}"));
        let a = analyze(&arch.model, &AnalysisOptions::default(), false)
            .unwrap_or_else(|e| panic!("{e}"));
        let o = a.sites[0].outcome;
        let violated = (1.0 - phi((2.0 * limit - F) / S)) + phi((-2.0 * limit - F) / S);
        let p_vd = violated - p_vu;
        for (what, got, want) in [("p_vu", o.p_vu, p_vu), ("p_vd", o.p_vd, p_vd)] {
            assert!(
                (got.value - want).abs() <= got.error + 1e-12,
                "limit {limit} {what}: {} ± {:e}, by hand {want}",
                got.value,
                got.error
            );
        }
        let dc = o.dc().expect("dangerous outcomes");
        assert!((dc.value - p_vd / (p_vd + p_vu)).abs() <= dc.error + 1e-12);
        dcs.push((dc, o.dc_all_dangerous()));
    }
    let ((dc0, ad0), (dc1, ad1)) = (dcs[0], dcs[1]);
    assert!(
        dc1.value - dc1.error > dc0.value + dc0.error,
        "the conditional dc rises: {} -> {}",
        dc0.value,
        dc1.value
    );
    assert!((dc0.value - 0.99908).abs() < 5e-6 && (dc1.value - 0.99969).abs() < 5e-6);
    // ... and dc_all_dangerous does not rise (fact b), here it stays.
    assert!((ad1.value - ad0.value).abs() <= ad0.error + ad1.error + 1e-15);
}

macro_rules! on_every_example {
    ($fact:ident) => {
        mod $fact {
            #[test]
            fn swa2_confirmed() {
                super::$fact("plovrant_swa2_confirmed.toml");
            }
            #[test]
            fn swa2_mean() {
                super::$fact("plovrant_swa2_mean.toml");
            }
            #[test]
            fn swa2_plausibility() {
                super::$fact("plovrant_swa2_plausibility.toml");
            }
            #[test]
            fn swa2_shared_ref() {
                super::$fact("plovrant_swa2_shared_ref.toml");
            }
            #[test]
            fn swa3_median() {
                super::$fact("plovrant_swa3_median.toml");
            }
            #[test]
            fn swa4_dual_pair() {
                super::$fact("plovrant_swa4_dual_pair.toml");
            }
        }
    };
}

on_every_example!(tighter_checks_never_lower_coverage);
on_every_example!(tighter_safety_never_raises_coverage);
on_every_example!(unknown_spread_peaks_in_between);

#[test]
fn every_example_file_is_listed() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("architectures");
    let mut found: Vec<String> = std::fs::read_dir(dir)
        .expect("architectures/")
        .map(|e| e.expect("entry").file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".toml"))
        .collect();
    found.sort();
    assert_eq!(
        found, EXAMPLES,
        "add the new example to EXAMPLES and to on_every_example!"
    );
}
