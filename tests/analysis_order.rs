//! The order-statistic engine (`prob::order`, chosen by `analysis::engine`) against the
//! general polytope engine on every structure both can compute, against closed forms of
//! order statistics and ranges, and against the Monte Carlo engine up to sixteen channels.

use concord::analysis::engine::{EngineChoice, FigureMethod};
use concord::analysis::montecarlo::{MonteCarloOptions, verify};
use concord::analysis::{Analysis, AnalysisOptions, Outcome, analyze};
use concord::model::load_str;
use concord::prob::order::{Accuracy, Agreement, Question, Rank, SharedGaussian, figures};

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

/// The chain without its shared supply and the supply's fault.
fn without_supply(text: &str) -> String {
    let mut out = String::new();
    let mut skip = false;
    for line in text.lines() {
        if line.starts_with('[') {
            skip = line == "[sources.supply]" || line == "[faults.supply_step]";
        }
        if skip || line.starts_with("from = ") {
            continue;
        }
        out.push_str(line);
        out.push('\n');
    }
    out
}

const RANGE: &str = "[checks.all]\nkind = \"range\"\nof = [ALL]\nupper = 1.8\n";
/// Fixed windows on single channels: `c0` above -1.6 (a lower limit only), `c1` within
/// [-1.3, 1.9] through a gain of 2 (`2 c1` within [-2.6, 3.8]).
const BANDS: &str = "[checks.c0_low]\nkind = \"linear\"\nof = { c0 = 1.0 }\nlower = -1.6\nupper = 1e9\n\n\
                     [checks.c1_window]\nkind = \"linear\"\nof = { c1 = 2.0 }\nlower = -2.6\nupper = 3.8\n";

fn range_and_bands() -> String {
    format!("{RANGE}\n{BANDS}")
}

fn star_and_bands() -> String {
    format!("{STAR}\n{BANDS}")
}
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
        // Even counts: the mean of the middle two (the median of two is their mean, whose
        // lower member is the range's pivot itself).
        (2, "median", RANGE, None),
        (4, "median", RANGE, None),
        (4, "median", STAR, Some(0.3)),
        (4, "median", "", None),
        // Checks of single channels against fixed limits (a plausibility window per
        // channel), alone and beside a range or star check.
        (3, "max", BANDS, None),
        (2, "median", BANDS, None),
        (3, "median", &range_and_bands(), None),
        (3, "min", &star_and_bands(), None),
    ];
    for (n, output, checks, rho) in cases {
        let mut text = chain(n, output, checks, rho);
        if rho.is_some() {
            // The correlation is the one shared term: no supply (two terms go to polytopes).
            text = without_supply(&text);
        }
        let fast = run(&text, true);
        let general = run(&text, false);
        let what = format!(
            "{n} channels, {output}, checks {:?}, rho {rho:?}",
            checks.len()
        );
        agree(
            &fast.baseline,
            &general.baseline,
            &format!("{what}, baseline"),
        );
        assert_eq!(
            fast.baseline_method,
            FigureMethod::OrderStatistics,
            "{what}"
        );
        for (a, b) in fast.sites.iter().zip(&general.sites) {
            assert_eq!(
                a.method,
                FigureMethod::OrderStatistics,
                "{what}, {}",
                a.name
            );
            assert_eq!(b.method, FigureMethod::Polytopes);
            agree(&a.outcome, &b.outcome, &format!("{what}, site {}", a.name));
        }
    }
}

/// `n` channels of equal own noise on one shared supply (equal gains), means apart, with
/// the given output (a `[output]` body) and checks, and the faults that keep the channels
/// evenly noisy: a gaussian drift and a two-point offset on `c0`, a step of the supply.
fn even_chain(n: usize, sigmas: &[f64], output: &str, checks: &str) -> String {
    let names: Vec<String> = (0..n).map(|i| format!("c{i}")).collect();
    let mut s = String::from(
        "name = \"even\"\nunit = \"mm\"\nfull_scale = [-20.0, 20.0]\n\n[sources.supply]\nsigma = 0.3\n\n",
    );
    for (i, name) in names.iter().enumerate() {
        let mean = 0.04 * (i as f64) - 0.06;
        let sigma = sigmas[i % sigmas.len()];
        s.push_str(&format!(
            "[channels.{name}]\nmean = {mean}\nsigma = {sigma}\nfrom = {{ supply = 1.0 }}\n\n"
        ));
    }
    let all = names
        .iter()
        .map(|x| format!("\"{x}\""))
        .collect::<Vec<_>>()
        .join(", ");
    s.push_str(&format!("[output]\n{}\n\n", output.replace("ALL", &all)));
    s.push_str(&checks.replace("ALL", &all));
    s.push_str(
        "\n[safety]\nlimit = 1.0\n\n\
         [faults.drift]\nfit = 10.0\nhits = { c0 = 1.0 }\nmode = \"add\"\n\
         amplitude = { gaussian = { mean = 0.3, sigma = 1.5 } }\n\n\
         [faults.offset]\nfit = 4.0\nhits = { c0 = 1.0 }\nmode = \"add\"\n\
         amplitude = { points = [[0.8, 0.5], [-2.5, 0.5]] }\n\n\
         [faults.supply_step]\nfit = 5.0\nhits = { supply = 1.0 }\nmode = \"add\"\n\
         amplitude = { gaussian = { mean = 0.0, sigma = 0.8 } }\n",
    );
    s
}

/// Difference checks of every other channel against `c0` (a star), limit 1.4.
fn star_checks(n: usize) -> String {
    (1..n)
        .map(|i| {
            format!(
                "[checks.d{i}]\nkind = \"difference\"\nof = [\"c{i}\", \"c0\"]\nlimit = 1.4\n\n"
            )
        })
        .collect()
}

#[test]
fn weighted_outputs_match_the_polytope_engine() {
    // Independent path: the polytope engine integrates the correlated gaussian of output
    // and checks as it stands; the order-statistic path uses the independence of a
    // precision-weighted output from the checked differences (prob/order/weighted.rs).
    let mean = "kind = \"mean\"\nof = [ALL]";
    // Weights proportional to 1 / sigma^2 for sigmas 0.4, 0.5, 0.4, 0.5.
    let (a, b) = (1.0 / 0.16, 1.0 / 0.25);
    let (wa, wb) = (a / (2.0 * (a + b)), b / (2.0 * (a + b)));
    let precision =
        format!("kind = \"weighted\"\nof = {{ c0 = {wa}, c1 = {wb}, c2 = {wa}, c3 = {wb} }}");
    let cases: Vec<(usize, Vec<f64>, String, String)> = vec![
        (2, vec![0.45], mean.into(), star_checks(2)),
        (3, vec![0.45], mean.into(), RANGE.into()),
        (4, vec![0.45], mean.into(), star_checks(4)),
        (4, vec![0.4, 0.5], precision, RANGE.into()),
        (3, vec![0.3, 0.5, 0.7], mean.into(), String::new()),
    ];
    for (n, sigmas, output, checks) in cases {
        let text = even_chain(n, &sigmas, &output, &checks);
        let fast = run(&text, true);
        let general = run(&text, false);
        let what = format!("{n} channels, sigmas {sigmas:?}, output {output:?}");
        assert_eq!(
            fast.baseline_method,
            FigureMethod::OrderStatistics,
            "{what}"
        );
        agree(
            &fast.baseline,
            &general.baseline,
            &format!("{what}, baseline"),
        );
        for (x, y) in fast.sites.iter().zip(&general.sites) {
            assert_eq!(
                x.method,
                FigureMethod::OrderStatistics,
                "{what}, {}",
                x.name
            );
            agree(&x.outcome, &y.outcome, &format!("{what}, site {}", x.name));
        }
    }
}

#[test]
fn mean_of_many_equal_channels_agrees_with_sampling() {
    // Independent path: the Monte Carlo engine with 99.9 % Wilson intervals (Wilson 1927),
    // for the mean of 8 and of 16 channels with difference checks against one channel.
    let mc = MonteCarloOptions {
        samples: 100_000,
        seed: 0x5eed_0808,
    };
    for n in [8usize, 16] {
        let text = even_chain(n, &[0.45], "kind = \"mean\"\nof = [ALL]", &star_checks(n));
        let arch = load_str(&text, "mean.toml").expect("valid file");
        let exact = analyze(&arch.model, &AnalysisOptions::default(), false).expect("analysis");
        assert_eq!(
            exact.baseline_method,
            FigureMethod::OrderStatistics,
            "n {n}"
        );
        for site in &exact.sites {
            assert_eq!(
                site.method,
                FigureMethod::OrderStatistics,
                "n {n}, {}",
                site.name
            );
        }
        let rows = verify(&arch.model, &exact, &mc).expect("sampling");
        for r in &rows {
            assert!(r.agrees, "n {n}: {r:?}");
        }
    }
}

/// `n` independent identical channels N(0, 1) (no shared source) whose output is the
/// median; no checks.
fn iid_median(n: usize, upper: f64) -> String {
    let mut s = "name = \"iid\"\nunit = \"V\"\nfull_scale = [-10.0, 10.0]\n\n".to_string();
    let names: Vec<String> = (0..n).map(|i| format!("c{i}")).collect();
    for name in &names {
        s.push_str(&format!("[channels.{name}]\nsigma = 1.0\n\n"));
    }
    let all = names
        .iter()
        .map(|x| format!("\"{x}\""))
        .collect::<Vec<_>>()
        .join(", ");
    s.push_str(&format!(
        "[output]\nkind = \"median\"\nof = [{all}]\n\n[safety]\nlower = -1e6\nupper = {upper}\n"
    ));
    s
}

fn binomial(n: u64, k: u64) -> f64 {
    (0..k).fold(1.0, |acc, i| acc * (n - i) as f64 / (i + 1) as f64)
}

#[test]
fn median_of_independent_channels_exceeds_as_a_binomial_sum() {
    // Common practice (derived here): the median of n = 2m + 1 independent readings exceeds
    // t exactly when at least m + 1 of them do, so with q = P(X > t) = 1 - Phi(t),
    // P(median > t) = sum_{j = m+1}^{n} C(n, j) q^j (1 - q)^(n - j). With no checks every
    // violation is undetected: p_vu is that sum. q from libm's erfc (the msun code,
    // independent of concord's normal CDF; statrs' erfc is off by about 1e-12 here).
    for n in [5usize, 7, 9, 15] {
        for t in [0.5, 1.0, 2.0] {
            let q = 0.5 * libm::erfc(t / std::f64::consts::SQRT_2);
            let m = (n as u64 - 1) / 2;
            let want: f64 = (m + 1..=n as u64)
                .map(|j| {
                    binomial(n as u64, j) * q.powi(j as i32) * (1.0 - q).powi((n as u64 - j) as i32)
                })
                .sum();
            let a = run(&iid_median(n, t), true);
            assert_eq!(a.baseline_method, FigureMethod::OrderStatistics);
            let got = a.baseline.p_vu;
            // erfc is good to about 1 ulp; the sum has n terms.
            let allowed = got.error + 1e-13 * want.max(1e-300) * n as f64 + 1e-15;
            assert!(
                (got.value - want).abs() <= allowed,
                "n {n}, t {t}: {} +- {} vs binomial {want}",
                got.value,
                got.error
            );
        }
    }
}

#[test]
fn even_median_of_independent_channels_matches_the_joint_density_of_the_middle_pair() {
    // Reference (David and Nagaraja 2003, Order Statistics, eq. 2.2.1): for n = 2m
    // independent N(0,1), the middle pair (U, V) = (X_(m), X_(m+1)) has the density
    // n! / ((m-1)! (m-1)!) Phi(u)^(m-1) phi(u) phi(v) S(v)^(m-1) on u < v, S = 1 - Phi.
    // The median (U + V)/2 exceeds t when V > max(u, 2t - u); the integral over v is
    // S(a)^m / m in closed form, so
    // P = n! / ((m-1)! m!) int Phi(u)^(m-1) phi(u) S(max(u, 2t - u))^m du,
    // done here by composite Simpson on [-10, 10] split at u = t, with Phi from libm's erfc
    // (independent of concord's normal CDF and of its quadrature).
    let phi = |x: f64| (-0.5 * x * x).exp() / (2.0 * std::f64::consts::PI).sqrt();
    let upper = |x: f64| 0.5 * libm::erfc(x / std::f64::consts::SQRT_2);
    let simpson = |f: &dyn Fn(f64) -> f64, a: f64, b: f64| {
        let steps = 20_000;
        let h = (b - a) / steps as f64;
        let mut sum = f(a) + f(b);
        for i in 1..steps {
            sum += f(a + h * i as f64) * if i % 2 == 1 { 4.0 } else { 2.0 };
        }
        sum * h / 3.0
    };
    for n in [2usize, 4, 6, 8] {
        let m = n / 2;
        let factor = (1..=n).map(|i| i as f64).product::<f64>()
            / ((1..m).map(|i| i as f64).product::<f64>()
                * (1..=m).map(|i| i as f64).product::<f64>());
        for t in [0.3, 1.0, 1.8] {
            let g = |u: f64| {
                (1.0 - upper(u)).powi(m as i32 - 1)
                    * phi(u)
                    * upper(u.max(2.0 * t - u)).powi(m as i32)
            };
            let want = factor * (simpson(&g, -10.0, t) + simpson(&g, t, 10.0));
            let a = run(&iid_median(n, t), true);
            assert_eq!(a.baseline_method, FigureMethod::OrderStatistics);
            let got = a.baseline.p_vu;
            // Simpson with h = 1e-3 on these smooth pieces: error of order h^4, below 1e-11.
            assert!(
                (got.value - want).abs() <= got.error + 1e-11 * want.max(1e-3),
                "n {n}, t {t}: {} +- {} vs reference {want}",
                got.value,
                got.error
            );
        }
    }
}

/// `P(range of n independent N(0,1) > r)` from the order-statistic engine: the output is
/// one channel with no safety limit, so the false-alarm figure `p_sd` is the range check
/// firing.
fn range_exceeds(n: usize, r: f64) -> (f64, f64) {
    let g = SharedGaussian {
        mean: vec![0.0; n],
        own_sd: vec![1.0; n],
        shared: Vec::new(),
        uniform: None,
    };
    let q = Question {
        output: Rank::single(vec![0], 1).into(),
        safe_lower: f64::NEG_INFINITY,
        safe_upper: f64::INFINITY,
        agreement: Agreement::Range {
            of: (0..n).collect(),
            limit: r,
        },
        bands: Vec::new(),
        detection_needed: 1,
    };
    let f = figures(
        &g,
        &q,
        &Accuracy {
            abs: 1e-13,
            rel: 1e-10,
            max_intervals: 400,
        },
    )
    .expect("figures");
    (f.safe_detected.value, f.safe_detected.error)
}

#[test]
fn mean_range_of_normal_samples_matches_the_control_chart_constant_d2() {
    // E[R] = int_0^inf P(R > r) dr for the range R of n independent standard normals: the
    // control-chart constant d2(n). n = 2 and 3 have closed forms, 2/sqrt(pi) and
    // 3/sqrt(pi) (common practice: E|X1 - X2| for N(0, 2), and Tippett 1925); the others
    // are quoted from memory to three decimals as tabulated for Shewhart charts (ASTM
    // E2587, Montgomery's Introduction to Statistical Quality Control, appendix VI).
    // Composite Gauss-Legendre on [0, 12] in pieces of 0.25 (P(R > 12) < n * 1e-32).
    let table = [
        (2usize, 2.0 / std::f64::consts::PI.sqrt(), 1e-9),
        (3, 3.0 / std::f64::consts::PI.sqrt(), 1e-9),
        (4, 2.059, 6e-4),
        (5, 2.326, 6e-4),
        (6, 2.534, 6e-4),
        (8, 2.847, 6e-4),
        (10, 3.078, 6e-4),
    ];
    // 5-point Gauss-Legendre nodes and weights on [-1, 1] (Abramowitz and Stegun 25.4.29).
    let nodes = [
        (0.0, 0.568_888_888_888_888_9),
        (0.538_469_310_105_683_1, 0.478_628_670_499_366_5),
        (-0.538_469_310_105_683_1, 0.478_628_670_499_366_5),
        (0.906_179_845_938_664, 0.236_926_885_056_189_1),
        (-0.906_179_845_938_664, 0.236_926_885_056_189_1),
    ];
    for (n, d2, allowed) in table {
        let mut mean = 0.0;
        let mut bound = 0.0;
        let h = 0.25;
        for piece in 0..48 {
            let centre = h * (piece as f64 + 0.5);
            for (x, w) in nodes {
                let (p, e) = range_exceeds(n, centre + 0.5 * h * x);
                mean += 0.5 * h * w * p;
                bound += 0.5 * h * w * e;
            }
        }
        assert!(
            (mean - d2).abs() <= allowed + bound,
            "n {n}: mean range {mean} (+- {bound}) vs d2 {d2}"
        );
    }
}

/// `n` channels on one supply, their median (for an even `n` the mean of the middle two),
/// a range check over all, one known-sigma drift on the first channel and a stuck channel.
fn wide_chain(n: usize) -> String {
    let text = chain(n, "median", RANGE, None);
    // Keep the two fault kinds the sampler and the exact engine treat alike in cost.
    let cut = text.find("[faults.frozen]").unwrap_or(text.len());
    text[..cut].to_string()
}

#[test]
fn own_bands_agree_with_sampling_on_many_channels() {
    // Independent path: the Monte Carlo engine with 99.9 % Wilson intervals (Wilson 1927):
    // the median of 9 with a range check and own bands, the median of 8 with own bands.
    let mc = MonteCarloOptions {
        samples: 100_000,
        seed: 0x5eed_0b0b,
    };
    for (n, checks) in [(9usize, range_and_bands()), (8, BANDS.to_string())] {
        let text = chain(n, "median", &checks, None);
        let cut = text.find("[faults.frozen]").unwrap_or(text.len());
        let arch = load_str(&text[..cut], "bands.toml").expect("valid file");
        let exact = analyze(&arch.model, &AnalysisOptions::default(), false).expect("analysis");
        assert_eq!(
            exact.baseline_method,
            FigureMethod::OrderStatistics,
            "n {n}"
        );
        let rows = verify(&arch.model, &exact, &mc).expect("sampling");
        for r in &rows {
            assert!(r.agrees, "n {n}: {r:?}");
        }
    }
}

#[test]
fn order_engine_agrees_with_sampling_up_to_sixteen_channels() {
    // Independent path: the Monte Carlo engine (Box-Muller normals, the output and checks
    // evaluated from the file's formulas) with 99.9 % Wilson intervals (Wilson 1927); every
    // exact figure, widened by its bound, must meet its interval.
    let mc = MonteCarloOptions {
        samples: 100_000,
        seed: 0x5eed_0016,
    };
    for n in [4usize, 9, 16] {
        let arch = load_str(&wide_chain(n), "wide.toml").expect("valid file");
        let exact = analyze(&arch.model, &AnalysisOptions::default(), false).expect("analysis");
        assert_eq!(
            exact.baseline_method,
            FigureMethod::OrderStatistics,
            "n {n}"
        );
        let rows = verify(&arch.model, &exact, &mc).expect("sampling");
        for r in &rows {
            assert!(r.agrees, "n {n}: {r:?}");
        }
    }
}

/// A longer hunt, run by hand: random three- and four-channel chains (output, range or star
/// checks, thresholds, safety limit drawn at random), the order-statistic engine against the
/// polytope engine at a tolerance 1e4 times tighter, every figure within the sum of both
/// bounds. `CONCORD_FUZZ_CASES` sets the count (default 40), `CONCORD_FUZZ_SEED` the stream.
/// Run: `cargo test --release --test analysis_order hunt -- --ignored --nocapture`.
#[test]
#[ignore]
fn hunt_against_the_polytope_engine() {
    use concord::prob::rng::SplitMix64;
    let cases: usize = std::env::var("CONCORD_FUZZ_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(40);
    let seed: u64 = std::env::var("CONCORD_FUZZ_SEED")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(77);
    let mut rng = SplitMix64::new(seed);
    let mut u = || rng.next_f64();
    let mut worst = 0.0f64;
    for case in 0..cases {
        let n = 3 + (u() * 2.0) as usize;
        let output = ["min", "max", "median"][(u() * 3.0) as usize];
        let star = u() < 0.5;
        let t = 0.5 + 2.5 * u();
        let checks = if star {
            format!(
                "[checks.d1]\nkind = \"difference\"\nof = [\"c0\", \"c1\"]\nlimit = {t}\n\n\
                 [checks.d2]\nkind = \"difference\"\nof = [\"c2\", \"c0\"]\nlower = {}\nupper = {}\n",
                -t * (0.5 + u()),
                t * (0.5 + u())
            )
        } else {
            format!("[checks.all]\nkind = \"range\"\nof = [ALL]\nupper = {t}\n")
        };
        let limit = 0.5 + 2.0 * u();
        let text = chain(n, output, &checks, None).replace(
            "limit = 1.2\n\n[faults",
            &format!("limit = {limit}\n\n[faults"),
        );
        let fast = run(&text, true);
        let arch = load_str(&text, "hunt.toml").expect("valid file");
        let tight = AnalysisOptions {
            engine: EngineChoice::Polytopes,
            polytope_abs: 1e-15,
            polytope_rel: 1e-8,
            ..AnalysisOptions::default()
        };
        let general = analyze(&arch.model, &tight, false).expect("analysis");
        let pairs = std::iter::once((&fast.baseline, &general.baseline)).chain(
            fast.sites
                .iter()
                .map(|s| &s.outcome)
                .zip(general.sites.iter().map(|s| &s.outcome)),
        );
        for (a, b) in pairs {
            for (x, y) in [
                (a.p_vd, b.p_vd),
                (a.p_vu, b.p_vu),
                (a.p_sd, b.p_sd),
                (a.p_sq, b.p_sq),
            ] {
                let ratio = (x.value - y.value).abs() / (x.error + y.error + 1e-14);
                worst = worst.max(ratio);
                assert!(
                    ratio <= 1.0,
                    "case {case}, {n} channels, {output}, star {star}: {:e} +- {:e} vs {:e} +- {:e}",
                    x.value,
                    x.error,
                    y.value,
                    y.error
                );
            }
        }
    }
    println!("{cases} cases, largest difference / bounds {worst}");
}

/// `n` channels, each with its own plausibility window `[-window, window]` (a check of one
/// channel), the median output, detection on `k` firing windows; `source` the sigma of a
/// shared supply (0: none) and `fault` a fault section or "".
fn windows_file(n: usize, k: usize, source: f64, window: f64, fault: &str) -> String {
    let mut s = String::from("name = \"k of n\"\nunit = \"mm\"\n");
    if source > 0.0 {
        s.push_str(&format!("[sources.supply]\nsigma = {source}\n"));
    }
    for i in 0..n {
        s.push_str(&format!("[channels.c{i}]\nmean = 0.0\nsigma = 1.0\n"));
        if source > 0.0 {
            s.push_str("from = { supply = 1.0 }\n");
        }
    }
    let all: Vec<String> = (0..n).map(|i| format!("\"c{i}\"")).collect();
    s.push_str(&format!(
        "[output]\nkind = \"median\"\nof = [{}]\n",
        all.join(", ")
    ));
    for i in 0..n {
        s.push_str(&format!(
            "[checks.w{i}]\nkind = \"linear\"\nof = {{ c{i} = 1.0 }}\nlimit = {window}\n"
        ));
    }
    s.push_str(&format!(
        "[detection]\nfires = {{ at_least = {k} }}\n[safety]\nlimit = 1.0\n{fault}"
    ));
    s
}

#[test]
fn k_of_n_windows_match_enumeration_of_every_class_assignment() {
    // Five independent N(0, 1) channels, windows at 2, safety band [-1, 1], median output,
    // detection on two windows. Each channel falls in one of five classes: below -2 (fires,
    // below the band), [-2, -1) (below, quiet), [-1, 1], (1, 2] (above, quiet), above 2
    // (fires, above). The reference sums the product probabilities of all 5^5 class
    // assignments (common practice: enumeration of independent outcomes), Phi by libm erfc.
    let phi = |x: f64| 0.5 * libm::erfc(-x / std::f64::consts::SQRT_2);
    let p = [
        phi(-2.0),
        phi(-1.0) - phi(-2.0),
        phi(1.0) - phi(-1.0),
        phi(2.0) - phi(1.0),
        1.0 - phi(2.0),
    ];
    let (n, k) = (5usize, 2usize);
    let (mut p_vd, mut p_vu, mut p_sd, mut p_sq) = (0.0, 0.0, 0.0, 0.0);
    for code in 0..5usize.pow(n as u32) {
        let mut rest = code;
        let (mut below, mut above, mut fired, mut prob) = (0, 0, 0, 1.0);
        for _ in 0..n {
            let class = rest % 5;
            rest /= 5;
            prob *= p[class];
            below += usize::from(class <= 1);
            above += usize::from(class >= 3);
            fired += usize::from(class == 0 || class == 4);
        }
        // The median of five is below -1 when three or more are, above 1 likewise.
        let violated = below >= 3 || above >= 3;
        match (violated, fired >= k) {
            (true, true) => p_vd += prob,
            (true, false) => p_vu += prob,
            (false, true) => p_sd += prob,
            (false, false) => p_sq += prob,
        }
    }
    let a = run(&windows_file(n, k, 0.0, 2.0, ""), true);
    assert_eq!(a.baseline_method, FigureMethod::OrderStatistics);
    for (got, want, name) in [
        (a.baseline.p_vd, p_vd, "p_vd"),
        (a.baseline.p_vu, p_vu, "p_vu"),
        (a.baseline.p_sd, p_sd, "p_sd"),
        (a.baseline.p_sq, p_sq, "p_sq"),
    ] {
        assert!(
            (got.value - want).abs() <= got.error + 1e-14,
            "{name}: {:e} +- {:e} against {want:e}",
            got.value,
            got.error
        );
    }
}

#[test]
fn k_of_n_windows_agree_with_the_polytopes_under_a_shared_supply_and_a_fault() {
    // Three channels on one supply, two of three windows, a drift of known spread on c0 and
    // a channel stuck at 1.5: both engines on every figure, within their bounds.
    for fault in [
        "[faults.drift]\nfit = 10.0\nhits = { c0 = 1.0 }\nmode = \"add\"\n\
         amplitude = { gaussian = { mean = 0.5, sigma = 2.0 } }\n",
        "[faults.stuck]\nfit = 10.0\nhits = { c1 = 1.0 }\nmode = \"replace\"\n\
         amplitude = { points = [[1.5, 1.0]] }\n",
    ] {
        let text = windows_file(3, 2, 0.4, 2.0, fault);
        let order = run(&text, true);
        let poly = run(&text, false);
        assert_eq!(order.sites[0].method, FigureMethod::OrderStatistics);
        agree(&order.baseline, &poly.baseline, "baseline");
        agree(&order.sites[0].outcome, &poly.sites[0].outcome, fault);
    }
}

#[test]
fn k_of_n_windows_with_an_even_median_agree_with_the_polytopes() {
    // Four channels on one supply (the median is the mean of the middle two), two of four
    // windows, a drift of known spread on c0: both engines, every figure within the bounds.
    let fault = "[faults.drift]\nfit = 10.0\nhits = { c0 = 1.0 }\nmode = \"add\"\n\
                 amplitude = { gaussian = { mean = 0.5, sigma = 2.0 } }\n";
    let text = windows_file(4, 2, 0.4, 2.0, fault);
    let order = run(&text, true);
    let poly = run(&text, false);
    assert_eq!(order.sites[0].method, FigureMethod::OrderStatistics);
    agree(&order.baseline, &poly.baseline, "baseline");
    agree(&order.sites[0].outcome, &poly.sites[0].outcome, "drift");
}
