//! The screening bounds of src/prob/polytope/screening.rs: the pair law of two nearly
//! parallel rows, and the depth bound that proves a polytope empty or bounds a thin one,
//! against closed forms and bounds from outside the engine (libm, the `microlp` crate).
//! Every check names its source.

use std::f64::consts::PI;

use concord::prob::polytope::{Band, ErrorTarget, IntegrationPath, Options, Polytope};
use nalgebra::DMatrix;

mod common;

use common::{assert_covers, equicorrelated, gaussian, ref_interval, tol, unit};

/// Two nearly parallel rows: `X >= 0` and `X + eps Y <= 0` for independent standard `X`,
/// `Y` hold on a wedge of angle `atan(eps)`, so the probability is `atan(eps) / (2 pi)`
/// (Sheppard 1899, the orthant formula with `asin(rho) = atan(eps) - pi / 2`). At
/// `eps = 1e-9` the cosine of the two directions rounds to 1, and a bivariate law built
/// from it alone would be degenerate (probability 0): the sine has to come from the
/// directions themselves.
#[test]
fn nearly_parallel_rows_keep_their_wedge() {
    let g = gaussian(&[0.0, 0.0], &[1.0, 0.0, 0.0, 1.0]);
    for eps in [1e-3, 1e-6, 1e-9, 1e-12, 1e-15] {
        let mut p = Polytope::new();
        p.push(vec![1.0, 0.0], Band::above(0.0));
        p.push(vec![1.0, eps], Band::below(0.0));
        let got = g.probability_detailed(&p, &tol(1e-15, 1e-10)).unwrap();
        let want = eps.atan() / (2.0 * PI);
        assert_covers(
            &format!("wedge eps {eps:e}"),
            got.estimate.value,
            got.estimate.error,
            want,
            0.0,
        );
        // Down to 1e-12 the two rows stay apart and the answer is relative; at 1e-15 they
        // are merged (directions equal to rounding) and only the bound has to hold.
        assert!(
            eps < 1e-13 || (got.estimate.value - want).abs() <= 1e-9 * want,
            "eps {eps:e}: {:e} vs {want:e}, relative accuracy lost",
            got.estimate.value
        );
    }
}

/// A thin wedge `0 <= z2 <= eps z1, z1 <= 3` of two independent standard normals, times
/// `|z3| <= 1` and `|z4| <= 1` of two more (four conditioning variables). The wedge's
/// probability is `int_0^3 phi(z) (Phi(eps z) - 1/2) dz = eps phi(0) (phi(0) - phi(3)) (1 + r)`
/// with `|r| <= (3 eps)^2 / 6` (the Taylor series of `Phi` at 0, common practice; `z phi(z)`
/// has the antiderivative `-phi(z)`), the other two factors libm's erf.
#[test]
fn thin_wedge_across_four_variables_matches_its_closed_form() {
    for eps in [1e-3, 1e-5, 1e-7] {
        let g = gaussian(&[0.0; 4], DMatrix::<f64>::identity(4, 4).as_slice());
        let mut p = Polytope::new();
        p.push(unit(4, 1), Band::above(0.0));
        p.push(vec![-eps, 1.0, 0.0, 0.0], Band::below(0.0));
        p.push(unit(4, 0), Band::below(3.0));
        p.push(unit(4, 2), Band::closed(-1.0, 1.0));
        p.push(unit(4, 3), Band::closed(-1.0, 1.0));
        let phi = |z: f64| (-0.5 * z * z).exp() / (2.0 * PI).sqrt();
        let side = libm::erf(std::f64::consts::FRAC_1_SQRT_2);
        let reference = eps * phi(0.0) * (phi(0.0) - phi(3.0)) * side * side;
        let ref_tol = reference * (3.0 * eps).powi(2) / 6.0 + 4.0 * f64::EPSILON * reference;
        let e = g.probability(&p, &tol(1e-9, 1e-3)).unwrap();
        assert_covers(
            &format!("wedge {eps:e}"),
            e.value,
            e.error,
            reference,
            ref_tol,
        );
    }
}

// A polytope with a sliver of support: six dimensions, eight random rows (drawn once by a
// hunt for unsound error bounds; the numbers are kept as drawn). Its probability is about
// 9e-17, and with the shifts of seed 0x5eed_007f no point of the first lattice round
// (768 points) lands inside.
#[rustfmt::skip]
const SLIVER_COV: [f64; 36] = [1.9130837954516091, 0.3585092340857604, 1.4529127086080205, -0.4234347871089683, 0.8963136825916691, 1.099321595251607, 0.3585092340857604, 1.5663826124582512, -0.19490371600633358, -0.4030576545812751, 0.15960587946714536, -0.34820625311803177, 1.4529127086080205, -0.19490371600633358, 2.347481351694182, 0.39554249365661237, 0.7345487738936436, 0.6973876367812258, -0.4234347871089683, -0.4030576545812751, 0.39554249365661237, 1.202648785163737, 0.6707150739019228, 0.1993793005550002, 0.8963136825916691, 0.15960587946714536, 0.7345487738936436, 0.6707150739019228, 2.658898819584829, 1.8919176354253555, 1.099321595251607, -0.34820625311803177, 0.6973876367812258, 0.1993793005550002, 1.8919176354253555, 2.1033385297320235];
const SLIVER_MEAN: [f64; 6] = [
    -1.225234685993938,
    0.36796832345630837,
    -1.3798806417203953,
    1.2814058596496452,
    0.43293812037254054,
    0.8398974813463971,
];
const SLIVER_ROWS: [([f64; 6], f64, f64); 8] = [
    (
        [
            -0.18034637232728712,
            -0.22393960919500278,
            -0.37254479736666535,
            -0.6547947263775109,
            0.5755842201591805,
            -0.386846050303326,
        ],
        -0.32082701338322583,
        -0.009712476769833778,
    ),
    (
        [
            0.9908207443598525,
            0.72542737440665,
            -0.9643870124640281,
            -0.5002446035046166,
            0.7019984317342143,
            -0.5759606656829033,
        ],
        -1.2736812695774888,
        -0.2386069099006729,
    ),
    (
        [
            0.1668658380457022,
            -0.016141202228825646,
            -0.003914646751630668,
            -0.9148616502109221,
            0.23810045797781632,
            -0.3037113694641058,
        ],
        -0.5721788057332962,
        -0.07642069072525204,
    ),
    (
        [
            0.11546690785996039,
            0.2757097665117805,
            0.34099887372682347,
            -0.40340449752641705,
            0.662522354345455,
            -0.022361118613946074,
        ],
        -1.1840321879294988,
        -0.16766151726528,
    ),
    (
        [
            -0.24833414329430803,
            -0.5299717535940387,
            -0.48353495287069914,
            -0.8693747564768006,
            -0.43019235015708124,
            0.27388487714999044,
        ],
        -1.0365627908340675,
        1.163900342336016,
    ),
    (
        [
            0.703139254928121,
            0.31952244215929904,
            0.6516075142802926,
            -0.41085970842725517,
            -0.7388122789008253,
            0.8264077214292722,
        ],
        -0.5063715712261763,
        0.37410653117906933,
    ),
    (
        [
            -0.9519620632354215,
            -0.6733897317117477,
            -0.9134795153021025,
            -0.2231937644197075,
            0.9416132550511063,
            -0.1143647535492136,
        ],
        -1.372816294221513,
        -0.9863616594209559,
    ),
    (
        [
            0.552583296667194,
            -0.70482856437065,
            0.9404068054918784,
            0.6494534765139555,
            -0.4395615320795323,
            0.18615567757389906,
        ],
        -1.7899321551052547,
        -1.2415260742058236,
    ),
];

/// Bounds on the sliver's probability from outside the engine: below, a cube inscribed in
/// the polytope in the coordinates of nalgebra's Cholesky factor (the deepest point and its
/// margin from the `microlp` crate's LP solver, the cube's probability a product of normal
/// intervals from libm); above, the smallest one-row slab (libm).
fn sliver_bounds(g_cov: &DMatrix<f64>) -> (f64, f64) {
    use microlp::{ComparisonOp, OptimizationDirection, Problem};
    let n = SLIVER_MEAN.len();
    let l = g_cov.clone().cholesky().expect("positive definite").l();
    let mut lp = Problem::new(OptimizationDirection::Maximize);
    let z: Vec<_> = (0..n).map(|_| lp.add_var(0.0, (-40.0, 40.0))).collect();
    let t = lp.add_var(1.0, (f64::NEG_INFINITY, f64::INFINITY));
    let mut slab = 1.0_f64;
    for (row, lower, upper) in SLIVER_ROWS {
        let shift: f64 = row.iter().zip(SLIVER_MEAN).map(|(a, m)| a * m).sum();
        let b: Vec<f64> = (0..n)
            .map(|k| (0..n).map(|i| row[i] * l[(i, k)]).sum())
            .collect();
        let norm = b.iter().map(|v| v * v).sum::<f64>().sqrt();
        let (lo, hi) = ((lower - shift) / norm, (upper - shift) / norm);
        slab = slab.min(ref_interval(lo, hi));
        let mut up: Vec<_> = z.iter().zip(&b).map(|(&v, &c)| (v, c / norm)).collect();
        up.push((t, 1.0));
        lp.add_constraint(up.as_slice(), ComparisonOp::Le, hi);
        let mut down: Vec<_> = z.iter().zip(&b).map(|(&v, &c)| (v, -c / norm)).collect();
        down.push((t, 1.0));
        lp.add_constraint(down.as_slice(), ComparisonOp::Le, -lo);
    }
    let solution = lp.solve().unwrap().into_solution().unwrap();
    // microlp meets constraints within 1e-7: a margin 1e-6 smaller is certainly inside.
    let margin = solution.objective() - 1e-6;
    assert!(margin > 0.0, "margin {margin}");
    let half = margin / (n as f64).sqrt();
    let cube: f64 = z
        .iter()
        .map(|&v| {
            let c = solution.var_value(v);
            ref_interval(c - half, c + half)
        })
        .product();
    (cube, slab)
}

#[test]
fn a_round_without_a_point_inside_is_not_reported_as_exact_zero() {
    // A round in which every point gives zero has a spread of zero; taken at its word it
    // reported 0 +- 0 here. The answer must lie within the bounds from outside the engine
    // (sliver_bounds), and, as a self-consistency check, cover the plain lattice path
    // (`exact_paths: false`, other shifts, best effort at 786 432 points, about 1e-16).
    let g = gaussian(&SLIVER_MEAN, &SLIVER_COV);
    let mut p = Polytope::new();
    for (row, lower, upper) in SLIVER_ROWS {
        p.push(row.to_vec(), Band::closed(lower, upper));
    }
    let options = Options {
        seed: 0x5eed_007f,
        ..Options::default()
    };
    let r = g.probability_with(&p, &tol(1e-17, 0.0), &options).unwrap();
    let e = r.estimate;
    let (below, above) = sliver_bounds(&DMatrix::from_row_slice(6, 6, &SLIVER_COV));
    assert!(below > 0.0);
    assert!(
        e.value + e.error >= below,
        "{r:?} below the cube's {below:e}"
    );
    assert!(
        e.value - e.error <= above,
        "{r:?} above the slab's {above:e}"
    );
    let plain = Options {
        seed: 7,
        exact_paths: false,
        best_effort: true,
    };
    let budget = ErrorTarget {
        abs: 0.0,
        rel: 0.0,
        max_points: 12 * 65_536,
    };
    let reference = g.probability_with(&p, &budget, &plain).unwrap().estimate;
    assert!(e.value > 0.0, "{r:?}");
    assert!(reference.value > 0.0, "{reference:?}");
    assert_covers("sliver", e.value, e.error, reference.value, reference.error);
}

#[test]
fn contradictory_rows_are_proven_empty() {
    // Each coordinate in [0, 1] and their sum above n + 1/2: no point satisfies all rows
    // (by hand), so the probability is 0. Relative tolerance only, which no spread of a
    // lattice can meet at zero: the proof (linear programming duality) answers before any
    // integration instead of after the whole budget.
    for n in 4..=6 {
        let g = equicorrelated(n, 0.3);
        let mut p = Polytope::new();
        for i in 0..n {
            p.push(unit(n, i), Band::closed(0.0, 1.0));
        }
        p.push(vec![1.0; n], Band::closed(n as f64 + 0.5, n as f64 + 1.0));
        let alternating: Vec<f64> = (0..n)
            .map(|i| if i % 2 == 0 { 1.0 } else { -0.5 })
            .collect();
        p.push(alternating, Band::closed(-1.0, 1.0));
        let r = g.probability(&p, &tol(0.0, 1e-3)).unwrap();
        assert_eq!(r.value, 0.0);
        assert!(r.error <= 1e-15, "{r:?}");
        let d = g.probability_detailed(&p, &tol(0.0, 1e-3)).unwrap();
        assert_eq!(d.method, IntegrationPath::Empty);
        assert_eq!(d.points, 0);
    }
}

#[test]
fn polytope_of_measure_zero_gets_a_small_honest_bound() {
    // z1 >= 0, z2 >= 0, z1 + z2 <= 0 leaves only z1 = z2 = 0: probability 0 (by hand), but
    // not empty, so no proof of emptiness exists. Its inradius is zero, so the bound that
    // stands in for the lattice's error is tiny: a guard that such a polytope still
    // converges at once (not a reproduction of an old failure: 0 +- 0 was right here).
    let g = gaussian(&[0.0; 4], DMatrix::<f64>::identity(4, 4).as_slice());
    let mut p = Polytope::new();
    p.push(unit(4, 0), Band::above(0.0));
    p.push(unit(4, 1), Band::above(0.0));
    p.push(vec![1.0, 1.0, 0.0, 0.0], Band::below(0.0));
    p.push(unit(4, 2), Band::closed(-1.0, 1.0));
    p.push(vec![0.0, 0.0, 1.0, 1.0], Band::closed(-1.0, 2.0));
    p.push(unit(4, 3), Band::closed(-2.0, 1.0));
    let r = g.probability_detailed(&p, &tol(1e-9, 0.0)).unwrap();
    // The bound allows for the rounding of the row directions within 40 standard
    // deviations (about 1e-11 here), and the first round settles it.
    assert!(r.estimate.value <= 1e-10, "{r:?}");
    assert!(r.estimate.error <= 1e-10, "{r:?}");
    assert_eq!(r.points, 768, "{r:?}");
}

/// Three comparator states that no readings can take together: `a - b > 2`, `b - c > 2` and
/// `a - c < 2` (the first two add up to `a - c > 4`; by hand). With channel `a` shifted by
/// any amount the contradiction stays, so the polytope is empty for every shift; with the
/// last row loosened to `a - c < 5` it is not (a = 4.5, b = 2.25, c = 0 at shift zero).
#[test]
fn contradictory_comparator_states_are_empty_for_every_shift() {
    let g = gaussian(
        &[0.1, -0.05, 0.0],
        &[0.29, 0.115, -0.02, 0.115, 0.29, -0.02, -0.02, -0.02, 0.1325],
    );
    let shift = [1.0, 0.0, 0.0];
    let build = |last: f64| {
        let mut p = Polytope::new();
        p.push(vec![1.0, -1.0, 0.0], Band::above(2.0));
        p.push(vec![0.0, 1.0, -1.0], Band::above(2.0));
        p.push(vec![1.0, 0.0, -1.0], Band::below(last));
        p
    };
    assert!(g.empty_for_every_shift(&build(2.0), &shift, -540.0, 540.0));
    assert!(!g.empty_for_every_shift(&build(5.0), &shift, -540.0, 540.0));
    // Empty only for shifts that take `a` away from its band: `a + F` in [0, 1] needs F
    // near 0, so a window of shifts far from it is empty and one across it is not.
    let mut p = Polytope::new();
    p.push(vec![1.0, 0.0, 0.0], Band::closed(0.0, 1.0));
    assert!(!g.empty_for_every_shift(&p, &shift, -1.0, 1.0));
    assert!(g.empty_for_every_shift(&p, &shift, 100.0, 540.0));
}

/// Random polytopes of three channels shifted along a random direction over a random range,
/// against the `microlp` crate's LP solver on the same question written directly: the
/// largest margin `t` with `lower + t <= a.(mean + A y + d F) <= upper - t` over `F` in the
/// range, `A` (3 x r) a factor of the covariance. concord works in its own factor's
/// coordinates `z` with `|z_j| <= 40`; any two factors of one covariance differ by a rotation
/// (`|z| = |y|`), so a point the solver finds with `|y_j| <= 20` lies in concord's box, and a
/// polytope the solver finds empty over `|y_j| <= 40 sqrt(r)` is empty over concord's box.
/// A polytope the solver finds a point inside by a margin must never be called empty, and
/// one it finds infeasible by a clear margin must be.
fn assert_emptiness_agrees_with_an_lp_solver(mean: [f64; 3], factor: &DMatrix<f64>, seed: u64) {
    use concord::prob::rng::SplitMix64;
    use microlp::{ComparisonOp, OptimizationDirection, Problem};
    let rank = factor.ncols();
    let cov = factor * factor.transpose();
    let g = gaussian(&mean, cov.transpose().as_slice());
    let mut rng = SplitMix64::new(seed);
    let mut pick = |values: &[f64]| values[(rng.next_u64() % values.len() as u64) as usize];
    let (mut empty, mut inside) = (0, 0);
    for case in 0..400 {
        let coeffs = [-1.0, 0.0, 1.0];
        let rows: Vec<(Vec<f64>, f64, f64)> = (0..3 + case % 3)
            .map(|_| {
                let row = vec![pick(&coeffs), pick(&coeffs), pick(&coeffs)];
                let lower = pick(&[f64::NEG_INFINITY, -3.0, -1.0, 0.5, 2.0]);
                let upper = lower.max(-4.0) + pick(&[0.5, 1.5, 4.0, f64::INFINITY]);
                (row, lower, upper)
            })
            .filter(|(row, _, _)| row.iter().any(|v| *v != 0.0))
            .collect();
        let direction = [pick(&coeffs), pick(&[0.0, 1.0]), 0.0];
        let from = pick(&[-540.0, -5.0, 0.0, 3.0]);
        let to = from + pick(&[0.0, 1.0, 10.0, 1080.0]);
        let mut p = Polytope::new();
        for (row, lower, upper) in &rows {
            let band = match (lower.is_finite(), upper.is_finite()) {
                (true, true) => Band::closed(*lower, *upper),
                (true, false) => Band::above(*lower),
                (false, true) => Band::below(*upper),
                (false, false) => continue,
            };
            p.push(row.clone(), band);
        }
        let ours = g.empty_for_every_shift(&p, &direction, from, to);
        let margin = |half_side: f64| -> f64 {
            let mut lp = Problem::new(OptimizationDirection::Maximize);
            let y: Vec<_> = (0..rank)
                .map(|_| lp.add_var(0.0, (-half_side, half_side)))
                .collect();
            let f = lp.add_var(0.0, (from, to));
            let t = lp.add_var(1.0, (f64::NEG_INFINITY, 10.0));
            for (row, lower, upper) in &rows {
                let shift: f64 = row.iter().zip(&mean).map(|(a, m)| a * m).sum();
                let gain: f64 = row.iter().zip(&direction).map(|(a, d)| a * d).sum();
                let mut terms: Vec<_> = y
                    .iter()
                    .enumerate()
                    .map(|(k, &v)| (v, (0..3).map(|i| row[i] * factor[(i, k)]).sum::<f64>()))
                    .collect();
                terms.push((f, gain));
                if upper.is_finite() {
                    let mut up = terms.clone();
                    up.push((t, 1.0));
                    lp.add_constraint(up.as_slice(), ComparisonOp::Le, upper - shift);
                }
                if lower.is_finite() {
                    let mut down: Vec<_> = terms.iter().map(|&(v, c)| (v, -c)).collect();
                    down.push((t, 1.0));
                    lp.add_constraint(down.as_slice(), ComparisonOp::Le, shift - lower);
                }
            }
            match lp.solve() {
                Ok(outcome) => outcome.into_solution().expect("no limits set").objective(),
                Err(microlp::Error::Infeasible) => f64::NEG_INFINITY,
                Err(e) => panic!("case {case}: {e:?}"),
            }
        };
        let within = margin(20.0);
        if within > 1e-6 {
            inside += 1;
            assert!(
                !ours,
                "case {case}: a point lies inside by {within}, called empty"
            );
        } else if margin(40.0 * (rank as f64).sqrt()) < -1e-3 {
            empty += 1;
            assert!(ours, "case {case}: empty over a larger box, not proven");
        }
    }
    // Both kinds must occur for the comparison to mean anything.
    assert!(empty > 20 && inside > 20, "empty {empty}, inside {inside}");
}

#[test]
fn emptiness_over_a_shift_agrees_with_an_lp_solver() {
    // Three correlated channels (the three-channel example's covariance), full rank: its
    // Cholesky factor by nalgebra.
    let cov = [0.29, 0.115, -0.02, 0.115, 0.29, -0.02, -0.02, -0.02, 0.1325];
    let factor = DMatrix::from_row_slice(3, 3, &cov)
        .cholesky()
        .expect("positive definite")
        .l();
    assert_emptiness_agrees_with_an_lp_solver([0.1, -0.05, 0.0], &factor, 20261205);
    // Rank two: three channels driven by two sources only (no noise of their own).
    let factor = DMatrix::from_row_slice(3, 2, &[0.5, 0.1, 0.4, -0.2, 0.0, 0.35]);
    assert_emptiness_agrees_with_an_lp_solver([0.1, -0.05, 0.0], &factor, 20261206);
}
