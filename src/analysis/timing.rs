//! Figures over time (docs/architecture-format.md, "Timing"): the four outcomes of a fault
//! site over the samples within the detection deadline with the confirmation rule, the
//! detection curve, and the fault-free rate of false alarms per hour.
//!
//! The channel deviations of one sample are `x = m + A c + d F + e`: `c` the terms that stay
//! constant over the interval (the shared sources not marked fresh, the own noise of channels
//! marked constant, a gaussian fault amplitude) as independent standard normals, `F` a fault
//! amplitude of another kind, and `e` the terms drawn anew every sample. Given `c` and `F` the
//! samples are independent, so the confirmation rule is a Markov chain driven by the
//! per-sample figures of the gaussian `N(m + A c + d F, Cov e)` (`prob::debounce`); the
//! constant terms are integrated outside it by nested adaptive Gauss–Kronrod with the
//! gaussian weight (the tails beyond [`GAUSSIAN_REACH`] added to the bound), the amplitude
//! as the single-sample analysis does (uniform: over its range with the steps of every
//! polytope as breakpoints; points: their weighted sum; an unknown sigma: the worst timed
//! residual over its range).
//!
//! Bounds: a chain over `N` samples whose per-sample probabilities are each off by at most
//! their bounds moves every interval probability by at most `N` times the sum of the four
//! bounds (the total variation of a product of `N` independent steps grows at most
//! additively, common practice for couplings); the quadrature adds its own.

use rayon::prelude::*;

use crate::model::{Amplitude, CompiledFault, CompiledModel, Timing};
use crate::prob::Estimate;
use crate::prob::debounce::{DebounceChain, episode_rate, episode_rate_sensitivity};
use crate::prob::normal;
use crate::prob::optimise::{Stage, log_grid};
use crate::prob::order::{
    Accuracy as OrderAccuracy, Question, SharedGaussian, figures as order_figures,
    unsupported_reason,
};
use crate::prob::polytope::Gaussian;
use crate::prob::vector_quadrature::{ManyPoint, integrate_many};

use super::engine::{Engine, FigureMethod, POLYTOPES_UP_TO};
use super::error::AnalysisError;
use super::evaluate::Evaluator;
use super::metrics::{Metrics, metrics};
use super::options::AnalysisOptions;
use super::outcome::{Figure, Outcome};
use super::scenario::FaultScenario;
use super::site::{SiteResult, amplitude_window, at_and_around, reach_beyond, search_largest};
use super::timing_split::{Split, crossings};

/// Most terms constant over the interval that one scenario may have (each is one nested
/// integral around the chain).
pub const MAX_CONSTANT_TERMS: usize = 3;

/// Constant terms are integrated over `[-GAUSSIAN_REACH, GAUSSIAN_REACH]` standard
/// deviations; the two tails beyond hold `2 P(Z > 8.5)`, about 1.9e-17 (mpmath 1.3.0 gives
/// 1.896e-17), which is added to every bound.
pub const GAUSSIAN_REACH: f64 = 8.5;

/// Eigenvalues of the constant covariance below this share of the largest are dropped (the
/// terms they stand for move the channels by less than 1e-6 of the largest one's spread).
pub(super) const CONSTANT_RANK_REL: f64 = 1e-12;

/// Relative accuracy asked of the timed figures and of the per-sample figures they are
/// built from (at least; the options may ask less): every point of the outer integrals is a
/// whole chain over the interval, so they are held to a looser target than one-sample
/// figures. The bounds reported are the bounds reached, whatever the target.
pub const TIMED_REL: f64 = 1e-5;

/// Most intervals of an inner level of the nested integrals over the constant terms: the
/// work is the product of the levels' points, so the inner ones get a small budget (their
/// shortfall is in their bound, which the outer level carries).
const INNER_MAX_INTERVALS: usize = 40;

/// Points of the scan over an unknown fault sigma of the timed residual (each point is a
/// whole timed analysis of the site; the best one is refined by Brent's method).
const TIMED_SIGMA_SCAN_POINTS: usize = 25;

/// A step of a sample's figures narrower than this many standard deviations of a constant
/// term gets breakpoints of its own ([`Split::steps`]).
pub(super) const NARROW_STEP: f64 = 0.05;

/// Hours in seconds.
const SECONDS_PER_HOUR: f64 = 3600.0;

/// The timed figures of one fault site.
#[derive(Debug, Clone, PartialEq)]
pub struct TimedSite {
    /// The site's name.
    pub name: String,
    /// The four outcomes over the interval: dangerous (the output outside the safety band in
    /// at least `danger_samples` samples) and confirmed by the deadline, dangerous and not
    /// confirmed in time (the residual), confirmed and not dangerous, neither.
    pub outcome: Outcome,
    /// `detected_by[j]`: the probability that the rule has confirmed by sample `j + 1`.
    pub detected_by: Vec<Estimate>,
    /// The fault sigma of the worst timed residual, when the sigma is unknown.
    pub worst_sigma: Option<f64>,
    /// How many terms constant over the interval were integrated around the chain.
    pub constant_terms: usize,
    /// The method that computed the figures of each sample.
    pub method: FigureMethod,
    /// Warnings for the analyst (a worst case at an end of its range).
    pub warnings: Vec<String>,
}

/// Everything timed of one architecture.
#[derive(Debug, Clone, PartialEq)]
pub struct TimedAnalysis {
    /// The timing section of the file.
    pub timing: Timing,
    /// Fault-free alarm episodes per sample (steady state, see `prob::debounce`).
    pub false_alarms_per_sample: Estimate,
    /// Fault-free alarm episodes per hour of operation.
    pub false_alarms_per_hour: Estimate,
    /// One result per fault site, in file order.
    pub sites: Vec<TimedSite>,
    /// The hardware metrics with every site's timed outcome in place of its one-sample one
    /// (a fault confirmed after the deadline counts as not detected).
    pub metrics: Metrics,
}

impl TimedAnalysis {
    /// Mean operating hours between two false alarms, when any occur.
    pub fn hours_between_false_alarms(&self) -> Option<Estimate> {
        let r = self.false_alarms_per_hour;
        (r.value > 0.0).then(|| {
            let lo = (r.value - r.error).max(0.0);
            let value = 1.0 / r.value;
            let error = if lo > 0.0 {
                1.0 / lo - value
            } else {
                f64::INFINITY
            };
            Estimate::new(value, error)
        })
    }
}

/// What computes the figures of one sample given the constant terms: the order-statistic
/// engine when the model's structure fits it and the fresh part leaves the channels
/// independent (a diagonal covariance: no own correlations, no fresh sources), the
/// polytopes otherwise.
#[derive(Clone, Copy)]
enum SampleEngine<'a> {
    Order(&'a Question, OrderAccuracy),
    Polytopes(&'a Evaluator),
}

/// The channels of one sample as the order-statistic engine takes them: independent, with
/// the mean of `g` and the fresh standard deviations of `split`, no shared term.
fn independent_channels(g: &Gaussian, split: &Split) -> SharedGaussian {
    SharedGaussian {
        mean: g.mean().to_vec(),
        own_sd: split.fresh_sd.clone(),
        shared: Vec::new(),
        uniform: None,
    }
}

impl SampleEngine<'_> {
    /// The four per-sample figures at the gaussian `g`.
    fn outcome(&self, g: &Gaussian, split: &Split) -> Result<Outcome, AnalysisError> {
        match self {
            SampleEngine::Polytopes(evaluator) => evaluator.outcome(g),
            SampleEngine::Order(q, accuracy) => {
                let f = order_figures(&independent_channels(g, split), q, accuracy)
                    .map_err(|e| AnalysisError::engine("order-statistic figures of a sample", e))?;
                Ok(Outcome {
                    p_vd: f.violated_detected,
                    p_vu: f.violated_undetected,
                    p_sd: f.safe_detected,
                    p_sq: f.safe_quiet,
                })
            }
        }
    }

    /// The engine for the samples of `split`: the order statistics when they fit.
    fn choose<'a>(
        engine: &'a Engine<'_>,
        split: &Split,
        options: &AnalysisOptions,
    ) -> Result<SampleEngine<'a>, AnalysisError> {
        let small = engine.model().channels.len() < POLYTOPES_UP_TO && engine.polytopes().is_ok();
        if let Some(q) = engine.order_question()
            && split.fresh_diagonal
            && !small
            && unsupported_reason(&independent_channels(&split.fresh, split), q).is_none()
        {
            return Ok(SampleEngine::Order(
                q,
                OrderAccuracy {
                    abs: options.polytope_abs,
                    rel: options.polytope_rel.max(TIMED_REL),
                    max_intervals: options.amplitude_max_intervals,
                },
            ));
        }
        let evaluator = engine.evaluator().map_err(|e| match e {
            AnalysisError::TooLarge { .. } => AnalysisError::Unsupported {
                message: format!(
                    "the samples of the timed analysis need the polytope engine, which does \
                     not fit: {e}; drop the [timing] section to analyse one sample"
                ),
            },
            other => other,
        })?;
        Ok(SampleEngine::Polytopes(evaluator))
    }

    /// Which method computes the samples.
    fn method(&self) -> FigureMethod {
        match self {
            SampleEngine::Order(..) => FigureMethod::OrderStatistics,
            SampleEngine::Polytopes(_) => FigureMethod::Polytopes,
        }
    }
}

/// Tolerances of the nested integrals.
#[derive(Debug, Clone, Copy)]
struct Accuracy {
    abs: f64,
    rel: f64,
    max_intervals: usize,
}

/// `integral over c of phi(c) f(c) dc` over the constant terms from `level` on, each over
/// `[-GAUSSIAN_REACH, GAUSSIAN_REACH]` and integrated in the probability scale `u = Phi(c)`;
/// `f` gives values and their bounds; `scale[k]` bounds component `k` of `f` (for the
/// tails).
fn over_constant_terms(
    level: usize,
    terms: usize,
    c: &mut Vec<f64>,
    f: &dyn Fn(&[f64]) -> Result<ManyPoint, AnalysisError>,
    steps: &dyn Fn(usize, &[f64]) -> Vec<f64>,
    scale: &[f64],
    accuracy: &Accuracy,
) -> Result<ManyPoint, AnalysisError> {
    if level == terms {
        return f(c);
    }
    c.truncate(level);
    let mut breakpoints = vec![-3.0, 0.0, 3.0];
    breakpoints.extend(steps(level, c));
    let k = scale.len();
    let rel = vec![accuracy.rel; k];
    let mut failure = None;
    let result = integrate_many(
        |t| {
            c.truncate(level);
            c.push(t);
            match over_constant_terms(level + 1, terms, c, f, steps, scale, accuracy) {
                Ok((v, e)) => {
                    let w = normal::pdf(t);
                    Ok((
                        v.iter().map(|x| x * w).collect(),
                        e.iter().map(|x| x * w).collect(),
                    ))
                }
                Err(err) => {
                    failure = Some(err);
                    Err(crate::prob::ProbError::InvalidArgument(
                        "an inner integral failed".into(),
                    ))
                }
            }
        },
        k,
        -GAUSSIAN_REACH,
        GAUSSIAN_REACH,
        &breakpoints,
        accuracy.abs,
        &rel,
        if level == 0 {
            accuracy.max_intervals
        } else {
            accuracy.max_intervals.min(INNER_MAX_INTERVALS)
        },
    );
    c.truncate(level);
    let r = match (result, failure) {
        (_, Some(err)) => return Err(err),
        (r, None) => r.map_err(|e| AnalysisError::engine("integral over the constant terms", e))?,
    };
    let tail = 2.0 * normal::sf(GAUSSIAN_REACH);
    let error = r
        .error
        .iter()
        .zip(scale)
        .map(|(e, s)| e + tail * s)
        .collect();
    Ok((r.value, error))
}

/// The per-sample outcome given everything constant, and the chain over the interval:
/// `[p_vd, p_vu, p_sd, p_sq, detected by sample 1, .., detected by sample N]` with bounds.
fn chain_point(
    sampler: &SampleEngine<'_>,
    split: &Split,
    chain: &DebounceChain,
    timing: &Timing,
    gaussian: &Gaussian,
) -> Result<ManyPoint, AnalysisError> {
    let o = sampler.outcome(gaussian, split)?;
    let sample = [o.p_vd.value, o.p_vu.value, o.p_sd.value, o.p_sq.value];
    let moved: f64 = Figure::ALL.iter().map(|f| o.get(*f).error).sum();
    let f = chain.interval(sample, timing.samples, timing.danger_samples);
    let error = moved * timing.samples as f64;
    let mut values = f.outcome.to_vec();
    values.extend(f.detected_by);
    let errors = vec![error; values.len()];
    Ok((values, errors))
}

/// The timed figures of one scenario at a fixed non-gaussian amplitude (or none).
fn timed_at(
    sampler: &SampleEngine<'_>,
    chain: &DebounceChain,
    timing: &Timing,
    split: &Split,
    amplitude: f64,
    accuracy: &Accuracy,
) -> Result<ManyPoint, AnalysisError> {
    let scale = vec![1.0; 4 + timing.samples];
    let f = |c: &[f64]| chain_point(sampler, split, chain, timing, &split.at(c, amplitude)?);
    let steps = |level: usize, c: &[f64]| split.steps(level, c, amplitude);
    over_constant_terms(
        0,
        split.constant.len(),
        &mut Vec::new(),
        &f,
        &steps,
        &scale,
        accuracy,
    )
}

/// `(value, bound)` of the residual `p_vu` of a timed point.
fn residual_of(point: &ManyPoint) -> (f64, f64) {
    (
        point.0.get(1).copied().unwrap_or(0.0),
        point.1.get(1).copied().unwrap_or(0.0),
    )
}

/// `centre` with every bound widened to hold the values at `left` and `right` too (the
/// neighbouring sigmas of a worst case, [`reach_beyond`]), and the residual's bound also by
/// `allowance`.
fn widened_point(
    centre: &ManyPoint,
    left: &ManyPoint,
    right: &ManyPoint,
    allowance: f64,
) -> ManyPoint {
    let (values, bounds) = centre;
    let widened = bounds
        .iter()
        .enumerate()
        .map(|(i, e)| {
            let c = Estimate::new(values.get(i).copied().unwrap_or(0.0), *e);
            let moved = [left, right]
                .iter()
                .filter_map(|p| Some(Estimate::new(*p.0.get(i)?, *p.1.get(i)?)))
                .fold(0.0_f64, |m, n| m.max(reach_beyond(c, n)));
            e + moved + if i == 1 { allowance } else { 0.0 }
        })
        .collect();
    (values.clone(), widened)
}

fn to_site(
    name: &str,
    point: &ManyPoint,
    worst_sigma: Option<f64>,
    split: &Split,
    sampler: &SampleEngine<'_>,
) -> TimedSite {
    let (v, e) = point;
    let est = |i: usize| {
        Estimate::new(
            v.get(i).copied().unwrap_or(0.0),
            e.get(i).copied().unwrap_or(0.0),
        )
        .clamp_probability()
    };
    TimedSite {
        name: name.to_string(),
        outcome: Outcome {
            p_vd: est(0),
            p_vu: est(1),
            p_sd: est(2),
            p_sq: est(3),
        },
        detected_by: (4..v.len()).map(est).collect(),
        worst_sigma,
        constant_terms: split.constant.len(),
        method: sampler.method(),
        warnings: Vec::new(),
    }
}

/// The timed figures of one fault site.
///
/// # Errors
/// Engine failures; more constant terms than [`MAX_CONSTANT_TERMS`].
pub fn timed_site(
    engine: &Engine<'_>,
    timing: &Timing,
    fault: &CompiledFault,
    options: &AnalysisOptions,
) -> Result<TimedSite, AnalysisError> {
    let chain = timing
        .confirm
        .chain()
        .map_err(|e| AnalysisError::engine("confirmation rule", e))?;
    let accuracy = Accuracy {
        abs: options.amplitude_abs,
        rel: options.amplitude_rel.max(TIMED_REL),
        max_intervals: options.amplitude_max_intervals,
    };
    let k = 4 + timing.samples;
    let model = engine.model();
    match &fault.amplitude {
        Amplitude::Gaussian { mean, sigma } => {
            let split = Split::new(model, timing, Some(fault), Some((*mean, *sigma)))?;
            let sampler = SampleEngine::choose(engine, &split, options)?;
            let p = timed_at(&sampler, &chain, timing, &split, 0.0, &accuracy)?;
            Ok(to_site(&fault.name, &p, None, &split, &sampler))
        }
        Amplitude::Points(points) => {
            let split = Split::new(model, timing, Some(fault), None)?;
            let sampler = SampleEngine::choose(engine, &split, options)?;
            let mut total = (vec![0.0; k], vec![0.0; k]);
            for (value, weight) in points {
                let (v, e) = timed_at(&sampler, &chain, timing, &split, *value, &accuracy)?;
                for i in 0..k {
                    total.0[i] += weight * v[i];
                    total.1[i] += weight * e[i];
                }
            }
            Ok(to_site(&fault.name, &total, None, &split, &sampler))
        }
        Amplitude::Uniform { lower, upper } => {
            let split = Split::new(model, timing, Some(fault), None)?;
            let sampler = SampleEngine::choose(engine, &split, options)?;
            let p = if upper > lower {
                let breakpoints =
                    uniform_breakpoints(&sampler, model, &split, fault, *lower, *upper)?;
                let width = upper - lower;
                let mut failure = None;
                let r = integrate_many(
                    |a| match timed_at(&sampler, &chain, timing, &split, a, &accuracy) {
                        Ok((v, e)) => Ok((
                            v.iter().map(|x| x / width).collect(),
                            e.iter().map(|x| x / width).collect(),
                        )),
                        Err(err) => {
                            failure = Some(err);
                            Err(crate::prob::ProbError::InvalidArgument(
                                "a timed point failed".into(),
                            ))
                        }
                    },
                    k,
                    *lower,
                    *upper,
                    &breakpoints,
                    accuracy.abs,
                    &vec![accuracy.rel; k],
                    accuracy.max_intervals,
                );
                match (r, failure) {
                    (_, Some(err)) => return Err(err),
                    (r, None) => {
                        let r = r.map_err(|e| {
                            AnalysisError::engine("integral over a uniform amplitude", e)
                        })?;
                        (r.value, r.error)
                    }
                }
            } else {
                timed_at(&sampler, &chain, timing, &split, *lower, &accuracy)?
            };
            Ok(to_site(&fault.name, &p, None, &split, &sampler))
        }
        Amplitude::GaussianUnknownSigma {
            mean,
            sigma_lo,
            sigma_hi,
            ..
        } => {
            type AtSigma<'e> = (ManyPoint, Split, SampleEngine<'e>);
            let at_sigma = |sigma: f64, rel: f64| -> Result<AtSigma<'_>, AnalysisError> {
                let split = Split::new(model, timing, Some(fault), Some((*mean, sigma)))?;
                let sampler = SampleEngine::choose(engine, &split, options)?;
                let acc = Accuracy { rel, ..accuracy };
                let p = timed_at(&sampler, &chain, timing, &split, 0.0, &acc)?;
                Ok((p, split, sampler))
            };
            let grid = log_grid(
                *sigma_lo,
                *sigma_hi,
                options.sigma_scan_points.clamp(3, TIMED_SIGMA_SCAN_POINTS),
            )
            .map_err(|e| AnalysisError::engine("grid over the fault sigma", e))?;
            let scan_rel = options.scan_tolerance().rel.max(accuracy.rel);
            // (value, bound) of the residual: the grid at the scan tolerance (in parallel),
            // then every local maximum refined at the full one, as for one sample.
            let residual_at = |sigma: f64, stage: Stage| -> Result<(f64, f64), AnalysisError> {
                let rel = match stage {
                    Stage::Scan => scan_rel,
                    Stage::Refine => accuracy.rel,
                };
                at_sigma(sigma, rel).map(|(p, ..)| residual_of(&p))
            };
            let precomputed: Vec<Result<(f64, f64), AnalysisError>> = grid
                .par_iter()
                .map(|s| residual_at(*s, Stage::Scan))
                .collect();
            let found = search_largest(
                &grid,
                &precomputed,
                residual_at,
                |r: &(f64, f64)| r.0,
                |r: &(f64, f64)| r.1,
                options,
            )
            .map_err(|e| AnalysisError::engine("search of the worst timed fault sigma", e))?;
            let (sigma, at_end) = found
                .scan
                .minima
                .first()
                .map_or((*sigma_lo, false), |m| (m.x, m.at_boundary));
            // As for one sample (`site::search_largest`): the residual's bound gains the
            // search's ranking allowance, and every figure the move over sigma_rel_tol
            // either side of the sigma found.
            let allowance = found.allowance;
            let (centre, left, right) =
                at_and_around(sigma, (*sigma_lo, *sigma_hi), options, |s| {
                    at_sigma(s, accuracy.rel)
                });
            let (p, split, sampler) = centre?;
            let (left, right) = (left?.0, right?.0);
            let p = widened_point(&p, &left, &right, allowance);
            let mut site = to_site(&fault.name, &p, Some(sigma), &split, &sampler);
            if at_end {
                site.warnings.push(format!(
                    "the worst timed residual of '{}' sits at an end of the sigma range [{}, {}]: \
                     widen the range (amplitude.gaussian.sigma = {{ unknown = [lo, hi] }}) to be \
                     sure it is the true maximum",
                    fault.name, sigma_lo, sigma_hi
                ));
            }
            Ok(site)
        }
    }
}

/// The amplitudes where a figure of one sample steps, over a uniform range: with the
/// polytopes, every polytope's steps (as the single-sample analysis integrates them); with
/// the order statistics, where the moved channel's mean meets another channel's mean, a band
/// end of the safety requirement or a check limit, and a few fresh widths either side.
fn uniform_breakpoints(
    sampler: &SampleEngine<'_>,
    model: &CompiledModel,
    split: &Split,
    fault: &CompiledFault,
    lower: f64,
    upper: f64,
) -> Result<Vec<f64>, AnalysisError> {
    let mut points = Vec::new();
    match sampler {
        SampleEngine::Polytopes(evaluator) => {
            let scenario = FaultScenario::new(model, fault)?;
            for figure in Figure::ALL {
                for poly in evaluator.polytopes(figure) {
                    if let Some(w) = amplitude_window(poly, &scenario, lower, upper) {
                        points.push(w.lower);
                        points.push(w.upper);
                        points.extend(w.breakpoints);
                    }
                }
            }
        }
        SampleEngine::Order(..) => {
            points = crossings(
                split.fresh.mean(),
                &split.direction,
                &split.fresh_sd,
                &split.levels,
            );
        }
    }
    points.retain(|p| p.is_finite() && *p > lower && *p < upper);
    points.sort_by(f64::total_cmp);
    points.dedup();
    Ok(points)
}

/// Fault-free alarm episodes per sample: the steady-state rate of the rule given the
/// constant terms, averaged over them.
///
/// # Errors
/// Engine failures.
pub fn false_alarms_per_sample(
    engine: &Engine<'_>,
    timing: &Timing,
    options: &AnalysisOptions,
) -> Result<Estimate, AnalysisError> {
    let split = Split::new(engine.model(), timing, None, None)?;
    let sampler = SampleEngine::choose(engine, &split, options)?;
    let rule = timing.confirm;
    let f = |c: &[f64]| -> Result<ManyPoint, AnalysisError> {
        let o = sampler.outcome(&split.at(c, 0.0)?, &split)?;
        let alarm = o.alarm();
        let p = alarm.value.clamp(0.0, 1.0);
        let rate = episode_rate(&rule, p)
            .map_err(|e| AnalysisError::engine("false-alarm rate of the rule", e))?;
        let moved = episode_rate_sensitivity(&rule, p, alarm.error)
            .map_err(|e| AnalysisError::engine("false-alarm rate of the rule", e))?;
        Ok((vec![rate], vec![moved]))
    };
    let accuracy = Accuracy {
        // Rates are tiny: only the relative target counts.
        abs: 0.0,
        rel: options.amplitude_rel.max(TIMED_REL),
        max_intervals: options.amplitude_max_intervals,
    };
    let steps = |level: usize, c: &[f64]| split.steps(level, c, 0.0);
    let (v, e) = over_constant_terms(
        0,
        split.constant.len(),
        &mut Vec::new(),
        &f,
        &steps,
        &[1.0],
        &accuracy,
    )?;
    Ok(Estimate::new(v[0], e[0]))
}

/// The whole timed analysis of a model with a timing section; `sites` are the one-sample
/// results (for the rates and the latent coverage of the timed metrics).
///
/// # Errors
/// Engine failures, with the site named.
pub fn analyze_timed(
    engine: &Engine<'_>,
    timing: &Timing,
    sites: &[SiteResult],
    options: &AnalysisOptions,
) -> Result<TimedAnalysis, AnalysisError> {
    let per_sample = false_alarms_per_sample(engine, timing, options)?;
    let timed: Vec<TimedSite> = engine
        .model()
        .faults
        .par_iter()
        .map(|f| {
            timed_site(engine, timing, f, options).map_err(|e| match e {
                AnalysisError::Engine { context, source } => AnalysisError::Engine {
                    context: format!("fault site '{}', timed, {context}", f.name),
                    source,
                },
                other => other,
            })
        })
        .collect::<Result<_, _>>()?;
    let replaced: Vec<SiteResult> = sites
        .iter()
        .zip(&timed)
        .map(|(s, t)| SiteResult {
            outcome: t.outcome,
            ..s.clone()
        })
        .collect();
    let samples_per_hour = SECONDS_PER_HOUR / timing.sample_period;
    Ok(TimedAnalysis {
        timing: timing.clone(),
        false_alarms_per_sample: per_sample,
        false_alarms_per_hour: per_sample.scale(samples_per_hour),
        sites: timed,
        metrics: metrics(&replaced),
    })
}
