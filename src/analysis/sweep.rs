//! Parameter sweeps: the whole analysis repeated over the values of one numeric key of an
//! architecture file (optionally in several series of a second key). The figures of one fault
//! site over the spread of its amplitude are in [`super::spread`].
//!
//! A parameter sweep has the model set the swept values by dotted key path
//! ([`Architecture::with_overrides`]) and runs [`analyze`] at every point, so each
//! row is, bit for bit, what `concord analyze` prints for the file edited by hand (the
//! one-sample figures and, for a file with an `[isolation]` section, the isolation figures;
//! the timed figures of a `[timing]` section are not computed). Points
//! run in parallel in chunks of four per thread (`CHUNK_PER_THREAD`) and are handed on in
//! order, one chunk at a time: a sweep of any length holds one chunk in memory. The chunk
//! size follows the thread count, the output does not: every point is computed on its own
//! and the rows are handed on in point order.

use rayon::prelude::*;
use serde::Serialize;

use crate::model::Architecture;
use crate::prob::Estimate;

use super::error::{AnalysisError, RequestField};
use super::isolation::{EndStates, IsolationAnalysis};
use super::metrics::Asil;
use super::options::AnalysisOptions;
use super::run::{Analysis, analyze};
use super::site::SiteResult;

/// Re-exported where the report layer imports it from (`report/sweep.rs`); new code imports
/// it from [`super::spread`].
pub use super::spread::SpreadCurve;

/// Most points of one sweep (the product of both axes). Past it a sweep is refused rather
/// than left to run for hours; split it into several runs.
pub const MAX_SWEEP_POINTS: usize = 1_000_000;

/// Points per parallel chunk and per thread: each chunk is computed in parallel, then its rows
/// are handed on in order before the next starts.
const CHUNK_PER_THREAD: usize = 4;

/// The values one key of the file takes in a sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Axis {
    /// The dotted key path, e.g. `checks.ab.limit`.
    pub key: String,
    /// The values, in sweep order.
    pub values: Vec<f64>,
}

impl Axis {
    /// `points` values evenly spaced from `from` to `to` (both included).
    ///
    /// # Errors
    /// [`AnalysisError::InvalidRequest`] for non-finite ends or fewer than one point.
    pub fn linear(key: &str, from: f64, to: f64, points: usize) -> Result<Self, AnalysisError> {
        check_ends(key, from, to, points)?;
        let values = if points == 1 {
            vec![from]
        } else {
            let step = (to - from) / (points - 1) as f64;
            (0..points)
                .map(|i| {
                    if i + 1 == points {
                        to
                    } else {
                        from + step * i as f64
                    }
                })
                .collect()
        };
        Ok(Self {
            key: key.to_string(),
            values,
        })
    }

    /// `points` values evenly spaced in the logarithm from `from` to `to` (both positive).
    ///
    /// # Errors
    /// [`AnalysisError::InvalidRequest`] for non-positive or non-finite ends.
    pub fn log(key: &str, from: f64, to: f64, points: usize) -> Result<Self, AnalysisError> {
        check_ends(key, from, to, points)?;
        if from <= 0.0 || to <= 0.0 {
            return Err(invalid(
                key,
                format!(
                    "a logarithmic range needs positive ends, got {from} to {to}; give \
                     positive ends, or space the values linearly"
                ),
            ));
        }
        let (a, b) = (from.ln(), to.ln());
        let values = if points == 1 {
            vec![from]
        } else {
            (0..points)
                .map(|i| {
                    if i == 0 {
                        from
                    } else if i + 1 == points {
                        to
                    } else {
                        (a + (b - a) * i as f64 / (points - 1) as f64).exp()
                    }
                })
                .collect()
        };
        Ok(Self {
            key: key.to_string(),
            values,
        })
    }

    /// The values as given.
    ///
    /// # Errors
    /// [`AnalysisError::InvalidRequest`] for an empty list or a non-finite value.
    pub fn list(key: &str, values: Vec<f64>) -> Result<Self, AnalysisError> {
        if values.is_empty() {
            return Err(invalid(key, "give at least one value".into()));
        }
        if let Some(v) = values.iter().find(|v| !v.is_finite()) {
            return Err(invalid(key, format!("{v} is not a finite number")));
        }
        check_count(key, values.len())?;
        Ok(Self {
            key: key.to_string(),
            values,
        })
    }
}

/// An invalid request about the values of the axis of `key`.
fn invalid(key: &str, message: String) -> AnalysisError {
    AnalysisError::invalid(RequestField::AxisValues(key.to_string()), message)
}

fn check_ends(key: &str, from: f64, to: f64, points: usize) -> Result<(), AnalysisError> {
    if !from.is_finite() || !to.is_finite() {
        return Err(invalid(
            key,
            format!("the range {from} to {to} is not finite"),
        ));
    }
    if points == 0 {
        return Err(invalid(key, "a sweep needs at least one point".into()));
    }
    check_count(key, points)
}

pub(crate) fn check_count(key: &str, points: usize) -> Result<(), AnalysisError> {
    if points > MAX_SWEEP_POINTS {
        return Err(AnalysisError::TooManyPoints {
            what: format!("the sweep of {key}"),
            limit: MAX_SWEEP_POINTS,
            found: points,
        });
    }
    Ok(())
}

/// A parameter sweep: one key varied, optionally once per value of a second key (a series).
/// Points are ordered series by series, so that each series is one contiguous line.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepPlan {
    /// The key on the horizontal axis.
    pub vary: Axis,
    /// The key that makes several series, if any.
    pub series: Option<Axis>,
}

impl SweepPlan {
    /// A plan, refused when it has more than [`MAX_SWEEP_POINTS`] points or both axes name
    /// the same key.
    ///
    /// # Errors
    /// [`AnalysisError::TooManyPoints`] or [`AnalysisError::InvalidRequest`].
    pub fn new(vary: Axis, series: Option<Axis>) -> Result<Self, AnalysisError> {
        let plan = Self { vary, series };
        if let Some(s) = plan.series.as_ref().filter(|s| s.key == plan.vary.key) {
            return Err(AnalysisError::invalid(
                RequestField::SweepSeries,
                format!(
                    "the series key {} is the swept key; give two different keys",
                    s.key
                ),
            ));
        }
        let total = plan
            .vary
            .values
            .len()
            .saturating_mul(plan.series.as_ref().map_or(1, |s| s.values.len()));
        if total > MAX_SWEEP_POINTS {
            return Err(AnalysisError::TooManyPoints {
                what: "the sweep grid".into(),
                limit: MAX_SWEEP_POINTS,
                found: total,
            });
        }
        Ok(plan)
    }

    /// Number of points.
    pub fn len(&self) -> usize {
        self.vary.values.len() * self.series.as_ref().map_or(1, |s| s.values.len())
    }

    /// True when the plan has no point (never, for a plan made by [`SweepPlan::new`]).
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// The swept value and the series value of point `index`.
    pub fn point(&self, index: usize) -> (f64, Option<f64>) {
        let per_series = self.vary.values.len().max(1);
        let swept = self
            .vary
            .values
            .get(index % per_series)
            .copied()
            .unwrap_or(f64::NAN);
        let series = self.series.as_ref().map(|axis| {
            axis.values
                .get(index / per_series)
                .copied()
                .unwrap_or(f64::NAN)
        });
        (swept, series)
    }

    /// The overrides of point `index`.
    pub fn overrides(&self, index: usize) -> Vec<(String, f64)> {
        let (swept, series) = self.point(index);
        let mut list = vec![(self.vary.key.clone(), swept)];
        if let (Some(axis), Some(value)) = (&self.series, series) {
            list.push((axis.key.clone(), value));
        }
        list
    }
}

/// The figures of one fault site in a sweep row or a comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SiteSummary {
    /// The fault site.
    pub name: String,
    /// `p_vd / (p_vd + p_vu)` (worst case over an unknown spread); `None` when no outcome
    /// of the site is dangerous.
    pub dc: Option<Estimate>,
    /// `1 - p_vu`.
    pub dc_all_dangerous: Estimate,
    /// The residual probability.
    pub p_vu: Estimate,
    /// The sigma of the worst case, for a site with unknown spread.
    pub worst_sigma: Option<f64>,
}

impl SiteSummary {
    /// The summary of one analysed site.
    pub fn of(site: &SiteResult) -> Self {
        Self {
            name: site.name.clone(),
            dc: site.outcome.dc(),
            dc_all_dangerous: site.outcome.dc_all_dangerous(),
            p_vu: site.outcome.p_vu,
            worst_sigma: site.worst.as_ref().map(|w| w.sigma),
        }
    }
}

/// One point of a parameter sweep: the values set and the main figures there.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepRow {
    /// Position in the plan.
    pub index: usize,
    /// The swept value.
    pub x: f64,
    /// The series value, if the plan has series.
    pub series: Option<f64>,
    /// Fault-free alarm probability `p_vd + p_sd` of the baseline (the false-alarm price).
    pub false_alarm: Estimate,
    /// Residual rate, FIT.
    pub residual_fit: Estimate,
    /// Single-point fault metric.
    pub spfm: Estimate,
    /// Latent fault metric.
    pub lfm: Estimate,
    /// Highest ASIL whose SPFM target is met.
    pub asil_spfm: Asil,
    /// Highest ASIL whose LFM target is met.
    pub asil_lfm: Asil,
    /// Every fault site, in file order.
    pub sites: Vec<SiteSummary>,
    /// The isolation figures, when the file has an `[isolation]` section.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub isolation: Option<IsolationSummary>,
}

/// The isolation figures of a sweep row or of a tuned band: the FIT-weighted end states of a
/// single fault and, per fault site, how a detection is followed up.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IsolationSummary {
    /// Continues, shutdown, fault stays, residual: FIT-weighted shares of single faults.
    pub end_states: EndStates,
    /// Every fault site, in file order.
    pub sites: Vec<SiteIsolationSummary>,
}

/// How a detection of one fault site is followed up.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SiteIsolationSummary {
    /// The fault site.
    pub name: String,
    /// A channel the fault moves is blamed.
    pub isolated: Estimate,
    /// A healthy channel is blamed: the fault stays in the vote.
    pub wrong_channel: Estimate,
    /// Detected, no channel blamed: a shutdown.
    pub none_blamed: Estimate,
    /// For an unknown spread, the sigma these figures are taken at: where `wrong_channel`
    /// is largest, not the worst sigma of the residual.
    pub sigma: Option<f64>,
}

impl IsolationSummary {
    /// The summary of an analysis's isolation figures.
    pub fn of(isolation: &IsolationAnalysis) -> Self {
        Self {
            end_states: isolation.end_states,
            sites: isolation
                .sites
                .iter()
                .map(|s| SiteIsolationSummary {
                    name: s.name.clone(),
                    isolated: s.isolated,
                    wrong_channel: s.wrong,
                    none_blamed: s.blame.declined,
                    sigma: s.sigma,
                })
                .collect(),
        }
    }
}

impl SweepRow {
    /// The row of an analysis at one point.
    pub fn of(index: usize, x: f64, series: Option<f64>, analysis: &Analysis) -> Self {
        Self {
            index,
            x,
            series,
            false_alarm: analysis.baseline.alarm(),
            residual_fit: analysis.metrics.residual_fit,
            spfm: analysis.metrics.spfm,
            lfm: analysis.metrics.lfm,
            asil_spfm: analysis.metrics.asil_spfm,
            asil_lfm: analysis.metrics.asil_lfm,
            sites: analysis.sites.iter().map(SiteSummary::of).collect(),
            isolation: analysis.isolation.as_ref().map(IsolationSummary::of),
        }
    }
}

/// Analyses `arch` with `overrides` set: the one-sample coverage figures and metrics that
/// `analyze` computes on a copy of the file with those values written in (its timing and
/// isolation sections are left out: tuning reads coverage alone).
///
/// # Errors
/// [`AnalysisError::Model`] when the values make the file invalid (naming them), or the
/// analysis's own errors.
pub fn analyze_with_overrides(
    arch: &Architecture,
    overrides: &[(String, f64)],
    options: &AnalysisOptions,
) -> Result<Analysis, AnalysisError> {
    analyze_point(arch, overrides, options, Sections::CoverageOnly)
}

/// What an analysis at a sweep or tuning point computes beside the one-sample coverage
/// figures. The timed figures are never computed there (a sweep of them would take minutes).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sections {
    /// The coverage figures and metrics alone (what tuning needs at every band).
    CoverageOnly,
    /// Also the isolation figures, when the file has an `[isolation]` section.
    WithIsolation,
}

/// [`analyze_with_overrides`] with the sections to compute.
///
/// # Errors
/// As [`analyze_with_overrides`].
pub fn analyze_point(
    arch: &Architecture,
    overrides: &[(String, f64)],
    options: &AnalysisOptions,
    sections: Sections,
) -> Result<Analysis, AnalysisError> {
    let edited = arch
        .with_overrides(overrides)
        .map_err(|source| AnalysisError::Model {
            context: format!("with {}", describe_overrides(overrides)),
            source: Box::new(source),
        })?;
    let mut model = edited.model;
    model.timing = None;
    if sections == Sections::CoverageOnly {
        model.isolation = None;
    }
    analyze(&model, options, false).map_err(|e| match e {
        AnalysisError::Engine { context, source } => AnalysisError::Engine {
            context: format!("with {}, {context}", describe_overrides(overrides)),
            source,
        },
        other => other,
    })
}

/// `safety.limit = 1.5, checks.ab.limit = 2`.
pub fn describe_overrides(overrides: &[(String, f64)]) -> String {
    overrides
        .iter()
        .map(|(k, v)| format!("{k} = {v}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// The names of the fault sites of `arch`, in file order, checked at the first and the
/// last point of the plan so that a bad key or value is reported before the sweep starts.
///
/// # Errors
/// [`AnalysisError::Model`] naming the point whose values make the file invalid.
pub fn prepare_sweep(arch: &Architecture, plan: &SweepPlan) -> Result<Vec<String>, AnalysisError> {
    let mut names = Vec::new();
    let last = plan.len().saturating_sub(1);
    for index in [0, last] {
        let overrides = plan.overrides(index);
        let edited = arch
            .with_overrides(&overrides)
            .map_err(|source| AnalysisError::Model {
                context: format!("sweep point {index} ({})", describe_overrides(&overrides)),
                source: Box::new(source),
            })?;
        names = edited.model.faults.iter().map(|f| f.name.clone()).collect();
    }
    Ok(names)
}

/// Runs a parameter sweep, handing every row to `emit` in plan order as soon as its chunk is
/// done. Stops at the first error (of a point or of `emit`).
///
/// # Errors
/// The first point's error, naming its values, or the error `emit` returns.
pub fn sweep<E>(
    arch: &Architecture,
    plan: &SweepPlan,
    options: &AnalysisOptions,
    mut emit: impl FnMut(SweepRow) -> Result<(), E>,
) -> Result<(), E>
where
    E: From<AnalysisError>,
{
    let chunk = rayon::current_num_threads().max(1) * CHUNK_PER_THREAD;
    let total = plan.len();
    let mut start = 0;
    while start < total {
        let end = (start + chunk).min(total);
        let rows: Vec<Result<SweepRow, AnalysisError>> = (start..end)
            .into_par_iter()
            .map(|index| {
                let (swept, series) = plan.point(index);
                let analysis = analyze_point(
                    arch,
                    &plan.overrides(index),
                    options,
                    Sections::WithIsolation,
                )?;
                Ok(SweepRow::of(index, swept, series, &analysis))
            })
            .collect();
        for row in rows {
            emit(row?)?;
        }
        start = end;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn axes_hit_their_ends_exactly() {
        let a = Axis::linear("k", 0.1, 0.7, 7).unwrap();
        assert_eq!(a.values.first(), Some(&0.1));
        assert_eq!(a.values.last(), Some(&0.7));
        let l = Axis::log("k", 0.01, 100.0, 5).unwrap();
        assert_eq!(
            l.values,
            vec![0.01, l.values[1], l.values[2], l.values[3], 100.0]
        );
        assert!((l.values[2] - 1.0).abs() < 1e-12);
        assert!(Axis::log("k", 0.0, 1.0, 3).is_err());
        assert!(Axis::linear("k", 0.0, f64::NAN, 3).is_err());
        assert!(Axis::list("k", vec![]).is_err());
    }

    #[test]
    fn plans_past_the_limit_are_refused_with_the_limit_named() {
        let big = Axis::linear("a", 0.0, 1.0, 2000).unwrap();
        let other = Axis::linear("b", 0.0, 1.0, 1000).unwrap();
        let e = SweepPlan::new(big, Some(other)).unwrap_err();
        assert!(e.to_string().contains("1000000"), "{e}");
        assert!(e.to_string().contains("use fewer points"), "{e}");
        assert!(!e.to_string().contains("simplify"), "{e}");
        let e = Axis::linear("a", 0.0, 1.0, MAX_SWEEP_POINTS + 1).unwrap_err();
        assert!(e.to_string().contains("limit"), "{e}");
        assert!(e.to_string().contains("use fewer points"), "{e}");
    }

    #[test]
    fn points_run_series_by_series() {
        let plan = SweepPlan::new(
            Axis::list("x", vec![1.0, 2.0, 3.0]).unwrap(),
            Some(Axis::list("s", vec![10.0, 20.0]).unwrap()),
        )
        .unwrap();
        assert_eq!(plan.len(), 6);
        assert_eq!(plan.point(0), (1.0, Some(10.0)));
        assert_eq!(plan.point(2), (3.0, Some(10.0)));
        assert_eq!(plan.point(3), (1.0, Some(20.0)));
        assert_eq!(
            plan.overrides(4),
            vec![("x".to_string(), 2.0), ("s".to_string(), 20.0)]
        );
    }
}
