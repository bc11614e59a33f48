//! The readers of the sections that extend the one-sample model: `[timing]` (with its
//! confirmation rule), `[isolation]` (with `[isolation.degraded]`) and `[tolerances]`,
//! built on the toolkit.

use super::toolkit::*;
use crate::model::error::Sink;
use crate::model::raw::*;
use crate::model::tree::{Entry, Node, Value};

/// The `[timing]` section: sample period, deadline, confirmation rule, danger count and
/// which terms change from sample to sample.
pub(super) fn read_timing(sink: &mut Sink<'_>, node: &Node) -> Option<RawTiming> {
    let mut t = TableReader::of(node, "timing", sink)?;
    let sample_period = t.required_number(sink, "sample_period", "sample_period = 0.01");
    let deadline = t.required_number(sink, "deadline", "deadline = 0.1");
    let confirm = t
        .take("confirm")
        .and_then(|e| read_confirm(sink, &e.value, &t.path("confirm")));
    let danger_samples = t.take("danger_samples").and_then(|e| {
        integer(
            sink,
            &e.value,
            &t.path("danger_samples"),
            "danger_samples = 1",
        )
    });
    let fresh_sources = t
        .take("fresh_sources")
        .map(|e| {
            name_list(
                sink,
                &e.value,
                &t.path("fresh_sources"),
                "fresh_sources = [\"vref\"]",
            )
        })
        .unwrap_or_default();
    let constant_channels = t
        .take("constant_channels")
        .map(|e| {
            name_list(
                sink,
                &e.value,
                &t.path("constant_channels"),
                "constant_channels = [\"estimate\"]",
            )
        })
        .unwrap_or_default();
    let span = t.span;
    t.finish(
        sink,
        &[
            "sample_period",
            "deadline",
            "confirm",
            "danger_samples",
            "fresh_sources",
            "constant_channels",
        ],
    );
    Some(RawTiming {
        span,
        sample_period,
        deadline,
        confirm,
        danger_samples,
        fresh_sources,
        constant_channels,
    })
}

/// The `[isolation]` section: the rule that names the channel a detection blames, its
/// margin, and the channels that may be blamed.
pub(super) fn read_isolation(sink: &mut Sink<'_>, node: &Node) -> Option<RawIsolation> {
    let mut t = TableReader::of(node, "isolation", sink)?;
    let rule = t.required_string(sink, "rule", "rule = \"farthest_from_median\"");
    let margin = t.optional_number(sink, "margin", "margin = 0.5");
    let among = t.take("among").map(|e| {
        name_list(
            sink,
            &e.value,
            &t.path("among"),
            "among = [\"a\", \"b\", \"c\"]",
        )
    });
    let degraded = t
        .take("degraded")
        .and_then(|e| read_degraded(sink, &e.value));
    let span = t.span;
    t.finish(sink, &["rule", "margin", "among", "degraded"]);
    Some(RawIsolation {
        span,
        rule,
        margin,
        among,
        degraded,
    })
}

/// `[isolation.degraded]`: `output = "mean"` and `set = { "checks.bc.limit" = 1.5 }`.
fn read_degraded(sink: &mut Sink<'_>, node: &Node) -> Option<RawDegraded> {
    let mut t = TableReader::of(node, "isolation.degraded", sink)?;
    let output = t.take("output").and_then(|e| {
        string(
            sink,
            &e.value,
            "isolation.degraded.output",
            "output = \"mean\"",
        )
    });
    let example = "set = { \"checks.bc.limit\" = 1.5 }";
    let mut set = Vec::new();
    if let Some(e) = t.take("set") {
        for (entry, key) in quoted_key_entries(sink, &e.value, "isolation.degraded.set", example) {
            if let Some(value) = number(sink, &entry.value, &key, example) {
                set.push((Spanned::new(entry.key.clone(), entry.key_span, key), value));
            }
        }
    }
    let span = t.span;
    t.finish(sink, &["output", "set"]);
    Some(RawDegraded { span, output, set })
}

/// The entries of a table keyed by quoted dotted keys (`"channels.a.sigma" = ...`), each with
/// its whole key path; an entry read as a table (the key was not quoted) is an error.
fn quoted_key_entries<'n>(
    sink: &mut Sink<'_>,
    node: &'n Node,
    section: &str,
    example: &str,
) -> Vec<(&'n Entry, String)> {
    let Some(entries) = node.entries() else {
        type_error(sink, node, section, "a table", example);
        return Vec::new();
    };
    let mut out = Vec::new();
    for e in entries {
        let key = join(section, &e.key);
        if matches!(e.value.value, Value::Table(_)) {
            sink.error(
                e.key_span,
                &key,
                format!(
                    "`{}` is read as a table: the key is one quoted string",
                    e.key
                ),
                format!("quote the whole key: {example}"),
            );
            continue;
        }
        out.push((e, key));
    }
    out
}

/// The `[tolerances]` section: `"channels.a.sigma" = [0.4, 0.6]`, a quoted dotted key per
/// input with its lower and upper value.
pub(super) fn read_tolerances(sink: &mut Sink<'_>, node: &Node) -> Vec<RawTolerance> {
    let example = "\"channels.a.sigma\" = [0.4, 0.6]";
    let mut out = Vec::new();
    for (e, key) in quoted_key_entries(sink, node, "tolerances", example) {
        if let Some(range) = pair(sink, &e.value, &key, example) {
            let name = Spanned::new(e.key.clone(), e.key_span, key);
            if range.value.0 >= range.value.1 {
                range.error(
                    sink,
                    format!(
                        "the tolerance [{}, {}] is empty: the lower value must be below the upper",
                        range.value.0, range.value.1
                    ),
                    "write [lower, upper] with lower < upper",
                );
                continue;
            }
            out.push((name, range));
        }
    }
    out
}

/// `confirm = { consecutive = n }`, `{ at_least = m, of_last = n }` or
/// `{ up = u, down = d, trip = level }`.
fn read_confirm(sink: &mut Sink<'_>, node: &Node, key: &str) -> Option<Spanned<RawConfirm>> {
    let example = "confirm = { consecutive = 3 }, { at_least = 3, of_last = 5 } or \
                   { up = 2, down = 1, trip = 6 }";
    let mut t = TableReader::of(node, key, sink)?;
    let mut int = |t: &mut TableReader<'_>, k: &str| {
        let path = t.path(k);
        t.take(k)
            .and_then(|e| integer(sink, &e.value, &path, &format!("{k} = 3")))
    };
    let consecutive = int(&mut t, "consecutive");
    let at_least = int(&mut t, "at_least");
    let of_last = int(&mut t, "of_last");
    let up = int(&mut t, "up");
    let down = int(&mut t, "down");
    let trip = int(&mut t, "trip");
    let known = ["consecutive", "at_least", "of_last", "up", "down", "trip"];
    let present: Vec<&str> = known
        .iter()
        .copied()
        .filter(|k| t.entries.iter().any(|e| e.key == *k))
        .collect();
    t.finish(sink, &known);
    let read_count = [&consecutive, &at_least, &of_last, &up, &down, &trip]
        .iter()
        .filter(|v| v.is_some())
        .count();
    let rule = match (consecutive, at_least, of_last, up, down, trip) {
        (Some(n), None, None, None, None, None) => RawConfirm::Consecutive(n),
        (None, Some(count), Some(window), None, None, None) => RawConfirm::Window { count, window },
        (None, None, None, Some(up), Some(down), Some(trip)) => {
            RawConfirm::Counter { up, down, trip }
        }
        _ => {
            // A key that could not be read was reported already; otherwise the mix is wrong.
            if present.len() == read_count {
                sink.error(
                    node.span,
                    key,
                    format!(
                        "the confirmation rule has the keys {} but needs exactly one of three \
                         forms",
                        if present.is_empty() {
                            "(none)".to_string()
                        } else {
                            present.join(", ")
                        }
                    ),
                    format!("write {example}"),
                );
            }
            return None;
        }
    };
    Some(spanned(rule, node, key))
}

/// A list of names: `["a", "b"]`.
fn name_list(sink: &mut Sink<'_>, node: &Node, key: &str, example: &str) -> Vec<Spanned<String>> {
    match &node.value {
        Value::Array(items) => items
            .iter()
            .enumerate()
            .filter_map(|(i, item)| string(sink, item, &format!("{key}[{i}]"), example))
            .collect(),
        _ => {
            type_error(sink, node, key, "a list of names", example);
            Vec::new()
        }
    }
}
