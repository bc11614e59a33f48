//! Steps 2 and 3: rows through the covariance factor, deterministic rows out, random rows
//! normalised and parallel ones merged.

use crate::prob::normal;
use crate::prob::tolerance;

use super::{Gaussian, Polytope};

impl Gaussian {
    /// Steps 2 and 3 of the method: deterministic rows out, random rows normalised and
    /// merged.
    pub(super) fn reduce(&self, polytope: &Polytope) -> Reduced {
        let r = self.rank();
        let mut rows: Vec<UnitRow> = Vec::new();
        for (a, band) in polytope.rows.iter().zip(polytope.bands.iter()) {
            let mut b: Direction = smallvec::smallvec![0.0; r];
            let mut shift = 0.0;
            let mut shift_abs = 0.0;
            // sum of |a_i| sd_i: the size of the random terms before they cancel
            let mut terms = 0.0;
            for (i, &ai) in a.iter().enumerate() {
                if ai == 0.0 {
                    continue;
                }
                shift += ai * self.mean[i];
                shift_abs += (ai * self.mean[i]).abs();
                let row = self.factor.row(i);
                terms += ai.abs() * row.iter().map(|v| v * v).sum::<f64>().sqrt();
                for (bk, &lk) in b.iter_mut().zip(row.iter()) {
                    *bk += ai * lk;
                }
            }
            let b_norm = b.iter().map(|v| v * v).sum::<f64>().sqrt();
            if b_norm <= tolerance::DEGENERATE_ROW_REL * terms || b_norm == 0.0 {
                if band.contains(shift) {
                    continue;
                }
                return Reduced::Zero;
            }
            if band.lower == f64::NEG_INFINITY && band.upper == f64::INFINITY {
                continue;
            }
            let lower = (band.lower - shift) / b_norm;
            let upper = (band.upper - shift) / b_norm;
            let finite_end = |v: f64| if v.is_finite() { v.abs() } else { 0.0 };
            let slack = tolerance::ROUNDING_REL
                * ((finite_end(band.lower).max(finite_end(band.upper)) + shift_abs) / b_norm
                    + finite_end(lower).max(finite_end(upper)));
            for v in b.iter_mut() {
                *v /= b_norm;
            }
            // Each entry of `b` rounds by at most ROUNDING_REL of the sizes that entered
            // it, so `|error of b| <= ROUNDING_REL * terms` (triangle inequality), twice
            // that over `b_norm` after normalising.
            let dir_error = tolerance::ROUNDING_REL * (2.0 * terms / b_norm + 1.0);
            let new = UnitRow {
                dir: b,
                lower,
                upper,
                slack,
                tilt: 0.0,
                dir_error,
            };
            rows_merge(&mut rows, new);
        }
        Reduced::Rows(rows)
    }
}

/// Add a unit row, intersecting it with a parallel or antiparallel row already present
/// (the small difference of the two directions is kept as the merged row's tilt).
pub(super) fn rows_merge(rows: &mut Vec<UnitRow>, new: UnitRow) {
    for row in rows.iter_mut() {
        let gap = |sign: f64| -> f64 {
            row.dir
                .iter()
                .zip(new.dir.iter())
                .map(|(a, b)| (a - sign * b) * (a - sign * b))
                .sum::<f64>()
                .sqrt()
        };
        let (same_gap, opposite_gap) = (gap(1.0), gap(-1.0));
        let same = same_gap <= tolerance::PARALLEL_ROW_ABS;
        let opposite = opposite_gap <= tolerance::PARALLEL_ROW_ABS;
        if same || opposite {
            let turn = if same { same_gap } else { opposite_gap };
            row.tilt = row.tilt.max(new.tilt + normal::MEAN_ABS * turn);
            let (lower, upper) = if same {
                (new.lower, new.upper)
            } else {
                (-new.upper, -new.lower)
            };
            row.lower = row.lower.max(lower);
            row.upper = row.upper.min(upper);
            row.slack = row.slack.max(new.slack);
            row.dir_error = row.dir_error.max(new.dir_error) + turn;
            return;
        }
    }
    rows.push(new);
}

pub(super) enum Reduced {
    /// A deterministic row fails: the probability is exactly 0.
    Zero,
    /// The random rows left (possibly none).
    Rows(Vec<UnitRow>),
}

/// The entries of a unit direction: inline up to four (the ranks of most analyses), so that
/// reducing a polytope does not allocate per row.
pub(super) type Direction = smallvec::SmallVec<[f64; 4]>;

/// A random constraint `lower <= dir . z <= upper` with `|dir| = 1`.
#[derive(Debug, Clone)]
pub(super) struct UnitRow {
    pub(super) dir: Direction,
    pub(super) lower: f64,
    pub(super) upper: f64,
    /// Bound on the rounding error of `lower` and `upper`.
    pub(super) slack: f64,
    /// Mean size `E|d . z|` of a direction `d` dropped from the row (a nearly parallel row
    /// merged into it, or a residual left out of the sequential conditioning): its ends
    /// then move at random by that much (see [`UnitRow::tilt_error`]).
    pub(super) tilt: f64,
    /// Bound on the Euclidean distance of `dir` from the exact direction (rounding, and a
    /// merged row's dropped direction): within `|z| <= R` the row's value is off by at
    /// most `dir_error * R`.
    pub(super) dir_error: f64,
}

impl UnitRow {
    /// Moving an end `h` by `slack` moves the probability by at most the density of the
    /// unit row at `h` times `slack`; for a small probability `value` the first-order change
    /// is taken as `value * (|h| + 1) * slack` instead (the hazard rate of a half-space,
    /// `phi(h) / P(Z > h) < |h| + 1`), so that tail probabilities keep a relative bound.
    pub(super) fn rounding_error(&self, value: f64) -> f64 {
        let end = |h: f64| {
            if h.is_finite() {
                normal::pdf(h).min(value * (h.abs() + 1.0))
            } else {
                0.0
            }
        };
        self.slack * (end(self.lower) + end(self.upper))
    }

    /// What the dropped direction can change: the probability that the row's value and
    /// its tilted value lie on two sides of an end `h` is at most the density there times
    /// the mean shift, `tilt * phi(h)` per finite end. Absolute, not relative: a slab
    /// thinner than the tilt can lose all of its probability.
    pub(super) fn tilt_error(&self) -> f64 {
        if self.tilt == 0.0 {
            return 0.0;
        }
        let end = |h: f64| if h.is_finite() { normal::pdf(h) } else { 0.0 };
        self.tilt * (end(self.lower) + end(self.upper))
    }
}
