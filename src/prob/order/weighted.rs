//! A weighted sum of channels as the output (a mean, a weighted mean, a linear form),
//! checked by a range check or by difference checks that share a channel.
//!
//! The checks see only differences of the checked channels `S`. For jointly normal
//! readings, the output `y = sum w_i x_i + c` and a difference `x_i - x_j` (`i, j` in `S`)
//! are independent exactly when their covariance is zero (a property of the multivariate
//! normal; for equal weights and noises this is the classical independence of the sample
//! mean from the deviations, Cochran 1934). Their covariance is
//! `w_i s_i^2 - w_j s_j^2` from the channels' own noises plus, for every shared term,
//! `(w . g)(g_i - g_j)` with `g` its gains: zero when `w_i s_i^2` is the same on `S` and
//! every shared term moves `S` alike. So the terms are split:
//!
//! - a shared term that moves every checked channel alike cancels from the checks and only
//!   widens the output: its variance is added to the output's, no integral;
//! - a checked channel whose `w_i s_i^2` exceeds the smallest one on `S` keeps the noise
//!   that evens it and gives the excess (an independent normal) to a term of its own;
//! - the remaining terms (a shared term that moves `S` unequally, those excesses) are
//!   integrated over as in the order-statistic path, at most
//!   [`MAX_SHARED_TERMS`](super::MAX_SHARED_TERMS) of them.
//!
//! Given those, `P(checks pass, y outside the band) = P(pass) P(y outside)`: the pass figure
//! is the order-statistic programme's, the output's a normal tail.

use super::{
    Accuracy, Agreement, Conditional, MAX_SHARED_TERMS, Output, PointResult, Question, Rank,
    SharedGaussian, conditional_figures,
};
use crate::prob::error::ProbError;
use crate::prob::normal;
use crate::prob::tolerance::ROUNDING_REL;

/// Relative difference below which two gains or two products `w s^2` count as equal.
const EQUAL_REL: f64 = 1e-12;

/// The output `sum weights[i] x_i + constant` (one weight per channel, 0 for the unused).
#[derive(Debug, Clone, PartialEq)]
pub struct WeightedSum {
    pub weights: Vec<f64>,
    pub constant: f64,
}

/// The channels split for a weighted-sum output (see the module notes).
pub(super) struct Split {
    /// Own standard deviations, evened on the checked channels.
    pub own_sd: Vec<f64>,
    /// The terms integrated over: gains per channel.
    pub outer: Vec<Vec<f64>>,
    /// The output's variance from the terms that cancel from the checks.
    pub output_variance: f64,
}

/// The checked channels of an agreement, sorted, without repeats.
fn checked(agreement: &Agreement) -> Vec<usize> {
    let mut s: Vec<usize> = match agreement {
        Agreement::Always => Vec::new(),
        Agreement::Range { of, .. } => of.clone(),
        Agreement::Differences(list) => list.iter().flat_map(|d| [d.a, d.b]).collect(),
    };
    s.sort_unstable();
    s.dedup();
    s
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= EQUAL_REL * a.abs().max(b.abs())
}

/// Splits the channels of `g` for the output `sum`, or says why the output is not
/// independent of the checks in this way.
pub(super) fn split(g: &SharedGaussian, q: &Question, sum: &WeightedSum) -> Result<Split, String> {
    let n = g.mean.len();
    if sum.weights.len() != n {
        return Err(format!(
            "{} output weights for {n} channels",
            sum.weights.len()
        ));
    }
    if let Some((j, _, _)) = g.uniform
        && sum.weights[j] != 0.0
    {
        return Err("a uniform channel in a weighted-sum output (not normal)".into());
    }
    if !q.bands.is_empty() {
        return Err(
            "checks of single channels against fixed limits with a weighted-sum output".into(),
        );
    }
    let s = checked(&q.agreement);
    let output_part = |column: &[f64]| -> f64 {
        let dot: f64 = column.iter().zip(&sum.weights).map(|(c, w)| c * w).sum();
        dot * dot
    };
    let mut own_sd = g.own_sd.clone();
    let mut outer = Vec::new();
    let mut output_variance = 0.0;
    if s.is_empty() {
        output_variance = g.shared.iter().map(|c| output_part(c)).sum();
        return Ok(Split {
            own_sd,
            outer,
            output_variance,
        });
    }
    for &i in &s {
        if g.uniform.is_some_and(|u| u.0 == i) {
            return Err("a checked uniform channel".into());
        }
        if !(sum.weights[i] > 0.0 && g.own_sd[i] > 0.0) {
            return Err(format!(
                "checked channel {i} has no positive weight in the output or no noise of its own"
            ));
        }
    }
    let product = |i: usize| sum.weights[i] * g.own_sd[i] * g.own_sd[i];
    let floor = s.iter().map(|&i| product(i)).fold(f64::INFINITY, f64::min);
    for &i in &s {
        if !close(product(i), floor) {
            let kept = floor / sum.weights[i];
            let excess = g.own_sd[i] * g.own_sd[i] - kept;
            own_sd[i] = kept.sqrt();
            let mut column = vec![0.0; n];
            column[i] = excess.max(0.0).sqrt();
            outer.push(column);
        }
    }
    for column in &g.shared {
        let first = column[s[0]];
        if s.iter().all(|&i| close(column[i], first)) {
            output_variance += output_part(column);
        } else {
            outer.push(column.clone());
        }
    }
    if outer.len() > MAX_SHARED_TERMS {
        return Err(format!(
            "{} terms move the checked channels unequally or unevenly (shared terms, noises \
             whose weight times variance differs), more than {MAX_SHARED_TERMS}",
            outer.len()
        ));
    }
    Ok(Split {
        own_sd,
        outer,
        output_variance,
    })
}

/// The four figures given the integrated terms: the checks' pass figure times the output's
/// normal tails.
pub(super) fn point(
    cond: &Conditional,
    q: &Question,
    sum: &WeightedSum,
    output_variance: f64,
    accuracy: &Accuracy,
) -> Result<PointResult, ProbError> {
    let s = checked(&q.agreement);
    // P(pass) and P(fail) with their bounds.
    let (pass, fail, e_pass, evaluations, converged) = match s.first() {
        None => (1.0, 0.0, 0.0, 0, true),
        Some(&first) => {
            let rank = Rank::single(vec![first], 1);
            let pass_question = Question {
                output: Output::Order(rank.clone()),
                safe_lower: f64::NEG_INFINITY,
                safe_upper: f64::INFINITY,
                agreement: q.agreement.clone(),
                bands: Vec::new(),
                detection_needed: 1,
            };
            let r = conditional_figures(cond, &pass_question, &rank, accuracy)?;
            let ([_, _, fail, pass], [_, _, e_fail, e_pass]) = r.point;
            (pass, fail, e_pass.max(e_fail), r.evaluations, r.converged)
        }
    };
    let mut mean = sum.constant;
    let mut variance = output_variance;
    for (j, w) in sum.weights.iter().enumerate() {
        if *w != 0.0 {
            mean += w * cond.mean[j];
            variance += w * w * cond.sd[j] * cond.sd[j];
        }
    }
    let (lo, hi) = (q.safe_lower, q.safe_upper);
    let (outside, inside, tail_error) = if variance > 0.0 {
        let sd = variance.sqrt();
        let (a, b) = ((lo - mean) / sd, (hi - mean) / sd);
        // The tails are good to a few ulps at their arguments (see prob::normal); an
        // argument off by `d` moves a tail by about `(|a| + 1) d` relatively (Mills' ratio),
        // and `d` is a few ulps of the terms summed into it.
        let terms: f64 = sum
            .weights
            .iter()
            .zip(cond.mean)
            .map(|(w, m)| (w * m).abs())
            .sum::<f64>()
            + sum.constant.abs();
        let spread = |x: f64, end: f64| {
            if x.is_finite() {
                (x.abs() + 1.0) * (x.abs() + (terms + end.abs()) / sd)
            } else {
                0.0
            }
        };
        let tail_error = ROUNDING_REL * (4.0 + spread(a, lo).max(spread(b, hi)));
        (
            normal::cdf(a) + normal::sf(b),
            normal::interval(a, b),
            tail_error,
        )
    } else {
        let out = mean < lo || mean > hi;
        (f64::from(u8::from(out)), f64::from(u8::from(!out)), 0.0)
    };
    let figure = |p: f64, t: f64| p * t;
    let bound = |p: f64, t: f64| e_pass * t + (p * t) * (tail_error + ROUNDING_REL);
    Ok(PointResult {
        point: (
            [
                figure(fail, outside),
                figure(pass, outside),
                figure(fail, inside),
                figure(pass, inside),
            ],
            [
                bound(fail, outside),
                bound(pass, outside),
                bound(fail, inside),
                bound(pass, inside),
            ],
        ),
        evaluations,
        converged,
    })
}
