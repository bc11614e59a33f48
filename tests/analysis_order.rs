//! The order-statistic engine (`prob::order`, chosen by `analysis::engine`) against the
//! general polytope engine on every structure both can compute, against closed forms of
//! order statistics and ranges, and against the Monte Carlo engine up to sixteen channels.

use concord::analysis::engine::{EngineChoice, FigureMethod};
use concord::analysis::montecarlo::{MonteCarloOptions, analyze_montecarlo};
use concord::analysis::{Analysis, AnalysisOptions, Outcome, analyze};
use concord::model::load_str;

fn run(text: &str, order: bool) -> Analysis {
    let arch = load_str(text, "test.toml").expect("valid file");
    let options = AnalysisOptions {
        engine: if order {
            EngineChoice::OrderStatistics
        } else {
            EngineChoice::Polytopes
        },
        ..AnalysisOptions::default()
    };
    analyze(&arch.model, &options, false).expect("analysis")
}

/// Every figure of `a` within the sum of both bounds (plus rounding) of `b`.
fn agree(a: &Outcome, b: &Outcome, what: &str) {
    for (x, y, name) in [
        (a.p_vd, b.p_vd, "p_vd"),
        (a.p_vu, b.p_vu, "p_vu"),
        (a.p_sd, b.p_sd, "p_sd"),
        (a.p_sq, b.p_sq, "p_sq"),
    ] {
        let diff = (x.value - y.value).abs();
        let allowed = x.error + y.error + 1e-14;
        assert!(
            diff <= allowed,
            "{what} {name}: order {:e} +- {:e} vs polytopes {:e} +- {:e}",
            x.value,
            x.error,
            y.value,
            y.error
        );
    }
}

/// `n` channels on one shared supply (gains vary), an output and checks as given, and
/// faults of every amplitude kind on channel `c0`.
fn chain(n: usize, output: &str, checks: &str, rho: Option<f64>) -> String {
    let names: Vec<String> = (0..n).map(|i| format!("c{i}")).collect();
    let mut s = String::from(
        "name = \"chain\"\nunit = \"mm\"\nfull_scale = [-20.0, 20.0]\n\n[sources.supply]\nsigma = 0.3\n\n",
    );
    for (i, name) in names.iter().enumerate() {
        let mean = 0.05 * (i as f64) - 0.05;
        let sigma = 0.4 + 0.05 * (i as f64);
        let gain = 1.0 - 0.1 * (i as f64 % 3.0);
        s.push_str(&format!(
            "[channels.{name}]\nmean = {mean}\nsigma = {sigma}\nfrom = {{ supply = {gain} }}\n\n"
        ));
    }
    if let Some(rho) = rho {
        s.push_str(&format!(
            "[[correlations]]\nbetween = [\"c0\", \"c1\"]\nrho = {rho}\n\n"
        ));
    }
    let all = names
        .iter()
        .map(|x| format!("\"{x}\""))
        .collect::<Vec<_>>()
        .join(", ");
    s.push_str(&format!("[output]\nkind = \"{output}\"\nof = [{all}]\n\n"));
    s.push_str(&checks.replace("ALL", &all));
    s.push_str(
        "\n[safety]\nlimit = 1.2\n\n\
         [faults.drift]\nfit = 10.0\nhits = { c0 = 1.0 }\nmode = \"add\"\n\
         amplitude = { gaussian = { mean = 0.3, sigma = 1.5 } }\n\n\
         [faults.supply_step]\nfit = 5.0\nhits = { supply = 1.0 }\nmode = \"add\"\n\
         amplitude = { gaussian = { mean = 0.0, sigma = 0.8 } }\n\n\
         [faults.stuck]\nfit = 3.0\nhits = { c0 = 1.0 }\nmode = \"replace\"\n\
         amplitude = { points = [[3.0, 0.5], [-0.9, 0.5]] }\n\n\
         [faults.frozen]\nfit = 2.0\nhits = { c1 = 1.0 }\nmode = \"replace\"\n\
         amplitude = { uniform = [-6.0, 6.0] }\n",
    );
    s
}

const RANGE: &str = "[checks.all]\nkind = \"spread\"\nof = [ALL]\nupper = 1.8\n";
const STAR: &str = "[checks.d1]\nkind = \"difference\"\nof = [\"c0\", \"c1\"]\nlimit = 1.5\n\n\
                    [checks.d2]\nkind = \"difference\"\nof = [\"c2\", \"c0\"]\nlower = -1.2\nupper = 1.6\n";

#[test]
fn order_engine_matches_the_polytope_engine_on_shared_structures() {
    // Independent path: the polytope engine (Genz's sequential conditioning, exact planar
    // slices, nested Gauss-Kronrod) integrates the same events as disjoint polytopes of the
    // correlated gaussian, with no use of counts or of the shared-term factorisation.
    let cases = [
        (2, "min", RANGE, None),
        (2, "max", "", None),
        (3, "median", RANGE, None),
        (3, "median", RANGE, Some(0.4)),
        (3, "min", STAR, None),
        (3, "median", STAR, Some(0.3)),
        (4, "max", RANGE, None),
    ];
    for (n, output, checks, rho) in cases {
        let text = chain(n, output, checks, rho);
        let fast = run(&text, true);
        let general = run(&text, false);
        let what = format!("{n} channels, {output}, checks {:?}, rho {rho:?}", checks.len());
        agree(&fast.baseline, &general.baseline, &format!("{what}, baseline"));
        assert_eq!(fast.baseline_method, FigureMethod::OrderStatistics, "{what}");
        for (a, b) in fast.sites.iter().zip(&general.sites) {
            assert_eq!(a.method, FigureMethod::OrderStatistics, "{what}, {}", a.name);
            assert_eq!(b.method, FigureMethod::Polytopes);
            agree(&a.outcome, &b.outcome, &format!("{what}, site {}", a.name));
        }
    }
}

#[test]
#[ignore]
fn debug_print() {
    let text = chain(2, "min", RANGE, None);
    for order in [true, false] {
        let a = run(&text, order);
        for s in &a.sites {
            println!("{order} {} {:?}", s.name, s.outcome);
        }
    }
}

#[test]
#[ignore]
fn debug_scan() {
    let base = chain(2, "min", RANGE, None);
    for k in 0..=120 {
        let f = -6.0 + 0.1 * k as f64;
        let text = base.replace(
            "amplitude = { uniform = [-6.0, 6.0] }",
            &format!("amplitude = {{ points = [[{f}, 1.0]] }}"),
        );
        let a = run(&text, true);
        let b = run(&text, false);
        let (x, y) = (a.sites[3].outcome, b.sites[3].outcome);
        let d = (x.p_vd.value - y.p_vd.value).abs().max((x.p_vu.value - y.p_vu.value).abs());
        if d > 1e-12 {
            println!("F {f:.2}: vd {:e} vs {:e}; vu {:e} vs {:e}", x.p_vd.value, y.p_vd.value, x.p_vu.value, y.p_vu.value);
        }
    }
}

#[test]
#[ignore]
fn debug_brute() {
    use concord::analysis::engine::{Engine, Scenario};
    use concord::analysis::scenario::FaultScenario;
    let base = chain(2, "min", RANGE, None);
    let arch = load_str(&base, "t.toml").unwrap();
    let m = &arch.model;
    for order in [true, false] {
        let options = AnalysisOptions { engine: if order { EngineChoice::OrderStatistics } else { EngineChoice::Polytopes }, ..AnalysisOptions::default() };
        let engine = Engine::new(m, &options);
        let sc = FaultScenario::new(m, &m.faults[3]).unwrap();
        let pieces = [(-6.0, -1.2), (-1.2, 1.2), (1.2, 6.0)];
        let mut total = 0.0;
        for (a, b) in pieces {
            let n = 4000;
            let h = (b - a) / n as f64;
            let mut s = 0.0;
            for k in 0..=n {
                let f = a + h * k as f64;
                let w = if k == 0 || k == n { 1.0 } else if k % 2 == 1 { 4.0 } else { 2.0 };
                let (o, _) = engine.outcome(Scenario::At(&sc, f)).unwrap();
                s += w * o.p_vd.value;
            }
            total += s * h / 3.0;
        }
        println!("brute {order}: {:e}", total / 12.0);
    }
}

#[test]
#[ignore]
fn debug_jumps() {
    use concord::analysis::engine::{Engine, Scenario};
    use concord::analysis::scenario::FaultScenario;
    let base = chain(2, "min", RANGE, None);
    let arch = load_str(&base, "t.toml").unwrap();
    let m = &arch.model;
    let engine = Engine::new(m, &AnalysisOptions { engine: EngineChoice::OrderStatistics, ..AnalysisOptions::default() });
    let sc = FaultScenario::new(m, &m.faults[3]).unwrap();
    let mut prev = None;
    for k in 0..=12000 {
        let f = -6.0 + 0.001 * k as f64;
        let (o, _) = engine.outcome(Scenario::At(&sc, f)).unwrap();
        if let Some(p) = prev {
            let d: f64 = o.p_vd.value - p;
            if d.abs() > 2e-3 {
                println!("jump at {f:.3}: {d:e}");
            }
        }
        prev = Some(o.p_vd.value);
    }
}

#[test]
#[ignore]
fn debug_vq() {
    use concord::analysis::engine::{Engine, Scenario};
    use concord::analysis::scenario::FaultScenario;
    use concord::prob::vector_quadrature::{VectorTolerance, integrate};
    let base = chain(2, "min", RANGE, None);
    let arch = load_str(&base, "t.toml").unwrap();
    let m = &arch.model;
    let engine = Engine::new(m, &AnalysisOptions { engine: EngineChoice::OrderStatistics, ..AnalysisOptions::default() });
    let sc = FaultScenario::new(m, &m.faults[3]).unwrap();
    let many = vec![-4.998714023216463, -4.948714023216462, -4.348714023216463, -3.1987140232164624, -3.1487140232164625, -2.8995713410721544, -2.849571341072154, -2.249571341072154, -1.9487140232164626, -1.85, -1.8, -1.3987140232164625, -1.3487140232164625, -1.2, -1.0995713410721542, -1.049571341072154, -0.800428658927846, -0.7504286589278459, -0.15042865892784585, -0.05, 0.0, 0.15042865892784585, 0.7004286589278459, 0.7504286589278459, 0.9995713410721541, 1.049571341072154, 1.2, 1.2987140232164625, 1.3487140232164625, 1.75, 1.8, 1.9487140232164626, 2.249571341072154, 2.799571341072154, 2.849571341072154, 3.0987140232164627, 3.1487140232164625, 4.348714023216463, 4.8987140232164625, 4.948714023216462];
    for (bp, rel) in [(vec![-1.2, 1.2], 1e-7), (many, 1e-7), (vec![], 1e-7)] {
        let r = integrate(
            |f| {
                let (o, _) = engine.outcome(Scenario::At(&sc, f)).unwrap();
                Ok(([o.p_vd.value], [o.p_vd.error]))
            },
            -6.0,
            6.0,
            &bp,
            &VectorTolerance { abs: 1.2e-10, rel: [rel], max_intervals: 400 },
        )
        .unwrap();
        println!("vq {bp:?} {rel}: {:e} +- {:e} ({} evals, conv {})", r.value[0] / 12.0, r.error[0] / 12.0, r.evaluations, r.converged);
    }
}

#[test]
#[ignore]
fn debug_timing() {
    let cases = [
        (2, "min", RANGE, None),
        (3, "median", RANGE, None),
        (3, "median", RANGE, Some(0.4)),
        (3, "min", STAR, None),
        (4, "max", RANGE, None),
    ];
    for (n, output, checks, rho) in cases {
        let text = chain(n, output, checks, rho);
        for order in [true] {
            let t = std::time::Instant::now();
            let a = run(&text, order);
            println!("{n} {output} {} {rho:?} order={order}: {:?} {:?}", checks.len(), t.elapsed(), a.sites.iter().map(|s| s.method).collect::<Vec<_>>());
        }
    }
}

#[test]
#[ignore]
fn debug_evals() {
    use concord::prob::order::*;
    for n in [3usize, 5, 9, 15] {
        let g = SharedGaussian {
            mean: (0..n).map(|i| 0.05 * i as f64).collect(),
            own_sd: vec![0.5; n],
            shared: vec![vec![0.3; n]],
            uniform: None,
        };
        let q = Question {
            output: Rank { of: (0..n).collect(), k: n.div_ceil(2) },
            safe_lower: -1.2,
            safe_upper: 1.2,
            agreement: Agreement::Range { of: (0..n).collect(), limit: 1.8 },
        };
        let t = std::time::Instant::now();
        let f = figures(&g, &q, &Accuracy { abs: 1e-11, rel: 1e-6, max_intervals: 400 }).unwrap();
        println!("n {n}: {:?} evals {} vu {:e} +- {:e} conv {}", t.elapsed(), f.evaluations, f.violated_undetected.value, f.violated_undetected.error, f.converged);
    }
}
