//! The `concord check` summary and the Graphviz export of the example architectures.

use std::path::Path;

use concord::model::{self, Architecture, NodeKind};

fn examples() -> Vec<Architecture> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("architectures");
    let mut paths: Vec<_> = std::fs::read_dir(dir)
        .expect("architectures/")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .collect();
    paths.sort();
    paths
        .iter()
        .map(|p| model::load(p).unwrap_or_else(|e| panic!("{e}")))
        .collect()
}

#[test]
fn summary_fits_in_100_columns_and_names_everything() {
    for a in examples() {
        let s = concord::report::describe::describe(&a);
        for line in s.lines() {
            // a file path or a warning (which names the file) may be longer
            let exempt = line.starts_with("  file: ") || line.contains("warning");
            assert!(line.chars().count() <= 100 || exempt, "too wide: {line}");
        }
        let m = &a.model;
        assert!(s.contains(&m.name));
        assert!(s.contains(&format!("output = {}", m.output_description)));
        for c in &m.channels {
            assert!(s.contains(c.as_str()));
        }
        for c in &m.checks {
            assert!(
                s.contains(&format!("{} = {}", c.name, c.description)),
                "{s}"
            );
        }
        for f in &m.faults {
            assert!(s.contains(&format!("{}: ", f.name)), "{s}");
        }
        assert!(s.contains("Total correlation"));
        assert!(s.contains(&format!("Warnings ({})", a.warnings.len())));
    }
}

#[test]
fn summary_shows_total_sigma_and_induced_correlation() {
    let a = examples()
        .into_iter()
        .find(|a| a.path.ends_with("plovrant_swa2_shared_ref.toml"))
        .expect("example present");
    let s = concord::report::describe::describe(&a);
    // total sigma of ch_a: sqrt(0.2425) = 0.49244...; correlation 0.036 / sqrt(0.2425 * 0.2349)
    // = 0.036 / 0.238672... = 0.15083...
    assert!(s.contains("0.4924"), "{s}");
    assert!(s.contains("0.151"), "{s}");
    assert!(s.contains("reaches ch_a x 1, ch_b x 0.9"), "{s}");
}

#[test]
fn dot_has_a_node_per_element_and_an_edge_per_gain() {
    for a in examples() {
        let m = &a.model;
        let g = &a.graph.graph;
        let expected_nodes = m.sources.len()
            + m.channels.len()
            + m.signals.len()
            + 1
            + m.checks.len()
            + m.faults.len();
        assert_eq!(g.node_count(), expected_nodes);
        let dot = concord::report::dot::to_dot(&a);
        assert_eq!(dot.matches(" -> ").count(), g.edge_count());
        assert_eq!(dot.matches("shape=").count(), expected_nodes);
        // sources feed channels with their gains
        for (j, s) in m.sources.iter().enumerate() {
            let src = a.graph.find(NodeKind::Source, s).expect("source node");
            let fed = g.neighbors(src).count();
            let gains = (0..m.channels.len())
                .filter(|i| m.source_gains[(*i, j)] != 0.0)
                .count();
            assert_eq!(fed, gains);
        }
        assert!(a.graph.topological_order().is_some());
        assert!(dot.trim_end().ends_with('}'));
    }
}
