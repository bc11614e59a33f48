//! Speed of the adaptive quadrature and of the minimisers, on integrands shaped like the
//! ones the analysis uses.

use std::hint::black_box;

use concord::prob::Estimate;
use concord::prob::normal::cdf;
use concord::prob::optimise::{brent_minimise, log_grid, scan_then_refine};
use concord::prob::quadrature::{QuadratureOptions, integrate};
use criterion::{Criterion, criterion_group, criterion_main};

fn quadrature(c: &mut Criterion) {
    let opts = QuadratureOptions::default();
    c.bench_function("integrate Phi over [-5, 5]", |b| {
        b.iter(|| {
            integrate(
                |x| Ok(Estimate::exact(cdf(x))),
                black_box(-5.0),
                black_box(5.0),
                &[],
                &opts,
            )
        })
    });
    c.bench_function("integrate exp(-x^2) over R", |b| {
        b.iter(|| {
            integrate(
                |x: f64| Ok(Estimate::new((-x * x).exp(), 0.0)),
                black_box(f64::NEG_INFINITY),
                black_box(f64::INFINITY),
                &[],
                &opts,
            )
        })
    });
}

fn optimise(c: &mut Criterion) {
    c.bench_function("brent (x-2)^2+1 on [0, 5]", |b| {
        b.iter(|| {
            brent_minimise(
                |x| Ok((x - 2.0) * (x - 2.0) + 1.0),
                black_box(0.0),
                black_box(5.0),
                1e-8,
                100,
            )
        })
    });
    c.bench_function("brent x^4-3x on [-2, 3]", |b| {
        b.iter(|| {
            brent_minimise(
                |x: f64| Ok(x.powi(4) - 3.0 * x),
                black_box(-2.0),
                black_box(3.0),
                1e-8,
                100,
            )
        })
    });
    let grid = log_grid(1e-3, 1e3, 61).unwrap_or_default();
    c.bench_function("scan 61 points + refine, -s^2 exp(-s^2)", |b| {
        b.iter(|| {
            scan_then_refine(
                |s| Ok(-(s * s) * (-(s * s)).exp()),
                black_box(&grid),
                1e-7,
                100,
                true,
            )
        })
    });
}

criterion_group!(benches, quadrature, optimise);
criterion_main!(benches);
