//! The JSON output of `concord analyze --format json`.
//!
//! One object, the contract that scripts rely on (README.md "JSON output"):
//!
//! - `name`, `unit`, `tool_version`, `input_sha256`, `input_file` (the file's name as it was
//!   given), `method` (`exact` or `montecarlo`);
//! - `baseline`: `p_vd`, `p_vu`, `p_sd`, `p_sq`, `error` (bound of each), `false_alarm`
//!   (`p_vd + p_sd`: a check fires without a fault), `fault_free_violation` (`p_vd + p_vu`);
//! - `sites`: one object per fault site with `name`, `fit`, `mode`, `amplitude`, `dc` (null
//!   when no outcome is dangerous), `dc_all_dangerous`, `p_vd`, `p_vu`, `p_sd`, `p_sq`,
//!   `error` (the bound of each probability and of both coverage figures), `worst_sigma`
//!   (null when not searched), `local_maxima`, `sigma_range`, `residual_fit`, `latent_fit`,
//!   `latent_coverage`, `curve` (only when requested), `warnings`;
//! - `metrics`: `total_fit`, `residual_fit`, `latent_fit`, `spfm`, `lfm`, `sff`, `dc_avg`,
//!   `asil_spfm`, `asil_lfm`, `asil_residual_budget` (each `"D"`, `"C"`, `"B"`, `"below B"`
//!   when no target of B to D is met, or `"n/a"` when the metric is undefined, e.g. no
//!   failure rate at all), `error`;
//! - `verification`: the Monte Carlo cross-check or null; `warnings`; `cautions`;
//! - `tolerance`: the error asked of every probability, `abs` and `rel` (a figure meets it
//!   when its bound is below `max(abs, rel * value)`; the bound is reported either way);
//! - `baseline.figure_method` and each site's `figure_method`: which method computed the
//!   figures: `order_statistics` (counts of channels independent given a shared term),
//!   `polytopes` (the general engine) or `monte_carlo`.
//!
//! - `timing` (only when the file has a `[timing]` section): `sample_period`, `deadline`,
//!   `samples`, `confirm` (`{"rule": "consecutive", "count"}`, `{"rule": "count_of_last",
//!   "count", "window"}` or `{"rule": "counter", "up", "down", "trip"}`), `danger_samples`,
//!   `fresh_sources`, `constant_channels`, `false_alarms_per_sample`,
//!   `false_alarms_per_hour`, `hours_between_false_alarms` (null when none occur), `error`
//!   (their bounds), `sites` (per site over the interval: `dc`, `dc_all_dangerous`, the four
//!   probabilities, `residual_fit`, `error`, `worst_sigma`, `constant_terms`,
//!   `confirmed_by_deadline`, `detection_curve`: `sample`, `time`, `p_detected`, `error`) and `metrics` (the metrics
//!   with the timed outcomes, same keys as `metrics`).
//!
//! - `isolation` (only when the file has an `[isolation]` section): see
//!   `report/isolation_json.rs`.
//! - `tolerances` (only with `analyze --within`): see `report/tolerances.rs`.
//! - `sensitivity` (only with `--with-sensitivity`): the rows of `concord sensitivity`
//!   (`key`, `site`, `figure`, `value`, `derivative`, `error`, `elasticity`, `input`,
//!   `sigma_held`), see `report/sensitivity.rs`.
//!
//! Fields may be added in later versions; none is dropped, and none is renamed except as
//! listed here.
//!
//! Renamed once, before the first release (one word for each idea in every output):
//! `baseline.nuisance_alarm` is now `baseline.false_alarm`, and `baseline.intrinsic_violation`
//! is now `baseline.fault_free_violation`; the values are unchanged. Scripts that read the old
//! keys must read the new ones.

use serde::{Deserialize, Serialize};

use crate::analysis::Outcome;
use crate::analysis::engine::FigureMethod;
use crate::analysis::metrics::Metrics;
use crate::analysis::site::SiteResult;
use crate::analysis::timing::{TimedAnalysis, TimedSite};
use crate::model::CompiledModel;
use crate::prob::debounce::Debounce;

use super::cautions::CAUTIONS;
use super::error::ReportError;
use super::format::{AmplitudeStyle, describe_amplitude};
use super::{ReportInput, TOOL_VERSION, input_sha256};

/// Error bounds of the four probabilities (and, for a site, of the coverage figures).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Bounds {
    pub p_vd: f64,
    pub p_vu: f64,
    pub p_sd: f64,
    pub p_sq: f64,
    #[serde(skip_serializing_if = "Option::is_none", default)]
    pub dc: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none", default)]
    pub dc_all_dangerous: Option<f64>,
}

/// The fault-free figures.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BaselineJson {
    pub p_vd: f64,
    pub p_vu: f64,
    pub p_sd: f64,
    pub p_sq: f64,
    pub error: Bounds,
    /// `p_vd + p_sd`: a check fires without a fault.
    pub false_alarm: f64,
    /// `p_vd + p_vu`: the output leaves its band without a fault.
    pub fault_free_violation: f64,
    /// Which method computed these figures.
    #[serde(default)]
    pub figure_method: String,
}

/// The error asked of every probability.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
pub struct ToleranceJson {
    pub abs: f64,
    pub rel: f64,
}

/// One local maximum of the residual over sigma.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LocalMaximumJson {
    pub sigma: f64,
    pub p_vu: f64,
    pub at_range_end: bool,
}

/// One point of the curve over sigma.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurvePointJson {
    pub sigma: f64,
    pub p_vd: f64,
    pub p_vu: f64,
    pub p_sd: f64,
    pub p_sq: f64,
    pub dc: Option<f64>,
    pub dc_all_dangerous: f64,
}

/// One fault site.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SiteJson {
    pub name: String,
    pub fit: f64,
    pub mode: String,
    pub amplitude: String,
    pub dc: Option<f64>,
    pub dc_all_dangerous: f64,
    pub p_vd: f64,
    pub p_vu: f64,
    pub p_sd: f64,
    pub p_sq: f64,
    pub error: Bounds,
    pub worst_sigma: Option<f64>,
    pub sigma_range: Option<[f64; 2]>,
    pub local_maxima: Vec<LocalMaximumJson>,
    pub residual_fit: f64,
    pub latent_fit: f64,
    pub latent_coverage: f64,
    #[serde(skip_serializing_if = "Option::is_none", default)]
    pub curve: Option<Vec<CurvePointJson>>,
    pub warnings: Vec<String>,
    /// Which method computed the figures of the site.
    #[serde(default)]
    pub figure_method: String,
}

/// Error bounds of the metrics.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MetricBounds {
    pub residual_fit: f64,
    pub latent_fit: f64,
    pub spfm: f64,
    pub lfm: f64,
    pub sff: f64,
    pub dc_avg: Option<f64>,
}

/// The hardware metrics.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MetricsJson {
    pub total_fit: f64,
    pub residual_fit: f64,
    pub latent_fit: f64,
    pub spfm: f64,
    pub lfm: f64,
    pub sff: f64,
    pub dc_avg: Option<f64>,
    pub asil_spfm: String,
    pub asil_lfm: String,
    pub asil_residual_budget: String,
    pub error: MetricBounds,
}

/// One compared figure of the Monte Carlo cross-check.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AgreementJson {
    pub scenario: String,
    pub figure: String,
    pub exact: f64,
    pub exact_error: f64,
    pub sampled: f64,
    pub interval: [f64; 2],
    pub agrees: bool,
}

/// The whole JSON document.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AnalysisJson {
    pub name: String,
    pub unit: String,
    pub tool_version: String,
    pub input_sha256: String,
    pub input_file: String,
    pub method: String,
    pub baseline: BaselineJson,
    pub sites: Vec<SiteJson>,
    pub metrics: MetricsJson,
    pub verification: Option<Vec<AgreementJson>>,
    pub warnings: Vec<String>,
    pub cautions: Vec<String>,
    #[serde(default)]
    pub tolerance: ToleranceJson,
    /// The figures over time, only when the file has a timing section.
    #[serde(skip_serializing_if = "Option::is_none", default)]
    pub timing: Option<TimingJson>,
    /// Which channel a detection blames, only when the file has an isolation section
    /// (`report/isolation_json.rs`).
    #[serde(skip_serializing_if = "Option::is_none", default)]
    pub isolation: Option<super::isolation_json::IsolationJson>,
    /// Every figure over the tolerances of the inputs, only with `--within`
    /// (`report/tolerances.rs`).
    #[serde(skip_serializing_if = "Option::is_none", default)]
    pub tolerances: Option<super::tolerances::TolerancesJson>,
    /// The derivative of every figure by every numeric input, only with
    /// `--with-sensitivity` (`report/sensitivity.rs`: the rows of `concord sensitivity`).
    #[serde(skip_serializing_if = "Option::is_none", default)]
    pub sensitivity: Option<Vec<super::sensitivity::SensitivityRowJson>>,
}

/// The confirmation rule of the timing section.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "rule", rename_all = "snake_case")]
pub enum ConfirmJson {
    /// `count` consecutive firing samples.
    Consecutive { count: usize },
    /// At least `count` of the last `window` samples.
    CountOfLast { count: usize, window: usize },
    /// Up/down counter tripping at `trip`.
    Counter { up: usize, down: usize, trip: usize },
}

/// One point of a detection curve: the probability that the rule has confirmed by a sample.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DetectionPointJson {
    /// Samples since the fault (1 is the first sample after it).
    pub sample: usize,
    /// Seconds since the fault, `sample * sample_period`.
    pub time: f64,
    pub p_detected: f64,
    pub error: f64,
}

/// The timed figures of one fault site.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TimedSiteJson {
    pub name: String,
    pub dc: Option<f64>,
    pub dc_all_dangerous: f64,
    pub p_vd: f64,
    pub p_vu: f64,
    pub p_sd: f64,
    pub p_sq: f64,
    pub residual_fit: f64,
    pub error: Bounds,
    pub worst_sigma: Option<f64>,
    pub constant_terms: usize,
    /// The probability that the rule confirms by the deadline (the curve's last point).
    pub confirmed_by_deadline: f64,
    pub detection_curve: Vec<DetectionPointJson>,
}

/// Error bounds of the false-alarm figures.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FalseAlarmBounds {
    pub false_alarms_per_sample: f64,
    pub false_alarms_per_hour: f64,
    pub hours_between_false_alarms: Option<f64>,
}

/// The figures over time.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TimingJson {
    pub sample_period: f64,
    pub deadline: f64,
    pub samples: usize,
    pub confirm: ConfirmJson,
    pub danger_samples: usize,
    pub fresh_sources: Vec<String>,
    pub constant_channels: Vec<String>,
    pub false_alarms_per_sample: f64,
    pub false_alarms_per_hour: f64,
    pub hours_between_false_alarms: Option<f64>,
    pub error: FalseAlarmBounds,
    pub sites: Vec<TimedSiteJson>,
    pub metrics: MetricsJson,
}

fn bounds(o: &Outcome) -> Bounds {
    Bounds {
        p_vd: o.p_vd.error,
        p_vu: o.p_vu.error,
        p_sd: o.p_sd.error,
        p_sq: o.p_sq.error,
        dc: None,
        dc_all_dangerous: None,
    }
}

/// The bounds of a site's four figures and of both coverage figures.
fn site_bounds(o: &Outcome) -> Bounds {
    Bounds {
        dc: o.dc().map(|d| d.error),
        dc_all_dangerous: Some(o.dc_all_dangerous().error),
        ..bounds(o)
    }
}

fn site_json(s: &SiteResult) -> SiteJson {
    let o = &s.outcome;
    let dc = o.dc();
    let error = site_bounds(o);
    SiteJson {
        name: s.name.clone(),
        fit: s.fit,
        mode: s.mode.to_string(),
        amplitude: describe_amplitude(&s.amplitude, false, AmplitudeStyle::Compact),
        dc: dc.map(|d| d.value),
        dc_all_dangerous: o.dc_all_dangerous().value,
        p_vd: o.p_vd.value,
        p_vu: o.p_vu.value,
        p_sd: o.p_sd.value,
        p_sq: o.p_sq.value,
        error,
        worst_sigma: s.worst.as_ref().map(|w| w.sigma),
        sigma_range: s.worst.as_ref().map(|w| [w.range.0, w.range.1]),
        local_maxima: s
            .worst
            .iter()
            .flat_map(|w| &w.local_maxima)
            .map(|m| LocalMaximumJson {
                sigma: m.sigma,
                p_vu: m.p_vu,
                at_range_end: m.at_range_end,
            })
            .collect(),
        residual_fit: s.residual_fit().value,
        latent_fit: s.latent_fit().value,
        latent_coverage: s.latent_coverage,
        curve: s.curve.as_ref().map(|points| {
            points
                .iter()
                .map(|p| CurvePointJson {
                    sigma: p.sigma,
                    p_vd: p.outcome.p_vd.value,
                    p_vu: p.outcome.p_vu.value,
                    p_sd: p.outcome.p_sd.value,
                    p_sq: p.outcome.p_sq.value,
                    dc: p.outcome.dc().map(|d| d.value),
                    dc_all_dangerous: p.outcome.dc_all_dangerous().value,
                })
                .collect()
        }),
        warnings: s.warnings.clone(),
        figure_method: method_key(s.method).to_string(),
    }
}

/// The JSON word of a figure method.
pub fn method_key(m: FigureMethod) -> &'static str {
    match m {
        FigureMethod::OrderStatistics => "order_statistics",
        FigureMethod::Polytopes => "polytopes",
        FigureMethod::MonteCarlo => "monte_carlo",
    }
}

/// The JSON document of an analysis, as a typed value.
pub fn document(input: &ReportInput<'_>) -> AnalysisJson {
    let arch = input.architecture;
    let a = input.analysis;
    let b = &a.baseline;
    let m = &a.metrics;
    let mut warnings: Vec<String> = arch.warnings.iter().map(|w| w.to_string()).collect();
    warnings.extend(a.warnings.iter().cloned());
    AnalysisJson {
        name: arch.model.name.clone(),
        unit: arch.model.unit.clone(),
        tool_version: TOOL_VERSION.to_string(),
        input_sha256: input_sha256(&arch.source),
        input_file: arch.path.clone(),
        method: input.method.to_string(),
        baseline: BaselineJson {
            p_vd: b.p_vd.value,
            p_vu: b.p_vu.value,
            p_sd: b.p_sd.value,
            p_sq: b.p_sq.value,
            error: bounds(b),
            false_alarm: b.alarm().value,
            fault_free_violation: b.violation().value,
            figure_method: method_key(a.baseline_method).to_string(),
        },
        sites: a.sites.iter().map(site_json).collect(),
        metrics: metrics_json(m),
        verification: input.verification.map(|rows| {
            rows.iter()
                .map(|r| AgreementJson {
                    scenario: r.scenario.clone(),
                    figure: r.figure.to_string(),
                    exact: r.exact.value,
                    exact_error: r.exact.error,
                    sampled: r.sampled,
                    interval: [r.interval.0, r.interval.1],
                    agrees: r.agrees,
                })
                .collect()
        }),
        warnings,
        cautions: CAUTIONS.iter().map(|c| c.to_string()).collect(),
        tolerance: ToleranceJson {
            abs: a.options.polytope_abs,
            rel: a.options.polytope_rel,
        },
        timing: a
            .timed
            .as_ref()
            .map(|t| timing_json(t, &arch.model, &a.sites)),
        isolation: a
            .isolation
            .as_ref()
            .map(super::isolation_json::isolation_json),
        tolerances: a
            .tolerances
            .as_ref()
            .map(super::tolerances::tolerances_json),
        sensitivity: a.sensitivity.as_ref().map(super::sensitivity::rows_json),
    }
}

/// The metrics in the JSON contract.
pub fn metrics_json(m: &Metrics) -> MetricsJson {
    MetricsJson {
        total_fit: m.total_fit,
        residual_fit: m.residual_fit.value,
        latent_fit: m.latent_fit.value,
        spfm: m.spfm.value,
        lfm: m.lfm.value,
        sff: m.sff.value,
        dc_avg: m.dc_avg.map(|d| d.value),
        asil_spfm: m.asil_spfm.label().to_string(),
        asil_lfm: m.asil_lfm.label().to_string(),
        asil_residual_budget: m.asil_residual_budget.label().to_string(),
        error: MetricBounds {
            residual_fit: m.residual_fit.error,
            latent_fit: m.latent_fit.error,
            spfm: m.spfm.error,
            lfm: m.lfm.error,
            sff: m.sff.error,
            dc_avg: m.dc_avg.map(|d| d.error),
        },
    }
}

/// The confirmation rule in the JSON contract.
pub fn confirm_json(rule: &Debounce) -> ConfirmJson {
    match *rule {
        Debounce::Consecutive { count } => ConfirmJson::Consecutive { count },
        Debounce::Window { count, window } => ConfirmJson::CountOfLast { count, window },
        Debounce::Counter { up, down, trip } => ConfirmJson::Counter { up, down, trip },
    }
}

fn timing_json(t: &TimedAnalysis, model: &CompiledModel, sites: &[SiteResult]) -> TimingJson {
    let picked = |names: &[String], flags: &[bool]| -> Vec<String> {
        names
            .iter()
            .zip(flags)
            .filter(|(_, f)| **f)
            .map(|(n, _)| n.clone())
            .collect()
    };
    let between = t.hours_between_false_alarms();
    TimingJson {
        sample_period: t.timing.sample_period,
        deadline: t.timing.deadline,
        samples: t.timing.samples,
        confirm: confirm_json(&t.timing.confirm),
        danger_samples: t.timing.danger_samples,
        fresh_sources: picked(&model.sources, &t.timing.fresh_sources),
        constant_channels: picked(&model.channels, &t.timing.constant_channels),
        false_alarms_per_sample: t.false_alarms_per_sample.value,
        false_alarms_per_hour: t.false_alarms_per_hour.value,
        hours_between_false_alarms: between.map(|b| b.value),
        error: FalseAlarmBounds {
            false_alarms_per_sample: t.false_alarms_per_sample.error,
            false_alarms_per_hour: t.false_alarms_per_hour.error,
            hours_between_false_alarms: between.map(|b| b.error),
        },
        sites: t
            .sites
            .iter()
            .zip(sites)
            .map(|(ts, s)| timed_site_json(ts, s.fit, t.timing.sample_period))
            .collect(),
        metrics: metrics_json(&t.metrics),
    }
}

fn timed_site_json(t: &TimedSite, fit: f64, period: f64) -> TimedSiteJson {
    let o = &t.outcome;
    let dc = o.dc();
    let error = site_bounds(o);
    TimedSiteJson {
        name: t.name.clone(),
        dc: dc.map(|d| d.value),
        dc_all_dangerous: o.dc_all_dangerous().value,
        p_vd: o.p_vd.value,
        p_vu: o.p_vu.value,
        p_sd: o.p_sd.value,
        p_sq: o.p_sq.value,
        residual_fit: o.p_vu.value * fit,
        error,
        worst_sigma: t.worst_sigma,
        constant_terms: t.constant_terms,
        confirmed_by_deadline: t.detected_by.last().map_or(0.0, |d| d.value),
        detection_curve: t
            .detected_by
            .iter()
            .enumerate()
            .map(|(j, p)| DetectionPointJson {
                sample: j + 1,
                time: (j + 1) as f64 * period,
                p_detected: p.value,
                error: p.error,
            })
            .collect(),
    }
}

/// The JSON text of an analysis (pretty-printed, with a final newline).
///
/// # Errors
/// Serialisation errors (a non-finite number would be written as null by serde_json, so in
/// practice none).
pub fn render(input: &ReportInput<'_>) -> Result<String, ReportError> {
    let mut text = serde_json::to_string_pretty(&document(input))?;
    text.push('\n');
    Ok(text)
}
