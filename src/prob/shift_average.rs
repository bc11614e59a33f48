//! The probability of a polytope averaged over a uniformly distributed shift of the mean,
//! in closed form when every random row of the polytope reads one direction of the gaussian
//! (always so when the gaussian has rank one).
//!
//! With `x = mu + L w + d F` (`w` standard normal, `L` the covariance factor, `F` uniform on
//! `[a, b]`), each row `r` of the polytope reads `r.mu + (r.L) w + (r.d) F`; when every
//! `r.L` is a multiple `s_r u` of one unit vector `u`, `z = u.w` is standard normal and the
//! row reads `r.mu + s_r z + (r.d) F`. For a fixed `F` the polytope is therefore an interval of `z`
//! whose ends are the largest of some lines in `F` (from below) and the smallest of others
//! (from above); rows with `r.l = 0` do not involve `z` and cut `F` itself. Between the
//! points where two lines cross, one line gives each end, and the integral of
//! `Phi(U(F)) - Phi(L(F))` is a difference of integrals of `Phi(alpha + beta F)`, which by
//! parts is `[G(alpha + beta F)] / beta` with `G(t) = t Phi(t) + phi(t)` (common practice;
//! the antiderivative of the normal CDF). This replaces an adaptive quadrature over `F` for
//! the frequent case of one of two channels frozen at an arbitrary value.
//!
//! Accuracy: `G` is evaluated in the form without cancellation for positive arguments
//! (`G(t) = t + G(-t)`), and a piece over which the argument moves by less than
//! [`SHIFT_SHORT_PIECE`](super::tolerance::SHIFT_SHORT_PIECE) is integrated by 20-point Gauss–Legendre instead of a difference of `G`
//! (exact to rounding there, as `Phi` is analytic). The bound is a multiple of the unit
//! roundoff on every term, plus the cost of a breakpoint misplaced by rounding.

use super::estimate::Estimate;
use super::legendre::RULE_20;
use super::normal;
use super::polytope::{Gaussian, Polytope};
use super::tolerance::{self, SHIFT_SHORT_PIECE as SHORT_PIECE, SHIFT_TERM_REL as TERM_REL};

/// A line `alpha + beta F` bounding `z`.
#[derive(Debug, Clone, Copy)]
struct Line {
    alpha: f64,
    beta: f64,
}

impl Line {
    fn at(self, f: f64) -> f64 {
        self.alpha + self.beta * f
    }
}

/// `G(t) = integral of Phi from -inf to t = t Phi(t) + phi(t)`, for `t <= 0` (no
/// cancellation worth the name: the relative error grows like `t^2` ulps, below 1e-12 while
/// `Phi(t)` is representable).
fn g_left(t: f64) -> f64 {
    t * normal::cdf(t) + normal::pdf(t)
}

/// `integral over [p, q] of Phi(line(F)) dF` (or of `Phi(-line(F))` when `upper_tail`), with
/// its rounding bound.
fn integral_of_phi(line: Line, p: f64, q: f64, upper_tail: bool) -> (f64, f64) {
    let width = q - p;
    if width <= 0.0 {
        return (0.0, 0.0);
    }
    // Integrate Phi(s (alpha + beta F)) with s = -1 for the upper tail.
    let (alpha, beta) = if upper_tail {
        (-line.alpha, -line.beta)
    } else {
        (line.alpha, line.beta)
    };
    let (tp, tq) = (alpha + beta * p, alpha + beta * q);
    if (tq - tp).abs() < SHORT_PIECE {
        let value = RULE_20.integrate(p, q, |f| normal::cdf(alpha + beta * f));
        return (
            value,
            TERM_REL * value.abs() + TERM_REL * width * f64::EPSILON,
        );
    }
    // [G(tq) - G(tp)] / beta, in the form without cancellation on each side of zero:
    // G(t) = t + G(-t) for t > 0.
    let part = |t: f64| -> (f64, f64) {
        // (linear part, G of the non-positive argument)
        if t > 0.0 {
            (t, g_left(-t))
        } else {
            (0.0, g_left(t))
        }
    };
    let (lq, gq) = part(tq);
    let (lp, gp) = part(tp);
    let value = ((lq - lp) + (gq - gp)) / beta;
    let error = TERM_REL
        * ((lq.abs() + lp.abs()) + gq.abs() * (1.0 + tq * tq) + gp.abs() * (1.0 + tp * tp))
        / beta.abs();
    (value, error)
}

/// The one direction of `z` that every random row of a polytope reads (for a gaussian of
/// rank above one): the first random row's unit direction, and the tilts of the later rows
/// from it, added up (each end of the interval is the largest or smallest of several tilted
/// lines, so each row's tilt can move it).
#[derive(Debug, Default)]
struct CommonAxis {
    unit: Option<Vec<f64>>,
    tilt: f64,
}

impl CommonAxis {
    /// The row's random part `r L z` as `s w` with `w` the standard normal along the common
    /// axis: `s` (signed; zero for a row without a random part, as the polytope engine
    /// judges one), or `None` when the row reads another direction.
    fn signed_size(&mut self, row: &[f64], factor: &nalgebra::DMatrix<f64>) -> Option<f64> {
        let rank = factor.ncols();
        let mut along = vec![0.0; rank];
        let mut terms = 0.0;
        for (i, &r) in row.iter().enumerate() {
            if r == 0.0 {
                continue;
            }
            let entries = factor.row(i);
            terms += r.abs() * entries.iter().map(|v| v * v).sum::<f64>().sqrt();
            for (a, l) in along.iter_mut().zip(entries.iter()) {
                *a += r * l;
            }
        }
        let size = along.iter().map(|v| v * v).sum::<f64>().sqrt();
        if size == 0.0 || size <= tolerance::DEGENERATE_ROW_REL * terms {
            return Some(0.0);
        }
        for v in &mut along {
            *v /= size;
        }
        let Some(unit) = &self.unit else {
            self.unit = Some(along);
            return Some(size);
        };
        let gap = |sign: f64| -> f64 {
            unit.iter()
                .zip(&along)
                .map(|(u, v)| (u - sign * v) * (u - sign * v))
                .sum::<f64>()
                .sqrt()
        };
        let (same, opposite) = (gap(1.0), gap(-1.0));
        if same <= tolerance::PARALLEL_ROW_ABS {
            self.tilt += normal::MEAN_ABS * same;
            Some(size)
        } else if opposite <= tolerance::PARALLEL_ROW_ABS {
            self.tilt += normal::MEAN_ABS * opposite;
            Some(-size)
        } else {
            None
        }
    }
}

/// The sizes of the terms that make up a row's value, before they cancel.
struct RowSizes {
    /// `sum |r_i mu_i|`.
    mean: f64,
    /// `sum |r_i d_i|`.
    shift: f64,
    /// `sum |r_i| |L_i|`, the random terms.
    random: f64,
}

/// A bound on what rounding of one finite end of a random row moves the mean over `F` of
/// the probability. The end, in units of the row's noise, is off by at most
/// `ROUNDING_REL (|end| + mean + shift |F|) / |s|` (the terms before they cancel), which
/// moves the probability by that times the normal density there; over `F` the density
/// integrates to at most `|s| / |c|` (it moves with `F` at rate `|c| / |s|`), or stays at
/// most `phi(0)` for a row that `F` does not move. The noise size `s` itself is off by
/// `ROUNDING_REL random / |s|` relative, which moves the probability by at most that times
/// `max |z| phi(z) = phi(1)`.
fn end_rounding(end: f64, s: f64, c: f64, sizes: &RowSizes, reach: f64, width: f64) -> f64 {
    let offset = tolerance::ROUNDING_REL * (end.abs() + sizes.mean + sizes.shift * reach);
    let moved = if c != 0.0 {
        offset / (c.abs() * width)
    } else {
        offset / s.abs() * normal::pdf(0.0)
    };
    moved + tolerance::ROUNDING_REL * sizes.random / s.abs() * normal::pdf(1.0)
}

/// The mean over `F` uniform on `[a, b]` of `P(x in polytope)` with `x ~ gaussian` shifted by
/// `direction * F`, when every random row of the polytope reads one direction of the
/// gaussian (always so at rank one; at higher rank when the rows' random parts are parallel
/// within [`tolerance::PARALLEL_ROW_ABS`], as the polytope engine merges them); `None`
/// otherwise (or when a number on the way is not finite), for the caller to integrate by
/// quadrature instead.
pub fn mean_over_uniform_shift(
    gaussian: &Gaussian,
    polytope: &Polytope,
    direction: &[f64],
    a: f64,
    b: f64,
) -> Option<Estimate> {
    let n = gaussian.dim();
    let rank = gaussian.rank();
    if rank == 0 || direction.len() != n || a >= b || !a.is_finite() || !b.is_finite() {
        return None;
    }
    let factor = gaussian.factor();
    let mean = gaussian.mean();
    let (mut fa, mut fb) = (a, b);
    let mut lowers: Vec<Line> = Vec::new();
    let mut uppers: Vec<Line> = Vec::new();
    let mut axis = CommonAxis::default();
    let reach = a.abs().max(b.abs());
    // Rounding of each random row's ends, averaged over F (see `end_rounding`).
    let mut rounding = 0.0;
    for (row, band) in polytope.rows.iter().zip(&polytope.bands) {
        if row.len() != n {
            return None;
        }
        if band.lower == f64::NEG_INFINITY && band.upper == f64::INFINITY {
            continue;
        }
        let m: f64 = row.iter().zip(mean).map(|(r, v)| r * v).sum();
        let s: f64 = if rank == 1 {
            let s: f64 = row
                .iter()
                .enumerate()
                .map(|(i, r)| r * factor[(i, 0)])
                .sum();
            // A row whose random terms cancel is fixed, as the polytope engine judges it.
            let terms: f64 = row
                .iter()
                .enumerate()
                .map(|(i, r)| (r * factor[(i, 0)]).abs())
                .sum();
            if s.abs() <= tolerance::DEGENERATE_ROW_REL * terms {
                0.0
            } else {
                s
            }
        } else {
            axis.signed_size(row, &factor)?
        };
        let c: f64 = row.iter().zip(direction).map(|(r, d)| r * d).sum();
        if s != 0.0 {
            let sizes = RowSizes {
                mean: row.iter().zip(mean).map(|(r, v)| (r * v).abs()).sum(),
                shift: row.iter().zip(direction).map(|(r, d)| (r * d).abs()).sum(),
                random: row
                    .iter()
                    .enumerate()
                    .map(|(i, r)| r.abs() * factor.row(i).norm())
                    .sum(),
            };
            for end in [band.lower, band.upper]
                .into_iter()
                .filter(|e| e.is_finite())
            {
                rounding += end_rounding(end, s, c, &sizes, reach, b - a);
            }
        }
        if s == 0.0 {
            // The row does not involve z: lower <= m + c F <= upper cuts F.
            if c == 0.0 {
                // A fixed value: an open end excludes it (the cells of an ordering of
                // equal constant channels rely on that to stay disjoint).
                if !band.contains(m) {
                    return Some(Estimate::zero());
                }
                continue;
            }
            let (e1, e2) = ((band.lower - m) / c, (band.upper - m) / c);
            let (lo, hi) = if c > 0.0 { (e1, e2) } else { (e2, e1) };
            if !lo.is_nan() {
                fa = fa.max(lo);
            }
            if !hi.is_nan() {
                fb = fb.min(hi);
            }
            continue;
        }
        // lower <= m + s z + c F <= upper  <=>  z between (end - m - c F) / s.
        let line = |end: f64| Line {
            alpha: (end - m) / s,
            beta: -c / s,
        };
        let (from_below, from_above) = if s > 0.0 {
            (band.lower, band.upper)
        } else {
            (band.upper, band.lower)
        };
        if from_below.is_finite() {
            lowers.push(line(from_below));
        }
        if from_above.is_finite() {
            uppers.push(line(from_above));
        }
    }
    if fa >= fb {
        return Some(Estimate::zero());
    }
    // Breakpoints: every crossing of two lines inside (fa, fb).
    let all: Vec<Line> = lowers.iter().chain(uppers.iter()).copied().collect();
    let mut points = vec![fa, fb];
    for (i, p) in all.iter().enumerate() {
        for q in &all[i + 1..] {
            if p.beta != q.beta {
                let x = (q.alpha - p.alpha) / (p.beta - q.beta);
                if x > fa && x < fb {
                    points.push(x);
                }
            }
        }
    }
    points.sort_by(f64::total_cmp);
    points.dedup();
    let mut total = 0.0;
    let mut error = 0.0;
    for piece in points.windows(2) {
        let (p, q) = (piece[0], piece[1]);
        if q <= p {
            continue;
        }
        let mid = 0.5 * (p + q);
        let lower = lowers
            .iter()
            .copied()
            .max_by(|x, y| x.at(mid).total_cmp(&y.at(mid)));
        let upper = uppers
            .iter()
            .copied()
            .min_by(|x, y| x.at(mid).total_cmp(&y.at(mid)));
        let (l_mid, u_mid) = (
            lower.map_or(f64::NEG_INFINITY, |l| l.at(mid)),
            upper.map_or(f64::INFINITY, |u| u.at(mid)),
        );
        if u_mid <= l_mid {
            continue;
        }
        // Phi(U) - Phi(L) = Phi(-L) - Phi(-U): take the tail on the side where both ends sit,
        // so that nothing close to one is subtracted from something close to one.
        let upper_tail = l_mid > 0.0;
        let mut term = |line: Option<Line>, sign: f64, missing_is_whole: bool| match line {
            Some(line) => {
                let (v, e) = integral_of_phi(line, p, q, upper_tail);
                total += sign * v;
                error += e;
            }
            None => {
                if missing_is_whole {
                    total += sign * (q - p);
                }
            }
        };
        if upper_tail {
            // integral of Phi(-L) - Phi(-U); a missing U gives Phi(-inf) = 0.
            term(lower, 1.0, true);
            term(upper, -1.0, false);
        } else {
            // integral of Phi(U) - Phi(L); a missing U gives 1, a missing L gives 0.
            term(upper, 1.0, true);
            term(lower, -1.0, false);
        }
    }
    let width = b - a;
    // A breakpoint misplaced by rounding moves at most its own rounding's worth of a
    // probability of at most one.
    error += 4.0 * f64::EPSILON * (fa.abs() + fb.abs()) * (points.len() as f64);
    let value = total / width;
    // Rows merged onto the common axis within PARALLEL_ROW_ABS: at each F the ends move at
    // random by at most the summed tilt, so the probability by at most that times the
    // density at each end (as the polytope engine bounds a merged row; at most phi(0) per
    // end).
    let tilt = axis.tilt * 2.0 * normal::pdf(0.0);
    let bound = error / width + TERM_REL * value.abs() + tilt + rounding;
    (value.is_finite() && bound.is_finite()).then(|| Estimate::new(value.clamp(0.0, 1.0), bound))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::prob::polytope::Band;
    use nalgebra::DMatrix;

    #[test]
    fn a_fixed_slab_averages_to_its_own_probability() {
        // No row involves F: the average is P(-1 <= z <= 2) itself, from the normal CDF.
        let g = Gaussian::new(&[0.0], &DMatrix::from_element(1, 1, 1.0)).unwrap();
        let mut poly = Polytope::new();
        poly.push(vec![1.0], Band::closed(-1.0, 2.0));
        let e = mean_over_uniform_shift(&g, &poly, &[0.0], -3.0, 4.0).unwrap();
        let truth = normal::cdf(2.0) - normal::cdf(-1.0);
        assert!(
            (e.value - truth).abs() <= e.error + 1e-16,
            "{e:?} vs {truth}"
        );
    }

    #[test]
    fn a_half_line_shifted_uniformly_follows_the_antiderivative() {
        // P(z + F <= 0) = Phi(-F); its mean over F in [0, 3] is (G(0) - G(-3)) / 3 with
        // G(t) = t Phi(t) + phi(t): by parts, common practice. Values of Phi(-3) = 1.3499e-3
        // and phi(3) = 4.4318e-3 from any normal table (e.g. Abramowitz & Stegun 26.1).
        let g = Gaussian::new(&[0.0], &DMatrix::from_element(1, 1, 1.0)).unwrap();
        let mut poly = Polytope::new();
        poly.push(vec![1.0], Band::closed(f64::NEG_INFINITY, 0.0));
        let e = mean_over_uniform_shift(&g, &poly, &[1.0], 0.0, 3.0).unwrap();
        let phi0 = 1.0 / (2.0 * std::f64::consts::PI).sqrt();
        let g0 = phi0;
        let g3 = -3.0 * 1.349_898_031_630_094_5e-3 + 4.431_848_411_938_007_7e-3;
        let truth = (g0 - g3) / 3.0;
        assert!(
            (e.value - truth).abs() <= e.error + 1e-15,
            "{e:?} vs {truth}"
        );
        assert!(e.error < 1e-13);
    }

    #[test]
    fn two_random_directions_are_left_to_the_caller() {
        let g = Gaussian::new(&[0.0, 0.0], &DMatrix::identity(2, 2)).unwrap();
        let mut poly = Polytope::new();
        poly.push(vec![1.0, 0.0], Band::closed(-1.0, 1.0));
        poly.push(vec![0.0, 1.0], Band::closed(-1.0, 1.0));
        assert!(mean_over_uniform_shift(&g, &poly, &[1.0, 0.0], 0.0, 1.0).is_none());
    }

    #[test]
    fn rows_of_one_direction_at_higher_rank_follow_the_antiderivative() {
        // Two independent N(0, 1); every row reads x1 + x2 ~ N(0, 2) (the second row its
        // negative, the third twice it): P(-1 <= x1 + x2 + F <= 0) (the third row's -3.5 is
        // implied) with F uniform on [0, 3] is Phi(-F / sqrt 2) - Phi((-1 - F) / sqrt 2); the
        // mean over F is (sqrt 2 / 3) of the differences of G(t) = t Phi(t) + phi(t) at the
        // ends (by parts, common practice; Phi from libm's erfc).
        let g = Gaussian::new(&[0.0, 0.0], &DMatrix::identity(2, 2)).unwrap();
        let mut poly = Polytope::new();
        poly.push(vec![1.0, 1.0], Band::closed(f64::NEG_INFINITY, 0.0));
        poly.push(vec![-1.0, -1.0], Band::closed(f64::NEG_INFINITY, 1.0));
        poly.push(vec![2.0, 2.0], Band::closed(-7.0, f64::INFINITY));
        let e = mean_over_uniform_shift(&g, &poly, &[1.0, 0.0], 0.0, 3.0).unwrap();
        let cdf = |t: f64| 0.5 * libm::erfc(-t / std::f64::consts::SQRT_2);
        let big_g =
            |t: f64| t * cdf(t) + (-0.5 * t * t).exp() / (2.0 * std::f64::consts::PI).sqrt();
        let r2 = std::f64::consts::SQRT_2;
        let head = r2 * (big_g(0.0) - big_g(-3.0 / r2));
        let tail = r2 * (big_g(-1.0 / r2) - big_g(-4.0 / r2));
        let truth = (head - tail) / 3.0;
        assert!(
            (e.value - truth).abs() <= e.error + 1e-15,
            "{e:?} vs {truth}"
        );
        assert!(e.error < 2e-13, "{e:?}");
    }
}
