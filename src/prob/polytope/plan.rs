//! The conditioning plan: the rows made lower-trapezoidal, pivoted by Genz and Bretz, and
//! the sequential-conditioning integrand (the lattice rule's, with the last two variables
//! exact).

use crate::prob::estimate::Estimate;
use crate::prob::lattice;
use crate::prob::normal;
use crate::prob::strip::Strips;
use crate::prob::tolerance;

use super::MAX_ROWS;
use super::reduction::{Direction, UnitRow};

/// One row of the lower-trapezoidal system, divided by its leading coefficient:
/// `lower <= w_j + coef . w[..j] <= upper`, or an indicator on `w[..j]` when its leading
/// coefficient vanished.
#[derive(Debug, Clone)]
pub(super) struct PlanRow {
    pub(super) coef: Vec<f64>,
    pub(super) lower: f64,
    pub(super) upper: f64,
    pub(super) indicator: bool,
}

/// The sequential-conditioning integrand: variables in order, each with its rows.
#[derive(Debug, Clone)]
pub(super) struct Plan {
    pub(super) variables: usize,
    pub(super) groups: Vec<Vec<PlanRow>>,
    /// Rows that joined a group with a small residual direction dropped, as tilt on their
    /// ends: the error that dropping adds (see [`Plan::neglect_error`]).
    pub(super) neglected: Vec<UnitRow>,
    /// The slopes on the second-to-last variable of the last group's strip rows (every row
    /// of that group that is not an indicator), for the exact pair tail.
    pub(super) last_strips: Strips,
}

/// `E[Z | a < Z < b]` for standard normal `Z`, with a finite fallback when the interval
/// has no representable mass.
pub(super) fn truncated_mean(a: f64, b: f64) -> f64 {
    let fallback = || match (a.is_finite(), b.is_finite()) {
        (true, true) => 0.5 * (a + b),
        (true, false) => a,
        (false, true) => b,
        (false, false) => 0.0,
    };
    if a >= b {
        return fallback();
    }
    let mass = normal::interval(a, b);
    if mass.is_nan() || mass <= f64::MIN_POSITIVE * 1e10 {
        return fallback();
    }
    let m = (normal::pdf(a) - normal::pdf(b)) / mass;
    if m.is_finite() {
        m.clamp(a, b)
    } else {
        fallback()
    }
}

/// Largest magnitude of a conditioning variable (the normal quantile of the smallest
/// positive double is about -38.5).
pub(super) const W_CLAMP: f64 = 38.5;

/// A standard normal variable conditioned on `(a, b)` (mass `mass`) at uniform `u`,
/// computed from the tail it lies in so that extreme intervals stay accurate.
pub(super) fn conditional_draw(a: f64, b: f64, mass: f64, u: f64) -> f64 {
    let w = if a >= 0.0 {
        -normal::quantile(normal::sf(b) + (1.0 - u) * mass)
    } else if b <= 0.0 {
        normal::quantile(normal::cdf(a) + u * mass)
    } else {
        let below = normal::cdf(a) + u * mass;
        if below <= 0.5 {
            normal::quantile(below)
        } else {
            -normal::quantile(normal::sf(b) + (1.0 - u) * mass)
        }
    };
    if w.is_nan() {
        truncated_mean(a, b)
    } else {
        w.clamp(a.max(-W_CLAMP), b.min(W_CLAMP))
    }
}

impl Plan {
    /// Triangularise the unit rows by Householder reflections of `z`, choosing at each
    /// step the row with the smallest conditional probability given the earlier variables
    /// at their truncated means (Genz and Bretz 2009, sec. 4.1.3).
    pub(super) fn build(rows: &[UnitRow], rank: usize) -> Self {
        let m = rows.len();
        let mut w: Vec<Direction> = rows.iter().map(|row| row.dir.clone()).collect();
        let mut remaining: Vec<usize> = (0..m).collect();
        let mut means: Vec<f64> = Vec::new();
        let mut groups: Vec<Vec<usize>> = Vec::new();
        let mut neglected: Vec<UnitRow> = Vec::new();
        for j in 0..rank {
            if remaining.is_empty() {
                break;
            }
            // Pivot choice.
            let mut best = (f64::INFINITY, 0usize);
            for (pos, &i) in remaining.iter().enumerate() {
                let s: f64 = w[i][..j].iter().zip(means.iter()).map(|(c, y)| c * y).sum();
                let d = w[i][j..].iter().map(|v| v * v).sum::<f64>().sqrt();
                let a = (rows[i].lower - s) / d;
                let b = (rows[i].upper - s) / d;
                let p = normal::interval(a, b);
                if p < best.0 {
                    best = (p, pos);
                }
            }
            let pivot = remaining.remove(best.1);
            // Householder reflection of columns j.. mapping the pivot row onto +d e_j.
            let x: Direction = w[pivot][j..].iter().copied().collect();
            let d = x.iter().map(|v| v * v).sum::<f64>().sqrt();
            let alpha = if x[0] >= 0.0 { -d } else { d };
            let mut v = x.clone();
            v[0] -= alpha;
            let vv: f64 = v.iter().map(|t| t * t).sum();
            let flip = alpha < 0.0;
            for &q in remaining.iter().chain(std::iter::once(&pivot)) {
                if vv > 0.0 {
                    let dot: f64 = v.iter().zip(w[q][j..].iter()).map(|(a, b)| a * b).sum();
                    let f = 2.0 * dot / vv;
                    for (wq, vk) in w[q][j..].iter_mut().zip(v.iter()) {
                        *wq -= f * vk;
                    }
                }
                if flip {
                    w[q][j] = -w[q][j];
                }
            }
            w[pivot][j] = d;
            for t in w[pivot][j + 1..].iter_mut() {
                *t = 0.0;
            }
            let mut group = vec![pivot];
            remaining.retain(|&q| {
                let res = w[q][j + 1..].iter().map(|t| t * t).sum::<f64>().sqrt();
                if res <= tolerance::LINEAR_DEPENDENCE_ABS {
                    group.push(q);
                    if res > 0.0 {
                        // Dropping `res * Z` from the row moves its ends by that much, on
                        // average E|Z| = sqrt(2 / pi) times res.
                        neglected.push(UnitRow {
                            dir: Direction::new(),
                            lower: rows[q].lower,
                            upper: rows[q].upper,
                            slack: 0.0,
                            tilt: normal::MEAN_ABS * res,
                            dir_error: res,
                        });
                    }
                    false
                } else {
                    true
                }
            });
            for &q in &group {
                for t in w[q][j + 1..].iter_mut() {
                    *t = 0.0;
                }
            }
            // Truncated mean of the new variable over its combined bounds.
            let (mut a, mut b) = (f64::NEG_INFINITY, f64::INFINITY);
            for &q in &group {
                let lead = w[q][j];
                if lead == 0.0 {
                    continue;
                }
                let s: f64 = w[q][..j].iter().zip(means.iter()).map(|(c, y)| c * y).sum();
                let (lo, hi) = ((rows[q].lower - s) / lead, (rows[q].upper - s) / lead);
                let (lo, hi) = if lead > 0.0 { (lo, hi) } else { (hi, lo) };
                a = a.max(lo);
                b = b.min(hi);
            }
            means.push(truncated_mean(a, b));
            groups.push(group);
        }
        let groups: Vec<Vec<PlanRow>> = groups
            .iter()
            .enumerate()
            .map(|(j, group)| {
                group
                    .iter()
                    .map(|&q| {
                        let lead = w[q][j];
                        if lead == 0.0 {
                            PlanRow {
                                coef: w[q][..j].to_vec(),
                                lower: rows[q].lower,
                                upper: rows[q].upper,
                                indicator: true,
                            }
                        } else if lead > 0.0 {
                            PlanRow {
                                coef: w[q][..j].iter().map(|c| c / lead).collect(),
                                lower: rows[q].lower / lead,
                                upper: rows[q].upper / lead,
                                indicator: false,
                            }
                        } else {
                            PlanRow {
                                coef: w[q][..j].iter().map(|c| c / lead).collect(),
                                lower: rows[q].upper / lead,
                                upper: rows[q].lower / lead,
                                indicator: false,
                            }
                        }
                    })
                    .collect()
            })
            .collect();
        let variables = groups.len();
        let slopes: Vec<f64> = if variables >= 2 {
            groups[variables - 1]
                .iter()
                .filter(|row| !row.indicator)
                .map(|row| row.coef.get(variables - 2).copied().unwrap_or(0.0))
                .collect()
        } else {
            Vec::new()
        };
        Plan {
            variables,
            groups,
            neglected,
            last_strips: Strips::new(&slopes),
        }
    }

    /// The last two variables integrated exactly given the earlier ones `w` (length
    /// `variables - 2`): `P(second-to-last and last variable in their bounds | w)`, the
    /// polygon probability of [`crate::prob::strip`].
    pub(super) fn pair_tail(&self, w: &[f64]) -> Estimate {
        let v = self.variables;
        if v < 2 {
            return Estimate::new(self.first_factor(), 0.0);
        }
        let (jt, jy) = (v - 2, v - 1);
        let Some((mut a, mut b)) = bounds(&self.groups[jt], &w[..jt.min(w.len())]) else {
            return Estimate::zero();
        };
        let last = &self.groups[jy];
        // On the stack: this runs for every point of the integration. A polytope has at
        // most MAX_ROWS rows (checked on entry), so every strip fits.
        let mut lower = [0.0; MAX_ROWS];
        let mut upper = [0.0; MAX_ROWS];
        let mut strips = 0;
        for row in last {
            let s: f64 = row.coef.iter().zip(w.iter()).map(|(c, y)| c * y).sum();
            let c = row.coef.get(jt).copied().unwrap_or(0.0);
            if row.indicator {
                // lower <= s + c t <= upper restricts the second-to-last variable t.
                if c == 0.0 {
                    if !(row.lower <= s && s <= row.upper) {
                        return Estimate::zero();
                    }
                    continue;
                }
                let (lo, hi) = ((row.lower - s) / c, (row.upper - s) / c);
                let (lo, hi) = if c > 0.0 { (lo, hi) } else { (hi, lo) };
                a = a.max(lo);
                b = b.min(hi);
            } else if strips < MAX_ROWS {
                lower[strips] = row.lower - s;
                upper[strips] = row.upper - s;
                strips += 1;
            }
        }
        if a >= b {
            return Estimate::zero();
        }
        self.last_strips
            .probability(a, b, &lower[..strips], &upper[..strips])
    }

    /// Bound on what the residual directions dropped by [`Plan::build`] can change (each
    /// as a random shift of its row's ends).
    pub(super) fn neglect_error(&self) -> f64 {
        self.neglected.iter().map(UnitRow::tilt_error).sum()
    }

    /// The probability of the first variable's interval (the whole answer when there is
    /// only one variable).
    pub(super) fn first_factor(&self) -> f64 {
        let w: [f64; 0] = [];
        match self.groups.first() {
            Some(group) => match bounds(group, &w) {
                Some((a, b)) => normal::interval(a, b),
                None => 0.0,
            },
            None => 1.0,
        }
    }

    /// The integrand at a point `x` of the unit cube of dimension `variables - 1`.
    pub(super) fn eval(&self, x: &[f64], w: &mut [f64]) -> f64 {
        let mut prod = 1.0;
        for (j, group) in self.groups.iter().enumerate() {
            let Some((a, b)) = bounds(group, &w[..j]) else {
                return 0.0;
            };
            let mass = normal::interval(a, b);
            prod *= mass;
            if prod.is_nan() || prod <= 0.0 {
                return 0.0;
            }
            if j + 1 < self.variables {
                w[j] = conditional_draw(a, b, mass, x[j]);
            }
        }
        prod
    }

    /// The integrand with the last two variables exact, at a point `x` of the unit cube of
    /// dimension `variables - 2`.
    pub(super) fn eval_with_pair(&self, x: &[f64], w: &mut [f64]) -> f64 {
        let head = self.variables.saturating_sub(2);
        let mut prod = 1.0;
        for (j, group) in self.groups.iter().enumerate().take(head) {
            let Some((a, b)) = bounds(group, &w[..j]) else {
                return 0.0;
            };
            let mass = normal::interval(a, b);
            prod *= mass;
            if prod.is_nan() || prod <= 0.0 {
                return 0.0;
            }
            w[j] = conditional_draw(a, b, mass, x[j]);
        }
        prod * self.pair_tail(&w[..head]).value
    }

    /// A lattice run for this plan: over `variables - 2` dimensions with the last two
    /// variables exact (`exact_pair`, four or more variables), else `variables - 1`.
    pub(super) fn lattice_run(&self, seed: u64, exact_pair: bool) -> lattice::Run {
        let dim = if exact_pair && self.variables >= 4 {
            self.variables - 2
        } else {
            self.variables - 1
        };
        lattice::Run::new(dim, seed, lattice::Periodisation::Polynomial)
    }

    /// Go on with a run from [`Plan::lattice_run`] (the same `exact_pair`) up to
    /// `max_points` in all.
    pub(super) fn lattice_extend<T: Fn(f64) -> f64>(
        &self,
        run: &mut lattice::Run,
        max_points: usize,
        target: T,
        exact_pair: bool,
    ) -> lattice::Outcome {
        let mut w = vec![0.0; self.variables];
        if exact_pair && self.variables >= 4 {
            run.extend(max_points, target, |x| self.eval_with_pair(x, &mut w))
        } else {
            run.extend(max_points, target, |x| self.eval(x, &mut w))
        }
    }
}

/// Combined bounds `(a, b)` of a variable given the earlier ones, `None` when empty.
pub(super) fn bounds(group: &[PlanRow], w: &[f64]) -> Option<(f64, f64)> {
    let (mut a, mut b) = (f64::NEG_INFINITY, f64::INFINITY);
    for row in group {
        let s: f64 = row.coef.iter().zip(w.iter()).map(|(c, y)| c * y).sum();
        if row.indicator {
            if !(row.lower <= s && s <= row.upper) {
                return None;
            }
            continue;
        }
        a = a.max(row.lower - s);
        b = b.min(row.upper - s);
    }
    if a < b { Some((a, b)) } else { None }
}
