//! The `[isolation]` section: after a detection, which channel is blamed and dropped, and the
//! degraded architecture that runs on without it (docs/architecture-format.md, "Isolation").
//!
//! Validation checks the rule, its margin and the channels that may be blamed. The degraded
//! architecture of each candidate is derived from the resolved model by the rules of that
//! section (a reading of the dropped channel leaves every mean, median, range and weighted
//! mean that lists it; a check, signal or fixed-weight sum that needs it is lost with it) and
//! compiled like any file.

use super::compiled::{CompiledModel, DegradedModel, Isolation, IsolationRule, StatedDegraded};
use super::error::Sink;
use super::names::{NameRef, Namespace};
use super::raw::RawIsolation;
use super::resolved::*;

/// The rule names of the file, with the rule each stands for.
pub const RULE_WORDS: [&str; 2] = ["in_every_fired_check", "farthest_from_median"];

/// The validated section: the rule, and the channels that may be blamed (`None`: those the
/// output reads, found when the output is compiled).
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct VIsolation {
    pub rule: IsolationRule,
    pub among: Option<Vec<usize>>,
    pub loc: Loc,
    /// What `[isolation.degraded]` states on top of the derivation.
    pub degraded: Option<VDegraded>,
}

/// The output words of `[isolation.degraded]`.
pub const DEGRADED_OUTPUT_WORDS: [&str; 4] = ["mean", "median", "min", "max"];

/// How the output combines the channels it keeps after a drop.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum DegradedOutput {
    Mean,
    Order(Stat),
}

/// The validated `[isolation.degraded]`: the output's combination and the values in force
/// after the drop (their keys are checked against the file's inputs when it is loaded).
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct VDegraded {
    pub output: Option<DegradedOutput>,
    pub set: Vec<(String, f64)>,
    pub loc: Loc,
}

/// The validated isolation section, or `None` after recording every problem.
pub(crate) fn validate_isolation(
    raw: &RawIsolation,
    ns: &Namespace,
    sink: &mut Sink<'_>,
) -> Option<VIsolation> {
    let errors_before = sink.error_count();
    let margin = match &raw.margin {
        None => 0.0,
        Some(m) if !(m.value >= 0.0 && m.value.is_finite()) => {
            m.error(
                sink,
                format!("the margin must be zero or positive, found {}", m.value),
                "give the lead, in the unit of the file, that the blamed reading must have, \
                 e.g. margin = 0.5",
            );
            0.0
        }
        Some(m) => m.value,
    };
    let rule = match raw.rule.as_ref().map(|r| r.value.as_str()) {
        Some("in_every_fired_check") => {
            if let Some(m) = &raw.margin {
                m.error(
                    sink,
                    "a margin applies to the rule \"farthest_from_median\" only",
                    "remove `margin`, or use rule = \"farthest_from_median\"",
                );
            }
            Some(IsolationRule::InEveryFiredCheck)
        }
        Some("farthest_from_median") => Some(IsolationRule::FarthestFromMedian { margin }),
        Some(other) => {
            if let Some(r) = &raw.rule {
                let quoted: Vec<String> = RULE_WORDS.iter().map(|w| format!("\"{w}\"")).collect();
                r.error(
                    sink,
                    format!("unknown isolation rule \"{other}\""),
                    format!("use one of {}", quoted.join(", ")),
                );
            }
            None
        }
        None => None,
    };
    let mut among = None;
    if let Some(names) = &raw.among {
        let mut found: Vec<usize> = Vec::new();
        for name in names {
            if let Some(NameRef::Channel(i)) = ns.resolve(
                sink,
                name,
                "a channel",
                |r| matches!(r, NameRef::Channel(_)),
                "name a channel of [channels]: only a channel can be dropped",
            ) {
                if found.contains(&i) {
                    name.error(
                        sink,
                        format!("`{}` is listed twice", name.value),
                        "list each channel once",
                    );
                }
                found.push(i);
            }
        }
        found.sort_unstable();
        found.dedup();
        if found.len() < 2 && names.len() == found.len() {
            sink.error(
                raw.span,
                "isolation.among",
                "isolation needs at least two channels that may be blamed",
                "list two or more channels, e.g. among = [\"a\", \"b\", \"c\"]",
            );
        }
        among = Some(found);
    }
    let degraded = raw.degraded.as_ref().map(|d| {
        let output = d.output.as_ref().and_then(|o| match o.value.as_str() {
            "mean" => Some(DegradedOutput::Mean),
            "median" => Some(DegradedOutput::Order(Stat::Median)),
            "min" => Some(DegradedOutput::Order(Stat::Min)),
            "max" => Some(DegradedOutput::Order(Stat::Max)),
            other => {
                let quoted: Vec<String> = DEGRADED_OUTPUT_WORDS
                    .iter()
                    .map(|w| format!("\"{w}\""))
                    .collect();
                o.error(
                    sink,
                    format!("unknown output \"{other}\" after a drop"),
                    format!(
                        "use one of {} (how the output combines the channels it keeps)",
                        quoted.join(", ")
                    ),
                );
                None
            }
        });
        VDegraded {
            output,
            set: d
                .set
                .iter()
                .map(|(k, v)| (k.value.clone(), v.value))
                .collect(),
            loc: Loc {
                span: d.span,
                key: "isolation.degraded".into(),
            },
        }
    });
    if sink.error_count() > errors_before {
        return None;
    }
    Some(VIsolation {
        rule: rule?,
        among,
        loc: Loc {
            span: raw.span,
            key: "isolation".into(),
        },
        degraded,
    })
}

/// The compiled isolation of a model: its candidates, the channels of each check, and one
/// degraded architecture per candidate. Records an error when fewer than two channels may be
/// blamed. `compile` is the compiler of the model layer (given so that this file does not
/// depend on it).
///
/// `stage_base` is the resolved file with the values of `[isolation.degraded]` set (the file
/// itself when it sets none); each degraded architecture is derived from it, and its output
/// recombined as the section states.
pub(crate) fn compile_isolation(
    v: &VIsolation,
    stage_base: &Resolved,
    model: &CompiledModel,
    sink: &mut Sink<'_>,
    compile: impl Fn(&Resolved) -> Result<CompiledModel, String>,
) -> Option<Isolation> {
    let candidates = match &v.among {
        Some(list) => list.clone(),
        None => model.output_formula.channels(),
    };
    if candidates.len() < 2 {
        sink.error(
            v.loc.span,
            &v.loc.key,
            format!(
                "the output reads {} channel{}, so isolation has nothing to choose between",
                candidates.len(),
                if candidates.len() == 1 { "" } else { "s" }
            ),
            "list the channels that may be blamed: among = [\"a\", \"b\", \"c\"]",
        );
        return None;
    }
    let check_channels = model.checks.iter().map(|c| c.formula.channels()).collect();
    let degraded = candidates
        .iter()
        .map(|&dropped| DegradedModel {
            dropped,
            model: without_channel(stage_base, dropped)
                .and_then(|r| match v.degraded.as_ref().and_then(|d| d.output) {
                    Some(output) => recombined(r, output),
                    None => Ok(r),
                })
                .and_then(|r| compile(&r))
                .map(Box::new),
        })
        .collect();
    let stated = v.degraded.as_ref().map(|d| StatedDegraded {
        output: d.output.map(|o| {
            match o {
                DegradedOutput::Mean => "mean",
                DegradedOutput::Order(Stat::Median) => "median",
                DegradedOutput::Order(Stat::Min) => "min",
                DegradedOutput::Order(Stat::Max) => "max",
            }
            .to_string()
        }),
        set: d.set.clone(),
    });
    Some(Isolation {
        rule: v.rule,
        candidates,
        check_channels,
        degraded,
        stated,
    })
}

/// The degraded architecture with its output recombined as `[isolation.degraded]` states:
/// the same readings, taken as their mean, median, minimum or maximum.
fn recombined(mut r: Resolved, output: DegradedOutput) -> Result<Resolved, String> {
    let readings = match &r.output.def {
        FnDef::Mean(rs) | FnDef::Order(_, rs) => rs.clone(),
        FnDef::Select(reading) => vec![*reading],
        _ => {
            return Err(
                "the output after the drop is a weighted sum, not a set of readings, so \
                        isolation.degraded.output cannot recombine it"
                    .into(),
            );
        }
    };
    r.output.def = match output {
        DegradedOutput::Mean => FnDef::Mean(readings),
        DegradedOutput::Order(stat) => FnDef::Order(stat, readings),
    };
    r.name = format!("{}, output as stated", r.name);
    Ok(r)
}

/// Whether a reading is lost once channel `dropped` is gone.
struct Lost<'a> {
    dropped: usize,
    signals: &'a [bool],
}

impl Lost<'_> {
    fn reading(&self, r: &Reading) -> bool {
        match r {
            Reading::Channel(i) => *i == self.dropped,
            Reading::Signal(s) => self.signals.get(*s).copied().unwrap_or(true),
        }
    }

    /// The function without the lost readings, or `None` when it needs one of them.
    fn reduce(&self, def: &FnDef) -> Option<FnDef> {
        let keep = |rs: &[Reading]| -> Vec<Reading> {
            rs.iter().copied().filter(|r| !self.reading(r)).collect()
        };
        match def {
            FnDef::Linear {
                terms,
                constant,
                weighted,
            } => {
                if !terms.iter().any(|(r, _)| self.reading(r)) {
                    return Some(def.clone());
                }
                if !weighted {
                    return None;
                }
                // A weighted mean keeps its total weight over the readings that remain.
                let total: f64 = terms.iter().map(|(_, w)| w).sum();
                let kept: Vec<(Reading, f64)> = terms
                    .iter()
                    .copied()
                    .filter(|(r, _)| !self.reading(r))
                    .collect();
                let rest: f64 = kept.iter().map(|(_, w)| w).sum();
                (!kept.is_empty() && rest != 0.0).then(|| FnDef::Linear {
                    terms: kept.iter().map(|(r, w)| (*r, w * total / rest)).collect(),
                    constant: *constant,
                    weighted: true,
                })
            }
            FnDef::Mean(rs) => {
                let k = keep(rs);
                (!k.is_empty()).then_some(FnDef::Mean(k))
            }
            FnDef::Order(stat, rs) => {
                let k = keep(rs);
                (!k.is_empty()).then_some(FnDef::Order(*stat, k))
            }
            FnDef::Range(rs) => {
                let k = keep(rs);
                (k.len() >= 2).then_some(FnDef::Range(k))
            }
            FnDef::Select(r) => (!self.reading(r)).then(|| def.clone()),
            FnDef::Difference(a, b) => (!self.reading(a) && !self.reading(b)).then(|| def.clone()),
            // (the output itself is never lost here: a model whose output is lost has no
            // degraded architecture at all)
            FnDef::FromOutput(r) => (!self.reading(r)).then(|| def.clone()),
        }
    }
}

/// Renumbers the readings of a function after the removal of channel `dropped` and of the
/// lost signals (`signal_index[s]` is the new index of signal `s`).
fn renumber(def: FnDef, dropped: usize, signal_index: &[Option<usize>]) -> FnDef {
    let r = |x: Reading| match x {
        Reading::Channel(i) if i > dropped => Reading::Channel(i - 1),
        Reading::Channel(i) => Reading::Channel(i),
        Reading::Signal(s) => Reading::Signal(signal_index.get(s).copied().flatten().unwrap_or(s)),
    };
    let all = |rs: Vec<Reading>| rs.into_iter().map(r).collect::<Vec<_>>();
    match def {
        FnDef::Linear {
            terms,
            constant,
            weighted,
        } => FnDef::Linear {
            terms: terms.into_iter().map(|(x, w)| (r(x), w)).collect(),
            constant,
            weighted,
        },
        FnDef::Mean(rs) => FnDef::Mean(all(rs)),
        FnDef::Select(x) => FnDef::Select(r(x)),
        FnDef::Order(stat, rs) => FnDef::Order(stat, all(rs)),
        FnDef::Difference(a, b) => FnDef::Difference(r(a), r(b)),
        FnDef::Range(rs) => FnDef::Range(all(rs)),
        FnDef::FromOutput(x) => FnDef::FromOutput(r(x)),
    }
}

/// The resolved model without channel `dropped`: the degraded architecture that runs on once
/// the channel is blamed. Checks that need the channel are gone; `at_least = k` becomes
/// `at_least = min(k, checks left)`; faults that hit only the channel are gone with it; the
/// timing section is left out (the degraded stage is analysed one sample at a time).
///
/// # Errors
/// A sentence saying why the output cannot be computed without the channel.
pub(crate) fn without_channel(v: &Resolved, dropped: usize) -> Result<Resolved, String> {
    let name_of = |i: usize| v.channels.get(i).map_or("?", |c| c.name.as_str());
    let mut lost_signals = vec![false; v.signals.len()];
    loop {
        let mut changed = false;
        for s in 0..v.signals.len() {
            if lost_signals[s] {
                continue;
            }
            let lost = Lost {
                dropped,
                signals: &lost_signals,
            };
            if lost.reduce(&v.signals[s].def).is_none() {
                lost_signals[s] = true;
                changed = true;
            }
        }
        if !changed {
            break;
        }
    }
    let lost = Lost {
        dropped,
        signals: &lost_signals,
    };
    let output_def = lost.reduce(&v.output.def).ok_or_else(|| {
        format!(
            "the output needs channel '{}' (a selection or a sum with fixed weights), so \
             nothing can run on without it",
            name_of(dropped)
        )
    })?;
    let mut signal_index = vec![None; v.signals.len()];
    let mut next = 0;
    for (s, gone) in lost_signals.iter().enumerate() {
        if !gone {
            signal_index[s] = Some(next);
            next += 1;
        }
    }
    let signals: Vec<VFunction> = v
        .signals
        .iter()
        .zip(&lost_signals)
        .filter(|(_, gone)| !**gone)
        .filter_map(|(f, _)| {
            lost.reduce(&f.def).map(|def| VFunction {
                name: f.name.clone(),
                def: renumber(def, dropped, &signal_index),
                loc: f.loc.clone(),
            })
        })
        .collect();
    let checks: Vec<VCheck> = v
        .checks
        .iter()
        .filter_map(|c| {
            lost.reduce(&c.def).map(|def| VCheck {
                name: c.name.clone(),
                def: renumber(def, dropped, &signal_index),
                loc: c.loc.clone(),
                lower: c.lower,
                upper: c.upper,
            })
        })
        .collect();
    let detection = match v.detection {
        VDetection::AtLeast(k) if !checks.is_empty() => VDetection::AtLeast(k.min(checks.len())),
        _ => VDetection::Any,
    };
    let shift = |i: usize| if i > dropped { i - 1 } else { i };
    let faults = v
        .faults
        .iter()
        .filter_map(|f| {
            let hits: Vec<(Site, f64, String)> = f
                .hits
                .iter()
                .filter(|(site, _, _)| *site != Site::Channel(dropped))
                .map(|(site, g, n)| {
                    let site = match site {
                        Site::Channel(i) => Site::Channel(shift(*i)),
                        Site::Source(s) => Site::Source(*s),
                    };
                    (site, *g, n.clone())
                })
                .collect();
            let replaced_gone = f.mode == VMode::Replace
                && f.hits
                    .iter()
                    .any(|(site, _, _)| *site == Site::Channel(dropped));
            (!hits.is_empty() && !replaced_gone).then(|| VFault { hits, ..f.clone() })
        })
        .collect();
    let mut channels = v.channels.clone();
    channels.remove(dropped);
    let mut channel_spans = v.channel_spans.clone();
    if dropped < channel_spans.len() {
        channel_spans.remove(dropped);
    }
    Ok(Resolved {
        name: format!("{}, without {}", v.name, name_of(dropped)),
        unit: v.unit.clone(),
        full_scale: v.full_scale,
        sources: v.sources.clone(),
        channels,
        correlations: v
            .correlations
            .iter()
            .filter(|(i, j, _)| *i != dropped && *j != dropped)
            .map(|(i, j, rho)| (shift(*i), shift(*j), *rho))
            .collect(),
        signals,
        output: VFunction {
            name: v.output.name.clone(),
            def: renumber(output_def, dropped, &signal_index),
            loc: v.output.loc.clone(),
        },
        checks,
        detection,
        safety: v.safety,
        faults,
        timing: None,
        isolation: None,
        source_spans: v.source_spans.clone(),
        channel_spans,
    })
}
