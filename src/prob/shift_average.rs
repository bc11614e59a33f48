//! The probability of a polytope averaged over a uniformly distributed shift of the mean,
//! in closed form when the gaussian has rank one.
//!
//! With `x = mu + l z + d F` (`z` standard normal, `l` the one column of the covariance
//! factor, `F` uniform on `[a, b]`), each row `r` of the polytope reads
//! `r.mu + (r.l) z + (r.d) F`. For a fixed `F` the polytope is therefore an interval of `z`
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
use super::tolerance::{SHIFT_SHORT_PIECE as SHORT_PIECE, SHIFT_TERM_REL as TERM_REL};

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

/// The mean over `F` uniform on `[a, b]` of `P(x in polytope)` with `x ~ gaussian` shifted by
/// `direction * F`, when the gaussian has rank one; `None` otherwise (or when a number on
/// the way is not finite), for the caller to integrate by quadrature instead.
pub fn mean_over_uniform_shift(
    gaussian: &Gaussian,
    polytope: &Polytope,
    direction: &[f64],
    a: f64,
    b: f64,
) -> Option<Estimate> {
    let n = gaussian.dim();
    if gaussian.rank() != 1 || direction.len() != n || a >= b || !a.is_finite() || !b.is_finite() {
        return None;
    }
    let factor = gaussian.factor();
    let mean = gaussian.mean();
    let (mut fa, mut fb) = (a, b);
    let mut lowers: Vec<Line> = Vec::new();
    let mut uppers: Vec<Line> = Vec::new();
    for (row, band) in polytope.rows.iter().zip(&polytope.bands) {
        if row.len() != n {
            return None;
        }
        let m: f64 = row.iter().zip(mean).map(|(r, v)| r * v).sum();
        let s: f64 = row
            .iter()
            .enumerate()
            .map(|(i, r)| r * factor[(i, 0)])
            .sum();
        let c: f64 = row.iter().zip(direction).map(|(r, d)| r * d).sum();
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
    let bound = error / width + TERM_REL * value.abs();
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
    fn higher_rank_is_left_to_the_caller() {
        let g = Gaussian::new(&[0.0, 0.0], &DMatrix::identity(2, 2)).unwrap();
        let mut poly = Polytope::new();
        poly.push(vec![1.0, 0.0], Band::closed(-1.0, 1.0));
        assert!(mean_over_uniform_shift(&g, &poly, &[1.0, 0.0], 0.0, 1.0).is_none());
    }
}
