//! An independent Monte Carlo engine for verification.
//!
//! It shares nothing numerical with the exact path: it samples every shared source and every
//! channel's own noise separately (the own-noise correlation factored by a symmetric
//! eigen-decomposition, not the pivoted Cholesky of the engine), draws the fault amplitude
//! itself, evaluates the output and checks at the sampled point and counts the four outcomes.
//! Normal variates come from the Box–Muller transform (Box and Muller 1958) on SplitMix64.
//! Intervals are Wilson score intervals (Wilson 1927) at 99.9 % two-sided confidence.
//!
//! Sampling runs in fixed chunks, each with its own seed, in parallel; counts are integers,
//! so the result is the same for every thread count.

use nalgebra::{DMatrix, SymmetricEigen};
use rayon::prelude::*;

use crate::model::{Amplitude, CompiledFault, CompiledModel, Detection, FaultMode};
use crate::prob::Estimate;
use crate::prob::rng::SplitMix64;

use super::error::{AnalysisError, RequestField};
use super::metrics::metrics;
use super::options::AnalysisOptions;
use super::outcome::{Figure, Outcome};
use super::run::Analysis;
use super::site::{LocalWorst, SiteResult, WorstCase};

/// Two-sided 99.9 % standard normal quantile (Phi^-1(0.9995) = 3.2905, from memory; also in
/// any table of the normal distribution).
pub const Z_999: f64 = 3.290_526_731_491_9;

/// Samples per parallel chunk (fixed, so results do not depend on the thread count).
pub(super) const CHUNK: u64 = 1 << 14;

/// Upper limit on samples per scenario.
pub const MAX_SAMPLES: u64 = 1 << 34;

/// Points of the coarse sigma scan the Monte Carlo engine uses for an unknown sigma.
const MC_SIGMA_POINTS: usize = 13;

/// How many samples, with which seed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct MonteCarloOptions {
    /// Samples per scenario.
    pub samples: u64,
    /// Seed of the whole run.
    pub seed: u64,
}

impl Default for MonteCarloOptions {
    fn default() -> Self {
        Self {
            samples: 1_000_000,
            seed: 0x0C0C_0A7D,
        }
    }
}

/// Counted outcomes of one scenario.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Counts {
    /// Samples in `p_vd`, `p_vu`, `p_sd`, `p_sq` order.
    pub counts: [u64; 4],
}

impl Counts {
    /// Number of samples.
    pub fn total(&self) -> u64 {
        self.counts.iter().sum()
    }

    /// The Wilson score interval of one figure at confidence quantile `z`.
    pub fn interval(&self, figure: Figure, z: f64) -> (f64, f64) {
        let n = self.total() as f64;
        if n == 0.0 {
            return (0.0, 1.0);
        }
        let k = self.counts[index(figure)] as f64;
        wilson(k, n, z)
    }

    /// The outcome with the point estimate as value and the larger distance to the ends of
    /// the 99.9 % interval as error.
    pub fn outcome(&self) -> Outcome {
        let n = self.total().max(1) as f64;
        Outcome::from_fn(|f| {
            let p = self.counts[index(f)] as f64 / n;
            let (lo, hi) = self.interval(f, Z_999);
            Estimate::new(p, (p - lo).max(hi - p))
        })
    }
}

/// Wilson (1927) score interval for `k` successes in `n` trials.
pub fn wilson(k: f64, n: f64, z: f64) -> (f64, f64) {
    let p = k / n;
    let z2 = z * z;
    let denom = 1.0 + z2 / n;
    let centre = (p + z2 / (2.0 * n)) / denom;
    let half = z * (p * (1.0 - p) / n + z2 / (4.0 * n * n)).sqrt() / denom;
    // With no success the lower end is exactly 0 (centre and half width are equal in exact
    // arithmetic; rounding can leave ~1e-20), with all successes the upper end exactly 1.
    let lower = if k <= 0.0 {
        0.0
    } else {
        (centre - half).max(0.0)
    };
    let upper = if k >= n {
        1.0
    } else {
        (centre + half).min(1.0)
    };
    (lower, upper)
}

fn index(figure: Figure) -> usize {
    Figure::ALL.iter().position(|f| *f == figure).unwrap_or(0)
}

/// How the fault amplitude is drawn.
#[derive(Debug, Clone, PartialEq)]
pub enum Draw {
    /// No fault.
    None,
    /// `F ~ N(mean, sigma^2)`.
    Gaussian { mean: f64, sigma: f64 },
    /// `F ~ U(lower, upper)`.
    Uniform { lower: f64, upper: f64 },
    /// `F` takes `value` with probability `weight`.
    Points(Vec<(f64, f64)>),
}

impl Draw {
    /// One amplitude, `None` for no fault.
    pub(super) fn amplitude(
        &self,
        rng: &mut SplitMix64,
        normals: &mut NormalSource,
    ) -> Option<f64> {
        Some(match self {
            Draw::None => return None,
            Draw::Gaussian { mean, sigma } => mean + sigma * normals.next(rng),
            Draw::Uniform { lower, upper } => lower + (upper - lower) * rng.next_f64(),
            Draw::Points(points) => {
                let u = rng.next_f64();
                let mut acc = 0.0;
                let mut chosen = points.last().map_or(0.0, |p| p.0);
                for (v, w) in points {
                    acc += w;
                    if u < acc {
                        chosen = *v;
                        break;
                    }
                }
                chosen
            }
        })
    }
}

/// A model prepared for sampling.
#[derive(Debug, Clone)]
pub struct Sampler<'a> {
    pub(super) model: &'a CompiledModel,
    pub(super) own_mean: Vec<f64>,
    pub(super) own_factor: DMatrix<f64>,
}

impl<'a> Sampler<'a> {
    /// Factors the own-noise correlation by eigen-decomposition (negative eigenvalues of
    /// rounding size are set to zero).
    pub fn new(model: &'a CompiledModel) -> Self {
        let n = model.channels.len();
        let s = model.sources.len();
        let own_mean: Vec<f64> = (0..n)
            .map(|i| {
                let from_sources: f64 = (0..s)
                    .map(|j| model.source_gains[(i, j)] * model.source_means[j])
                    .sum();
                model.mean[i] - from_sources
            })
            .collect();
        let eigen = SymmetricEigen::new(model.own_correlation.clone());
        let mut factor = eigen.eigenvectors.clone();
        for (k, lambda) in eigen.eigenvalues.iter().enumerate() {
            let root = lambda.max(0.0).sqrt();
            for i in 0..n {
                factor[(i, k)] *= root;
            }
        }
        Self {
            model,
            own_mean,
            own_factor: factor,
        }
    }

    /// One sample of the channel deviations with the fault applied.
    pub(super) fn draw(
        &self,
        rng: &mut SplitMix64,
        normals: &mut NormalSource,
        fault: Option<(&FaultMode, &Draw)>,
        x: &mut [f64],
    ) {
        let m = self.model;
        let n = m.channels.len();
        let z: Vec<f64> = (0..n).map(|_| normals.next(rng)).collect();
        for (i, xi) in x.iter_mut().enumerate().take(n) {
            let own: f64 = (0..n).map(|k| self.own_factor[(i, k)] * z[k]).sum();
            *xi = self.own_mean[i] + m.own_sigmas[i] * own;
        }
        for j in 0..m.sources.len() {
            let value = m.source_means[j] + m.source_sigmas[j] * normals.next(rng);
            for (i, xi) in x.iter_mut().enumerate().take(n) {
                *xi += m.source_gains[(i, j)] * value;
            }
        }
        if let Some((mode, draw)) = fault {
            let Some(f) = draw.amplitude(rng, normals) else {
                return;
            };
            apply_fault(mode, f, x);
        }
    }

    /// Which of the four outcomes a sampled point falls in.
    pub(super) fn classify(&self, x: &[f64]) -> usize {
        let m = self.model;
        // The formulas as the file defines them, not the pieces the exact engine reads: an
        // independent path, and a cost linear in the arguments (the pieces of an order
        // statistic of k arguments number k!).
        let y = m.output_formula.eval(x);
        let violated = y < m.safety_lower || y > m.safety_upper;
        let fired = m
            .checks
            .iter()
            .filter(|c| {
                let v = c.formula.eval(x);
                v < c.lower || v > c.upper
            })
            .count();
        let detected = match m.detection {
            Detection::Any => fired >= 1,
            Detection::AtLeast(k) => fired >= k,
        };
        match (violated, detected) {
            (true, true) => 0,
            (true, false) => 1,
            (false, true) => 2,
            (false, false) => 3,
        }
    }

    /// Counts the outcomes of `samples` draws of one scenario. `stream` separates the random
    /// streams of different scenarios of one run.
    pub fn count(
        &self,
        fault: Option<(&FaultMode, &Draw)>,
        samples: u64,
        seed: u64,
        stream: u64,
    ) -> Counts {
        let chunks = samples.div_ceil(CHUNK);
        let per_chunk: Vec<[u64; 4]> = (0..chunks)
            .into_par_iter()
            .map(|c| {
                let mut rng = SplitMix64::new(
                    seed ^ stream.wrapping_mul(0xA24B_AED4_963E_E407)
                        ^ c.wrapping_mul(0x9FB2_1C65_1E98_DF25),
                );
                let mut normals = NormalSource::default();
                let mut x = vec![0.0; self.model.channels.len()];
                let mut counts = [0u64; 4];
                let todo = CHUNK.min(samples - c * CHUNK);
                for _ in 0..todo {
                    self.draw(&mut rng, &mut normals, fault, &mut x);
                    counts[self.classify(&x)] += 1;
                }
                counts
            })
            .collect();
        let mut total = Counts::default();
        for c in per_chunk {
            for (t, v) in total.counts.iter_mut().zip(c) {
                *t += v;
            }
        }
        total
    }
}

/// A fault of amplitude `f` on the sampled channels `x`: added along its direction, or the
/// replaced channel set to `gain * f`.
pub(super) fn apply_fault(mode: &FaultMode, f: f64, x: &mut [f64]) {
    match mode {
        FaultMode::Add { direction } => {
            for (xi, d) in x.iter_mut().zip(direction) {
                *xi += d * f;
            }
        }
        FaultMode::Replace { channel, gain } => {
            if let Some(xi) = x.get_mut(*channel) {
                *xi = gain * f;
            }
        }
    }
}

/// Box–Muller normal variates, two per pair of uniforms.
#[derive(Debug, Default)]
pub(super) struct NormalSource {
    spare: Option<f64>,
}

impl NormalSource {
    pub(super) fn next(&mut self, rng: &mut SplitMix64) -> f64 {
        if let Some(v) = self.spare.take() {
            return v;
        }
        let u1 = 1.0 - rng.next_f64(); // in (0, 1]
        let u2 = rng.next_f64();
        let r = (-2.0 * u1.ln()).sqrt();
        let (s, c) = (std::f64::consts::TAU * u2).sin_cos();
        self.spare = Some(r * s);
        r * c
    }
}

/// The draw of a fault's amplitude at a given sigma (for an unknown-sigma site).
pub fn draw_of(fault: &CompiledFault, sigma: Option<f64>) -> Draw {
    match &fault.amplitude {
        Amplitude::Gaussian { mean, sigma } => Draw::Gaussian {
            mean: *mean,
            sigma: *sigma,
        },
        Amplitude::GaussianUnknownSigma { mean, sigma_lo, .. } => Draw::Gaussian {
            mean: *mean,
            sigma: sigma.unwrap_or(*sigma_lo),
        },
        Amplitude::Uniform { lower, upper } => Draw::Uniform {
            lower: *lower,
            upper: *upper,
        },
        Amplitude::Points(p) => Draw::Points(p.clone()),
    }
}

/// Runs a whole analysis by sampling. For a site of unknown sigma it scans a coarse log grid
/// of the range and keeps the sigma with the largest sampled residual (a sampled maximum is
/// biased upwards; the exact engine is the one to trust for the worst case).
///
/// # Errors
/// [`AnalysisError::InvalidRequest`] for a sample count of zero or above the limit.
pub fn analyze_montecarlo(
    model: &CompiledModel,
    mc: &MonteCarloOptions,
) -> Result<Analysis, AnalysisError> {
    check_samples(mc.samples, RequestField::MonteCarloSamples)?;
    let sampler = Sampler::new(model);
    let baseline = sampler.count(None, mc.samples, mc.seed, 0).outcome();
    let mut sites = Vec::with_capacity(model.faults.len());
    for (k, fault) in model.faults.iter().enumerate() {
        let stream = (k as u64 + 1) << 8;
        let (outcome, worst) = match &fault.amplitude {
            Amplitude::GaussianUnknownSigma {
                sigma_lo, sigma_hi, ..
            } => {
                let ratio = (sigma_hi / sigma_lo).max(1.0);
                let mut best: Option<(f64, Counts)> = None;
                let mut scan = Vec::with_capacity(MC_SIGMA_POINTS);
                for g in 0..MC_SIGMA_POINTS {
                    let sigma = sigma_lo * ratio.powf(g as f64 / (MC_SIGMA_POINTS - 1) as f64);
                    let counts = sampler.count(
                        Some((&fault.mode, &draw_of(fault, Some(sigma)))),
                        mc.samples,
                        mc.seed,
                        stream + g as u64,
                    );
                    scan.push((sigma, counts.outcome().p_vu));
                    if best
                        .as_ref()
                        .is_none_or(|(_, b)| counts.counts[1] > b.counts[1])
                    {
                        best = Some((sigma, counts));
                    }
                }
                let (sigma, counts) = best.unwrap_or((*sigma_lo, Counts::default()));
                let outcome = counts.outcome();
                let worst = WorstCase {
                    sigma,
                    range: (*sigma_lo, *sigma_hi),
                    range_defaulted: false,
                    local_maxima: vec![LocalWorst {
                        sigma,
                        p_vu: outcome.p_vu.value,
                        at_range_end: sigma == *sigma_lo || sigma == *sigma_hi,
                    }],
                    scan,
                };
                (outcome, Some(worst))
            }
            _ => (
                sampler
                    .count(
                        Some((&fault.mode, &draw_of(fault, None))),
                        mc.samples,
                        mc.seed,
                        stream,
                    )
                    .outcome(),
                None,
            ),
        };
        sites.push(SiteResult {
            name: fault.name.clone(),
            fit: fault.fit,
            mode: match fault.mode {
                FaultMode::Add { .. } => "add",
                FaultMode::Replace { .. } => "replace",
            },
            amplitude: fault.amplitude.clone(),
            outcome,
            worst,
            curve: None,
            latent_coverage: fault.latent_coverage,
            warnings: Vec::new(),
            method: crate::analysis::engine::FigureMethod::MonteCarlo,
        });
    }
    Ok(Analysis {
        timed: None,
        isolation: None,
        tolerances: None,
        sensitivity: None,
        baseline,
        metrics: metrics(&sites),
        sites,
        cells: 0,
        baseline_method: crate::analysis::engine::FigureMethod::MonteCarlo,
        warnings: vec![
            "figures by Monte Carlo sampling: each error is the half-width of a 99.9 % interval"
                .into(),
        ],
        options: AnalysisOptions::default(),
    })
}

/// Refuses a sample count of zero or above [`MAX_SAMPLES`], naming `field`: the samples of a
/// sampled analysis or of a cross-check.
fn check_samples(samples: u64, field: RequestField) -> Result<(), AnalysisError> {
    if samples == 0 || samples > MAX_SAMPLES {
        return Err(AnalysisError::invalid(
            field,
            format!("{samples} samples; give between 1 and {MAX_SAMPLES}"),
        ));
    }
    Ok(())
}

/// Agreement of one exact figure with its sampled interval.
#[derive(Debug, Clone, PartialEq)]
pub struct Agreement {
    /// `baseline` or the site's name.
    pub scenario: String,
    /// The key of the figure compared (`p_vd`, ..., or an isolation figure).
    pub figure: &'static str,
    /// The exact value and its bound.
    pub exact: Estimate,
    /// The sampled point estimate.
    pub sampled: f64,
    /// The 99.9 % Wilson interval of the sampled figure.
    pub interval: (f64, f64),
    /// Whether the exact value, widened by its bound, meets the interval.
    pub agrees: bool,
}

/// Re-runs every scenario of an exact analysis by sampling (an unknown-sigma site at the
/// exact worst sigma) and compares each figure with its interval.
///
/// # Errors
/// [`AnalysisError::InvalidRequest`] for a bad sample count.
pub fn verify(
    model: &CompiledModel,
    exact: &Analysis,
    mc: &MonteCarloOptions,
) -> Result<Vec<Agreement>, AnalysisError> {
    check_samples(mc.samples, RequestField::VerifySamples)?;
    let sampler = Sampler::new(model);
    let mut rows = Vec::new();
    let base = sampler.count(None, mc.samples, mc.seed, 0);
    compare("baseline", &exact.baseline, &base, &mut rows);
    for (k, (fault, site)) in model.faults.iter().zip(&exact.sites).enumerate() {
        let sigma = site.worst.as_ref().map(|w| w.sigma);
        let counts = sampler.count(
            Some((&fault.mode, &draw_of(fault, sigma))),
            mc.samples,
            mc.seed,
            (k as u64 + 1) << 8,
        );
        compare(&site.name, &site.outcome, &counts, &mut rows);
    }
    rows.extend(super::timed_sampling::verify_timed(model, exact, mc)?);
    rows.extend(super::isolation_sampling::verify_isolation(
        model, exact, mc,
    )?);
    Ok(rows)
}

pub(super) fn compare(name: &str, exact: &Outcome, counts: &Counts, rows: &mut Vec<Agreement>) {
    let n = counts.total().max(1) as f64;
    for figure in Figure::ALL {
        let e = exact.get(figure);
        let (lo, hi) = counts.interval(figure, Z_999);
        rows.push(Agreement {
            scenario: name.to_string(),
            figure: figure.key(),
            exact: e,
            sampled: counts.counts[index(figure)] as f64 / n,
            interval: (lo, hi),
            agrees: e.value + e.error >= lo && e.value - e.error <= hi,
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wilson_interval_matches_a_hand_computation() {
        // Wilson (1927) for k = 50, n = 100, z = 1.96: centre 0.5, half-width
        // 1.96 * sqrt(0.0025 + 0.000096) / 1.038416 = 0.0961 (hand computation).
        let (lo, hi) = wilson(50.0, 100.0, 1.96);
        assert!(
            (lo - 0.4038).abs() < 1e-3 && (hi - 0.5962).abs() < 1e-3,
            "{lo} {hi}"
        );
        // k = 0: the interval starts at zero and ends at z^2 / (n + z^2).
        let (lo, hi) = wilson(0.0, 100.0, 1.96);
        assert_eq!(lo, 0.0);
        assert!((hi - 1.96f64.powi(2) / (100.0 + 1.96f64.powi(2))).abs() < 1e-12);
    }

    #[test]
    fn wilson_interval_of_no_success_contains_zero_whatever_the_rounding() {
        // Regression: k = 0 of n = 20 000 at z = 3.29 gave a lower end of 5.4e-20 through
        // rounding, so an exact probability of 0 was reported as disagreeing.
        for n in [20_000.0, 200_000.0, 1e6, 12_345.0] {
            assert_eq!(wilson(0.0, n, Z_999).0, 0.0, "n = {n}");
            assert_eq!(wilson(n, n, Z_999).1, 1.0, "n = {n}");
        }
    }
}
