//! The order-statistic engine: a median of N channels with a range check over all N, one
//! shared term (a common supply), at the default accuracy of the analysis; and the whole
//! analysis of such a file with a known-sigma drift.

use criterion::{Criterion, criterion_group, criterion_main};

use concord::analysis::{AnalysisOptions, analyze};
use concord::model::load_str;
use concord::prob::order::{Accuracy, Agreement, Question, Rank, SharedGaussian, figures};

#[path = "common/chains.rs"]
mod chains;
use chains::median_file;

fn median_question(n: usize) -> (SharedGaussian, Question) {
    let g = SharedGaussian {
        mean: (0..n).map(|i| 0.02 * i as f64 - 0.05).collect(),
        own_sd: (0..n).map(|i| 0.4 + 0.02 * i as f64).collect(),
        shared: vec![vec![0.2; n]],
        uniform: None,
    };
    let q = Question {
        output: Rank::median((0..n).collect()).into(),
        safe_lower: -1.5,
        safe_upper: 1.5,
        agreement: Agreement::Range {
            of: (0..n).collect(),
            limit: 2.5,
        },
        bands: Vec::new(),
    };
    (g, q)
}

fn order_figures(c: &mut Criterion) {
    let accuracy = Accuracy {
        abs: 1e-11,
        rel: 1e-6,
        max_intervals: 400,
    };
    let mut group = c.benchmark_group("order statistics");
    group.sample_size(10);
    for n in [5usize, 9, 15] {
        let (g, q) = median_question(n);
        group.bench_function(
            format!("median of {n}, range check, one shared term"),
            |b| b.iter(|| figures(&g, &q, &accuracy).expect("figures")),
        );
    }
    for n in [5usize, 9, 15] {
        let arch = load_str(&median_file(n), "bench.toml").expect("valid");
        let options = AnalysisOptions::default();
        group.bench_function(format!("analyze median of {n}, one drift"), |b| {
            b.iter(|| analyze(&arch.model, &options, false).expect("analysis"))
        });
    }
    group.finish();
}

criterion_group!(benches, order_figures);
criterion_main!(benches);
