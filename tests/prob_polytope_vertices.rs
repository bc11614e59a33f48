//! The vertex projections of src/prob/polytope/vertices.rs, the nested rule's breakpoints:
//! cones of many faces in three dimensions against Girard's theorem. Every check names its
//! source.

use std::f64::consts::PI;

use concord::prob::polytope::{Band, Polytope};

mod common;

use common::{assert_covers, gaussian, tol};

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
