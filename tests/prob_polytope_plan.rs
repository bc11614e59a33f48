//! The conditioning plan of src/prob/polytope/plan.rs: the lattice integrand (forced with
//! `exact_paths` off), the exact pair tail of two conditioning variables and the draws from
//! the tail, against Sheppard's formula, angle fractions and exchangeability. Every check
//! names its source.

use std::f64::consts::PI;

use concord::prob::polytope::{Band, IntegrationPath, Options, Polytope};

mod common;

use common::{assert_covers, gaussian, ordering_rows, rho_grid, sheppard, tol, unit};

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
        assert_eq!(r.method, IntegrationPath::Lattice);
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
        assert_eq!(r.method, IntegrationPath::Planar);
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
