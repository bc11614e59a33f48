//! The nested rule: three or four conditioning variables by adaptive Gauss–Kronrod, with
//! breakpoints where later rows switch on or off.

use crate::prob::error::ProbError;
use crate::prob::estimate::Estimate;
use crate::prob::normal;
use crate::prob::quadrature::{self, QuadratureOptions};
use crate::prob::tolerance;

use super::ErrorTarget;
use super::plan::{Plan, PlanRow, W_CLAMP, bounds, conditional_draw};

/// The interval of one nested variable cut to where the integrand can be non-zero, and
/// breakpoints where later rows switch on or off (see [`Plan::switches`]).
pub(super) struct Switches {
    pub(super) lower: f64,
    pub(super) upper: f64,
    pub(super) points: Vec<f64>,
}

/// Outcome of the nested (three- or four-variable) path.
pub(super) struct NestedOutcome {
    pub(super) value: f64,
    pub(super) error: f64,
    pub(super) evaluations: usize,
    pub(super) converged: bool,
}

impl Plan {
    /// Three (or more) variables, deterministically: the first variable (and for four, the
    /// second inside it) by adaptive Gauss–Kronrod over Genz's uniform variable `u`
    /// (`P = e_1 ∫_0^1 P(rest | w_1(u)) du`, `w_1(u)` the conditional draw), the last two
    /// exact. Between the projections of the (slice) polytope's vertices the integrand is
    /// analytic; they are made interval ends, so that no narrow part of the support and no
    /// kink is left for the Kronrod error estimate to miss.
    ///
    /// `max_evaluations` caps the pair tails evaluated: past it (or when the outer
    /// breakpoints alone promise more) the rule stops with
    /// [`ProbError::BudgetExhausted`], for the caller to go back to the lattice rule.
    pub(super) fn nested(
        &self,
        tol: &ErrorTarget,
        max_evaluations: usize,
    ) -> Result<NestedOutcome, ProbError> {
        let outer_budget = (tol.max_points / 21).clamp(1, tolerance::NESTED_MAX_INTERVALS);
        let mut prefix = Vec::with_capacity(self.variables);
        self.nested_level(
            &mut prefix,
            0.5 * tol.abs,
            0.5 * tol.rel,
            outer_budget,
            max_evaluations,
        )
    }

    /// `P(variables prefix.len().. in their bounds | earlier variables = prefix)` to about
    /// `max(abs, rel * value)`.
    pub(super) fn nested_level(
        &self,
        prefix: &mut Vec<f64>,
        abs: f64,
        rel: f64,
        max_intervals: usize,
        max_evaluations: usize,
    ) -> Result<NestedOutcome, ProbError> {
        let none = NestedOutcome {
            value: 0.0,
            error: 0.0,
            evaluations: 0,
            converged: true,
        };
        let j = prefix.len();
        if self.variables <= j + 2 {
            let e = self.pair_tail(prefix);
            return Ok(NestedOutcome {
                value: e.value,
                error: e.error,
                evaluations: 1,
                converged: true,
            });
        }
        let Some((a, b)) = bounds(&self.groups[j], prefix) else {
            return Ok(none);
        };
        let Some(switches) = self.switches(prefix, a, b) else {
            return Ok(none);
        };
        let (a, b) = (switches.lower, switches.upper);
        let mass = normal::interval(a, b);
        if mass.is_nan() || mass <= 0.0 {
            return Ok(none);
        }
        let prism = if self.last_is_faint() {
            self.vertex_projections(prefix, true)
        } else {
            Vec::new()
        };
        let breakpoints: Vec<f64> = self
            .vertex_projections(prefix, false)
            .into_iter()
            .chain(prism)
            .chain(switches.points)
            .filter(|t| *t > a && *t < b)
            .map(|t| normal::interval(a, t) / mass)
            .filter(|u| u.is_finite() && *u > 0.0 && *u < 1.0)
            .collect();
        // Half of the target for this rule, half for the inner values it integrates. (A
        // subnormal mass would overflow the quotient; the target is then unbounded.)
        let (inner_abs, inner_rel) = ((0.5 * abs / mass).min(f64::MAX), 0.5 * rel);
        // Each interval between breakpoints costs at least one Kronrod rule here, each of
        // whose nodes costs at least one below.
        let nodes = 21 * (breakpoints.len() + 1);
        let least = if self.variables > j + 3 {
            nodes * 21
        } else {
            nodes
        };
        let over_budget = |evaluations: usize| ProbError::BudgetExhausted {
            achieved: f64::INFINITY,
            requested: abs.max(rel),
            points: evaluations,
        };
        if least > max_evaluations {
            return Err(over_budget(least));
        }
        let opts = QuadratureOptions {
            abs_tol: inner_abs,
            rel_tol: 0.5 * rel,
            max_intervals: max_intervals + breakpoints.len(),
        };
        let mut evaluations = 0usize;
        let mut converged = true;
        let (integral, ok) = quadrature::integrate_with_status(
            |u| {
                prefix.push(conditional_draw(a, b, mass, u));
                let inner = self.nested_level(
                    prefix,
                    inner_abs,
                    inner_rel,
                    tolerance::NESTED_INNER_MAX_INTERVALS,
                    max_evaluations.saturating_sub(evaluations),
                );
                prefix.pop();
                let inner = inner?;
                evaluations += inner.evaluations;
                if evaluations > max_evaluations {
                    return Err(over_budget(evaluations));
                }
                converged &= inner.converged;
                Ok(Estimate::new(inner.value, inner.error))
            },
            0.0,
            1.0,
            &breakpoints,
            &opts,
        )?;
        Ok(NestedOutcome {
            value: mass * integral.value,
            error: mass * integral.error,
            evaluations,
            converged: converged && ok,
        })
    }

    /// How the rows of the later variables switch on and off as the variable
    /// `j = prefix.len()` moves through `(a, b)`, for the nested rule.
    ///
    /// Given the earlier variables and `w_j = t`, a later row `lower <= s + c t + R <= upper`
    /// has `R ~ N(0, rest^2)` (the row's weight on the variables after `j`), so its
    /// conditional slab probability is a smoothed step in `t` centred at `(end - s) / c` of
    /// width `rest / |c|`. Where some row's probability is below `Phi(-W_CLAMP)` (under the
    /// smallest double) the integrand is zero to machine precision: the interval is cut
    /// there, which the exact answer does not notice. A step whose steep middle holds less
    /// than [`tolerance::NESTED_NARROW_SWITCH`] of the interval's mass gets breakpoints
    /// around it, and so does a kink where two rows of one later group trade places. Both matter when the directions are nearly parallel (channel sigmas decades
    /// apart) or a step lies in a tail: the integrand then lives on, or changes over, a
    /// sliver of the interval that the Kronrod nodes of the whole interval never sample.
    /// `None` when the cut leaves nothing.
    pub(super) fn switches(&self, prefix: &[f64], a: f64, b: f64) -> Option<Switches> {
        let j = prefix.len();
        let (mut lower, mut upper) = (a, b);
        let mut points = Vec::new();
        let mass = normal::interval(a, b);
        // Breakpoints around a switch centred at `centre` of width `width` when it holds a
        // small share of the interval's mass: the Kronrod nodes are spread by mass (the
        // rule runs over Genz's uniform variable), so a switch that is narrow or far in a
        // tail falls between them.
        let mut narrow = |centre: f64, width: f64, reach: f64| {
            let middle = reach * width;
            let share = normal::interval((centre - middle).max(a), (centre + middle).min(b)) / mass;
            if share < tolerance::NESTED_NARROW_SWITCH {
                for step in tolerance::NESTED_SWITCH_STEPS {
                    points.push(centre - step * width);
                    points.push(centre + step * width);
                }
            }
        };
        for row in self.groups.iter().skip(j + 1).flatten() {
            let c = row.coef.get(j).copied().unwrap_or(0.0);
            if c == 0.0 || !c.is_finite() {
                continue;
            }
            let s: f64 = row.coef.iter().zip(prefix).map(|(v, y)| v * y).sum();
            let own = if row.indicator { 0.0 } else { 1.0 };
            let rest = (row.coef.iter().skip(j + 1).map(|v| v * v).sum::<f64>() + own).sqrt();
            let width = rest / c.abs();
            for (end, is_lower) in [(row.lower, true), (row.upper, false)] {
                if !end.is_finite() {
                    continue;
                }
                let centre = (end - s) / c;
                // The row needs c t above (lower end) or below (upper end) end - s, give or
                // take W_CLAMP * rest; which side of the centre survives depends on c's sign.
                if is_lower == (c > 0.0) {
                    lower = lower.max(centre - W_CLAMP * width);
                } else {
                    upper = upper.min(centre + W_CLAMP * width);
                }
                // a step: judged by its steep middle (the outer steps reach its flat ends)
                narrow(centre, width, tolerance::NESTED_SWITCH_STEPS[1]);
            }
        }
        // Two rows of one later group bound its variable in turn: the bound passes from
        // one to the other where `(coef_a - coef_b) . w = end_a - end_b`, a kink of the
        // integrand blurred only by the variables between `j` and the group (the group's
        // own variable cancels), however steep each row is on its own.
        for group in self.groups.iter().skip(j + 1) {
            let strips: Vec<&PlanRow> = group.iter().filter(|row| !row.indicator).collect();
            for (i, first) in strips.iter().enumerate() {
                for second in &strips[i + 1..] {
                    let diff = |k: usize| {
                        first.coef.get(k).copied().unwrap_or(0.0)
                            - second.coef.get(k).copied().unwrap_or(0.0)
                    };
                    let c = diff(j);
                    if c == 0.0 || !c.is_finite() {
                        continue;
                    }
                    let len = first.coef.len().max(second.coef.len());
                    let s: f64 = (0..j).map(|k| diff(k) * prefix[k]).sum();
                    let rest = (j + 1..len).map(|k| diff(k) * diff(k)).sum::<f64>().sqrt();
                    for ea in [first.lower, first.upper] {
                        for eb in [second.lower, second.upper] {
                            if ea.is_finite() && eb.is_finite() {
                                // a kink: judged by its whole reach, a kink the
                                // nodes straddle is resolved by bisection
                                let reach = tolerance::NESTED_SWITCH_STEPS[2];
                                narrow((ea - eb - s) / c, rest / c.abs(), reach);
                            }
                        }
                    }
                }
            }
        }
        (lower < upper).then_some(Switches {
            lower,
            upper,
            points,
        })
    }

    /// Whether the last variable has, in some row of its group, a weight below
    /// [`tolerance::NESTED_NARROW_SWITCH`] times the row's other coefficients (its rows
    /// are then nearly parallel to it; see [`Plan::vertex_projections`]).
    pub(super) fn last_is_faint(&self) -> bool {
        self.groups.last().is_some_and(|group| {
            group.iter().any(|row| {
                let others = row.coef.iter().map(|c| c * c).sum::<f64>().sqrt();
                !row.indicator && tolerance::NESTED_NARROW_SWITCH * others > 1.0
            })
        })
    }

    /// Whether the vertex enumeration of the nested path stays small: at most
    /// [`tolerance::NESTED_MAX_PLANE_SETS`] sets of planes for the whole polytope.
    pub(super) fn nested_fits(&self) -> bool {
        let k = self.variables;
        let planes: usize = self
            .groups
            .iter()
            .flatten()
            .map(|row| usize::from(row.lower.is_finite()) + usize::from(row.upper.is_finite()))
            .sum();
        let mut sets: u128 = 1;
        for i in 0..k as u128 {
            sets = sets * (planes as u128).saturating_sub(i) / (i + 1);
        }
        // Four variables work too (an inner rule per outer node); the caller tries the
        // lattice rule on them first.
        (k == 3 || k == 4) && sets <= tolerance::NESTED_MAX_PLANE_SETS
    }
}
