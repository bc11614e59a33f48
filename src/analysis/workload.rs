//! How much work an analysis will take, counted before it starts: the polytope integrals of
//! the general engine, so that a file the order-statistic engine does not take (and that
//! would run for minutes or hours) is named at once instead of after a silent wait.
//!
//! The count is deterministic (it depends on the file and the options only). The time it
//! implies uses a low figure for one polytope integral of each dimension on the two-core
//! development machine: 0.02 ms up to three channels, 0.2 ms at four (measured averages:
//! 0.27 ms over the 123,552 integrals of a median of four with two-of-four windows, 2.2 ms
//! over those of the four-channel example, where more polytopes need the lattice), 2 ms
//! from five on (a median of eight: the first 40 integrals 1 to 7 ms each, the whole file
//! past 30 s). Screening settles many polytopes at no cost, so real runs take one to twenty
//! times the estimate; it is a floor, and worded as one.

use crate::model::{Amplitude, CompiledModel};

use super::engine::{Engine, FigureMethod, Scenario};
use super::options::AnalysisOptions;
use super::outcome::Figure;
use super::scenario::FaultScenario;

/// Evaluations of the amplitude integral of a uniform amplitude, as a count of whole
/// scenarios (two Gauss–Kronrod rules of 21 nodes: the least an adaptive rule spends).
const UNIFORM_EVALUATIONS: usize = 42;

/// Brent steps of a worst-case refinement, typically (each one residual).
const REFINE_EVALUATIONS: usize = 10;

/// Analyses whose floor exceeds this many seconds are announced.
pub const ANNOUNCE_SECONDS: f64 = 20.0;

/// Threads the floor assumes (the development machine's cores).
const CORES: f64 = 2.0;

/// The polytope integrals an analysis needs, and the least time they take.
#[derive(Debug, Clone, PartialEq)]
pub struct Workload {
    /// Scenarios (the baseline, the amplitudes of every site) that go to the polytopes.
    pub polytope_scenarios: usize,
    /// Polytopes of one whole scenario (all its figures).
    pub polytopes_per_scenario: usize,
    /// Polytope integrals in all.
    pub integrals: usize,
    /// Dimension of the integrals (the channels of the model).
    pub dimension: usize,
    /// The least time the integrals take on two cores, in seconds.
    pub floor_seconds: f64,
    /// Why the order-statistic engine does not take the file, when it does not.
    pub order_unfit: Option<String>,
}

impl Workload {
    /// A note for the analyst when the floor is past [`ANNOUNCE_SECONDS`].
    pub fn announcement(&self) -> Option<String> {
        if self.floor_seconds <= ANNOUNCE_SECONDS {
            return None;
        }
        let why = self.order_unfit.as_ref().map_or(String::new(), |r| {
            format!(" (the order-statistic engine does not take it: {r})")
        });
        Some(format!(
            "a long computation: {} of the scenarios go to the general engine{why}, {} polytope \
             integrals of {} dimensions in all ({} per scenario); on a two-core machine that \
             is {}, and often ten times that. A looser \
             --tolerance, fewer checks or order-statistic inputs, or a structure the \
             order-statistic engine takes (README, \"How the figures are computed\") make it \
             shorter",
            self.polytope_scenarios,
            self.integrals,
            self.dimension,
            self.polytopes_per_scenario,
            duration_words(self.floor_seconds)
        ))
    }
}

/// `at least 3 minutes`, `at least 2.5 hours`.
fn duration_words(seconds: f64) -> String {
    if seconds < 120.0 {
        format!("at least {:.0} seconds", seconds)
    } else if seconds < 7200.0 {
        format!("at least {:.0} minutes", seconds / 60.0)
    } else {
        format!("at least {:.1} hours", seconds / 3600.0)
    }
}

/// The least time of one polytope integral of `dimension` variables, in seconds (see the
/// module notes).
fn floor_per_integral(dimension: usize) -> f64 {
    match dimension {
        0..=3 => 2e-5,
        4 => 2e-4,
        _ => 2e-3,
    }
}

/// Counts the work of analysing `model`. Builds the polytopes when a scenario needs them
/// (as the analysis would); `None` when they cannot be built (the analysis then says why).
pub fn estimate(model: &CompiledModel, options: &AnalysisOptions) -> Option<Workload> {
    estimate_with(&Engine::new(model, options), options)
}

/// [`estimate`] with the engines an analysis already holds.
pub fn estimate_with(engine: &Engine<'_>, options: &AnalysisOptions) -> Option<Workload> {
    let model = engine.model();
    let mut outcomes = 0usize;
    let mut residuals = 0usize;
    let mut scenarios = 0usize;
    if engine.method(Scenario::Baseline) == FigureMethod::Polytopes {
        outcomes += 1;
        scenarios += 1;
    }
    for fault in &model.faults {
        let Ok(scenario) = FaultScenario::new(model, fault) else {
            continue;
        };
        let probe = |amplitude: Scenario<'_>| engine.method(amplitude) == FigureMethod::Polytopes;
        match &fault.amplitude {
            Amplitude::Gaussian { mean, sigma } => {
                if probe(Scenario::Gaussian(&scenario, *mean, *sigma)) {
                    outcomes += 1;
                    scenarios += 1;
                }
            }
            Amplitude::Points(points) => {
                for (value, _) in points {
                    if probe(Scenario::At(&scenario, *value)) {
                        outcomes += 1;
                        scenarios += 1;
                    }
                }
            }
            Amplitude::Uniform { lower, upper } => {
                let mid = 0.5 * (lower + upper);
                if probe(Scenario::At(&scenario, mid))
                    && engine.method(Scenario::Uniform(&scenario, *lower, *upper))
                        == FigureMethod::Polytopes
                {
                    outcomes += UNIFORM_EVALUATIONS;
                    scenarios += UNIFORM_EVALUATIONS;
                }
            }
            Amplitude::GaussianUnknownSigma {
                mean,
                sigma_lo,
                sigma_hi,
                ..
            } => {
                let sigma = (sigma_lo * sigma_hi).sqrt();
                if probe(Scenario::Gaussian(&scenario, *mean, sigma)) {
                    let searched = options.sigma_scan_points.max(3) + REFINE_EVALUATIONS;
                    residuals += searched;
                    outcomes += 3;
                    scenarios += searched + 3;
                }
            }
        }
    }
    if scenarios == 0 {
        return Some(Workload {
            polytope_scenarios: 0,
            polytopes_per_scenario: 0,
            integrals: 0,
            dimension: model.channels.len(),
            floor_seconds: 0.0,
            order_unfit: engine.order_unfit.clone(),
        });
    }
    let evaluator = engine.evaluator().ok()?;
    let count = |f: Figure| evaluator.polytopes(f).len();
    let per_outcome = count(Figure::ViolatedDetected)
        + count(Figure::ViolatedUndetected)
        + count(Figure::SafeDetected);
    let integrals = outcomes
        .saturating_mul(per_outcome)
        .saturating_add(residuals.saturating_mul(count(Figure::ViolatedUndetected)));
    let dimension = model.channels.len();
    Some(Workload {
        polytope_scenarios: scenarios,
        polytopes_per_scenario: per_outcome,
        integrals,
        dimension,
        floor_seconds: integrals as f64 * floor_per_integral(dimension) / CORES,
        order_unfit: engine.order_unfit.clone(),
    })
}
