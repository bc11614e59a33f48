//! Tests of the adaptive Gauss–Kronrod quadrature against closed forms and stored mpmath
//! values (tests/reference/quadrature_mpmath.py). Every check holds the reported error bound
//! against the true error.
//!
//! Run with `--nocapture` to see the measured accuracies and evaluation counts.

use concord::prob::normal::{cdf, pdf};
use concord::prob::quadrature::{
    Integral, QuadratureOptions, RULE_POINTS, gauss_kronrod_21, integrate, integrate_best_effort,
};
use concord::prob::{Estimate, ProbError};
use proptest::prelude::*;

const INF: f64 = f64::INFINITY;

fn opts() -> QuadratureOptions {
    QuadratureOptions::default()
}

/// An integrand without an error of its own.
fn plain(f: impl Fn(f64) -> f64) -> impl FnMut(f64) -> Result<Estimate, ProbError> {
    move |x| Ok(Estimate::new(f(x), 0.0))
}

/// Asserts that the true error lies within the reported bound, allowing `ref_rounding` for
/// the rounding of the reference value itself, and prints the figures.
fn assert_covers(name: &str, r: &Integral, truth: f64, ref_rounding: f64) {
    let true_err = (r.value - truth).abs();
    eprintln!(
        "{name:<28} value {:>22.16e} true error {true_err:.2e} bound {:.2e} evals {:>5} intervals {}",
        r.value, r.error, r.evaluations, r.intervals
    );
    assert!(
        true_err <= r.error + ref_rounding,
        "{name}: true error {true_err:e} exceeds the bound {:e} (+{ref_rounding:e})",
        r.error
    );
}

/// Rounding allowance for a reference computed in double precision from terms of this size.
fn rounding(magnitude: f64) -> f64 {
    8.0 * f64::EPSILON * magnitude
}

fn reference(name: &str) -> f64 {
    // Stored output of tests/reference/quadrature_mpmath.py (mpmath 1.3.0, 40 digits).
    let table = include_str!("reference/quadrature_mpmath.csv");
    table
        .lines()
        .skip(1)
        .find_map(|l| {
            let (n, v) = l.split_once(',')?;
            if n == name {
                v.trim().parse().ok()
            } else {
                None
            }
        })
        .unwrap_or_else(|| panic!("no reference value {name}"))
}

#[test]
fn integral_of_phi_matches_its_antiderivative() {
    // Common calculus identity: d/dx [x Phi(x) + phi(x)] = Phi(x) (since phi' = -x phi).
    let anti = |x: f64| x * cdf(x) + pdf(x);
    for (a, b) in [
        (-5.0, 5.0),
        (-1.0, 2.5),
        (0.0, 10.0),
        (-30.0, 0.0),
        (-8.0, -3.0),
    ] {
        let r = integrate(|x| Ok(Estimate::exact(cdf(x))), a, b, &[], &opts()).unwrap();
        let truth = anti(b) - anti(a);
        assert_covers(
            &format!("Phi on [{a}, {b}]"),
            &r,
            truth,
            rounding(anti(a).abs() + anti(b).abs()),
        );
        assert!(
            r.error <= 1e-8 * truth.abs() + 1e-12 + 1e-13,
            "bound too loose: {r:?}"
        );
    }
}

#[test]
fn integral_of_phi_over_a_half_line() {
    // integral_{-inf}^{0} Phi = [x Phi(x) + phi(x)] from -inf to 0 = phi(0) = 1 / sqrt(2 pi)
    // (the same identity; x Phi(x) -> 0 as x -> -inf).
    let r = integrate(|x| Ok(Estimate::exact(cdf(x))), -INF, 0.0, &[], &opts()).unwrap();
    let truth = 1.0 / (2.0 * std::f64::consts::PI).sqrt();
    assert_covers("Phi on (-inf, 0]", &r, truth, rounding(truth));
}

#[test]
fn kronrod_rule_is_exact_to_degree_31_and_gauss_to_19() {
    // Degree of exactness: 2n - 1 = 19 for the 10-point Gauss rule and 3n + 1 = 31 for its
    // Kronrod extension (Piessens et al. 1983, QUADPACK, section 2.2). The monomial x^k
    // integrates to 1 / (k + 1) on [0, 1] (every power present after the affine map) and to
    // 2 / (k + 1) or 0 on [-1, 1] (where the first inexact degrees show most clearly).
    for k in 0..=33_i32 {
        let r = gauss_kronrod_21(plain(|x| x.powi(k)), 0.0, 1.0).unwrap();
        let truth = 1.0 / f64::from(k + 1);
        let k_err = (r.kronrod - truth).abs() / truth;
        let g_err = (r.gauss - truth).abs() / truth;
        if k <= 31 {
            assert!(
                k_err < 1e-14,
                "Kronrod not exact for x^{k} on [0, 1]: {k_err:e}"
            );
        }
        if k <= 19 {
            assert!(
                g_err < 1e-14,
                "Gauss not exact for x^{k} on [0, 1]: {g_err:e}"
            );
        } else {
            assert!(
                g_err > 1e-12,
                "Gauss unexpectedly exact for x^{k}: {g_err:e}"
            );
        }
        // The interval's error estimate covers the Kronrod value's error.
        assert!((r.kronrod - truth).abs() <= r.error, "x^{k}: {r:?}");

        let r = gauss_kronrod_21(plain(|x| x.powi(k)), -1.0, 1.0).unwrap();
        let truth = if k % 2 == 0 {
            2.0 / f64::from(k + 1)
        } else {
            0.0
        };
        let k_err = (r.kronrod - truth).abs();
        let g_err = (r.gauss - truth).abs();
        if k <= 31 {
            assert!(
                k_err < 1e-15,
                "Kronrod not exact for x^{k} on [-1, 1]: {k_err:e}"
            );
        } else if k % 2 == 0 {
            assert!(
                k_err > 1e-13,
                "Kronrod unexpectedly exact for x^{k}: {k_err:e}"
            );
        }
        if k <= 19 || k % 2 == 1 {
            assert!(
                g_err < 1e-15,
                "Gauss not exact for x^{k} on [-1, 1]: {g_err:e}"
            );
        } else {
            assert!(
                g_err > 1e-8,
                "Gauss unexpectedly exact for x^{k}: {g_err:e}"
            );
        }
        assert!((r.kronrod - truth).abs() <= r.error, "x^{k}: {r:?}");
    }
}

#[test]
fn gaussian_over_the_real_line_is_sqrt_pi() {
    // integral_R exp(-x^2) dx = sqrt(pi) (Gauss; from memory, a textbook identity), and half
    // of it on [0, inf).
    let sp = std::f64::consts::PI.sqrt();
    let f = || plain(|x: f64| (-x * x).exp());
    let r = integrate(f(), -INF, INF, &[], &opts()).unwrap();
    assert_covers("exp(-x^2) on R", &r, sp, rounding(sp));
    let r = integrate(f(), 0.0, INF, &[], &opts()).unwrap();
    assert_covers("exp(-x^2) on [0, inf)", &r, sp / 2.0, rounding(sp));
    let r = integrate(f(), -INF, INF, &[-1.0, 2.0], &opts()).unwrap();
    assert_covers("exp(-x^2) on R, breakpoints", &r, sp, rounding(sp));
    // Reversed infinite limits give the negative.
    let r = integrate(f(), INF, -INF, &[], &opts()).unwrap();
    assert_covers("exp(-x^2) from inf to -inf", &r, -sp, rounding(sp));
}

#[test]
fn slowly_decaying_tails() {
    // integral_1^inf x^-2 = 1 and integral_1^inf x^-1.5 = 2 (power rule).
    let r = integrate(plain(|x: f64| x.powi(-2)), 1.0, INF, &[], &opts()).unwrap();
    assert_covers("x^-2 on [1, inf)", &r, 1.0, rounding(1.0));
    let r = integrate(plain(|x: f64| x.powf(-1.5)), 1.0, INF, &[], &opts()).unwrap();
    assert_covers("x^-1.5 on [1, inf)", &r, 2.0, rounding(2.0));
}

#[test]
fn normal_cdf_against_normal_density_over_the_line() {
    // integral_R Phi(a + b x) phi(x) dx = Phi(a / sqrt(1 + b^2)) (Owen 1980, "A table of
    // normal integrals", Commun. Statist. B9, formula 10,010.8; from memory).
    for (a, b) in [(0.3, 1.0), (-1.5, 2.0), (2.0, -0.5), (4.0, 3.0)] {
        let r = integrate(
            |x| Ok(Estimate::exact(cdf(a + b * x) * pdf(x))),
            -INF,
            INF,
            &[],
            &opts(),
        )
        .unwrap();
        let truth = cdf(a / (1.0_f64 + b * b).sqrt());
        assert_covers(
            &format!("Phi({a}+{b}x) phi(x) on R"),
            &r,
            truth,
            rounding(truth),
        );
    }
}

#[test]
fn kink_is_cheaper_with_its_breakpoint() {
    // integral_0^1 |x - c| dx = (c^2 + (1 - c)^2) / 2 (area of two triangles).
    let c = 1.0 / 3.0;
    let truth = (c * c + (1.0 - c) * (1.0 - c)) / 2.0;
    let with = integrate(plain(|x: f64| (x - c).abs()), 0.0, 1.0, &[c], &opts()).unwrap();
    let without = integrate(plain(|x: f64| (x - c).abs()), 0.0, 1.0, &[], &opts()).unwrap();
    assert_covers("|x - 1/3| with breakpoint", &with, truth, rounding(1.0));
    assert_covers(
        "|x - 1/3| without breakpoint",
        &without,
        truth,
        rounding(1.0),
    );
    // Linear on each side of the breakpoint: one rule per piece suffices.
    assert_eq!(with.evaluations, 2 * RULE_POINTS);
    assert!(without.evaluations > 4 * with.evaluations, "{without:?}");
}

#[test]
fn narrow_features_bracketed_by_breakpoints() {
    // A gaussian bump of width 1e-3, which the rule alone would step over, bracketed by
    // breakpoints at its centre +- 8 widths: integral_{-1}^{1} exp(-((x - m) / s)^2) dx
    // = s sqrt(pi) / 2 (erf((1 - m) / s) - erf((-1 - m) / s)) (substitution u = (x - m) / s).
    let (m, s) = (0.123_456, 1e-3);
    let truth = s * std::f64::consts::PI.sqrt() / 2.0
        * (libm::erf((1.0 - m) / s) - libm::erf((-1.0 - m) / s));
    let r = integrate(
        plain(move |x: f64| (-((x - m) / s).powi(2)).exp()),
        -1.0,
        1.0,
        &[m - 8.0 * s, m + 8.0 * s],
        &opts(),
    )
    .unwrap();
    assert_covers("bump width 1e-3, breakpoints", &r, truth, rounding(truth));
    // A normal density far from the origin on the whole line integrates to 1 (a density),
    // with its mean +- 8 sigma as breakpoints.
    for (mean, sd) in [(-50.0, 1.0), (1e3, 1e-3), (1e6, 1e3)] {
        let r = integrate(
            plain(move |x: f64| pdf((x - mean) / sd) / sd),
            -INF,
            INF,
            &[mean - 8.0 * sd, mean + 8.0 * sd],
            &opts(),
        )
        .unwrap();
        assert_covers(
            &format!("N({mean}, {sd}^2) density on R"),
            &r,
            1.0,
            rounding(1.0),
        );
    }
}

#[test]
fn jumps_are_refined_honestly() {
    // A unit jump at c on [0, 1] without a breakpoint: integral 1 - c (area of a rectangle);
    // the interval holding the jump keeps a large estimate until it is tiny.
    for c in [0.1, 1.0 / 3.0, 0.7237] {
        let r = integrate(
            plain(move |x: f64| if x < c { 0.0 } else { 1.0 }),
            0.0,
            1.0,
            &[],
            &opts(),
        )
        .unwrap();
        assert_covers(&format!("jump at {c}"), &r, 1.0 - c, rounding(1.0));
    }
}

#[test]
fn breakpoints_are_sorted_deduplicated_and_clipped() {
    // The partition must not depend on the order, duplicates, or points outside (a, b).
    let f = || plain(|x: f64| (x - 0.25).abs() + (x - 0.7).abs() * x);
    let clean = integrate(f(), 0.0, 1.0, &[0.25, 0.7], &opts()).unwrap();
    let messy = integrate(
        f(),
        0.0,
        1.0,
        &[0.7, 5.0, 0.25, 0.7, -1.0, 0.0, 1.0, INF, -INF],
        &opts(),
    )
    .unwrap();
    assert_eq!(clean, messy);
    // Closed form: integral_0^1 |x - 1/4| = (1/16 + 9/16) / 2 = 5/16, and
    // integral_0^1 x |x - 7/10| = 2 (7/10)^3 / 6 - 7/20 + 1/3 (piecewise polynomial).
    let truth = 5.0 / 16.0 + 2.0 * 0.7_f64.powi(3) / 6.0 - 0.7 / 2.0 + 1.0 / 3.0;
    assert_covers("two kinks, breakpoints", &clean, truth, rounding(1.0));
    assert_eq!(clean.evaluations, 3 * RULE_POINTS);
}

#[test]
fn singular_endpoint() {
    // integral_0^1 x^-1/2 dx = 2 (power rule); the rule never evaluates x = 0.
    let r = integrate(plain(|x: f64| 1.0 / x.sqrt()), 0.0, 1.0, &[], &opts()).unwrap();
    assert_covers("1/sqrt(x) on (0, 1]", &r, 2.0, rounding(2.0));
    // integral_0^1 cos(x) / sqrt(x) dx: stored mpmath value (a Fresnel integral).
    let r = integrate(plain(|x: f64| x.cos() / x.sqrt()), 0.0, 1.0, &[], &opts()).unwrap();
    let truth = reference("cos_over_sqrt_0_1");
    assert_covers("cos(x)/sqrt(x) on (0, 1]", &r, truth, rounding(truth));
    // integral_0^1 ln(x) dx = -1 (antiderivative x ln x - x).
    let r = integrate(plain(|x: f64| x.ln()), 0.0, 1.0, &[], &opts()).unwrap();
    assert_covers("ln(x) on (0, 1]", &r, -1.0, rounding(1.0));
}

#[test]
fn oscillatory_integrands() {
    // integral_0^pi sin(50 x) dx = (1 - cos(50 pi)) / 50 = 0, and
    // integral_0^1 sin(50 x) dx = (1 - cos 50) / 50 (antiderivative -cos(50 x) / 50).
    let pi = std::f64::consts::PI;
    let r = integrate(plain(|x: f64| (50.0 * x).sin()), 0.0, pi, &[], &opts()).unwrap();
    assert_covers("sin(50x) on [0, pi]", &r, 0.0, rounding(1.0 / 50.0));
    let r = integrate(plain(|x: f64| (50.0 * x).sin()), 0.0, 1.0, &[], &opts()).unwrap();
    let truth = (1.0 - 50.0_f64.cos()) / 50.0;
    assert_covers("sin(50x) on [0, 1]", &r, truth, rounding(1.0 / 50.0));
    // integral_0^pi exp(-x) sin(50 x) dx: stored mpmath value (closed form 50 (1 - e^-pi) / 2501
    // confirmed by the script).
    let r = integrate(
        plain(|x: f64| (-x).exp() * (50.0 * x).sin()),
        0.0,
        pi,
        &[],
        &opts(),
    )
    .unwrap();
    let truth = reference("exp_sin50_0_pi");
    assert_covers(
        "exp(-x) sin(50x) on [0, pi]",
        &r,
        truth,
        rounding(1.0 / 50.0),
    );
}

#[test]
fn stored_mpmath_cases() {
    // Values from tests/reference/quadrature_mpmath.py (mpmath 1.3.0).
    let r = integrate(
        plain(|x: f64| (-x).exp() / (1.0 + x * x)),
        0.0,
        INF,
        &[],
        &opts(),
    )
    .unwrap();
    let truth = reference("exp_over_1px2_0_inf");
    assert_covers("exp(-x)/(1+x^2) on [0, inf)", &r, truth, rounding(truth));

    let residual = |f: f64| (cdf(-2.0 - f / 2.0) + cdf(f / 2.0 - 2.0)) / 20.0;
    let r = integrate(
        |f| Ok(Estimate::exact(residual(f))),
        -10.0,
        10.0,
        &[],
        &opts(),
    )
    .unwrap();
    let truth = reference("residual_like_uniform");
    assert_covers("residual-like on [-10, 10]", &r, truth, rounding(truth));

    let c = 1.0 / 3.0;
    let r = integrate(
        plain(|x: f64| (x - c).abs() * x.exp()),
        0.0,
        1.0,
        &[c],
        &opts(),
    )
    .unwrap();
    let truth = reference("kink_times_exp");
    assert_covers("|x-1/3| exp(x), breakpoint", &r, truth, rounding(truth));

    let r = integrate(
        |x| Ok(Estimate::exact(pdf(x) * cdf(0.7 * x - 0.3).powi(2))),
        -INF,
        INF,
        &[0.0],
        &opts(),
    )
    .unwrap();
    let truth = reference("phi_times_cdf_sq");
    assert_covers("phi(x) Phi(0.7x-0.3)^2 on R", &r, truth, rounding(truth));
}

#[test]
fn integrand_error_is_propagated() {
    // A constant 1 with error e on [0, 1]: integral 1, and the bound must include e (the
    // integral of the integrand's error bound; requirement of the design).
    let e = 1e-6;
    let r = integrate(|_| Ok(Estimate::new(1.0, e)), 0.0, 1.0, &[], &opts()).unwrap();
    assert_covers("1 +- 1e-6 on [0, 1]", &r, 1.0, 0.0);
    assert!(r.error >= e, "{r:?}");
    assert!(r.error <= e * (1.0 + 1e-12) + 1e-13, "{r:?}");
    // Over an infinite range through the change of variable: error e exp(-x^2) integrates to
    // e sqrt(pi) (see gaussian_over_the_real_line_is_sqrt_pi). The partition does not depend
    // on the integrand's error, so the difference to the error-free run is exactly that term.
    let run = |scale: f64| {
        integrate(
            |x: f64| {
                let g = (-x * x).exp();
                Ok(Estimate::new(g, scale * g))
            },
            -INF,
            INF,
            &[],
            &opts(),
        )
        .unwrap()
    };
    let (with, without) = (run(e), run(0.0));
    let sp = std::f64::consts::PI.sqrt();
    assert_eq!(with.value, without.value);
    assert!(
        ((with.error - without.error) / (e * sp) - 1.0).abs() < 1e-9,
        "{with:?}"
    );
    // Reversed limits keep a positive bound.
    let r = integrate(|_| Ok(Estimate::new(1.0, e)), 1.0, 0.0, &[], &opts()).unwrap();
    assert_eq!(r.value, -1.0);
    assert!(r.error >= e);
}

#[test]
fn range_as_wide_as_the_doubles() {
    // integral_{-L}^{L} 1 / (1 + (x / c)^2) dx = 2 c atan(L / c) (antiderivative c atan(x / c)),
    // with L = 1e308 so that L - (-L) overflows if formed directly.
    let (l, c) = (1e308, 1e307);
    let r = integrate(
        plain(move |x: f64| 1.0 / (1.0 + (x / c).powi(2))),
        -l,
        l,
        &[],
        &opts(),
    )
    .unwrap();
    let truth = 2.0 * c * (l / c).atan();
    assert_covers("Cauchy-like on [-1e308, 1e308]", &r, truth, rounding(truth));
}

#[test]
fn reversed_and_empty_ranges() {
    // integral_b^a = -integral_a^b (orientation) and integral_a^a = 0.
    let f = || plain(|x: f64| x.exp());
    let fwd = integrate(f(), 0.0, 2.0, &[], &opts()).unwrap();
    let back = integrate(f(), 2.0, 0.0, &[], &opts()).unwrap();
    assert_eq!(fwd.value, -back.value);
    assert_eq!(fwd.error, back.error);
    // integral_0^2 e^x = e^2 - 1.
    assert_covers("exp on [0, 2]", &fwd, 2.0_f64.exp() - 1.0, rounding(8.0));
    let zero = integrate(f(), 1.5, 1.5, &[1.5], &opts()).unwrap();
    assert_eq!(zero.value, 0.0);
    assert_eq!(zero.error, 0.0);
    assert_eq!(zero.evaluations, 0);
}

#[test]
fn budget_exhaustion_and_best_effort() {
    // A kink without its breakpoint and a budget of 3 intervals cannot meet 1e-12.
    let c = 1.0 / 3.0;
    let truth = (c * c + (1.0 - c) * (1.0 - c)) / 2.0;
    let tight = QuadratureOptions {
        abs_tol: 1e-12,
        rel_tol: 0.0,
        max_intervals: 3,
    };
    let f = || plain(move |x: f64| (x - c).abs());
    match integrate(f(), 0.0, 1.0, &[], &tight) {
        Err(ProbError::BudgetExhausted {
            achieved,
            requested,
            points,
        }) => {
            assert!(achieved > requested);
            assert_eq!(requested, 1e-12);
            assert_eq!(points, 5 * RULE_POINTS);
        }
        other => panic!("expected BudgetExhausted, got {other:?}"),
    }
    let best = integrate_best_effort(f(), 0.0, 1.0, &[], &tight).unwrap();
    assert_eq!(best.intervals, 3);
    assert!(best.error > 1e-12);
    assert_covers("|x - 1/3|, 3 intervals", &best, truth, rounding(1.0));
    // With enough budget the two agree exactly.
    let a = integrate(f(), 0.0, 1.0, &[], &opts()).unwrap();
    let b = integrate_best_effort(f(), 0.0, 1.0, &[], &opts()).unwrap();
    assert_eq!(a, b);
}

#[test]
fn failures_are_reported_not_panicked() {
    // 1/x on [-1, 1]: the rule's centre node is x = 0, where 1/x is infinite.
    let r = integrate(plain(|x: f64| 1.0 / x), -1.0, 1.0, &[], &opts());
    assert!(matches!(r, Err(ProbError::NonFinite { .. })), "{r:?}");
    let r = integrate(plain(|_| f64::NAN), 0.0, 1.0, &[], &opts());
    assert!(matches!(r, Err(ProbError::NonFinite { .. })), "{r:?}");
    let r = integrate(|_| Ok(Estimate::new(1.0, f64::NAN)), 0.0, 1.0, &[], &opts());
    assert!(matches!(r, Err(ProbError::NonFinite { .. })), "{r:?}");
    // A divergent integral over an infinite range overflows rather than returning a number.
    let r = integrate(plain(|x: f64| x * x), 0.0, INF, &[], &opts());
    assert!(r.is_err(), "{r:?}");
    // Errors of the integrand propagate unchanged.
    let boom = ProbError::InvalidArgument("integrand failed".to_string());
    let r = integrate(|_| Err(boom.clone()), 0.0, 1.0, &[], &opts());
    assert_eq!(r, Err(boom));
    // Invalid arguments.
    assert!(integrate(plain(|x| x), f64::NAN, 1.0, &[], &opts()).is_err());
    assert!(integrate(plain(|x| x), 0.0, 1.0, &[f64::NAN], &opts()).is_err());
    let bad = QuadratureOptions {
        abs_tol: -1.0,
        ..opts()
    };
    assert!(integrate(plain(|x| x), 0.0, 1.0, &[], &bad).is_err());
    let none = QuadratureOptions {
        max_intervals: 0,
        ..opts()
    };
    assert!(integrate(plain(|x| x), 0.0, 1.0, &[], &none).is_err());
    let few = QuadratureOptions {
        max_intervals: 2,
        ..opts()
    };
    assert!(integrate(plain(|x| x), 0.0, 1.0, &[0.2, 0.5], &few).is_err());
}

#[test]
fn deterministic_bits() {
    // Same input, same output bits (house rule).
    let run = || {
        integrate(
            |x| Ok(Estimate::exact(cdf(-x) * (3.0 * x).sin())),
            -6.0,
            INF,
            &[0.5],
            &opts(),
        )
        .unwrap()
    };
    let (a, b) = (run(), run());
    assert_eq!(a.value.to_bits(), b.value.to_bits());
    assert_eq!(a.error.to_bits(), b.error.to_bits());
    assert_eq!(a.evaluations, b.evaluations);
}

/// Antiderivative of `c0 + c1 x + c2 x^2 + c3 x^3` and the sum of magnitudes of its terms.
fn cubic_antiderivative(c: [f64; 4], x: f64) -> (f64, f64) {
    let terms = [
        c[0] * x,
        c[1] * x * x / 2.0,
        c[2] * x.powi(3) / 3.0,
        c[3] * x.powi(4) / 4.0,
    ];
    (terms.iter().sum(), terms.iter().map(|t| t.abs()).sum())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    #[test]
    fn random_cubic_matches_its_antiderivative(
        c0 in -10.0..10.0_f64, c1 in -10.0..10.0_f64, c2 in -10.0..10.0_f64, c3 in -10.0..10.0_f64,
        a in -20.0..20.0_f64, b in -20.0..20.0_f64,
    ) {
        // Power rule antiderivative; Gauss-Kronrod is exact for degree 3 (Piessens et al. 1983)
        // up to rounding, which the reported bound must cover.
        let c = [c0, c1, c2, c3];
        let r = integrate(
            plain(move |x: f64| c0 + x * (c1 + x * (c2 + x * c3))),
            a, b, &[], &opts(),
        ).unwrap();
        let (fa, sa) = cubic_antiderivative(c, a);
        let (fb, sb) = cubic_antiderivative(c, b);
        let truth = fb - fa;
        prop_assert!((r.value - truth).abs() <= r.error + rounding(sa + sb),
            "value {} truth {} bound {}", r.value, truth, r.error);
        prop_assert!(r.evaluations <= 3 * RULE_POINTS);
    }
}
