//! One-dimensional minimisation: Brent's bounded method and a scan that keeps every local
//! minimum.
//!
//! The worst case over an unknown fault spread is a maximum of a residual probability over
//! `log sigma`; callers minimise its negative. The curve can have several local extrema, so
//! [`scan_then_refine`] first samples it on a grid (usually [`log_grid`]), then refines each
//! local minimum of the samples by [`brent_minimise`] between its grid neighbours.
//!
//! Brent's method: Brent (1973), *Algorithms for Minimization without Derivatives*, ch. 5:
//! golden-section steps, replaced by parabolic interpolation through the three best points
//! whenever the parabola's minimum lies well inside the bracket and the step is shrinking.
//! For a unimodal function the minimiser lies in the final bracket, within
//! `x_tol_rel * |x|` (plus a small absolute floor) of the returned `x`.

use crate::prob::ProbError;
use crate::prob::tolerance::{BRENT_X_ABS_FRACTION, BRENT_X_REL_FLOOR};

/// `(3 - sqrt 5) / 2`, the golden-section fraction.
const GOLDEN: f64 = 0.381_966_011_250_105_1;

/// A minimum found by [`brent_minimise`] or [`scan_then_refine`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Minimum {
    /// The abscissa of the minimum.
    pub x: f64,
    /// The function value there.
    pub value: f64,
    /// Function evaluations spent (for [`scan_then_refine`]: by the refinement only).
    pub evaluations: usize,
    /// The minimum is at (within tolerance of) an end of the searched range: the true
    /// minimum may lie outside it.
    pub at_boundary: bool,
}

/// A minimum with the final bracket that contains the minimiser of a unimodal function.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bracketed {
    /// The minimum.
    pub minimum: Minimum,
    /// Lower end of the final bracket.
    pub lower: f64,
    /// Upper end of the final bracket.
    pub upper: f64,
}

/// The outcome of [`scan_then_refine`].
#[derive(Debug, Clone, PartialEq)]
pub struct Scan {
    /// The grid as given.
    pub grid: Vec<f64>,
    /// The function on the grid.
    pub values: Vec<f64>,
    /// Every local minimum of the samples, refined, sorted by value ascending (ties by x).
    pub minima: Vec<Minimum>,
}

/// Tolerance on the abscissa: the minimiser must end within `rel * |x| + abs` of `x`.
#[derive(Debug, Clone, Copy)]
struct XTol {
    rel: f64,
    abs: f64,
}

impl XTol {
    /// Brent's `tol1`: the loop stops when both ends of the bracket are within `2 tol1` of
    /// the best point, so `tol1` is half the requested distance.
    fn at(self, x: f64) -> f64 {
        0.5 * (self.rel * x.abs() + self.abs)
    }
}

/// What the core loop returns.
struct CoreResult {
    x: f64,
    value: f64,
    lower: f64,
    upper: f64,
    evaluations: usize,
    near_lower: bool,
    near_upper: bool,
}

fn finite_value(what: &str, x: f64, v: f64) -> Result<f64, ProbError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(ProbError::NonFinite {
            what: format!("{what} at x = {x}"),
            value: v,
        })
    }
}

fn check_rel_tol(x_tol_rel: f64) -> Result<f64, ProbError> {
    if !(x_tol_rel.is_finite() && x_tol_rel > 0.0) {
        return Err(ProbError::InvalidArgument(format!(
            "x_tol_rel must be a finite number > 0, got {x_tol_rel}"
        )));
    }
    Ok(x_tol_rel.max(BRENT_X_REL_FLOOR))
}

/// Brent's loop on `[lo, hi]` (finite, `lo < hi`) in the variable `u`; `f` takes `u`.
/// `probe_ends`: when the minimum converges onto an end, evaluate `f` at that end too.
fn brent_core<F>(
    f: &mut F,
    lo: f64,
    hi: f64,
    tol: XTol,
    max_evaluations: usize,
    probe_ends: bool,
) -> Result<CoreResult, ProbError>
where
    F: FnMut(f64) -> Result<f64, ProbError>,
{
    let (start_lo, start_hi) = (lo, hi);
    let (mut lo, mut hi) = (lo, hi);
    let mut evaluations = 0_usize;
    let mut eval = |u: f64, evaluations: &mut usize| -> Result<f64, ProbError> {
        *evaluations += 1;
        let v = f(u)?;
        finite_value("the function to minimise", u, v)
    };
    // best: lowest value so far; second: next lowest; third: the previous `second`.
    let mut best = lo + GOLDEN * (hi - lo);
    let mut f_best = eval(best, &mut evaluations)?;
    let (mut second, mut f_second) = (best, f_best);
    let (mut third, mut f_third) = (best, f_best);
    // step: the step just taken; prev_step: the one before it (parabolic steps must shrink).
    let mut step = 0.0_f64;
    let mut prev_step = 0.0_f64;
    loop {
        let mid = 0.5 * (lo + hi);
        let t1 = tol.at(best);
        let t2 = 2.0 * t1;
        if (best - mid).abs() <= t2 - 0.5 * (hi - lo) {
            break;
        }
        if evaluations >= max_evaluations {
            return Err(ProbError::BudgetExhausted {
                achieved: 0.5 * (hi - lo),
                requested: t2,
                points: evaluations,
            });
        }
        let mut parabolic = false;
        if prev_step.abs() > t1 {
            // Parabola through (best, second, third); its vertex is best + num / den.
            let r = (best - second) * (f_best - f_third);
            let q = (best - third) * (f_best - f_second);
            let mut num = (best - third) * q - (best - second) * r;
            let mut den = 2.0 * (q - r);
            if den > 0.0 {
                num = -num;
            } else {
                den = -den;
            }
            let older = prev_step;
            prev_step = step;
            // Accept when the vertex is inside the bracket and the step is less than half
            // the step before last (which guarantees progress).
            if num.abs() < (0.5 * den * older).abs()
                && num > den * (lo - best)
                && num < den * (hi - best)
            {
                step = num / den;
                let u = best + step;
                if u - lo < t2 || hi - u < t2 {
                    step = if mid >= best { t1 } else { -t1 };
                }
                parabolic = true;
            }
        }
        if !parabolic {
            prev_step = if best >= mid { lo - best } else { hi - best };
            step = GOLDEN * prev_step;
        }
        let u = if step.abs() >= t1 {
            best + step
        } else if step > 0.0 {
            best + t1
        } else {
            best - t1
        };
        let f_u = eval(u, &mut evaluations)?;
        if f_u <= f_best {
            if u >= best {
                lo = best;
            } else {
                hi = best;
            }
            (third, f_third) = (second, f_second);
            (second, f_second) = (best, f_best);
            (best, f_best) = (u, f_u);
        } else {
            if u < best {
                lo = u;
            } else {
                hi = u;
            }
            if f_u <= f_second || second == best {
                (third, f_third) = (second, f_second);
                (second, f_second) = (u, f_u);
            } else if f_u <= f_third || third == best || third == second {
                (third, f_third) = (u, f_u);
            }
        }
    }
    let reach = 2.0 * tol.at(best);
    let near_lower = lo == start_lo && best - start_lo <= reach;
    let near_upper = hi == start_hi && start_hi - best <= reach;
    if probe_ends && (near_lower || near_upper) && evaluations < max_evaluations {
        let end = if near_lower { start_lo } else { start_hi };
        let f_end = eval(end, &mut evaluations)?;
        if f_end <= f_best {
            best = end;
            f_best = f_end;
        }
    }
    Ok(CoreResult {
        x: best,
        value: f_best,
        lower: lo,
        upper: hi,
        evaluations,
        near_lower,
        near_upper,
    })
}

/// Brent's bounded minimisation of `f` on `[a, b]` (the ends may be given in either order),
/// with the final bracket.
///
/// See [`brent_minimise`]; additionally returns the final bracket `[lower, upper]`, which
/// contains the minimiser when `f` is unimodal on `[a, b]`.
pub fn brent_bracket<F>(
    mut f: F,
    a: f64,
    b: f64,
    x_tol_rel: f64,
    max_evaluations: usize,
) -> Result<Bracketed, ProbError>
where
    F: FnMut(f64) -> Result<f64, ProbError>,
{
    let rel = check_rel_tol(x_tol_rel)?;
    for (what, v) in [
        ("the lower end of the range", a),
        ("the upper end of the range", b),
    ] {
        if !v.is_finite() {
            return Err(ProbError::NonFinite {
                what: what.to_string(),
                value: v,
            });
        }
    }
    if max_evaluations == 0 {
        return Err(ProbError::InvalidArgument(
            "max_evaluations must be at least 1".to_string(),
        ));
    }
    let (lo, hi) = if a <= b { (a, b) } else { (b, a) };
    if lo == hi {
        let value = finite_value("the function to minimise", lo, f(lo)?)?;
        return Ok(Bracketed {
            minimum: Minimum {
                x: lo,
                value,
                evaluations: 1,
                at_boundary: true,
            },
            lower: lo,
            upper: hi,
        });
    }
    let tol = XTol {
        rel,
        abs: rel * BRENT_X_ABS_FRACTION * (hi - lo),
    };
    let r = brent_core(&mut f, lo, hi, tol, max_evaluations, true)?;
    Ok(Bracketed {
        minimum: Minimum {
            x: r.x,
            value: r.value,
            evaluations: r.evaluations,
            at_boundary: r.near_lower || r.near_upper,
        },
        lower: r.lower,
        upper: r.upper,
    })
}

/// Brent's (1973, ch. 5) bounded minimisation of `f` on `[a, b]`.
///
/// Golden section and parabolic interpolation; stops when both ends of the bracket around the
/// best point `x` are within `x_tol_rel * |x| + 1e-6 * x_tol_rel * (b - a)` of it, so that the
/// minimiser of a unimodal `f` is that close to `x` (`x_tol_rel` below [`BRENT_X_REL_FLOOR`]
/// is raised to it). Rounding limits this for smooth `f`: near the minimum `f` is flat, and
/// `x` is determined only to about `sqrt(eps)` relative (Brent 1973, ch. 5). When the
/// minimum converges onto an end of the range, `f` is evaluated at that end as well (budget
/// permitting) and `at_boundary` is set. Fails with
/// [`ProbError::BudgetExhausted`] after `max_evaluations` evaluations without convergence,
/// with [`ProbError::NonFinite`] on a non-finite value of `f`, and with `f`'s own errors.
pub fn brent_minimise<F>(
    f: F,
    a: f64,
    b: f64,
    x_tol_rel: f64,
    max_evaluations: usize,
) -> Result<Minimum, ProbError>
where
    F: FnMut(f64) -> Result<f64, ProbError>,
{
    Ok(brent_bracket(f, a, b, x_tol_rel, max_evaluations)?.minimum)
}

/// Whether `a` is strictly greater than `b`, treating NaN as larger than any number.
fn greater(a: f64, b: f64) -> bool {
    match (a.is_nan(), b.is_nan()) {
        (true, true) | (false, true) => false,
        (true, false) => true,
        (false, false) => a > b,
    }
}

/// Runs of equal values `[start, end]` that are local minima of a sampled curve.
fn minimum_runs(values: &[f64]) -> Vec<(usize, usize)> {
    let n = values.len();
    let mut runs = Vec::new();
    let mut start = 0;
    while start < n {
        let mut end = start;
        // Plateaus: exactly equal neighbours form one run (NaN never joins a run).
        while end + 1 < n && values[end + 1] == values[start] {
            end += 1;
        }
        let v = values[start];
        let left_ok = start == 0 || greater(values[start - 1], v);
        let right_ok = end + 1 == n || greater(values[end + 1], v);
        if !v.is_nan() && left_ok && right_ok {
            runs.push((start, end));
        }
        start = end + 1;
    }
    runs
}

/// Indices of every local minimum of a sampled curve.
///
/// A sample (or a plateau of exactly equal samples) is a local minimum when its neighbours
/// are strictly larger; the ends count when their one neighbour is. A plateau is reported
/// once, at its middle index (rounded down). NaN samples are never minima and count as
/// larger than any number.
pub fn local_minima_indices(values: &[f64]) -> Vec<usize> {
    minimum_runs(values)
        .into_iter()
        .map(|(s, e)| s + (e - s) / 2)
        .collect()
}

/// `points` logarithmically spaced values from `lo` to `hi`, both ends included exactly.
///
/// Needs `0 < lo < hi`, both finite, and `points >= 2`; fails if rounding would make two
/// neighbouring values equal.
pub fn log_grid(lo: f64, hi: f64, points: usize) -> Result<Vec<f64>, ProbError> {
    if !(lo.is_finite() && hi.is_finite() && lo > 0.0 && hi > lo) {
        return Err(ProbError::InvalidArgument(format!(
            "a log grid needs finite ends with 0 < lo < hi, got lo = {lo}, hi = {hi}"
        )));
    }
    if points < 2 {
        return Err(ProbError::InvalidArgument(format!(
            "a log grid needs at least 2 points, got {points}"
        )));
    }
    let (l0, l1) = (lo.ln(), hi.ln());
    let steps = (points - 1) as f64;
    let mut grid = Vec::with_capacity(points);
    grid.push(lo);
    for i in 1..points - 1 {
        let frac = i as f64 / steps;
        grid.push((l0 + frac * (l1 - l0)).exp());
    }
    grid.push(hi);
    if grid.windows(2).any(|w| w[1] <= w[0]) {
        return Err(ProbError::InvalidArgument(format!(
            "{points} points are too many to space distinctly between {lo} and {hi}; use fewer"
        )));
    }
    Ok(grid)
}

/// Samples `f` on `grid`, then refines every local minimum of the samples by Brent's method
/// between its grid neighbours (in `ln x` when `log_space`).
///
/// The grid must be strictly increasing and finite (positive when `log_space`). A refined
/// minimum is never worse than the best grid point of its run: if Brent's value is not
/// lower, the grid point is kept (with `evaluations` still counting the refinement). A
/// minimum within tolerance of the first or last grid point has `at_boundary` set. Each
/// refinement stops at `x_tol_rel` relative in `x` (absolute in `ln x` when `log_space`) or
/// fails with [`ProbError::BudgetExhausted`] after `max_evaluations_per_refine`. Total
/// evaluations: `grid.len()` plus the sum of the minima's `evaluations`.
pub fn scan_then_refine<F>(
    mut f: F,
    grid: &[f64],
    x_tol_rel: f64,
    max_evaluations_per_refine: usize,
    log_space: bool,
) -> Result<Scan, ProbError>
where
    F: FnMut(f64) -> Result<f64, ProbError>,
{
    scan_then_refine_staged(
        |x, _| f(x),
        grid,
        x_tol_rel,
        max_evaluations_per_refine,
        log_space,
    )
}

/// Which phase of [`scan_then_refine_staged`] asks for a value: a caller may answer the
/// scan, which only has to rank grid points, more cheaply than the refinement.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stage {
    /// A grid point of the scan.
    Scan,
    /// A point of a Brent refinement.
    Refine,
}

/// [`scan_then_refine`] with the phase passed to `f` (see [`Stage`]).
///
/// # Errors
/// As [`scan_then_refine`].
pub fn scan_then_refine_staged<F>(
    mut f: F,
    grid: &[f64],
    x_tol_rel: f64,
    max_evaluations_per_refine: usize,
    log_space: bool,
) -> Result<Scan, ProbError>
where
    F: FnMut(f64, Stage) -> Result<f64, ProbError>,
{
    let rel = check_rel_tol(x_tol_rel)?;
    if grid.is_empty() {
        return Err(ProbError::InvalidArgument(
            "the scan grid is empty; give at least one point".to_string(),
        ));
    }
    if max_evaluations_per_refine == 0 {
        return Err(ProbError::InvalidArgument(
            "max_evaluations_per_refine must be at least 1".to_string(),
        ));
    }
    for (i, &x) in grid.iter().enumerate() {
        if !x.is_finite() {
            return Err(ProbError::NonFinite {
                what: format!("grid point {i}"),
                value: x,
            });
        }
        if log_space && x <= 0.0 {
            return Err(ProbError::InvalidArgument(format!(
                "grid point {i} is {x}; a log-space scan needs positive points"
            )));
        }
    }
    if grid.windows(2).any(|w| w[1] <= w[0]) {
        return Err(ProbError::InvalidArgument(
            "the scan grid must be strictly increasing".to_string(),
        ));
    }
    let mut values = Vec::with_capacity(grid.len());
    for &x in grid {
        values.push(finite_value(
            "the function to minimise",
            x,
            f(x, Stage::Scan)?,
        )?);
    }
    let mut f = |x: f64| f(x, Stage::Refine);
    let n = grid.len();
    let mut minima = Vec::new();
    for (start, end) in minimum_runs(&values) {
        let mid = start + (end - start) / 2;
        let grid_min = Minimum {
            x: grid[mid],
            value: values[mid],
            evaluations: 0,
            at_boundary: start == 0 || end == n - 1,
        };
        let left = start.saturating_sub(1);
        let right = (end + 1).min(n - 1);
        if left == right {
            minima.push(grid_min);
            continue;
        }
        let (glo, ghi) = (grid[left], grid[right]);
        let r = if log_space {
            let (ulo, uhi) = (glo.ln(), ghi.ln());
            let tol = XTol { rel: 0.0, abs: rel };
            // Exact grid points at the ends of the bracket, so that no rounding of exp(ln x)
            // moves them.
            let mut g = |u: f64| {
                let x = if u == ulo {
                    glo
                } else if u == uhi {
                    ghi
                } else {
                    u.exp()
                };
                f(x)
            };
            let mut r = brent_core(&mut g, ulo, uhi, tol, max_evaluations_per_refine, false)?;
            r.x = r.x.exp();
            r
        } else {
            let tol = XTol {
                rel,
                abs: rel * BRENT_X_ABS_FRACTION * (ghi - glo),
            };
            brent_core(&mut f, glo, ghi, tol, max_evaluations_per_refine, false)?
        };
        let refined = if r.value < grid_min.value {
            Minimum {
                x: r.x,
                value: r.value,
                evaluations: r.evaluations,
                at_boundary: (start == 0 && r.near_lower) || (end == n - 1 && r.near_upper),
            }
        } else {
            Minimum {
                evaluations: r.evaluations,
                ..grid_min
            }
        };
        minima.push(refined);
    }
    minima.sort_by(|p, q| p.value.total_cmp(&q.value).then(p.x.total_cmp(&q.x)));
    Ok(Scan {
        grid: grid.to_vec(),
        values,
        minima,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn runs_of_a_plateau_and_ends() {
        // Hand-checked small cases (definition of a local minimum of a sequence).
        assert_eq!(minimum_runs(&[1.0, 0.0, 0.0, 0.0, 1.0]), vec![(1, 3)]);
        assert_eq!(minimum_runs(&[0.0, 1.0, 0.5, 2.0]), vec![(0, 0), (2, 2)]);
        assert_eq!(minimum_runs(&[2.0, 2.0]), vec![(0, 1)]);
        assert_eq!(minimum_runs(&[f64::NAN, 1.0, f64::NAN]), vec![(1, 1)]);
        assert!(minimum_runs(&[]).is_empty());
    }

    #[test]
    fn golden_fraction_is_three_minus_sqrt5_over_two() {
        // Brent (1973), ch. 5: c = (3 - sqrt 5) / 2.
        assert!((GOLDEN - (3.0 - 5.0_f64.sqrt()) / 2.0).abs() < 1e-16);
    }
}
