//! Pivoted Cholesky factor of a symmetric positive semi-definite matrix.
//!
//! `Sigma = L L^T` with `L` of size `n x r`, `r` the numerical rank. At every step the
//! largest remaining diagonal entry of the Schur complement is the pivot (complete
//! diagonal pivoting, Higham 2002, *Accuracy and Stability of Numerical Algorithms*,
//! sec. 10.3) among the coordinates still random: those whose remaining (conditional)
//! variance exceeds [`tolerance::CHOLESKY_PIVOT_REL`] times their own variance in `Sigma`,
//! so that coordinates of very different scales (sigmas of 1e-6 and 1e6) are all kept;
//! the factorisation stops when no coordinate is left. What is
//! left (the Schur complement) must then be zero up to rounding, otherwise the matrix is
//! not positive semi-definite.

use crate::prob::error::ProbError;
use crate::prob::tolerance;

/// A rank-revealing factor `L` (`n x rank`, row-major, rows in the original coordinate
/// order) with `Sigma = L L^T` up to rounding.
#[derive(Debug, Clone, PartialEq)]
pub struct Factor {
    /// Number of coordinates.
    pub n: usize,
    /// Numerical rank.
    pub rank: usize,
    /// Row-major `n x rank` entries.
    pub entries: Vec<f64>,
}

impl Factor {
    /// Entry `(i, k)` of the factor.
    pub fn get(&self, i: usize, k: usize) -> f64 {
        self.entries[i * self.rank + k]
    }

    /// Row `i` of the factor (length `rank`).
    pub fn row(&self, i: usize) -> &[f64] {
        &self.entries[i * self.rank..(i + 1) * self.rank]
    }
}

/// Factor a symmetric matrix given row-major (`n x n`, already checked finite and symmetric).
///
/// # Errors
/// [`ProbError::NotPositiveSemiDefinite`] naming the coordinate (or pair) where a negative
/// direction beyond rounding shows up.
pub fn pivoted(cov: &[f64], n: usize) -> Result<Factor, ProbError> {
    if cov.len() != n * n {
        return Err(ProbError::DimensionMismatch {
            what: "covariance entries".into(),
            expected: n * n,
            found: cov.len(),
        });
    }
    let max_diag = (0..n).map(|i| cov[i * n + i]).fold(0.0_f64, f64::max);
    let negative_tol = tolerance::PSD_NEGATIVE_REL * max_diag;
    for i in 0..n {
        if cov[i * n + i] < -negative_tol {
            return Err(ProbError::NotPositiveSemiDefinite {
                detail: format!(
                    "variance of coordinate {i} is negative ({:e}); a variance must be >= 0",
                    cov[i * n + i]
                ),
            });
        }
    }
    // Each coordinate is measured against its own variance, not the largest one: a channel
    // of sigma 1e-6 beside one of sigma 1e6 is still random (its pivot is compared with
    // its own 1e-12, not with 1e12).
    let own_tol: Vec<f64> = (0..n)
        .map(|i| tolerance::CHOLESKY_PIVOT_REL * cov[i * n + i].max(0.0))
        .collect();
    let mut schur = cov.to_vec();
    let mut done = vec![false; n];
    // Columns of L, each of length n (original order).
    let mut columns: Vec<Vec<f64>> = Vec::new();
    for _ in 0..n {
        let mut pivot = None;
        let mut best = f64::NEG_INFINITY;
        for (i, &d) in done.iter().enumerate() {
            let s = schur[i * n + i];
            if !d && s > own_tol[i] && s > 0.0 && s > best {
                best = s;
                pivot = Some(i);
            }
        }
        let Some(q) = pivot else { break };
        if best.is_nan() {
            break;
        }
        let root = best.sqrt();
        let mut col = vec![0.0; n];
        for i in 0..n {
            if !done[i] {
                col[i] = schur[i * n + q] / root;
            }
        }
        col[q] = root;
        done[q] = true;
        for i in 0..n {
            if done[i] {
                continue;
            }
            for j in 0..n {
                if !done[j] {
                    schur[i * n + j] -= col[i] * col[j];
                }
            }
        }
        columns.push(col);
    }
    // What remains must vanish up to rounding: |S_ij| <= sqrt(S_ii S_jj) for a PSD matrix.
    for i in 0..n {
        if done[i] {
            continue;
        }
        let sii = schur[i * n + i];
        if sii < -negative_tol {
            return Err(ProbError::NotPositiveSemiDefinite {
                detail: format!(
                    "coordinate {i} has a negative conditional variance ({sii:e}) given the \
                     others; check the correlations that involve coordinate {i}"
                ),
            });
        }
        for j in (i + 1)..n {
            if done[j] {
                continue;
            }
            let sij = schur[i * n + j].abs();
            let bound = (sii.max(0.0) * schur[j * n + j].max(0.0)).sqrt() + negative_tol;
            if sij > bound {
                return Err(ProbError::NotPositiveSemiDefinite {
                    detail: format!(
                        "coordinates {i} and {j} are more strongly correlated than their \
                         variances allow (conditional covariance {sij:e}); check the entry \
                         ({i}, {j})"
                    ),
                });
            }
        }
    }
    let rank = columns.len();
    let mut entries = vec![0.0; n * rank];
    for (k, col) in columns.iter().enumerate() {
        for i in 0..n {
            entries[i * rank + k] = col[i];
        }
    }
    Ok(Factor { n, rank, entries })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn reconstruct(f: &Factor) -> Vec<f64> {
        let n = f.n;
        let mut out = vec![0.0; n * n];
        for i in 0..n {
            for j in 0..n {
                out[i * n + j] = (0..f.rank).map(|k| f.get(i, k) * f.get(j, k)).sum();
            }
        }
        out
    }

    #[test]
    fn full_rank_reconstructs() {
        // Sigma = B B^T for an arbitrary B (definition of a Cholesky factor).
        let cov = [4.0, 2.0, 0.4, 2.0, 2.0, 0.5, 0.4, 0.5, 3.0];
        let f = pivoted(&cov, 3).unwrap();
        assert_eq!(f.rank, 3);
        for (a, b) in reconstruct(&f).iter().zip(cov.iter()) {
            assert!((a - b).abs() < 1e-14);
        }
    }

    #[test]
    fn singular_rank_and_zero_variance() {
        // x2 = x0 + x1 exactly, x3 constant: rank 2 (by construction).
        let b = [[1.0, 0.0], [0.3, 0.8], [1.3, 0.8], [0.0, 0.0]];
        let mut cov = vec![0.0; 16];
        for i in 0..4 {
            for j in 0..4 {
                cov[i * 4 + j] = b[i][0] * b[j][0] + b[i][1] * b[j][1];
            }
        }
        let f = pivoted(&cov, 4).unwrap();
        assert_eq!(f.rank, 2);
        for (a, b) in reconstruct(&f).iter().zip(cov.iter()) {
            assert!((a - b).abs() < 1e-14);
        }
    }

    #[test]
    fn coordinates_of_very_different_scales_are_all_random() {
        // Independent sigmas 1e-6 and 1e6 (variances 1e-12 and 1e12): rank 2, and the
        // small one keeps its variance (regression: it was dropped against the large one).
        let cov = [1e-12, 0.0, 0.0, 1e12];
        let f = pivoted(&cov, 2).unwrap();
        assert_eq!(f.rank, 2);
        let r = reconstruct(&f);
        assert!((r[0] - 1e-12).abs() < 1e-26 && (r[3] - 1e12).abs() < 1e-2);
    }

    #[test]
    fn indefinite_is_rejected() {
        // Correlation 2 between unit variances: eigenvalue -1 (by hand).
        let cov = [1.0, 2.0, 2.0, 1.0];
        assert!(matches!(
            pivoted(&cov, 2),
            Err(ProbError::NotPositiveSemiDefinite { .. })
        ));
        // Zero variances but non-zero covariance.
        let cov = [0.0, 1.0, 1.0, 0.0];
        assert!(pivoted(&cov, 2).is_err());
        let cov = [-1.0];
        assert!(pivoted(&cov, 1).is_err());
    }
}
