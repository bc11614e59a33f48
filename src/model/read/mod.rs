//! Reading the document tree into the typed raw model: key names, value types, required keys.
//! Every problem is recorded in the sink and reading goes on, so that one run reports them
//! all; a value that cannot be read is left out (and its absence is not reported again).
//!
//! `mod.rs` reads the top level; `toolkit.rs` holds the generic reading of tables and typed
//! values with their spans, `sections.rs` the reader of each section.

mod extensions;
mod sections;
mod toolkit;

use super::error::Sink;
use super::raw::*;
use super::tree::Node;
use extensions::*;
use sections::*;
use toolkit::*;

pub(crate) use toolkit::edit_distance;

const TOP_KEYS: &[&str] = &[
    "name",
    "unit",
    "full_scale",
    "sources",
    "channels",
    "correlations",
    "signals",
    "output",
    "checks",
    "detection",
    "safety",
    "faults",
    "timing",
    "isolation",
    "tolerances",
];

/// Reads the whole document.
pub(crate) fn read(root: &Node, sink: &mut Sink<'_>) -> RawModel {
    let mut model = RawModel {
        name: None,
        unit: None,
        full_scale: None,
        sources: Vec::new(),
        channels: Vec::new(),
        correlations: Vec::new(),
        signals: Vec::new(),
        output: None,
        checks: Vec::new(),
        detection: None,
        safety: None,
        faults: Vec::new(),
        timing: None,
        isolation: None,
        tolerances: Vec::new(),
        names_incomplete: false,
        channels_given: false,
    };
    let Some(mut top) = TableReader::of(root, "", sink) else {
        return model;
    };
    model.name = top.required_string(sink, "name", "name = \"Dual hall channels, averaged\"");
    model.unit = top.required_string(sink, "unit", "unit = \"deg\"");
    if let Some(e) = top.take("full_scale") {
        model.full_scale = pair(sink, &e.value, "full_scale", "full_scale = [-540.0, 540.0]");
    }
    if let Some(e) = top.take("sources") {
        for (name, t) in named_tables(
            sink,
            e,
            "sources",
            &mut model.names_incomplete,
            "[sources.vref]",
        ) {
            if let Some(s) = read_source(sink, name, t) {
                model.sources.push(s);
            }
        }
    }
    match top.take("channels") {
        Some(e) => {
            model.channels_given = true;
            for (name, t) in named_tables(
                sink,
                e,
                "channels",
                &mut model.names_incomplete,
                "[channels.a]",
            ) {
                if let Some(c) = read_channel(sink, name, t) {
                    model.channels.push(c);
                }
            }
        }
        None => sink.error(
            top.span,
            "channels",
            "the file defines no channels",
            "add at least one channel, e.g. [channels.a] with mean = 0.0 and sigma = 0.5",
        ),
    }
    if let Some(e) = top.take("correlations") {
        model.correlations = read_correlations(sink, &e.value);
    }
    if let Some(e) = top.take("signals") {
        for (name, t) in named_tables(
            sink,
            e,
            "signals",
            &mut model.names_incomplete,
            "[signals.est]",
        ) {
            model.signals.push(read_signal(sink, name, t));
        }
    }
    match top.take("output") {
        Some(e) => model.output = read_output(sink, &e.value),
        None => sink.error(
            top.span,
            "output",
            "the file has no [output] section",
            "add [output] with kind = \"mean\" and of = [\"a\", \"b\"]",
        ),
    }
    if let Some(e) = top.take("checks") {
        for (name, t) in named_tables(
            sink,
            e,
            "checks",
            &mut model.names_incomplete,
            "[checks.ab]",
        ) {
            model.checks.push(read_check(sink, name, t));
        }
    }
    if let Some(e) = top.take("detection") {
        model.detection = read_detection(sink, &e.value);
    }
    match top.take("safety") {
        Some(e) => {
            if let Some(mut t) = TableReader::of(&e.value, "safety", sink) {
                let band = read_band(sink, &mut t, "safety");
                t.finish(sink, &["limit", "lower", "upper"]);
                model.safety = Some(band);
            }
        }
        None => sink.error(
            top.span,
            "safety",
            "the file has no [safety] section (the safety requirement on the output)",
            "add [safety] with limit = 2.0 (or lower = .. and upper = ..)",
        ),
    }
    if let Some(e) = top.take("faults") {
        for (name, t) in named_tables(
            sink,
            e,
            "faults",
            &mut model.names_incomplete,
            "[faults.a_drift]",
        ) {
            model.faults.push(read_fault(sink, name, t));
        }
    }
    if let Some(e) = top.take("timing") {
        model.timing = read_timing(sink, &e.value);
    }
    if let Some(e) = top.take("isolation") {
        model.isolation = read_isolation(sink, &e.value);
    }
    if let Some(e) = top.take("tolerances") {
        model.tolerances = read_tolerances(sink, &e.value);
    }
    top.finish(sink, TOP_KEYS);
    model
}
