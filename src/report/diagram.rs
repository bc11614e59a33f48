//! The architecture drawn from the model graph, as one SVG element (our own layered layout;
//! no outside renderer).
//!
//! Layout: the flow runs left to right in columns by role: fault sites, shared sources,
//! channels, derived signals (one column per depth of signals computed from signals), the
//! output, the checks. Every edge of the graph points from a column to a later one. Within a
//! column, nodes are ordered by the mean height of their neighbours in the column before
//! (the barycentre heuristic, Sugiyama, Tagawa and Toda 1981), which keeps most edges short
//! and uncrossed; channels keep their file order.
//!
//! Each kind of node has its own outline, so the drawing reads without colour: a pill for a
//! shared source, a box for a channel, a dashed box for a derived signal, a double box for the
//! output, a hexagon for a check, a box with cut corners for a fault site. Edges from fault
//! sites are dashed; gains other than 1 are written on their edges.

use std::collections::HashMap;
use std::fmt::Write as _;

use petgraph::Direction;
use petgraph::graph::NodeIndex;

use crate::model::{Architecture, FaultMode, NodeKind};

use super::format::{number, xml_escape};

const NODE_W: f64 = 138.0;
const NODE_H: f64 = 50.0;
const ROW_GAP: f64 = 14.0;
const COL_GAP: f64 = 48.0;
const MARGIN: f64 = 10.0;
/// Height of one lane below the nodes for an edge that skips a column.
const LANE: f64 = 10.0;
/// Characters that fit on one line of a node at the detail font size.
const LINE_CHARS: usize = 22;

/// One node placed on the page.
struct Placed {
    kind: NodeKind,
    name: String,
    detail: String,
    column: usize,
    /// Top edge, once placed.
    y: Option<f64>,
}

fn clip(text: &str, chars: usize) -> String {
    if text.chars().count() <= chars {
        text.to_string()
    } else {
        let mut s: String = text.chars().take(chars.saturating_sub(1)).collect();
        s.push('…');
        s
    }
}

/// The second line of a node: its defining figure.
fn detail(arch: &Architecture, kind: NodeKind, name: &str) -> String {
    let m = &arch.model;
    let unit = &m.unit;
    match kind {
        NodeKind::Source => m
            .sources
            .iter()
            .position(|s| s == name)
            .and_then(|j| m.source_sigmas.get(j))
            .map(|s| format!("σ {} {unit}", number(*s)))
            .unwrap_or_default(),
        NodeKind::Channel => m
            .channels
            .iter()
            .position(|s| s == name)
            .and_then(|i| m.own_sigmas.get(i))
            .map(|s| format!("own σ {} {unit}", number(*s)))
            .unwrap_or_default(),
        NodeKind::Signal => m
            .signals
            .iter()
            .position(|(s, _)| s == name)
            .and_then(|i| m.signal_descriptions.get(i))
            .cloned()
            .unwrap_or_default(),
        NodeKind::Output => m.output_description.clone(),
        NodeKind::Check => m
            .checks
            .iter()
            .find(|c| c.name == name)
            .map(|c| {
                if c.lower.is_finite() && c.upper == -c.lower {
                    format!("fires outside ±{}", number(c.upper))
                } else {
                    format!("fires outside {}", band(c.lower, c.upper))
                }
            })
            .unwrap_or_default(),
        NodeKind::Fault => m
            .faults
            .iter()
            .find(|f| f.name == name)
            .map(|f| {
                let mode = match f.mode {
                    FaultMode::Add { .. } => "add",
                    FaultMode::Replace { .. } => "replace",
                };
                format!("{} FIT, {mode}", number(f.fit))
            })
            .unwrap_or_default(),
    }
}

fn band(lower: f64, upper: f64) -> String {
    let end = |v: f64| {
        if v.is_finite() {
            number(v)
        } else if v > 0.0 {
            "∞".to_string()
        } else {
            "-∞".to_string()
        }
    };
    format!("[{}, {}]", end(lower), end(upper))
}

/// The column of every node: the longest path from a node without inputs (all channels
/// share one column, right of the shared sources), fault sites one column left of the
/// leftmost node they act on; shifted so that the first column is 0.
fn layers(arch: &Architecture) -> HashMap<NodeIndex, usize> {
    let g = &arch.graph.graph;
    let has_sources = g.node_indices().any(|n| g[n].kind == NodeKind::Source);
    let channel_layer: i64 = i64::from(has_sources);
    let mut layer: HashMap<NodeIndex, i64> = HashMap::new();
    let order = arch
        .graph
        .topological_order()
        .unwrap_or_else(|| g.node_indices().collect());
    for n in &order {
        let l = match g[*n].kind {
            NodeKind::Fault => continue,
            NodeKind::Source => 0,
            NodeKind::Channel => channel_layer,
            _ => g
                .neighbors_directed(*n, Direction::Incoming)
                .filter(|p| g[*p].kind != NodeKind::Fault)
                .filter_map(|p| layer.get(&p).map(|l| l + 1))
                .max()
                .unwrap_or(channel_layer + 1),
        };
        layer.insert(*n, l);
    }
    for n in g.node_indices().filter(|n| g[*n].kind == NodeKind::Fault) {
        let l = g
            .neighbors_directed(n, Direction::Outgoing)
            .filter_map(|t| layer.get(&t).copied())
            .min()
            .map_or(0, |l| l - 1);
        layer.insert(n, l);
    }
    let lowest = layer.values().min().copied().unwrap_or(0);
    layer
        .into_iter()
        .map(|(n, l)| (n, usize::try_from(l - lowest).unwrap_or(0)))
        .collect()
}

/// The architecture as an `<svg>` element (with a `viewBox`, so that it scales to the page).
pub fn render_svg(arch: &Architecture) -> String {
    let g = &arch.graph.graph;
    let layer = layers(arch);
    let column_count = layer.values().max().map_or(1, |m| m + 1);
    let mut placed: HashMap<NodeIndex, Placed> = HashMap::new();
    for n in g.node_indices() {
        let node = &g[n];
        placed.insert(
            n,
            Placed {
                kind: node.kind,
                name: node.name.clone(),
                detail: detail(arch, node.kind, &node.name),
                column: layer.get(&n).copied().unwrap_or(0),
                y: None,
            },
        );
    }
    // Members of each column, in graph order (file order within a kind).
    let mut members: Vec<Vec<NodeIndex>> = vec![Vec::new(); column_count];
    for n in g.node_indices() {
        if let Some(p) = placed.get(&n)
            && let Some(col) = members.get_mut(p.column)
        {
            col.push(n);
        }
    }
    let tallest = members.iter().map(Vec::len).max().unwrap_or(1).max(1);
    let height = 2.0 * MARGIN + tallest as f64 * (NODE_H + ROW_GAP) - ROW_GAP;
    let spaced = |count: usize, slot: usize| {
        let used = count as f64 * (NODE_H + ROW_GAP) - ROW_GAP;
        (height - used) / 2.0 + slot as f64 * (NODE_H + ROW_GAP)
    };
    // The channel column keeps file order; columns to its right follow the mean height of
    // their inputs, columns to its left (sources, fault sites) that of their targets.
    let place =
        |col: &[NodeIndex], placed: &mut HashMap<NodeIndex, Placed>, dir: Option<Direction>| {
            let mut wanted: Vec<(f64, usize, NodeIndex)> = col
                .iter()
                .enumerate()
                .map(|(i, n)| {
                    let ys: Vec<f64> = dir
                        .map(|d| {
                            g.neighbors_directed(*n, d)
                                .filter_map(|p| placed.get(&p).and_then(|p| p.y))
                                .collect()
                        })
                        .unwrap_or_default();
                    let mean = if ys.is_empty() {
                        f64::INFINITY
                    } else {
                        ys.iter().sum::<f64>() / ys.len() as f64
                    };
                    (mean, i, *n)
                })
                .collect();
            wanted.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
            for (slot, (_, _, n)) in wanted.iter().enumerate() {
                if let Some(p) = placed.get_mut(n) {
                    p.y = Some(spaced(col.len(), slot));
                }
            }
        };
    let channel_column = g
        .node_indices()
        .find(|n| g[*n].kind == NodeKind::Channel)
        .and_then(|n| layer.get(&n).copied())
        .unwrap_or(0);
    if let Some(col) = members.get(channel_column).cloned() {
        place(&col, &mut placed, None);
    }
    for c in channel_column + 1..column_count {
        if let Some(col) = members.get(c).cloned() {
            place(&col, &mut placed, Some(Direction::Incoming));
        }
    }
    for c in (0..channel_column).rev() {
        if let Some(col) = members.get(c).cloned() {
            place(&col, &mut placed, Some(Direction::Outgoing));
        }
    }

    let width = 2.0 * MARGIN + column_count as f64 * (NODE_W + COL_GAP) - COL_GAP;
    let x_of = |column: usize| MARGIN + column as f64 * (NODE_W + COL_GAP);
    let mut o = String::new();
    let _ = writeln!(
        o,
        r#"<svg xmlns="http://www.w3.org/2000/svg" class="diagram" viewBox="0 0 {width:.0} {height:.0}" width="{width:.0}" height="{height:.0}" role="img" aria-label="{}">"#,
        xml_escape(&format!("Architecture of {}", arch.model.name))
    );
    o.push_str(concat!(
        r#"<defs><marker id="concord-arrow" viewBox="0 0 10 10" refX="9" refY="5" "#,
        r#"markerWidth="7" markerHeight="7" orient="auto-start-reverse">"#,
        r##"<path d="M0,0 L10,5 L0,10 z" fill="#333"/></marker></defs>"##,
        "\n"
    ));
    // Edges under the nodes.
    let mut lanes = 0usize;
    for e in g.edge_indices() {
        let Some((a, b)) = g.edge_endpoints(e) else {
            continue;
        };
        let (Some(pa), Some(pb)) = (placed.get(&a), placed.get(&b)) else {
            continue;
        };
        let (Some(ya), Some(yb)) = (pa.y, pb.y) else {
            continue;
        };
        let (x1, y1) = (x_of(pa.column) + NODE_W, ya + NODE_H / 2.0);
        let (x2, y2) = (x_of(pb.column) - 2.0, yb + NODE_H / 2.0);
        let bend = (x2 - x1) * 0.5;
        let fault = pa.kind == NodeKind::Fault;
        let class = if fault { "edge fault-edge" } else { "edge" };
        let long = pb.column > pa.column + 1;
        let d = if long {
            // Through the column gaps and along a lane below every node, so that the edge
            // passes the columns it skips instead of seeming to enter a node.
            let xa = x1 + COL_GAP / 2.0;
            let xb = x2 + 2.0 - COL_GAP / 2.0;
            lanes += 1;
            let lane = height + LANE * lanes as f64 - LANE / 2.0;
            format!(
                "M{x1:.1},{y1:.1} L{xa:.1},{y1:.1} L{xa:.1},{lane:.1} L{xb:.1},{lane:.1} L{xb:.1},{y2:.1} L{x2:.1},{y2:.1}"
            )
        } else {
            format!(
                "M{x1:.1},{y1:.1} C{:.1},{y1:.1} {:.1},{y2:.1} {x2:.1},{y2:.1}",
                x1 + bend,
                x2 - bend
            )
        };
        let _ = writeln!(
            o,
            r#"<path class="{class}" d="{d}" marker-end="url(#concord-arrow)"/>"#
        );
        let gain = g[e];
        if gain != 1.0 {
            // A little past the middle, where edges into one node are still apart.
            let t = 0.6;
            let u = 1.0 - t;
            let bx = u * u * u * x1
                + 3.0 * u * u * t * (x1 + bend)
                + 3.0 * u * t * t * (x2 - bend)
                + t * t * t * x2;
            let by = u * u * u * y1 + 3.0 * u * u * t * y1 + 3.0 * u * t * t * y2 + t * t * t * y2;
            let _ = writeln!(
                o,
                r#"<text class="gain" x="{bx:.1}" y="{:.1}" text-anchor="middle">×{}</text>"#,
                by - 3.0,
                xml_escape(&number(gain))
            );
        }
    }
    for n in g.node_indices() {
        let Some(p) = placed.get(&n) else {
            continue;
        };
        let x = x_of(p.column);
        let Some(y) = p.y else {
            continue;
        };
        let (w, h) = (NODE_W, NODE_H);
        let shape = match p.kind {
            NodeKind::Source => format!(
                r#"<rect class="node source" x="{x:.1}" y="{y:.1}" width="{w}" height="{h}" rx="{:.1}"/>"#,
                h / 2.0
            ),
            NodeKind::Channel => format!(
                r#"<rect class="node channel" x="{x:.1}" y="{y:.1}" width="{w}" height="{h}" rx="2"/>"#
            ),
            NodeKind::Signal => format!(
                r#"<rect class="node signal" x="{x:.1}" y="{y:.1}" width="{w}" height="{h}" rx="2"/>"#
            ),
            NodeKind::Output => format!(
                r#"<rect class="node output" x="{x:.1}" y="{y:.1}" width="{w}" height="{h}" rx="2"/><rect class="node-inner" x="{:.1}" y="{:.1}" width="{}" height="{}" rx="1"/>"#,
                x + 3.0,
                y + 3.0,
                w - 6.0,
                h - 6.0
            ),
            NodeKind::Check => {
                let c = 10.0;
                format!(
                    r#"<polygon class="node check" points="{:.1},{y:.1} {:.1},{y:.1} {:.1},{:.1} {:.1},{:.1} {:.1},{:.1} {x:.1},{:.1}"/>"#,
                    x + c,
                    x + w - c,
                    x + w,
                    y + h / 2.0,
                    x + w - c,
                    y + h,
                    x + c,
                    y + h,
                    y + h / 2.0
                )
            }
            NodeKind::Fault => {
                let c = 8.0;
                format!(
                    r#"<polygon class="node fault" points="{:.1},{y:.1} {:.1},{y:.1} {:.1},{:.1} {:.1},{:.1} {:.1},{:.1} {:.1},{:.1} {x:.1},{:.1} {x:.1},{:.1}"/>"#,
                    x + c,
                    x + w - c,
                    x + w,
                    y + c,
                    x + w,
                    y + h - c,
                    x + w - c,
                    y + h,
                    x + c,
                    y + h,
                    y + h - c,
                    y + c
                )
            }
        };
        let cx = x + w / 2.0;
        let _ = writeln!(
            o,
            r#"<g><title>{}</title>{shape}<text class="kind" x="{cx:.1}" y="{:.1}" text-anchor="middle">{}</text><text class="name" x="{cx:.1}" y="{:.1}" text-anchor="middle">{}</text><text class="detail" x="{cx:.1}" y="{:.1}" text-anchor="middle">{}</text></g>"#,
            xml_escape(&format!("{} {}: {}", p.kind.word(), p.name, p.detail)),
            y + 13.0,
            p.kind.word(),
            y + 29.0,
            xml_escape(&clip(&p.name, LINE_CHARS - 4)),
            y + 43.0,
            xml_escape(&clip(&p.detail, LINE_CHARS + 2))
        );
    }
    o.push_str("</svg>\n");
    // Room for the lanes of long edges below the nodes.
    if lanes > 0 {
        let full = height + LANE * lanes as f64;
        o = o.replacen(
            &format!(
                r#"viewBox="0 0 {width:.0} {height:.0}" width="{width:.0}" height="{height:.0}""#
            ),
            &format!(r#"viewBox="0 0 {width:.0} {full:.0}" width="{width:.0}" height="{full:.0}""#),
            1,
        );
    }
    o
}

/// What the shapes of [`render_svg`] mean, for a caption.
pub const KEY: &str = "Pill: shared error source. Box: channel. Dashed box: derived signal. \
     Double box: output. Hexagon: check. Box with cut corners: fault site, with dashed arrows \
     to what it acts on. Numbers on arrows: gains other than 1.";

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_node_of_the_example_is_drawn_once_in_well_formed_svg() {
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/architectures/plovrant_swa2_shared_ref.toml"
        );
        let arch = crate::model::load(std::path::Path::new(path)).expect("example loads");
        let svg = render_svg(&arch);
        let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
        let names: Vec<String> = doc
            .descendants()
            .filter(|n| n.has_tag_name("text") && n.attribute("class") == Some("name"))
            .filter_map(|n| n.text().map(str::to_string))
            .collect();
        let g = &arch.graph.graph;
        assert_eq!(names.len(), g.node_count());
        for n in g.node_indices() {
            assert!(
                names.contains(&clip(&g[n].name, LINE_CHARS - 4)),
                "{}",
                g[n].name
            );
        }
        let edges = doc
            .descendants()
            .filter(|n| n.has_tag_name("path") && n.attribute("marker-end").is_some())
            .count();
        assert_eq!(edges, g.edge_count());
    }

    #[test]
    fn edges_run_left_to_right() {
        for file in [
            "plovrant_swa2_mean",
            "plovrant_swa2_plausibility",
            "plovrant_swa2_shared_ref",
            "plovrant_swa3_median",
            "plovrant_swa4_dual_pair",
        ] {
            let path = format!("{}/architectures/{file}.toml", env!("CARGO_MANIFEST_DIR"));
            let arch = crate::model::load(std::path::Path::new(&path)).expect("loads");
            let svg = render_svg(&arch);
            let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
            for p in doc
                .descendants()
                .filter(|n| n.has_tag_name("path") && n.attribute("marker-end").is_some())
            {
                let d = p.attribute("d").unwrap_or_default();
                let nums: Vec<f64> = d
                    .split(|c: char| !(c.is_ascii_digit() || c == '.' || c == '-'))
                    .filter(|s| !s.is_empty())
                    .filter_map(|s| s.parse().ok())
                    .collect();
                assert!(nums.len() == 8 || nums.len() == 12, "{d}");
                assert!(
                    nums[nums.len() - 2] > nums[0],
                    "{file}: edge {d} runs backwards"
                );
            }
        }
    }
}
