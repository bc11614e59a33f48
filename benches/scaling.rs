//! The scaling picture: time of a whole exact analysis of a median of N channels (range
//! check over all, one shared supply, one known-sigma drift: two scenarios, the baseline and
//! the site) for N = 2..16, beside the time plain Monte Carlo sampling needs to estimate the
//! site's residual to a 10 % and a 1 % relative standard error (its cost per sample measured
//! on 10^5 samples, the count from the binomial variance `(1 - p) / (p r^2)`, common
//! practice). Writes `docs/pictures/scaling.svg` and prints the table.
//!
//! Run: `cargo bench --bench scaling` (a few minutes; a timing run, not a criterion one).

use std::time::Instant;

use concord::analysis::montecarlo::{MonteCarloOptions, analyze_montecarlo};
use concord::analysis::{AnalysisOptions, analyze};
use concord::model::load_str;
use concord::report::plot::{Chart, Scale, Series, render_svg};

#[path = "common/chains.rs"]
mod chains;
use chains::median_file;

/// Wall time in seconds of the fastest of `runs` calls.
fn fastest<T>(runs: usize, mut f: impl FnMut() -> T) -> f64 {
    (0..runs)
        .map(|_| {
            let start = Instant::now();
            std::hint::black_box(f());
            start.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

fn main() {
    let options = AnalysisOptions::default();
    let mc = MonteCarloOptions {
        samples: 100_000,
        seed: 0x5ca1_ab1e,
    };
    let mut exact = Vec::new();
    let mut sampled_10 = Vec::new();
    let mut sampled_1 = Vec::new();
    println!("N  exact_s  method  p_vu  bound  mc_s_per_sample  mc_s_10pct  mc_s_1pct");
    for n in 2..=16usize {
        let arch = load_str(&median_file(n), "scaling.toml").expect("valid file");
        let runs = if n <= 3 { 3 } else { 2 };
        let a = analyze(&arch.model, &options, false).expect("analysis");
        let t = fastest(runs, || {
            analyze(&arch.model, &options, false).expect("analysis")
        });
        let site = &a.sites[0];
        let p = site.outcome.p_vu.value;
        // Both scenarios (baseline and site) are sampled: the cost per sample of one.
        let t_mc = fastest(5, || {
            analyze_montecarlo(&arch.model, &mc).expect("sampling")
        }) / (2.0 * mc.samples as f64);
        let needed = |r: f64| (1.0 - p) / (p * r * r);
        println!(
            "{n:2}  {t:.3}  {:?}  {p:.3e}  {:.1e}  {t_mc:.2e}  {:.2}  {:.1}",
            site.method,
            site.outcome.p_vu.error,
            t_mc * needed(0.1),
            t_mc * needed(0.01)
        );
        exact.push((n as f64, t / 2.0));
        sampled_10.push((n as f64, t_mc * needed(0.1)));
        sampled_1.push((n as f64, t_mc * needed(0.01)));
    }
    let chart = Chart {
        title: "Time per scenario against the number of channels (median, range check, one shared source)"
            .into(),
        x_label: "channels N".into(),
        y_label: "seconds per scenario (two-core machine, release build)".into(),
        x_scale: Scale::Linear,
        y_scale: Scale::Log,
        series: vec![
            Series {
                label: "exact (error bound about 1e-12)".into(),
                points: exact,
            },
            Series {
                label: "Monte Carlo, residual to 10 % relative error".into(),
                points: sampled_10,
            },
            Series {
                label: "Monte Carlo, residual to 1 % relative error".into(),
                points: sampled_1,
            },
        ],
        reference_lines: Vec::new(),
        markers: Vec::new(),
        caption: vec![
            "Exact: polytopes up to three channels, order statistics from four on (even N: one more integral). \
             Monte Carlo: time per sample measured on 10^5 samples, times the samples a binomial estimate of the \
             residual needs for the stated relative standard error. Measured by cargo bench --bench scaling."
                .into(),
        ],
    };
    let svg = render_svg(&chart, 900, 560).expect("chart");
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/docs/pictures/scaling.svg");
    std::fs::write(path, svg).expect("write the picture");
    println!("wrote {path}");
}
