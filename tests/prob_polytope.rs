//! Polytope probabilities against published closed forms, exact symmetry arguments and a
//! stored table (tests/reference/polytope_scipy.json, made by polytope_scipy.py beside it
//! with SciPy 1.17.1 and mpmath 1.3.0). Every check names its source.
//!
//! This file holds the types, the input checks and the entry points of
//! src/prob/polytope/mod.rs, and the whole method against outside references; each step
//! of the method has its own file: prob_polytope_reduction.rs, prob_polytope_screening.rs,
//! prob_polytope_plan.rs, prob_polytope_nested.rs and prob_polytope_vertices.rs.

use std::f64::consts::PI;

use concord::prob::ProbError;
use concord::prob::polytope::{Band, ErrorTarget, Gaussian, IntegrationPath, Options, Polytope};
use nalgebra::DMatrix;

mod common;

use common::{
    assert_covers, equicorrelated, gaussian, ordering_rows, ref_interval, rho_grid, sheppard, tol,
    unit,
};

#[test]
fn sheppard_orthant_default_path() {
    for rho in rho_grid() {
        let rho = rho.clamp(-1.0, 1.0);
        let g = gaussian(&[0.0, 0.0], &[1.0, rho, rho, 1.0]);
        let mut p = Polytope::new();
        p.push(vec![1.0, 0.0], Band::above(0.0));
        p.push(vec![0.0, 1.0], Band::above(0.0));
        let r = g.probability_detailed(&p, &tol(1e-10, 0.0)).unwrap();
        // Sheppard (1899).
        assert_covers(
            &format!("rho {rho}"),
            r.estimate.value,
            r.estimate.error,
            sheppard(rho),
            1e-15,
        );
        if rho.abs() == 1.0 {
            // Perfect correlation: rank 1, both rows merge into one direction.
            assert_eq!(r.rank, 1);
            assert_eq!(r.method, IntegrationPath::Univariate);
        }
    }
}

#[test]
fn trivariate_orthant_formula() {
    // P(X1 > 0, X2 > 0, X3 > 0) = 1/8 + (asin r12 + asin r13 + asin r23) / (4 pi): the
    // classical trivariate orthant formula (Kendall and Stuart, The Advanced Theory of
    // Statistics, vol. 1; also Genz and Bretz 2009, sec. 2.1.2), which we rely on.
    let grid = [-0.8, -0.45, -0.1, 0.0, 0.3, 0.6, 0.9];
    let mut checked = 0;
    for &r12 in &grid {
        for &r13 in &grid {
            for &r23 in &grid {
                let cov = [1.0, r12, r13, r12, 1.0, r23, r13, r23, 1.0];
                let det = 1.0 + 2.0 * r12 * r13 * r23 - r12 * r12 - r13 * r13 - r23 * r23;
                if det < 1e-3 {
                    continue; // not a valid (or nearly singular) correlation matrix
                }
                let g = gaussian(&[0.0; 3], &cov);
                let mut p = Polytope::new();
                for i in 0..3 {
                    p.push(unit(3, i), Band::above(0.0));
                }
                let r = g.probability_detailed(&p, &tol(1e-7, 0.0)).unwrap();
                let exact = 0.125 + (r12.asin() + r13.asin() + r23.asin()) / (4.0 * PI);
                assert_covers(
                    &format!("r = ({r12}, {r13}, {r23})"),
                    r.estimate.value,
                    r.estimate.error,
                    exact,
                    1e-15,
                );
                assert!(r.estimate.error <= 1e-7);
                checked += 1;
            }
        }
    }
    assert!(checked > 100, "only {checked} valid matrices");
}

#[test]
fn equicorrelated_one_half_orthant_is_one_over_n_plus_one() {
    // With correlation 1/2, X_i = (E_0 - E_i) / sqrt 2 for iid standard E_0..E_n, so
    // P(all X_i > 0) = P(E_0 is the largest of n + 1 iid values) = 1 / (n + 1)
    // (exchangeability; also known from memory as the equicorrelated orthant value).
    for n in 2..=8 {
        let g = equicorrelated(n, 0.5);
        let mut p = Polytope::new();
        for i in 0..n {
            p.push(unit(n, i), Band::above(0.0));
        }
        let r = g.probability_detailed(&p, &tol(0.0, 1e-5)).unwrap();
        let exact = 1.0 / (n as f64 + 1.0);
        assert_covers(
            &format!("n = {n}"),
            r.estimate.value,
            r.estimate.error,
            exact,
            1e-15,
        );
        assert!(r.estimate.error <= 1e-5 * exact);
    }
}

#[derive(serde::Deserialize)]
struct Table {
    cases: Vec<Case>,
}

#[derive(serde::Deserialize)]
struct Case {
    name: String,
    mean: Vec<f64>,
    cov: Vec<Vec<f64>>,
    lower: Vec<serde_json::Value>,
    upper: Vec<serde_json::Value>,
    value: f64,
    tol: f64,
    rel: bool,
}

fn json_number(v: &serde_json::Value) -> f64 {
    match v {
        serde_json::Value::String(s) if s == "inf" => f64::INFINITY,
        serde_json::Value::String(s) if s == "-inf" => f64::NEG_INFINITY,
        other => other.as_f64().unwrap(),
    }
}

#[test]
fn stored_reference_table() {
    // tests/reference/polytope_scipy.json: SciPy 1.17.1 multivariate_normal.cdf rectangles
    // and mpmath 1.3.0 one-factor 1-D reductions (see the generating script).
    let text = include_str!("reference/polytope_scipy.json");
    let table: Table = serde_json::from_str(text).unwrap();
    assert!(table.cases.len() >= 15);
    let (mut max_abs, mut max_rel) = (0.0_f64, 0.0_f64);
    for case in &table.cases {
        let n = case.mean.len();
        let cov: Vec<f64> = case.cov.iter().flatten().copied().collect();
        let g = gaussian(&case.mean, &cov);
        let mut p = Polytope::new();
        for i in 0..n {
            let band = Band::open(json_number(&case.lower[i]), json_number(&case.upper[i]));
            p.push(unit(n, i), band);
        }
        let t = if case.rel {
            tol(0.0, 1e-6)
        } else {
            tol(1e-9, 0.0)
        };
        // Best effort: a 6-D case may not reach 1e-9 within the budget; its honest (larger)
        // bound is then what the reference must fall inside.
        let r = g.probability_best_effort(&p, &t).unwrap();
        let diff = (r.estimate.value - case.value).abs();
        max_abs = max_abs.max(diff);
        max_rel = max_rel.max(diff / case.value);
        assert_covers(
            &case.name,
            r.estimate.value,
            r.estimate.error,
            case.value,
            case.tol,
        );
        if case.rel {
            assert!(r.estimate.error <= 1e-6 * case.value, "{}", case.name);
        }
    }
    println!("reference table: max |diff| {max_abs:.3e}, max relative {max_rel:.3e}");
}

fn factorial(n: usize) -> f64 {
    (1..=n).map(|k| k as f64).product()
}

#[test]
fn ordering_polytopes_are_one_over_r_factorial() {
    // For iid standard normals every ordering is equally likely, so
    // P(z_1 > ... > z_r) = 1 / r! (exchangeability). All r (r - 1) / 2 pairwise rows are
    // given, so m > r and most rows are redundant without being parallel.
    for r in 3..=6 {
        let cov: Vec<f64> = (0..r * r)
            .map(|k| if k / r == k % r { 1.0 } else { 0.0 })
            .collect();
        let g = gaussian(&vec![0.0; r], &cov);
        let mut p = Polytope::new();
        ordering_rows(r, &mut p);
        let res = g.probability_detailed(&p, &tol(1e-7, 0.0)).unwrap();
        // The differences of r coordinates span r - 1 dimensions: two conditioning
        // variables are exact, three nested, more go to the lattice.
        let expected = match r {
            3 => IntegrationPath::Planar,
            4 => IntegrationPath::Nested,
            _ => IntegrationPath::Lattice,
        };
        assert_eq!(res.method, expected, "r = {r}");
        let exact = 1.0 / factorial(r);
        assert_covers(
            &format!("r = {r}"),
            res.estimate.value,
            res.estimate.error,
            exact,
            1e-15,
        );
    }
}

#[test]
fn empty_bands_and_whole_space() {
    let g = gaussian(
        &[0.0, 0.0, 0.0],
        &[1.0, 0.2, 0.1, 0.2, 1.0, 0.3, 0.1, 0.3, 1.0],
    );
    let mut p = Polytope::new();
    p.push(vec![1.0, 0.0, 0.0], Band::closed(1.0, 0.5));
    p.push(vec![0.0, 1.0, 0.0], Band::above(0.0));
    let r = g.probability_detailed(&p, &ErrorTarget::default()).unwrap();
    assert_eq!(r.estimate.value, 0.0);
    assert_eq!(r.estimate.error, 0.0);
    // No constraint at all: probability 1.
    let r = g
        .probability_detailed(&Polytope::new(), &ErrorTarget::default())
        .unwrap();
    assert_eq!(r.estimate.value, 1.0);
    // Only infinite bands: 1.
    let mut p = Polytope::new();
    p.push(
        vec![1.0, 2.0, 0.0],
        Band::closed(f64::NEG_INFINITY, f64::INFINITY),
    );
    assert_eq!(
        g.probability(&p, &ErrorTarget::default()).unwrap().value,
        1.0
    );
    // Antiparallel rows with disjoint bands: 0.
    let mut p = Polytope::new();
    p.push(vec![1.0, 1.0, 0.0], Band::above(1.0));
    p.push(vec![-2.0, -2.0, 0.0], Band::above(-1.0));
    assert_eq!(
        g.probability(&p, &ErrorTarget::default()).unwrap().value,
        0.0
    );
}

#[test]
fn univariate_path_matches_erfc() {
    // One direction: the exact normal interval (libm's erfc as the reference), also far
    // in the tail where relative accuracy matters.
    let g = gaussian(&[1.0, -2.0], &[4.0, 1.0, 1.0, 2.0]);
    // Row (1, 1): mean -1, variance 4 + 2 + 2 = 8.
    for (l, u) in [
        (-3.0, 0.5),
        (20.0, f64::INFINITY),
        (f64::NEG_INFINITY, -30.0),
    ] {
        let mut p = Polytope::new();
        p.push(vec![1.0, 1.0], Band::closed(l, u));
        p.push(vec![2.0, 2.0], Band::closed(2.0 * l - 1.0, 2.0 * u + 1.0));
        let r = g.probability_detailed(&p, &ErrorTarget::default()).unwrap();
        assert_eq!(r.method, IntegrationPath::Univariate);
        let s = 8.0_f64.sqrt();
        let exact = ref_interval((l + 1.0) / s, (u + 1.0) / s);
        assert!(
            (r.estimate.value - exact).abs() <= 1e-13 * exact,
            "{l} {u}: {} vs {exact}",
            r.estimate.value
        );
        // The bound includes the rounding of the shifted, scaled band ends: a relative
        // error e in an end h moves a tail probability by about e h^2 relative.
        assert!(r.estimate.error <= 1e-10 * exact);
    }
}

#[test]
fn bad_input_is_reported() {
    let eye = DMatrix::<f64>::identity(2, 2);
    assert!(matches!(
        Gaussian::new(&[0.0, f64::NAN], &eye),
        Err(ProbError::NonFinite { .. })
    ));
    assert!(matches!(
        Gaussian::new(&[0.0], &eye),
        Err(ProbError::DimensionMismatch { .. })
    ));
    assert!(matches!(
        Gaussian::new(&[0.0; 17], &DMatrix::identity(17, 17)),
        Err(ProbError::TooLarge { .. })
    ));
    let asym = DMatrix::from_row_slice(2, 2, &[1.0, 0.5, 0.4, 1.0]);
    assert!(matches!(
        Gaussian::new(&[0.0; 2], &asym),
        Err(ProbError::NotSymmetric { .. })
    ));
    let indefinite =
        DMatrix::from_row_slice(3, 3, &[1.0, 0.9, 0.9, 0.9, 1.0, -0.9, 0.9, -0.9, 1.0]);
    match Gaussian::new(&[0.0; 3], &indefinite) {
        Err(ProbError::NotPositiveSemiDefinite { detail }) => {
            assert!(detail.contains("coordinate"))
        }
        other => panic!("expected NotPositiveSemiDefinite, got {other:?}"),
    }
    let g = Gaussian::new(&[0.0; 2], &eye).unwrap();
    let mut p = Polytope::new();
    p.push(vec![1.0, 0.0, 0.0], Band::above(0.0));
    assert!(matches!(
        g.probability(&p, &ErrorTarget::default()),
        Err(ProbError::DimensionMismatch { .. })
    ));
    let mut p = Polytope::new();
    p.push(vec![1.0, f64::NAN], Band::above(0.0));
    assert!(matches!(
        g.probability(&p, &ErrorTarget::default()),
        Err(ProbError::NonFinite { .. })
    ));
    let mut p = Polytope::new();
    p.push(vec![1.0, 0.0], Band::above(f64::NAN));
    assert!(matches!(
        g.probability(&p, &ErrorTarget::default()),
        Err(ProbError::NonFinite { .. })
    ));
    let mut p = Polytope::new();
    for _ in 0..65 {
        p.push(vec![1.0, 0.0], Band::above(0.0));
    }
    assert!(matches!(
        g.probability(&p, &ErrorTarget::default()),
        Err(ProbError::TooLarge { .. })
    ));
    let bad_tol = ErrorTarget {
        abs: -1.0,
        ..ErrorTarget::default()
    };
    assert!(matches!(
        g.probability(&Polytope::new(), &bad_tol),
        Err(ProbError::InvalidArgument(_))
    ));
    assert!(matches!(
        g.shifted(&[1.0]),
        Err(ProbError::DimensionMismatch { .. })
    ));
    let mut out = [0.0; 2];
    assert!(g.try_sample(&[1.0], &mut out).is_err());
    g.sample(&[1.0], &mut out); // never panics on short input
}

fn three_row_problem() -> (Gaussian, Polytope) {
    let g = gaussian(
        &[0.2, -0.1, 0.3],
        &[1.0, 0.4, -0.2, 0.4, 2.0, 0.5, -0.2, 0.5, 1.5],
    );
    let mut p = Polytope::new();
    p.push(vec![1.0, 0.0, 0.0], Band::closed(-1.0, 1.0));
    p.push(vec![0.0, 1.0, 1.0], Band::below(1.2));
    p.push(vec![1.0, -1.0, 0.5], Band::above(-0.8));
    p.push(vec![0.3, 0.3, 1.0], Band::closed(-2.0, 2.5));
    (g, p)
}

#[test]
fn same_bits_on_repeated_calls() {
    let (g, p) = three_row_problem();
    let t = tol(1e-8, 0.0);
    let a = g.probability_detailed(&p, &t).unwrap();
    let b = g.probability_detailed(&p, &t).unwrap();
    let (g2, _) = three_row_problem();
    let c = g2.probability_detailed(&p, &t).unwrap();
    assert_eq!(a.method, IntegrationPath::Nested);
    assert_eq!(a.estimate.value.to_bits(), b.estimate.value.to_bits());
    assert_eq!(a.estimate.error.to_bits(), b.estimate.error.to_bits());
    assert_eq!(a.estimate.value.to_bits(), c.estimate.value.to_bits());
    assert_eq!(a.points, c.points);
    // The lattice rule, too, gives the same bits for the same seed.
    let lattice = Options {
        exact_paths: false,
        ..Options::default()
    };
    let d = g.probability_with(&p, &t, &lattice).unwrap();
    let e = g2.probability_with(&p, &t, &lattice).unwrap();
    assert_eq!(d.method, IntegrationPath::Lattice);
    assert_eq!(d.estimate.value.to_bits(), e.estimate.value.to_bits());
    assert_eq!(d.estimate.error.to_bits(), e.estimate.error.to_bits());
    // The two paths agree within their bounds.
    assert!(
        (a.estimate.value - d.estimate.value).abs() <= a.estimate.error + d.estimate.error,
        "nested {a:?} lattice {d:?}"
    );
}

#[test]
fn budget_exhaustion_and_best_effort() {
    let (g, p) = three_row_problem();
    // The lattice rule with 256 points per shift, and the nested rule with one interval
    // (21 evaluations), cannot reach 1e-15.
    for (exact_paths, max_points) in [(false, 12 * 256), (true, 21)] {
        let t = ErrorTarget {
            abs: 1e-15,
            rel: 0.0,
            max_points,
        };
        let strict = Options {
            exact_paths,
            ..Options::default()
        };
        match g.probability_with(&p, &t, &strict) {
            Err(ProbError::BudgetExhausted {
                achieved,
                requested,
                points,
            }) => {
                assert!(achieved > requested);
                assert!(points <= max_points.max(21 * 8), "{points} points");
            }
            other => panic!("expected BudgetExhausted, got {other:?}"),
        }
        let lenient = Options {
            best_effort: true,
            ..strict
        };
        let best = g.probability_with(&p, &t, &lenient).unwrap();
        assert!(best.estimate.error > 1e-15);
        // The honest error covers a tight rerun.
        let tight = g.probability_detailed(&p, &tol(1e-9, 0.0)).unwrap();
        assert_covers(
            "best effort",
            best.estimate.value,
            best.estimate.error,
            tight.estimate.value,
            tight.estimate.error,
        );
    }
    // A shifted copy equals a polytope with shifted bands.
    let shifted = g.shifted(&[0.5, 0.0, 0.0]).unwrap();
    let mut q = Polytope::new();
    q.push(vec![1.0, 0.0, 0.0], Band::closed(-0.5, 1.5));
    let a = shifted.probability(&q, &ErrorTarget::default()).unwrap();
    let mut q0 = Polytope::new();
    q0.push(vec![1.0, 0.0, 0.0], Band::closed(-1.0, 1.0));
    let b = g.probability(&q0, &ErrorTarget::default()).unwrap();
    assert!((a.value - b.value).abs() <= a.error + b.error);
}

#[test]
fn sample_maps_standard_normals() {
    // x = mean + L z reproduces the covariance: E[x x^T] over the 2 r sign patterns of
    // unit vectors z = +-sqrt(r) e_k is L L^T = Sigma (by construction of a factor).
    let cov = [2.0, 0.6, 0.0, 0.6, 1.0, 0.3, 0.0, 0.3, 0.5];
    let g = gaussian(&[1.0, 2.0, 3.0], &cov);
    let r = g.rank();
    let mut acc = [0.0; 9];
    for k in 0..r {
        for s in [-1.0, 1.0] {
            let mut z = vec![0.0; r];
            z[k] = s;
            let mut x = [0.0; 3];
            g.try_sample(&z, &mut x).unwrap();
            for i in 0..3 {
                for j in 0..3 {
                    acc[i * 3 + j] += 0.5 * (x[i] - g.mean()[i]) * (x[j] - g.mean()[j]);
                }
            }
        }
    }
    for (a, b) in acc.iter().zip(cov.iter()) {
        assert!((a - b).abs() < 1e-12);
    }
}

mod properties {
    use super::*;
    use proptest::prelude::*;

    fn arb_problem(max_r: usize) -> impl Strategy<Value = (Vec<f64>, Vec<f64>, Vec<Vec<f64>>)> {
        (2..=max_r).prop_flat_map(|r| {
            (
                proptest::collection::vec(-1.0..1.0_f64, r * r),
                proptest::collection::vec(-0.5..0.5_f64, r),
                proptest::collection::vec(proptest::collection::vec(-1.0..1.0_f64, r), 2..=3),
            )
                .prop_map(move |(b, mean, rows)| {
                    // cov = B B^T + 0.1 I: positive definite.
                    let mut cov = vec![0.0; r * r];
                    for i in 0..r {
                        for j in 0..r {
                            cov[i * r + j] =
                                (0..r).map(|k| b[i * r + k] * b[j * r + k]).sum::<f64>()
                                    + if i == j { 0.1 } else { 0.0 };
                        }
                    }
                    (cov, mean, rows)
                })
        })
    }

    proptest! {
        // A fixed seed: the same cases on every run; the saved regressions are replayed
        // first. (A hunt with random seeds, 600 cases, found nothing; with up to five rows
        // in five dimensions, 1500 cases, one cell of width 0.2 stopped at 3.2e-7 against
        // the 1e-7 asked after 4 million lattice points: an honest BudgetExhausted.)
        #![proptest_config(ProptestConfig {
            cases: 24,
            rng_seed: proptest::test_runner::RngSeed::Fixed(0x0b5e_55ed),
            ..ProptestConfig::default()
        })]

        /// The 3^k cells (below / inside / above for each of k rows) partition the space:
        /// their probabilities sum to 1 within the summed error bounds.
        #[test]
        fn partition_sums_to_one((cov, mean, rows) in arb_problem(4), cut in 0.1..1.0_f64) {
            let g = gaussian(&mean, &cov);
            let k = rows.len();
            let t = tol(1e-7, 0.0);
            let mut total = concord::prob::Estimate::zero();
            for cell in 0..3usize.pow(k as u32) {
                let mut p = Polytope::new();
                let mut c = cell;
                for row in &rows {
                    let band = match c % 3 {
                        0 => Band::below(-cut),
                        1 => Band::closed(-cut, cut),
                        _ => Band::above(cut),
                    };
                    c /= 3;
                    p.push(row.clone(), band);
                }
                total = total.add(g.probability(&p, &t).unwrap());
            }
            prop_assert!((total.value - 1.0).abs() <= total.error + 1e-14,
                "sum {} error {}", total.value, total.error);
        }

        /// Widening a band cannot lower the probability (beyond the error bounds), and
        /// scaling a row and its band by a positive number changes nothing.
        #[test]
        fn monotone_and_scale_invariant((cov, mean, rows) in arb_problem(5), widen in 0.0..1.0_f64, scale in 0.01..100.0_f64) {
            let g = gaussian(&mean, &cov);
            let t = tol(1e-7, 0.0);
            let mut narrow = Polytope::new();
            let mut wide = Polytope::new();
            let mut scaled = Polytope::new();
            for (i, row) in rows.iter().enumerate() {
                let (l, u) = (-0.3 - 0.2 * i as f64, 0.4 + 0.1 * i as f64);
                narrow.push(row.clone(), Band::closed(l, u));
                wide.push(row.clone(), Band::closed(l - widen, u + widen * 0.5));
                scaled.push(row.iter().map(|v| v * scale).collect(), Band::closed(l * scale, u * scale));
            }
            let a = g.probability(&narrow, &t).unwrap();
            let b = g.probability(&wide, &t).unwrap();
            let c = g.probability(&scaled, &t).unwrap();
            prop_assert!(b.value >= a.value - a.error - b.error);
            prop_assert!((c.value - a.value).abs() <= a.error + c.error);
        }
    }
}

#[test]
fn error_bound_covers_a_precise_rerun_in_99_percent() {
    // Random problems in 3 to 6 dimensions with 3 to 8 rows, loose tolerance, against a
    // rerun with a 100 times tighter tolerance: count how often the loose error covers the
    // difference (the target is at least 99 %).
    let mut rng = concord::prob::rng::SplitMix64::new(99);
    let mut covered = 0;
    let total = 200;
    for case in 0..total {
        let r = 3 + (case % 4);
        let m = 3 + (case % 6);
        let b = DMatrix::from_fn(r, r, |_, _| 2.0 * rng.next_f64() - 1.0);
        let cov = &b * b.transpose() + DMatrix::<f64>::identity(r, r) * 0.05;
        let mean: Vec<f64> = (0..r).map(|_| rng.next_f64() - 0.5).collect();
        let g = Gaussian::new(&mean, &cov).unwrap();
        let mut p = Polytope::new();
        for _ in 0..m {
            let row: Vec<f64> = (0..r).map(|_| 2.0 * rng.next_f64() - 1.0).collect();
            let l = -2.0 * rng.next_f64();
            let u = l + 0.5 + 3.0 * rng.next_f64();
            p.push(row, Band::closed(l, u));
        }
        let loose = g.probability(&p, &tol(1e-4, 0.0)).unwrap();
        // An independent rerun: other random shifts.
        let other = Options {
            seed: 0x5eed_0000 + case as u64,
            best_effort: true,
            ..Options::default()
        };
        let tight = g
            .probability_with(&p, &tol(1e-6, 0.0), &other)
            .unwrap()
            .estimate;
        if (loose.value - tight.value).abs() <= loose.error + tight.error {
            covered += 1;
        }
    }
    let rate = covered as f64 / total as f64;
    println!("error bound coverage: {covered} / {total} = {rate:.3}");
    assert!(rate >= 0.99, "coverage {rate}");
}
