//! The model graph (petgraph): sources, channels, derived signals, the output, the checks and
//! the fault sites are nodes; edges carry gains (source gain on a channel, weight of a reading
//! in a function, gain of a fault on what it hits). It must be acyclic; cycles can only arise
//! among derived signals and are reported with the signals on the cycle.

use std::collections::{HashMap, HashSet, VecDeque};

use petgraph::Direction;
use petgraph::algo::{tarjan_scc, toposort};
use petgraph::graph::{DiGraph, NodeIndex};

use super::error::Sink;
use super::resolved::{Reading, Resolved, Site};

/// What a node of the graph is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum NodeKind {
    Source,
    Channel,
    Signal,
    Output,
    Check,
    Fault,
}

impl NodeKind {
    /// Lower-case word for labels and DOT identifiers.
    pub fn word(self) -> &'static str {
        match self {
            NodeKind::Source => "source",
            NodeKind::Channel => "channel",
            NodeKind::Signal => "signal",
            NodeKind::Output => "output",
            NodeKind::Check => "check",
            NodeKind::Fault => "fault",
        }
    }
}

/// A node: its kind and name (the output is named `output`).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct GraphNode {
    pub kind: NodeKind,
    pub name: String,
}

/// The directed graph of the model; edge weights are gains.
#[derive(Debug, Clone)]
pub struct ModelGraph {
    pub graph: DiGraph<GraphNode, f64>,
    index: HashMap<(NodeKind, String), NodeIndex>,
}

impl ModelGraph {
    /// The node of a kind and name.
    pub fn find(&self, kind: NodeKind, name: &str) -> Option<NodeIndex> {
        self.index.get(&(kind, name.to_string())).copied()
    }

    /// Nodes in a topological order (inputs before what is computed from them); `None` only
    /// for a cyclic graph, which loading rejects.
    pub fn topological_order(&self) -> Option<Vec<NodeIndex>> {
        toposort(&self.graph, None).ok()
    }

    fn add(&mut self, kind: NodeKind, name: &str) -> NodeIndex {
        let i = self.graph.add_node(GraphNode {
            kind,
            name: name.to_string(),
        });
        self.index.insert((kind, name.to_string()), i);
        i
    }
}

/// Builds the graph of a resolved model.
pub(crate) fn build(m: &Resolved) -> ModelGraph {
    let mut g = ModelGraph {
        graph: DiGraph::new(),
        index: HashMap::new(),
    };
    let sources: Vec<NodeIndex> = m
        .sources
        .iter()
        .map(|s| g.add(NodeKind::Source, &s.name))
        .collect();
    let channels: Vec<NodeIndex> = m
        .channels
        .iter()
        .map(|c| g.add(NodeKind::Channel, &c.name))
        .collect();
    let signals: Vec<NodeIndex> = m
        .signals
        .iter()
        .map(|s| g.add(NodeKind::Signal, &s.name))
        .collect();
    let output = g.add(NodeKind::Output, "output");
    let checks: Vec<NodeIndex> = m
        .checks
        .iter()
        .map(|c| g.add(NodeKind::Check, &c.name))
        .collect();
    let node_of = |r: Reading| match r {
        Reading::Channel(i) => channels[i],
        Reading::Signal(i) => signals[i],
    };
    for (c, ch) in m.channels.iter().enumerate() {
        for (s, gain) in &ch.from {
            g.graph.add_edge(sources[*s], channels[c], *gain);
        }
    }
    for (i, s) in m.signals.iter().enumerate() {
        for (r, w) in s.def.inputs() {
            g.graph.add_edge(node_of(r), signals[i], w);
        }
    }
    for (r, w) in m.output.def.inputs() {
        g.graph.add_edge(node_of(r), output, w);
    }
    for (i, c) in m.checks.iter().enumerate() {
        for (r, w) in c.def.inputs() {
            g.graph.add_edge(node_of(r), checks[i], w);
        }
        if matches!(c.def, super::resolved::FnDef::FromOutput(_)) {
            g.graph.add_edge(output, checks[i], -1.0);
        }
    }
    for f in &m.faults {
        let node = g.add(NodeKind::Fault, &f.name);
        for (site, gain, _) in &f.hits {
            let target = match site {
                Site::Channel(i) => channels[*i],
                Site::Source(i) => sources[*i],
            };
            g.graph.add_edge(node, target, *gain);
        }
    }
    g
}

/// Reports cycles among derived signals; returns the signal indices in an evaluation order
/// (inputs first) when there is none.
pub(crate) fn signal_order(
    m: &Resolved,
    g: &ModelGraph,
    sink: &mut Sink<'_>,
) -> Option<Vec<usize>> {
    let signal_index: HashMap<NodeIndex, usize> = m
        .signals
        .iter()
        .enumerate()
        .filter_map(|(i, s)| g.find(NodeKind::Signal, &s.name).map(|n| (n, i)))
        .collect();
    let mut cyclic = false;
    for scc in tarjan_scc(&g.graph) {
        let self_loop = scc.len() == 1 && g.graph.find_edge(scc[0], scc[0]).is_some();
        if scc.len() < 2 && !self_loop {
            continue;
        }
        cyclic = true;
        let mut members: Vec<usize> = scc
            .iter()
            .filter_map(|n| signal_index.get(n))
            .copied()
            .collect();
        members.sort_unstable();
        let cycle = cycle_path(g, &scc);
        let first = members.first().copied().unwrap_or(0);
        let Some(sig) = m.signals.get(first) else {
            continue;
        };
        sink.error(
            sig.loc.span,
            &sig.loc.key,
            format!(
                "derived signals refer to each other in a cycle ({}), so none of them can be \
                 computed",
                cycle.join(" -> ")
            ),
            "compute each signal only from channels and from signals that do not depend on it",
        );
    }
    if cyclic {
        return None;
    }
    let order = g.topological_order()?;
    Some(
        order
            .iter()
            .filter_map(|n| signal_index.get(n))
            .copied()
            .collect(),
    )
}

/// A cycle through the first node of a strongly connected component, as names.
fn cycle_path(g: &ModelGraph, scc: &[NodeIndex]) -> Vec<String> {
    let members: HashSet<NodeIndex> = scc.iter().copied().collect();
    let Some(start) = scc.iter().min().copied() else {
        return Vec::new();
    };
    // breadth-first search inside the component for the shortest way back to `start`
    let mut prev: HashMap<NodeIndex, NodeIndex> = HashMap::new();
    let mut queue = VecDeque::from([start]);
    let mut back: Option<NodeIndex> = None;
    while let Some(u) = queue.pop_front() {
        for v in g.graph.neighbors_directed(u, Direction::Outgoing) {
            if !members.contains(&v) {
                continue;
            }
            if v == start {
                back = Some(u);
                break;
            }
            if let std::collections::hash_map::Entry::Vacant(e) = prev.entry(v) {
                e.insert(u);
                queue.push_back(v);
            }
        }
        if back.is_some() {
            break;
        }
    }
    let mut path = vec![start];
    let mut cur = back;
    let mut rev = Vec::new();
    while let Some(c) = cur {
        if c == start {
            break;
        }
        rev.push(c);
        cur = prev.get(&c).copied();
    }
    rev.reverse();
    path.extend(rev);
    path.push(start);
    path.iter().map(|n| g.graph[*n].name.clone()).collect()
}

/// Warns about sources, channels and signals from which neither the output nor any check is
/// computed.
pub(crate) fn unused(m: &Resolved, g: &ModelGraph, sink: &mut Sink<'_>) {
    let mut used: HashSet<NodeIndex> = HashSet::new();
    let mut queue: VecDeque<NodeIndex> = g
        .graph
        .node_indices()
        .filter(|n| matches!(g.graph[*n].kind, NodeKind::Output | NodeKind::Check))
        .collect();
    while let Some(u) = queue.pop_front() {
        if !used.insert(u) {
            continue;
        }
        for v in g.graph.neighbors_directed(u, Direction::Incoming) {
            if g.graph[v].kind != NodeKind::Fault {
                queue.push_back(v);
            }
        }
    }
    let is_used = |kind, name: &str| g.find(kind, name).is_some_and(|n| used.contains(&n));
    for (i, c) in m.channels.iter().enumerate() {
        if !is_used(NodeKind::Channel, &c.name) {
            let span = m.channel_spans.get(i).copied().unwrap_or_default();
            sink.warning(
                span,
                &format!("channels.{}", c.name),
                format!(
                    "channel `{}` is used by neither the output nor any check",
                    c.name
                ),
                "use it in the output, a signal or a check, or remove it",
            );
        }
    }
    for (i, s) in m.sources.iter().enumerate() {
        if !is_used(NodeKind::Source, &s.name) {
            let feeds = m
                .channels
                .iter()
                .any(|c| c.from.iter().any(|(j, _)| *j == i));
            let span = m.source_spans.get(i).copied().unwrap_or_default();
            sink.warning(
                span,
                &format!("sources.{}", s.name),
                if feeds {
                    format!("source `{}` feeds only channels that nothing uses", s.name)
                } else {
                    format!("source `{}` feeds no channel", s.name)
                },
                "list it in the `from` of the channels it affects, or remove it",
            );
        }
    }
    for s in &m.signals {
        if !is_used(NodeKind::Signal, &s.name) {
            sink.warning(
                s.loc.span,
                &s.loc.key,
                format!(
                    "signal `{}` is used by neither the output nor any check",
                    s.name
                ),
                "use it, or remove it",
            );
        }
    }
}
