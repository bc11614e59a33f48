//! Positive semi-definiteness of the own-noise correlation matrix, with the smallest
//! inconsistent block named so that the user knows which correlations to change.
//!
//! A symmetric matrix is positive semi-definite exactly when its smallest eigenvalue is
//! non-negative (any linear algebra text, e.g. Horn and Johnson, Matrix Analysis, Thm 7.2.1,
//! from memory). Every 2x2 block of a correlation matrix with |rho| <= 1 is PSD, so the
//! search for the offending block starts at size 3.

use nalgebra::DMatrix;

use crate::prob::tolerance::CORRELATION_PSD_ABS;

/// Smallest eigenvalue of a symmetric matrix, `None` if the iteration did not converge.
pub(crate) fn min_eigenvalue(m: &DMatrix<f64>) -> Option<f64> {
    if m.nrows() == 0 {
        return Some(0.0);
    }
    let eig = m.clone().try_symmetric_eigen(f64::EPSILON, 10_000)?;
    eig.eigenvalues.iter().copied().reduce(f64::min)
}

/// The outcome of the test.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum PsdVerdict {
    Ok,
    /// The smallest block (channel indices, ascending) that is not PSD, with its smallest
    /// eigenvalue.
    Block(Vec<usize>, f64),
    /// The eigenvalue iteration failed (not expected for finite input).
    Undecided,
}

/// Tests `r` (a correlation matrix with unit diagonal) and finds the smallest offending block.
pub(crate) fn check(r: &DMatrix<f64>) -> PsdVerdict {
    let n = r.nrows();
    let Some(min) = min_eigenvalue(r) else {
        return PsdVerdict::Undecided;
    };
    if min >= -CORRELATION_PSD_ABS {
        return PsdVerdict::Ok;
    }
    for size in 3..n {
        for subset in subsets(n, size) {
            let block = DMatrix::from_fn(size, size, |i, j| r[(subset[i], subset[j])]);
            match min_eigenvalue(&block) {
                Some(m) if m < -CORRELATION_PSD_ABS => return PsdVerdict::Block(subset, m),
                Some(_) => {}
                None => return PsdVerdict::Undecided,
            }
        }
    }
    PsdVerdict::Block((0..n).collect(), min)
}

/// All `size`-subsets of `0..n` in lexicographic order.
fn subsets(n: usize, size: usize) -> Vec<Vec<usize>> {
    let mut out = Vec::new();
    let mut cur: Vec<usize> = (0..size).collect();
    if size == 0 || size > n {
        return out;
    }
    loop {
        out.push(cur.clone());
        // advance to the next combination
        let mut i = size;
        loop {
            if i == 0 {
                return out;
            }
            i -= 1;
            if cur[i] < n - size + i {
                cur[i] += 1;
                for j in i + 1..size {
                    cur[j] = cur[j - 1] + 1;
                }
                break;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn subsets_count_is_binomial() {
        // C(6, 3) = 20
        assert_eq!(subsets(6, 3).len(), 20);
        assert_eq!(subsets(4, 4), vec![vec![0, 1, 2, 3]]);
    }

    #[test]
    fn inconsistent_triple_is_found() {
        // rho(a,b) = rho(b,c) = 0.9 forces rho(a,c) >= 0.62 (1 - 2 * 0.19, from the 3x3
        // determinant); -0.9 is impossible.
        let mut r = DMatrix::identity(4, 4);
        for (i, j, v) in [(0, 1, 0.9), (1, 2, 0.9), (0, 2, -0.9)] {
            r[(i, j)] = v;
            r[(j, i)] = v;
        }
        match check(&r) {
            PsdVerdict::Block(b, m) => {
                assert_eq!(b, vec![0, 1, 2]);
                assert!(m < 0.0);
            }
            other => panic!("expected a block, got {other:?}"),
        }
    }
}
