//! Numerical edge cases of whole analyses against a high-precision reference:
//! tests/reference/edge_cases.json, made by tests/reference/edge_cases.py (Python 3.11.7,
//! mpmath 1.3.0, each figure at 30 and 50 digits; the versions are also stored in the JSON).
//! The script never calls concord: it writes each file and reduces its figures by hand
//! (derivations in the script) to normal probabilities, one- and two-dimensional mpmath
//! integrals, or an order-statistics density.
//!
//! The cases: DC above 99.9999 %, residuals near 1e-12 (two channels, and the median of
//! three), sigmas from 1e-6 to 1e6 in one file, rho of exactly +1 and -1 (equal and unequal
//! sigmas), safety limits 28 and 42 output sigmas out in the tail, full scale a million
//! times the noise (uniform amplitudes, added and replacing), and steps of noise width 1e-6
//! in a uniform amplitude range of 2e5.
//!
//! Every figure is held to `|concord - reference| <= concord's bound + tol + ROUNDING`, and
//! every figure below 1e-3 to a relative accuracy (`SMALL_REL`): a tail probability is only
//! useful with relative accuracy. Where the reference lies below the smallest double (the
//! 42-sigma case, about 2.5e-393), the correctly rounded double is 0 and concord must
//! report exactly 0 with its bound covering the true value.

use concord::analysis::{AnalysisOptions, Outcome, analyze};
use concord::model::load_str;
use concord::prob::Estimate;

/// Rounding allowance for sums of polytope probabilities (double precision).
const ROUNDING: f64 = 1e-15;

/// Relative accuracy asked of every figure below `SMALL` (concord asks 1e-6 relative of
/// each polytope; the residual is integrated directly, not as a difference).
const SMALL_REL: f64 = 1e-5;
/// Figures below this are also held to `SMALL_REL`.
const SMALL: f64 = 1e-3;

#[derive(serde::Deserialize)]
struct Table {
    versions: Versions,
    cases: Vec<Case>,
}

#[derive(serde::Deserialize)]
struct Versions {
    mpmath: String,
}

#[derive(serde::Deserialize)]
struct Case {
    name: String,
    covers: String,
    toml: String,
    results: Vec<SiteRef>,
}

#[derive(serde::Deserialize)]
struct SiteRef {
    site: String,
    p_vd: Option<Figure>,
    p_vu: Option<Figure>,
    p_sd: Option<Figure>,
    p_sq: Option<Figure>,
}

#[derive(serde::Deserialize, Clone, Copy)]
struct Figure {
    value: f64,
    tol: f64,
}

fn table() -> Table {
    serde_json::from_str(include_str!("reference/edge_cases.json")).expect("the edge table")
}

fn case(name: &str) -> Case {
    table()
        .cases
        .into_iter()
        .find(|c| c.name == name)
        .unwrap_or_else(|| panic!("no case {name} in edge_cases.json"))
}

fn scenario<'a>(a: &'a concord::analysis::Analysis, site: &str) -> &'a Outcome {
    if site == "baseline" {
        &a.baseline
    } else {
        &a.sites
            .iter()
            .find(|s| s.name == site)
            .unwrap_or_else(|| panic!("no site {site}"))
            .outcome
    }
}

/// Checks one figure; returns a failure message or None, and prints the comparison.
fn check(what: &str, got: Estimate, reference: Figure, relative: bool) -> Option<String> {
    let diff = (got.value - reference.value).abs();
    let rel = if reference.value != 0.0 {
        diff / reference.value.abs()
    } else {
        diff
    };
    eprintln!(
        "{what:<52} concord {:<24e} ± {:<9.2e} reference {:<24e} rel {rel:.1e}",
        got.value, got.error, reference.value
    );
    if diff > got.error + reference.tol + ROUNDING {
        return Some(format!(
            "{what}: concord {} ± {:e}, reference {} (tol {:e}), difference {diff:e}",
            got.value, got.error, reference.value, reference.tol
        ));
    }
    if relative && reference.value.abs() < SMALL && reference.value != 0.0 && rel > SMALL_REL {
        return Some(format!(
            "{what}: relative error {rel:e} above {SMALL_REL:e} (concord {}, reference {})",
            got.value, reference.value
        ));
    }
    if got.value.is_nan() || got.error.is_nan() {
        return Some(format!("{what}: NaN"));
    }
    None
}

/// Analyses one case with the default options and holds every stored figure to its
/// reference, small ones relatively.
fn run(name: &str) -> concord::analysis::Analysis {
    run_with(name, &AnalysisOptions::default(), true)
}

/// Analyses one case and holds every stored figure to its reference.
fn run_with(name: &str, options: &AnalysisOptions, relative: bool) -> concord::analysis::Analysis {
    let c = case(name);
    eprintln!("{}: {}", c.name, c.covers);
    let arch = load_str(&c.toml, &format!("{name}.toml")).expect("the case loads");
    let a = analyze(&arch.model, options, false).expect("the case runs");
    let mut failures = Vec::new();
    for r in &c.results {
        let o = scenario(&a, &r.site);
        for (key, reference, got) in [
            ("p_vd", r.p_vd, o.p_vd),
            ("p_vu", r.p_vu, o.p_vu),
            ("p_sd", r.p_sd, o.p_sd),
            ("p_sq", r.p_sq, o.p_sq),
        ] {
            if let Some(reference) = reference
                && let Some(f) = check(
                    &format!("{name} / {} / {key}", r.site),
                    got,
                    reference,
                    relative,
                )
            {
                failures.push(f);
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    a
}

#[test]
fn table_names_its_tools() {
    let t = table();
    assert_eq!(t.versions.mpmath, "1.3.0");
    assert_eq!(t.cases.len(), 11);
}

#[test]
fn dc_above_99_9999_percent() {
    // 1 - DC = p_vu / (p_vd + p_vu) is about 7e-9: its relative accuracy is that of p_vu.
    let a = run("dc_above_99_9999");
    let c = case("dc_above_99_9999");
    let r = &c.results[0];
    let (vd, vu) = (r.p_vd.expect("p_vd").value, r.p_vu.expect("p_vu").value);
    let one_minus_dc_ref = vu / (vd + vu);
    let o = scenario(&a, "a_gauss");
    let one_minus_dc = o.p_vu.value / (o.p_vd.value + o.p_vu.value);
    let dc = o.dc().expect("a defined DC");
    assert!(dc.value > 0.999999, "DC {}", dc.value);
    let rel = (one_minus_dc - one_minus_dc_ref).abs() / one_minus_dc_ref;
    eprintln!("1 - DC: concord {one_minus_dc:e}, reference {one_minus_dc_ref:e}, rel {rel:.1e}");
    assert!(rel < SMALL_REL, "1 - DC relative error {rel:e}");
    // the DC itself is exact to its bound
    assert!((dc.value - (1.0 - one_minus_dc_ref)).abs() <= dc.error + 1e-15);
}

#[test]
fn residual_near_1e_12_two_channels() {
    let a = run("residual_1e-12_two_channels");
    assert!(a.baseline.p_vu.value < 2e-12 && a.baseline.p_vu.value > 5e-13);
}

#[test]
fn residual_near_1e_12_median_of_three() {
    // With the default options the engine answers each far-tail polytope by its one- or
    // two-row bound once that is below the absolute tolerance (1e-11): the figure and its
    // bound hold, but 8.4e-13 comes out as 1.3e-11 ± 1.3e-11. concord must say so.
    let a = run_with(
        "residual_1e-12_median_of_three",
        &AnalysisOptions::default(),
        false,
    );
    assert!(
        a.warnings
            .iter()
            .any(|w| w.contains("fault-free baseline") && w.contains("relative accuracy")),
        "{:?}",
        a.warnings
    );
    // With a smaller absolute tolerance it is computed to a relative accuracy.
    let fine = AnalysisOptions {
        polytope_abs: 1e-16,
        amplitude_abs: 1e-16,
        ..AnalysisOptions::default()
    };
    let a = run_with("residual_1e-12_median_of_three", &fine, true);
    assert!(a.baseline.p_vu.value < 2e-12 && a.baseline.p_vu.value > 5e-13);
    assert!(a.warnings.is_empty(), "{:?}", a.warnings);
}

#[test]
fn sigmas_from_1e_minus_6_to_1e6_in_one_file() {
    run("sigma_span_1e-6_to_1e6");
}

#[test]
fn rho_of_exactly_plus_one() {
    run("rho_plus_one_unequal");
    run("rho_plus_one_equal");
}

#[test]
fn rho_of_exactly_minus_one() {
    run("rho_minus_one");
}

#[test]
fn limits_far_in_the_tails() {
    let a = run("far_tail_28_sigma");
    assert!(a.baseline.p_vu.value > 1e-177 && a.baseline.p_vu.value < 1e-175);
    // 42 sigma: the true residual (2.5e-393) is below the smallest double; the correctly
    // rounded answer is 0 and its bound covers the truth.
    let a = run("far_tail_42_sigma");
    assert_eq!(a.baseline.p_vu.value, 0.0);
    assert_eq!(a.baseline.p_vd.value, 0.0);
}

#[test]
fn full_scale_a_million_times_the_noise() {
    let a = run("full_scale_1e6_noise");
    // Derived by hand: far inside a flat amplitude range, adding F to channel a and
    // replacing channel b by F give the same figures (substitute G = F + (a - b) noise in
    // the first, G = a - F in the second: both become |G/2 + n| > L and |G| <= T with n a
    // standard normal), so the two sites must agree within their bounds.
    let (add, replace) = (&a.sites[0].outcome, &a.sites[1].outcome);
    for (x, y) in [(add.p_vu, replace.p_vu), (add.p_vd, replace.p_vd)] {
        assert!(
            (x.value - y.value).abs() <= x.error + y.error + 1e-15,
            "{x:?} vs {y:?}"
        );
    }
}

#[test]
fn uniform_steps_a_micrometre_wide_in_a_range_of_2e5() {
    // The amplitude breakpoints around each step must survive (they once were merged at a
    // gap of 1e-9 of the range, 2e-4 here, two hundred noise widths).
    run("uniform_steps_of_noise_width");
}
