//! The whole exact analysis of a compiled architecture: baseline, every site, metrics.

use rayon::prelude::*;

use crate::model::CompiledModel;

use super::cells::CellSet;
use super::engine::{Engine, FigureMethod, Scenario};
use super::error::AnalysisError;
use super::evaluate::Evaluator;
use super::isolation::{IsolationAnalysis, analyze_isolation};
use super::metrics::{Metrics, metrics};
use super::options::AnalysisOptions;
use super::outcome::Outcome;
use super::site::{SiteResult, analyze_site};
use super::timing::{TimedAnalysis, analyze_timed};

/// The result of analysing one architecture.
#[derive(Debug, Clone, PartialEq)]
pub struct Analysis {
    /// Fault-free figures: `p_sd + p_vd` is the false-alarm probability, `p_vd + p_vu` the
    /// fault-free violation probability.
    pub baseline: Outcome,
    /// One result per fault site, in file order.
    pub sites: Vec<SiteResult>,
    /// Hardware metrics rolled up from the sites.
    pub metrics: Metrics,
    /// Number of linear cells the output and checks split into (0 when no figure needed
    /// the polytope engine).
    pub cells: usize,
    /// The method that computed the fault-free figures.
    pub baseline_method: FigureMethod,
    /// Warnings for the analyst, from every site.
    pub warnings: Vec<String>,
    /// The settings used.
    pub options: AnalysisOptions,
    /// The figures over time, when the file has a timing section.
    pub timed: Option<TimedAnalysis>,
    /// Which channel a detection blames, and what runs on without it, when the file has an
    /// isolation section.
    pub isolation: Option<IsolationAnalysis>,
    /// Every figure's range over the tolerances of the inputs, when asked
    /// (`analyze --within`; set by the caller with `tolerances::over_box`).
    pub tolerances: Option<super::tolerances::ToleranceAnalysis>,
    /// The derivative of every figure by every numeric input, when asked
    /// (`--with-sensitivity`; set by the caller with `sensitivity::sensitivity`).
    pub sensitivity: Option<super::sensitivity::SensitivityAnalysis>,
}

/// Precomputed state shared by every scenario of one architecture.
#[derive(Debug, Clone)]
pub struct Prepared {
    /// The cells of the output and checks.
    pub cells: CellSet,
    /// The polytopes of the four figures.
    pub evaluator: Evaluator,
}

impl Prepared {
    /// Decomposes a model into cells and polytopes.
    ///
    /// # Errors
    /// [`AnalysisError::TooLarge`] when the decomposition passes a limit.
    pub fn new(model: &CompiledModel, options: &AnalysisOptions) -> Result<Self, AnalysisError> {
        let cells = CellSet::from_model(model)?;
        let evaluator =
            Evaluator::new(&cells, options.polytope_tolerance(), options.max_polytopes)?;
        Ok(Self { cells, evaluator })
    }
}

/// Analyses every fault site and the baseline exactly. Sites run in parallel; each site's
/// computation is sequential and seeded, so the result does not depend on the thread count.
///
/// # Errors
/// Engine failures with the site named, or a decomposition past a limit.
pub fn analyze(
    model: &CompiledModel,
    options: &AnalysisOptions,
    want_curves: bool,
) -> Result<Analysis, AnalysisError> {
    let engine = Engine::new(model, options);
    let (baseline_outcome, baseline_method) = engine
        .outcome(Scenario::Baseline)
        .map_err(|e| prefix(e, "fault-free baseline"))?;
    let sites: Vec<SiteResult> = model
        .faults
        .par_iter()
        .map(|fault| analyze_site(&engine, fault, options, want_curves))
        .collect::<Result<_, _>>()?;
    finite(&baseline_outcome, "fault-free baseline")?;
    for site in &sites {
        finite(&site.outcome, &format!("fault site '{}'", site.name))?;
    }
    let mut warnings: Vec<String> = sites
        .iter()
        .flat_map(|s| s.warnings.iter().cloned())
        .collect();
    warnings.extend(residual_accuracy_warning(
        &baseline_outcome,
        "fault-free baseline",
        options,
    ));
    for site in &sites {
        warnings.extend(residual_accuracy_warning(
            &site.outcome,
            &format!("fault site '{}'", site.name),
            options,
        ));
    }
    let timed = match &model.timing {
        Some(timing) => Some(analyze_timed(&engine, timing, &sites, options)?),
        None => None,
    };
    for site in timed.iter().flat_map(|t| &t.sites) {
        warnings.extend(site.warnings.iter().cloned());
    }
    let isolation = analyze_isolation(&engine, &sites, options)?;
    for w in isolation.iter().flat_map(|i| &i.warnings) {
        warnings.push(w.clone());
    }
    Ok(Analysis {
        timed,
        isolation,
        tolerances: None,
        sensitivity: None,
        baseline: baseline_outcome,
        metrics: metrics(&sites),
        sites,
        cells: engine.cells().unwrap_or(0),
        baseline_method,
        warnings,
        options: *options,
    })
}

/// Largest relative error bound of a residual `p_vu` reported without a warning.
pub const RESIDUAL_REL_WARN: f64 = 0.1;

/// A warning when the residual is known only to the absolute tolerance (a residual far
/// below `polytope_abs`): the figure and its bound hold, but not to a relative accuracy.
fn residual_accuracy_warning(
    outcome: &Outcome,
    context: &str,
    options: &AnalysisOptions,
) -> Option<String> {
    let p = outcome.p_vu;
    (p.error > RESIDUAL_REL_WARN * p.value && p.error > 0.0).then(|| {
        format!(
            "{context}: the residual p_vu = {:.3e} is known only to ± {:.1e}, the absolute \
             tolerance of the engine ({:.0e}); its relative accuracy is not assured (ask a \
             smaller polytope_abs and amplitude_abs of the analysis options)",
            p.value, p.error, options.polytope_abs
        )
    })
}

/// Refuses an outcome with a NaN or infinite value or bound.
fn finite(outcome: &Outcome, context: &str) -> Result<(), AnalysisError> {
    for figure in super::outcome::Figure::ALL {
        let e = outcome.get(figure);
        if !e.value.is_finite() || !e.error.is_finite() {
            return Err(AnalysisError::NotFinite {
                context: context.to_string(),
                figure: format!("{} = {} ± {}", figure.key(), e.value, e.error),
            });
        }
    }
    Ok(())
}

fn prefix(e: AnalysisError, what: &str) -> AnalysisError {
    match e {
        AnalysisError::Engine { context, source } => AnalysisError::Engine {
            context: format!("{what}, {context}"),
            source,
        },
        other => other,
    }
}
