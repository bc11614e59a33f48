//! The rules an architecture must meet, checked on the raw model. Every violation is recorded
//! (reading goes on after each), and the resolved model is returned only when there is none.
//! The rules are listed in docs/architecture-format.md.

use std::collections::HashMap;

use nalgebra::DMatrix;

use super::error::{Sink, Span};
use super::faults::validate_faults;
use super::functions::{check_fn, output_fn, signal_fn};
use super::limits;
use super::names::{NameRef, Namespace, build_namespace};
use super::psd::{self, PsdVerdict};
use super::raw::*;
use super::resolved::*;

fn too_many(sink: &mut Sink<'_>, spans: &[Span], key: &str, what: &str, limit: usize) {
    let n = spans.len();
    if n > limit {
        sink.error(
            spans.get(limit).copied().unwrap_or_default(),
            key,
            format!("the file defines {n} {what}, more than the limit of {limit}"),
            format!("model at most {limit} {what}; merge or drop the least important ones"),
        );
    }
}

fn non_negative(sink: &mut Sink<'_>, v: &Spanned<f64>, what: &str) {
    if v.value < 0.0 {
        v.error(
            sink,
            format!("{what} is {}, but it cannot be negative", v.value),
            "give a value >= 0 (0 means no random part)",
        );
    }
}

/// Checks everything; the resolved model when no error was found.
pub(crate) fn validate(raw: &RawModel, sink: &mut Sink<'_>) -> Option<Resolved> {
    let errors_before = sink.error_count();
    for (v, what) in [(&raw.name, "the name"), (&raw.unit, "the unit")] {
        if let Some(v) = v
            && v.value.trim().is_empty()
        {
            v.error(
                sink,
                format!("{what} is empty"),
                "write a short text, e.g. unit = \"deg\"",
            );
        }
    }
    if let Some(fs) = &raw.full_scale
        && fs.value.0 >= fs.value.1
    {
        fs.error(
            sink,
            format!(
                "the lower end {} is not below the upper end {}",
                fs.value.0, fs.value.1
            ),
            "write full_scale = [lower, upper] with lower < upper",
        );
    }
    let root = Span::default();
    let name_spans = |names: &mut dyn Iterator<Item = Span>| names.collect::<Vec<Span>>();
    let sizes = [
        (
            name_spans(&mut raw.channels.iter().map(|x| x.name.span)),
            "channels",
            "channels",
            limits::MAX_CHANNELS,
        ),
        (
            name_spans(&mut raw.sources.iter().map(|x| x.name.span)),
            "sources",
            "sources",
            limits::MAX_SOURCES,
        ),
        (
            name_spans(&mut raw.signals.iter().map(|x| x.name.span)),
            "signals",
            "signals",
            limits::MAX_SIGNALS,
        ),
        (
            name_spans(&mut raw.checks.iter().map(|x| x.name.span)),
            "checks",
            "checks",
            limits::MAX_CHECKS,
        ),
        (
            name_spans(&mut raw.faults.iter().map(|x| x.name.span)),
            "faults",
            "fault sites",
            limits::MAX_FAULTS,
        ),
    ];
    for (spans, key, what, limit) in &sizes {
        too_many(sink, spans, key, what, *limit);
    }

    let ns = build_namespace(raw, sink);

    let sources: Vec<VSource> = raw
        .sources
        .iter()
        .map(|s| {
            non_negative(sink, &s.sigma, "sigma");
            VSource {
                name: s.name.value.clone(),
                mean: s.mean.value,
                sigma: s.sigma.value,
            }
        })
        .collect();

    let channels: Vec<VChannel> = raw
        .channels
        .iter()
        .map(|c| {
            non_negative(sink, &c.sigma, "sigma");
            let mut from = Vec::new();
            for (name, gain) in &c.from {
                if let Some(NameRef::Source(s)) = ns.resolve(
                    sink,
                    name,
                    "a shared source",
                    |r| matches!(r, NameRef::Source(_)),
                    "`from` lists shared sources ([sources.X]); correlate channels with \
                     [[correlations]] instead",
                ) {
                    if gain.value == 0.0 {
                        gain.warning(
                            sink,
                            "gain 0: the source has no effect on this channel",
                            "drop the entry or give the gain",
                        );
                    }
                    from.push((s, gain.value));
                }
            }
            VChannel {
                name: c.name.value.clone(),
                mean: c.mean.value,
                sigma: c.sigma.value,
                from,
            }
        })
        .collect();
    if raw.channels.is_empty() && !raw.names_incomplete && raw.channels_given {
        sink.error(
            root,
            "channels",
            "the [channels] section defines no channels",
            "add at least one channel, e.g. [channels.a] with sigma = 0.5",
        );
    }

    let correlations = validate_correlations(raw, &ns, &channels, sink);

    let signals: Vec<Option<VFunction>> = raw
        .signals
        .iter()
        .map(|s| signal_fn(s, &ns, sink))
        .collect();
    let output = raw.output.as_ref().and_then(|o| output_fn(o, &ns, sink));
    let checks: Vec<Option<VCheck>> = raw
        .checks
        .iter()
        .map(|c| {
            let def = check_fn(c, &ns, sink);
            let band = band(sink, &c.band, "the check");
            let (def, (lower, upper)) = (def?, band?);
            Some(VCheck {
                name: c.name.value.clone(),
                def: def.def,
                loc: def.loc,
                lower,
                upper,
            })
        })
        .collect();
    let detection = detection(raw, sink);
    let safety = raw
        .safety
        .as_ref()
        .and_then(|b| band(sink, b, "the safety requirement"));
    let valid_checks: Vec<&VCheck> = checks.iter().flatten().collect();
    let faults = validate_faults(raw, &ns, safety, &valid_checks, sink);
    let timing = raw
        .timing
        .as_ref()
        .and_then(|t| super::timing::validate_timing(t, &ns, raw, sink));
    let isolation = raw
        .isolation
        .as_ref()
        .and_then(|i| super::isolation::validate_isolation(i, &ns, sink));

    if sink.error_count() > errors_before {
        return None;
    }
    Some(Resolved {
        name: raw.name.as_ref()?.value.clone(),
        unit: raw.unit.as_ref()?.value.clone(),
        full_scale: raw.full_scale.as_ref().map(|f| f.value),
        sources,
        channels,
        correlations,
        signals: signals.into_iter().collect::<Option<Vec<_>>>()?,
        output: output?,
        checks: checks.into_iter().collect::<Option<Vec<_>>>()?,
        detection: detection?,
        safety: safety?,
        faults,
        timing,
        isolation,
        source_spans: raw.sources.iter().map(|s| s.name.span).collect(),
        channel_spans: raw.channels.iter().map(|c| c.name.span).collect(),
    })
}

fn validate_correlations(
    raw: &RawModel,
    ns: &Namespace,
    channels: &[VChannel],
    sink: &mut Sink<'_>,
) -> Vec<(usize, usize, f64)> {
    let mut out: Vec<(usize, usize, f64)> = Vec::new();
    let mut seen: HashMap<(usize, usize), usize> = HashMap::new();
    let mut spans: Vec<Span> = Vec::new();
    let mut all_ok = true;
    for c in &raw.correlations {
        let (Some((a, b)), Some(rho)) = (&c.between, &c.rho) else {
            all_ok = false;
            continue;
        };
        let is_channel = |r: NameRef| matches!(r, NameRef::Channel(_));
        let fix = "correlations are between the own random parts of two channels; a shared \
                   source induces its correlation by itself";
        let ra = ns.resolve(sink, a, "a channel", is_channel, fix);
        let rb = ns.resolve(sink, b, "a channel", is_channel, fix);
        let mut ok = true;
        if !(-1.0..=1.0).contains(&rho.value) {
            rho.error(
                sink,
                format!("rho is {}, outside [-1, 1]", rho.value),
                "give a correlation coefficient between -1 and 1",
            );
            ok = false;
        }
        let (Some(NameRef::Channel(i)), Some(NameRef::Channel(j))) = (ra, rb) else {
            all_ok = false;
            continue;
        };
        if i == j {
            b.error(
                sink,
                format!("a correlation of `{}` with itself", a.value),
                "name two different channels (a channel is always fully correlated with itself)",
            );
            ok = false;
        }
        let pair = (i.min(j), i.max(j));
        if let Some(prev) = seen.get(&pair) {
            let prev_line = spans
                .get(*prev)
                .map(|s| sink.line_col(s.start).0)
                .unwrap_or(0);
            sink.error(
                c.span,
                &c.key,
                format!(
                    "the pair ({}, {}) is correlated a second time (first at line {prev_line})",
                    a.value, b.value
                ),
                "keep one [[correlations]] entry per pair",
            );
            ok = false;
        }
        if ok {
            seen.insert(pair, out.len());
            spans.push(c.span);
            out.push((i, j, rho.value));
        } else {
            all_ok = false;
        }
    }
    if all_ok && !out.is_empty() && channels.len() <= limits::MAX_CHANNELS {
        let n = channels.len();
        let mut r = DMatrix::<f64>::identity(n, n);
        for (i, j, rho) in &out {
            r[(*i, *j)] = *rho;
            r[(*j, *i)] = *rho;
        }
        match psd::check(&r) {
            PsdVerdict::Ok => {}
            PsdVerdict::Undecided => sink.error(
                spans.first().copied().unwrap_or_default(),
                "correlations",
                "could not decide whether the correlations are consistent (eigenvalue \
                 iteration did not converge)",
                "check the rho values",
            ),
            PsdVerdict::Block(block, min) => {
                let names: Vec<&str> = block.iter().map(|i| channels[*i].name.as_str()).collect();
                let mut pairs = Vec::new();
                let mut last = 0;
                for (k, (i, j, rho)) in out.iter().enumerate() {
                    if block.contains(i) && block.contains(j) {
                        pairs.push(format!(
                            "({}, {}) = {rho}",
                            channels[*i].name, channels[*j].name
                        ));
                        last = last.max(k);
                    }
                }
                let span = spans.get(last).copied().unwrap_or_default();
                sink.error(
                    span,
                    &format!("correlations[{last}]"),
                    format!(
                        "the correlations among channels {} are inconsistent: {} cannot hold \
                         together (the correlation matrix of this block is not positive \
                         semi-definite, smallest eigenvalue {min:.3e})",
                        names.join(", "),
                        pairs.join(", "),
                    ),
                    "reduce the size of one or more of these rho values",
                );
            }
        }
    }
    out
}

/// Reads a band: `limit` or `lower`/`upper`; returns (lower, upper).
pub(crate) fn band(sink: &mut Sink<'_>, b: &RawBand, what: &str) -> Option<(f64, f64)> {
    if b.broken {
        return None;
    }
    match (&b.limit, &b.lower, &b.upper) {
        (Some(l), None, None) => {
            if l.value == 0.0 {
                l.error(
                    sink,
                    format!(
                        "a limit of zero: {what} would {} on any deviation",
                        if what.contains("check") {
                            "fire"
                        } else {
                            "be violated"
                        }
                    ),
                    "give a positive limit in the file's unit",
                );
                None
            } else if l.value < 0.0 {
                l.error(
                    sink,
                    format!("the limit is {}, but it must be positive", l.value),
                    "give the half-width of the band, e.g. limit = 2.0 for [-2, 2]",
                );
                None
            } else {
                Some((-l.value, l.value))
            }
        }
        (Some(l), _, _) => {
            l.error(
                sink,
                "gives both `limit` and `lower`/`upper`",
                "give either limit = L (the band [-L, L]) or lower and upper",
            );
            None
        }
        (None, None, None) => {
            sink.error(
                b.span,
                &format!("{}.limit", b.key),
                format!("{what} has no band"),
                "add limit = 2.0, or lower = .. and/or upper = ..",
            );
            None
        }
        (None, lo, hi) => {
            let lower = lo.as_ref().map_or(f64::NEG_INFINITY, |x| x.value);
            let upper = hi.as_ref().map_or(f64::INFINITY, |x| x.value);
            if lower >= upper {
                if let Some(lo) = lo {
                    lo.error(
                        sink,
                        format!("lower = {lower} is not below upper = {upper}"),
                        "give lower < upper",
                    );
                }
                None
            } else {
                Some((lower, upper))
            }
        }
    }
}

fn detection(raw: &RawModel, sink: &mut Sink<'_>) -> Option<VDetection> {
    let n = raw.checks.len();
    match &raw.detection {
        None => {
            if n == 0 {
                sink.warning(
                    Span::default(),
                    "checks",
                    "the file defines no checks: no fault can be detected",
                    "add [checks.X] sections, or accept a coverage of zero",
                );
            }
            Some(VDetection::Any)
        }
        Some(d) => match &d.value {
            RawFires::Any => {
                if n == 0 {
                    d.warning(
                        sink,
                        "the file defines no checks: no fault can be detected",
                        "add [checks.X] sections, or accept a coverage of zero",
                    );
                }
                Some(VDetection::Any)
            }
            RawFires::AtLeast(k) => {
                if k.value < 1 || k.value as u64 > n as u64 {
                    k.error(
                        sink,
                        format!(
                            "at_least = {} but the file defines {n} check{}",
                            k.value,
                            if n == 1 { "" } else { "s" }
                        ),
                        if n == 0 {
                            "add checks, or drop [detection]".to_string()
                        } else {
                            format!("give a number from 1 to {n}")
                        },
                    );
                    None
                } else {
                    Some(VDetection::AtLeast(k.value as usize))
                }
            }
        },
    }
}
