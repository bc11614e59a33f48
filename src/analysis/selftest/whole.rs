//! Selftest cases of whole analyses: architectures read, compiled and analysed as a user's
//! file would be, against a stored table of two independent integrations, a closed form
//! derived by hand and the independent Monte Carlo engine.

use rayon::prelude::*;
use serde::Deserialize;

use crate::model::load_str;
use crate::prob::int_pow;

use super::super::montecarlo::{MonteCarloOptions, verify};
use super::super::options::AnalysisOptions;
use super::super::outcome::{Figure, Outcome};
use super::super::run::{Analysis, analyze};
use super::{Case, Measure, ReferenceData};

/// Allowance for rounding in sums of polytope probabilities (double precision).
const ROUNDING: f64 = 1e-15;

/// Allowance for the rounding of the hand-derived closed form itself (libm's erfc, then
/// sums, products and complements of its values), absolute and relative, with a wide margin;
/// the same allowance as tests/analysis_closed_forms.rs.
const CLOSED_FORM_ABS: f64 = 1e-13;
/// See [`CLOSED_FORM_ABS`].
const CLOSED_FORM_REL: f64 = 1e-12;

/// One stored reference figure.
#[derive(Debug, Clone, Copy, Deserialize)]
pub struct FigureRef {
    /// The value.
    pub value: f64,
    /// The reference's own tolerance.
    pub tol: f64,
}

/// Stored figures of one scenario (`baseline` or a fault site).
#[derive(Debug, Clone, Deserialize)]
pub struct SiteRef {
    /// `baseline` or the site's name.
    pub site: String,
    /// `P(V and Det)`.
    pub p_vd: FigureRef,
    /// `P(V and not Det)`.
    pub p_vu: FigureRef,
    /// `P(not V and Det)`.
    pub p_sd: FigureRef,
    /// `P(not V and not Det)`.
    pub p_sq: FigureRef,
}

impl SiteRef {
    fn get(&self, figure: Figure) -> FigureRef {
        match figure {
            Figure::ViolatedDetected => self.p_vd,
            Figure::ViolatedUndetected => self.p_vu,
            Figure::SafeDetected => self.p_sd,
            Figure::SafeQuiet => self.p_sq,
        }
    }
}

/// One architecture of the whole-analysis table.
#[derive(Debug, Clone, Deserialize)]
pub struct AnalysisRow {
    /// Case name.
    pub name: String,
    /// The architecture file.
    pub toml: String,
    /// Its figures.
    pub results: Vec<SiteRef>,
}

const REFERENCE: &str = "whole analysis, reference table";
const CLOSED: &str = "whole analysis, closed form";
const MONTE_CARLO: &str = "whole analysis, Monte Carlo agreement";

fn run_file(text: &str, name: &str) -> Result<Analysis, String> {
    run_file_with(text, name, &AnalysisOptions::default())
}

fn run_file_with(text: &str, name: &str, options: &AnalysisOptions) -> Result<Analysis, String> {
    let arch = load_str(text, name).map_err(|e| e.to_string())?;
    analyze(&arch.model, options, false).map_err(|e| e.to_string())
}

/// The baseline residual of an analysis, if the order-statistic engine computed it.
fn ordered_residual(analysis: Result<Analysis, String>) -> Result<(f64, f64), String> {
    analysis.and_then(|a| {
        if a.baseline_method == crate::analysis::engine::FigureMethod::OrderStatistics {
            Ok((a.baseline.p_vu.value, a.baseline.p_vu.error))
        } else {
            Err("the order-statistic engine was not chosen".to_string())
        }
    })
}

fn scenario<'a>(analysis: &'a Analysis, site: &str) -> Option<&'a Outcome> {
    if site == "baseline" {
        Some(&analysis.baseline)
    } else {
        analysis
            .sites
            .iter()
            .find(|s| s.name == site)
            .map(|s| &s.outcome)
    }
}

/// Every figure of every scenario of the stored whole-analysis table.
pub fn reference_table_cases(data: &ReferenceData) -> Vec<Case> {
    let per_case: Vec<Vec<Case>> = data
        .analysis
        .par_iter()
        .map(|row| {
            let analysis = run_file(&row.toml, &format!("{}.toml", row.name));
            let mut cases = Vec::new();
            for site in &row.results {
                for figure in Figure::ALL {
                    let reference = site.get(figure);
                    let computed = match &analysis {
                        Ok(a) => scenario(a, &site.site)
                            .map(|o| (o.get(figure).value, o.get(figure).error))
                            .ok_or_else(|| format!("no scenario named {}", site.site)),
                        Err(e) => Err(e.clone()),
                    };
                    cases.push(Case::new(
                        REFERENCE,
                        format!("{} / {} / {}", row.name, site.site, figure.key()),
                        data.sources.analysis.clone(),
                        computed,
                        reference.value,
                        reference.tol + ROUNDING,
                        Measure::Absolute,
                    ));
                }
            }
            cases
        })
        .collect();
    per_case.into_iter().flatten().collect()
}

/// `Phi(x) = erfc(-x / sqrt 2) / 2` with the `libm` crate's erfc (a port of FreeBSD's msun,
/// an implementation independent of concord's own normal CDF).
pub(super) fn phi(x: f64) -> f64 {
    0.5 * libm::erfc(-x * std::f64::consts::FRAC_1_SQRT_2)
}

/// `P(|N(m, sd^2)| > limit)`.
pub(super) fn outside(m: f64, sd: f64, limit: f64) -> f64 {
    phi((-limit - m) / sd) + phi((m - limit) / sd)
}

const CLOSED_S: f64 = 0.6;
const CLOSED_T: f64 = 1.5;
const CLOSED_L: f64 = 2.0;
const CLOSED_OFFSETS: [f64; 4] = [0.0, 2.0, 3.0, 4.5];

fn closed_form_file() -> String {
    let mut text = format!(
        "name = \"two independent channels\"\nunit = \"mm\"\n\n\
         [channels.a]\nmean = 0.0\nsigma = {CLOSED_S}\n\n\
         [channels.b]\nmean = 0.0\nsigma = {CLOSED_S}\n\n\
         [output]\nkind = \"mean\"\nof = [\"a\", \"b\"]\n\n\
         [checks.ab]\nkind = \"difference\"\nof = [\"a\", \"b\"]\nlimit = {CLOSED_T}\n\n\
         [safety]\nlimit = {CLOSED_L}\n"
    );
    for (k, f) in CLOSED_OFFSETS.iter().enumerate().skip(1) {
        text.push_str(&format!(
            "\n[faults.offset_{k}]\nfit = 10.0\nhits = {{ a = 1.0 }}\nmode = \"add\"\n\
             amplitude = {{ points = [[{f}, 1.0]] }}\n"
        ));
    }
    text
}

/// Two independent channels of equal sigma `s`, mean output, difference check, a fixed
/// offset `F` on one channel: `y = (a + b) / 2 ~ N(F/2, s^2/2)` and `d = a - b ~ N(F, 2 s^2)`
/// are uncorrelated gaussians, hence independent (Feller, Vol. II, III.1), so every outcome
/// is a product of two one-dimensional normal probabilities (derived by hand; the same
/// derivation as tests/analysis_closed_forms.rs).
pub fn closed_form_cases(_data: &ReferenceData) -> Vec<Case> {
    let analysis = run_file(&closed_form_file(), "closed-form.toml");
    let (sy, sd) = (CLOSED_S / 2f64.sqrt(), CLOSED_S * 2f64.sqrt());
    let mut cases = Vec::new();
    for (k, f) in CLOSED_OFFSETS.iter().enumerate() {
        let site = if k == 0 {
            "baseline".to_string()
        } else {
            format!("offset_{k}")
        };
        let v = outside(f / 2.0, sy, CLOSED_L);
        let det = outside(*f, sd, CLOSED_T);
        for figure in Figure::ALL {
            let reference = match figure {
                Figure::ViolatedDetected => v * det,
                Figure::ViolatedUndetected => v * (1.0 - det),
                Figure::SafeDetected => (1.0 - v) * det,
                Figure::SafeQuiet => (1.0 - v) * (1.0 - det),
            };
            let computed = match &analysis {
                Ok(a) => scenario(a, &site)
                    .map(|o| (o.get(figure).value, o.get(figure).error))
                    .ok_or_else(|| format!("no scenario named {site}")),
                Err(e) => Err(e.clone()),
            };
            cases.push(Case::new(
                CLOSED,
                format!("F = {f} / {}", figure.key()),
                "hand derivation: sum and difference of independent equal-variance normals \
                 are independent (Feller, Vol. II, III.1); Phi by libm erfc",
                computed,
                reference,
                CLOSED_FORM_ABS + CLOSED_FORM_REL * reference.abs(),
                Measure::Absolute,
            ));
        }
    }
    cases
}

const ORDER: &str = "whole analysis, order statistics";

/// Independent identical channels voted by median in the order-statistic group.
const ORDER_CHANNELS: [usize; 2] = [5, 9];
/// Safety limits of the order-statistic group (upper; the lower end is far away).
const ORDER_LIMITS: [f64; 2] = [0.5, 1.5];

/// `n` independent N(0, 1) channels, the output their median, no checks, safety band
/// `(-1e6, upper]`.
fn iid_median_file(n: usize, upper: f64) -> String {
    let mut s = String::from("name = \"iid median\"\nunit = \"V\"\n\n");
    for i in 0..n {
        s.push_str(&format!("[channels.c{i}]\nsigma = 1.0\n\n"));
    }
    let names: Vec<String> = (0..n).map(|i| format!("\"c{i}\"")).collect();
    s.push_str(&format!(
        "[output]\nkind = \"median\"\nof = [{}]\n\n[safety]\nlower = -1e6\nupper = {upper}\n",
        names.join(", ")
    ));
    s
}

/// The median of `n = 2m + 1` independent N(0, 1) readings exceeds `t` exactly when at least
/// `m + 1` do: `sum_{j > m} C(n, j) q^j (1 - q)^(n - j)` with `q = 1 - Phi(t)` (common
/// practice; Phi by libm's erfc). With no checks the residual `p_vu` is that sum; the
/// order-statistic engine must compute it (five and nine channels go to it by default).
pub fn order_statistic_cases(_data: &ReferenceData) -> Vec<Case> {
    let mut cases = Vec::new();
    for n in ORDER_CHANNELS {
        for t in ORDER_LIMITS {
            let q = 1.0 - phi(t);
            let m = (n - 1) / 2;
            let mut reference = 0.0;
            for j in m + 1..=n {
                let mut c = 1.0;
                for i in 0..j {
                    c = c * (n - i) as f64 / (i + 1) as f64;
                }
                reference += c * int_pow(q, j as u32) * int_pow(1.0 - q, (n - j) as u32);
            }
            let computed = ordered_residual(run_file(&iid_median_file(n, t), "iid-median.toml"));
            cases.push(Case::new(
                ORDER,
                format!("median of {n} > {t} / p_vu"),
                "binomial sum over independent channels (common practice); Phi by libm erfc",
                computed,
                reference,
                CLOSED_FORM_ABS + CLOSED_FORM_REL * reference.abs() * n as f64,
                Measure::Absolute,
            ));
        }
    }
    // The median of an even count n = 2m, the mean of the middle pair (U, V): their joint
    // density is n! / ((m-1)!)^2 Phi(u)^(m-1) phi(u) phi(v) (1 - Phi(v))^(m-1) on u < v
    // (David and Nagaraja 2003, Order Statistics, eq. 2.2.1); integrating v over
    // (max(u, 2t - u), inf) in closed form leaves
    // P(median > t) = n! / ((m-1)! m!) int Phi(u)^(m-1) phi(u) S(max(u, 2t - u))^m du,
    // here by composite Simpson (h = 1e-3 on [-10, 10], split at t; error below 1e-12).
    for n in [4usize, 6] {
        let m = n / 2;
        let factor = (1..=n).map(|i| i as f64).product::<f64>()
            / ((1..m).map(|i| i as f64).product::<f64>()
                * (1..=m).map(|i| i as f64).product::<f64>());
        for t in ORDER_LIMITS {
            let g = |u: f64| {
                let density = (-0.5 * u * u).exp() / (2.0 * std::f64::consts::PI).sqrt();
                int_pow(phi(u), m as u32 - 1)
                    * density
                    * int_pow(1.0 - phi(u.max(2.0 * t - u)), m as u32)
            };
            let reference = factor * (simpson(&g, -10.0, t) + simpson(&g, t, 10.0));
            let computed = ordered_residual(run_file(&iid_median_file(n, t), "iid-median.toml"));
            cases.push(Case::new(
                ORDER,
                format!("median of {n} (even) > {t} / p_vu"),
                "joint density of two order statistics (David and Nagaraja eq. 2.2.1), Simpson",
                computed,
                reference,
                CLOSED_FORM_ABS + 1e-12,
                Measure::Absolute,
            ));
        }
    }
    // The mean of two independent N(0, s^2) readings and their difference are independent
    // (common practice: sum and difference of two iid normals), so a comparator passing
    // (|D| <= T, D ~ N(0, 2 s^2)) and the mean outside the band (M ~ N(0, s^2 / 2)) multiply.
    let (s, limit, band) = (0.5, 1.2, 0.6);
    let reference =
        (2.0 * phi(limit / (s * 2f64.sqrt())) - 1.0) * outside(0.0, s / 2f64.sqrt(), band);
    let options = AnalysisOptions {
        engine: crate::analysis::engine::EngineChoice::OrderStatistics,
        ..AnalysisOptions::default()
    };
    let text = format!(
        "name = \"pair\"\nunit = \"V\"\n\n[channels.a]\nsigma = {s}\n\n[channels.b]\nsigma = {s}\n\n\
         [output]\nkind = \"mean\"\nof = [\"a\", \"b\"]\n\n\
         [checks.ab]\nkind = \"difference\"\nof = [\"a\", \"b\"]\nlimit = {limit}\n\n\
         [safety]\nlimit = {band}\n"
    );
    // Two of five windows: five independent N(0, 1) channels, each checked against
    // [-2, 2], the median against [-1, 1], detection on two firing windows. Each channel
    // falls in one of five classes (below -2, [-2, -1), [-1, 1], (1, 2], above 2); the
    // residual sums the products over all 5^5 class assignments where three or more lie on
    // one side of the band and fewer than two fire (enumeration, common practice).
    let class = [
        phi(-2.0),
        phi(-1.0) - phi(-2.0),
        phi(1.0) - phi(-1.0),
        phi(2.0) - phi(1.0),
        1.0 - phi(2.0),
    ];
    let mut windows_reference = 0.0;
    for code in 0..5usize.pow(5) {
        let (mut rest, mut below, mut above, mut fired, mut prob) = (code, 0, 0, 0, 1.0);
        for _ in 0..5 {
            let c = rest % 5;
            rest /= 5;
            prob *= class[c];
            below += usize::from(c <= 1);
            above += usize::from(c >= 3);
            fired += usize::from(c == 0 || c == 4);
        }
        if (below >= 3 || above >= 3) && fired < 2 {
            windows_reference += prob;
        }
    }
    let mut windows = String::from("name = \"two of five\"\nunit = \"V\"\n");
    for i in 0..5 {
        windows.push_str(&format!(
            "[channels.c{i}]\nsigma = 1.0\n[checks.w{i}]\nkind = \"linear\"\n\
             of = {{ c{i} = 1.0 }}\nlimit = 2.0\n"
        ));
    }
    windows.push_str(
        "[output]\nkind = \"median\"\nof = [\"c0\", \"c1\", \"c2\", \"c3\", \"c4\"]\n\
         [detection]\nfires = { at_least = 2 }\n[safety]\nlimit = 1.0\n",
    );
    cases.push(Case::new(
        ORDER,
        "median of 5, two of five windows / p_vu".to_string(),
        "enumeration of the 5^5 class assignments of independent channels (common practice); \
         Phi by libm erfc",
        ordered_residual(run_file(&windows, "windows.toml")),
        windows_reference,
        CLOSED_FORM_ABS + CLOSED_FORM_REL * windows_reference,
        Measure::Absolute,
    ));
    cases.push(Case::new(
        ORDER,
        "mean of two with a comparator / p_vu".to_string(),
        "independence of sum and difference of iid normals (common practice); Phi by libm erfc",
        ordered_residual(run_file_with(&text, "pair.toml", &options)),
        reference,
        CLOSED_FORM_ABS + CLOSED_FORM_REL * reference,
        Measure::Absolute,
    ));
    cases
}

/// Composite Simpson rule with 20,000 steps on `[a, b]`.
fn simpson(f: &dyn Fn(f64) -> f64, a: f64, b: f64) -> f64 {
    let steps = 20_000;
    let h = (b - a) / steps as f64;
    let mut sum = f(a) + f(b);
    for i in 1..steps {
        sum += f(a + h * i as f64) * if i % 2 == 1 { 4.0 } else { 2.0 };
    }
    sum * h / 3.0
}

/// An invented two-channel architecture whose sites exercise the unknown-sigma search and
/// the uniform amplitude integral, for the Monte Carlo comparison.
const MONTE_CARLO_FILE: &str = r#"
name = "selftest pair for the sampler"
unit = "mm"
full_scale = [-20.0, 20.0]

[sources.ref]
mean = 0.05
sigma = 0.2

[channels.a]
mean = 0.1
sigma = 0.5
from = { ref = 1.0 }

[channels.b]
mean = -0.1
sigma = 0.6
from = { ref = 1.0 }

[[correlations]]
between = ["a", "b"]
rho = 0.2

[output]
kind = "mean"
of = ["a", "b"]

[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = 2.0

[safety]
limit = 1.8

[faults.a_drift]
fit = 10.0
hits = { a = 1.0 }
mode = "add"
amplitude = { gaussian = { mean = 0.0, sigma = "unknown" } }

[faults.b_frozen]
fit = 4.0
hits = { b = 1.0 }
mode = "replace"
amplitude = { uniform = "full_scale" }
"#;

/// Samples per scenario of the Monte Carlo comparison.
pub const MONTE_CARLO_SAMPLES: u64 = 400_000;

/// The exact figures of every scenario against the 99.9 % Wilson interval of the
/// independent sampler (`analysis::montecarlo`, fixed seed).
pub fn monte_carlo_cases(_data: &ReferenceData) -> Vec<Case> {
    let source = format!(
        "independent Monte Carlo engine, {MONTE_CARLO_SAMPLES} samples, 99.9 % Wilson (1927) \
         interval"
    );
    let rows = load_str(MONTE_CARLO_FILE, "selftest-sampler.toml")
        .map_err(|e| e.to_string())
        .and_then(|arch| {
            let exact = analyze(&arch.model, &AnalysisOptions::default(), false)
                .map_err(|e| e.to_string())?;
            verify(
                &arch.model,
                &exact,
                &MonteCarloOptions {
                    samples: MONTE_CARLO_SAMPLES,
                    seed: 0x5E1F_7E57,
                },
            )
            .map_err(|e| e.to_string())
        });
    match rows {
        Ok(rows) => rows
            .iter()
            .map(|r| {
                let half = if r.exact.value >= r.sampled {
                    r.interval.1 - r.sampled
                } else {
                    r.sampled - r.interval.0
                };
                Case::new(
                    MONTE_CARLO,
                    format!("{} / {}", r.scenario, r.figure),
                    source.clone(),
                    Ok((r.exact.value, r.exact.error)),
                    r.sampled,
                    half,
                    Measure::Absolute,
                )
            })
            .collect(),
        Err(e) => vec![Case::new(
            MONTE_CARLO,
            "selftest-sampler.toml",
            source,
            Err(e),
            0.0,
            0.0,
            Measure::Absolute,
        )],
    }
}
