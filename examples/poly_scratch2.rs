use concord::prob::polytope::*;
use nalgebra::DMatrix;
fn main() {
    for rho in [-0.9, 0.0, 0.5, 0.95] {
        let cov = DMatrix::from_row_slice(2, 2, &[1.0, rho, rho, 1.0]);
        let g = Gaussian::new(&[0.0; 2], &cov).unwrap();
        let mut p = Polytope::new();
        p.push(vec![1.0, 0.0], Band::above(0.0));
        p.push(vec![0.0, 1.0], Band::above(0.0));
        let exact = 0.25 + rho.asin() / (2.0 * std::f64::consts::PI);
        for maxp in [12 * 64, 12 * 1024, 12 * 16384] {
            let tol = Tolerance { abs: 0.0, rel: 0.0, max_points: maxp };
            let r = g.probability_best_effort(&p, &tol).unwrap();
            println!("rho {rho} N {maxp}: err {:.3e} est {:.3e}", (r.estimate.value - exact).abs(), r.estimate.error);
        }
    }
}
