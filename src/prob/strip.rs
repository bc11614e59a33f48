//! The probability that two independent standard normals `(T, Y)` lie in a convex polygon
//! written as a `T`-interval and strips:
//! `P(t_lo < T < t_hi and lower_q <= Y + c_q T <= upper_q for every q)`.
//!
//! This is the last two variables of Genz's sequential conditioning done exactly: it makes
//! a polytope of rank two exact whatever its number of directions, takes one dimension off
//! the lattice rule for higher ranks, and leaves a smooth one-dimensional integral for
//! rank three.
//!
//! Method. For fixed `t` the admissible `Y` form the interval between the lower envelope
//! `L(t) = max_q (lower_q - c_q t)` and the upper envelope `U(t) = min_q (upper_q - c_q t)`.
//! Both are piecewise linear: each is walked once into segments with one active line. On
//! the `T`-interval where `U > L` the integral `∫ phi(t) [Phi(U(t)) - Phi(L(t))] dt` is the
//! sum over the upper envelope's segments minus the sum over the lower one's, each term
//! `∫_s^e phi(t) Phi(a - c t) dt = P(s < T < e, (Y + c T) / sqrt(1 + c^2) < a / sqrt(1 + c^2))`,
//! the rectangle of a standard bivariate normal with correlation `c / sqrt(1 + c^2)`
//! (the pair `T`, `(Y + c T) / sqrt(1 + c^2)` is standard with that correlation; the
//! identity is the law of total probability conditioned on `T = t`). Rectangles come from
//! [`crate::prob::bivariate`] (Genz 2004). Where the strip lies in the upper tail of `Y` the
//! complementary form `P(.., > a')` is used (for both envelopes over that stretch) so that
//! small values keep their relative accuracy.
//!
//! Error: the sum of the rectangles' own bounds plus [`tolerance::ROUNDING_REL`] times the
//! total of the positive terms, since the result is a difference.

use std::cell::RefCell;

use crate::prob::bivariate::StandardBivariate;
use crate::prob::estimate::Estimate;
use crate::prob::normal;
use crate::prob::tolerance;

/// Buffers reused by [`Strips::probability`] on one thread: the lines of each envelope and
/// its segments. The nested integration calls it tens of
/// thousands of times a polytope; reusing them keeps the allocator off that path.
#[derive(Debug, Default)]
struct Scratch {
    upper_lines: Vec<Line>,
    lower_lines: Vec<Line>,
    upper_segments: Vec<Segment>,
    lower_segments: Vec<Segment>,
}

thread_local! {
    static SCRATCH: RefCell<Scratch> = RefCell::new(Scratch::default());
}

/// The slopes `c_q` of a family of strips, with the bivariate laws they need, prepared once
/// and evaluated for many bands and `T`-intervals.
#[derive(Debug, Clone)]
pub struct Strips {
    rows: Vec<StripLaw>,
}

#[derive(Debug, Clone)]
struct StripLaw {
    slope: f64,
    /// `1 / sqrt(1 + c^2)`.
    inv_norm: f64,
    law: StandardBivariate,
}

impl Strips {
    /// Strips with slopes `c_q` (finite; a non-finite slope makes every probability NaN).
    pub fn new(slopes: &[f64]) -> Self {
        let rows = slopes
            .iter()
            .map(|&slope| {
                let inv_norm = 1.0 / slope.hypot(1.0);
                StripLaw {
                    slope,
                    inv_norm,
                    // 1 - rho^2 = inv_norm^2 exactly: steep strips keep their
                    // smoothing width (see StandardBivariate::with_complement)
                    law: StandardBivariate::with_complement(
                        (slope * inv_norm).clamp(-1.0, 1.0),
                        inv_norm,
                    ),
                }
            })
            .collect();
        Self { rows }
    }

    /// Number of strips.
    pub fn len(&self) -> usize {
        self.rows.len()
    }

    /// Whether there is no strip (the answer is then the normal interval of `T`).
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }

    /// `P(t_lo < T < t_hi and lower[q] <= Y + c_q T <= upper[q] for every q)`.
    ///
    /// Ends may be infinite; `lower` and `upper` must have one entry per strip (missing
    /// entries count as unconstrained). Returns NaN for NaN input.
    pub fn probability(&self, t_lo: f64, t_hi: f64, lower: &[f64], upper: &[f64]) -> Estimate {
        SCRATCH.with(|cell| match cell.try_borrow_mut() {
            Ok(mut scratch) => self.probability_in(&mut scratch, t_lo, t_hi, lower, upper),
            // Not reached (the computation does not call itself); fresh buffers are right.
            Err(_) => self.probability_in(&mut Scratch::default(), t_lo, t_hi, lower, upper),
        })
    }

    fn probability_in(
        &self,
        scratch: &mut Scratch,
        t_lo: f64,
        t_hi: f64,
        lower: &[f64],
        upper: &[f64],
    ) -> Estimate {
        if t_lo.is_nan() || t_hi.is_nan() || lower.iter().chain(upper).any(|v| v.is_nan()) {
            return Estimate::new(f64::NAN, f64::NAN);
        }
        // Beyond |t| = T_REACH the normal density is below the smallest double: nothing of
        // the integral lies there, and envelopes evaluated that far out lose their digits.
        let (t_lo, t_hi) = (t_lo.max(-T_REACH), t_hi.min(T_REACH));
        if t_lo >= t_hi {
            return Estimate::zero();
        }
        let lower_at = |q: usize| lower.get(q).copied().unwrap_or(f64::NEG_INFINITY);
        let upper_at = |q: usize| upper.get(q).copied().unwrap_or(f64::INFINITY);
        // Lines `k - c t` of each envelope, finite offsets only.
        let Scratch {
            upper_lines,
            lower_lines,
            upper_segments,
            lower_segments,
        } = scratch;
        upper_lines.clear();
        lower_lines.clear();
        for (q, row) in self.rows.iter().enumerate() {
            let (lo, hi) = (lower_at(q), upper_at(q));
            if lo > hi {
                return Estimate::zero();
            }
            if lo.is_finite() {
                lower_lines.push((q, lo, row.slope));
            }
            if hi.is_finite() {
                upper_lines.push((q, hi, row.slope));
            }
        }
        if upper_lines.is_empty() && lower_lines.is_empty() {
            let value = normal::interval(t_lo, t_hi);
            return Estimate::new(value, value * tolerance::ROUNDING_REL);
        }
        // Each envelope as segments with their active line; between consecutive breaks of
        // either, one lower and one upper line are active. Inside such a piece the width
        // U - L is linear, so it changes sign at most once, where the two active lines
        // cross; the piece is split there.
        envelope_segments(upper_lines, true, t_lo, t_hi, upper_segments);
        envelope_segments(lower_lines, false, t_lo, t_hi, lower_segments);

        // The integral is summed per envelope segment, not per piece: each envelope
        // contributes one rectangle for each stretch over which its active line and the
        // tail form stay the same, so a break of one envelope does not cost a rectangle of
        // the other.
        let mut sum = HalfSum::default();
        let mut upper_half: Option<Half> = None;
        let mut lower_half: Option<Half> = None;
        // Merge the two segment lists: each step ends at the nearer next break.
        let (mut i, mut j) = (0, 0);
        let mut start = t_lo;
        while start < t_hi && i < upper_segments.len() && j < lower_segments.len() {
            let hi_line = upper_segments[i].line;
            let lo_line = lower_segments[j].line;
            let upper_end = upper_segments.get(i + 1).map_or(t_hi, |g| g.start);
            let lower_end = lower_segments.get(j + 1).map_or(t_hi, |g| g.start);
            let (s, e) = (start, upper_end.min(lower_end));
            if upper_end == e {
                i += 1;
            }
            if lower_end == e {
                j += 1;
            }
            start = e;
            if s >= e {
                continue;
            }
            let crossing = match (lo_line, hi_line) {
                (Some((_, kl, cl)), Some((_, kh, ch))) if ch != cl => {
                    Some((kh - kl) / (ch - cl)).filter(|x| *x > s && *x < e)
                }
                _ => None,
            };
            let parts = match crossing {
                Some(x) => [(s, x), (x, e)],
                None => [(s, e), (e, e)],
            };
            for (s, e) in parts.into_iter().filter(|(s, e)| s < e) {
                let t = representative(s, e);
                let lo_val = lo_line.map_or(f64::NEG_INFINITY, |(_, k, c)| k - c * t);
                let hi_val = hi_line.map_or(f64::INFINITY, |(_, k, c)| k - c * t);
                if hi_val <= lo_val {
                    for half in [upper_half.take(), lower_half.take()].into_iter().flatten() {
                        sum.add(self.half_term(half, lower, upper));
                    }
                    continue;
                }
                let upper_tail = lo_val > 0.0;
                for (open, row, is_upper) in [
                    (&mut upper_half, hi_line.map(|l| l.0), true),
                    (&mut lower_half, lo_line.map(|l| l.0), false),
                ] {
                    match open.as_mut() {
                        Some(h) if h.row == row && h.upper_tail == upper_tail && h.end == s => {
                            h.end = e;
                        }
                        _ => {
                            if let Some(h) = open.take() {
                                sum.add(self.half_term(h, lower, upper));
                            }
                            *open = Some(Half {
                                start: s,
                                end: e,
                                row,
                                is_upper,
                                upper_tail,
                            });
                        }
                    }
                }
            }
        }
        for half in [upper_half, lower_half].into_iter().flatten() {
            sum.add(self.half_term(half, lower, upper));
        }
        sum.estimate()
    }

    /// One envelope's share of the integral over a stretch where its active line and the
    /// tail form are fixed, with the sign it enters with. In the lower-tail form the
    /// integrand is `P(Y + cT < upper line) - P(Y + cT < lower line)`; in the upper-tail
    /// form `P(Y + cT > lower line) - P(Y + cT > upper line)`, so that small values keep
    /// their relative accuracy. An unbounded side gives the whole `T`-interval's mass or
    /// nothing.
    fn half_term(&self, half: Half, lower: &[f64], upper: &[f64]) -> (Estimate, bool) {
        let Half {
            start: s,
            end: e,
            row,
            is_upper,
            upper_tail,
        } = half;
        let positive = is_upper != upper_tail;
        let term = match row {
            Some(q) => {
                let bound = if is_upper {
                    upper.get(q).copied().unwrap_or(f64::INFINITY)
                } else {
                    lower.get(q).copied().unwrap_or(f64::NEG_INFINITY)
                };
                let law = &self.rows[q];
                let k = bound * law.inv_norm;
                if upper_tail {
                    law.law.rectangle_estimate([s, k], [e, f64::INFINITY])
                } else {
                    law.law.rectangle_estimate([s, f64::NEG_INFINITY], [e, k])
                }
            }
            // No line on this side: below an absent upper line (or above an absent lower
            // line) lies the whole interval; beyond it lies nothing.
            None if positive => {
                let v = normal::interval(s, e);
                Estimate::new(v, v * tolerance::ROUNDING_REL)
            }
            None => Estimate::zero(),
        };
        (term, positive)
    }
}

/// The signed sum of envelope shares: positive and negative terms kept apart so that the
/// rounding of the difference is bounded by [`tolerance::ROUNDING_REL`] times the positive
/// total.
#[derive(Debug, Default)]
struct HalfSum {
    plus: Estimate,
    minus: Estimate,
}

impl HalfSum {
    fn add(&mut self, (term, positive): (Estimate, bool)) {
        if positive {
            self.plus = self.plus.add(term);
        } else {
            self.minus = self.minus.add(term);
        }
    }

    fn estimate(&self) -> Estimate {
        let value = self.plus.value - self.minus.value;
        let error =
            self.plus.error + self.minus.error + tolerance::ROUNDING_REL * self.plus.value.abs();
        Estimate::new(value.max(0.0), error)
    }
}

/// A line `k - c t` of an envelope: `(row, offset k, slope c)`.
type Line = (usize, f64, f64);

/// Where an envelope's active line starts, and the line (`None`: no line on that side, the
/// envelope is unbounded).
#[derive(Debug, Clone, Copy)]
struct Segment {
    start: f64,
    line: Option<Line>,
}

/// The upper envelope `min (k - c t)` over the upper lines `side` (`upper_side`) or the
/// lower envelope `max (k - c t)` over the lower lines on `[t_lo, t_hi)`, as segments in
/// increasing `t` written to `out`. The envelope is walked from `t_lo`: from the active
/// line, the next one is the line that overtakes it first (for the minimum, a line with a
/// larger `c`; for the maximum, a smaller one), so the cost is the number of lines times the
/// number of breaks, not the square of the number of lines, and the slope moves one way,
/// which bounds the walk by the number of lines. Ties go to the line that leads just after
/// the tie (for the minimum the larger `c`, for the maximum the smaller): two lines can
/// meet exactly at `t_lo` when bounds agree to the last digit, and the line that holds the
/// rest of the segment must win.
fn envelope_segments(
    side: &[Line],
    upper_side: bool,
    t_lo: f64,
    t_hi: f64,
    out: &mut Vec<Segment>,
) {
    out.clear();
    let Some(&first) = side.first() else {
        out.push(Segment {
            start: t_lo,
            line: None,
        });
        return;
    };
    // Start at t_lo: the active line there, ties broken towards the line that leads just
    // after it.
    let better = |a: Line, b: Line, t: f64| -> bool {
        let (va, vb) = (a.1 - a.2 * t, b.1 - b.2 * t);
        if upper_side {
            va < vb || (va == vb && a.2 > b.2)
        } else {
            va > vb || (va == vb && a.2 < b.2)
        }
    };
    let mut current = first;
    for &line in &side[1..] {
        if better(line, current, t_lo) {
            current = line;
        }
    }
    out.push(Segment {
        start: t_lo,
        line: Some(current),
    });
    let mut t = t_lo;
    for _ in 0..side.len() {
        // The earliest line to overtake the current one after t.
        let mut next: Option<(f64, Line)> = None;
        for &line in side.iter() {
            let overtakes = if upper_side {
                line.2 > current.2
            } else {
                line.2 < current.2
            };
            if !overtakes {
                continue;
            }
            let x = (line.1 - current.1) / (line.2 - current.2);
            if !x.is_finite() {
                continue;
            }
            // A crossing at or before t can only come from rounding (three lines through
            // one point): that line already leads, so it takes over at t.
            let x = x.max(t);
            let earlier = match next {
                None => true,
                Some((best_x, best)) => {
                    x < best_x
                        || (x == best_x
                            && if upper_side {
                                line.2 > best.2
                            } else {
                                line.2 < best.2
                            })
                }
            };
            if earlier {
                next = Some((x, line));
            }
        }
        match next {
            Some((x, line)) if x < t_hi => {
                out.push(Segment {
                    start: x,
                    line: Some(line),
                });
                t = x;
                current = line;
            }
            _ => break,
        }
    }
}

/// A stretch of the `T`-axis over which one envelope keeps its active line (`None`: that
/// side is unbounded there) and the integral keeps its tail form.
#[derive(Debug, Clone, Copy)]
struct Half {
    start: f64,
    end: f64,
    row: Option<usize>,
    /// The upper envelope (else the lower one).
    is_upper: bool,
    /// Use the complementary (upper-tail) form.
    upper_tail: bool,
}

/// Largest `|t|` that can carry probability: `phi(40)` is below the smallest double.
const T_REACH: f64 = 40.0;

/// A point strictly inside the finite interval `(s, e)`, as near to zero as convenient:
/// the active lines are the same everywhere inside, and near zero their values are computed
/// without losing digits to large `t`.
fn representative(s: f64, e: f64) -> f64 {
    if s < 0.0 && e > 0.0 {
        0.0
    } else if e <= 0.0 {
        e - (0.5 * (e - s)).min(1.0)
    } else {
        s + (0.5 * (e - s)).min(1.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::prob::bivariate;

    #[test]
    fn one_strip_is_a_bivariate_rectangle() {
        // P(s < T < e, l <= Y + cT <= u) is the rectangle of (T, (Y + cT)/sqrt(1+c^2)),
        // correlation c/sqrt(1+c^2) (definition of the bivariate normal).
        for &c in &[-3.0, -0.5, 0.0, 0.7, 2.0] {
            let n = (1.0f64 + c * c).sqrt();
            let strips = Strips::new(&[c]);
            let (s, e, l, u) = (-0.3, 1.7, -0.4, 2.1);
            let got = strips.probability(s, e, &[l], &[u]);
            let want = bivariate::rectangle([s, l / n], [e, u / n], c / n);
            assert!(
                (got.value - want).abs() <= got.error + 1e-15,
                "c {c}: {got:?} vs {want}"
            );
        }
    }

    #[test]
    fn nearly_parallel_strips_keep_their_mass() {
        // Regression: two strips whose slopes differ in the last bit cross at |t| ~ 1e13;
        // the envelopes must not be judged there. With equal slopes the region is one
        // strip, a bivariate rectangle (definition); the last-bit difference moves the
        // answer by far less than 1e-12.
        let c: f64 = 1.598_553_649_570_344_3;
        let c2 = f64::from_bits(c.to_bits() - 1);
        let n = (1.0f64 + c * c).sqrt();
        let strips = Strips::new(&[c, c2]);
        let (l, u) = (-0.3, 1.1);
        let got = strips.probability(
            f64::NEG_INFINITY,
            0.4,
            &[l, f64::NEG_INFINITY],
            &[f64::INFINITY, u],
        );
        let want = bivariate::rectangle([f64::NEG_INFINITY, l / n], [0.4, u / n], c / n);
        assert!(
            (got.value - want).abs() <= got.error + 1e-12,
            "{got:?} vs {want}"
        );
    }

    #[test]
    fn lines_tied_at_the_representative_point_take_the_one_that_holds() {
        // Regression: two lower lines with equal offsets and slopes 0 and -1e6 meet at
        // t = 0, which is also the representative point of the piece (t_lo just below 0);
        // the flat line won the tie there and the steep one, which bounds Y for all t > 0,
        // was dropped (value 0.5). Reference: the integral over t > t_lo of
        // phi(t) P(Y >= max(-4e6, 1e6 t - 4e6)), by mpmath 1.3.0 quad at 40 digits with
        // breakpoints at 0 and 4: 0.4999683287581666128.
        let strips = Strips::new(&[0.0, -1e6]);
        let got = strips.probability(-1e-18, f64::INFINITY, &[-4e6, -4e6], &[f64::INFINITY; 2]);
        let want = 0.499_968_328_758_166_6;
        assert!(
            (got.value - want).abs() <= got.error + 1e-15,
            "{got:?} vs {want}"
        );
    }

    #[test]
    fn parallelogram_among_distant_lines_is_a_bivariate_rectangle() {
        // Two strips with slopes c1, c2 and T free form a parallelogram whose probability is
        // the rectangle of U_i = (Y + c_i T) / sqrt(1 + c_i^2), a standard pair with
        // correlation (1 + c1 c2) / (n1 n2) (definition of the bivariate normal). Ten more
        // strips with bands 60 wide on either side cut only where the density is below
        // 1e-300, but every one of them is a line the envelope walk must pass.
        let (c1, c2) = (0.6, -1.7);
        let mut slopes = vec![c1, c2];
        let mut lower = vec![-0.8, -1.1];
        let mut upper = vec![1.3, 0.4];
        for i in 0..10 {
            let c = -2.5 + 0.55 * f64::from(i);
            slopes.push(c);
            let n = c.hypot(1.0);
            lower.push(-60.0 * n);
            upper.push(60.0 * n);
        }
        let strips = Strips::new(&slopes);
        let got = strips.probability(f64::NEG_INFINITY, f64::INFINITY, &lower, &upper);
        let (n1, n2) = (c1.hypot(1.0), c2.hypot(1.0));
        let rho = (1.0 + c1 * c2) / (n1 * n2);
        let want = bivariate::rectangle(
            [lower[0] / n1, lower[1] / n2],
            [upper[0] / n1, upper[1] / n2],
            rho,
        );
        assert!(
            (got.value - want).abs() <= got.error + 1e-14,
            "{got:?} vs {want}"
        );
        assert!(got.error < 1e-12);
    }

    #[test]
    fn cone_through_the_origin_is_an_angle_fraction() {
        // Rotational symmetry of the standard bivariate normal (common practice): a wedge
        // with apex at the origin and opening angle theta has probability theta / (2 pi).
        // Wedge: Y - T >= 0 and Y + T <= 0 (between the lines Y = T and Y = -T, left side),
        // opening angle pi / 2.
        let strips = Strips::new(&[-1.0, 1.0]);
        let got = strips.probability(
            f64::NEG_INFINITY,
            f64::INFINITY,
            &[0.0, f64::NEG_INFINITY],
            &[f64::INFINITY, 0.0],
        );
        assert!((got.value - 0.25).abs() <= got.error + 1e-15, "{got:?}");
        assert!(got.error < 1e-13);
    }
}
