//! The `isolation` object of the JSON output (only when the file has an `[isolation]`
//! section; README.md "JSON output" lists its keys):
//!
//! - `rule` (`in_every_fired_check` or `farthest_from_median`), `margin` (null for the first),
//!   `candidates`;
//! - `false_alarms`: fault-free, `blamed` (per candidate: `channel`, `p`, `error`: a false
//!   alarm that drops that channel) and `none_blamed`, `none_blamed_error`;
//! - `sites`: per fault site `name`, `faulty` (the candidates it moves), `removable` (dropping
//!   the one faulty channel removes the fault), `isolated`, `wrong_channel` (a healthy channel
//!   blamed), `none_blamed` (a shutdown), `not_detected`, each with its bound in `error`,
//!   `blamed` per candidate, `sigma` (for an unknown spread: where `wrong_channel` is largest,
//!   else null), `after_drop_residual` (a channel dropped, the fault still there and the
//!   architecture without the channel dangerous and quiet; null when no stage holds the site);
//! - `end_states`: FIT-weighted shares of single faults, `continues`, `shutdown`,
//!   `fault_stays`, `residual`, with `error`;
//! - `degraded`: per candidate, `dropped`, `output`, `checks`, and either `false_alarm`,
//!   `metrics` (as the top-level `metrics`) and `sites` (`name`, `dc`, `p_vu`, `error`), or
//!   `why_not`;
//! - `stated`: what the file's `[isolation.degraded]` states on top of the derivation,
//!   `output` (`mean`, `median`, `min`, `max`, or null: as derived) and `set` (`key`,
//!   `value`: values in force after a drop); null when the section is absent.

use serde::{Deserialize, Serialize};

use crate::analysis::isolation::{Blame, IsolationAnalysis};
use crate::model::IsolationRule;

use super::json::{MetricsJson, metrics_json};

/// One probability with its bound, for a named channel.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BlamedJson {
    pub channel: String,
    pub p: f64,
    pub error: f64,
}

/// Fault-free detections split by the channel blamed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FalseAlarmBlameJson {
    pub blamed: Vec<BlamedJson>,
    pub none_blamed: f64,
    pub none_blamed_error: f64,
}

/// Bounds of a site's isolation figures.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SiteIsolationBounds {
    pub isolated: f64,
    pub wrong_channel: f64,
    pub none_blamed: f64,
    pub not_detected: f64,
    pub after_drop_residual: Option<f64>,
}

/// The isolation figures of one site.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SiteIsolationJson {
    pub name: String,
    pub faulty: Vec<String>,
    pub removable: bool,
    pub isolated: f64,
    pub wrong_channel: f64,
    pub none_blamed: f64,
    pub not_detected: f64,
    pub blamed: Vec<BlamedJson>,
    pub sigma: Option<f64>,
    pub after_drop_residual: Option<f64>,
    pub error: SiteIsolationBounds,
}

/// Bounds of the end states.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EndStateBounds {
    pub continues: f64,
    pub shutdown: f64,
    pub fault_stays: f64,
    pub residual: f64,
}

/// The FIT-weighted end states of single faults.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EndStatesJson {
    pub continues: f64,
    pub shutdown: f64,
    pub fault_stays: f64,
    pub residual: f64,
    pub error: EndStateBounds,
}

/// One site of a degraded architecture.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DegradedSiteJson {
    pub name: String,
    pub dc: Option<f64>,
    pub p_vu: f64,
    pub error: f64,
}

/// The architecture without one channel.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DegradedJson {
    pub dropped: String,
    pub output: String,
    pub checks: Vec<String>,
    pub false_alarm: Option<f64>,
    pub metrics: Option<MetricsJson>,
    pub sites: Option<Vec<DegradedSiteJson>>,
    pub why_not: Option<String>,
}

/// The whole isolation object.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct IsolationJson {
    pub rule: String,
    pub margin: Option<f64>,
    pub candidates: Vec<String>,
    pub false_alarms: FalseAlarmBlameJson,
    pub sites: Vec<SiteIsolationJson>,
    pub end_states: EndStatesJson,
    pub degraded: Vec<DegradedJson>,
    pub stated: Option<StatedDegradedJson>,
}

/// `[isolation.degraded]` as stated in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StatedDegradedJson {
    pub output: Option<String>,
    pub set: Vec<StatedValueJson>,
}

/// One value in force after a drop.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StatedValueJson {
    pub key: String,
    pub value: f64,
}

/// The rule's name in the file and in JSON.
pub fn rule_key(rule: IsolationRule) -> &'static str {
    match rule {
        IsolationRule::InEveryFiredCheck => "in_every_fired_check",
        IsolationRule::FarthestFromMedian { .. } => "farthest_from_median",
    }
}

fn blamed(candidates: &[String], b: &Blame) -> Vec<BlamedJson> {
    candidates
        .iter()
        .zip(&b.blamed)
        .map(|(c, e)| BlamedJson {
            channel: c.clone(),
            p: e.value,
            error: e.error,
        })
        .collect()
}

/// The isolation object of an analysis.
pub fn isolation_json(i: &IsolationAnalysis) -> IsolationJson {
    IsolationJson {
        rule: rule_key(i.rule).to_string(),
        margin: match i.rule {
            IsolationRule::FarthestFromMedian { margin } => Some(margin),
            IsolationRule::InEveryFiredCheck => None,
        },
        candidates: i.candidates.clone(),
        false_alarms: FalseAlarmBlameJson {
            blamed: blamed(&i.candidates, &i.baseline),
            none_blamed: i.baseline.declined.value,
            none_blamed_error: i.baseline.declined.error,
        },
        sites: i
            .sites
            .iter()
            .map(|s| {
                let not_detected = s.quiet_safe.add(s.quiet_violated);
                SiteIsolationJson {
                    name: s.name.clone(),
                    faulty: s
                        .faulty
                        .iter()
                        .filter_map(|f| i.candidates.get(*f).cloned())
                        .collect(),
                    removable: s.removable,
                    isolated: s.isolated.value,
                    wrong_channel: s.wrong.value,
                    none_blamed: s.blame.declined.value,
                    not_detected: not_detected.value,
                    blamed: blamed(&i.candidates, &s.blame),
                    sigma: s.sigma,
                    after_drop_residual: s.after_drop_residual.map(|e| e.value),
                    error: SiteIsolationBounds {
                        isolated: s.isolated.error,
                        wrong_channel: s.wrong.error,
                        none_blamed: s.blame.declined.error,
                        not_detected: not_detected.error,
                        after_drop_residual: s.after_drop_residual.map(|e| e.error),
                    },
                }
            })
            .collect(),
        end_states: EndStatesJson {
            continues: i.end_states.continues.value,
            shutdown: i.end_states.shutdown.value,
            fault_stays: i.end_states.fault_stays.value,
            residual: i.end_states.residual.value,
            error: EndStateBounds {
                continues: i.end_states.continues.error,
                shutdown: i.end_states.shutdown.error,
                fault_stays: i.end_states.fault_stays.error,
                residual: i.end_states.residual.error,
            },
        },
        degraded: i
            .degraded
            .iter()
            .map(|d| match &d.analysis {
                Ok(a) => DegradedJson {
                    dropped: d.dropped.clone(),
                    output: d.output.clone(),
                    checks: d.checks.clone(),
                    false_alarm: Some(a.baseline.alarm().value),
                    metrics: Some(metrics_json(&a.metrics)),
                    sites: Some(
                        a.sites
                            .iter()
                            .map(|s| DegradedSiteJson {
                                name: s.name.clone(),
                                dc: s.outcome.dc().map(|d| d.value),
                                p_vu: s.outcome.p_vu.value,
                                error: s.outcome.p_vu.error,
                            })
                            .collect(),
                    ),
                    why_not: None,
                },
                Err(why) => DegradedJson {
                    dropped: d.dropped.clone(),
                    output: d.output.clone(),
                    checks: d.checks.clone(),
                    false_alarm: None,
                    metrics: None,
                    sites: None,
                    why_not: Some(why.clone()),
                },
            })
            .collect(),
        stated: i.stated.as_ref().map(|st| StatedDegradedJson {
            output: st.output.clone(),
            set: st
                .set
                .iter()
                .map(|(key, value)| StatedValueJson {
                    key: key.clone(),
                    value: *value,
                })
                .collect(),
        }),
    }
}
