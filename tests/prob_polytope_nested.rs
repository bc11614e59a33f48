//! The nested rule of src/prob/polytope/nested.rs: a switch in the tail of the outer
//! variable, four variables handed on by the lattice rule, and rows trading places, against
//! the `owens-t` crate, closed forms and the plain lattice rule. Every check names its
//! source.

use concord::prob::polytope::{Band, ErrorTarget, Gaussian, IntegrationPath, Options, Polytope};

mod common;

use common::{assert_covers, gaussian, ordering_rows, tol, unit};

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
            IntegrationPath::Nested,
        ),
        (
            "equicorrelated orthant",
            gaussian(&[0.0; 4], &equi_cov),
            orthant,
            0.2,
            tol(1e-12, 0.0),
            IntegrationPath::Lattice,
        ),
        (
            "ordered tail",
            iid(4),
            tail,
            sf3.powi(4) / 24.0,
            tol(0.0, 1e-8),
            IntegrationPath::Lattice,
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
                &ErrorTarget {
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
        if tight.method == IntegrationPath::Nested {
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
