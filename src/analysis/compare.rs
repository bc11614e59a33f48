//! Architectures side by side: the same exact analysis run on several files, reduced to the
//! figures a design choice turns on (coverage per fault site, residual rate, metrics, the
//! false-alarm price) and the time it took to compute them.

use std::time::Instant;

use serde::Serialize;

use crate::model::Architecture;
use crate::prob::Estimate;

use super::error::AnalysisError;
use super::isolation::{EndStates, end_states_of};
use super::metrics::Metrics;
use super::options::AnalysisOptions;
use super::run::analyze;
use super::sweep::SiteSummary;

/// One architecture's line in a comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ArchitectureSummary {
    /// The `name` of the file.
    pub name: String,
    /// The file as given.
    pub path: String,
    /// Number of channels of the file (those the output uses and those only checks read, such
    /// as a model estimate).
    pub channels: usize,
    /// Number of channels the output uses: the measuring hardware the architecture votes or
    /// averages over.
    pub output_channels: usize,
    /// Number of checks.
    pub checks: usize,
    /// Every fault site, in file order.
    pub sites: Vec<SiteSummary>,
    /// The hardware metrics.
    pub metrics: Metrics,
    /// Fault-free alarm probability (`p_vd + p_sd` of the baseline).
    pub false_alarm: Estimate,
    /// Linear cells of the decomposition (a measure of the work, independent of the machine).
    pub cells: usize,
    /// Wall-clock seconds of the analysis on this machine (not reproducible bit for bit).
    pub seconds: f64,
    /// The figures over time, when the file has a timing section.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub timed: Option<TimedSummary>,
    /// The isolation rule of the file (`in_every_fired_check`, `farthest_from_median`), or
    /// none: every detection then shuts down.
    pub isolation_rule: Option<&'static str>,
    /// What a single fault ends in (FIT-weighted): the function goes on, shuts down, goes on
    /// with the fault still in the vote, or gives a dangerous undetected output.
    pub end_states: EndStates,
}

/// The figures over time of one architecture in a comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TimedSummary {
    /// Seconds from the fault to the latest confirmation.
    pub deadline: f64,
    /// Samples within the deadline.
    pub samples: usize,
    /// Fault-free alarm episodes per hour of operation.
    pub false_alarms_per_hour: Estimate,
    /// The lowest timed `dc` over the sites (a fault confirmed late counts as missed).
    pub lowest_dc: Option<Estimate>,
    /// The metrics with the timed outcomes.
    pub metrics: Metrics,
}

impl ArchitectureSummary {
    /// The lowest coverage over the sites (of `dc` when `all_dangerous` is false, skipping
    /// sites without dangerous outcomes; of `dc_all_dangerous` otherwise).
    pub fn lowest_coverage(&self, all_dangerous: bool) -> Option<Estimate> {
        self.sites
            .iter()
            .filter_map(|s| {
                if all_dangerous {
                    Some(s.dc_all_dangerous)
                } else {
                    s.dc
                }
            })
            .min_by(|a, b| a.value.total_cmp(&b.value))
    }
}

/// Analyses one architecture for a comparison.
///
/// # Errors
/// The analysis's errors, prefixed with the file.
pub fn summarise(
    arch: &Architecture,
    options: &AnalysisOptions,
) -> Result<ArchitectureSummary, AnalysisError> {
    let started = Instant::now();
    let analysis = analyze(&arch.model, options, false).map_err(|e| match e {
        AnalysisError::Engine { context, source } => AnalysisError::Engine {
            context: format!("{}: {context}", arch.path),
            source,
        },
        other => other,
    })?;
    let seconds = started.elapsed().as_secs_f64();
    Ok(ArchitectureSummary {
        name: arch.model.name.clone(),
        path: arch.path.clone(),
        channels: arch.model.channels.len(),
        output_channels: output_channels(arch),
        checks: arch.model.checks.len(),
        sites: analysis.sites.iter().map(SiteSummary::of).collect(),
        metrics: analysis.metrics,
        false_alarm: analysis.baseline.alarm(),
        cells: analysis.cells,
        seconds,
        isolation_rule: arch.model.isolation.as_ref().map(|i| match i.rule {
            crate::model::IsolationRule::InEveryFiredCheck => "in_every_fired_check",
            crate::model::IsolationRule::FarthestFromMedian { .. } => "farthest_from_median",
        }),
        end_states: end_states_of(&analysis),
        timed: analysis.timed.as_ref().map(|t| TimedSummary {
            deadline: t.timing.deadline,
            samples: t.timing.samples,
            false_alarms_per_hour: t.false_alarms_per_hour,
            lowest_dc: t
                .sites
                .iter()
                .filter_map(|s| s.outcome.dc())
                .min_by(|a, b| a.value.total_cmp(&b.value)),
            metrics: t.metrics,
        }),
    })
}

/// The channels with a nonzero coefficient in some piece of the output (its values or its
/// guards): for a median of three, all three, though each piece takes one.
fn output_channels(arch: &Architecture) -> usize {
    let m = &arch.model;
    (0..m.channels.len())
        .filter(|&j| {
            m.output.pieces.iter().any(|p| {
                p.value.coeffs.get(j).is_some_and(|c| *c != 0.0)
                    || p.guards
                        .iter()
                        .any(|g| g.form.coeffs.get(j).is_some_and(|c| *c != 0.0))
            })
        })
        .count()
}

/// The fault-site names of a comparison: every name in the order first met, so that sites
/// of the same name (the comparable ones) share a column.
pub fn site_columns(rows: &[ArchitectureSummary]) -> Vec<String> {
    let mut names: Vec<String> = Vec::new();
    for row in rows {
        for s in &row.sites {
            if !names.contains(&s.name) {
                names.push(s.name.clone());
            }
        }
    }
    names
}
