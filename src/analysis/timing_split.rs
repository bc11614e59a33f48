//! One scenario of the figures over time split into the terms that stay constant over the
//! interval and those drawn anew every sample (`x = m + A c + d F + e`, see
//! [`super::timing`]): the constant terms rank-reduced by an eigen-decomposition, the fresh
//! part as one gaussian, and the per-sample gaussian given the constant terms.

use nalgebra::{DMatrix, SymmetricEigen};

use crate::model::{CompiledFault, CompiledModel, FaultMode, Timing};
use crate::prob::polytope::Gaussian;

use super::error::AnalysisError;
use super::timing::{CONSTANT_RANK_REL, GAUSSIAN_REACH, MAX_CONSTANT_TERMS, NARROW_STEP};
use super::uniform::push_steps;
/// The samples of one scenario: the per-sample gaussian given the constant terms.
#[derive(Debug, Clone)]
pub(super) struct Split {
    /// The fresh part with the mean at zero constant terms.
    pub(super) fresh: Gaussian,
    /// Standard deviation of each channel's fresh part.
    pub(super) fresh_sd: Vec<f64>,
    /// Whether the fresh parts of the channels are independent (diagonal covariance).
    pub(super) fresh_diagonal: bool,
    /// How each constant term (a standard normal) moves the channels.
    pub(super) constant: Vec<Vec<f64>>,
    /// How a non-gaussian amplitude moves the channels.
    pub(super) direction: Vec<f64>,
    /// The band ends of the safety requirement and of every check, where the figures of a
    /// sample step as the constant terms move a channel across them.
    pub(super) levels: Vec<f64>,
}

impl Split {
    /// The split of a scenario: the fault-free channels, or a fault site with (for a gaussian
    /// amplitude) its mean and sigma folded in.
    pub(super) fn new(
        model: &CompiledModel,
        timing: &Timing,
        fault: Option<&CompiledFault>,
        gaussian: Option<(f64, f64)>,
    ) -> Result<Self, AnalysisError> {
        let n = model.channels.len();
        let own = DMatrix::from_fn(n, n, |i, j| {
            model.own_sigmas[i] * model.own_sigmas[j] * model.own_correlation[(i, j)]
        });
        let mut fresh = own.clone();
        let mut constant = DMatrix::zeros(n, n);
        for (j, sigma) in model.source_sigmas.iter().enumerate() {
            let g = model.source_gains.column(j);
            let term = (g * g.transpose()) * (sigma * sigma);
            if timing.fresh_sources.get(j).copied().unwrap_or(false) {
                fresh += term;
            } else {
                constant += term;
            }
        }
        let held: Vec<usize> = (0..n)
            .filter(|i| timing.constant_channels.get(*i).copied().unwrap_or(false))
            .collect();
        if !held.is_empty() {
            // The held channels' own noise and what it implies for the others through their
            // correlations: Cov(e, e_C) Cov(e_C)^+ Cov(e_C, e).
            let cross = DMatrix::from_fn(n, held.len(), |i, k| own[(i, held[k])]);
            let inner = DMatrix::from_fn(held.len(), held.len(), |a, b| own[(held[a], held[b])]);
            let pinv = inner
                .pseudo_inverse(1e-12)
                .map_err(|e| AnalysisError::Unsupported {
                    message: format!("the own noise of the constant channels cannot be split: {e}"),
                })?;
            let part = &cross * pinv * cross.transpose();
            constant += &part;
            fresh -= part;
        }
        let mut mean = model.mean.clone();
        let mut direction = vec![0.0; n];
        if let Some(f) = fault {
            match &f.mode {
                FaultMode::Add { direction: d } => direction.clone_from(d),
                FaultMode::Replace { channel, gain } => {
                    let i = *channel;
                    if i >= n {
                        return Err(AnalysisError::InconsistentModel {
                            context: format!("fault site '{}'", f.name),
                            message: format!("replaced channel {i} outside the {n} channels"),
                        });
                    }
                    mean[i] = 0.0;
                    for j in 0..n {
                        for m in [&mut fresh, &mut constant] {
                            m[(i, j)] = 0.0;
                            m[(j, i)] = 0.0;
                        }
                    }
                    direction[i] = *gain;
                }
            }
        }
        if let Some((m, s)) = gaussian {
            for i in 0..n {
                mean[i] += direction[i] * m;
                for j in 0..n {
                    constant[(i, j)] += s * s * direction[i] * direction[j];
                }
            }
        }
        // Symmetric by construction; rounding is removed before factoring.
        let fresh = (&fresh + fresh.transpose()) * 0.5;
        let constant = (&constant + constant.transpose()) * 0.5;
        let eigen = SymmetricEigen::new(constant);
        let largest = eigen.eigenvalues.iter().copied().fold(0.0, f64::max);
        let mut terms: Vec<(f64, Vec<f64>)> = eigen
            .eigenvalues
            .iter()
            .enumerate()
            .filter(|(_, l)| **l > CONSTANT_RANK_REL * largest && **l > 0.0)
            .map(|(k, l)| {
                let v = eigen.eigenvectors.column(k);
                (*l, v.iter().map(|x| x * l.sqrt()).collect())
            })
            .collect();
        terms.sort_by(|a, b| b.0.total_cmp(&a.0));
        if terms.len() > MAX_CONSTANT_TERMS {
            return Err(AnalysisError::Unsupported {
                message: format!(
                    "{}: {} independent terms stay constant over the interval, more than the \
                     {MAX_CONSTANT_TERMS} the timed analysis integrates; mark shared sources \
                     whose term changes from sample to sample in timing.fresh_sources",
                    fault.map_or("the fault-free channels".to_string(), |f| format!(
                        "fault site '{}'",
                        f.name
                    )),
                    terms.len()
                ),
            });
        }
        let fresh_sd = (0..n).map(|i| fresh[(i, i)].max(0.0).sqrt()).collect();
        let fresh_diagonal = (0..n).all(|i| (0..n).all(|j| i == j || fresh[(i, j)] == 0.0));
        let fresh = Gaussian::new(&mean, &fresh)
            .map_err(|e| AnalysisError::engine("the part of the noise fresh every sample", e))?;
        let mut levels = vec![model.safety_lower, model.safety_upper];
        for check in &model.checks {
            levels.push(check.lower);
            levels.push(check.upper);
        }
        levels.retain(|l| l.is_finite());
        Ok(Self {
            levels,
            fresh,
            fresh_sd,
            fresh_diagonal,
            constant: terms.into_iter().map(|(_, v)| v).collect(),
            direction,
        })
    }

    /// The values of constant term `level` (the earlier ones fixed at `c`, the later ones at
    /// zero) where a sample's figures step: where a channel's mean meets a band end, another
    /// channel's mean, or another channel's mean moved by a band end, and 2 and 6 fresh
    /// widths either side. A constant term of large spread against the fresh noise makes
    /// these steps far narrower than the rule's first points, which would miss them.
    pub(super) fn steps(&self, level: usize, c: &[f64], amplitude: f64) -> Vec<f64> {
        let Some(column) = self.constant.get(level) else {
            return Vec::new();
        };
        let mut at = c.to_vec();
        at.truncate(level);
        at.resize(self.constant.len(), 0.0);
        let mean: Vec<f64> = (0..self.direction.len())
            .map(|i| {
                self.fresh.mean()[i]
                    + self
                        .constant
                        .iter()
                        .zip(&at)
                        .map(|(col, ck)| col[i] * ck)
                        .sum::<f64>()
                    + self.direction[i] * amplitude
            })
            .collect();
        // Steps wider than NARROW_STEP standard deviations of the term are resolved by the
        // rule's own bisection; only narrower ones need points of their own.
        let widest = self.fresh_sd.iter().copied().fold(0.0, f64::max);
        let steepest = column.iter().map(|x| x.abs()).fold(0.0, f64::max);
        if widest.is_nan() || widest >= NARROW_STEP * steepest {
            return Vec::new();
        }
        crossings(&mean, column, &self.fresh_sd, &self.levels)
            .into_iter()
            .filter(|t| t.abs() < GAUSSIAN_REACH)
            .collect()
    }

    /// The per-sample gaussian at constant terms `c` and amplitude `amplitude`.
    pub(super) fn at(&self, c: &[f64], amplitude: f64) -> Result<Gaussian, AnalysisError> {
        let delta: Vec<f64> = (0..self.direction.len())
            .map(|i| {
                self.constant
                    .iter()
                    .zip(c)
                    .map(|(col, ck)| col[i] * ck)
                    .sum::<f64>()
                    + self.direction[i] * amplitude
            })
            .collect();
        self.fresh
            .shifted(&delta)
            .map_err(|e| AnalysisError::engine("constant terms of the interval", e))
    }
}

/// The shifts `t` at which `mean + direction t` puts a channel on a level, on another
/// channel's mean, or on another channel's mean moved by a level, each with points 3 and 9
/// fresh widths either side (the figures of a sample step there, smoothed over the fresh
/// noise).
pub(super) fn crossings(
    mean: &[f64],
    direction: &[f64],
    fresh_sd: &[f64],
    levels: &[f64],
) -> Vec<f64> {
    let widest = fresh_sd.iter().copied().fold(0.0, f64::max);
    let mut points = Vec::new();
    for (i, d) in direction.iter().enumerate() {
        if *d == 0.0 || !d.is_finite() {
            continue;
        }
        let mut targets: Vec<f64> = levels.to_vec();
        for (j, m) in mean.iter().enumerate() {
            if j != i {
                let relative = d - direction.get(j).copied().unwrap_or(0.0);
                if relative == 0.0 {
                    continue;
                }
                // Channel i meets channel j (or j moved by a level) as both move.
                for l in std::iter::once(0.0).chain(levels.iter().copied()) {
                    let t = (m + l - mean[i]) / relative;
                    targets.push(mean[i] + d * t);
                }
            }
        }
        for target in targets.into_iter().filter(|t| t.is_finite()) {
            push_steps(&mut points, (target - mean[i]) / d, widest / d.abs());
        }
    }
    points.retain(|p| p.is_finite());
    points.sort_by(f64::total_cmp);
    points.dedup();
    points
}
