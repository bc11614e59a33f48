//! Benchmarks of the figures over time (issue targets, measured here, never asserted in
//! tests): a two-channel site confirmed over 20 samples against the same site for one
//! sample (target: within 10 times), the fault-free false alarms per hour of two channels
//! (target: under 1 ms), and the whole timed example file.

use criterion::{Criterion, criterion_group, criterion_main};

use concord::analysis::engine::{Engine, Scenario};
use concord::analysis::scenario::FaultScenario;
use concord::analysis::timing::{false_alarms_per_sample, timed_site};
use concord::analysis::{AnalysisOptions, analyze};
use concord::model::{load, load_str};

/// Two channels averaged and compared, a drift of known spread on one of them, confirmed 3
/// of the last 5 over a deadline of 20 samples.
const TWO: &str = r#"
name = "bench: two channels, confirmed over 20 samples"
unit = "deg"
[channels.a]
mean = 0.1
sigma = 0.5
[channels.b]
mean = -0.05
sigma = 0.5
[output]
kind = "mean"
of = ["a", "b"]
[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = 2.0
[safety]
limit = 1.5
[timing]
sample_period = 0.001
deadline = 0.020
confirm = { at_least = 3, of_last = 5 }
[faults.a_known]
fit = 10.0
hits = { a = 1.0 }
mode = "add"
amplitude = { gaussian = { mean = 0.0, sigma = 2.0 } }
"#;

fn timing(c: &mut Criterion) {
    let arch = load_str(TWO, "bench").expect("bench model");
    let model = &arch.model;
    let options = AnalysisOptions::default();
    let engine = Engine::new(model, &options);
    let timing = model.timing.as_ref().expect("timing");
    let fault = &model.faults[0];
    let scenario = FaultScenario::new(model, fault).expect("scenario");
    let mut group = c.benchmark_group("timing");
    group.sample_size(20);
    group.bench_function("two channels, one sample", |b| {
        b.iter(|| {
            engine
                .outcome(Scenario::Gaussian(&scenario, 0.0, 2.0))
                .expect("outcome")
        })
    });
    group.bench_function("two channels, 3 of 5 over 20 samples", |b| {
        b.iter(|| timed_site(&engine, timing, fault, &options).expect("timed"))
    });
    group.bench_function("two channels, false alarms per hour", |b| {
        b.iter(|| false_alarms_per_sample(&engine, timing, &options).expect("rate"))
    });
    let example = load(
        &std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("architectures")
            .join("plovrant_swa2_confirmed.toml"),
    )
    .expect("example");
    group.bench_function("analyze plovrant_swa2_confirmed", |b| {
        b.iter(|| analyze(&example.model, &options, false).expect("analysis"))
    });
    group.finish();
}

criterion_group!(benches, timing);
criterion_main!(benches);
