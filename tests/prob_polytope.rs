//! Polytope probabilities against published closed forms, exact symmetry arguments and a
//! stored table (tests/reference/polytope_scipy.json, made by polytope_scipy.py beside it
//! with SciPy 1.17.1 and mpmath 1.3.0). Every check names its source.

use std::f64::consts::PI;

use concord::prob::ProbError;
use concord::prob::polytope::{Band, Gaussian, Method, Options, Polytope, Tolerance};
use nalgebra::DMatrix;

/// `P(a < Z < b)` for a standard normal, from libm's erfc (an implementation outside the
/// project), using the tail that does not cancel.
fn ref_interval(a: f64, b: f64) -> f64 {
    let upper = |x: f64| 0.5 * libm::erfc(x / std::f64::consts::SQRT_2);
    if a >= 0.0 {
        upper(a) - upper(b)
    } else if b <= 0.0 {
        upper(-b) - upper(-a)
    } else {
        1.0 - upper(-a) - upper(b)
    }
}

fn gaussian(mean: &[f64], cov: &[f64]) -> Gaussian {
    let n = mean.len();
    Gaussian::new(mean, &DMatrix::from_row_slice(n, n, cov)).unwrap()
}

/// `n` standard normals of mean 0 with every correlation `rho`.
fn equicorrelated(n: usize, rho: f64) -> Gaussian {
    let cov: Vec<f64> = (0..n * n)
        .map(|k| if k / n == k % n { 1.0 } else { rho })
        .collect();
    gaussian(&vec![0.0; n], &cov)
}

fn unit(n: usize, i: usize) -> Vec<f64> {
    let mut v = vec![0.0; n];
    v[i] = 1.0;
    v
}

fn tol(abs: f64, rel: f64) -> Tolerance {
    Tolerance {
        abs,
        rel,
        max_points: 4_000_000,
    }
}

/// `|value - reference| <= error + ref_tol`, with a message.
fn assert_covers(what: &str, value: f64, error: f64, reference: f64, ref_tol: f64) {
    let diff = (value - reference).abs();
    assert!(
        diff <= error + ref_tol,
        "{what}: value {value:e}, reference {reference:e}, |diff| {diff:e} > error {error:e} + {ref_tol:e}"
    );
}

/// Sheppard (1899): P(X > 0, Y > 0) = 1/4 + asin(rho) / (2 pi) for a standard bivariate
/// normal with correlation rho.
fn sheppard(rho: f64) -> f64 {
    0.25 + rho.asin() / (2.0 * PI)
}

fn rho_grid() -> Vec<f64> {
    (0..=20).map(|k| -1.0 + 0.1 * k as f64).collect()
}

#[test]
fn sheppard_orthant_default_path() {
    for rho in rho_grid() {
        let rho = rho.clamp(-1.0, 1.0);
        let g = gaussian(&[0.0, 0.0], &[1.0, rho, rho, 1.0]);
        let mut p = Polytope::new();
        p.push(vec![1.0, 0.0], Band::above(0.0));
        p.push(vec![0.0, 1.0], Band::above(0.0));
        let r = g.probability_detailed(&p, &tol(1e-10, 0.0)).unwrap();
        // Sheppard (1899).
        assert_covers(
            &format!("rho {rho}"),
            r.estimate.value,
            r.estimate.error,
            sheppard(rho),
            1e-15,
        );
        if rho.abs() == 1.0 {
            // Perfect correlation: rank 1, both rows merge into one direction.
            assert_eq!(r.rank, 1);
            assert_eq!(r.method, Method::Univariate);
        }
    }
}

#[test]
fn sheppard_orthant_forced_through_lattice() {
    for rho in rho_grid() {
        let rho = rho.clamp(-0.999, 0.999);
        let g = gaussian(&[0.0, 0.0], &[1.0, rho, rho, 1.0]);
        let mut p = Polytope::new();
        p.push(vec![1.0, 0.0], Band::above(0.0));
        p.push(vec![0.0, 1.0], Band::above(0.0));
        let options = Options {
            exact_paths: false,
            ..Options::default()
        };
        let r = g.probability_with(&p, &tol(1e-7, 0.0), &options).unwrap();
        assert_eq!(r.method, Method::Lattice);
        // Sheppard (1899).
        assert_covers(
            &format!("forced rho {rho}"),
            r.estimate.value,
            r.estimate.error,
            sheppard(rho),
            1e-15,
        );
        // A third, non-parallel row that cannot bind (x + y > -60: probability of
        // violation below 1e-300) sends the default path to the exact polygon of a rank-2
        // problem.
        p.push(vec![1.0, 1.0], Band::above(-60.0));
        let r = g.probability_detailed(&p, &tol(1e-7, 0.0)).unwrap();
        assert_eq!(r.method, Method::Planar);
        assert_eq!(r.directions, 3);
        assert_covers(
            &format!("redundant row rho {rho}"),
            r.estimate.value,
            r.estimate.error,
            sheppard(rho),
            1e-15,
        );
    }
}

#[test]
fn trivariate_orthant_formula() {
    // P(X1 > 0, X2 > 0, X3 > 0) = 1/8 + (asin r12 + asin r13 + asin r23) / (4 pi): the
    // classical trivariate orthant formula (Kendall and Stuart, The Advanced Theory of
    // Statistics, vol. 1; also Genz and Bretz 2009, sec. 2.1.2), which we rely on.
    let grid = [-0.8, -0.45, -0.1, 0.0, 0.3, 0.6, 0.9];
    let mut checked = 0;
    for &r12 in &grid {
        for &r13 in &grid {
            for &r23 in &grid {
                let cov = [1.0, r12, r13, r12, 1.0, r23, r13, r23, 1.0];
                let det = 1.0 + 2.0 * r12 * r13 * r23 - r12 * r12 - r13 * r13 - r23 * r23;
                if det < 1e-3 {
                    continue; // not a valid (or nearly singular) correlation matrix
                }
                let g = gaussian(&[0.0; 3], &cov);
                let mut p = Polytope::new();
                for i in 0..3 {
                    p.push(unit(3, i), Band::above(0.0));
                }
                let r = g.probability_detailed(&p, &tol(1e-7, 0.0)).unwrap();
                let exact = 0.125 + (r12.asin() + r13.asin() + r23.asin()) / (4.0 * PI);
                assert_covers(
                    &format!("r = ({r12}, {r13}, {r23})"),
                    r.estimate.value,
                    r.estimate.error,
                    exact,
                    1e-15,
                );
                assert!(r.estimate.error <= 1e-7);
                checked += 1;
            }
        }
    }
    assert!(checked > 100, "only {checked} valid matrices");
}

#[test]
fn equicorrelated_one_half_orthant_is_one_over_n_plus_one() {
    // With correlation 1/2, X_i = (E_0 - E_i) / sqrt 2 for iid standard E_0..E_n, so
    // P(all X_i > 0) = P(E_0 is the largest of n + 1 iid values) = 1 / (n + 1)
    // (exchangeability; also known from memory as the equicorrelated orthant value).
    for n in 2..=8 {
        let g = equicorrelated(n, 0.5);
        let mut p = Polytope::new();
        for i in 0..n {
            p.push(unit(n, i), Band::above(0.0));
        }
        let r = g.probability_detailed(&p, &tol(0.0, 1e-5)).unwrap();
        let exact = 1.0 / (n as f64 + 1.0);
        assert_covers(
            &format!("n = {n}"),
            r.estimate.value,
            r.estimate.error,
            exact,
            1e-15,
        );
        assert!(r.estimate.error <= 1e-5 * exact);
    }
}

#[derive(serde::Deserialize)]
struct Table {
    cases: Vec<Case>,
}

#[derive(serde::Deserialize)]
struct Case {
    name: String,
    mean: Vec<f64>,
    cov: Vec<Vec<f64>>,
    lower: Vec<serde_json::Value>,
    upper: Vec<serde_json::Value>,
    value: f64,
    tol: f64,
    rel: bool,
}

fn json_number(v: &serde_json::Value) -> f64 {
    match v {
        serde_json::Value::String(s) if s == "inf" => f64::INFINITY,
        serde_json::Value::String(s) if s == "-inf" => f64::NEG_INFINITY,
        other => other.as_f64().unwrap(),
    }
}

#[test]
fn stored_reference_table() {
    // tests/reference/polytope_scipy.json: SciPy 1.17.1 multivariate_normal.cdf rectangles
    // and mpmath 1.3.0 one-factor 1-D reductions (see the generating script).
    let text = include_str!("reference/polytope_scipy.json");
    let table: Table = serde_json::from_str(text).unwrap();
    assert!(table.cases.len() >= 15);
    let (mut max_abs, mut max_rel) = (0.0_f64, 0.0_f64);
    for case in &table.cases {
        let n = case.mean.len();
        let cov: Vec<f64> = case.cov.iter().flatten().copied().collect();
        let g = gaussian(&case.mean, &cov);
        let mut p = Polytope::new();
        for i in 0..n {
            let band = Band::open(json_number(&case.lower[i]), json_number(&case.upper[i]));
            p.push(unit(n, i), band);
        }
        let t = if case.rel {
            tol(0.0, 1e-6)
        } else {
            tol(1e-9, 0.0)
        };
        // Best effort: a 6-D case may not reach 1e-9 within the budget; its honest (larger)
        // bound is then what the reference must fall inside.
        let r = g.probability_best_effort(&p, &t).unwrap();
        let diff = (r.estimate.value - case.value).abs();
        max_abs = max_abs.max(diff);
        max_rel = max_rel.max(diff / case.value);
        assert_covers(
            &case.name,
            r.estimate.value,
            r.estimate.error,
            case.value,
            case.tol,
        );
        if case.rel {
            assert!(r.estimate.error <= 1e-6 * case.value, "{}", case.name);
        }
    }
    println!("reference table: max |diff| {max_abs:.3e}, max relative {max_rel:.3e}");
}

fn factorial(n: usize) -> f64 {
    (1..=n).map(|k| k as f64).product()
}

/// Rows `z_i - z_j > 0` for all `i < j`: the ordering `z_1 > z_2 > ... > z_r`.
fn ordering_rows(r: usize, p: &mut Polytope) {
    for i in 0..r {
        for j in (i + 1)..r {
            let mut row = vec![0.0; r];
            row[i] = 1.0;
            row[j] = -1.0;
            p.push(row, Band::above(0.0));
        }
    }
}

#[test]
fn ordering_polytopes_are_one_over_r_factorial() {
    // For iid standard normals every ordering is equally likely, so
    // P(z_1 > ... > z_r) = 1 / r! (exchangeability). All r (r - 1) / 2 pairwise rows are
    // given, so m > r and most rows are redundant without being parallel.
    for r in 3..=6 {
        let cov: Vec<f64> = (0..r * r)
            .map(|k| if k / r == k % r { 1.0 } else { 0.0 })
            .collect();
        let g = gaussian(&vec![0.0; r], &cov);
        let mut p = Polytope::new();
        ordering_rows(r, &mut p);
        let res = g.probability_detailed(&p, &tol(1e-7, 0.0)).unwrap();
        // The differences of r coordinates span r - 1 dimensions: two conditioning
        // variables are exact, three nested, more go to the lattice.
        let expected = match r {
            3 => Method::Planar,
            4 => Method::Nested,
            _ => Method::Lattice,
        };
        assert_eq!(res.method, expected, "r = {r}");
        let exact = 1.0 / factorial(r);
        assert_covers(
            &format!("r = {r}"),
            res.estimate.value,
            res.estimate.error,
            exact,
            1e-15,
        );
    }
}

#[test]
fn ordered_tail_keeps_relative_accuracy() {
    // P(z_1 > ... > z_4 > 3) for iid standard normals = P(Z > 3)^4 / 4! (all four above 3,
    // then each ordering equally likely), about 1.4e-13. P(Z > 3) from mpmath 1.3.0:
    // 0.0013498980316300945266518147676.
    let sf3 = 0.001_349_898_031_630_094_5_f64;
    let r = 4;
    let cov: Vec<f64> = (0..r * r)
        .map(|k| if k / r == k % r { 1.0 } else { 0.0 })
        .collect();
    let g = gaussian(&vec![0.0; r], &cov);
    let mut p = Polytope::new();
    ordering_rows(r, &mut p);
    for i in 0..r {
        p.push(unit(r, i), Band::above(3.0));
    }
    let res = g.probability_detailed(&p, &tol(0.0, 1e-4)).unwrap();
    let exact = sf3.powi(4) / 24.0;
    assert_covers(
        "ordered tail",
        res.estimate.value,
        res.estimate.error,
        exact,
        1e-16 * exact,
    );
    assert!(res.estimate.error <= 1e-4 * exact);
    assert!((res.estimate.value / exact - 1.0).abs() < 1e-4);
}

#[test]
fn planar_cones_are_angle_fractions() {
    // For a standard normal in the plane the angle is uniform (rotational symmetry), so
    // P(a_i . z > 0 for all i) = (pi - spread) / (2 pi), spread the angle range of the
    // normals a_i (less than pi).
    let sets: [&[f64]; 3] = [
        &[0.0, 0.4, 1.1, 2.0],
        &[-1.0, -0.2, 0.3, 0.9, 1.5],
        &[0.1, 0.2, 0.25],
    ];
    for angles in sets {
        let g = gaussian(&[0.0, 0.0], &[1.0, 0.0, 0.0, 1.0]);
        let mut p = Polytope::new();
        for &t in angles {
            p.push(vec![t.cos(), t.sin()], Band::above(0.0));
        }
        let res = g.probability_detailed(&p, &tol(1e-9, 0.0)).unwrap();
        let spread = angles.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
            - angles.iter().cloned().fold(f64::INFINITY, f64::min);
        let exact = (PI - spread) / (2.0 * PI);
        assert_covers(
            &format!("{angles:?}"),
            res.estimate.value,
            res.estimate.error,
            exact,
            1e-15,
        );
    }
}

#[test]
fn pyramid_cones_follow_girard() {
    // A cone {z : n_i . z >= 0} in 3-D with k faces meets the unit sphere in a spherical
    // polygon of area 2 pi - sum_i gamma_i, gamma_i the angle between consecutive face
    // normals (Girard's theorem on the spherical excess); the standard normal direction is
    // uniform on the sphere, so P = area / (4 pi). Regular pyramid: normals at polar angle
    // beta, azimuths 2 pi i / k; every face is active by symmetry.
    for (k, beta) in [(4usize, 1.0_f64), (7, 1.2), (20, 1.3)] {
        let g = gaussian(&[0.0; 3], &[1.0, 0.0, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 1.0]);
        let mut p = Polytope::new();
        for i in 0..k {
            let phi = 2.0 * PI * i as f64 / k as f64;
            p.push(
                vec![beta.sin() * phi.cos(), beta.sin() * phi.sin(), beta.cos()],
                Band::above(0.0),
            );
        }
        let cos_gamma = beta.sin().powi(2) * (2.0 * PI / k as f64).cos() + beta.cos().powi(2);
        let exact = (2.0 * PI - k as f64 * cos_gamma.acos()) / (4.0 * PI);
        let res = g.probability_detailed(&p, &tol(1e-7, 0.0)).unwrap();
        assert_eq!(res.directions, k);
        assert_covers(
            &format!("k = {k}"),
            res.estimate.value,
            res.estimate.error,
            exact,
            1e-15,
        );
    }
}

/// A fixed pseudo-random matrix (rows x cols), entries in [-1, 1], plus `diag` on the
/// diagonal.
fn test_matrix(rows: usize, cols: usize, seed: u64, diag: f64) -> DMatrix<f64> {
    let mut rng = concord::prob::rng::SplitMix64::new(seed);
    DMatrix::from_fn(rows, cols, |i, j| {
        2.0 * rng.next_f64() - 1.0 + if i == j { diag } else { 0.0 }
    })
}

#[test]
fn change_of_variables_gives_product_of_intervals() {
    // x = mu + M y with y ~ N(0, I): the rows of M^-1 read off y, so the polytope
    // {l_i <= (M^-1 (x - mu))_i <= u_i} has probability prod_i P(l_i < Z < u_i)
    // (independence), computed with libm's erfc. Extra rows: scaled copies of some rows
    // with scaled bands (parallel), negated copies (antiparallel).
    for (r, seed) in [(3usize, 1u64), (4, 2), (6, 3)] {
        let m = test_matrix(r, r, seed, 1.5);
        let cov = &m * m.transpose();
        let mean: Vec<f64> = (0..r).map(|i| 0.3 * i as f64 - 0.5).collect();
        let g = Gaussian::new(&mean, &cov).unwrap();
        let inv = m.clone().try_inverse().unwrap();
        let bounds: Vec<(f64, f64)> = (0..r)
            .map(|i| match i % 3 {
                0 => (-1.0 + 0.2 * i as f64, 0.8),
                1 => (f64::NEG_INFINITY, 0.5 - 0.1 * i as f64),
                _ => (-0.7, f64::INFINITY),
            })
            .collect();
        let mut p = Polytope::new();
        let mut exact = 1.0;
        for (i, &(l, u)) in bounds.iter().enumerate() {
            let row: Vec<f64> = (0..r).map(|j| inv[(i, j)]).collect();
            let shift: f64 = row.iter().zip(mean.iter()).map(|(a, b)| a * b).sum();
            p.push(row.clone(), Band::closed(l + shift, u + shift));
            if i % 2 == 0 {
                p.push(
                    row.iter().map(|v| 2.5 * v).collect(),
                    Band::closed(2.5 * (l + shift), 2.5 * (u + shift)),
                );
            } else {
                p.push(
                    row.iter().map(|v| -v).collect(),
                    Band::closed(-(u + shift), -(l + shift)),
                );
            }
            exact *= ref_interval(l, u);
        }
        let res = g.probability_detailed(&p, &tol(1e-9, 0.0)).unwrap();
        assert_eq!(res.directions, r);
        assert_covers(
            &format!("r = {r}"),
            res.estimate.value,
            res.estimate.error,
            exact,
            1e-14,
        );
    }
}

#[test]
fn singular_twelve_dimensional_with_deterministic_rows() {
    // x = G [y; 0] with G a fixed invertible 12 x 12 matrix and y ~ N(0, I_6): rank 6.
    // Rows 0..6 of G^-1 read off y (probability a product of intervals, libm's erfc); rows
    // 6..12 of G^-1 annihilate the random part, so they are deterministic with value
    // (G^-1 mu)_k, which decides 1 or 0 by the band's open or closed ends. More rows:
    // parallel copies. m = 20 in all.
    let n = 12;
    let r = 6;
    let gm = test_matrix(n, n, 42, 2.0);
    let m = gm.columns(0, r).into_owned();
    let cov = &m * m.transpose();
    let mean = vec![0.0; n];
    let g = Gaussian::new(&mean, &cov).unwrap();
    assert_eq!(g.rank(), r);
    let inv = gm.clone().try_inverse().unwrap();
    let row = |k: usize| -> Vec<f64> { (0..n).map(|j| inv[(k, j)]).collect() };
    let bounds = [
        (-1.0, 1.2),
        (f64::NEG_INFINITY, 0.3),
        (-0.4, f64::INFINITY),
        (-2.0, -0.5),
        (0.1, 2.5),
        (-1.5, 1.5),
    ];
    let base = |p: &mut Polytope| {
        let mut exact = 1.0;
        for (k, &(l, u)) in bounds.iter().enumerate() {
            p.push(row(k), Band::closed(l, u));
            exact *= ref_interval(l, u);
        }
        for (k, &(l, u)) in bounds.iter().enumerate().take(r) {
            p.push(
                row(k).iter().map(|v| 3.0 * v).collect(),
                Band::closed(3.0 * l, 3.0 * u),
            );
        }
        exact
    };
    // Deterministic rows: value 0 (mean 0) against closed and open ends.
    let cases: [(Band, bool); 6] = [
        (Band::closed(-1.0, 1.0), true),
        (Band::closed(0.0, 1.0), true),  // on a closed end: inside
        (Band::above(0.0), false),       // on an open end: outside
        (Band::below(0.0), false),       // on an open end: outside
        (Band::closed(0.5, 1.0), false), // outside
        (Band::closed(-3.0, 0.0), true), // on a closed end: inside
    ];
    for (band, inside) in cases {
        let mut p = Polytope::new();
        let exact = base(&mut p);
        for k in r..n {
            let b = if k == r {
                band
            } else {
                Band::closed(-1.0, 1.0)
            };
            p.push(row(k), b);
        }
        assert_eq!(p.len(), 18);
        p.push(vec![0.0; n], Band::closed(-1.0, 1.0)); // a zero row: deterministic, inside
        p.push(
            row(0).iter().map(|v| -v).collect(),
            Band::closed(-bounds[0].1, -bounds[0].0),
        );
        assert_eq!(p.len(), 20);
        let res = g.probability_detailed(&p, &tol(1e-9, 0.0)).unwrap();
        let expect = if inside { exact } else { 0.0 };
        assert_covers(
            &format!("{band:?}"),
            res.estimate.value,
            res.estimate.error,
            expect,
            1e-14,
        );
        if !inside {
            assert_eq!(res.estimate.value, 0.0);
            assert_eq!(res.method, Method::Deterministic);
        }
    }
}

#[test]
fn combination_row_equals_reduced_problem() {
    // x3 = x1 + x2 exactly (singular covariance): the 3-D problem with rows x1, x2, x3
    // must equal the 2-D problem with rows x1, x2, x1 + x2 (the reduced problem), and a
    // zero-variance coordinate x4 = 0.5 entering a row only shifts its band.
    let b = [[1.0, 0.0], [0.6, 0.8], [1.6, 0.8], [0.0, 0.0]];
    let mut cov = vec![0.0; 16];
    for i in 0..4 {
        for j in 0..4 {
            cov[i * 4 + j] = b[i][0] * b[j][0] + b[i][1] * b[j][1];
        }
    }
    let g = gaussian(&[0.1, -0.2, -0.1, 0.5], &cov);
    assert_eq!(g.rank(), 2);
    let mut p = Polytope::new();
    p.push(vec![1.0, 0.0, 0.0, 0.0], Band::closed(-1.0, 1.5));
    p.push(vec![0.0, 1.0, 0.0, 0.0], Band::closed(-0.5, 2.0));
    p.push(
        vec![0.0, 0.0, 1.0, 1.0],
        Band::closed(-0.5 + 0.5, 1.0 + 0.5),
    );
    p.push(vec![0.0, 0.0, 0.0, 1.0], Band::closed(0.5, 0.5)); // deterministic, on both closed ends
    let full = g.probability_detailed(&p, &tol(1e-9, 0.0)).unwrap();
    let reduced_g = gaussian(&[0.1, -0.2], &[1.0, 0.6, 0.6, 1.0]);
    let mut q = Polytope::new();
    q.push(vec![1.0, 0.0], Band::closed(-1.0, 1.5));
    q.push(vec![0.0, 1.0], Band::closed(-0.5, 2.0));
    q.push(vec![1.0, 1.0], Band::closed(-0.5, 1.0));
    let reduced = reduced_g.probability_detailed(&q, &tol(1e-9, 0.0)).unwrap();
    assert_covers(
        "singular vs reduced",
        full.estimate.value,
        full.estimate.error + reduced.estimate.error,
        reduced.estimate.value,
        0.0,
    );
    // Independent check of the reduced problem by its complement structure: x1 + x2 has
    // variance 1 + 1 + 2 * 0.6 = 3.2 and the value lies below the tightest marginal.
    let marginal = ref_interval(
        (-0.5 - 0.1 + 0.2) / 3.2_f64.sqrt(),
        (1.0 - 0.1 + 0.2) / 3.2_f64.sqrt(),
    );
    assert!(full.estimate.value < marginal);
    assert!(full.estimate.value > 0.0);
}

#[test]
fn empty_bands_and_whole_space() {
    let g = gaussian(
        &[0.0, 0.0, 0.0],
        &[1.0, 0.2, 0.1, 0.2, 1.0, 0.3, 0.1, 0.3, 1.0],
    );
    let mut p = Polytope::new();
    p.push(vec![1.0, 0.0, 0.0], Band::closed(1.0, 0.5));
    p.push(vec![0.0, 1.0, 0.0], Band::above(0.0));
    let r = g.probability_detailed(&p, &Tolerance::default()).unwrap();
    assert_eq!(r.estimate.value, 0.0);
    assert_eq!(r.estimate.error, 0.0);
    // No constraint at all: probability 1.
    let r = g
        .probability_detailed(&Polytope::new(), &Tolerance::default())
        .unwrap();
    assert_eq!(r.estimate.value, 1.0);
    // Only infinite bands: 1.
    let mut p = Polytope::new();
    p.push(
        vec![1.0, 2.0, 0.0],
        Band::closed(f64::NEG_INFINITY, f64::INFINITY),
    );
    assert_eq!(g.probability(&p, &Tolerance::default()).unwrap().value, 1.0);
    // Antiparallel rows with disjoint bands: 0.
    let mut p = Polytope::new();
    p.push(vec![1.0, 1.0, 0.0], Band::above(1.0));
    p.push(vec![-2.0, -2.0, 0.0], Band::above(-1.0));
    assert_eq!(g.probability(&p, &Tolerance::default()).unwrap().value, 0.0);
}

#[test]
fn univariate_path_matches_erfc() {
    // One direction: the exact normal interval (libm's erfc as the reference), also far
    // in the tail where relative accuracy matters.
    let g = gaussian(&[1.0, -2.0], &[4.0, 1.0, 1.0, 2.0]);
    // Row (1, 1): mean -1, variance 4 + 2 + 2 = 8.
    for (l, u) in [
        (-3.0, 0.5),
        (20.0, f64::INFINITY),
        (f64::NEG_INFINITY, -30.0),
    ] {
        let mut p = Polytope::new();
        p.push(vec![1.0, 1.0], Band::closed(l, u));
        p.push(vec![2.0, 2.0], Band::closed(2.0 * l - 1.0, 2.0 * u + 1.0));
        let r = g.probability_detailed(&p, &Tolerance::default()).unwrap();
        assert_eq!(r.method, Method::Univariate);
        let s = 8.0_f64.sqrt();
        let exact = ref_interval((l + 1.0) / s, (u + 1.0) / s);
        assert!(
            (r.estimate.value - exact).abs() <= 1e-13 * exact,
            "{l} {u}: {} vs {exact}",
            r.estimate.value
        );
        // The bound includes the rounding of the shifted, scaled band ends: a relative
        // error e in an end h moves a tail probability by about e h^2 relative.
        assert!(r.estimate.error <= 1e-10 * exact);
    }
}

#[test]
fn bad_input_is_reported() {
    let eye = DMatrix::<f64>::identity(2, 2);
    assert!(matches!(
        Gaussian::new(&[0.0, f64::NAN], &eye),
        Err(ProbError::NonFinite { .. })
    ));
    assert!(matches!(
        Gaussian::new(&[0.0], &eye),
        Err(ProbError::DimensionMismatch { .. })
    ));
    assert!(matches!(
        Gaussian::new(&[0.0; 17], &DMatrix::identity(17, 17)),
        Err(ProbError::TooLarge { .. })
    ));
    let asym = DMatrix::from_row_slice(2, 2, &[1.0, 0.5, 0.4, 1.0]);
    assert!(matches!(
        Gaussian::new(&[0.0; 2], &asym),
        Err(ProbError::NotSymmetric { .. })
    ));
    let indefinite =
        DMatrix::from_row_slice(3, 3, &[1.0, 0.9, 0.9, 0.9, 1.0, -0.9, 0.9, -0.9, 1.0]);
    match Gaussian::new(&[0.0; 3], &indefinite) {
        Err(ProbError::NotPositiveSemiDefinite { detail }) => {
            assert!(detail.contains("coordinate"))
        }
        other => panic!("expected NotPositiveSemiDefinite, got {other:?}"),
    }
    let g = Gaussian::new(&[0.0; 2], &eye).unwrap();
    let mut p = Polytope::new();
    p.push(vec![1.0, 0.0, 0.0], Band::above(0.0));
    assert!(matches!(
        g.probability(&p, &Tolerance::default()),
        Err(ProbError::DimensionMismatch { .. })
    ));
    let mut p = Polytope::new();
    p.push(vec![1.0, f64::NAN], Band::above(0.0));
    assert!(matches!(
        g.probability(&p, &Tolerance::default()),
        Err(ProbError::NonFinite { .. })
    ));
    let mut p = Polytope::new();
    p.push(vec![1.0, 0.0], Band::above(f64::NAN));
    assert!(matches!(
        g.probability(&p, &Tolerance::default()),
        Err(ProbError::NonFinite { .. })
    ));
    let mut p = Polytope::new();
    for _ in 0..65 {
        p.push(vec![1.0, 0.0], Band::above(0.0));
    }
    assert!(matches!(
        g.probability(&p, &Tolerance::default()),
        Err(ProbError::TooLarge { .. })
    ));
    let bad_tol = Tolerance {
        abs: -1.0,
        ..Tolerance::default()
    };
    assert!(matches!(
        g.probability(&Polytope::new(), &bad_tol),
        Err(ProbError::InvalidArgument(_))
    ));
    assert!(matches!(
        g.shifted(&[1.0]),
        Err(ProbError::DimensionMismatch { .. })
    ));
    let mut out = [0.0; 2];
    assert!(g.try_sample(&[1.0], &mut out).is_err());
    g.sample(&[1.0], &mut out); // never panics on short input
}

fn three_row_problem() -> (Gaussian, Polytope) {
    let g = gaussian(
        &[0.2, -0.1, 0.3],
        &[1.0, 0.4, -0.2, 0.4, 2.0, 0.5, -0.2, 0.5, 1.5],
    );
    let mut p = Polytope::new();
    p.push(vec![1.0, 0.0, 0.0], Band::closed(-1.0, 1.0));
    p.push(vec![0.0, 1.0, 1.0], Band::below(1.2));
    p.push(vec![1.0, -1.0, 0.5], Band::above(-0.8));
    p.push(vec![0.3, 0.3, 1.0], Band::closed(-2.0, 2.5));
    (g, p)
}

#[test]
fn same_bits_on_repeated_calls() {
    let (g, p) = three_row_problem();
    let t = tol(1e-8, 0.0);
    let a = g.probability_detailed(&p, &t).unwrap();
    let b = g.probability_detailed(&p, &t).unwrap();
    let (g2, _) = three_row_problem();
    let c = g2.probability_detailed(&p, &t).unwrap();
    assert_eq!(a.method, Method::Nested);
    assert_eq!(a.estimate.value.to_bits(), b.estimate.value.to_bits());
    assert_eq!(a.estimate.error.to_bits(), b.estimate.error.to_bits());
    assert_eq!(a.estimate.value.to_bits(), c.estimate.value.to_bits());
    assert_eq!(a.points, c.points);
    // The lattice rule, too, gives the same bits for the same seed.
    let lattice = Options {
        exact_paths: false,
        ..Options::default()
    };
    let d = g.probability_with(&p, &t, &lattice).unwrap();
    let e = g2.probability_with(&p, &t, &lattice).unwrap();
    assert_eq!(d.method, Method::Lattice);
    assert_eq!(d.estimate.value.to_bits(), e.estimate.value.to_bits());
    assert_eq!(d.estimate.error.to_bits(), e.estimate.error.to_bits());
    // The two paths agree within their bounds.
    assert!(
        (a.estimate.value - d.estimate.value).abs() <= a.estimate.error + d.estimate.error,
        "nested {a:?} lattice {d:?}"
    );
}

#[test]
fn budget_exhaustion_and_best_effort() {
    let (g, p) = three_row_problem();
    // The lattice rule with 256 points per shift, and the nested rule with one interval
    // (21 evaluations), cannot reach 1e-15.
    for (exact_paths, max_points) in [(false, 12 * 256), (true, 21)] {
        let t = Tolerance {
            abs: 1e-15,
            rel: 0.0,
            max_points,
        };
        let strict = Options {
            exact_paths,
            ..Options::default()
        };
        match g.probability_with(&p, &t, &strict) {
            Err(ProbError::BudgetExhausted {
                achieved,
                requested,
                points,
            }) => {
                assert!(achieved > requested);
                assert!(points <= max_points.max(21 * 8), "{points} points");
            }
            other => panic!("expected BudgetExhausted, got {other:?}"),
        }
        let lenient = Options {
            best_effort: true,
            ..strict
        };
        let best = g.probability_with(&p, &t, &lenient).unwrap();
        assert!(best.estimate.error > 1e-15);
        // The honest error covers a tight rerun.
        let tight = g.probability_detailed(&p, &tol(1e-9, 0.0)).unwrap();
        assert_covers(
            "best effort",
            best.estimate.value,
            best.estimate.error,
            tight.estimate.value,
            tight.estimate.error,
        );
    }
    // A shifted copy equals a polytope with shifted bands.
    let shifted = g.shifted(&[0.5, 0.0, 0.0]).unwrap();
    let mut q = Polytope::new();
    q.push(vec![1.0, 0.0, 0.0], Band::closed(-0.5, 1.5));
    let a = shifted.probability(&q, &Tolerance::default()).unwrap();
    let mut q0 = Polytope::new();
    q0.push(vec![1.0, 0.0, 0.0], Band::closed(-1.0, 1.0));
    let b = g.probability(&q0, &Tolerance::default()).unwrap();
    assert!((a.value - b.value).abs() <= a.error + b.error);
}

#[test]
fn sample_maps_standard_normals() {
    // x = mean + L z reproduces the covariance: E[x x^T] over the 2 r sign patterns of
    // unit vectors z = +-sqrt(r) e_k is L L^T = Sigma (by construction of a factor).
    let cov = [2.0, 0.6, 0.0, 0.6, 1.0, 0.3, 0.0, 0.3, 0.5];
    let g = gaussian(&[1.0, 2.0, 3.0], &cov);
    let r = g.rank();
    let mut acc = [0.0; 9];
    for k in 0..r {
        for s in [-1.0, 1.0] {
            let mut z = vec![0.0; r];
            z[k] = s;
            let mut x = [0.0; 3];
            g.try_sample(&z, &mut x).unwrap();
            for i in 0..3 {
                for j in 0..3 {
                    acc[i * 3 + j] += 0.5 * (x[i] - g.mean()[i]) * (x[j] - g.mean()[j]);
                }
            }
        }
    }
    for (a, b) in acc.iter().zip(cov.iter()) {
        assert!((a - b).abs() < 1e-12);
    }
}

mod properties {
    use super::*;
    use proptest::prelude::*;

    fn arb_problem(max_r: usize) -> impl Strategy<Value = (Vec<f64>, Vec<f64>, Vec<Vec<f64>>)> {
        (2..=max_r).prop_flat_map(|r| {
            (
                proptest::collection::vec(-1.0..1.0_f64, r * r),
                proptest::collection::vec(-0.5..0.5_f64, r),
                proptest::collection::vec(proptest::collection::vec(-1.0..1.0_f64, r), 2..=3),
            )
                .prop_map(move |(b, mean, rows)| {
                    // cov = B B^T + 0.1 I: positive definite.
                    let mut cov = vec![0.0; r * r];
                    for i in 0..r {
                        for j in 0..r {
                            cov[i * r + j] =
                                (0..r).map(|k| b[i * r + k] * b[j * r + k]).sum::<f64>()
                                    + if i == j { 0.1 } else { 0.0 };
                        }
                    }
                    (cov, mean, rows)
                })
        })
    }

    proptest! {
        // A fixed seed: the same cases on every run; the saved regressions are replayed
        // first. (A hunt with random seeds, 600 cases, found nothing; with up to five rows
        // in five dimensions, 1500 cases, one cell of width 0.2 stopped at 3.2e-7 against
        // the 1e-7 asked after 4 million lattice points: an honest BudgetExhausted.)
        #![proptest_config(ProptestConfig {
            cases: 24,
            rng_seed: proptest::test_runner::RngSeed::Fixed(0x0b5e_55ed),
            ..ProptestConfig::default()
        })]

        /// The 3^k cells (below / inside / above for each of k rows) partition the space:
        /// their probabilities sum to 1 within the summed error bounds.
        #[test]
        fn partition_sums_to_one((cov, mean, rows) in arb_problem(4), cut in 0.1..1.0_f64) {
            let g = gaussian(&mean, &cov);
            let k = rows.len();
            let t = tol(1e-7, 0.0);
            let mut total = concord::prob::Estimate::zero();
            for cell in 0..3usize.pow(k as u32) {
                let mut p = Polytope::new();
                let mut c = cell;
                for row in &rows {
                    let band = match c % 3 {
                        0 => Band::below(-cut),
                        1 => Band::closed(-cut, cut),
                        _ => Band::above(cut),
                    };
                    c /= 3;
                    p.push(row.clone(), band);
                }
                total = total.add(g.probability(&p, &t).unwrap());
            }
            prop_assert!((total.value - 1.0).abs() <= total.error + 1e-14,
                "sum {} error {}", total.value, total.error);
        }

        /// Widening a band cannot lower the probability (beyond the error bounds), and
        /// scaling a row and its band by a positive number changes nothing.
        #[test]
        fn monotone_and_scale_invariant((cov, mean, rows) in arb_problem(5), widen in 0.0..1.0_f64, scale in 0.01..100.0_f64) {
            let g = gaussian(&mean, &cov);
            let t = tol(1e-7, 0.0);
            let mut narrow = Polytope::new();
            let mut wide = Polytope::new();
            let mut scaled = Polytope::new();
            for (i, row) in rows.iter().enumerate() {
                let (l, u) = (-0.3 - 0.2 * i as f64, 0.4 + 0.1 * i as f64);
                narrow.push(row.clone(), Band::closed(l, u));
                wide.push(row.clone(), Band::closed(l - widen, u + widen * 0.5));
                scaled.push(row.iter().map(|v| v * scale).collect(), Band::closed(l * scale, u * scale));
            }
            let a = g.probability(&narrow, &t).unwrap();
            let b = g.probability(&wide, &t).unwrap();
            let c = g.probability(&scaled, &t).unwrap();
            prop_assert!(b.value >= a.value - a.error - b.error);
            prop_assert!((c.value - a.value).abs() <= a.error + c.error);
        }
    }
}

#[test]
fn error_bound_covers_a_precise_rerun_in_99_percent() {
    // Random problems in 3 to 6 dimensions with 3 to 8 rows, loose tolerance, against a
    // rerun with a 100 times tighter tolerance: count how often the loose error covers the
    // difference (the target is at least 99 %).
    let mut rng = concord::prob::rng::SplitMix64::new(99);
    let mut covered = 0;
    let total = 200;
    for case in 0..total {
        let r = 3 + (case % 4);
        let m = 3 + (case % 6);
        let b = DMatrix::from_fn(r, r, |_, _| 2.0 * rng.next_f64() - 1.0);
        let cov = &b * b.transpose() + DMatrix::<f64>::identity(r, r) * 0.05;
        let mean: Vec<f64> = (0..r).map(|_| rng.next_f64() - 0.5).collect();
        let g = Gaussian::new(&mean, &cov).unwrap();
        let mut p = Polytope::new();
        for _ in 0..m {
            let row: Vec<f64> = (0..r).map(|_| 2.0 * rng.next_f64() - 1.0).collect();
            let l = -2.0 * rng.next_f64();
            let u = l + 0.5 + 3.0 * rng.next_f64();
            p.push(row, Band::closed(l, u));
        }
        let loose = g.probability(&p, &tol(1e-4, 0.0)).unwrap();
        // An independent rerun: other random shifts.
        let other = Options {
            seed: 0x5eed_0000 + case as u64,
            best_effort: true,
            ..Options::default()
        };
        let tight = g
            .probability_with(&p, &tol(1e-6, 0.0), &other)
            .unwrap()
            .estimate;
        if (loose.value - tight.value).abs() <= loose.error + tight.error {
            covered += 1;
        }
    }
    let rate = covered as f64 / total as f64;
    println!("error bound coverage: {covered} / {total} = {rate:.3}");
    assert!(rate >= 0.99, "coverage {rate}");
}

/// Two nearly parallel rows: `X >= 0` and `X + eps Y <= 0` for independent standard `X`,
/// `Y` hold on a wedge of angle `atan(eps)`, so the probability is `atan(eps) / (2 pi)`
/// (Sheppard 1899, the orthant formula with `asin(rho) = atan(eps) - pi / 2`). At
/// `eps = 1e-9` the cosine of the two directions rounds to 1, and a bivariate law built
/// from it alone would be degenerate (probability 0): the sine has to come from the
/// directions themselves.
#[test]
fn nearly_parallel_rows_keep_their_wedge() {
    let g = gaussian(&[0.0, 0.0], &[1.0, 0.0, 0.0, 1.0]);
    for eps in [1e-3, 1e-6, 1e-9, 1e-12, 1e-15] {
        let mut p = Polytope::new();
        p.push(vec![1.0, 0.0], Band::above(0.0));
        p.push(vec![1.0, eps], Band::below(0.0));
        let got = g.probability_detailed(&p, &tol(1e-15, 1e-10)).unwrap();
        let want = eps.atan() / (2.0 * PI);
        assert_covers(
            &format!("wedge eps {eps:e}"),
            got.estimate.value,
            got.estimate.error,
            want,
            0.0,
        );
        // Down to 1e-12 the two rows stay apart and the answer is relative; at 1e-15 they
        // are merged (directions equal to rounding) and only the bound has to hold.
        assert!(
            eps < 1e-13 || (got.estimate.value - want).abs() <= 1e-9 * want,
            "eps {eps:e}: {:e} vs {want:e}, relative accuracy lost",
            got.estimate.value
        );
    }
}

/// A rank-three polytope whose binding rows are two (the third channel sits half a million
/// sigmas away, so its rows hold with probability 1 to every digit): its probability is
/// the bivariate orthant of those two rows, from the owens-t crate (Patefield and Tandy
/// 2000, an implementation outside the project). The second row switches on in the far
/// tail of the first conditioning variable (between 3.3 and 3.7 sigma), a part of the
/// outer integral that holds 0.03 % of its mass; before the switch got breakpoints the
/// nested rule sampled around it and reported 0.99987487 ± 1e-13 for 0.99986031.
#[test]
fn switch_in_the_tail_of_the_outer_variable() {
    // x0 = -3.7363 + s + 1.01264 e0, x1 = s, x2 = 537475.69 + s + e2, with s ~ N(0, 0.1^2).
    let (m0, k0) = (-3.736314577585365, 1.0126370161766176f64);
    let s2 = 0.01;
    let cov = [
        s2 + k0 * k0,
        s2,
        s2, //
        s2,
        s2,
        s2, //
        s2,
        s2,
        s2 + 1.0,
    ];
    let g = gaussian(&[m0, 0.0, 537475.6921477073], &cov);
    let mut p = Polytope::new();
    p.push(vec![-1.0, 1.0, 0.0], Band::closed(0.0, f64::INFINITY));
    p.push(vec![-1.0, 0.0, 1.0], Band::closed(0.0, f64::INFINITY));
    p.push(vec![0.0, -1.0, 1.0], Band::closed(0.0, f64::INFINITY));
    p.push(vec![1.0, 0.0, 0.0], Band::below(-0.01));
    p.push(vec![1.0, -1.0, 0.0], Band::below(-0.01));
    let got = g.probability_detailed(&p, &tol(1e-12, 1e-10)).unwrap();
    // A = -x0 and B = x1 - x0: means -m0, variances s2 + k0^2 and k0^2, covariance k0^2.
    let (sa, sb) = ((s2 + k0 * k0).sqrt(), k0);
    let rho = k0 * k0 / (sa * sb);
    let want = owens_t::biv_norm((0.01 + m0) / sa, (0.01 + m0) / sb, rho);
    assert_covers(
        "tail switch",
        got.estimate.value,
        got.estimate.error,
        want,
        1e-13,
    );
}

#[test]
fn four_variables_past_the_lattice_budget_go_to_the_nested_rule() {
    // Polytopes of four conditioning variables at a tolerance the lattice rule cannot meet
    // within its first budget, so the nested rule is tried; whichever rule answers must
    // cover the closed forms. The ordering is settled by the nested rule; the orthant
    // would cost the nested rule more than the lattice still needs (its allowance), and
    // the nested rule does not settle the tail at 1e-8 relative: the lattice rule with the
    // whole budget answers those two.
    // (a) P(z_1 > ... > z_5) = 1 / 5! for iid standard normals (exchangeability, as above);
    // (b) the equicorrelated (rho = 1/2) orthant in four dimensions is 1 / 5 (as above);
    // (c) P(z_1 > ... > z_4 > 3) = P(Z > 3)^4 / 4!, P(Z > 3) from mpmath 1.3.0.
    let iid = |r: usize| -> Gaussian {
        let cov: Vec<f64> = (0..r * r)
            .map(|k| if k / r == k % r { 1.0 } else { 0.0 })
            .collect();
        gaussian(&vec![0.0; r], &cov)
    };
    let mut ordering = Polytope::new();
    ordering_rows(5, &mut ordering);
    let equi_cov: Vec<f64> = (0..16)
        .map(|k| if k / 4 == k % 4 { 1.0 } else { 0.5 })
        .collect();
    let mut orthant = Polytope::new();
    for i in 0..4 {
        orthant.push(unit(4, i), Band::above(0.0));
    }
    let mut tail = Polytope::new();
    ordering_rows(4, &mut tail);
    for i in 0..4 {
        tail.push(unit(4, i), Band::above(3.0));
    }
    let sf3 = 0.001_349_898_031_630_094_5_f64;
    let cases = [
        (
            "ordering of five",
            iid(5),
            ordering,
            1.0 / 120.0,
            tol(1e-12, 0.0),
            Method::Nested,
        ),
        (
            "equicorrelated orthant",
            gaussian(&[0.0; 4], &equi_cov),
            orthant,
            0.2,
            tol(1e-12, 0.0),
            Method::Lattice,
        ),
        (
            "ordered tail",
            iid(4),
            tail,
            sf3.powi(4) / 24.0,
            tol(0.0, 1e-8),
            Method::Lattice,
        ),
    ];
    for (name, g, p, exact, t, method) in cases {
        let r = g.probability_detailed(&p, &t).unwrap();
        println!(
            "{name}: {:?}, {} points, value {:e}, error {:.1e}, exact {exact:e}",
            r.method, r.points, r.estimate.value, r.estimate.error
        );
        assert_eq!(r.variables, 4, "{name}");
        assert_eq!(r.method, method, "{name}");
        assert_covers(
            name,
            r.estimate.value,
            r.estimate.error,
            exact,
            1e-16 * exact,
        );
        assert!(r.estimate.error <= t.abs.max(t.rel * exact), "{name}");
    }
}

#[test]
fn four_channels_with_comparators_agree_across_paths() {
    // Cross-check of two independent code paths (no outside reference exists for these):
    // four correlated channels, each within a band, and comparators |x_i - x_j| <= c on
    // random pairs, which make rows trade places (the kinks the nested rule is there for).
    // The default path at 1e-9 (lattice, then nested) against the plain lattice rule at
    // 1e-6: the difference must lie within the two bounds. (Run once with the plain
    // lattice at 1e-10 and 48 million points: the seven nested answers agreed with it to
    // 1.5e-10 or better, inside its bounds of 4e-11 to 1.9e-9.)
    let mut rng = concord::prob::rng::SplitMix64::new(2024);
    let mut nested = 0;
    for case in 0..12 {
        let b: Vec<f64> = (0..16).map(|_| 2.0 * rng.next_f64() - 1.0).collect();
        let shared = 0.5 * rng.next_f64();
        let cov: Vec<f64> = (0..16)
            .map(|k| {
                let (i, j) = (k / 4, k % 4);
                let bb: f64 = (0..4).map(|t| b[i * 4 + t] * b[j * 4 + t]).sum();
                0.3 * bb + shared + if i == j { 0.2 } else { 0.0 }
            })
            .collect();
        let mean: Vec<f64> = (0..4).map(|_| rng.next_f64() - 0.5).collect();
        let g = gaussian(&mean, &cov);
        let mut p = Polytope::new();
        for i in 0..4 {
            let half = 1.0 + 2.0 * rng.next_f64();
            p.push(unit(4, i), Band::closed(-half, half));
        }
        for i in 0..4 {
            for j in (i + 1)..4 {
                if rng.next_f64() < 0.7 {
                    let mut row = vec![0.0; 4];
                    row[i] = 1.0;
                    row[j] = -1.0;
                    let c = 0.3 + 1.5 * rng.next_f64();
                    p.push(row, Band::closed(-c, c));
                }
            }
        }
        let tight = g.probability_detailed(&p, &tol(1e-9, 0.0)).unwrap();
        let plain = g
            .probability_with(
                &p,
                &Tolerance {
                    abs: 1e-6,
                    rel: 0.0,
                    max_points: 2_000_000,
                },
                &Options {
                    exact_paths: false,
                    best_effort: true,
                    ..Options::default()
                },
            )
            .unwrap();
        println!(
            "case {case}: {:?} {:.12} +- {:.1e} ({} points); plain lattice {:.12} +- {:.1e}",
            tight.method,
            tight.estimate.value,
            tight.estimate.error,
            tight.points,
            plain.estimate.value,
            plain.estimate.error
        );
        if tight.method == Method::Nested {
            nested += 1;
        }
        assert_covers(
            &format!("case {case}"),
            tight.estimate.value,
            tight.estimate.error + plain.estimate.error,
            plain.estimate.value,
            1e-15,
        );
    }
    assert!(nested >= 3, "only {nested} cases reached the nested rule");
}

/// A thin wedge `0 <= z2 <= eps z1, z1 <= 3` of two independent standard normals, times
/// `|z3| <= 1` and `|z4| <= 1` of two more (four conditioning variables). The wedge's
/// probability is `int_0^3 phi(z) (Phi(eps z) - 1/2) dz = eps phi(0) (phi(0) - phi(3)) (1 + r)`
/// with `|r| <= (3 eps)^2 / 6` (the Taylor series of `Phi` at 0, common practice; `z phi(z)`
/// has the antiderivative `-phi(z)`), the other two factors libm's erf.
#[test]
fn thin_wedge_across_four_variables_matches_its_closed_form() {
    for eps in [1e-3, 1e-5, 1e-7] {
        let g = gaussian(&[0.0; 4], DMatrix::<f64>::identity(4, 4).as_slice());
        let mut p = Polytope::new();
        p.push(unit(4, 1), Band::above(0.0));
        p.push(vec![-eps, 1.0, 0.0, 0.0], Band::below(0.0));
        p.push(unit(4, 0), Band::below(3.0));
        p.push(unit(4, 2), Band::closed(-1.0, 1.0));
        p.push(unit(4, 3), Band::closed(-1.0, 1.0));
        let phi = |z: f64| (-0.5 * z * z).exp() / (2.0 * PI).sqrt();
        let side = libm::erf(std::f64::consts::FRAC_1_SQRT_2);
        let reference = eps * phi(0.0) * (phi(0.0) - phi(3.0)) * side * side;
        let ref_tol = reference * (3.0 * eps).powi(2) / 6.0 + 4.0 * f64::EPSILON * reference;
        let e = g.probability(&p, &tol(1e-9, 1e-3)).unwrap();
        assert_covers(
            &format!("wedge {eps:e}"),
            e.value,
            e.error,
            reference,
            ref_tol,
        );
    }
}

// A polytope with a sliver of support: six dimensions, eight random rows (drawn once by a
// hunt for unsound error bounds; the numbers are kept as drawn). Its probability is about
// 9e-17, and with the shifts of seed 0x5eed_007f no point of the first lattice round
// (768 points) lands inside.
#[rustfmt::skip]
const SLIVER_COV: [f64; 36] = [1.9130837954516091, 0.3585092340857604, 1.4529127086080205, -0.4234347871089683, 0.8963136825916691, 1.099321595251607, 0.3585092340857604, 1.5663826124582512, -0.19490371600633358, -0.4030576545812751, 0.15960587946714536, -0.34820625311803177, 1.4529127086080205, -0.19490371600633358, 2.347481351694182, 0.39554249365661237, 0.7345487738936436, 0.6973876367812258, -0.4234347871089683, -0.4030576545812751, 0.39554249365661237, 1.202648785163737, 0.6707150739019228, 0.1993793005550002, 0.8963136825916691, 0.15960587946714536, 0.7345487738936436, 0.6707150739019228, 2.658898819584829, 1.8919176354253555, 1.099321595251607, -0.34820625311803177, 0.6973876367812258, 0.1993793005550002, 1.8919176354253555, 2.1033385297320235];
const SLIVER_MEAN: [f64; 6] = [
    -1.225234685993938,
    0.36796832345630837,
    -1.3798806417203953,
    1.2814058596496452,
    0.43293812037254054,
    0.8398974813463971,
];
const SLIVER_ROWS: [([f64; 6], f64, f64); 8] = [
    (
        [
            -0.18034637232728712,
            -0.22393960919500278,
            -0.37254479736666535,
            -0.6547947263775109,
            0.5755842201591805,
            -0.386846050303326,
        ],
        -0.32082701338322583,
        -0.009712476769833778,
    ),
    (
        [
            0.9908207443598525,
            0.72542737440665,
            -0.9643870124640281,
            -0.5002446035046166,
            0.7019984317342143,
            -0.5759606656829033,
        ],
        -1.2736812695774888,
        -0.2386069099006729,
    ),
    (
        [
            0.1668658380457022,
            -0.016141202228825646,
            -0.003914646751630668,
            -0.9148616502109221,
            0.23810045797781632,
            -0.3037113694641058,
        ],
        -0.5721788057332962,
        -0.07642069072525204,
    ),
    (
        [
            0.11546690785996039,
            0.2757097665117805,
            0.34099887372682347,
            -0.40340449752641705,
            0.662522354345455,
            -0.022361118613946074,
        ],
        -1.1840321879294988,
        -0.16766151726528,
    ),
    (
        [
            -0.24833414329430803,
            -0.5299717535940387,
            -0.48353495287069914,
            -0.8693747564768006,
            -0.43019235015708124,
            0.27388487714999044,
        ],
        -1.0365627908340675,
        1.163900342336016,
    ),
    (
        [
            0.703139254928121,
            0.31952244215929904,
            0.6516075142802926,
            -0.41085970842725517,
            -0.7388122789008253,
            0.8264077214292722,
        ],
        -0.5063715712261763,
        0.37410653117906933,
    ),
    (
        [
            -0.9519620632354215,
            -0.6733897317117477,
            -0.9134795153021025,
            -0.2231937644197075,
            0.9416132550511063,
            -0.1143647535492136,
        ],
        -1.372816294221513,
        -0.9863616594209559,
    ),
    (
        [
            0.552583296667194,
            -0.70482856437065,
            0.9404068054918784,
            0.6494534765139555,
            -0.4395615320795323,
            0.18615567757389906,
        ],
        -1.7899321551052547,
        -1.2415260742058236,
    ),
];

/// Bounds on the sliver's probability from outside the engine: below, a cube inscribed in
/// the polytope in the coordinates of nalgebra's Cholesky factor (the deepest point and its
/// margin from the `microlp` crate's LP solver, the cube's probability a product of normal
/// intervals from libm); above, the smallest one-row slab (libm).
fn sliver_bounds(g_cov: &DMatrix<f64>) -> (f64, f64) {
    use microlp::{ComparisonOp, OptimizationDirection, Problem};
    let n = SLIVER_MEAN.len();
    let l = g_cov.clone().cholesky().expect("positive definite").l();
    let mut lp = Problem::new(OptimizationDirection::Maximize);
    let z: Vec<_> = (0..n).map(|_| lp.add_var(0.0, (-40.0, 40.0))).collect();
    let t = lp.add_var(1.0, (f64::NEG_INFINITY, f64::INFINITY));
    let mut slab = 1.0_f64;
    for (row, lower, upper) in SLIVER_ROWS {
        let shift: f64 = row.iter().zip(SLIVER_MEAN).map(|(a, m)| a * m).sum();
        let b: Vec<f64> = (0..n)
            .map(|k| (0..n).map(|i| row[i] * l[(i, k)]).sum())
            .collect();
        let norm = b.iter().map(|v| v * v).sum::<f64>().sqrt();
        let (lo, hi) = ((lower - shift) / norm, (upper - shift) / norm);
        slab = slab.min(ref_interval(lo, hi));
        let mut up: Vec<_> = z.iter().zip(&b).map(|(&v, &c)| (v, c / norm)).collect();
        up.push((t, 1.0));
        lp.add_constraint(up.as_slice(), ComparisonOp::Le, hi);
        let mut down: Vec<_> = z.iter().zip(&b).map(|(&v, &c)| (v, -c / norm)).collect();
        down.push((t, 1.0));
        lp.add_constraint(down.as_slice(), ComparisonOp::Le, -lo);
    }
    let solution = lp.solve().unwrap().into_solution().unwrap();
    // microlp meets constraints within 1e-7: a margin 1e-6 smaller is certainly inside.
    let margin = solution.objective() - 1e-6;
    assert!(margin > 0.0, "margin {margin}");
    let half = margin / (n as f64).sqrt();
    let cube: f64 = z
        .iter()
        .map(|&v| {
            let c = solution.var_value(v);
            ref_interval(c - half, c + half)
        })
        .product();
    (cube, slab)
}

#[test]
fn a_round_without_a_point_inside_is_not_reported_as_exact_zero() {
    // A round in which every point gives zero has a spread of zero; taken at its word it
    // reported 0 +- 0 here. The answer must lie within the bounds from outside the engine
    // (sliver_bounds), and, as a self-consistency check, cover the plain lattice path
    // (`exact_paths: false`, other shifts, best effort at 786 432 points, about 1e-16).
    let g = gaussian(&SLIVER_MEAN, &SLIVER_COV);
    let mut p = Polytope::new();
    for (row, lower, upper) in SLIVER_ROWS {
        p.push(row.to_vec(), Band::closed(lower, upper));
    }
    let options = Options {
        seed: 0x5eed_007f,
        ..Options::default()
    };
    let r = g.probability_with(&p, &tol(1e-17, 0.0), &options).unwrap();
    let e = r.estimate;
    let (below, above) = sliver_bounds(&DMatrix::from_row_slice(6, 6, &SLIVER_COV));
    assert!(below > 0.0);
    assert!(
        e.value + e.error >= below,
        "{r:?} below the cube's {below:e}"
    );
    assert!(
        e.value - e.error <= above,
        "{r:?} above the slab's {above:e}"
    );
    let plain = Options {
        seed: 7,
        exact_paths: false,
        best_effort: true,
    };
    let budget = Tolerance {
        abs: 0.0,
        rel: 0.0,
        max_points: 12 * 65_536,
    };
    let reference = g.probability_with(&p, &budget, &plain).unwrap().estimate;
    assert!(e.value > 0.0, "{r:?}");
    assert!(reference.value > 0.0, "{reference:?}");
    assert_covers("sliver", e.value, e.error, reference.value, reference.error);
}

#[test]
fn contradictory_rows_are_proven_empty() {
    // Each coordinate in [0, 1] and their sum above n + 1/2: no point satisfies all rows
    // (by hand), so the probability is 0. Relative tolerance only, which no spread of a
    // lattice can meet at zero: the proof (linear programming duality) answers before any
    // integration instead of after the whole budget.
    for n in 4..=6 {
        let g = equicorrelated(n, 0.3);
        let mut p = Polytope::new();
        for i in 0..n {
            p.push(unit(n, i), Band::closed(0.0, 1.0));
        }
        p.push(vec![1.0; n], Band::closed(n as f64 + 0.5, n as f64 + 1.0));
        let alternating: Vec<f64> = (0..n)
            .map(|i| if i % 2 == 0 { 1.0 } else { -0.5 })
            .collect();
        p.push(alternating, Band::closed(-1.0, 1.0));
        let r = g.probability(&p, &tol(0.0, 1e-3)).unwrap();
        assert_eq!(r.value, 0.0);
        assert!(r.error <= 1e-15, "{r:?}");
        let d = g.probability_detailed(&p, &tol(0.0, 1e-3)).unwrap();
        assert_eq!(d.method, Method::Empty);
        assert_eq!(d.points, 0);
    }
}

#[test]
fn polytope_of_measure_zero_gets_a_small_honest_bound() {
    // z1 >= 0, z2 >= 0, z1 + z2 <= 0 leaves only z1 = z2 = 0: probability 0 (by hand), but
    // not empty, so no proof of emptiness exists. Its inradius is zero, so the bound that
    // stands in for the lattice's error is tiny: a guard that such a polytope still
    // converges at once (not a reproduction of an old failure: 0 +- 0 was right here).
    let g = gaussian(&[0.0; 4], DMatrix::<f64>::identity(4, 4).as_slice());
    let mut p = Polytope::new();
    p.push(unit(4, 0), Band::above(0.0));
    p.push(unit(4, 1), Band::above(0.0));
    p.push(vec![1.0, 1.0, 0.0, 0.0], Band::below(0.0));
    p.push(unit(4, 2), Band::closed(-1.0, 1.0));
    p.push(vec![0.0, 0.0, 1.0, 1.0], Band::closed(-1.0, 2.0));
    p.push(unit(4, 3), Band::closed(-2.0, 1.0));
    let r = g.probability_detailed(&p, &tol(1e-9, 0.0)).unwrap();
    // The bound allows for the rounding of the row directions within 40 standard
    // deviations (about 1e-11 here), and the first round settles it.
    assert!(r.estimate.value <= 1e-10, "{r:?}");
    assert!(r.estimate.error <= 1e-10, "{r:?}");
    assert_eq!(r.points, 768, "{r:?}");
}
