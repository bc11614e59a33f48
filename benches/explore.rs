//! Benchmarks of the design-exploration commands on a two-channel architecture (the bundled
//! `plovrant_swa2_mean.toml`). Issue targets, for the notes (never asserted in tests):
//! a 200-point DC-versus-spread curve under 50 ms; tuning to a DC target under 200 ms; a
//! 100 x 100 grid of (safety limit, threshold) under 5 s on two cores.

use criterion::{Criterion, criterion_group, criterion_main};

use concord::analysis::AnalysisOptions;
use concord::analysis::spread::spread_curve;
use concord::analysis::sweep::{Axis, SweepPlan, sweep};
use concord::analysis::tune::{CoverageFigure, TuneRequest, tune};
use concord::model::load_str;

const FILE: &str = include_str!("../architectures/plovrant_swa2_mean.toml");

fn spread(c: &mut Criterion) {
    let arch = load_str(FILE, "plovrant_swa2_mean.toml").unwrap();
    let sigmas = Axis::log("sigma", 0.002, 5400.0, 200).unwrap().values;
    let options = AnalysisOptions::default();
    c.bench_function("spread curve, 200 points, two channels", |b| {
        b.iter(|| spread_curve(&arch.model, "a_drift", &sigmas, &options).unwrap())
    });
}

fn tuning(c: &mut Criterion) {
    let arch = load_str(FILE, "plovrant_swa2_mean.toml").unwrap();
    let options = AnalysisOptions::default();
    let request = TuneRequest::new(Some("ab".into()), CoverageFigure::DcAllDangerous, 0.95);
    c.bench_function("tune to dc_all_dangerous 95 %, two channels", |b| {
        b.iter(|| tune(&arch, &request, &options, &|| {}).unwrap())
    });
}

fn grid(c: &mut Criterion) {
    let arch = load_str(FILE, "plovrant_swa2_mean.toml").unwrap();
    let options = AnalysisOptions::default();
    let plan = SweepPlan::new(
        Axis::linear("safety.limit", 1.0, 4.0, 100).unwrap(),
        Some(Axis::linear("checks.ab.limit", 1.0, 5.0, 100).unwrap()),
    )
    .unwrap();
    let mut group = c.benchmark_group("grid");
    group.sample_size(10);
    group.bench_function("100 x 100 (safety limit, threshold), two channels", |b| {
        b.iter(|| {
            let mut rows = 0usize;
            sweep::<concord::analysis::AnalysisError>(&arch, &plan, &options, |_| {
                rows += 1;
                Ok(())
            })
            .unwrap();
            rows
        })
    });
    group.finish();
}

criterion_group!(benches, spread, tuning, grid);
criterion_main!(benches);
