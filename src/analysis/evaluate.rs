//! Exact evaluation of the four outcome probabilities for one gaussian scenario.
//!
//! Each outcome is split, cell by cell, into disjoint polytopes: the output is below,
//! inside or above its safety band, and each check below, inside or above its pass band.
//! The residual `p_vu` is a sum of polytopes of its own (output outside, every check
//! quiet): it is integrated directly, never obtained as a difference of large numbers.

use rayon::prelude::*;

use crate::model::{Detection, Guard, LinearForm};
use crate::prob::polytope::{Band, ErrorTarget, Gaussian, Polytope};
use crate::prob::{Estimate, tolerance};

use super::cells::{Cell, CellSet};
use super::error::AnalysisError;
use super::outcome::{Figure, Outcome};

/// Where a linear value lies relative to its band.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Side {
    /// Strictly below the lower end.
    Below,
    /// Inside the closed band.
    Inside,
    /// Strictly above the upper end.
    Above,
    /// Not constrained.
    Free,
}

/// One disjoint piece of an outcome: the side of the output and of every check.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Pattern {
    /// Side of the output relative to the safety band.
    pub output: Side,
    /// Side of each check relative to its pass band.
    pub checks: Vec<Side>,
}

/// Every state of `k` checks, each below, inside or above its band: the `3^k` assignments
/// in a fixed order (check 0 varying fastest).
pub fn check_states(k: usize) -> impl Iterator<Item = Vec<Side>> {
    (0..3usize.saturating_pow(k as u32)).map(move |code| {
        let mut rest = code;
        (0..k)
            .map(|_| {
                let side = [Side::Inside, Side::Below, Side::Above][rest % 3];
                rest /= 3;
                side
            })
            .collect()
    })
}

/// The disjoint patterns whose union is `figure`, for `k` checks combined by `detection`.
pub fn patterns(figure: Figure, k: usize, detection: &Detection) -> Vec<Pattern> {
    let outputs: &[Side] = if figure.violated() {
        &[Side::Below, Side::Above]
    } else {
        &[Side::Inside]
    };
    let mut check_patterns: Vec<Vec<Side>> = Vec::new();
    match detection {
        Detection::Any => {
            if figure.detected() {
                // "some check fires" as a disjoint union: check j fires, checks before j pass.
                for j in 0..k {
                    for fired in [Side::Below, Side::Above] {
                        let mut sides = vec![Side::Free; k];
                        sides.iter_mut().take(j).for_each(|s| *s = Side::Inside);
                        sides[j] = fired;
                        check_patterns.push(sides);
                    }
                }
            } else {
                check_patterns.push(vec![Side::Inside; k]);
            }
        }
        Detection::AtLeast(needed) => {
            // Every assignment of below / inside / above, kept when its count of firing checks
            // agrees with the figure: 3^k disjoint patterns at most.
            for sides in check_states(k) {
                let fired = sides.iter().filter(|s| **s != Side::Inside).count();
                if (fired >= *needed) == figure.detected() {
                    check_patterns.push(sides);
                }
            }
        }
    }
    let mut out = Vec::with_capacity(outputs.len() * check_patterns.len());
    for &output in outputs {
        for checks in &check_patterns {
            out.push(Pattern {
                output,
                checks: checks.clone(),
            });
        }
    }
    out
}

/// The band a linear form must lie in for a side of `[lower, upper]`, shifted by the form's
/// constant so that it applies to `coeffs . x`. `None` when the side is empty (e.g. below
/// a lower end of minus infinity) or unconstrained.
fn band_for(side: Side, form: &LinearForm, lower: f64, upper: f64) -> Option<Option<Band>> {
    let c = form.constant;
    match side {
        Side::Free => Some(None),
        Side::Inside => Some(Some(Band::closed(lower - c, upper - c))),
        Side::Below => (lower > f64::NEG_INFINITY).then(|| Some(Band::below(lower - c))),
        Side::Above => (upper < f64::INFINITY).then(|| Some(Band::above(upper - c))),
    }
}

fn guard_band(guard: &Guard) -> Band {
    Band {
        lower: -guard.form.constant,
        upper: f64::INFINITY,
        lower_open: guard.strict,
        upper_open: true,
    }
}

/// The polytope of one pattern inside one cell; `None` when it is empty by construction.
pub fn polytope(cells: &CellSet, cell: &Cell, pattern: &Pattern) -> Option<Polytope> {
    let mut poly = Polytope::new();
    for guard in &cell.guards {
        poly.push(guard.form.coeffs.clone(), guard_band(guard));
    }
    let (lo, hi) = cells.safety;
    if let Some(band) = band_for(pattern.output, &cell.output, lo, hi)? {
        poly.push(cell.output.coeffs.clone(), band);
    }
    for ((form, side), (lo, hi)) in cell
        .checks
        .iter()
        .zip(&pattern.checks)
        .zip(&cells.check_bands)
    {
        if let Some(band) = band_for(*side, form, *lo, *hi)? {
            poly.push(form.coeffs.clone(), band);
        }
    }
    Some(poly)
}

/// Precomputed polytopes of every figure for a cell set: built once per architecture and
/// evaluated for many gaussian scenarios (amplitudes, sigmas).
#[derive(Debug, Clone)]
pub struct Evaluator {
    polytopes: [Vec<Polytope>; 4],
    tolerance: ErrorTarget,
}

impl Evaluator {
    /// Builds the polytopes of all four figures.
    ///
    /// # Errors
    /// [`AnalysisError::TooLarge`] when one figure needs more than `max_polytopes`.
    pub fn new(
        cells: &CellSet,
        tolerance: ErrorTarget,
        max_polytopes: usize,
    ) -> Result<Self, AnalysisError> {
        let k = cells.check_bands.len();
        let mut polytopes: [Vec<Polytope>; 4] = Default::default();
        for (slot, figure) in polytopes.iter_mut().zip(Figure::ALL) {
            let pats = patterns(figure, k, &cells.detection);
            let found = pats.len().saturating_mul(cells.cells.len());
            if found > max_polytopes {
                return Err(AnalysisError::TooLarge {
                    what: format!("the outcome {}", figure.key()),
                    unit: "polytopes",
                    limit: max_polytopes,
                    found,
                });
            }
            for cell in &cells.cells {
                for pattern in &pats {
                    if let Some(p) = polytope(cells, cell, pattern) {
                        slot.push(p);
                    }
                }
            }
        }
        Ok(Self {
            polytopes,
            tolerance,
        })
    }

    /// The polytopes whose disjoint union is `figure`.
    pub fn polytopes(&self, figure: Figure) -> &[Polytope] {
        let index = Figure::ALL.iter().position(|f| *f == figure).unwrap_or(0);
        &self.polytopes[index]
    }

    /// `P(x in polytope)` at the evaluator's tolerance.
    ///
    /// # Errors
    /// Engine failures, with the figure named.
    pub fn polytope_probability(
        &self,
        gaussian: &Gaussian,
        polytope: &Polytope,
        figure: Figure,
    ) -> Result<Estimate, AnalysisError> {
        probability_at(gaussian, polytope, figure, &self.tolerance)
    }

    /// `P(figure)` for `x ~ gaussian`, with the summed error bound of its polytopes.
    ///
    /// # Errors
    /// Engine failures, with the figure named.
    pub fn figure(&self, gaussian: &Gaussian, figure: Figure) -> Result<Estimate, AnalysisError> {
        self.figure_with(gaussian, figure, &self.tolerance)
    }

    /// [`Evaluator::figure`] at another tolerance (e.g. the looser one of a scan).
    ///
    /// # Errors
    /// Engine failures, with the figure named.
    pub fn figure_with(
        &self,
        gaussian: &Gaussian,
        figure: Figure,
        tolerance: &ErrorTarget,
    ) -> Result<Estimate, AnalysisError> {
        // The polytopes are independent: computed in parallel, summed in their fixed order,
        // so the total has the same bits whatever the thread count. Of a gaussian of rank two
        // or less every polytope takes a path of microseconds (the exact paths are on, and
        // the conditioning has at most `rank` variables: a normal interval, a bivariate
        // rectangle or the polygon of a normal pair, each with its bound): handing them to
        // other threads would cost more than it saves (inside an integral over constant
        // terms the wake-ups of idle threads once took more time than the figures), so they
        // run here.
        let polytopes = self.polytopes(figure);
        let one = |poly: &Polytope| probability_at(gaussian, poly, figure, tolerance);
        let parts: Vec<Result<Estimate, AnalysisError>> = if gaussian.rank() <= SERIAL_MAX_RANK {
            polytopes.iter().map(one).collect()
        } else {
            polytopes.par_iter().map(one).collect()
        };
        let mut total = Estimate::zero();
        for part in parts {
            total = total.add(part?);
        }
        Ok(total.clamp_probability())
    }

    /// All four figures for `x ~ gaussian`.
    ///
    /// # Errors
    /// Engine failures, with the figure named.
    pub fn outcome(&self, gaussian: &Gaussian) -> Result<Outcome, AnalysisError> {
        let p_vd = self.figure(gaussian, Figure::ViolatedDetected)?;
        let p_vu = self.figure(gaussian, Figure::ViolatedUndetected)?;
        let p_sd = self.figure(gaussian, Figure::SafeDetected)?;
        let p_sq = match quiet_by_complement(p_vd.add(p_vu).add(p_sd)) {
            Some(q) => q,
            None => self.figure(gaussian, Figure::SafeQuiet)?,
        };
        Ok(Outcome {
            p_vd,
            p_vu,
            p_sd,
            p_sq,
        })
    }
}

/// Largest rank of a gaussian whose polytopes [`Evaluator::figure_with`] computes on the
/// calling thread: up to two random directions every polytope takes a cheap deterministic
/// path (a normal interval, a bivariate rectangle or the polygon of a normal pair).
const SERIAL_MAX_RANK: usize = 2;

/// One polytope of `figure` at `tolerance`, best effort (the bound says how well it went).
fn probability_at(
    gaussian: &Gaussian,
    polytope: &Polytope,
    figure: Figure,
    tolerance: &ErrorTarget,
) -> Result<Estimate, AnalysisError> {
    gaussian
        .probability_best_effort(polytope, tolerance)
        .map(|p| p.estimate)
        .map_err(|e| AnalysisError::engine(format!("outcome {}", figure.key()), e))
}

/// `p_sq = 1 - (p_vd + p_vu + p_sd)` when the other three are small (sum below one half):
/// the four outcomes partition the space, and the complement of a small sum is far more
/// accurate (absolute error: the sum of their bounds) than integrating the large quiet
/// region directly. `None` when the sum is not small, so that a small `p_sq` is integrated
/// directly and keeps its relative accuracy.
pub fn quiet_by_complement(others: Estimate) -> Option<Estimate> {
    (others.value < 0.5).then(|| {
        let value = 1.0 - others.value;
        Estimate::new(value, others.error + tolerance::ROUNDING_REL)
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn patterns_of_any_detection_partition_the_check_states() {
        // Counting argument (common practice): with k checks of three states each, the
        // "all inside" pattern plus the disjoint "first firing check is j" patterns cover
        // every one of the 3^k states exactly once.
        for k in 0..5 {
            let quiet = patterns(Figure::SafeQuiet, k, &Detection::Any);
            let alarm = patterns(Figure::SafeDetected, k, &Detection::Any);
            let mut covered = 0usize;
            for state in check_states(k) {
                let hits = quiet
                    .iter()
                    .chain(&alarm)
                    .filter(|p| {
                        p.checks
                            .iter()
                            .zip(&state)
                            .all(|(a, b)| *a == Side::Free || a == b)
                    })
                    .count();
                assert_eq!(hits, 1, "state {state:?} covered {hits} times");
                covered += 1;
            }
            assert_eq!(covered, 3usize.pow(k as u32));
        }
    }

    #[test]
    fn at_least_two_of_three_counts_firings() {
        // 2oo3 detection: patterns with two or three firing checks: 3*4 + 8 = 20 (counting).
        let det = patterns(Figure::SafeDetected, 3, &Detection::AtLeast(2));
        assert_eq!(det.len(), 20);
        let quiet = patterns(Figure::SafeQuiet, 3, &Detection::AtLeast(2));
        assert_eq!(quiet.len(), 27 - 20);
    }
}
