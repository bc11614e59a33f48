//! Adaptive Gauss–Kronrod integration of a vector of integrands that share their
//! evaluation points (QUADPACK's globally adaptive scheme, Piessens et al. 1983, applied to
//! `K` components at once).
//!
//! The order-statistic engine ([`crate::prob::order`]) integrates several probabilities whose
//! integrands come out of one dynamic programme per point; integrating them together costs
//! one programme per point instead of one per component.
//!
//! Error estimate of one interval and component: `|K21 - G10|`, the difference of the
//! 21-point Kronrod and the embedded 10-point Gauss value, which bounds the error of the
//! lower-order Gauss value and so, in practice, generously the Kronrod value reported (no
//! QUADPACK heuristic that shrinks it), plus the Kronrod-weighted integral of the
//! integrand's own error bounds and a rounding allowance. The interval whose rule error
//! (without the integrand's own part, which bisection cannot shrink) is furthest from its
//! target is bisected next; the run stops when every component meets
//! `max(abs, rel * |value|)`, when the integrand's own errors alone miss a target and
//! outweigh the rule's part (not converged: the bound is still a bound), or when the
//! interval budget is spent.

use super::error::ProbError;
use super::quadrature::GK21;
use super::tolerance::QUADPACK_ROUNDOFF_REL;

/// One integrand evaluation: `K` values and a bound on the error of each.
pub type VectorPoint<const K: usize> = ([f64; K], [f64; K]);

/// Tolerance and budget of [`integrate`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VectorTolerance<const K: usize> {
    /// Absolute error target of every component.
    pub abs: f64,
    /// Relative error target of each component (0 where only the absolute one counts, e.g.
    /// a probability near 1 from which a small one is later subtracted).
    pub rel: [f64; K],
    /// Most intervals before the run stops with what it has.
    pub max_intervals: usize,
}

/// The integrals with their error bounds, and whether every target was met.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VectorIntegral<const K: usize> {
    /// The integral of each component.
    pub value: [f64; K],
    /// A bound on the error of each component.
    pub error: [f64; K],
    /// True when every component met its target.
    pub converged: bool,
    /// Integrand evaluations spent.
    pub evaluations: usize,
}

/// The integrals of a vector of run-time length with their error bounds ([`integrate_many`]).
#[derive(Debug, Clone, PartialEq)]
pub struct ManyIntegral {
    /// The integral of each component.
    pub value: Vec<f64>,
    /// A bound on the error of each component.
    pub error: Vec<f64>,
    /// True when every component met its target.
    pub converged: bool,
    /// Integrand evaluations spent.
    pub evaluations: usize,
}

/// One integrand evaluation of [`integrate_many`]: the values and a bound on the error of each.
pub type ManyPoint = (Vec<f64>, Vec<f64>);

#[derive(Debug, Clone)]
struct Interval {
    lo: f64,
    hi: f64,
    value: Vec<f64>,
    error: Vec<f64>,
    /// The part of `error` from the integrand's own errors, which bisection cannot shrink.
    own: Vec<f64>,
}

fn rule<F>(f: &mut F, k: usize, lo: f64, hi: f64) -> Result<Interval, ProbError>
where
    F: FnMut(f64) -> Result<ManyPoint, ProbError>,
{
    let centre = 0.5 * lo + 0.5 * hi;
    let half = 0.5 * hi - 0.5 * lo;
    let mut kronrod = vec![0.0; k];
    let mut gauss = vec![0.0; k];
    let mut own = vec![0.0; k];
    let mut magnitude = vec![0.0; k];
    for (i, &(node, wk, wg)) in GK21.iter().enumerate() {
        let xs: &[f64] = if i == 0 {
            &[centre]
        } else {
            &[centre - half * node, centre + half * node]
        };
        for &x in xs {
            let (v, e) = f(x)?;
            if v.len() != k || e.len() != k {
                return Err(ProbError::DimensionMismatch {
                    what: "integrand of a vector integral".into(),
                    expected: k,
                    found: v.len().min(e.len()),
                });
            }
            for c in 0..k {
                if !v[c].is_finite() {
                    return Err(ProbError::NonFinite {
                        what: "integrand value".into(),
                        value: v[c],
                    });
                }
                kronrod[c] += wk * v[c];
                gauss[c] += wg * v[c];
                own[c] += wk * e[c];
                magnitude[c] += wk * v[c].abs();
            }
        }
    }
    let mut value = vec![0.0; k];
    let mut error = vec![0.0; k];
    for c in 0..k {
        own[c] *= half.abs();
        value[c] = kronrod[c] * half;
        error[c] = ((kronrod[c] - gauss[c]).abs() + QUADPACK_ROUNDOFF_REL * magnitude[c])
            * half.abs()
            + own[c];
    }
    Ok(Interval {
        lo,
        hi,
        value,
        error,
        own,
    })
}

/// Integrates `f` over `[a, b]` (finite, `a <= b`), with `breakpoints` inside made
/// interval ends. Deterministic: the same input gives the same bits.
///
/// # Errors
/// [`ProbError::NonFinite`] for non-finite ends or integrand values, and the integrand's
/// own errors.
pub fn integrate<const K: usize, F>(
    mut f: F,
    a: f64,
    b: f64,
    breakpoints: &[f64],
    tol: &VectorTolerance<K>,
) -> Result<VectorIntegral<K>, ProbError>
where
    F: FnMut(f64) -> Result<VectorPoint<K>, ProbError>,
{
    let r = integrate_many(
        |x| f(x).map(|(v, e)| (v.to_vec(), e.to_vec())),
        K,
        a,
        b,
        breakpoints,
        tol.abs,
        &tol.rel,
        tol.max_intervals,
    )?;
    Ok(VectorIntegral {
        value: std::array::from_fn(|c| r.value.get(c).copied().unwrap_or(0.0)),
        error: std::array::from_fn(|c| r.error.get(c).copied().unwrap_or(0.0)),
        converged: r.converged,
        evaluations: r.evaluations,
    })
}

/// [`integrate`] for a vector whose length `k` is known only at run time (a detection
/// curve with one point per sample, say): `rel` gives each component's relative target
/// (missing entries count as 0), `abs` the absolute one of all.
///
/// # Errors
/// As [`integrate`]; [`ProbError::DimensionMismatch`] when `f` returns another length.
#[allow(clippy::too_many_arguments)]
pub fn integrate_many<F>(
    mut f: F,
    k: usize,
    a: f64,
    b: f64,
    breakpoints: &[f64],
    abs: f64,
    rel: &[f64],
    max_intervals: usize,
) -> Result<ManyIntegral, ProbError>
where
    F: FnMut(f64) -> Result<ManyPoint, ProbError>,
{
    for (what, v) in [("lower end", a), ("upper end", b)] {
        if !v.is_finite() {
            return Err(ProbError::NonFinite {
                what: format!("{what} of a vector integral"),
                value: v,
            });
        }
    }
    if b <= a {
        return Ok(ManyIntegral {
            value: vec![0.0; k],
            error: vec![0.0; k],
            converged: true,
            evaluations: 0,
        });
    }
    let rel_of = |c: usize| rel.get(c).copied().unwrap_or(0.0);
    let mut ends: Vec<f64> = breakpoints
        .iter()
        .copied()
        .filter(|p| p.is_finite() && *p > a && *p < b)
        .collect();
    ends.push(a);
    ends.push(b);
    ends.sort_by(f64::total_cmp);
    ends.dedup();
    let mut pieces = Vec::with_capacity(ends.len() + 16);
    let mut evaluations = 0;
    for w in ends.windows(2) {
        pieces.push(rule(&mut f, k, w[0], w[1])?);
        evaluations += 21;
    }
    let budget = max_intervals.max(pieces.len());
    loop {
        let mut value = vec![0.0; k];
        let mut error = vec![0.0; k];
        for p in &pieces {
            for c in 0..k {
                value[c] += p.value[c];
                error[c] += p.error[c];
            }
        }
        let targets: Vec<f64> = (0..k)
            .map(|c| abs.max(rel_of(c) * value[c].abs()))
            .collect();
        let met = (0..k).all(|c| error[c] <= targets[c]);
        // Bisection shrinks only the rule's part of the error: once the integrand's own
        // errors alone miss a target and outweigh the rule's part, more pieces cannot help.
        let futile = !met
            && (0..k).filter(|&c| error[c] > targets[c]).all(|c| {
                let own: f64 = pieces.iter().map(|p| p.own[c]).sum();
                own >= targets[c] && error[c] - own <= own
            });
        if met || futile || pieces.len() >= budget {
            return Ok(ManyIntegral {
                value,
                error,
                converged: met,
                evaluations,
            });
        }
        // The interval with the largest share of a component's missing accuracy.
        let mut worst = None;
        let mut worst_score = 0.0;
        for (i, p) in pieces.iter().enumerate() {
            let width = p.hi - p.lo;
            if width <= 4.0 * f64::EPSILON * p.lo.abs().max(p.hi.abs()).max(f64::MIN_POSITIVE) {
                continue;
            }
            let score = (0..k)
                .map(|c| (p.error[c] - p.own[c]) / targets[c].max(f64::MIN_POSITIVE))
                .fold(0.0, f64::max);
            if score > worst_score {
                worst_score = score;
                worst = Some(i);
            }
        }
        let Some(i) = worst else {
            return Ok(ManyIntegral {
                value,
                error,
                converged: false,
                evaluations,
            });
        };
        let p = pieces.swap_remove(i);
        let mid = 0.5 * p.lo + 0.5 * p.hi;
        pieces.push(rule(&mut f, k, p.lo, mid)?);
        pieces.push(rule(&mut f, k, mid, p.hi)?);
        evaluations += 42;
        // Keep the summation order independent of the bisection history's swaps.
        pieces.sort_by(|x, y| x.lo.total_cmp(&y.lo));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn polynomials_and_a_gaussian_integrate_to_their_closed_forms() {
        // int_0^2 x^3 dx = 4; int_0^2 exp(-x) dx = 1 - e^-2 (calculus).
        let tol = VectorTolerance {
            abs: 1e-14,
            rel: [1e-13; 2],
            max_intervals: 200,
        };
        let r = integrate(
            |x| Ok(([x * x * x, (-x).exp()], [0.0, 0.0])),
            0.0,
            2.0,
            &[0.7],
            &tol,
        )
        .unwrap();
        assert!(r.converged);
        assert!((r.value[0] - 4.0).abs() <= r.error[0].max(1e-14));
        let e = 1.0 - (-2.0f64).exp();
        assert!((r.value[1] - e).abs() <= r.error[1].max(1e-15));
    }

    #[test]
    fn a_step_at_a_breakpoint_is_exact_and_elsewhere_is_bounded() {
        // int_0^1 [x > 1/3] dx = 2/3 (by hand). At a breakpoint the rule sees two smooth
        // pieces; without it, the bisection must still bound the error honestly.
        let tol = VectorTolerance {
            abs: 1e-10,
            rel: [0.0],
            max_intervals: 400,
        };
        let step = |x: f64| Ok(([if x > 1.0 / 3.0 { 1.0 } else { 0.0 }], [0.0]));
        let with = integrate(step, 0.0, 1.0, &[1.0 / 3.0], &tol).unwrap();
        assert!((with.value[0] - 2.0 / 3.0).abs() < 1e-15);
        let without = integrate(step, 0.0, 1.0, &[], &tol).unwrap();
        assert!((without.value[0] - 2.0 / 3.0).abs() <= without.error[0]);
    }
}
