//! A fault site turned into gaussian scenarios: with amplitude `F` the channel deviations
//! are `x = base + direction * F` with `base ~ N(base_mean, base_cov)` (the modes are
//! described in docs/architecture-format.md, "Fault sites").
//!
//! - `add`: `base` is the fault-free vector and `direction` the fault's gains (source gains
//!   already applied by the model, so a source fault reaches every channel it feeds).
//! - `replace`: the hit channel reads exactly `gain * F`: in `base` its mean, variance and
//!   covariances are zero, and `direction = gain * e_channel`.

use nalgebra::DMatrix;

use crate::model::{CompiledFault, CompiledModel, FaultMode};
use crate::prob::polytope::Gaussian;

use super::error::AnalysisError;
use super::ordered::{SharedFault, SharedTerms};

/// The fault-free gaussian of a model.
///
/// # Errors
/// Engine errors (a covariance that is not positive semi-definite).
pub fn baseline(model: &CompiledModel) -> Result<Gaussian, AnalysisError> {
    Gaussian::new(&model.mean, &model.covariance)
        .map_err(|e| AnalysisError::engine("fault-free channels", e))
}

/// A fault site as a linear family of gaussians in the amplitude.
#[derive(Debug, Clone)]
pub struct FaultScenario {
    /// Mean of the random part.
    pub base_mean: Vec<f64>,
    /// Covariance of the random part.
    pub base_cov: DMatrix<f64>,
    /// How the amplitude moves the channels.
    pub direction: Vec<f64>,
    /// The random part, factored once.
    pub base: Gaussian,
    /// The same as channels independent given a few shared terms, with the amplitude's
    /// direction, when the model's covariance can be written so (for the order-statistic
    /// engine, see `analysis::ordered`).
    pub shared: Option<SharedFault>,
}

impl FaultScenario {
    /// The scenario of a fault site.
    ///
    /// # Errors
    /// Engine errors, with the site named.
    pub fn new(model: &CompiledModel, fault: &CompiledFault) -> Result<Self, AnalysisError> {
        let n = model.mean.len();
        let mut base_mean = model.mean.clone();
        let mut base_cov = model.covariance.clone();
        let direction = match &fault.mode {
            FaultMode::Add { direction } => direction.clone(),
            FaultMode::Replace { channel, gain } => {
                let i = *channel;
                if i >= n {
                    return Err(AnalysisError::InconsistentModel {
                        context: format!("fault site '{}'", fault.name),
                        message: format!("replaced channel index {i} is outside the {n} channels"),
                    });
                }
                base_mean[i] = 0.0;
                for j in 0..n {
                    base_cov[(i, j)] = 0.0;
                    base_cov[(j, i)] = 0.0;
                }
                let mut d = vec![0.0; n];
                d[i] = *gain;
                d
            }
        };
        let base = Gaussian::new(&base_mean, &base_cov)
            .map_err(|e| AnalysisError::engine(format!("fault site '{}'", fault.name), e))?;
        let shared = SharedTerms::baseline(model)
            .ok()
            .map(|t| t.for_fault(fault));
        Ok(Self {
            base_mean,
            base_cov,
            direction,
            base,
            shared,
        })
    }

    /// The gaussian at a fixed amplitude `F`.
    ///
    /// # Errors
    /// Engine errors (non-finite amplitude).
    pub fn at_amplitude(&self, amplitude: f64) -> Result<Gaussian, AnalysisError> {
        let delta: Vec<f64> = self.direction.iter().map(|d| d * amplitude).collect();
        self.base
            .shifted(&delta)
            .map_err(|e| AnalysisError::engine("fault amplitude", e))
    }

    /// The gaussian when `F ~ N(mean, sigma^2)` independent of the noise: the fault folds
    /// into the mean (`+ d mean`) and the covariance (`+ sigma^2 d d^T`).
    ///
    /// # Errors
    /// Engine errors.
    pub fn with_gaussian_amplitude(
        &self,
        mean: f64,
        sigma: f64,
    ) -> Result<Gaussian, AnalysisError> {
        let n = self.direction.len();
        let m: Vec<f64> = self
            .base_mean
            .iter()
            .zip(&self.direction)
            .map(|(b, d)| b + d * mean)
            .collect();
        let mut cov = self.base_cov.clone();
        let s2 = sigma * sigma;
        for i in 0..n {
            for j in 0..n {
                cov[(i, j)] += s2 * self.direction[i] * self.direction[j];
            }
        }
        Gaussian::new(&m, &cov).map_err(|e| AnalysisError::engine("gaussian fault amplitude", e))
    }

    /// Standard deviation and amplitude sensitivity of a linear row: the row's value is
    /// `row . base + (row . direction) F`.
    pub fn row_profile(&self, row: &[f64]) -> (f64, f64, f64) {
        let n = row.len().min(self.direction.len());
        let mean: f64 = (0..n).map(|i| row[i] * self.base_mean[i]).sum();
        let slope: f64 = (0..n).map(|i| row[i] * self.direction[i]).sum();
        (mean, slope, self.row_covariance(row, row).max(0.0).sqrt())
    }

    /// Covariance of the random parts of two linear rows, `a' base_cov b`.
    pub fn row_covariance(&self, a: &[f64], b: &[f64]) -> f64 {
        let n = a.len().min(b.len()).min(self.direction.len());
        let mut cov = 0.0;
        for (i, ai) in a.iter().enumerate().take(n) {
            for (j, bj) in b.iter().enumerate().take(n) {
                cov += ai * self.base_cov[(i, j)] * bj;
            }
        }
        cov
    }
}
