//! Figures of one fault site: the amplitude models of docs/architecture-format.md "Fault
//! sites" and the worst case over an unknown spread (its range: the same file, "The default
//! range of an unknown sigma"; its search: DEVELOPERS.md "How a figure is computed", step 3).

use rayon::prelude::*;

use crate::model::{Amplitude, CompiledFault, FaultMode};
use crate::prob::Estimate;
use crate::prob::optimise::{Scan, Stage, log_grid, scan_then_refine_staged};
use crate::prob::polytope::{Gaussian, Polytope};
use crate::prob::quadrature::integrate_best_effort;
use crate::prob::shift_average::mean_over_uniform_shift;

use super::engine::{Engine, FigureMethod, Scenario};
use super::error::AnalysisError;
use super::evaluate::{Evaluator, quiet_by_complement};
use super::options::AnalysisOptions;
use super::outcome::{Figure, Outcome};
use super::scenario::FaultScenario;

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

/// Noise widths beyond which a row's slab can no longer hold the row: its probability is
/// then below `P(Z > 9)`, about 1.1e-19 (mpmath 1.3.0 gives 1.129e-19).
const AMPLITUDE_REACH: f64 = 9.0;

/// Where one polytope can carry probability as the amplitude `F` moves over
/// `[lower, upper]`, with the kinks and steps of its integrand: every row that the fault
/// moves confines `F` to where the row's mean lies within [`AMPLITUDE_REACH`] noise widths
/// of its band, and its band ends (and a few noise widths either side) are breakpoints.
/// `None` when no amplitude in the range can reach the polytope; `moving` is false when no
/// row depends on `F` (the integrand is constant).
#[derive(Debug, Clone, PartialEq)]
pub struct AmplitudeWindow {
    /// Start of the window.
    pub lower: f64,
    /// End of the window.
    pub upper: f64,
    /// Kinks and steps inside the window, sorted.
    pub breakpoints: Vec<f64>,
    /// Whether any row depends on the amplitude.
    pub moving: bool,
}

/// Two rows whose random parts have a correlation this close to +-1 (`1 - |rho|` below
/// it) are nearly parallel: their ends can meet at a sharp kink of the integrand.
const PARALLEL_ROWS: f64 = 0.01;

/// Breakpoints where two nearly parallel rows of a polytope trade places as the amplitude
/// moves: where their standardised ends coincide (for negative correlation, mirror each
/// other). With the rows' random parts nearly equal, the polytope's probability has a kink
/// there, smoothed only over the small spread of their difference (for instance a guard
/// `x_c0 + F <= x_c2` and a safety end `x_c2 >= -L`, both random through `x_c2` but whose
/// difference has the tiny sigma of `c0`: the kink sits at `F = -L`). No single row
/// marks it, and the Kronrod error estimate can miss it. Each kink gets the same points as
/// a row's band end ([`push_steps`]).
fn pair_kinks(
    polytope: &Polytope,
    scenario: &FaultScenario,
    profiles: &[(f64, f64, f64)],
    points: &mut Vec<f64>,
) {
    for i in 0..profiles.len() {
        for j in i + 1..profiles.len() {
            let ((mi, si, di), (mj, sj, dj)) = (profiles[i], profiles[j]);
            if !(di > 0.0 && dj > 0.0) {
                continue;
            }
            let rho = scenario.row_covariance(&polytope.rows[i], &polytope.rows[j]) / (di * dj);
            // (NaN, from a zero variance, is not nearly parallel either)
            if rho.is_nan() || 1.0 - rho.abs() >= PARALLEL_ROWS {
                continue;
            }
            let sign = rho.signum();
            // Standardised end h(F) = (end - mean - slope F) / sd; the kink solves
            // h_i(F) = sign h_j(F).
            let rate = si / di - sign * sj / dj;
            if rate == 0.0 || !rate.is_finite() {
                continue;
            }
            let width = (2.0 * (1.0 - rho.abs())).max(0.0).sqrt() / rate.abs();
            let (bi, bj) = (&polytope.bands[i], &polytope.bands[j]);
            for ei in [bi.lower, bi.upper] {
                for ej in [bj.lower, bj.upper] {
                    if !(ei.is_finite() && ej.is_finite()) {
                        continue;
                    }
                    let centre = ((ei - mi) / di - sign * (ej - mj) / dj) / rate;
                    push_steps(points, centre, width);
                }
            }
        }
    }
}

/// A step (or kink) at `centre` smoothed over `width`: the centre and 2 and 6 widths either
/// side, so that its steep part and its flat ends each get pieces of their own.
fn push_steps(points: &mut Vec<f64>, centre: f64, width: f64) {
    points.push(centre);
    if width > 0.0 {
        for k in [-6.0, -2.0, 2.0, 6.0] {
            points.push(centre + k * width);
        }
    }
}

/// Rounding allowance of the sum of the four figures (a few units in the last place of 1)
/// before a site warns that they do not sum to 1 within their bounds.
const SUM_ROUNDING: f64 = 1e-12;

/// Smallest relative step in sigma over which the figures of a worst case are compared to
/// widen its bounds: a `sigma_rel_tol` below it (zero, say) is raised to it, so that the two
/// neighbouring sigmas still differ from the centre in floating point.
const MIN_WIDENING_STEP_REL: f64 = 1e-12;

/// The [`AmplitudeWindow`] of one polytope (see there).
pub fn amplitude_window(
    polytope: &Polytope,
    scenario: &FaultScenario,
    lower: f64,
    upper: f64,
) -> Option<AmplitudeWindow> {
    let (mut lo, mut hi) = (lower, upper);
    let mut points = Vec::new();
    let mut moving = false;
    let profiles: Vec<(f64, f64, f64)> = polytope
        .rows
        .iter()
        .map(|row| scenario.row_profile(row))
        .collect();
    for ((row, band), &(mean, slope, sd)) in
        polytope.rows.iter().zip(&polytope.bands).zip(&profiles)
    {
        if slope.abs() <= f64::EPSILON * row.iter().map(|r| r.abs()).sum::<f64>() {
            continue;
        }
        moving = true;
        let reach = AMPLITUDE_REACH * sd;
        let (a, b) = (
            (band.lower - reach - mean) / slope,
            (band.upper + reach - mean) / slope,
        );
        let (a, b) = if slope > 0.0 { (a, b) } else { (b, a) };
        if !a.is_nan() {
            lo = lo.max(a);
        }
        if !b.is_nan() {
            hi = hi.min(b);
        }
        let width = sd / slope.abs();
        for end in [band.lower, band.upper] {
            if !end.is_finite() {
                continue;
            }
            push_steps(&mut points, (end - mean) / slope, width);
        }
    }
    if lo >= hi {
        return None;
    }
    pair_kinks(polytope, scenario, &profiles, &mut points);
    points.retain(|p| p.is_finite() && *p > lo && *p < hi);
    points.sort_by(f64::total_cmp);
    // Only points that rounding cannot tell apart are merged: a step as narrow as its
    // noise width (sigmas decades below the amplitude range) needs its own breakpoints.
    let min_gap = 8.0 * f64::EPSILON * lo.abs().max(hi.abs());
    points.dedup_by(|a, b| (*a - *b).abs() <= min_gap);
    Some(AmplitudeWindow {
        lower: lo,
        upper: hi,
        breakpoints: points,
        moving,
    })
}

/// The figures for a uniform amplitude on `[lower, upper]`: the mean over the range of each
/// figure, polytope by polytope: in closed form when the scenario's gaussian has rank one
/// ([`mean_over_uniform_shift`]), otherwise integrated over that polytope's own
/// [`amplitude_window`] by adaptive Gauss–Kronrod (Piessens et al. 1983, QUADPACK) with its
/// breakpoints.
/// Outside its window a polytope holds less than `P(Z > AMPLITUDE_REACH)`, which is added
/// to the bound.
fn uniform_outcome(
    evaluator: &Evaluator,
    scenario: &FaultScenario,
    lower: f64,
    upper: f64,
    options: &AnalysisOptions,
) -> Result<Outcome, AnalysisError> {
    if upper <= lower {
        return evaluator.outcome(&scenario.at_amplitude(lower)?);
    }
    let width = upper - lower;
    let mut figures = [Estimate::zero(); 4];
    for (index, figure) in Figure::ALL.into_iter().enumerate() {
        if figure == Figure::SafeQuiet {
            // The quiet share by complement when the other three are small (see
            // `quiet_by_complement`).
            let others = figures[0].add(figures[1]).add(figures[2]);
            if let Some(q) = quiet_by_complement(others) {
                figures[index] = q;
                continue;
            }
        }
        let total = uniform_total(
            evaluator.polytopes(figure),
            scenario,
            (lower, upper),
            options,
            figure.key(),
            &|g, p| evaluator.polytope_probability(g, p, figure),
        )?;
        figures[index] =
            Estimate::new(total.value / width, total.error / width).clamp_probability();
    }
    Ok(Outcome {
        p_vd: figures[0],
        p_vu: figures[1],
        p_sd: figures[2],
        p_sq: figures[3],
    })
}

/// The integral over the amplitude range (not yet divided by its width) of the summed
/// probability of `polytopes`, polytope by polytope as [`uniform_outcome`] describes;
/// `probability` computes one polytope for one gaussian, `label` names the figure in errors.
///
/// # Errors
/// Engine failures.
pub(crate) fn uniform_total(
    polytopes: &[Polytope],
    scenario: &FaultScenario,
    range: (f64, f64),
    options: &AnalysisOptions,
    label: &str,
    probability: &(dyn Fn(&Gaussian, &Polytope) -> Result<Estimate, AnalysisError> + Sync),
) -> Result<Estimate, AnalysisError> {
    let (lower, upper) = range;
    let width = upper - lower;
    let outside = crate::prob::normal::sf(AMPLITUDE_REACH);
    // Polytope by polytope, in parallel; summed in their fixed order, so the total has the
    // same bits whatever the thread count.
    let one = |polytope: &Polytope| -> Result<Estimate, AnalysisError> {
        // One random direction left (one of two channels replaced): closed form.
        if let Some(mean) =
            mean_over_uniform_shift(&scenario.base, polytope, &scenario.direction, lower, upper)
        {
            return Ok(mean.scale(width));
        }
        let Some(window) = amplitude_window(polytope, scenario, lower, upper) else {
            return Ok(Estimate::new(0.0, outside * width));
        };
        let span = window.upper - window.lower;
        let beyond = Estimate::new(0.0, outside * (width - span).max(0.0));
        if !window.moving {
            let g = scenario.at_amplitude(window.lower)?;
            let p = probability(&g, polytope)?;
            return Ok(p.scale(span).add(beyond));
        }
        let mut quad = options.quadrature();
        quad.max_intervals += window.breakpoints.len();
        // The tolerances apply to the mean over the whole range: scale by its width.
        quad.abs_tol *= width;
        let integral = integrate_best_effort(
            |amplitude| {
                let g = scenario.at_amplitude(amplitude).map_err(engine_of)?;
                probability(&g, polytope).map_err(engine_of)
            },
            window.lower,
            window.upper,
            &window.breakpoints,
            &quad,
        )
        .map_err(|e| AnalysisError::engine(format!("integral of {label} over the amplitude"), e))?;
        Ok(Estimate::new(integral.value, integral.error).add(beyond))
    };
    let parts: Vec<Result<Estimate, AnalysisError>> = polytopes.par_iter().map(one).collect();
    let mut total = Estimate::zero();
    for part in parts {
        total = total.add(part?);
    }
    Ok(total)
}

/// The figures for a uniform amplitude on `[lower, upper]` when every amplitude goes to the
/// order-statistic engine: the four figures integrated together over the amplitude by
/// adaptive Gauss–Kronrod (`prob::vector_quadrature`), with breakpoints where a moved
/// channel's mean meets a safety end or another channel's mean, each shifted by a check
/// band, and a few noise widths either side.
fn uniform_outcome_ordered(
    engine: &Engine<'_>,
    scenario: &FaultScenario,
    lower: f64,
    upper: f64,
    options: &AnalysisOptions,
) -> Result<Outcome, AnalysisError> {
    if upper <= lower {
        return Ok(engine.outcome(Scenario::At(scenario, lower))?.0);
    }
    let width = upper - lower;
    let model = engine.model();
    let sd = model
        .total_sigmas()
        .into_iter()
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE);
    let bands: Vec<f64> = model
        .checks
        .iter()
        .flat_map(|c| [c.lower, c.upper])
        .chain([0.0])
        .collect();
    // A moved channel at a safety end, or a check band away from it (the band's end then
    // switches between the safety end and the other channel: a kink).
    let mut levels = Vec::new();
    for t in [model.safety_lower, model.safety_upper] {
        for b in &bands {
            levels.push(t + b);
            levels.push(t - b);
        }
    }
    for m in &scenario.base_mean {
        for b in &bands {
            levels.push(m + b);
            levels.push(m - b);
        }
    }
    let mut points = Vec::new();
    for (i, d) in scenario.direction.iter().enumerate() {
        if *d == 0.0 {
            continue;
        }
        let own = scenario.base_mean.get(i).copied().unwrap_or(0.0);
        for level in &levels {
            if level.is_finite() {
                push_steps(&mut points, (level - own) / d, sd / d.abs());
            }
        }
    }
    points.retain(|p| p.is_finite() && *p > lower && *p < upper);
    points.sort_by(f64::total_cmp);
    points.dedup();
    let tol = crate::prob::vector_quadrature::VectorTolerance {
        abs: options.amplitude_abs * width,
        rel: [options.amplitude_rel; 4],
        max_intervals: options.amplitude_max_intervals + points.len(),
    };
    let r = crate::prob::vector_quadrature::integrate(
        |amplitude| {
            let (o, _) = engine
                .outcome(Scenario::At(scenario, amplitude))
                .map_err(engine_of)?;
            let f = [o.p_vd, o.p_vu, o.p_sd, o.p_sq];
            Ok((f.map(|e| e.value), f.map(|e| e.error)))
        },
        lower,
        upper,
        &points,
        &tol,
    )
    .map_err(|e| AnalysisError::engine("integral of the figures over the amplitude", e))?;
    let figure =
        |i: usize| Estimate::new(r.value[i] / width, r.error[i] / width).clamp_probability();
    Ok(Outcome {
        p_vd: figure(0),
        p_vu: figure(1),
        p_sd: figure(2),
        p_sq: figure(3),
    })
}

/// The quadrature takes engine errors only; analysis errors are carried through as their
/// engine cause or as an invalid argument with the message.
fn engine_of(e: AnalysisError) -> crate::prob::ProbError {
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
/// turns an evaluation into the number maximised.
///
/// # Errors
/// The first failed evaluation the search reads, or a failure of the search itself.
pub(crate) fn search_largest<T: Clone>(
    grid: &[f64],
    precomputed: &[Result<T, AnalysisError>],
    mut at: impl FnMut(f64, Stage) -> Result<T, AnalysisError>,
    value: impl Fn(&T) -> f64,
    options: &AnalysisOptions,
) -> Result<(Scan, Vec<(f64, T)>), crate::prob::ProbError> {
    let mut evaluated = Vec::with_capacity(grid.len());
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
            evaluated.push((sigma, found));
            Ok(-v)
        },
        grid,
        options.sigma_rel_tol,
        options.sigma_max_evaluations,
        true,
    )?;
    Ok((scan, evaluated))
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
    let (scan, evaluated) = search_largest(
        &grid,
        &precomputed,
        residual_at,
        |r: &Estimate| r.value,
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
    // as they do over that distance, so widen every bound by it. The three sigmas are
    // independent and computed in parallel.
    let step = options.sigma_rel_tol.max(MIN_WIDENING_STEP_REL);
    let (centre, (left, right)) = rayon::join(
        || at(sigma),
        || {
            rayon::join(
                || at((sigma * (1.0 - step)).max(lo)),
                || at((sigma * (1.0 + step)).min(hi)),
            )
        },
    );
    let (centre, left, right) = (centre?, left?, right?);
    let outcome = centre.widened(|f| {
        let c = centre.get(f).value;
        (left.get(f).value - c)
            .abs()
            .max((right.get(f).value - c).abs())
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
