//! Benchmarks of the analysis layer (issue targets in the comments; figures go in notes,
//! never into tests).

use criterion::{Criterion, criterion_group, criterion_main};

use concord::analysis::cells::CellSet;
use concord::analysis::engine::Engine;
use concord::analysis::montecarlo::{MonteCarloOptions, analyze_montecarlo};
use concord::analysis::site::analyze_site;
use concord::analysis::{AnalysisOptions, analyze};
use concord::model::load_str;

const TWO: &str = r#"
name = "bench: two channels"
unit = "deg"
full_scale = [-90.0, 90.0]
[channels.a]
mean = 0.1
sigma = 0.5
[channels.b]
mean = -0.05
sigma = 0.5
[[correlations]]
between = ["a", "b"]
rho = 0.2
[output]
kind = "mean"
of = ["a", "b"]
[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = 2.0
[safety]
limit = 1.5
[faults.a_known]
fit = 10.0
hits = { a = 1.0 }
mode = "add"
amplitude = { gaussian = { mean = 0.0, sigma = 2.0 } }
[faults.a_unknown]
fit = 10.0
hits = { a = 1.0 }
mode = "add"
amplitude = { gaussian = { mean = 0.0, sigma = "unknown" } }
"#;

const THREE: &str = r#"
name = "bench: three channels, median"
unit = "deg"
full_scale = [-90.0, 90.0]
[channels.a]
sigma = 0.5
[channels.b]
sigma = 0.5
[channels.c]
sigma = 0.5
[output]
kind = "median"
of = ["a", "b", "c"]
[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = 2.0
[checks.bc]
kind = "difference"
of = ["b", "c"]
limit = 2.0
[checks.ca]
kind = "difference"
of = ["c", "a"]
limit = 2.0
[safety]
limit = 1.5
[faults.a_unknown]
fit = 10.0
hits = { a = 1.0 }
mode = "add"
amplitude = { gaussian = { mean = 0.0, sigma = "unknown" } }
"#;

fn bench(c: &mut Criterion) {
    let options = AnalysisOptions::default();
    let two = load_str(TWO, "two.toml").expect("bench file");
    let engine = Engine::new(&two.model, &options);
    c.bench_function("site: two channels, gaussian fault of known sigma", |b| {
        b.iter(|| analyze_site(&engine, &two.model.faults[0], &options, false).expect("site"))
    });
    c.bench_function("site: two channels, worst case over unknown sigma", |b| {
        b.iter(|| analyze_site(&engine, &two.model.faults[1], &options, false).expect("site"))
    });
    c.bench_function("file: two channels, whole analysis", |b| {
        b.iter(|| analyze(&two.model, &options, false).expect("analysis"))
    });
    let three = load_str(THREE, "three.toml").expect("bench file");
    let engine3 = Engine::new(&three.model, &options);
    let mut group = c.benchmark_group("slow");
    group.sample_size(10);
    group.bench_function(
        "site: three channels median, worst case over unknown sigma",
        |b| {
            b.iter(|| {
                analyze_site(&engine3, &three.model.faults[0], &options, false).expect("site")
            })
        },
    );
    // Monte Carlo at about 1 % relative accuracy on the residual of the known-sigma site:
    // samples = z^2 (1 - p) / (0.01^2 p) with z = 1.96; the exact figure fixes p.
    let exact = analyze(&two.model, &options, false).expect("analysis");
    let p = exact.sites[0].outcome.p_vu.value.max(1e-9);
    let samples = ((1.96f64 * 1.96 * (1.0 - p)) / (1e-4 * p)).ceil() as u64;
    let mut single = two.model.clone();
    single.faults.truncate(1);
    eprintln!("Monte Carlo at 1 % relative on p_vu = {p:.3e} needs {samples} samples per scenario");
    group.bench_function(
        "montecarlo: two channels, known sigma, 1 % on the residual",
        |b| {
            b.iter(|| {
                analyze_montecarlo(&single, &MonteCarloOptions { samples, seed: 7 }).expect("mc")
            })
        },
    );
    // The bundled three-channel example's frozen channel (uniform over the full scale): the
    // polytopes empty at every amplitude are proven so once and skipped (issue 23: most of
    // the sensitivity's re-analyses of that file).
    let swa3_path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/architectures/plovrant_swa3_median.toml"
    );
    let swa3_text = std::fs::read_to_string(swa3_path).expect("bundled example");
    let swa3 = load_str(&swa3_text, "plovrant_swa3_median.toml").expect("bench file");
    let swa3_engine = Engine::new(&swa3.model, &options);
    let frozen = swa3
        .model
        .faults
        .iter()
        .find(|f| f.name == "a_frozen")
        .expect("the example's frozen site");
    group.bench_function("site: the three-channel example, frozen channel", |b| {
        b.iter(|| analyze_site(&swa3_engine, frozen, &options, false).expect("site"))
    });
    // The bundled four-channel example (median of four, a range check and a check of two
    // package averages: polytopes). Issue target: under 2 s for the whole file.
    let four_path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/architectures/plovrant_swa4_dual_pair.toml"
    );
    let four_text = std::fs::read_to_string(four_path).expect("bundled example");
    let four = load_str(&four_text, "plovrant_swa4_dual_pair.toml").expect("bench file");
    group.bench_function("file: the four-channel example, cells of the model", |b| {
        b.iter(|| CellSet::from_model(&four.model).expect("cells"))
    });
    group.bench_function("file: the four-channel example, whole analysis", |b| {
        b.iter(|| analyze(&four.model, &options, false).expect("analysis"))
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
