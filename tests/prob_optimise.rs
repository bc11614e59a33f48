//! Tests of Brent's minimisation, the local-minimum scan and the log grid against minima
//! known in closed form (calculus: f' = 0, f'' > 0, or the end of the range).
//!
//! Run with `--nocapture` to see the measured accuracies and evaluation counts.

use concord::prob::ProbError;
use concord::prob::optimise::{
    Minimum, brent_bracket, brent_minimise, local_minima_indices, log_grid, scan_then_refine,
};
use std::f64::consts::PI;

fn ok(f: impl Fn(f64) -> f64) -> impl FnMut(f64) -> Result<f64, ProbError> {
    move |x| Ok(f(x))
}

/// Asserts `|m.x - x_true| <= tol * |x_true|` and prints the figures.
fn assert_near(name: &str, m: &Minimum, x_true: f64, tol: f64) {
    let rel = (m.x - x_true).abs() / x_true.abs().max(f64::MIN_POSITIVE);
    eprintln!(
        "{name:<34} x {:>20.15e} rel error {rel:.2e} value {:>12.6e} evals {:>3} boundary {}",
        m.x, m.value, m.evaluations, m.at_boundary
    );
    assert!(
        (m.x - x_true).abs() <= tol * x_true.abs(),
        "{name}: x = {} but the minimiser is {x_true} (rel error {rel:e} > {tol:e})",
        m.x
    );
}

#[test]
fn shifted_parabola() {
    // (x - 2)^2 + 1 has its minimum 1 at x = 2 (calculus). Parabolic interpolation fits a
    // quadratic exactly, so Brent's method needs far fewer steps than golden section alone
    // (about 35 for this bracket and tolerance; Brent 1973, ch. 5).
    let m = brent_minimise(ok(|x| (x - 2.0).powi(2) + 1.0), 0.0, 5.0, 1e-7, 100).unwrap();
    assert_near("(x-2)^2+1 on [0, 5]", &m, 2.0, 1e-7);
    assert!((m.value - 1.0).abs() < 1e-14);
    assert!(!m.at_boundary);
    assert!(m.evaluations < 20, "{m:?}");
    // Ends given in reverse order mean the same range.
    let r = brent_minimise(ok(|x| (x - 2.0).powi(2) + 1.0), 5.0, 0.0, 1e-7, 100).unwrap();
    assert_eq!(m, r);
}

#[test]
fn quartic_and_cosine() {
    // x^4 - 3x: f' = 4x^3 - 3 = 0 at x = (3/4)^(1/3), f'' = 12 x^2 > 0 (calculus).
    let x_true = 0.75_f64.cbrt();
    let m = brent_minimise(ok(|x| x.powi(4) - 3.0 * x), -2.0, 3.0, 1e-7, 100).unwrap();
    assert_near("x^4-3x on [-2, 3]", &m, x_true, 1e-7);
    assert!((m.value - (x_true.powi(4) - 3.0 * x_true)).abs() < 1e-14);
    // cos on [0, 2 pi]: minimum -1 at pi.
    let m = brent_minimise(ok(f64::cos), 0.0, 2.0 * PI, 1e-7, 100).unwrap();
    assert_near("cos on [0, 2pi]", &m, PI, 1e-7);
    assert!((m.value + 1.0).abs() < 1e-15);
    // A minimum at zero, where only the absolute floor of the tolerance applies:
    // |x - 0| <= 1e-6 * x_tol_rel * (b - a) (the documented floor).
    let b = brent_bracket(ok(|x| x * x), -1.0, 3.0, 1e-6, 200).unwrap();
    eprintln!("x^2 on [-1, 3]: {b:?}");
    assert!(b.minimum.x.abs() <= 1e-6 * 1e-6 * 4.0 + 1e-16, "{b:?}");
    assert!(b.lower <= 0.0 && 0.0 <= b.upper);
}

#[test]
fn tight_tolerance_is_met() {
    // exp(x) - 2x: f' = exp(x) - 2 = 0 at ln 2 (calculus). x_tol_rel 1e-10 is below the
    // sqrt(eps) accuracy that rounding allows for a smooth minimum (Brent 1973, ch. 5), so
    // only about 1e-8 is asked of the result; the run must still terminate.
    let m = brent_minimise(ok(|x| x.exp() - 2.0 * x), 0.0, 2.0, 1e-10, 200).unwrap();
    assert_near("exp(x)-2x, tol 1e-10", &m, 2.0_f64.ln(), 1e-8);
}

#[test]
fn minima_at_the_ends() {
    // exp(x) increases: minimum at the lower end 0; -x decreases: minimum at the upper end 1;
    // (x + 1)^2 on [0, 3]: its vertex -1 is outside, minimum at 0 (calculus).
    let m = brent_minimise(ok(f64::exp), 0.0, 1.0, 1e-8, 100).unwrap();
    eprintln!("exp on [0, 1]: {m:?}");
    assert!(m.at_boundary);
    assert_eq!(m.x, 0.0);
    assert_eq!(m.value, 1.0);
    let m = brent_minimise(ok(|x| -x), 0.0, 1.0, 1e-8, 100).unwrap();
    assert!(m.at_boundary);
    assert_eq!(m.x, 1.0);
    let m = brent_minimise(ok(|x| (x + 1.0).powi(2)), 0.0, 3.0, 1e-8, 100).unwrap();
    assert!(m.at_boundary);
    assert_eq!(m.x, 0.0);
    // A degenerate range is its only point.
    let m = brent_minimise(ok(|x| x * x), 2.0, 2.0, 1e-8, 100).unwrap();
    assert_eq!(
        (m.x, m.value, m.evaluations, m.at_boundary),
        (2.0, 4.0, 1, true)
    );
}

#[test]
fn a_kink_is_located_by_golden_section() {
    // |x - 0.3|: not smooth, so parabolas do not help, but golden section still brackets the
    // minimiser 0.3 (Brent 1973, ch. 5: guaranteed convergence).
    let m = brent_minimise(ok(|x| (x - 0.3).abs()), 0.0, 1.0, 1e-9, 200).unwrap();
    assert_near("|x-0.3| on [0, 1]", &m, 0.3, 1e-9);
}

#[test]
fn brent_failures() {
    // Budget: 3 evaluations cannot reach 1e-8 on [0, 5].
    let r = brent_minimise(ok(|x| (x - 2.0).powi(2)), 0.0, 5.0, 1e-8, 3);
    assert!(
        matches!(r, Err(ProbError::BudgetExhausted { points: 3, .. })),
        "{r:?}"
    );
    let r = brent_minimise(ok(|_| f64::NAN), 0.0, 1.0, 1e-8, 100);
    assert!(matches!(r, Err(ProbError::NonFinite { .. })), "{r:?}");
    let r = brent_minimise(ok(|x| x), f64::NAN, 1.0, 1e-8, 100);
    assert!(matches!(r, Err(ProbError::NonFinite { .. })), "{r:?}");
    assert!(brent_minimise(ok(|x| x), 0.0, 1.0, 0.0, 100).is_err());
    assert!(brent_minimise(ok(|x| x), 0.0, 1.0, 1e-8, 0).is_err());
    let boom = ProbError::InvalidArgument("model failed".to_string());
    let r = brent_minimise(|_| Err(boom.clone()), 0.0, 1.0, 1e-8, 100);
    assert_eq!(r, Err(boom));
}

#[test]
fn local_minima_of_sampled_curves() {
    // Definition: a sample or plateau of equal samples whose neighbours are strictly larger;
    // ends count with their one neighbour; a plateau once, at its middle.
    assert_eq!(local_minima_indices(&[3.0, 1.0, 2.0]), vec![1]);
    assert_eq!(local_minima_indices(&[1.0, 2.0, 3.0]), vec![0]);
    assert_eq!(local_minima_indices(&[3.0, 2.0, 1.0]), vec![2]);
    assert_eq!(local_minima_indices(&[2.0, 1.0, 1.0, 1.0, 2.0]), vec![2]);
    assert_eq!(local_minima_indices(&[3.0, 1.0, 1.0, 2.0, 0.0]), vec![1, 4]);
    assert_eq!(local_minima_indices(&[1.0, 0.0, 1.0, 0.0, 1.0]), vec![1, 3]);
    assert_eq!(local_minima_indices(&[0.0, 1.0, 1.0, 0.0]), vec![0, 3]);
    assert_eq!(local_minima_indices(&[1.0, 2.0, 2.0, 3.0]), vec![0]);
    assert_eq!(local_minima_indices(&[3.0, 2.0, 2.0, 1.0]), vec![3]);
    assert_eq!(local_minima_indices(&[1.0, 1.0]), vec![0]);
    assert_eq!(local_minima_indices(&[5.0]), vec![0]);
    assert_eq!(local_minima_indices(&[]), Vec::<usize>::new());
    assert_eq!(
        local_minima_indices(&[f64::NAN, 2.0, f64::NAN, 1.0]),
        vec![1, 3]
    );
    // -0.0 == 0.0: one plateau.
    assert_eq!(local_minima_indices(&[1.0, -0.0, 0.0, 1.0]), vec![1]);
}

#[test]
fn log_grid_is_geometric_with_exact_ends() {
    // Definition of a log-spaced grid: constant ratio (hi / lo)^(1 / (n - 1)).
    let g = log_grid(1e-3, 1e3, 61).unwrap();
    assert_eq!(g.len(), 61);
    assert_eq!(g[0], 1e-3);
    assert_eq!(g[60], 1e3);
    let ratio = 10.0_f64.powf(0.1);
    for w in g.windows(2) {
        assert!((w[1] / w[0] / ratio - 1.0).abs() < 1e-13, "{w:?}");
    }
    assert!((g[30] - 1.0).abs() < 1e-14);
    assert_eq!(log_grid(2.0, 8.0, 2).unwrap(), vec![2.0, 8.0]);
    assert!(log_grid(0.0, 1.0, 5).is_err());
    assert!(log_grid(-1.0, 1.0, 5).is_err());
    assert!(log_grid(1.0, 1.0, 5).is_err());
    assert!(log_grid(2.0, 1.0, 5).is_err());
    assert!(log_grid(1.0, 2.0, 1).is_err());
    assert!(log_grid(1.0, f64::INFINITY, 5).is_err());
    assert!(log_grid(1.0, 1.0 + 1e-15, 100).is_err());
}

#[test]
fn scan_finds_every_local_minimum() {
    // sin(3x) + 0.1 x on [0, 10]: f' = 3 cos(3x) + 0.1 = 0 with f'' = -9 sin(3x) > 0 at
    // x_k = (2 pi (k + 1) - acos(-1/30)) / 3, k = 0..4, values -sqrt(1 - 1/900) + 0.1 x_k;
    // and the lower end 0 (f'(0) = 3.1 > 0, value 0); f'(10) > 0, so not the upper end.
    let f = |x: f64| (3.0 * x).sin() + 0.1 * x;
    let grid: Vec<f64> = (0..=100).map(|i| f64::from(i) * 0.1).collect();
    let scan = scan_then_refine(ok(f), &grid, 1e-8, 100, false).unwrap();
    assert_eq!(scan.grid, grid);
    assert_eq!(scan.values.len(), grid.len());
    assert_eq!(scan.values[37], f(grid[37]));
    assert_eq!(scan.minima.len(), 6, "{:?}", scan.minima);
    let c = (-1.0_f64 / 30.0).acos();
    for (k, m) in scan.minima.iter().take(5).enumerate() {
        let x_true = (2.0 * PI * (k as f64 + 1.0) - c) / 3.0;
        assert_near(&format!("sin(3x)+0.1x, minimum {k}"), m, x_true, 1e-8);
        let v_true = -(1.0_f64 - 1.0 / 900.0).sqrt() + 0.1 * x_true;
        assert!((m.value - v_true).abs() < 1e-14, "{m:?}");
        assert!(!m.at_boundary);
    }
    let end = scan.minima[5];
    assert_eq!((end.x, end.value, end.at_boundary), (0.0, 0.0, true));
    // Sorted by value.
    assert!(scan.minima.windows(2).all(|w| w[0].value <= w[1].value));
}

#[test]
fn residual_shaped_curve_in_log_sigma() {
    // The analysis maximises a residual p(s) that vanishes for tiny and huge spreads; here
    // p(s) = s^2 exp(-s^2), whose maximum e^-1 is at s = 1 (p' = 2 s e^(-s^2) (1 - s^2)).
    // Minimise -p over s in [1e-3, 1e3] on a log grid, refining in log s.
    let grid = log_grid(1e-3, 1e3, 61).unwrap();
    let scan =
        scan_then_refine(ok(|s| -(s * s) * (-(s * s)).exp()), &grid, 1e-7, 100, true).unwrap();
    assert_eq!(scan.minima.len(), 1, "{:?}", scan.minima);
    let m = scan.minima[0];
    assert_near("-s^2 exp(-s^2), log space", &m, 1.0, 1e-6);
    assert!((m.value + (-1.0_f64).exp()).abs() < 1e-15);
    assert!(!m.at_boundary);

    // Off-centre peak at s = 37 (scale the same curve): p(s / 37).
    let scan = scan_then_refine(
        ok(|s| {
            let t = s / 37.0;
            -(t * t) * (-(t * t)).exp()
        }),
        &grid,
        1e-7,
        100,
        true,
    )
    .unwrap();
    assert_near("-p(s/37), log space", &scan.minima[0], 37.0, 1e-6);
}

#[test]
fn two_peaks_both_kept() {
    // Two well separated bumps of p(s) = s^2 exp(-s^2): a (s) + 0.5 p(s / 100). The second
    // term changes the first peak's position by a relative O(1e-4) at most (its slope there is
    // about 2e-4), so the minimiser near 1 is checked to 1e-3; the first term is
    // exp(-1e4) = 0 in double precision near s = 100, so that peak is exactly at 100.
    let p = |s: f64| s * s * (-(s * s)).exp();
    let grid = log_grid(1e-2, 1e4, 49).unwrap();
    let scan =
        scan_then_refine(ok(|s| -(p(s) + 0.5 * p(s / 100.0))), &grid, 1e-7, 100, true).unwrap();
    assert_eq!(scan.minima.len(), 2, "{:?}", scan.minima);
    assert_near("first peak", &scan.minima[0], 1.0, 1e-3);
    assert_near("second peak", &scan.minima[1], 100.0, 1e-6);
}

#[test]
fn refinement_never_worse_than_the_grid() {
    // |x - 0.5| with 0.5 on the grid: the grid point is the exact minimum 0; Brent can only
    // approach it, so the grid point must be kept, bit for bit.
    let grid = [0.0, 0.25, 0.5, 0.75, 1.0];
    let scan = scan_then_refine(ok(|x| (x - 0.5).abs()), &grid, 1e-8, 200, false).unwrap();
    assert_eq!(scan.minima.len(), 1);
    let m = scan.minima[0];
    assert_eq!((m.x, m.value, m.at_boundary), (0.5, 0.0, false));
    assert!(m.evaluations > 0);
}

#[test]
fn scan_minima_at_grid_ends() {
    // x increases: minimum at the first grid point; -ln x decreases: at the last one.
    let grid = log_grid(0.1, 10.0, 9).unwrap();
    let scan = scan_then_refine(ok(|x| x), &grid, 1e-8, 100, true).unwrap();
    assert_eq!(scan.minima.len(), 1);
    assert!(scan.minima[0].at_boundary);
    assert!(
        (scan.minima[0].x - 0.1).abs() <= 2e-8 * 0.1,
        "{:?}",
        scan.minima
    );
    let scan = scan_then_refine(ok(|x| -x.ln()), &grid, 1e-8, 100, true).unwrap();
    assert_eq!(scan.minima.len(), 1);
    assert!(scan.minima[0].at_boundary);
    assert!(
        (scan.minima[0].x - 10.0).abs() <= 2e-8 * 10.0,
        "{:?}",
        scan.minima
    );
    // A single grid point is its own minimum.
    let scan = scan_then_refine(ok(|x| x), &[3.0], 1e-8, 100, false).unwrap();
    assert_eq!(scan.minima.len(), 1);
    assert!(scan.minima[0].at_boundary);
}

#[test]
fn scan_failures() {
    let f = || ok(|x: f64| x * x);
    assert!(scan_then_refine(f(), &[], 1e-8, 100, false).is_err());
    assert!(scan_then_refine(f(), &[1.0, 1.0, 2.0], 1e-8, 100, false).is_err());
    assert!(scan_then_refine(f(), &[2.0, 1.0], 1e-8, 100, false).is_err());
    assert!(scan_then_refine(f(), &[-1.0, 1.0], 1e-8, 100, true).is_err());
    assert!(scan_then_refine(f(), &[0.0, f64::NAN], 1e-8, 100, false).is_err());
    assert!(scan_then_refine(f(), &[0.0, 1.0], f64::NAN, 100, false).is_err());
    let r = scan_then_refine(ok(|_| f64::INFINITY), &[0.0, 1.0], 1e-8, 100, false);
    assert!(matches!(r, Err(ProbError::NonFinite { .. })), "{r:?}");
    // A refinement budget of 2 evaluations cannot reach 1e-8.
    let grid: Vec<f64> = (0..=10).map(|i| f64::from(i) * 0.5).collect();
    let r = scan_then_refine(ok(|x| (x - 2.2).powi(2)), &grid, 1e-8, 2, false);
    assert!(matches!(r, Err(ProbError::BudgetExhausted { .. })), "{r:?}");
}

#[test]
fn deterministic_scan() {
    // Same input, same bits (house rule).
    let grid = log_grid(1e-3, 1e3, 31).unwrap();
    let run = || {
        scan_then_refine(
            ok(|s| -(s * s) * (-(s * s)).exp() + 0.01 * (5.0 * s.ln()).sin()),
            &grid,
            1e-7,
            100,
            true,
        )
        .unwrap()
    };
    assert_eq!(run(), run());
}
