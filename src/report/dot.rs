//! Graphviz DOT of the model graph: one node per source, channel, signal, the output, each
//! check and each fault site; edges labelled with their gains.

use std::fmt::Write;

use crate::model::{Architecture, FaultMode, NodeKind};

use super::format::{AmplitudeStyle, as_written, describe_amplitude, outside};

/// Quotes a string for DOT (backslash and double quote escaped, newlines as `\n`).
fn quote(s: &str) -> String {
    let mut out = String::from("\"");
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            c if c.is_control() => {}
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// The graph of a loaded architecture in Graphviz DOT.
pub fn to_dot(arch: &Architecture) -> String {
    let m = &arch.model;
    let g = &arch.graph.graph;
    let unit = &m.unit;
    let mut o = String::new();
    let _ = writeln!(o, "digraph {} {{", quote(&m.name));
    let _ = writeln!(o, "  rankdir=LR;");
    let _ = writeln!(o, "  node [fontname=\"Helvetica\", fontsize=10];");
    let _ = writeln!(o, "  edge [fontname=\"Helvetica\", fontsize=9];");
    for idx in g.node_indices() {
        let node = &g[idx];
        let id = format!("{}:{}", node.kind.word(), node.name);
        let (label, shape) = match node.kind {
            NodeKind::Source => {
                let j = m.sources.iter().position(|s| *s == node.name);
                let sigma = j
                    .and_then(|j| m.source_sigmas.get(j))
                    .map(|s| as_written(*s))
                    .unwrap_or_default();
                (
                    format!("{}\nsource, sigma {sigma} {unit}", node.name),
                    "ellipse",
                )
            }
            NodeKind::Channel => {
                let i = m.channels.iter().position(|s| *s == node.name);
                let sigma = i
                    .and_then(|i| m.own_sigmas.get(i))
                    .map(|s| as_written(*s))
                    .unwrap_or_default();
                (
                    format!("{}\nchannel, own sigma {sigma} {unit}", node.name),
                    "box",
                )
            }
            NodeKind::Signal => {
                let d = m
                    .signals
                    .iter()
                    .position(|(s, _)| *s == node.name)
                    .and_then(|i| m.signal_descriptions.get(i))
                    .cloned()
                    .unwrap_or_default();
                (format!("{}\n{d}", node.name), "diamond")
            }
            NodeKind::Output => (
                format!(
                    "output\n{}\nunsafe {}",
                    m.output_description,
                    outside(m.safety_lower, m.safety_upper, unit)
                ),
                "doubleoctagon",
            ),
            NodeKind::Check => {
                let c = m.checks.iter().find(|c| c.name == node.name);
                let text = c
                    .map(|c| {
                        format!(
                            "{}\nfires {}",
                            c.description,
                            outside(c.lower, c.upper, unit)
                        )
                    })
                    .unwrap_or_default();
                (format!("check {}\n{text}", node.name), "hexagon")
            }
            NodeKind::Fault => {
                let f = m.faults.iter().find(|f| f.name == node.name);
                let text = f
                    .map(|f| {
                        let mode = match f.mode {
                            FaultMode::Add { .. } => "add",
                            FaultMode::Replace { .. } => "replace",
                        };
                        format!(
                            "{} FIT, {mode}\n{}",
                            as_written(f.fit),
                            describe_amplitude(
                                &f.amplitude,
                                f.uniform_is_full_scale,
                                AmplitudeStyle::Summary { unit }
                            )
                        )
                    })
                    .unwrap_or_default();
                (format!("fault {}\n{text}", node.name), "octagon")
            }
        };
        let style = if node.kind == NodeKind::Fault {
            ", style=filled, fillcolor=\"#f4cccc\""
        } else {
            ""
        };
        let _ = writeln!(
            o,
            "  {} [label={}, shape={shape}{style}];",
            quote(&id),
            quote(&label)
        );
    }
    for e in g.edge_indices() {
        let Some((a, b)) = g.edge_endpoints(e) else {
            continue;
        };
        let ida = format!("{}:{}", g[a].kind.word(), g[a].name);
        let idb = format!("{}:{}", g[b].kind.word(), g[b].name);
        let style = if g[a].kind == NodeKind::Fault {
            ", style=dashed, color=\"#cc0000\""
        } else {
            ""
        };
        let _ = writeln!(
            o,
            "  {} -> {} [label={}{style}];",
            quote(&ida),
            quote(&idb),
            quote(&as_written(g[e]))
        );
    }
    o.push_str("}\n");
    o
}
