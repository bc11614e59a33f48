//! Helpers shared by the polytope tests (tests/prob_polytope*.rs, one file per step of
//! src/prob/polytope/): references from outside the engine (libm's erfc, Sheppard 1899),
//! problem builders and the assertion that a bound covers its reference.

// Each test file is its own crate and uses only some of these.
#![allow(dead_code)]

use std::f64::consts::PI;

use concord::prob::polytope::{Band, ErrorTarget, Gaussian, Polytope};
use nalgebra::DMatrix;

/// `P(a < Z < b)` for a standard normal, from libm's erfc (an implementation outside the
/// project), using the tail that does not cancel.
pub fn ref_interval(a: f64, b: f64) -> f64 {
    let upper = |x: f64| 0.5 * libm::erfc(x / std::f64::consts::SQRT_2);
    if a >= 0.0 {
        upper(a) - upper(b)
    } else if b <= 0.0 {
        upper(-b) - upper(-a)
    } else {
        1.0 - upper(-a) - upper(b)
    }
}

pub fn gaussian(mean: &[f64], cov: &[f64]) -> Gaussian {
    let n = mean.len();
    Gaussian::new(mean, &DMatrix::from_row_slice(n, n, cov)).unwrap()
}

/// `n` standard normals of mean 0 with every correlation `rho`.
pub fn equicorrelated(n: usize, rho: f64) -> Gaussian {
    let cov: Vec<f64> = (0..n * n)
        .map(|k| if k / n == k % n { 1.0 } else { rho })
        .collect();
    gaussian(&vec![0.0; n], &cov)
}

pub fn unit(n: usize, i: usize) -> Vec<f64> {
    let mut v = vec![0.0; n];
    v[i] = 1.0;
    v
}

pub fn tol(abs: f64, rel: f64) -> ErrorTarget {
    ErrorTarget {
        abs,
        rel,
        max_points: 4_000_000,
    }
}

/// `|value - reference| <= error + ref_tol`, with a message.
pub fn assert_covers(what: &str, value: f64, error: f64, reference: f64, ref_tol: f64) {
    let diff = (value - reference).abs();
    assert!(
        diff <= error + ref_tol,
        "{what}: value {value:e}, reference {reference:e}, |diff| {diff:e} > error {error:e} + {ref_tol:e}"
    );
}

/// Sheppard (1899): P(X > 0, Y > 0) = 1/4 + asin(rho) / (2 pi) for a standard bivariate
/// normal with correlation rho.
pub fn sheppard(rho: f64) -> f64 {
    0.25 + rho.asin() / (2.0 * PI)
}

pub fn rho_grid() -> Vec<f64> {
    (0..=20).map(|k| -1.0 + 0.1 * k as f64).collect()
}

/// Rows `z_i - z_j > 0` for all `i < j`: the ordering `z_1 > z_2 > ... > z_r`.
pub fn ordering_rows(r: usize, p: &mut Polytope) {
    for i in 0..r {
        for j in (i + 1)..r {
            let mut row = vec![0.0; r];
            row[i] = 1.0;
            row[j] = -1.0;
            p.push(row, Band::above(0.0));
        }
    }
}
