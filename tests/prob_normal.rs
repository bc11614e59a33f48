//! Tests of `concord::prob::normal` against mpmath tables and exact identities.
//!
//! Reference tables: `tests/reference/normal_*.csv`, written by
//! `tests/reference/normal_mpmath.py` (mpmath 1.3.0, 50 significant digits).

use concord::prob::normal;
use proptest::prelude::*;
use proptest::test_runner::RngSeed;

/// Relative error allowed for cdf, sf, pdf, log_cdf and quantile against mpmath: a few
/// units of the last place (the measured maximum is printed by each test).
const REL_TOL: f64 = 1e-15;

/// A subnormal result can only be as exact as the subnormal spacing.
const SUBNORMAL_ABS: f64 = 8.0 * 5e-324; // 5e-324 is the smallest subnormal

fn table(name: &str) -> Vec<Vec<f64>> {
    let path = format!("{}/tests/reference/{name}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    text.lines()
        .skip(1)
        .map(|line| {
            line.split(',')
                .map(|v| v.parse::<f64>().unwrap_or_else(|e| panic!("{line}: {e}")))
                .collect()
        })
        .collect()
}

fn rel_err(got: f64, want: f64) -> f64 {
    if got == want {
        0.0
    } else {
        ((got - want) / want).abs()
    }
}

/// Checks a computed value against an mpmath value: relative where the reference is a
/// normal double, absolute (subnormal spacing) below. Returns the relative error counted.
fn check_probability(what: &str, x: f64, got: f64, want: f64) -> f64 {
    if want.abs() >= f64::MIN_POSITIVE {
        let e = rel_err(got, want);
        assert!(
            e <= REL_TOL,
            "{what}({x:e}) = {got:e}, mpmath {want:e}, rel {e:e}"
        );
        e
    } else {
        assert!(
            (got - want).abs() <= SUBNORMAL_ABS,
            "{what}({x:e}) = {got:e}, mpmath {want:e} (subnormal)"
        );
        0.0
    }
}

// mpmath 1.3.0 at 50 digits: Phi, 1 - Phi, phi on -38..38 (grid of 0.05, 1000 seeded
// random points, both sides of Cody's switch points) and far below the underflow.
#[test]
fn cdf_sf_pdf_match_mpmath() {
    let rows = table("normal_cdf.csv");
    assert!(rows.len() > 2500);
    let (mut cdf_max, mut sf_max, mut pdf_max) = (0.0f64, 0.0f64, 0.0f64);
    let mut normal_range = 0;
    for r in &rows {
        let x = r[0];
        cdf_max = cdf_max.max(check_probability("cdf", x, normal::cdf(x), r[1]));
        sf_max = sf_max.max(check_probability("sf", x, normal::sf(x), r[2]));
        pdf_max = pdf_max.max(check_probability("pdf", x, normal::pdf(x), r[3]));
        if r[1] >= f64::MIN_POSITIVE && r[1] < 1e-300 {
            normal_range += 1;
        }
    }
    // the table reaches results below 1e-300 that are still normal doubles
    assert!(normal_range > 5);
    eprintln!("max rel error vs mpmath: cdf {cdf_max:e}, sf {sf_max:e}, pdf {pdf_max:e}");
}

// mpmath 1.3.0 at 50 digits: ln Phi(x), from x = -1e6 (far below the underflow of Phi)
// to x = 38 (where ln Phi is about -3e-316).
#[test]
fn log_cdf_matches_mpmath() {
    let mut max = 0.0f64;
    for r in table("normal_cdf.csv") {
        let (x, want) = (r[0], r[4]);
        let got = normal::log_cdf(x);
        if want.abs() < f64::MIN_POSITIVE {
            assert!(
                (got - want).abs() <= SUBNORMAL_ABS,
                "log_cdf({x:e}) = {got:e}"
            );
            continue;
        }
        let e = rel_err(got, want);
        assert!(
            e <= REL_TOL,
            "log_cdf({x:e}) = {got:e}, mpmath {want:e}, rel {e:e}"
        );
        max = max.max(e);
        // and the mirror image
        let e = rel_err(normal::log_sf(-x), want);
        assert!(e <= REL_TOL, "log_sf({:e}) rel {e:e}", -x);
    }
    eprintln!("max rel error vs mpmath: log_cdf {max:e}");
}

// mpmath 1.3.0 at 50 digits: the root of Phi(x) = p for p from 1e-300 to 1 - 1e-16.
#[test]
fn quantile_matches_mpmath() {
    let rows = table("normal_quantile.csv");
    assert!(rows.iter().any(|r| r[0] <= 1e-300));
    assert!(rows.iter().any(|r| r[0] >= 1.0 - 1e-16));
    let mut max = 0.0f64;
    for r in rows {
        let (p, want) = (r[0], r[1]);
        let got = normal::quantile(p);
        let e = rel_err(got, want);
        assert!(
            e <= REL_TOL,
            "quantile({p:e}) = {got:e}, mpmath {want:e}, rel {e:e}"
        );
        max = max.max(e);
    }
    eprintln!("max rel error vs mpmath: quantile {max:e}");
}

// mpmath 1.3.0 at 50 digits: P(a < Z < b) on a grid of ends from -40 to 38 (tails, ends
// beyond the underflow, intervals across 0), narrow intervals down to a width of 1e-12,
// and 400 seeded random intervals.
#[test]
fn interval_matches_mpmath() {
    let mut max = 0.0f64;
    for r in table("normal_interval.csv") {
        let (a, b, want) = (r[0], r[1], r[2]);
        let got = normal::interval(a, b);
        if want < f64::MIN_POSITIVE {
            assert!(
                (got - want).abs() <= SUBNORMAL_ABS,
                "interval({a}, {b}) = {got:e}"
            );
            continue;
        }
        let e = rel_err(got, want);
        assert!(
            e <= REL_TOL,
            "interval({a}, {b}) = {got:e}, mpmath {want:e}, rel {e:e}"
        );
        max = max.max(e);
    }
    eprintln!("max rel error vs mpmath: interval {max:e}");
}

// Identity: quantile is the inverse of cdf. The tolerance is the conditioning of the
// inverse, |dx| = |dp| / phi(x) with |dp| a few roundings of p = cdf(x), plus a few
// roundings of x.
#[test]
fn quantile_inverts_cdf() {
    let mut x = -37.5;
    while x <= 37.5 {
        // the lower tail through cdf, the upper tail through sf (p = cdf(x) rounds to 1)
        let back = if x <= 0.0 {
            normal::quantile(normal::cdf(x))
        } else {
            -normal::quantile(normal::sf(x))
        };
        let p = normal::cdf(-x.abs());
        let tol = 4.0 * f64::EPSILON * (p / normal::pdf(x) + x.abs());
        assert!(
            (back - x).abs() <= tol,
            "x = {x}: quantile(cdf(x)) = {back}"
        );
        x += 0.0123;
    }
}

// Identity: Phi(x) + Phi(-x) = 1, and sf is the mirror image of cdf.
#[test]
fn cdf_is_symmetric() {
    let mut x = -40.0;
    while x <= 40.0 {
        let sum = normal::cdf(x) + normal::cdf(-x);
        assert!((sum - 1.0).abs() <= f64::EPSILON, "x = {x}: {sum}");
        assert_eq!(normal::sf(x).to_bits(), normal::cdf(-x).to_bits());
        assert_eq!(normal::pdf(x).to_bits(), normal::pdf(-x).to_bits());
        x += 0.0371;
    }
}

// Exact values: Phi(0) = 1/2, quantile(1/2) = 0, the ends, and NaN in, NaN out.
#[test]
fn special_values() {
    assert_eq!(normal::cdf(0.0), 0.5);
    assert_eq!(normal::sf(0.0), 0.5);
    assert_eq!(normal::quantile(0.5), 0.0);
    assert_eq!(normal::cdf(f64::NEG_INFINITY), 0.0);
    assert_eq!(normal::cdf(f64::INFINITY), 1.0);
    assert_eq!(normal::sf(f64::INFINITY), 0.0);
    assert_eq!(normal::sf(f64::NEG_INFINITY), 1.0);
    assert_eq!(normal::pdf(f64::INFINITY), 0.0);
    assert_eq!(normal::cdf(-39.0), 0.0); // Phi(-39) is about 1e-333, below every double
    assert_eq!(normal::cdf(f64::MAX), 1.0);
    assert_eq!(normal::cdf(-f64::MAX), 0.0);
    assert_eq!(normal::log_cdf(f64::NEG_INFINITY), f64::NEG_INFINITY);
    assert_eq!(normal::log_cdf(f64::INFINITY), 0.0);
    assert_eq!(normal::quantile(0.0), f64::NEG_INFINITY);
    assert_eq!(normal::quantile(1.0), f64::INFINITY);
    assert_eq!(normal::interval(1.0, 1.0), 0.0);
    assert_eq!(normal::interval(2.0, 1.0), 0.0);
    assert_eq!(normal::interval(f64::NEG_INFINITY, f64::INFINITY), 1.0);
    assert_eq!(normal::mills_ratio(f64::INFINITY), 0.0);
    for v in [
        normal::cdf(f64::NAN),
        normal::sf(f64::NAN),
        normal::pdf(f64::NAN),
        normal::log_cdf(f64::NAN),
        normal::mills_ratio(f64::NAN),
        normal::quantile(f64::NAN),
        normal::quantile(-1e-300),
        normal::quantile(1.0 + f64::EPSILON),
        normal::interval(f64::NAN, 1.0),
        normal::interval(0.0, f64::NAN),
    ] {
        assert!(v.is_nan());
    }
}

// The Mills ratio is sf/pdf (definition) and tends to 1/x (Abramowitz and Stegun 26.2.12:
// 1/x - 1/x^3 < R(x) < 1/x for x > 0).
#[test]
fn mills_ratio_bounds() {
    let mut x = 0.1;
    while x < 1e3 {
        let r = normal::mills_ratio(x);
        if x < 35.0 {
            let direct = normal::sf(x) / normal::pdf(x);
            assert!(rel_err(r, direct) <= 1e-15, "x = {x}: {r} vs {direct}");
        }
        assert!(
            r < 1.0 / x && r > 1.0 / x - 1.0 / (x * x * x),
            "x = {x}: {r}"
        );
        x *= 1.37;
    }
}

proptest! {
    // a fixed seed: the same cases on every run
    #![proptest_config(ProptestConfig {
        rng_seed: RngSeed::Fixed(20240606),
        ..ProptestConfig::default()
    })]

    // Phi is a distribution function: non-decreasing, in [0, 1].
    #[test]
    fn cdf_is_monotone(a in -40.0f64..40.0, d in 0.0f64..5.0) {
        let (lo, hi) = (normal::cdf(a), normal::cdf(a + d));
        prop_assert!((0.0..=1.0).contains(&lo) && (0.0..=1.0).contains(&hi));
        prop_assert!(lo <= hi);
    }

    // P(a < Z < c) = P(a < Z < b) + P(b < Z < c): additivity of the measure, held to a
    // relative 1e-15 (all three are computed with relative accuracy).
    #[test]
    fn interval_is_additive(a in -12.0f64..12.0, d1 in 0.0f64..3.0, d2 in 0.0f64..3.0) {
        let (b, c) = (a + d1, a + d1 + d2);
        let whole = normal::interval(a, c);
        let parts = normal::interval(a, b) + normal::interval(b, c);
        prop_assert!((whole - parts).abs() <= 1e-15 * whole + 1e-300, "{whole} vs {parts}");
    }

    // log_cdf is ln(cdf) on the lower half, where cdf is a normal double and ln(cdf) is
    // well conditioned (identity).
    #[test]
    fn log_cdf_is_log_of_cdf(x in -37.0f64..0.0) {
        let (l, c) = (normal::log_cdf(x), normal::cdf(x).ln());
        prop_assert!((l - c).abs() <= 8.0 * f64::EPSILON * l.abs(), "{l} vs {c}");
    }
}
