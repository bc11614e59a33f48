//! Validation of the `[timing]` section: a positive sample period, a deadline of at least one
//! sample, a confirmation rule within the engine's limits, a danger count the interval can
//! reach, and names of sources and channels that exist.

use crate::prob::debounce::Debounce;

use super::compiled::Timing;
use super::error::Sink;
use super::names::{NameRef, Namespace};
use super::raw::{RawConfirm, RawModel, RawTiming, Spanned};

/// Most samples within one deadline (the chain's work grows with them).
pub const MAX_TIMED_SAMPLES: usize = 10_000;

/// Most steps of the confirmation chain per point of the timed integrals (states times
/// danger counts times samples): beyond it one point takes seconds and its arrays hundreds
/// of megabytes.
pub const MAX_CHAIN_WORK: f64 = 2e8;

/// Relative slack when the deadline is divided into samples, so that a deadline written as
/// an exact multiple of the period (0.3 / 0.1 in floating point) keeps its last sample.
const SAMPLES_SLACK: f64 = 1e-9;

/// The validated timing section, or `None` after recording every problem.
pub(crate) fn validate_timing(
    raw: &RawTiming,
    ns: &Namespace,
    model: &RawModel,
    sink: &mut Sink<'_>,
) -> Option<Timing> {
    let errors_before = sink.error_count();
    let positive = |sink: &mut Sink<'_>, v: &Spanned<f64>, what: &str, example: &str| {
        if v.value <= 0.0 {
            v.error(
                sink,
                format!("{what} must be positive, found {}", v.value),
                format!("give the time in seconds, e.g. {example}"),
            );
        }
    };
    if let Some(p) = &raw.sample_period {
        positive(sink, p, "the sample period", "sample_period = 0.01");
    }
    if let Some(d) = &raw.deadline {
        positive(sink, d, "the deadline", "deadline = 0.1");
    }
    let mut samples = 0;
    if let (Some(p), Some(d)) = (&raw.sample_period, &raw.deadline)
        && p.value > 0.0
        && d.value > 0.0
    {
        let ratio = d.value / p.value * (1.0 + SAMPLES_SLACK);
        if ratio < 1.0 {
            d.error(
                sink,
                format!(
                    "the deadline {} s is shorter than one sample period ({} s): no sample \
                     falls within it",
                    d.value, p.value
                ),
                "give a deadline of at least one sample period",
            );
        } else if ratio.floor() > MAX_TIMED_SAMPLES as f64 {
            d.error(
                sink,
                format!(
                    "the deadline holds {:.0} samples, more than the limit of {MAX_TIMED_SAMPLES}",
                    ratio.floor()
                ),
                "shorten the deadline or lengthen the sample period",
            );
        } else {
            samples = ratio.floor() as usize;
        }
    }
    let confirm = match &raw.confirm {
        None => Some(Debounce::IMMEDIATE),
        Some(c) => confirm_rule(c, sink),
    };
    let danger_samples = match &raw.danger_samples {
        None => Some(1),
        Some(k) if k.value < 1 || (samples > 0 && k.value as u64 > samples as u64) => {
            k.error(
                sink,
                format!(
                    "danger_samples = {} but the deadline holds {samples} samples",
                    k.value
                ),
                format!("give a number from 1 to {}", samples.max(1)),
            );
            None
        }
        Some(k) => Some(k.value as usize),
    };
    let mut fresh_sources = vec![false; model.sources.len()];
    for name in &raw.fresh_sources {
        if let Some(NameRef::Source(i)) = ns.resolve(
            sink,
            name,
            "a shared source",
            |r| matches!(r, NameRef::Source(_)),
            "name a source of [sources]; a channel's own noise is fresh every sample already",
        ) && let Some(slot) = fresh_sources.get_mut(i)
        {
            *slot = true;
        }
    }
    let mut constant_channels = vec![false; model.channels.len()];
    for name in &raw.constant_channels {
        if let Some(NameRef::Channel(i)) = ns.resolve(
            sink,
            name,
            "a channel",
            |r| matches!(r, NameRef::Channel(_)),
            "name a channel of [channels]; shared sources are constant over the interval already",
        ) && let Some(slot) = constant_channels.get_mut(i)
        {
            *slot = true;
        }
    }
    if let (Some(rule), Some(c)) = (confirm, &raw.confirm)
        && samples > 0
        && rule.fastest_trip() > samples
    {
        c.warning(
            sink,
            format!(
                "the confirmation rule needs at least {} samples but the deadline holds {samples}: \
                 no fault can be confirmed in time",
                rule.fastest_trip()
            ),
            "lengthen the deadline or confirm with fewer samples",
        );
    }
    if let (Some(rule), Some(k)) = (confirm, danger_samples)
        && samples > 0
        && let Ok(chain) = rule.chain()
    {
        let work = (chain.states() as f64) * (k as f64 + 1.0) * samples as f64;
        if work > MAX_CHAIN_WORK {
            let at = raw.danger_samples.as_ref().map_or(raw.span, |d| d.span);
            sink.error(
                at,
                "timing",
                format!(
                    "the confirmation rule ({} states), the danger count {k} and the {samples} \
                     samples make {work:.1e} steps of the chain per point, more than the limit \
                     of {MAX_CHAIN_WORK:.0e}",
                    chain.states()
                ),
                "use a shorter window, fewer danger samples or a shorter deadline",
            );
        }
    }
    if sink.error_count() > errors_before {
        return None;
    }
    Some(Timing {
        sample_period: raw.sample_period.as_ref()?.value,
        deadline: raw.deadline.as_ref()?.value,
        samples,
        confirm: confirm?,
        danger_samples: danger_samples?,
        fresh_sources,
        constant_channels,
    })
}

/// The rule of `confirm`, checked against the engine's limits.
fn confirm_rule(c: &Spanned<RawConfirm>, sink: &mut Sink<'_>) -> Option<Debounce> {
    let size = |v: &Spanned<i64>| usize::try_from(v.value).unwrap_or(0);
    let rule = match &c.value {
        RawConfirm::Consecutive(n) => Debounce::Consecutive { count: size(n) },
        RawConfirm::Window { count, window } => Debounce::Window {
            count: size(count),
            window: size(window),
        },
        RawConfirm::Counter { up, down, trip } => Debounce::Counter {
            up: size(up),
            down: size(down),
            trip: size(trip),
        },
    };
    match rule.validate() {
        Ok(()) => Some(rule),
        Err(e) => {
            c.error(
                sink,
                format!("the confirmation rule is out of range: {e}"),
                "change the numbers of `confirm` to the ranges named",
            );
            None
        }
    }
}
