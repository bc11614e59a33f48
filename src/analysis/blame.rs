//! Which channel a detection blames, as polytopes: the classes "detected, and the rule blames
//! channel j" and "detected, none blamed" of `[isolation]` (see [`super::isolation`] for the
//! figures built on them).
//!
//! - `in_every_fired_check`: the blame is a function of which checks fired, so every firing
//!   pattern that detects (each fired check below or above its band, the others inside) is
//!   one polytope per cell of the checks, assigned to the one candidate that takes part in
//!   every fired check, or to "none blamed".
//! - `farthest_from_median`: within one ordering of the candidates the farthest reading from
//!   the median is the lowest or the highest, decided by the sign of
//!   `(x_max - m) - (m - x_min)`; a margin adds the lead over the next reading. Each ordering
//!   is split into those linear pieces and joined with the detecting patterns of the checks.

use crate::model::{CompiledModel, Detection, IsolationRule};
use crate::prob::Estimate;
use crate::prob::polytope::{Band, ErrorTarget, Gaussian, Polytope};

use super::cells::CellSet;
use super::error::AnalysisError;
use super::evaluate::{Pattern, Side, check_states, polytope};
use super::options::AnalysisOptions;

/// The polytopes of "detected, and the rule blames class c": one class per candidate channel
/// (in the order of the model's candidates), then one for "none blamed".
#[derive(Debug, Clone)]
pub struct BlamePlan {
    classes: Vec<Vec<Polytope>>,
    /// The candidate channels (indices into the model's channels).
    pub candidates: Vec<usize>,
    tolerance: ErrorTarget,
}

/// The detected share split by the channel blamed.
#[derive(Debug, Clone, PartialEq)]
pub struct Blame {
    /// `P(detected and candidate i blamed)`, in candidate order.
    pub blamed: Vec<Estimate>,
    /// `P(detected and no channel blamed)`.
    pub declined: Estimate,
}

impl Blame {
    /// `P(detected)`: every class added.
    pub fn detected(&self) -> Estimate {
        self.blamed
            .iter()
            .copied()
            .fold(self.declined, Estimate::add)
    }
}

impl BlamePlan {
    /// Builds the polytopes of every class for the model's isolation rule.
    ///
    /// # Errors
    /// [`AnalysisError::Unsupported`] for a model without an isolation section;
    /// [`AnalysisError::TooLarge`] past the polytope limit of the options.
    pub fn new(model: &CompiledModel, options: &AnalysisOptions) -> Result<Self, AnalysisError> {
        let Some(isolation) = &model.isolation else {
            return Err(AnalysisError::Unsupported {
                message: "the model has no isolation section".into(),
            });
        };
        let cells = CellSet::from_checks(model)?;
        let candidates = isolation.candidates.clone();
        let n = model.channels.len();
        let declined = candidates.len();
        let mut classes: Vec<Vec<Polytope>> = vec![Vec::new(); declined + 1];
        let k = model.checks.len();
        let limit = options.max_polytopes;
        let mut count = 0usize;
        let mut push = |class: usize, p: Polytope| -> Result<(), AnalysisError> {
            count += 1;
            if count > limit {
                return Err(AnalysisError::TooLarge {
                    what: "the isolation classes".into(),
                    unit: "polytopes",
                    limit,
                    found: count,
                });
            }
            if let Some(slot) = classes.get_mut(class) {
                slot.push(p);
            }
            Ok(())
        };
        match isolation.rule {
            IsolationRule::InEveryFiredCheck => {
                for sides in firing_states(k, &model.detection) {
                    let fired: Vec<usize> = (0..k).filter(|&c| sides[c] != Side::Inside).collect();
                    let class = shared_candidate(&fired, &isolation.check_channels, &candidates)
                        .unwrap_or(declined);
                    let pattern = Pattern {
                        output: Side::Free,
                        checks: sides,
                    };
                    for cell in &cells.cells {
                        if let Some(p) = polytope(&cells, cell, &pattern) {
                            push(class, p)?;
                        }
                    }
                }
            }
            IsolationRule::FarthestFromMedian { margin } => {
                let regions = farthest_regions(n, &candidates, margin);
                let patterns = detecting_patterns(k, &model.detection);
                for (rows, class) in &regions {
                    for sides in &patterns {
                        let pattern = Pattern {
                            output: Side::Free,
                            checks: sides.clone(),
                        };
                        for cell in &cells.cells {
                            if let Some(mut p) = polytope(&cells, cell, &pattern) {
                                for (row, band) in rows {
                                    p.push(row.clone(), *band);
                                }
                                push(*class, p)?;
                            }
                        }
                    }
                }
            }
        }
        Ok(Self {
            classes,
            candidates,
            tolerance: options.polytope_tolerance(),
        })
    }

    /// Number of classes (candidates, then "none blamed").
    pub fn class_count(&self) -> usize {
        self.classes.len()
    }

    /// The polytopes of one class.
    pub fn polytopes(&self, class: usize) -> &[Polytope] {
        self.classes.get(class).map_or(&[], Vec::as_slice)
    }

    /// One polytope's probability at `tolerance`.
    ///
    /// # Errors
    /// Engine failures.
    pub fn probability(
        &self,
        g: &Gaussian,
        p: &Polytope,
        tolerance: &ErrorTarget,
    ) -> Result<Estimate, AnalysisError> {
        g.probability_best_effort(p, tolerance)
            .map(|r| r.estimate)
            .map_err(|e| AnalysisError::engine("isolation classes", e))
    }

    /// The probability of each wanted class for `g` (the others are left at zero).
    ///
    /// # Errors
    /// Engine failures.
    pub fn classes_at(
        &self,
        g: &Gaussian,
        wanted: &[usize],
        tolerance: &ErrorTarget,
    ) -> Result<Vec<Estimate>, AnalysisError> {
        let mut out = vec![Estimate::zero(); self.classes.len()];
        for &c in wanted {
            let mut total = Estimate::zero();
            for p in self.polytopes(c) {
                total = total.add(self.probability(g, p, tolerance)?);
            }
            if let Some(slot) = out.get_mut(c) {
                *slot = total.clamp_probability();
            }
        }
        Ok(out)
    }

    /// Every class for `g` at the plan's tolerance.
    ///
    /// # Errors
    /// Engine failures.
    pub fn blame(&self, g: &Gaussian) -> Result<Blame, AnalysisError> {
        let all: Vec<usize> = (0..self.classes.len()).collect();
        Ok(self.split(self.classes_at(g, &all, &self.tolerance)?))
    }

    pub(crate) fn split(&self, mut classes: Vec<Estimate>) -> Blame {
        let declined = classes.pop().unwrap_or_else(Estimate::zero);
        Blame {
            blamed: classes,
            declined,
        }
    }
}

/// Every state of `k` checks (each below, inside or above its band) that detects under
/// `detection`: the fired set is known exactly in each.
pub fn firing_states(k: usize, detection: &Detection) -> Vec<Vec<Side>> {
    let needed = match detection {
        Detection::Any => 1,
        Detection::AtLeast(m) => *m,
    };
    let mut out = Vec::new();
    for sides in check_states(k) {
        let fired = sides.iter().filter(|s| **s != Side::Inside).count();
        if fired >= needed.max(1) {
            out.push(sides);
        }
    }
    out
}

/// Disjoint patterns of `k` checks whose union is "detected": the checks are decided in turn
/// (fired below, fired above, or inside while enough checks remain to reach the count), and
/// once enough have fired the rest are left free.
pub fn detecting_patterns(k: usize, detection: &Detection) -> Vec<Vec<Side>> {
    let needed = match detection {
        Detection::Any => 1,
        Detection::AtLeast(m) => (*m).max(1),
    };
    let mut out = Vec::new();
    let mut current = Vec::with_capacity(k);
    fn walk(
        k: usize,
        needed: usize,
        fired: usize,
        current: &mut Vec<Side>,
        out: &mut Vec<Vec<Side>>,
    ) {
        if fired >= needed {
            let mut sides = current.clone();
            sides.resize(k, Side::Free);
            out.push(sides);
            return;
        }
        let at = current.len();
        if at == k {
            return;
        }
        for side in [Side::Below, Side::Above] {
            current.push(side);
            walk(k, needed, fired + 1, current, out);
            current.pop();
        }
        if k - at > needed - fired {
            current.push(Side::Inside);
            walk(k, needed, fired, current, out);
            current.pop();
        }
    }
    walk(k, needed, 0, &mut current, &mut out);
    out
}

/// The class of the one candidate that takes part in every fired check (`None` when none or
/// several do).
fn shared_candidate(
    fired: &[usize],
    check_channels: &[Vec<usize>],
    candidates: &[usize],
) -> Option<usize> {
    let mut found = None;
    for (class, c) in candidates.iter().enumerate() {
        let in_all = fired
            .iter()
            .all(|f| check_channels.get(*f).is_some_and(|ch| ch.contains(c)));
        if in_all {
            if found.is_some() {
                return None;
            }
            found = Some(class);
        }
    }
    found
}

type Rows = Vec<(Vec<f64>, Band)>;

/// The linear pieces of "the farthest reading from the median leads by more than `margin`",
/// with the class each blames (a candidate, or `candidates.len()` for none).
fn farthest_regions(n: usize, candidates: &[usize], margin: f64) -> Vec<(Rows, usize)> {
    let count = candidates.len();
    let declined = count;
    if count < 3 {
        // Two readings are always equally far from their median.
        return vec![(Vec::new(), declined)];
    }
    let unit = |i: usize| {
        let mut r = vec![0.0; n];
        if let Some(v) = r.get_mut(candidates[i]) {
            *v = 1.0;
        }
        r
    };
    let combine = |terms: &[(f64, usize)]| {
        let mut r = vec![0.0; n];
        for (w, i) in terms {
            if let Some(v) = r.get_mut(candidates[*i]) {
                *v += w;
            }
        }
        r
    };
    let mut out = Vec::new();
    for order in permutations(count) {
        let mut ordering: Rows = Vec::new();
        for w in order.windows(2) {
            let mut row = unit(w[1]);
            for (a, b) in row.iter_mut().zip(unit(w[0])) {
                *a -= b;
            }
            ordering.push((row, Band::above(0.0)));
        }
        let (low, high) = (order[0], order[count - 1]);
        // m: the middle reading, or the mean of the middle two.
        let middle: Vec<(f64, usize)> = if count % 2 == 1 {
            vec![(1.0, order[count / 2])]
        } else {
            vec![(0.5, order[count / 2 - 1]), (0.5, order[count / 2])]
        };
        // lead = (x_high - m) - (m - x_low) = x_high + x_low - 2 m
        let mut lead_terms = vec![(1.0, high), (1.0, low)];
        lead_terms.extend(middle.iter().map(|(w, i)| (-2.0 * w, *i)));
        let lead = combine(&lead_terms);
        let top_gap = combine(&[(1.0, high), (-1.0, order[count - 2])]);
        let bottom_gap = combine(&[(1.0, order[1]), (-1.0, low)]);
        let with = |extra: &[(Vec<f64>, Band)]| {
            let mut rows = ordering.clone();
            rows.extend(extra.iter().cloned());
            rows
        };
        out.push((
            with(&[
                (lead.clone(), Band::above(margin)),
                (top_gap.clone(), Band::above(margin)),
            ]),
            high,
        ));
        out.push((
            with(&[
                (lead.clone(), Band::below(-margin)),
                (bottom_gap.clone(), Band::above(margin)),
            ]),
            low,
        ));
        if margin > 0.0 {
            out.push((
                with(&[(lead.clone(), Band::closed(-margin, margin))]),
                declined,
            ));
            out.push((
                with(&[
                    (lead.clone(), Band::above(margin)),
                    (top_gap, Band::closed(f64::NEG_INFINITY, margin)),
                ]),
                declined,
            ));
            out.push((
                with(&[
                    (lead, Band::below(-margin)),
                    (bottom_gap, Band::closed(f64::NEG_INFINITY, margin)),
                ]),
                declined,
            ));
        }
    }
    out
}

/// Every ordering of `0..k`, in lexicographic order.
fn permutations(k: usize) -> Vec<Vec<usize>> {
    fn walk(rest: &mut Vec<usize>, current: &mut Vec<usize>, out: &mut Vec<Vec<usize>>) {
        if rest.is_empty() {
            out.push(current.clone());
            return;
        }
        for i in 0..rest.len() {
            let v = rest.remove(i);
            current.push(v);
            walk(rest, current, out);
            current.pop();
            rest.insert(i, v);
        }
    }
    let mut out = Vec::new();
    walk(&mut (0..k).collect(), &mut Vec::new(), &mut out);
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn detecting_patterns_cover_each_detecting_state_once() {
        // Counting argument (common practice): every state of k checks with at least m
        // firings matches exactly one pattern, and no other state matches any.
        for k in 1..5 {
            for m in 1..=k {
                let det = Detection::AtLeast(m);
                let pats = detecting_patterns(k, &det);
                for state in check_states(k) {
                    let fired = state.iter().filter(|s| **s != Side::Inside).count();
                    let hits = pats
                        .iter()
                        .filter(|p| {
                            p.iter()
                                .zip(&state)
                                .all(|(a, b)| *a == Side::Free || a == b)
                        })
                        .count();
                    assert_eq!(hits, usize::from(fired >= m), "k={k} m={m} {state:?}");
                }
            }
        }
    }

    #[test]
    fn one_comparison_names_no_channel() {
        // Common practice: a 1oo2 comparator that fires cannot tell which of its two
        // channels is wrong.
        let checks = vec![vec![0, 1]];
        assert_eq!(shared_candidate(&[0], &checks, &[0, 1]), None);
        // Three pairwise comparisons: the two that fire share exactly the faulty channel.
        let checks = vec![vec![0, 1], vec![1, 2], vec![0, 2]];
        assert_eq!(shared_candidate(&[0, 2], &checks, &[0, 1, 2]), Some(0));
        assert_eq!(shared_candidate(&[0, 1, 2], &checks, &[0, 1, 2]), None);
    }
}
