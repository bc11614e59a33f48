use concord::prob::polytope::*;
use nalgebra::DMatrix;
use std::time::Instant;
fn run(name: &str, g: &Gaussian, p: &Polytope, exact: f64) {
    for abs in [1e-6, 1e-8, 1e-10] {
        let tol = Tolerance { abs, rel: 0.0, max_points: 4_000_000 };
        let t = Instant::now();
        let r = g.probability_best_effort(p, &tol).unwrap();
        println!("{name} abs {abs:e}: err {:.3e} actual {:.3e} pts {} {:?}", r.estimate.error, (r.estimate.value-exact).abs(), r.points, t.elapsed());
    }
}
fn main() {
    let (r12, r13, r23) = (-0.1, -0.1, -0.8);
    let cov = DMatrix::from_row_slice(3, 3, &[1.0, r12, r13, r12, 1.0, r23, r13, r23, 1.0]);
    let g = Gaussian::new(&[0.0; 3], &cov).unwrap();
    let mut p = Polytope::new();
    for i in 0..3 { let mut row = vec![0.0; 3]; row[i] = 1.0; p.push(row, Band::above(0.0)); }
    let exact = 0.125 + (f64::asin(r12) + f64::asin(r13) + f64::asin(r23)) / (4.0 * std::f64::consts::PI);
    run("tri", &g, &p, exact);
    let cov = DMatrix::from_row_slice(2, 2, &[1.0, 0.5, 0.5, 1.0]);
    let g = Gaussian::new(&[0.0; 2], &cov).unwrap();
    let mut p = Polytope::new();
    p.push(vec![1.0, 0.0], Band::above(0.0)); p.push(vec![0.0, 1.0], Band::above(0.0)); p.push(vec![1.0, 1.0], Band::above(-60.0));
    run("shep", &g, &p, 1.0/3.0);
    for r in [4usize, 6] {
        let g = Gaussian::new(&vec![0.0; r], &DMatrix::identity(r, r)).unwrap();
        let mut p = Polytope::new();
        for i in 0..r { for j in i+1..r { let mut row = vec![0.0; r]; row[i] = 1.0; row[j] = -1.0; p.push(row, Band::above(0.0)); } }
        let f: f64 = (1..=r).map(|k| k as f64).product();
        run(&format!("order{r}"), &g, &p, 1.0 / f);
    }
}
