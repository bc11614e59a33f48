//! Tuning the threshold and the confirmation rule together, for a file with a timing
//! section: for each candidate rule, the widest bands (scaled together, or one check's)
//! whose coverage over the interval (a fault confirmed after the deadline counts as missed)
//! still meets the target on every chosen site; then the fewest false alarms per hour among
//! the rules. A tighter threshold with more samples, or a wider one with fewer.
//!
//! The search per rule rests on the same monotonicity as one-sample tuning
//! (`analysis::tune`): a wider band fires less in every sample, so every confirmation rule
//! here (runs, counts in a window, counters: more firing samples never delay a confirmation)
//! confirms less often and later; the coverage over the interval falls, and so do the false
//! alarms. The widest meeting band is found by secant steps on the log of the scale factor
//! (`tune::close_by_secant`).

use rayon::prelude::*;
use serde::Serialize;

use crate::model::Architecture;
use crate::prob::Estimate;
use crate::prob::debounce::Debounce;

use super::engine::Engine;
use super::error::{AnalysisError, RequestField};
use super::options::AnalysisOptions;
use super::timing::{false_alarms_per_sample, timed_site};
use super::tune::{CoverageFigure, TuneRequest, checks_to_tune, close_by_secant};

/// Relative width of the scale factor's bracket at which the search of one rule stops.
const SCALE_REL_TOL: f64 = 0.01;

/// One candidate rule with its widest meeting band.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RuleChoice {
    /// The confirmation rule (the report words it: `report::format::rule_label`).
    #[serde(skip)]
    pub rule: Debounce,
    /// The widest scale factor on the file's bands that meets the target (`None`: none in
    /// the range does).
    pub scale: Option<f64>,
    /// The weakest coverage over the chosen sites there (at the narrowest band when none
    /// meets).
    pub coverage: Estimate,
    /// False alarms per hour of operation there.
    pub false_alarms_per_hour: Estimate,
    /// Whether the widest band of the range meets the target (a wider range may do better).
    pub at_range_end: bool,
}

/// The joint tuning.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TimedTuneResult {
    /// Every candidate rule, in the order tried.
    pub rules: Vec<RuleChoice>,
    /// The index of the rule with the fewest false alarms per hour among those that meet
    /// the target.
    pub chosen: Option<usize>,
    /// Timed analyses spent.
    pub evaluations: usize,
}

/// The rules tried when the request names none: runs of 1 to 4, 2 of 3, 2 of 4, 3 of 4,
/// 3 of 5, 4 of 6, and a counter up 2 / down 1 tripping at 4; those the deadline can hold.
pub fn default_rules(samples: usize) -> Vec<Debounce> {
    let mut rules: Vec<Debounce> = (1..=4)
        .map(|count| Debounce::Consecutive { count })
        .collect();
    for (count, window) in [(2, 3), (2, 4), (3, 4), (3, 5), (4, 6)] {
        rules.push(Debounce::Window { count, window });
    }
    rules.push(Debounce::Counter {
        up: 2,
        down: 1,
        trip: 4,
    });
    rules.retain(|r| r.fastest_trip() <= samples);
    rules
}

/// Tunes the bands and the rule together (see the module notes).
///
/// # Errors
/// [`AnalysisError::InvalidRequest`] when the file has no timing section, the request is
/// out of range or names a site or check the file does not have; engine errors.
pub fn tune_with_confirmation(
    arch: &Architecture,
    request: &TuneRequest,
    rules: &[Debounce],
    options: &AnalysisOptions,
) -> Result<TimedTuneResult, AnalysisError> {
    let Some(timing) = arch.model.timing.clone() else {
        return Err(AnalysisError::invalid(
            RequestField::TuneConfirmation,
            "the file has no [timing] section; add one (docs/architecture-format.md, \
             \"Timing\") to tune the confirmation rule",
        ));
    };
    let (lo, hi) = request.scale_range;
    if !(lo.is_finite() && hi.is_finite() && lo > 0.0 && lo < hi) {
        return Err(AnalysisError::invalid(
            RequestField::TuneScaleRange,
            format!("the scale range {lo} to {hi} must be positive and increasing"),
        ));
    }
    if !(request.target > 0.0 && request.target <= 1.0) {
        return Err(AnalysisError::invalid(
            RequestField::TuneTarget,
            format!(
                "{} is not a coverage; give a fraction in (0, 1]",
                request.target
            ),
        ));
    }
    for wanted in &request.sites {
        if !arch.model.faults.iter().any(|f| &f.name == wanted) {
            return Err(AnalysisError::invalid(
                RequestField::TuneSites,
                format!("no fault site '{wanted}' in the file"),
            ));
        }
    }
    let checks = checks_to_tune(arch, request.check.as_deref())?;
    // (coverage, false alarms per hour) for a rule at a scale.
    let evaluate = |rule: Debounce, scale: f64| -> Result<(Estimate, Estimate), AnalysisError> {
        let overrides: Vec<(String, f64)> = checks.iter().flat_map(|c| c.scaled(scale)).collect();
        let edited = arch
            .with_overrides(&overrides)
            .map_err(|source| AnalysisError::Model {
                context: format!("bands scaled by {scale}"),
                source: Box::new(source),
            })?;
        let mut model = edited.model;
        let mut t = timing.clone();
        t.confirm = rule;
        model.timing = Some(t.clone());
        let engine = Engine::new(&model, options);
        let mut weakest: Option<Estimate> = None;
        for fault in model
            .faults
            .iter()
            .filter(|f| request.sites.is_empty() || request.sites.contains(&f.name))
        {
            let site = timed_site(&engine, &t, fault, options)?;
            let coverage = match request.figure {
                CoverageFigure::Dc => site.outcome.dc(),
                CoverageFigure::DcAllDangerous => Some(site.outcome.dc_all_dangerous()),
            };
            if let Some(c) = coverage
                && weakest.is_none_or(|w| c.value - c.error < w.value - w.error)
            {
                weakest = Some(c);
            }
        }
        let per_sample = false_alarms_per_sample(&engine, &t, options)?;
        Ok((
            weakest.unwrap_or(Estimate::exact(1.0)),
            per_sample.scale(3600.0 / t.sample_period),
        ))
    };
    let meets = |c: &Estimate| c.value - c.error >= request.target;
    let results: Vec<Result<(RuleChoice, usize), AnalysisError>> = rules
        .par_iter()
        .map(|&rule| {
            let mut evaluations = 2;
            let narrow = evaluate(rule, lo)?;
            if !meets(&narrow.0) {
                return Ok((
                    RuleChoice {
                        rule,
                        scale: None,
                        coverage: narrow.0,
                        false_alarms_per_hour: narrow.1,
                        at_range_end: false,
                    },
                    1,
                ));
            }
            let wide = evaluate(rule, hi)?;
            if meets(&wide.0) {
                return Ok((
                    RuleChoice {
                        rule,
                        scale: Some(hi),
                        coverage: wide.0,
                        false_alarms_per_hour: wide.1,
                        at_range_end: true,
                    },
                    evaluations,
                ));
            }
            let margin = |at: &(Estimate, Estimate)| at.0.value - at.0.error - request.target;
            let closed = close_by_secant(
                (lo, margin(&narrow), narrow),
                (hi, margin(&wide), wide),
                SCALE_REL_TOL,
                |scale| {
                    let at = evaluate(rule, scale)?;
                    Ok::<_, AnalysisError>((margin(&at), at))
                },
            )?;
            evaluations += closed.spent;
            let (good, good_at) = closed.good;
            Ok((
                RuleChoice {
                    rule,
                    scale: Some(good),
                    coverage: good_at.0,
                    false_alarms_per_hour: good_at.1,
                    at_range_end: false,
                },
                evaluations,
            ))
        })
        .collect();
    let mut choices = Vec::with_capacity(results.len());
    let mut evaluations = 0;
    for r in results {
        let (choice, n) = r?;
        evaluations += n;
        choices.push(choice);
    }
    let chosen = choices
        .iter()
        .enumerate()
        .filter(|(_, c)| c.scale.is_some())
        .min_by(|a, b| {
            a.1.false_alarms_per_hour
                .value
                .total_cmp(&b.1.false_alarms_per_hour.value)
        })
        .map(|(i, _)| i);
    Ok(TimedTuneResult {
        rules: choices,
        chosen,
        evaluations,
    })
}
