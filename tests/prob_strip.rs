//! The pair tail (`prob::strip`): the probability that a standard normal pair `(T, Y)` lies
//! in a polygon given as a `T`-interval and strips `lower_q <= Y + c_q T <= upper_q`,
//! checked against its definition integrated by brute force:
//! `∫ phi(t) max(0, Phi(U(t)) - Phi(L(t))) dt` (law of total probability over `T`), with
//! `U` and `L` the envelopes evaluated line by line at every node, the integral cut at every
//! crossing of two lines (where the integrand is not smooth) and each cut integrated by
//! Gauss–Legendre with nodes computed here by Newton's method on the Legendre recurrence
//! (Abramowitz and Stegun 1964, 25.4.29 and 22.7.10), and `Phi` from the `libm` crate's
//! erfc (a port of FreeBSD's msun, independent of concord's Cody-based CDF).
//! Nothing of the engine's own quadrature, envelopes or bivariate normal is used.
//!
//! The configurations are built to be degenerate: offsets and slopes from small grids, so
//! that lines are parallel, coincide, and three or more meet at one point; that is where an
//! envelope walk can lose a line to rounding.

use concord::prob::strip::Strips;
use proptest::prelude::*;

/// Standard normal CDF (libm erfc).
fn cdf(x: f64) -> f64 {
    0.5 * libm::erfc(-x * std::f64::consts::FRAC_1_SQRT_2)
}

/// Standard normal density.
fn pdf(x: f64) -> f64 {
    (-0.5 * x * x).exp() / (2.0 * std::f64::consts::PI).sqrt()
}

/// Gauss–Legendre nodes and weights on [-1, 1]: Newton on P_n from the Chebyshev guess
/// cos(pi (i - 1/4) / (n + 1/2)) (Abramowitz and Stegun 22.7.10 for the recurrence,
/// 25.4.29 for the weights 2 / ((1 - x^2) P_n'(x)^2)).
fn gauss_legendre(n: usize) -> Vec<(f64, f64)> {
    let mut rule = Vec::with_capacity(n);
    for i in 1..=n {
        let mut x = (std::f64::consts::PI * (i as f64 - 0.25) / (n as f64 + 0.5)).cos();
        let mut derivative = 0.0;
        for _ in 0..100 {
            let (mut p0, mut p1) = (1.0, x);
            for k in 2..=n {
                let k = k as f64;
                let p2 = ((2.0 * k - 1.0) * x * p1 - (k - 1.0) * p0) / k;
                p0 = p1;
                p1 = p2;
            }
            derivative = n as f64 * (x * p1 - p0) / (x * x - 1.0);
            let step = p1 / derivative;
            x -= step;
            if step.abs() < 1e-16 {
                break;
            }
        }
        rule.push((x, 2.0 / ((1.0 - x * x) * derivative * derivative)));
    }
    rule
}

/// A strip `lower <= Y + slope T <= upper` (infinite ends allowed).
#[derive(Debug, Clone, Copy)]
struct Strip {
    slope: f64,
    lower: f64,
    upper: f64,
}

/// The definition integrated by brute force over `(t_lo, t_hi)` clipped to `[-38, 38]`
/// (the normal density beyond is below 1e-300), with the integral of the magnitudes of the two
/// normal CDF values whose difference is the integrand (the scale of its rounding).
fn by_definition(t_lo: f64, t_hi: f64, strips: &[Strip], rule: &[(f64, f64)]) -> (f64, f64) {
    let (a, b) = (t_lo.max(-38.0), t_hi.min(38.0));
    if a >= b {
        return (0.0, 0.0);
    }
    // Every crossing of two lines (lower or upper, any pair) inside (a, b).
    let lines: Vec<(f64, f64)> = strips
        .iter()
        .flat_map(|s| [(s.lower, s.slope), (s.upper, s.slope)])
        .filter(|(k, _)| k.is_finite())
        .collect();
    let mut cuts = vec![a, b];
    for (i, &(k1, c1)) in lines.iter().enumerate() {
        for &(k2, c2) in &lines[i + 1..] {
            if c1 != c2 {
                let x = (k2 - k1) / (c2 - c1);
                if x > a && x < b {
                    cuts.push(x);
                }
            }
        }
    }
    // Pieces of at most a quarter of a unit, narrower for steep lines and far out (the
    // integrand falls like exp(-(1 + c^2) t^2 / 2) in a tail, and each piece should see its
    // logarithm move by about one), so that the rule converges on each.
    let steepest = strips.iter().map(|s| s.slope.abs()).fold(0.0, f64::max);
    let width = |t: f64| 0.25 / (1.0 + 0.5 * steepest + 0.25 * t.abs() * (1.0 + steepest));
    let mut fine = Vec::new();
    cuts.sort_by(f64::total_cmp);
    for pair in cuts.windows(2) {
        let mut t = pair[0];
        while t < pair[1] {
            fine.push(t);
            t += width(t).min(width(t + width(t)));
        }
    }
    fine.push(b);
    let integrand = |t: f64| {
        let upper = strips
            .iter()
            .map(|s| s.upper - s.slope * t)
            .fold(f64::INFINITY, f64::min);
        let lower = strips
            .iter()
            .map(|s| s.lower - s.slope * t)
            .fold(f64::NEG_INFINITY, f64::max);
        let (plus, minus) = if upper <= lower {
            (0.0, 0.0)
        } else if lower > 0.0 {
            // the upper tail, where the complements keep their digits
            (cdf(-lower), cdf(-upper))
        } else {
            (cdf(upper), cdf(lower))
        };
        (pdf(t) * (plus - minus), pdf(t) * (plus + minus))
    };
    let (mut total, mut magnitude) = (0.0, 0.0);
    for pair in fine.windows(2) {
        let (s, e) = (pair[0], pair[1]);
        let (mid, half) = (0.5 * (s + e), 0.5 * (e - s));
        for &(x, w) in rule {
            let (value, size) = integrand(mid + half * x);
            total += half * w * value;
            magnitude += half * w * size;
        }
    }
    (total, magnitude)
}

/// Offsets from a grid that makes lines meet in common points; now and then unbounded.
fn offset() -> impl Strategy<Value = f64> {
    prop_oneof![
        8 => (-4i32..=4).prop_map(|k| f64::from(k) * 0.5),
        1 => Just(f64::INFINITY),
        1 => -3.0f64..3.0,
    ]
}

/// Slopes from a grid (repeats make parallel lines), nearly parallel ones (a grid value
/// moved by 1e-12 or 1e-9), steep and nearly flat ones.
fn slope() -> impl Strategy<Value = f64> {
    prop_oneof![
        6 => (-4i32..=4).prop_map(|k| f64::from(k) * 0.5),
        1 => ((-4i32..=4), prop_oneof![Just(1e-12), Just(-1e-9)])
            .prop_map(|(k, tilt)| f64::from(k) * 0.5 + tilt),
        1 => Just(1e-7),
        1 => Just(-40.0),
        1 => -3.0f64..3.0,
    ]
}

fn strip() -> impl Strategy<Value = Strip> {
    (slope(), offset(), offset(), any::<bool>()).prop_map(|(slope, a, b, flip)| {
        // `a` as the lower end and `b` as the upper one, ordered; `flip` drops the lower
        // end, so that one-sided strips occur.
        let (lo, hi) = (a.min(b), a.max(b));
        let lower = if flip || lo == f64::INFINITY {
            f64::NEG_INFINITY
        } else {
            lo
        };
        Strip {
            slope,
            lower,
            upper: hi,
        }
    })
}

/// Strips whose upper (or lower) lines all pass through one point `(t0, y0)`, with slopes
/// that are not dyadic, so that the computed crossings of three or more of them differ in
/// the last digits: the case where a walk along an envelope can skip a line.
fn pencil() -> impl Strategy<Value = Vec<Strip>> {
    (
        -2.0f64..2.0,
        -2.0f64..2.0,
        any::<bool>(),
        prop::collection::vec((-4i32..=4, 0.1f64..3.0), 3..7),
    )
        .prop_map(|(t0, y0, through_upper, rows)| {
            rows.into_iter()
                .map(|(k, width)| {
                    let slope = f64::from(k) / 3f64.sqrt();
                    let line = y0 + slope * t0;
                    if through_upper {
                        Strip {
                            slope,
                            lower: line - width,
                            upper: line,
                        }
                    } else {
                        Strip {
                            slope,
                            lower: line,
                            upper: line + width,
                        }
                    }
                })
                .collect()
        })
}

fn t_end() -> impl Strategy<Value = f64> {
    prop_oneof![
        2 => Just(f64::INFINITY),
        3 => (-4i32..=4).prop_map(|k| f64::from(k) * 0.5),
        1 => -3.0f64..3.0,
    ]
}

/// Cases: 2000, or `CONCORD_FUZZ_CASES` when set (a longer hunt, as for `model_fuzz`).
fn cases() -> u32 {
    std::env::var("CONCORD_FUZZ_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(2000)
}

/// Seed: fixed, or `CONCORD_FUZZ_SEED` when set (another stream of cases).
fn seed() -> u64 {
    std::env::var("CONCORD_FUZZ_SEED")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(0x5747_1905)
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: cases(),
        rng_seed: proptest::test_runner::RngSeed::Fixed(seed()),
        failure_persistence: None,
        ..ProptestConfig::default()
    })]

    /// The pair tail equals its definition within its own bound plus the reference's
    /// allowance (the 40- and 48-point rules of the reference agree to it).
    #[test]
    fn pair_tail_matches_its_definition(
        strips in prop_oneof![prop::collection::vec(strip(), 1..7), pencil()],
        a in t_end(),
        b in t_end(),
    ) {
        let (t_lo, t_hi) = if a == f64::INFINITY { (f64::NEG_INFINITY, b) } else { (a.min(b), a.max(b)) };
        let slopes: Vec<f64> = strips.iter().map(|s| s.slope).collect();
        let lower: Vec<f64> = strips.iter().map(|s| s.lower).collect();
        let upper: Vec<f64> = strips.iter().map(|s| s.upper).collect();
        let got = Strips::new(&slopes).probability(t_lo, t_hi, &lower, &upper);
        let (reference, magnitude) = by_definition(t_lo, t_hi, &strips, &gauss_legendre(40));
        let (check, _) = by_definition(t_lo, t_hi, &strips, &gauss_legendre(48));
        // The reference's own error: 1e-12 of the value (the rule and erfc) plus 1e-14 of
        // the magnitude of the CDF values it subtracts (their rounding, 64 ulp); below
        // 1e-250 (a few pieces far out in the tail, close to underflow) it is not resolved.
        let allowance = (1e-12 * reference.abs() + 1e-14 * magnitude).max(1e-250);
        prop_assert!((reference - check).abs() < 0.25 * allowance,
            "reference not converged: {reference:e} vs {check:e}");
        prop_assert!(
            (got.value - reference).abs() <= got.error + allowance,
            "pair tail {:e} +- {:e}, definition {reference:e}, t in ({t_lo}, {t_hi}), strips {strips:?}",
            got.value, got.error,
        );
    }
}

#[test]
fn gauss_legendre_nodes_integrate_polynomials_exactly() {
    // An n-point rule is exact for degree 2n - 1 (Abramowitz and Stegun 25.4.29):
    // the integral of x^(2j) over [-1, 1] is 2 / (2j + 1).
    let rule = gauss_legendre(10);
    for j in 0..10 {
        let sum: f64 = rule.iter().map(|&(x, w)| w * x.powi(2 * j)).sum();
        let exact = 2.0 / f64::from(2 * j + 1);
        assert!((sum - exact).abs() < 1e-14, "x^{}: {sum} vs {exact}", 2 * j);
    }
}
