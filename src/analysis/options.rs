//! Numerical settings of an analysis, with defaults a practising analyst can keep.

use serde::Serialize;

use crate::prob::polytope::ErrorTarget;
use crate::prob::quadrature::QuadratureOptions;

/// Settings of the exact analysis. Every figure it returns carries an error bound; these
/// settings decide how small the bound is asked to be and how much work may be spent.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct AnalysisOptions {
    /// Absolute tolerance asked of each polytope probability.
    pub polytope_abs: f64,
    /// Relative tolerance asked of each polytope probability (keeps tiny residuals accurate).
    pub polytope_rel: f64,
    /// Budget of lattice points per polytope.
    pub polytope_max_points: usize,
    /// Absolute tolerance of the integral over a uniform amplitude.
    pub amplitude_abs: f64,
    /// Relative tolerance of the integral over a uniform amplitude.
    pub amplitude_rel: f64,
    /// Subinterval budget of the amplitude integral.
    pub amplitude_max_intervals: usize,
    /// Points of the log-spaced scan over an unknown fault sigma.
    pub sigma_scan_points: usize,
    /// Relative tolerance of each polytope during that scan, which only ranks the grid
    /// points (the refinement and the reported figures use `polytope_rel`).
    pub sigma_scan_rel: f64,
    /// Relative tolerance in sigma of the refined worst case.
    pub sigma_rel_tol: f64,
    /// Evaluation budget of each Brent refinement.
    pub sigma_max_evaluations: usize,
    /// Upper limit on disjoint polytopes per evaluation of one scenario.
    pub max_polytopes: usize,
    /// Which engine computes the figures (automatic by default: see
    /// [`super::engine::EngineChoice`]).
    pub engine: super::engine::EngineChoice,
}

impl Default for AnalysisOptions {
    fn default() -> Self {
        Self {
            polytope_abs: 1e-11,
            polytope_rel: 1e-6,
            polytope_max_points: 4_000_000,
            amplitude_abs: 1e-11,
            amplitude_rel: 1e-7,
            amplitude_max_intervals: 400,
            sigma_scan_points: 49,
            sigma_scan_rel: 1e-3,
            sigma_rel_tol: 1e-5,
            sigma_max_evaluations: 80,
            max_polytopes: 20_000,
            engine: super::engine::EngineChoice::Automatic,
        }
    }
}

impl AnalysisOptions {
    /// The tolerance handed to the polytope engine.
    pub fn polytope_tolerance(&self) -> ErrorTarget {
        ErrorTarget {
            abs: self.polytope_abs,
            rel: self.polytope_rel,
            max_points: self.polytope_max_points,
        }
    }

    /// The tolerance of the scan over an unknown sigma.
    pub fn scan_tolerance(&self) -> ErrorTarget {
        ErrorTarget {
            rel: self.sigma_scan_rel.max(self.polytope_rel),
            ..self.polytope_tolerance()
        }
    }

    /// The options handed to the amplitude quadrature.
    pub fn quadrature(&self) -> QuadratureOptions {
        QuadratureOptions {
            abs_tol: self.amplitude_abs,
            rel_tol: self.amplitude_rel,
            max_intervals: self.amplitude_max_intervals,
        }
    }
}
