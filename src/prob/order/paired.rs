//! The median of an even count: the output `y = (x_(k) + x_(k+1)) / 2`, the mean of the
//! `k`-th and `(k+1)`-th smallest of its channels.
//!
//! `y < lo` needs `x_(k) = t < lo` (were `t >= lo`, then `x_(k+1) >= t >= lo` and
//! `y >= lo`), and then exactly `x_(k+1) < 2 lo - t`: at least one of the channels above
//! `t` lies in `(t, 2 lo - t)`. Given the shared terms the channels are independent, so
//! with `t` at the density of the channel that is `k`-th,
//! `P(y < lo) = sum_j int_{t < lo} f_j(t) P(exactly k - 1 others below t, the rest above
//! t, at least one of those below 2 lo - t) dt`, the joint density of two neighbouring
//! order statistics integrated over the second (David and Nagaraja 2003, Order Statistics,
//! 3rd ed., section 2.2). The count is the programme of one order statistic with one more
//! state: whether a channel in `(t, 2 lo - t)` was met. No difference of two programmes is
//! taken, so no cancellation.
//!
//! With checks, the agreement's pivot (the range's smallest member or the star's centre at
//! `u`) is integrated outside and `t` inside; when the pivot channel is itself the `k`-th
//! smallest (`t = u`), its term is added apart. `y > hi` is `-y < -hi` for the mirrored
//! channels `-x`, whose middle pair is the same pair.

use super::{Conditional, Pivot, WINDOW_TAIL};
use crate::prob::error::ProbError;
use crate::prob::tolerance::ROUNDING_REL;
use crate::prob::vector_quadrature::{VectorTolerance, integrate};

/// The agreement's pivot at `u` with the weight of each candidate there (a density, or 1
/// for the atom of a channel without spread).
#[derive(Clone, Copy)]
pub(super) struct AgreementAt<'a> {
    pub pivot: &'a Pivot,
    pub u: f64,
    pub weight: &'a dyn Fn(usize) -> f64,
}

/// Who is the output's `k`-th smallest channel.
#[derive(Clone, Copy)]
enum KthChannel<'a> {
    /// A channel at `t` other than the agreement's pivot, with its weight there.
    At(f64, &'a dyn Fn(usize) -> f64),
    /// The agreement's pivot channel itself (`t = u`).
    Pivot,
}

/// What one evaluation needs besides the point: the channels, the output's members, its
/// `k`, and the lower end of the safety band.
pub(super) struct LowerSide<'a> {
    pub cond: &'a Conditional<'a>,
    pub in_output: &'a [bool],
    pub k: usize,
    pub lo: f64,
    /// Firing checks a detection needs (1: any, which confines every channel to its band;
    /// above 1: own bands only, no agreement, see [`LowerSide::counted_density`]).
    pub detection_needed: usize,
}

/// Index of a state: agreement pivot placed (`a`), `k`-th channel placed (`o`), a channel
/// in `(t, 2 lo - t)` met (`seen`), and the count below `t` (`c < k`).
fn slot(k: usize, a: usize, o: usize, seen: usize, c: usize) -> usize {
    ((a * 2 + o) * 2 + seen) * k + c
}

impl LowerSide<'_> {
    /// The density at the point (`u` of the agreement, `t` of the `k`-th channel) of
    /// "every check passes, the `k`-th channel there, `y < lo`".
    fn density(&self, agreement: Option<AgreementAt>, kth: KthChannel) -> f64 {
        if self.detection_needed > 1 && agreement.is_none() {
            return self.counted_density(kth);
        }
        let (k, lo) = (self.k, self.lo);
        let t = match kth {
            KthChannel::At(t, _) => t,
            KthChannel::Pivot => agreement.map_or(f64::NAN, |a| a.u),
        };
        // (NaN too: no pivot to sit at)
        if t.is_nan() || t >= lo {
            return 0.0;
        }
        let far_from = 2.0 * lo - t;
        let mut state = vec![0.0; 8 * k];
        let mut next = vec![0.0; 8 * k];
        // Without an agreement its pivot counts as placed from the start.
        let a0 = usize::from(agreement.is_none());
        state[slot(k, a0, 0, 0, 0)] = 1.0;
        let n = self.cond.mean.len();
        for j in 0..n {
            let counted = self.in_output[j];
            let relative = agreement.and_then(|a| a.pivot.interval_of[j]);
            let interval = self
                .cond
                .confined(j, relative, agreement.map_or(0.0, |a| a.u));
            if !counted && interval.is_none() {
                continue;
            }
            let (lower, upper) = interval.unwrap_or((f64::NEG_INFINITY, f64::INFINITY));
            next.iter_mut().for_each(|x| *x = 0.0);
            // As an ordinary channel.
            if counted {
                let below = self.cond.between(j, lower, upper.min(t));
                let near = self.cond.between(j, lower.max(t), upper.min(far_from));
                let far = self.cond.between(j, lower.max(far_from), upper);
                for a in 0..2 {
                    for o in 0..2 {
                        for c in 0..k {
                            let unseen = state[slot(k, a, o, 0, c)];
                            let seen = state[slot(k, a, o, 1, c)];
                            next[slot(k, a, o, 0, c)] += unseen * far;
                            next[slot(k, a, o, 1, c)] += seen * (near + far) + unseen * near;
                            if c + 1 < k {
                                next[slot(k, a, o, 0, c + 1)] += unseen * below;
                                next[slot(k, a, o, 1, c + 1)] += seen * below;
                            }
                        }
                    }
                }
            } else {
                let inside = self.cond.between(j, lower, upper);
                for (x, s) in next.iter_mut().zip(&state) {
                    *x = s * inside;
                }
            }
            // As the agreement's pivot, at u.
            if let Some(agr) = agreement
                && agr.pivot.is_candidate[j]
                && self.cond.band_admits(j, agr.u)
            {
                let w = (agr.weight)(j);
                if w != 0.0 {
                    match kth {
                        KthChannel::Pivot if counted => {
                            for seen in 0..2 {
                                for c in 0..k {
                                    next[slot(k, 1, 1, seen, c)] +=
                                        w * state[slot(k, 0, 0, seen, c)];
                                }
                            }
                        }
                        KthChannel::Pivot => {}
                        KthChannel::At(..) => {
                            let u = agr.u;
                            for o in 0..2 {
                                for seen in 0..2 {
                                    for c in 0..k {
                                        let from = w * state[slot(k, 0, o, seen, c)];
                                        if !counted || (u >= t && u >= far_from) {
                                            next[slot(k, 1, o, seen, c)] += from;
                                        } else if u < t {
                                            if c + 1 < k {
                                                next[slot(k, 1, o, seen, c + 1)] += from;
                                            }
                                        } else {
                                            next[slot(k, 1, o, 1, c)] += from;
                                        }
                                    }
                                }
                            }
                        }
                    }
                }
            }
            // As the k-th channel, at t.
            if let KthChannel::At(_, weight) = kth
                && counted
                && lower <= t
                && t <= upper
            {
                let w = weight(j);
                if w != 0.0 {
                    for a in 0..2 {
                        for seen in 0..2 {
                            for c in 0..k {
                                next[slot(k, a, 1, seen, c)] += w * state[slot(k, a, 0, seen, c)];
                            }
                        }
                    }
                }
            }
            std::mem::swap(&mut state, &mut next);
        }
        // (In the combined case the pivot's transition set both flags.)
        state[slot(k, 1, 1, 1, k - 1)]
    }

    /// The density at `t` of the `k`-th channel of "fewer than `detection_needed` own bands
    /// fire, the `k`-th channel at `t`, `y < lo`", for detection on several firing checks of
    /// single channels (no agreement). The programme of [`LowerSide::density`] with one more
    /// saturating count, the bands that fired: each channel splits into its part inside its
    /// band (as before) and outside it (one more firing); the `k`-th channel at `t` fires
    /// when `t` is outside its band.
    fn counted_density(&self, kth: KthChannel) -> f64 {
        let (k, lo, kd) = (self.k, self.lo, self.detection_needed);
        let KthChannel::At(t, weight) = kth else {
            return 0.0;
        };
        if t.is_nan() || t >= lo {
            return 0.0;
        }
        let far_from = 2.0 * lo - t;
        let at = |o: usize, seen: usize, c: usize, f: usize| ((o * 2 + seen) * k + c) * kd + f;
        let mut state = vec![0.0; 4 * k * kd];
        let mut next = vec![0.0; 4 * k * kd];
        state[0] = 1.0;
        for j in 0..self.cond.mean.len() {
            let counted = self.in_output[j];
            let band = self.cond.band.get(j).copied().flatten();
            if !counted && band.is_none() {
                continue;
            }
            let (l, h) = band.unwrap_or((f64::NEG_INFINITY, f64::INFINITY));
            let seg = |a: f64, b: f64| {
                if a < b {
                    self.cond.between(j, a, b)
                } else {
                    0.0
                }
            };
            // P(x_j in [a, b] and outside the band).
            let point = self.cond.is_point(j);
            let out = |a: f64, b: f64| {
                if band.is_none() {
                    0.0
                } else if point {
                    self.cond.between(j, a, b) - self.cond.between(j, a.max(l), b.min(h))
                } else {
                    seg(a, b.min(l)) + seg(a.max(h), b)
                }
            };
            next.iter_mut().for_each(|x| *x = 0.0);
            if counted {
                let inside = [
                    self.cond.between(j, l, h.min(t)),
                    self.cond.between(j, l.max(t), h.min(far_from)),
                    self.cond.between(j, l.max(far_from), h),
                ];
                let outside = [
                    out(f64::NEG_INFINITY, t),
                    out(t, far_from),
                    out(far_from, f64::INFINITY),
                ];
                for (fired, [below, near, far]) in [(0, inside), (1, outside)] {
                    for o in 0..2 {
                        for c in 0..k {
                            for f in 0..kd {
                                if f + fired >= kd {
                                    continue;
                                }
                                let g = f + fired;
                                let unseen = state[at(o, 0, c, f)];
                                let seen = state[at(o, 1, c, f)];
                                next[at(o, 0, c, g)] += unseen * far;
                                next[at(o, 1, c, g)] += seen * (near + far) + unseen * near;
                                if c + 1 < k {
                                    next[at(o, 0, c + 1, g)] += unseen * below;
                                    next[at(o, 1, c + 1, g)] += seen * below;
                                }
                            }
                        }
                    }
                }
                // As the k-th channel, at t.
                let w = weight(j);
                if w != 0.0 {
                    let fired = usize::from(t < l || t > h);
                    for seen in 0..2 {
                        for c in 0..k {
                            for f in 0..kd {
                                if f + fired < kd {
                                    next[at(1, seen, c, f + fired)] += w * state[at(0, seen, c, f)];
                                }
                            }
                        }
                    }
                }
            } else {
                let inside = self.cond.between(j, l, h);
                let outside = out(f64::NEG_INFINITY, f64::INFINITY);
                for o in 0..2 {
                    for seen in 0..2 {
                        for c in 0..k {
                            for f in 0..kd {
                                let s = state[at(o, seen, c, f)];
                                next[at(o, seen, c, f)] += s * inside;
                                if f + 1 < kd {
                                    next[at(o, seen, c, f + 1)] += s * outside;
                                }
                            }
                        }
                    }
                }
            }
            std::mem::swap(&mut state, &mut next);
        }
        (0..kd).map(|f| state[at(1, 1, k - 1, f)]).sum()
    }

    /// Whether the checks passing with the pivot at `u` confine every member of the output
    /// below `lo` (each is constrained, and its interval ends below `lo`).
    fn all_below(&self, agr: AgreementAt) -> bool {
        self.in_output.iter().enumerate().all(|(j, counted)| {
            !counted || agr.pivot.interval_of[j].is_some_and(|(_, beta)| agr.u + beta < self.lo)
        })
    }

    /// The density at `u` of "every check passes" (no counting): one candidate at `u`,
    /// every constrained channel in its interval.
    fn pass_density(&self, agr: AgreementAt) -> f64 {
        let (mut free, mut placed) = (1.0, 0.0);
        for j in 0..self.cond.mean.len() {
            let Some((a, b)) = self.cond.confined(j, agr.pivot.interval_of[j], agr.u) else {
                continue;
            };
            let inside = self.cond.between(j, a, b);
            let w = if agr.pivot.is_candidate[j] && self.cond.band_admits(j, agr.u) {
                (agr.weight)(j)
            } else {
                0.0
            };
            placed = placed * inside + free * w;
            free *= inside;
        }
        placed
    }

    /// Where the `k`-th channel can sit below `lo` (with the agreement at `u`): the union of
    /// the members' windows and intervals, clipped at `lo`; `None` when empty.
    fn kth_range(&self, agreement: Option<AgreementAt>) -> Option<(f64, f64)> {
        let (mut from, mut to) = (f64::INFINITY, f64::NEG_INFINITY);
        for (j, counted) in self.in_output.iter().enumerate() {
            if !counted {
                continue;
            }
            let Some((mut a, mut b)) = self.cond.window(j) else {
                continue;
            };
            if let Some((al, be)) =
                agreement.and_then(|g| g.pivot.interval_of[j].map(|(al, be)| (g.u + al, g.u + be)))
            {
                a = a.max(al);
                b = b.min(be);
            }
            if a < b {
                from = from.min(a);
                to = to.max(b);
            }
        }
        let to = to.min(self.lo);
        (from < to).then_some((from, to))
    }

    /// Values of `t` where the integrand steps or kinks.
    fn kth_breaks(&self, agreement: Option<AgreementAt>) -> Vec<f64> {
        let mut levels = vec![self.lo];
        for (l, h) in self.cond.band.iter().flatten() {
            levels.extend([*l, *h]);
        }
        if let Some(g) = agreement {
            levels.push(g.u);
            for &(_, al, be) in &g.pivot.intervals {
                levels.extend([g.u + al, g.u + be]);
            }
        }
        for j in 0..self.cond.mean.len() {
            if self.cond.is_point(j) {
                levels.push(self.cond.mean[j]);
            }
        }
        if let Some((_, a, b)) = self.cond.uniform {
            levels.extend([a, b]);
        }
        levels.retain(|x| x.is_finite());
        let mirrored: Vec<f64> = levels.iter().map(|x| 2.0 * self.lo - x).collect();
        levels.extend(mirrored);
        levels.sort_by(f64::total_cmp);
        levels.dedup();
        levels
    }

    /// `P(y < lo)` jointly with the agreement at `u` as a density in `u` (or alone): the
    /// atoms of channels without spread, the integral over `t`, and (with an agreement) the
    /// pivot as the `k`-th channel. Returns the value, its error bound and evaluations.
    pub fn given_agreement(
        &self,
        agreement: Option<AgreementAt>,
        abs: f64,
        rel: f64,
        max_intervals: usize,
    ) -> Result<(f64, f64, usize, bool), ProbError> {
        if let Some(agr) = agreement
            && self.all_below(agr)
        {
            // Every member of the output lies below lo whenever the checks pass: y < lo.
            let d = self.pass_density(agr);
            return Ok((d, d * ROUNDING_REL, 1, true));
        }
        let mut value = 0.0;
        let mut error = 0.0;
        let mut evaluations = 0;
        let mut converged = true;
        for j in 0..self.cond.mean.len() {
            if self.in_output[j] && self.cond.is_point(j) {
                let only = move |i: usize| f64::from(u8::from(i == j));
                let d = self.density(agreement, KthChannel::At(self.cond.mean[j], &only));
                value += d;
                error += d * ROUNDING_REL;
                evaluations += 1;
            }
        }
        if agreement.is_some() {
            let d = self.density(agreement, KthChannel::Pivot);
            value += d;
            error += d * ROUNDING_REL;
            evaluations += 1;
        }
        if let Some((from, to)) = self.kth_range(agreement) {
            let density = |i: usize, t: f64| self.cond.density(i, t);
            let tol = VectorTolerance {
                abs,
                rel: [rel],
                max_intervals,
            };
            let r = integrate(
                |t| {
                    let w = |i: usize| density(i, t);
                    let d = self.density(agreement, KthChannel::At(t, &w));
                    Ok(([d], [d * ROUNDING_REL]))
                },
                from,
                to,
                &self.kth_breaks(agreement),
                &tol,
            )?;
            let windows = self.in_output.iter().filter(|c| **c).count() as f64;
            value += r.value[0];
            error += r.error[0] + windows * WINDOW_TAIL;
            evaluations += r.evaluations;
            converged &= r.converged;
        }
        Ok((value, error, evaluations, converged))
    }
}
