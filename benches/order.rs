//! The order-statistic engine: a median of N channels with a range check over all N, one
//! shared term (a common supply), at the default accuracy of the analysis; and the whole
//! analysis of such a file with a known-sigma drift; and k-of-n windows on an even median.

use criterion::{Criterion, criterion_group, criterion_main};

use concord::analysis::{AnalysisOptions, analyze};
use concord::model::load_str;
use concord::prob::order::{
    Accuracy, Agreement, ChannelBand, Question, Rank, SharedGaussian, figures,
};

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
        detection_needed: 1,
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
    // k of n windows (checks of single channels, one per channel) on an even median: the
    // count of firing windows as a second Poisson-binomial count.
    for (n, k) in [(4usize, 2usize), (8, 3)] {
        let g = SharedGaussian {
            mean: vec![0.0; n],
            own_sd: vec![1.0; n],
            shared: vec![vec![0.4; n]],
            uniform: None,
        };
        let q = Question {
            output: Rank::median((0..n).collect()).into(),
            safe_lower: -1.0,
            safe_upper: 1.0,
            agreement: Agreement::Always,
            bands: (0..n)
                .map(|channel| ChannelBand {
                    channel,
                    lower: -2.0,
                    upper: 2.0,
                })
                .collect(),
            detection_needed: k,
        };
        group.bench_function(format!("median of {n}, {k} of {n} windows"), |b| {
            b.iter(|| figures(&g, &q, &accuracy).expect("figures"))
        });
    }
    group.finish();
}

criterion_group!(benches, order_figures);
criterion_main!(benches);
