//! Figures of one fault site: the amplitude models of docs/architecture-format.md "Fault
//! sites" and the worst case over an unknown spread (its range: the same file, "The default
//! range of an unknown sigma"; its search: DEVELOPERS.md "How a figure is computed", step 3).
//! The integral over a uniform amplitude is in [`super::uniform`].

use rayon::prelude::*;

use crate::model::{Amplitude, CompiledFault, FaultMode};
use crate::prob::Estimate;
use crate::prob::optimise::{Scan, Stage, log_grid, scan_then_refine_staged};

use super::engine::{Engine, FigureMethod, Scenario};
use super::error::AnalysisError;
use super::options::AnalysisOptions;
use super::outcome::{Figure, Outcome};
use super::scenario::FaultScenario;
pub(crate) use super::uniform::uniform_total;
pub use super::uniform::{AmplitudeWindow, amplitude_window};
use super::uniform::{uniform_outcome, uniform_outcome_ordered};

/// One point of the curve over an unknown fault sigma.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CurvePoint {
    /// The fault sigma.
    pub sigma: f64,
    /// All four figures at that sigma.
    pub outcome: Outcome,
}

/// A local maximum of the residual over the fault sigma.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LocalWorst {
    /// The sigma where the residual peaks.
    pub sigma: f64,
    /// The residual `p_vu` there.
    pub p_vu: f64,
    /// Whether the peak sits at an end of the searched range.
    pub at_range_end: bool,
}

/// The worst case over an unknown fault sigma.
#[derive(Debug, Clone, PartialEq)]
pub struct WorstCase {
    /// The sigma with the largest residual; every figure of the site is taken there.
    pub sigma: f64,
    /// The searched range `[lo, hi]`.
    pub range: (f64, f64),
    /// Whether the range was the default one (not written in the file).
    pub range_defaulted: bool,
    /// Every local maximum the scan found, largest residual first.
    pub local_maxima: Vec<LocalWorst>,
    /// The scan: every grid sigma with its residual.
    pub scan: Vec<(f64, Estimate)>,
}

/// Everything computed for one fault site.
#[derive(Debug, Clone, PartialEq)]
pub struct SiteResult {
    /// Name of the site in the file.
    pub name: String,
    /// Failure rate in FIT.
    pub fit: f64,
    /// `add` or `replace`.
    pub mode: &'static str,
    /// The amplitude model of the file (the report puts it in words).
    pub amplitude: Amplitude,
    /// The four outcome probabilities (at the worst sigma when searched).
    pub outcome: Outcome,
    /// The worst case when the sigma is unknown.
    pub worst: Option<WorstCase>,
    /// The whole curve over sigma, when requested.
    pub curve: Option<Vec<CurvePoint>>,
    /// Share of latent faults found by other means, from the file.
    pub latent_coverage: f64,
    /// Warnings for the analyst.
    pub warnings: Vec<String>,
    /// The method that computed the figures.
    pub method: FigureMethod,
}

impl SiteResult {
    /// `fit * p_vu`: the residual rate of the site.
    pub fn residual_fit(&self) -> Estimate {
        self.outcome.p_vu.scale(self.fit)
    }

    /// `fit * p_sq * (1 - latent_coverage)`: the latent rate of the site.
    pub fn latent_fit(&self) -> Estimate {
        self.outcome
            .p_sq
            .scale(self.fit * (1.0 - self.latent_coverage))
    }
}

/// Analyses one fault site exactly.
///
/// # Errors
/// Engine failures, with the site named.
pub fn analyze_site(
    engine: &Engine<'_>,
    fault: &CompiledFault,
    options: &AnalysisOptions,
    want_curve: bool,
) -> Result<SiteResult, AnalysisError> {
    let model = engine.model();
    let scenario = FaultScenario::new(model, fault)?;
    let named = |e: AnalysisError| match e {
        AnalysisError::Engine { context, source } => AnalysisError::Engine {
            context: format!("fault site '{}', {context}", fault.name),
            source,
        },
        other => other,
    };
    let mut warnings = Vec::new();
    let mut worst = None;
    let mut curve = None;
    let ordered = engine.site_is_ordered(&scenario);
    let mut method = if ordered {
        FigureMethod::OrderStatistics
    } else {
        FigureMethod::Polytopes
    };
    let outcome = match &fault.amplitude {
        Amplitude::Gaussian { mean, sigma } => {
            let (o, m) = engine
                .outcome(Scenario::Gaussian(&scenario, *mean, *sigma))
                .map_err(named)?;
            method = m;
            o
        }
        Amplitude::Points(points) => points_outcome(engine, &scenario, points).map_err(named)?,
        Amplitude::Uniform { lower, upper }
            if ordered
                && engine.method(Scenario::Uniform(&scenario, *lower, *upper))
                    == FigureMethod::OrderStatistics =>
        {
            engine
                .outcome(Scenario::Uniform(&scenario, *lower, *upper))
                .map_err(named)?
                .0
        }
        Amplitude::Uniform { lower, upper } if ordered => {
            uniform_outcome_ordered(engine, &scenario, *lower, *upper, options).map_err(named)?
        }
        Amplitude::Uniform { lower, upper } => {
            let evaluator = engine.evaluator().map_err(named)?;
            uniform_outcome(evaluator, &scenario, *lower, *upper, options).map_err(named)?
        }
        Amplitude::GaussianUnknownSigma {
            mean,
            sigma_lo,
            sigma_hi,
            defaulted,
        } => {
            let (found, outcome, points) = worst_case(
                engine,
                &scenario,
                *mean,
                (*sigma_lo, *sigma_hi),
                options,
                want_curve,
            )
            .map_err(named)?;
            let mut found = found;
            found.range_defaulted = *defaulted;
            if found.local_maxima.first().is_some_and(|m| m.at_range_end) {
                warnings.push(format!(
                    "the worst case of '{}' sits at an end of the sigma range [{}, {}]: \
                     widen the range (amplitude.gaussian.sigma = {{ unknown = [lo, hi] }}) to be sure \
                     it is the true maximum",
                    fault.name, sigma_lo, sigma_hi
                ));
            }
            if found.local_maxima.len() > 1 {
                warnings.push(format!(
                    "the residual of '{}' has {} local maxima over sigma; the largest is reported",
                    fault.name,
                    found.local_maxima.len()
                ));
            }
            worst = Some(found);
            curve = points;
            outcome
        }
    };
    let sum = outcome.sum();
    if (sum.value - 1.0).abs() > sum.error + SUM_ROUNDING {
        warnings.push(format!(
            "the four figures of '{}' sum to {:.12} instead of 1 (bound {:.1e}): treat them with care",
            fault.name, sum.value, sum.error
        ));
    }
    Ok(SiteResult {
        name: fault.name.clone(),
        fit: fault.fit,
        mode: match fault.mode {
            FaultMode::Add { .. } => "add",
            FaultMode::Replace { .. } => "replace",
        },
        amplitude: fault.amplitude.clone(),
        outcome,
        worst,
        curve,
        latent_coverage: fault.latent_coverage,
        warnings,
        method,
    })
}

fn points_outcome(
    engine: &Engine<'_>,
    scenario: &FaultScenario,
    points: &[(f64, f64)],
) -> Result<Outcome, AnalysisError> {
    let mut parts = Vec::with_capacity(points.len());
    for (value, weight) in points {
        let (outcome, _) = engine.outcome(Scenario::At(scenario, *value))?;
        parts.push((outcome, *weight));
    }
    Ok(Outcome::from_fn(|f| {
        parts
            .iter()
            .map(|(o, w)| o.get(f).scale(*w))
            .sum::<Estimate>()
            .clamp_probability()
    }))
}

/// Rounding allowance of the sum of the four figures (a few units in the last place of 1)
/// before a site warns that they do not sum to 1 within their bounds.
const SUM_ROUNDING: f64 = 1e-12;

/// Smallest relative step in sigma over which the figures of a worst case are compared to
/// widen its bounds: a `sigma_rel_tol` below it (zero, say) is raised to it, so that the two
/// neighbouring sigmas still differ from the centre in floating point.
const MIN_WIDENING_STEP_REL: f64 = 1e-12;

/// `at` of the sigma found by a worst-case search and of its neighbours `sigma_rel_tol`
/// either side (kept within `range`), `(centre, left, right)`: what the worst case is
/// reported at and widened over ([`reach_beyond`]). The three are independent and computed
/// in parallel.
pub(crate) fn at_and_around<T: Send>(
    sigma: f64,
    range: (f64, f64),
    options: &AnalysisOptions,
    at: impl Fn(f64) -> T + Sync,
) -> (T, T, T) {
    let step = options.sigma_rel_tol.max(MIN_WIDENING_STEP_REL);
    let (centre, (left, right)) = rayon::join(
        || at(sigma),
        || {
            rayon::join(
                || at((sigma * (1.0 - step)).max(range.0)),
                || at((sigma * (1.0 + step)).min(range.1)),
            )
        },
    );
    (centre, left, right)
}

/// How far the interval of `neighbour` (a figure at a neighbouring sigma, with its bound)
/// reaches beyond that of `centre`: what the centre's bound must grow by to hold both, so
/// that a worst case located to `sigma_rel_tol` covers the figure anywhere in that distance
/// (the neighbour's own error included, not only its value's move).
pub(crate) fn reach_beyond(centre: Estimate, neighbour: Estimate) -> f64 {
    ((neighbour.value - centre.value).abs() + neighbour.error - centre.error).max(0.0)
}

/// The quadrature takes engine errors only; analysis errors are carried through as their
/// engine cause or as an invalid argument with the message.
pub(crate) fn engine_of(e: AnalysisError) -> crate::prob::ProbError {
    match e {
        AnalysisError::Engine { source, .. } => source,
        other => crate::prob::ProbError::InvalidArgument(other.to_string()),
    }
}

type WorstFound = (WorstCase, Outcome, Option<Vec<CurvePoint>>);

/// The largest value over a log grid of sigmas and the Brent refinements of its local
/// maxima ([`scan_then_refine_staged`]), with every evaluation in the order made.
/// `precomputed` holds `at(g, Stage::Scan)` for each grid point `g`, computed by the caller
/// in parallel (each exactly as the scan would ask, so the result does not depend on the
/// thread count); the scan reads them back and the refinement asks `at` afresh. `value`
/// turns an evaluation into the number maximised and `bound` into its error bound.
///
/// The result's `allowance` is the search's own, to be added to the bound of
/// the maximised figure at the sigma found. The search ranks evaluations that are each known
/// only within their bound `e`: near a smooth maximum the values differ by less than that,
/// so the point it settles on can lie below the true maximum by up to `2e` (the true maximum
/// read low by `e`, the point found read high by `e`). The widening over `sigma_rel_tol`
/// covers where the maximum lies once the values are exact; this covers the ranking. `e` is
/// the largest bound among the refinement's evaluations and those at the sigma found (a grid
/// point at the scan tolerance when no refinement improved on it).
///
/// # Errors
/// The first failed evaluation the search reads, or a failure of the search itself.
pub(crate) fn search_largest<T: Clone>(
    grid: &[f64],
    precomputed: &[Result<T, AnalysisError>],
    mut at: impl FnMut(f64, Stage) -> Result<T, AnalysisError>,
    value: impl Fn(&T) -> f64,
    bound: impl Fn(&T) -> f64,
    options: &AnalysisOptions,
) -> Result<Searched<T>, crate::prob::ProbError> {
    let mut evaluated = Vec::with_capacity(grid.len());
    let mut refine_bound = 0.0_f64;
    let scan = scan_then_refine_staged(
        |sigma, stage| {
            let cached = match stage {
                Stage::Scan => grid
                    .iter()
                    .position(|g| *g == sigma)
                    .and_then(|i| precomputed.get(i)),
                Stage::Refine => None,
            };
            let found = match cached {
                Some(found) => found.clone().map_err(engine_of)?,
                None => at(sigma, stage).map_err(engine_of)?,
            };
            let v = value(&found);
            if stage == Stage::Refine {
                refine_bound = refine_bound.max(bound(&found));
            }
            evaluated.push((sigma, found));
            Ok(-v)
        },
        grid,
        options.sigma_rel_tol,
        options.sigma_max_evaluations,
        true,
    )?;
    let found_bound = scan.minima.first().map_or(0.0, |m| {
        evaluated
            .iter()
            .filter(|(s, _)| *s == m.x)
            .fold(0.0_f64, |b, (_, t)| b.max(bound(t)))
    });
    Ok(Searched {
        scan,
        evaluated,
        allowance: 2.0 * refine_bound.max(found_bound),
    })
}

/// What [`search_largest`] found.
pub(crate) struct Searched<T> {
    /// The scan and its refined maxima.
    pub scan: Scan,
    /// Every evaluation, `(sigma, value)`, in the order made.
    pub evaluated: Vec<(f64, T)>,
    /// The search's ranking allowance on the bound of the maximised figure.
    pub allowance: f64,
}

fn worst_case(
    engine: &Engine<'_>,
    scenario: &FaultScenario,
    mean: f64,
    range: (f64, f64),
    options: &AnalysisOptions,
    want_curve: bool,
) -> Result<WorstFound, AnalysisError> {
    let (lo, hi) = range;
    let grid = log_grid(lo, hi, options.sigma_scan_points.max(3))
        .map_err(|e| AnalysisError::engine("grid over the fault sigma", e))?;
    // The scan only ranks grid points: it runs at the looser scan tolerance; the Brent
    // refinement and every reported figure use the full one.
    let scan_rel = options.scan_tolerance().rel;
    let residual_at = |sigma: f64, stage: Stage| -> Result<Estimate, AnalysisError> {
        let at = Scenario::Gaussian(scenario, mean, sigma);
        match stage {
            Stage::Scan => engine.residual(at, scan_rel),
            Stage::Refine => engine.residual(at, options.polytope_rel),
        }
    };
    let precomputed: Vec<Result<Estimate, AnalysisError>> = grid
        .par_iter()
        .map(|&sigma| residual_at(sigma, Stage::Scan))
        .collect();
    let Searched {
        scan,
        evaluated,
        allowance,
    } = search_largest(
        &grid,
        &precomputed,
        residual_at,
        |r: &Estimate| r.value,
        |r: &Estimate| r.error,
        options,
    )
    .map_err(|e| AnalysisError::engine("search of the worst fault sigma", e))?;
    // Keep the grid part of the evaluations, in grid order, for the report.
    let mut scan_grid: Vec<(f64, Estimate)> = Vec::with_capacity(grid.len());
    for g in &grid {
        if let Some(found) = evaluated.iter().find(|(s, _)| s == g) {
            scan_grid.push(*found);
        }
    }
    let local_maxima: Vec<LocalWorst> = scan
        .minima
        .iter()
        .map(|m| LocalWorst {
            sigma: m.x,
            p_vu: -m.value,
            at_range_end: m.at_boundary,
        })
        .collect();
    let sigma = local_maxima.first().map_or(lo, |m| m.sigma);
    let at = |s: f64| -> Result<Outcome, AnalysisError> {
        Ok(engine.outcome(Scenario::Gaussian(scenario, mean, s))?.0)
    };
    // The location of the maximum is known to sigma_rel_tol: the figures may move by as much
    // as they do over that distance, so widen every bound by it; the residual also by the
    // search's ranking allowance (see `search_largest`).
    let (centre, left, right) = at_and_around(sigma, range, options, at);
    let (centre, left, right) = (centre?, left?, right?);
    let outcome = centre.widened(|f| {
        let c = centre.get(f);
        let moved = reach_beyond(c, left.get(f)).max(reach_beyond(c, right.get(f)));
        if f == Figure::ViolatedUndetected {
            moved + allowance
        } else {
            moved
        }
    });
    let curve = if want_curve {
        let mut points = Vec::with_capacity(grid.len());
        for s in &grid {
            points.push(CurvePoint {
                sigma: *s,
                outcome: at(*s)?,
            });
        }
        Some(points)
    } else {
        None
    };
    Ok((
        WorstCase {
            sigma,
            range,
            range_defaulted: false,
            local_maxima,
            scan: scan_grid,
        },
        outcome,
        curve,
    ))
}
