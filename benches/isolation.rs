//! Benchmarks of isolation after detection (issue target, measured here, never asserted in
//! tests): the isolation classes of a three-channel site against its coverage figures
//! (target: within 3 times), for both rules, and the whole example with and without its
//! isolation section.

use criterion::{Criterion, criterion_group, criterion_main};

use concord::analysis::engine::{Engine, Scenario};
use concord::analysis::isolation::BlamePlan;
use concord::analysis::scenario::FaultScenario;
use concord::analysis::{AnalysisOptions, analyze};
use concord::model::load_str;

const SWA3: &str = include_str!("../architectures/plovrant_swa3_median.toml");

fn isolation(c: &mut Criterion) {
    let options = AnalysisOptions::default();
    let farthest = SWA3.replace(
        "rule = \"in_every_fired_check\"",
        "rule = \"farthest_from_median\"\nmargin = 0.2",
    );
    let mut group = c.benchmark_group("isolation");
    group.sample_size(20);
    for (label, text) in [
        ("in_every_fired_check", SWA3),
        ("farthest_from_median", &farthest),
    ] {
        let arch = load_str(text, "bench").expect("bench model");
        let model = &arch.model;
        let engine = Engine::new(model, &options);
        // c_gain: a gaussian amplitude of known spread on the TMR channel.
        let fault = model
            .faults
            .iter()
            .find(|f| f.name == "c_gain")
            .expect("c_gain");
        let scenario = FaultScenario::new(model, fault).expect("scenario");
        let plan = BlamePlan::new(model, &options).expect("plan");
        let g = scenario
            .with_gaussian_amplitude(0.0, 3.0)
            .expect("gaussian");
        let all: Vec<usize> = (0..plan.class_count()).collect();
        let tol = options.polytope_tolerance();
        group.bench_function(format!("{label}: coverage figures of c_gain"), |b| {
            b.iter(|| {
                engine
                    .outcome(Scenario::Gaussian(&scenario, 0.0, 3.0))
                    .expect("outcome")
            })
        });
        group.bench_function(format!("{label}: isolation classes of c_gain"), |b| {
            b.iter(|| plan.classes_at(&g, &all, &tol).expect("classes"))
        });
        group.bench_function(format!("{label}: the blame polytopes built"), |b| {
            b.iter(|| BlamePlan::new(model, &options).expect("plan"))
        });
    }
    let arch = load_str(SWA3, "bench").expect("bench model");
    let mut without = arch.model.clone();
    without.isolation = None;
    group.bench_function("swa3 example, analyze without isolation", |b| {
        b.iter(|| analyze(&without, &options, false).expect("analysis"))
    });
    group.bench_function("swa3 example, analyze with isolation", |b| {
        b.iter(|| analyze(&arch.model, &options, false).expect("analysis"))
    });
    group.finish();
}

criterion_group!(benches, isolation);
criterion_main!(benches);
