//! Speed of the bivariate normal: one orthant and one rectangle per call, for a
//! correlation in each of Genz's (2004) ranges (|rho| < 0.3, < 0.75, < 0.925, where Genz
//! takes 6, 12 and 20 Gauss–Legendre points and concord takes 20 throughout, and the
//! expansion about |rho| = 1), and with the correlation prepared once.
//! Run: cargo bench --bench bivariate

use concord::prob::bivariate::{self, StandardBivariate};
use criterion::{BenchmarkId, Criterion, black_box, criterion_group, criterion_main};

/// One correlation per range of Genz's method (see the module notes).
const RHOS: [f64; 4] = [0.2, 0.5, 0.9, 0.97];

fn orthant(c: &mut Criterion) {
    let mut group = c.benchmark_group("lower_orthant");
    for rho in RHOS {
        group.bench_with_input(BenchmarkId::from_parameter(rho), &rho, |b, &rho| {
            b.iter(|| bivariate::lower_orthant(black_box(0.7), black_box(-1.3), black_box(rho)))
        });
    }
    group.finish();
}

fn rectangle(c: &mut Criterion) {
    let mut group = c.benchmark_group("rectangle");
    for rho in RHOS {
        group.bench_with_input(BenchmarkId::new("finite", rho), &rho, |b, &rho| {
            b.iter(|| {
                bivariate::rectangle(
                    black_box([-0.4, 1.1]),
                    black_box([2.3, 3.0]),
                    black_box(rho),
                )
            })
        });
        group.bench_with_input(BenchmarkId::new("half_infinite", rho), &rho, |b, &rho| {
            b.iter(|| {
                bivariate::rectangle(
                    black_box([-0.4, 1.1]),
                    black_box([2.3, f64::INFINITY]),
                    black_box(rho),
                )
            })
        });
        let prepared = StandardBivariate::new(rho);
        group.bench_with_input(BenchmarkId::new("prepared_finite", rho), &rho, |b, _| {
            b.iter(|| prepared.rectangle(black_box([-0.4, 1.1]), black_box([2.3, 3.0])))
        });
    }
    group.finish();
}

criterion_group!(benches, orthant, rectangle);
criterion_main!(benches);
