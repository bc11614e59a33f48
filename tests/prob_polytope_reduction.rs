//! Steps 2 and 3 of the polytope method (src/prob/polytope/reduction.rs): deterministic
//! rows with open and closed ends, singular covariances, and parallel or antiparallel rows
//! merged, against products of normal intervals (libm's erfc) and reduced problems. Every
//! check names its source.

use concord::prob::polytope::{Band, Gaussian, IntegrationPath, Polytope};
use nalgebra::DMatrix;

mod common;

use common::{assert_covers, gaussian, ref_interval, tol};

/// A fixed pseudo-random matrix (rows x cols), entries in [-1, 1], plus `diag` on the
/// diagonal.
fn test_matrix(rows: usize, cols: usize, seed: u64, diag: f64) -> DMatrix<f64> {
    let mut rng = concord::prob::rng::SplitMix64::new(seed);
    DMatrix::from_fn(rows, cols, |i, j| {
        2.0 * rng.next_f64() - 1.0 + if i == j { diag } else { 0.0 }
    })
}

#[test]
fn change_of_variables_gives_product_of_intervals() {
    // x = mu + M y with y ~ N(0, I): the rows of M^-1 read off y, so the polytope
    // {l_i <= (M^-1 (x - mu))_i <= u_i} has probability prod_i P(l_i < Z < u_i)
    // (independence), computed with libm's erfc. Extra rows: scaled copies of some rows
    // with scaled bands (parallel), negated copies (antiparallel).
    for (r, seed) in [(3usize, 1u64), (4, 2), (6, 3)] {
        let m = test_matrix(r, r, seed, 1.5);
        let cov = &m * m.transpose();
        let mean: Vec<f64> = (0..r).map(|i| 0.3 * i as f64 - 0.5).collect();
        let g = Gaussian::new(&mean, &cov).unwrap();
        let inv = m.clone().try_inverse().unwrap();
        let bounds: Vec<(f64, f64)> = (0..r)
            .map(|i| match i % 3 {
                0 => (-1.0 + 0.2 * i as f64, 0.8),
                1 => (f64::NEG_INFINITY, 0.5 - 0.1 * i as f64),
                _ => (-0.7, f64::INFINITY),
            })
            .collect();
        let mut p = Polytope::new();
        let mut exact = 1.0;
        for (i, &(l, u)) in bounds.iter().enumerate() {
            let row: Vec<f64> = (0..r).map(|j| inv[(i, j)]).collect();
            let shift: f64 = row.iter().zip(mean.iter()).map(|(a, b)| a * b).sum();
            p.push(row.clone(), Band::closed(l + shift, u + shift));
            if i % 2 == 0 {
                p.push(
                    row.iter().map(|v| 2.5 * v).collect(),
                    Band::closed(2.5 * (l + shift), 2.5 * (u + shift)),
                );
            } else {
                p.push(
                    row.iter().map(|v| -v).collect(),
                    Band::closed(-(u + shift), -(l + shift)),
                );
            }
            exact *= ref_interval(l, u);
        }
        let res = g.probability_detailed(&p, &tol(1e-9, 0.0)).unwrap();
        assert_eq!(res.directions, r);
        assert_covers(
            &format!("r = {r}"),
            res.estimate.value,
            res.estimate.error,
            exact,
            1e-14,
        );
    }
}

#[test]
fn singular_twelve_dimensional_with_deterministic_rows() {
    // x = G [y; 0] with G a fixed invertible 12 x 12 matrix and y ~ N(0, I_6): rank 6.
    // Rows 0..6 of G^-1 read off y (probability a product of intervals, libm's erfc); rows
    // 6..12 of G^-1 annihilate the random part, so they are deterministic with value
    // (G^-1 mu)_k, which decides 1 or 0 by the band's open or closed ends. More rows:
    // parallel copies. m = 20 in all.
    let n = 12;
    let r = 6;
    let gm = test_matrix(n, n, 42, 2.0);
    let m = gm.columns(0, r).into_owned();
    let cov = &m * m.transpose();
    let mean = vec![0.0; n];
    let g = Gaussian::new(&mean, &cov).unwrap();
    assert_eq!(g.rank(), r);
    let inv = gm.clone().try_inverse().unwrap();
    let row = |k: usize| -> Vec<f64> { (0..n).map(|j| inv[(k, j)]).collect() };
    let bounds = [
        (-1.0, 1.2),
        (f64::NEG_INFINITY, 0.3),
        (-0.4, f64::INFINITY),
        (-2.0, -0.5),
        (0.1, 2.5),
        (-1.5, 1.5),
    ];
    let base = |p: &mut Polytope| {
        let mut exact = 1.0;
        for (k, &(l, u)) in bounds.iter().enumerate() {
            p.push(row(k), Band::closed(l, u));
            exact *= ref_interval(l, u);
        }
        for (k, &(l, u)) in bounds.iter().enumerate().take(r) {
            p.push(
                row(k).iter().map(|v| 3.0 * v).collect(),
                Band::closed(3.0 * l, 3.0 * u),
            );
        }
        exact
    };
    // Deterministic rows: value 0 (mean 0) against closed and open ends.
    let cases: [(Band, bool); 6] = [
        (Band::closed(-1.0, 1.0), true),
        (Band::closed(0.0, 1.0), true),  // on a closed end: inside
        (Band::above(0.0), false),       // on an open end: outside
        (Band::below(0.0), false),       // on an open end: outside
        (Band::closed(0.5, 1.0), false), // outside
        (Band::closed(-3.0, 0.0), true), // on a closed end: inside
    ];
    for (band, inside) in cases {
        let mut p = Polytope::new();
        let exact = base(&mut p);
        for k in r..n {
            let b = if k == r {
                band
            } else {
                Band::closed(-1.0, 1.0)
            };
            p.push(row(k), b);
        }
        assert_eq!(p.len(), 18);
        p.push(vec![0.0; n], Band::closed(-1.0, 1.0)); // a zero row: deterministic, inside
        p.push(
            row(0).iter().map(|v| -v).collect(),
            Band::closed(-bounds[0].1, -bounds[0].0),
        );
        assert_eq!(p.len(), 20);
        let res = g.probability_detailed(&p, &tol(1e-9, 0.0)).unwrap();
        let expect = if inside { exact } else { 0.0 };
        assert_covers(
            &format!("{band:?}"),
            res.estimate.value,
            res.estimate.error,
            expect,
            1e-14,
        );
        if !inside {
            assert_eq!(res.estimate.value, 0.0);
            assert_eq!(res.method, IntegrationPath::Deterministic);
        }
    }
}

#[test]
fn combination_row_equals_reduced_problem() {
    // x3 = x1 + x2 exactly (singular covariance): the 3-D problem with rows x1, x2, x3
    // must equal the 2-D problem with rows x1, x2, x1 + x2 (the reduced problem), and a
    // zero-variance coordinate x4 = 0.5 entering a row only shifts its band.
    let b = [[1.0, 0.0], [0.6, 0.8], [1.6, 0.8], [0.0, 0.0]];
    let mut cov = vec![0.0; 16];
    for i in 0..4 {
        for j in 0..4 {
            cov[i * 4 + j] = b[i][0] * b[j][0] + b[i][1] * b[j][1];
        }
    }
    let g = gaussian(&[0.1, -0.2, -0.1, 0.5], &cov);
    assert_eq!(g.rank(), 2);
    let mut p = Polytope::new();
    p.push(vec![1.0, 0.0, 0.0, 0.0], Band::closed(-1.0, 1.5));
    p.push(vec![0.0, 1.0, 0.0, 0.0], Band::closed(-0.5, 2.0));
    p.push(
        vec![0.0, 0.0, 1.0, 1.0],
        Band::closed(-0.5 + 0.5, 1.0 + 0.5),
    );
    p.push(vec![0.0, 0.0, 0.0, 1.0], Band::closed(0.5, 0.5)); // deterministic, on both closed ends
    let full = g.probability_detailed(&p, &tol(1e-9, 0.0)).unwrap();
    let reduced_g = gaussian(&[0.1, -0.2], &[1.0, 0.6, 0.6, 1.0]);
    let mut q = Polytope::new();
    q.push(vec![1.0, 0.0], Band::closed(-1.0, 1.5));
    q.push(vec![0.0, 1.0], Band::closed(-0.5, 2.0));
    q.push(vec![1.0, 1.0], Band::closed(-0.5, 1.0));
    let reduced = reduced_g.probability_detailed(&q, &tol(1e-9, 0.0)).unwrap();
    assert_covers(
        "singular vs reduced",
        full.estimate.value,
        full.estimate.error + reduced.estimate.error,
        reduced.estimate.value,
        0.0,
    );
    // Independent check of the reduced problem by its complement structure: x1 + x2 has
    // variance 1 + 1 + 2 * 0.6 = 3.2 and the value lies below the tightest marginal.
    let marginal = ref_interval(
        (-0.5 - 0.1 + 0.2) / 3.2_f64.sqrt(),
        (1.0 - 0.1 + 0.2) / 3.2_f64.sqrt(),
    );
    assert!(full.estimate.value < marginal);
    assert!(full.estimate.value > 0.0);
}
