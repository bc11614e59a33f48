//! Isolation after detection: which channel a detection blames, and what runs on without it
//! (docs/architecture-format.md, "Isolation").
//!
//! The event "detected, and the rule blames channel j" is, like every outcome, a disjoint
//! union of polytopes in the space of the channel deviations (built in [`super::blame`]), so
//! it is integrated with the same engine and the same error bounds.
//!
//! Per fault site the classes are combined into: the faulty channel blamed (isolated), a
//! healthy channel blamed (the fault stays in the vote, the worst outcome; for an unknown
//! spread its worst case over sigma, as for the residual), none blamed (a shutdown), and not
//! detected. Each degraded architecture (one channel dropped) is analysed like any file.

use rayon::prelude::*;

use crate::model::{Amplitude, CompiledFault};
use crate::model::{CompiledModel, FaultMode, IsolationRule};
use crate::prob::Estimate;
use crate::prob::optimise::log_grid;
use crate::prob::polytope::ErrorTarget;

pub use super::blame::{Blame, BlamePlan, detecting_patterns, firing_states};
use super::engine::{Engine, Scenario};
use super::error::AnalysisError;
use super::options::AnalysisOptions;
use super::run::{Analysis, analyze};
use super::scenario::FaultScenario;
use super::site::{SiteResult, at_and_around, reach_beyond, search_largest, uniform_total};

/// The isolation figures of one fault site.
#[derive(Debug, Clone, PartialEq)]
pub struct SiteIsolation {
    /// The site's name.
    pub name: String,
    /// Candidates (indices into the candidate list) that the fault moves.
    pub faulty: Vec<usize>,
    /// True when the fault moves exactly one channel and it is a candidate: dropping it
    /// removes the fault.
    pub removable: bool,
    /// Detected, split by the channel blamed.
    pub blame: Blame,
    /// `P(detected and a channel the fault moves is blamed)`.
    pub isolated: Estimate,
    /// `P(detected and a healthy channel is blamed)`: the fault stays in the vote.
    pub wrong: Estimate,
    /// `P(not detected, output within its band)`.
    pub quiet_safe: Estimate,
    /// `P(not detected, output outside its band)`: the residual.
    pub quiet_violated: Estimate,
    /// For an unknown spread: the sigma where `wrong` is largest (the figures are taken
    /// there).
    pub sigma: Option<f64>,
    /// `P(a channel is blamed, the fault survives in the architecture without it, and that
    /// architecture then gives a dangerous undetected output)`, the next sample taken as
    /// independent of the one that blamed; `None` when no degraded analysis holds the site.
    pub after_drop_residual: Option<Estimate>,
    /// Warnings for the analyst.
    pub warnings: Vec<String>,
}

/// The end states of single faults, each a FIT-weighted share over the sites.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct EndStates {
    /// The function goes on with a correct output: the fault isolated and removed, or not
    /// detected and harmless.
    pub continues: Estimate,
    /// No channel blamed: a safe shutdown.
    pub shutdown: Estimate,
    /// A channel blamed but the fault still in the vote (a healthy channel dropped, or one of
    /// several hit channels).
    pub fault_stays: Estimate,
    /// Not detected and dangerous (the residual share).
    pub residual: Estimate,
}

/// The architecture that runs on once a channel is dropped, analysed like any file.
#[derive(Debug, Clone, PartialEq)]
pub struct DegradedStage {
    /// The dropped channel.
    pub dropped: String,
    /// Its output and checks in words (for reports).
    pub output: String,
    /// The checks that remain, as formulas.
    pub checks: Vec<String>,
    /// Its analysis, or why there is none.
    pub analysis: Result<Box<Analysis>, String>,
}

/// Everything isolation adds to an analysis.
#[derive(Debug, Clone, PartialEq)]
pub struct IsolationAnalysis {
    /// The rule of the file.
    pub rule: IsolationRule,
    /// The channels that may be blamed.
    pub candidates: Vec<String>,
    /// Fault-free: the false alarms split by the channel they drop.
    pub baseline: Blame,
    /// One entry per fault site, in file order.
    pub sites: Vec<SiteIsolation>,
    /// The FIT-weighted end states of a single fault.
    pub end_states: EndStates,
    /// One degraded architecture per candidate.
    pub degraded: Vec<DegradedStage>,
    /// What the file states of the degraded architectures (`[isolation.degraded]`), when
    /// it states anything; otherwise they are derived alone.
    pub stated: Option<crate::model::StatedDegraded>,
    /// Warnings for the analyst.
    pub warnings: Vec<String>,
}

/// The isolation figures of a model with an isolation section, given its site results.
///
/// # Errors
/// Engine failures; a decomposition past a limit.
pub fn analyze_isolation(
    engine: &Engine<'_>,
    sites: &[SiteResult],
    options: &AnalysisOptions,
) -> Result<Option<IsolationAnalysis>, AnalysisError> {
    let model = engine.model();
    let Some(isolation) = &model.isolation else {
        return Ok(None);
    };
    let plan = BlamePlan::new(model, options)?;
    let degraded: Vec<DegradedStage> = isolation
        .degraded
        .iter()
        .map(|d| {
            let dropped = name_of(model, d.dropped);
            match &d.model {
                Ok(m) => DegradedStage {
                    dropped,
                    output: m.output_description.clone(),
                    checks: m
                        .checks
                        .iter()
                        .map(|c| format!("{}: {}", c.name, c.description))
                        .collect(),
                    analysis: analyze(m, options, false)
                        .map(Box::new)
                        .map_err(|e| e.to_string()),
                },
                Err(why) => DegradedStage {
                    dropped,
                    output: String::new(),
                    checks: Vec::new(),
                    analysis: Err(why.clone()),
                },
            }
        })
        .collect();
    let baseline_gaussian = super::scenario::baseline(model)?;
    let baseline = plan.blame(&baseline_gaussian)?;
    let results: Vec<SiteIsolation> = model
        .faults
        .par_iter()
        .zip(sites.par_iter())
        .map(|(fault, site)| site_isolation(engine, &plan, fault, site, &degraded, options))
        .collect::<Result<_, _>>()?;
    let mut warnings: Vec<String> = results.iter().flat_map(|s| s.warnings.clone()).collect();
    for (site, fault) in results.iter().zip(&model.faults) {
        let sum = site
            .blame
            .detected()
            .add(site.quiet_safe)
            .add(site.quiet_violated);
        if (sum.value - 1.0).abs() > sum.error + 1e-9 {
            warnings.push(format!(
                "the isolation figures of '{}' sum to {:.9} instead of 1 (bound {:.1e}): treat \
                 them with care",
                fault.name, sum.value, sum.error
            ));
        }
    }
    if model.timing.is_some() {
        warnings.push(
            "isolation is computed for one sample: the confirmation rule of the timing \
             section is not applied to the blame"
                .into(),
        );
    }
    Ok(Some(IsolationAnalysis {
        rule: isolation.rule,
        candidates: plan.candidates.iter().map(|&i| name_of(model, i)).collect(),
        baseline,
        end_states: end_states(&results, &model.faults),
        sites: results,
        degraded,
        stated: isolation.stated.clone(),
        warnings,
    }))
}

fn name_of(model: &CompiledModel, channel: usize) -> String {
    model.channels.get(channel).cloned().unwrap_or_default()
}

/// The end states of an analysis: from its isolation figures when the file has an isolation
/// section; otherwise every detection is a shutdown (nothing is dropped), so they follow from
/// the four outcomes: continues `p_sq`, shutdown `p_vd + p_sd`, residual `p_vu`.
pub fn end_states_of(analysis: &Analysis) -> EndStates {
    if let Some(i) = &analysis.isolation {
        return i.end_states;
    }
    let total: f64 = analysis.sites.iter().map(|s| s.fit).sum();
    let mut acc = [Estimate::zero(); 3];
    if total > 0.0 {
        for s in &analysis.sites {
            let w = s.fit / total;
            acc[0] = acc[0].add(s.outcome.p_sq.scale(w));
            acc[1] = acc[1].add(s.outcome.alarm().scale(w));
            acc[2] = acc[2].add(s.outcome.p_vu.scale(w));
        }
    }
    EndStates {
        continues: acc[0].clamp_probability(),
        shutdown: acc[1].clamp_probability(),
        fault_stays: Estimate::zero(),
        residual: acc[2].clamp_probability(),
    }
}

/// The FIT-weighted end states over the sites.
fn end_states(sites: &[SiteIsolation], faults: &[CompiledFault]) -> EndStates {
    let total: f64 = faults.iter().map(|f| f.fit).sum();
    let mut acc = [Estimate::zero(); 4];
    if total > 0.0 {
        for (s, f) in sites.iter().zip(faults) {
            let w = f.fit / total;
            let (gone, stays) = if s.removable {
                (s.isolated, s.wrong)
            } else {
                (Estimate::zero(), s.wrong.add(s.isolated))
            };
            acc[0] = acc[0].add(gone.add(s.quiet_safe).scale(w));
            acc[1] = acc[1].add(s.blame.declined.scale(w));
            acc[2] = acc[2].add(stays.scale(w));
            acc[3] = acc[3].add(s.quiet_violated.scale(w));
        }
    }
    EndStates {
        continues: acc[0].clamp_probability(),
        shutdown: acc[1].clamp_probability(),
        fault_stays: acc[2].clamp_probability(),
        residual: acc[3].clamp_probability(),
    }
}

/// The channels a fault moves.
fn moved_channels(fault: &CompiledFault) -> Vec<usize> {
    match &fault.mode {
        FaultMode::Add { direction } => direction
            .iter()
            .enumerate()
            .filter(|(_, d)| **d != 0.0)
            .map(|(i, _)| i)
            .collect(),
        FaultMode::Replace { channel, .. } => vec![*channel],
    }
}

fn site_isolation(
    engine: &Engine<'_>,
    plan: &BlamePlan,
    fault: &CompiledFault,
    site: &SiteResult,
    degraded: &[DegradedStage],
    options: &AnalysisOptions,
) -> Result<SiteIsolation, AnalysisError> {
    let model = engine.model();
    let named = |e: AnalysisError| match e {
        AnalysisError::Engine { context, source } => AnalysisError::Engine {
            context: format!("fault site '{}', isolation, {context}", fault.name),
            source,
        },
        other => other,
    };
    let scenario = FaultScenario::new(model, fault)?;
    let moved = moved_channels(fault);
    let faulty: Vec<usize> = plan
        .candidates
        .iter()
        .enumerate()
        .filter(|(_, c)| moved.contains(c))
        .map(|(i, _)| i)
        .collect();
    let removable = moved.len() == 1 && faulty.len() == 1;
    let healthy: Vec<usize> = (0..plan.candidates.len())
        .filter(|i| !faulty.contains(i))
        .collect();
    let all: Vec<usize> = (0..plan.class_count()).collect();
    let tol = options.polytope_tolerance();
    let mut warnings = Vec::new();
    let mut wrong_allowance = 0.0;
    let (classes, sigma, quiet) = match &fault.amplitude {
        Amplitude::Gaussian { mean, sigma } => {
            let g = scenario.with_gaussian_amplitude(*mean, *sigma)?;
            let c = plan.classes_at(&g, &all, &tol).map_err(named)?;
            (c, None, None)
        }
        Amplitude::Points(points) => {
            let mut total = vec![Estimate::zero(); plan.class_count()];
            for (value, weight) in points {
                let g = scenario.at_amplitude(*value)?;
                let c = plan.classes_at(&g, &all, &tol).map_err(named)?;
                for (t, e) in total.iter_mut().zip(c) {
                    *t = t.add(e.scale(*weight));
                }
            }
            (
                total.into_iter().map(Estimate::clamp_probability).collect(),
                None,
                None,
            )
        }
        Amplitude::Uniform { lower, upper } if upper > lower => {
            let width = upper - lower;
            let mut out = Vec::with_capacity(plan.class_count());
            for class in 0..plan.class_count() {
                let total = uniform_total(
                    plan.polytopes(class),
                    &scenario,
                    (*lower, *upper),
                    options,
                    "an isolation class",
                    &|g, p| plan.probability(g, p, &tol),
                )
                .map_err(named)?;
                out.push(
                    Estimate::new(total.value / width, total.error / width).clamp_probability(),
                );
            }
            (out, None, None)
        }
        Amplitude::Uniform { lower, .. } => {
            let g = scenario.at_amplitude(*lower)?;
            (plan.classes_at(&g, &all, &tol).map_err(named)?, None, None)
        }
        Amplitude::GaussianUnknownSigma {
            mean,
            sigma_lo,
            sigma_hi,
            ..
        } => {
            let found = worst_wrong_sigma(
                plan,
                &scenario,
                *mean,
                (*sigma_lo, *sigma_hi),
                &healthy,
                site,
                options,
            )
            .map_err(named)?;
            let (s, at_end) = (found.sigma, found.at_end);
            wrong_allowance = found.allowance;
            let at = |sigma: f64| -> Result<Vec<Estimate>, AnalysisError> {
                let g = scenario.with_gaussian_amplitude(*mean, sigma)?;
                plan.classes_at(&g, &all, &tol)
            };
            // The location is known to sigma_rel_tol: widen by the move over that distance.
            let (centre, left, right) = at_and_around(s, (*sigma_lo, *sigma_hi), options, at);
            let (centre, left, right) = (
                centre.map_err(named)?,
                left.map_err(named)?,
                right.map_err(named)?,
            );
            let widened = centre
                .iter()
                .zip(left.iter().zip(&right))
                .map(|(c, (l, r))| {
                    let moved = reach_beyond(*c, *l).max(reach_beyond(*c, *r));
                    Estimate::new(c.value, c.error + moved)
                })
                .collect();
            let (outcome, _) = engine
                .outcome(Scenario::Gaussian(&scenario, *mean, s))
                .map_err(named)?;
            if at_end {
                warnings.push(format!(
                    "the wrong blame of '{}' is largest at an end of the sigma range \
                     [{sigma_lo}, {sigma_hi}] (sigma {s}): widen the range to be sure it is the \
                     true maximum",
                    fault.name
                ));
            }
            (widened, Some(s), Some((outcome.p_sq, outcome.p_vu)))
        }
    };
    let blame = plan.split(classes);
    let sum_of = |set: &[usize]| {
        set.iter()
            .filter_map(|i| blame.blamed.get(*i))
            .fold(Estimate::zero(), |a, e| a.add(*e))
    };
    let isolated = sum_of(&faulty);
    let wrong = sum_of(&healthy);
    let wrong = Estimate::new(wrong.value, wrong.error + wrong_allowance);
    let (quiet_safe, quiet_violated) = quiet.unwrap_or((site.outcome.p_sq, site.outcome.p_vu));
    // The next stage: for every blamed channel after whose removal the fault is still there.
    let mut after: Option<Estimate> = None;
    for (class, stage) in degraded.iter().enumerate() {
        if removable && faulty.contains(&class) {
            continue;
        }
        let Ok(analysis) = &stage.analysis else {
            continue;
        };
        let Some(there) = analysis.sites.iter().find(|s| s.name == fault.name) else {
            continue;
        };
        let p = blame
            .blamed
            .get(class)
            .copied()
            .unwrap_or_else(Estimate::zero);
        let term = Estimate::new(
            p.value * there.outcome.p_vu.value,
            p.error * there.outcome.p_vu.value + (p.value + p.error) * there.outcome.p_vu.error,
        );
        after = Some(after.map_or(term, |a| a.add(term)));
    }
    Ok(SiteIsolation {
        name: fault.name.clone(),
        faulty,
        removable,
        isolated,
        wrong,
        blame,
        quiet_safe,
        quiet_violated,
        sigma,
        after_drop_residual: after,
        warnings,
    })
}

/// The sigma where "a healthy channel blamed" is largest, and whether it sits at an end of
/// the range: a log-grid scan at the scan tolerance, then Brent on every local maximum (as
/// for the residual, `site.rs`). With no healthy candidate, or none ever blamed on the grid,
/// the residual's worst sigma is kept.
fn worst_wrong_sigma(
    plan: &BlamePlan,
    scenario: &FaultScenario,
    mean: f64,
    range: (f64, f64),
    healthy: &[usize],
    site: &SiteResult,
    options: &AnalysisOptions,
) -> Result<WrongSigma, AnalysisError> {
    let fallback = site.worst.as_ref().map_or(range.0, |w| w.sigma);
    if healthy.is_empty() {
        return Ok(WrongSigma::kept(fallback, 0.0));
    }
    let grid = log_grid(range.0, range.1, options.sigma_scan_points.max(3))
        .map_err(|e| AnalysisError::engine("grid over the fault sigma", e))?;
    let scan_tol = options.scan_tolerance();
    let full_tol = options.polytope_tolerance();
    let wrong_at = |sigma: f64, tol: &ErrorTarget| -> Result<Estimate, AnalysisError> {
        let g = scenario.with_gaussian_amplitude(mean, sigma)?;
        let c = plan.classes_at(&g, healthy, tol)?;
        Ok(c.iter().fold(Estimate::zero(), |a, e| a.add(*e)))
    };
    let precomputed: Vec<Result<Estimate, AnalysisError>> =
        grid.par_iter().map(|&s| wrong_at(s, &scan_tol)).collect();
    // A wrong blame that no sigma of the grid can cause: keep the residual's worst sigma.
    if precomputed
        .iter()
        .all(|v| matches!(v, Ok(w) if w.value == 0.0))
    {
        // Zero on the grid within each point's bound: the largest of those bounds is what
        // the scan can say of the maximum.
        let largest_bound = precomputed
            .iter()
            .filter_map(|v| v.as_ref().ok())
            .fold(0.0_f64, |m, w| m.max(w.error));
        return Ok(WrongSigma::kept(fallback, largest_bound));
    }
    let found = search_largest(
        &grid,
        &precomputed,
        |sigma, _| wrong_at(sigma, &full_tol),
        |w: &Estimate| w.value,
        |w: &Estimate| w.error,
        options,
    )
    .map_err(|e| AnalysisError::engine("search of the sigma that most often blames wrongly", e))?;
    Ok(found
        .scan
        .minima
        .first()
        .map_or(WrongSigma::kept(fallback, 0.0), |m| WrongSigma {
            sigma: m.x,
            at_end: m.at_boundary,
            allowance: found.allowance,
        }))
}

/// Where "a healthy channel blamed" is largest over an unknown sigma.
struct WrongSigma {
    sigma: f64,
    /// Whether it sits at an end of the sigma range.
    at_end: bool,
    /// The search's ranking allowance on the wrong blame's bound (see `search_largest`).
    allowance: f64,
}

impl WrongSigma {
    /// The residual's worst sigma kept (no search, or nothing found), with `allowance`.
    fn kept(sigma: f64, allowance: f64) -> Self {
        Self {
            sigma,
            at_end: false,
            allowance,
        }
    }
}
