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
use crate::analysis::site::SiteResult;

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

fn site_json(s: &SiteResult) -> SiteJson {
    let o = &s.outcome;
    let dc = o.dc();
    let mut error = bounds(o);
    error.dc = dc.map(|d| d.error);
    error.dc_all_dangerous = Some(o.dc_all_dangerous().error);
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
        metrics: MetricsJson {
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
        },
        verification: input.verification.map(|rows| {
            rows.iter()
                .map(|r| AgreementJson {
                    scenario: r.scenario.clone(),
                    figure: r.figure.key().to_string(),
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
