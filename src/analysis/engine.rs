//! Which method computes a scenario's figures: the order-statistic engine when the model's
//! structure and the scenario's shared terms fit it ([`super::ordered`]), otherwise the
//! polytopes of the general engine, built on first need.

use std::sync::OnceLock;

use serde::Serialize;

use crate::model::CompiledModel;
use crate::prob::Estimate;
use crate::prob::order::{Accuracy, Question, SharedGaussian, figures};
use crate::prob::polytope::Gaussian;

use super::error::AnalysisError;
use super::evaluate::Evaluator;
use super::options::AnalysisOptions;
use super::ordered::{SharedTerms, question, scenario_unsupported};
use super::outcome::{Figure, Outcome};
use super::run::Prepared;
use super::scenario::FaultScenario;

/// Models of at most this many channels go to the polytope engine when the choice is
/// automatic: up to three it takes milliseconds to a second and it has the longest record
/// against the references; from four channels on its orderings multiply.
pub const POLYTOPES_UP_TO: usize = 3;

/// Which engine the analysis uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum EngineChoice {
    /// The order-statistic engine where it fits and the model has more than
    /// [`POLYTOPES_UP_TO`] channels, the polytope engine elsewhere.
    Automatic,
    /// The order-statistic engine wherever it fits (cross-checks).
    OrderStatistics,
    /// The polytope engine for everything (cross-checks).
    Polytopes,
}

/// The method that computed a figure.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FigureMethod {
    /// Counts of independent channels given the shared terms (`prob::order`).
    OrderStatistics,
    /// Disjoint polytopes of the correlated gaussian (`prob::polytope`).
    Polytopes,
    /// Plain sampling (`analysis::montecarlo`).
    MonteCarlo,
}

impl FigureMethod {
    /// Words for reports.
    pub fn words(self) -> &'static str {
        match self {
            FigureMethod::OrderStatistics => "order statistics given the shared terms",
            FigureMethod::Polytopes => "polytopes of the correlated gaussian",
            FigureMethod::MonteCarlo => "Monte Carlo sampling",
        }
    }
}

/// One scenario: the fault-free channels, or a fault site at an amplitude.
#[derive(Debug, Clone, Copy)]
pub enum Scenario<'a> {
    /// No fault.
    Baseline,
    /// A fault site with its amplitude fixed.
    At(&'a FaultScenario, f64),
    /// A fault site with a gaussian amplitude `N(mean, sigma^2)`.
    Gaussian(&'a FaultScenario, f64, f64),
    /// A replaced channel with a uniform amplitude on `[lower, upper]` (order-statistic
    /// engine only: the channel is then uniform itself).
    Uniform(&'a FaultScenario, f64, f64),
}

/// The engines of one architecture.
#[derive(Debug)]
pub struct Engine<'m> {
    model: &'m CompiledModel,
    options: AnalysisOptions,
    order: Option<(Question, SharedTerms)>,
    /// Why the order-statistic engine does not fit the model (None when it does).
    pub order_unfit: Option<String>,
    /// Whether scenarios that fit go to the order-statistic engine even while the polytopes
    /// can be built (from four channels on, or when asked).
    prefer_order: bool,
    polytopes: OnceLock<Result<Prepared, AnalysisError>>,
}

impl<'m> Engine<'m> {
    /// Prepares the engines of `model` (the polytopes wait until a scenario needs them).
    pub fn new(model: &'m CompiledModel, options: &AnalysisOptions) -> Self {
        let small = model.channels.len() <= POLYTOPES_UP_TO && model.pieces_complete;
        let (prefer_order, allowed) = match options.engine {
            EngineChoice::Automatic => (!small, true),
            EngineChoice::OrderStatistics => (true, true),
            EngineChoice::Polytopes => (false, false),
        };
        let order = if allowed {
            question(model).and_then(|q| SharedTerms::baseline(model).map(|t| (q, t)))
        } else {
            Err("switched off in the analysis options".into())
        };
        let (order, order_unfit) = match order {
            Ok(o) => (Some(o), None),
            Err(reason) => (None, Some(reason)),
        };
        Self {
            model,
            options: *options,
            order,
            order_unfit,
            prefer_order,
            polytopes: OnceLock::new(),
        }
    }
    /// The polytope evaluator, built on first call.
    ///
    /// # Errors
    /// A decomposition past a limit (too many pieces, cells or polytopes).
    pub fn polytopes(&self) -> Result<&Prepared, AnalysisError> {
        self.polytopes
            .get_or_init(|| Prepared::new(self.model, &self.options))
            .as_ref()
            .map_err(Clone::clone)
    }

    /// The polytope evaluator.
    ///
    /// # Errors
    /// As [`Engine::polytopes`].
    pub fn evaluator(&self) -> Result<&Evaluator, AnalysisError> {
        Ok(&self.polytopes()?.evaluator)
    }

    /// The number of linear cells, when the polytopes have been built.
    pub fn cells(&self) -> Option<usize> {
        self.polytopes
            .get()
            .and_then(|p| p.as_ref().ok())
            .map(|p| p.cells.cells.len())
    }

    /// The order-statistic form of a scenario, when it fits.
    fn shared(&self, scenario: Scenario<'_>) -> Option<(&Question, SharedGaussian)> {
        let (q, terms) = self.order.as_ref()?;
        // Small models use the polytopes unless these cannot be built (past a limit).
        if !self.prefer_order && self.polytopes().is_ok() {
            return None;
        }
        let g = match scenario {
            Scenario::Baseline => terms.tidied(),
            Scenario::At(s, f) => s.shared.as_ref()?.at_amplitude(f),
            Scenario::Gaussian(s, mean, sigma) => s.shared.as_ref()?.with_gaussian(mean, sigma),
            Scenario::Uniform(s, lower, upper) => s.shared.as_ref()?.with_uniform(lower, upper)?,
        };
        scenario_unsupported(&g, q).is_none().then_some((q, g))
    }

    /// The method that a scenario goes to.
    pub fn method(&self, scenario: Scenario<'_>) -> FigureMethod {
        if self.shared(scenario).is_some() {
            FigureMethod::OrderStatistics
        } else {
            FigureMethod::Polytopes
        }
    }

    /// Whether every amplitude of a fault site goes to the order-statistic engine (its
    /// structure does not depend on the amplitude).
    pub fn site_is_ordered(&self, scenario: &FaultScenario) -> bool {
        self.shared(Scenario::At(scenario, 0.0)).is_some()
    }

    /// The correlated gaussian of a scenario, for the polytope engine.
    fn polytope_gaussian(&self, scenario: Scenario<'_>) -> Result<Gaussian, AnalysisError> {
        match scenario {
            Scenario::Baseline => super::scenario::baseline(self.model),
            Scenario::At(s, f) => s.at_amplitude(f),
            Scenario::Gaussian(s, mean, sigma) => s.with_gaussian_amplitude(mean, sigma),
            Scenario::Uniform(..) => Err(AnalysisError::Unsupported {
                message: "a uniform amplitude as one scenario needs the order-statistic engine"
                    .into(),
            }),
        }
    }

    /// All four figures of a scenario, and the method that computed them.
    ///
    /// # Errors
    /// Engine failures; a model that neither method can take.
    pub fn outcome(
        &self,
        scenario: Scenario<'_>,
    ) -> Result<(Outcome, FigureMethod), AnalysisError> {
        if let Some((q, g)) = self.shared(scenario) {
            let outcome = self.ordered(q, &g, self.options.polytope_rel)?;
            return Ok((outcome, FigureMethod::OrderStatistics));
        }
        let evaluator = self.evaluator().map_err(|e| self.explain(e))?;
        let g = self.polytope_gaussian(scenario)?;
        Ok((evaluator.outcome(&g)?, FigureMethod::Polytopes))
    }

    /// The residual `p_vu` alone at a relative tolerance (the scan over a sigma uses a
    /// looser one).
    ///
    /// # Errors
    /// As [`Engine::outcome`].
    pub fn residual(&self, scenario: Scenario<'_>, rel: f64) -> Result<Estimate, AnalysisError> {
        if let Some((q, g)) = self.shared(scenario) {
            return Ok(self.ordered(q, &g, rel)?.p_vu);
        }
        let evaluator = self.evaluator().map_err(|e| self.explain(e))?;
        let g = self.polytope_gaussian(scenario)?;
        let mut tol = self.options.polytope_tolerance();
        tol.rel = rel;
        evaluator.figure_with(&g, Figure::ViolatedUndetected, &tol)
    }

    fn ordered(
        &self,
        q: &Question,
        g: &SharedGaussian,
        rel: f64,
    ) -> Result<Outcome, AnalysisError> {
        let accuracy = Accuracy {
            abs: self.options.polytope_abs,
            rel,
            max_intervals: self.options.amplitude_max_intervals,
        };
        let f = figures(g, q, &accuracy)
            .map_err(|e| AnalysisError::engine("order-statistic figures", e))?;
        Ok(Outcome {
            p_vd: f.violated_detected,
            p_vu: f.violated_undetected,
            p_sd: f.safe_detected,
            p_sq: f.safe_quiet,
        })
    }

    /// The order-statistic form of the model's output and checks, when the structure fits
    /// (whatever the scenarios; the timed analysis asks per sample).
    pub fn order_question(&self) -> Option<&Question> {
        self.order.as_ref().map(|(q, _)| q)
    }

    /// The model the engines analyse.
    pub fn model(&self) -> &CompiledModel {
        self.model
    }

    /// A polytope error that says, too, why the order-statistic engine did not take it.
    fn explain(&self, e: AnalysisError) -> AnalysisError {
        match (&e, &self.order_unfit) {
            (AnalysisError::TooLarge { .. }, Some(reason)) => AnalysisError::Unsupported {
                message: format!(
                    "{e}; the order-statistic engine, which has no such limit, does not fit \
                     either: {reason}"
                ),
            },
            _ => e,
        }
    }
}
