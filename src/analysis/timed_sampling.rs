//! The Monte Carlo cross-check of the figures over time: each trial draws the terms constant
//! over the interval once (shared sources not marked fresh, the own noise of channels marked
//! constant, the fault amplitude), then every sample's fresh terms, classifies each sample by
//! the file's formulas and applies the confirmation rule as its definition reads (a run
//! counter, a ring of the last verdicts, a level), not through the chain of `prob::debounce`.

use rayon::prelude::*;

use crate::model::{CompiledModel, FaultMode, Timing};
use crate::prob::debounce::Debounce;
use crate::prob::rng::SplitMix64;

use super::error::AnalysisError;
use super::montecarlo::{
    Agreement, CHUNK, Counts, Draw, MonteCarloOptions, NormalSource, Sampler, apply_fault, compare,
    draw_of,
};
use super::run::Analysis;

/// The rule's state by its definition.
#[derive(Debug, Clone)]
struct RuleState {
    rule: Debounce,
    run: usize,
    recent: Vec<bool>,
    level: usize,
    tripped: bool,
}

impl RuleState {
    fn new(rule: Debounce) -> Self {
        Self {
            rule,
            run: 0,
            recent: Vec::new(),
            level: 0,
            tripped: false,
        }
    }

    fn push(&mut self, fired: bool) {
        if self.tripped {
            return;
        }
        self.tripped = match self.rule {
            Debounce::Consecutive { count } => {
                self.run = if fired { self.run + 1 } else { 0 };
                self.run >= count
            }
            Debounce::Window { count, window } => {
                self.recent.push(fired);
                if self.recent.len() > window {
                    self.recent.remove(0);
                }
                self.recent.iter().filter(|f| **f).count() >= count
            }
            Debounce::Counter { up, down, trip } => {
                self.level = if fired {
                    self.level + up
                } else {
                    self.level.saturating_sub(down)
                };
                self.level >= trip
            }
        };
    }
}

/// Why a model's timing cannot be sampled here, if it cannot: a channel held constant whose
/// own noise correlates with a channel drawn fresh (its conditional draw is not built).
pub fn timed_sampling_unsupported(model: &CompiledModel, timing: &Timing) -> Option<String> {
    let n = model.channels.len();
    for i in 0..n {
        for j in 0..n {
            let (ci, cj) = (
                timing.constant_channels.get(i).copied().unwrap_or(false),
                timing.constant_channels.get(j).copied().unwrap_or(false),
            );
            if ci && !cj && model.own_correlation[(i, j)] != 0.0 {
                return Some(format!(
                    "the constant channel '{}' correlates with the fresh channel '{}'",
                    model.channels[i], model.channels[j]
                ));
            }
        }
    }
    None
}

impl Sampler<'_> {
    /// Counts the four outcomes over the interval in `trials` trials of one scenario.
    pub fn count_timed(
        &self,
        timing: &Timing,
        fault: Option<(&FaultMode, &Draw)>,
        trials: u64,
        seed: u64,
        stream: u64,
    ) -> Counts {
        let m = self.model;
        let (n, s) = (m.channels.len(), m.sources.len());
        let chunks = trials.div_ceil(CHUNK);
        let per_chunk: Vec<[u64; 4]> = (0..chunks)
            .into_par_iter()
            .map(|c| {
                let mut rng = SplitMix64::new(
                    seed ^ stream.wrapping_mul(0xD1B5_4A32_D192_ED03)
                        ^ c.wrapping_mul(0x8CB9_2BA7_2F3D_8DD7),
                );
                let mut normals = NormalSource::default();
                let mut counts = [0u64; 4];
                let mut held_own = vec![0.0; n];
                let mut held_source = vec![0.0; s];
                let mut x = vec![0.0; n];
                let todo = CHUNK.min(trials - c * CHUNK);
                for _ in 0..todo {
                    let own_draw =
                        |normals: &mut NormalSource, rng: &mut SplitMix64, out: &mut [f64]| {
                            let z: Vec<f64> = (0..n).map(|_| normals.next(rng)).collect();
                            for (i, o) in out.iter_mut().enumerate() {
                                let v: f64 = (0..n).map(|k| self.own_factor[(i, k)] * z[k]).sum();
                                *o = m.own_sigmas[i] * v;
                            }
                        };
                    own_draw(&mut normals, &mut rng, &mut held_own);
                    for (j, h) in held_source.iter_mut().enumerate() {
                        *h = m.source_means[j] + m.source_sigmas[j] * normals.next(&mut rng);
                    }
                    let amplitude = fault.and_then(|(_, d)| d.amplitude(&mut rng, &mut normals));
                    let mut rule = RuleState::new(timing.confirm);
                    let mut outside = 0usize;
                    let mut fresh_own = vec![0.0; n];
                    for _ in 0..timing.samples {
                        own_draw(&mut normals, &mut rng, &mut fresh_own);
                        for i in 0..n {
                            let held = timing.constant_channels.get(i).copied().unwrap_or(false);
                            x[i] = self.own_mean[i] + if held { held_own[i] } else { fresh_own[i] };
                        }
                        for (j, held) in held_source.iter().enumerate() {
                            let value = if timing.fresh_sources.get(j).copied().unwrap_or(false) {
                                m.source_means[j] + m.source_sigmas[j] * normals.next(&mut rng)
                            } else {
                                *held
                            };
                            for (i, xi) in x.iter_mut().enumerate() {
                                *xi += m.source_gains[(i, j)] * value;
                            }
                        }
                        if let (Some((mode, _)), Some(f)) = (fault, amplitude) {
                            apply_fault(mode, f, &mut x);
                        }
                        let kind = self.classify(&x);
                        if kind <= 1 {
                            outside += 1;
                        }
                        rule.push(kind == 0 || kind == 2);
                    }
                    let dangerous = outside >= timing.danger_samples;
                    let slot = match (dangerous, rule.tripped) {
                        (true, true) => 0,
                        (true, false) => 1,
                        (false, true) => 2,
                        (false, false) => 3,
                    };
                    counts[slot] += 1;
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

/// Re-runs every timed site of an exact analysis by sampling (an unknown-sigma site at its
/// timed worst sigma): `mc.samples / samples-per-interval` trials (at least 10 000), rows
/// named "<site> (timed)". Empty when the file has no timing or the sampler cannot take it.
///
/// # Errors
/// None today; the signature leaves room for request checks.
pub fn verify_timed(
    model: &CompiledModel,
    exact: &Analysis,
    mc: &MonteCarloOptions,
) -> Result<Vec<Agreement>, AnalysisError> {
    let (Some(timing), Some(timed)) = (&model.timing, &exact.timed) else {
        return Ok(Vec::new());
    };
    if timed_sampling_unsupported(model, timing).is_some() {
        return Ok(Vec::new());
    }
    let sampler = Sampler::new(model);
    let trials = (mc.samples / timing.samples.max(1) as u64).max(10_000);
    let mut rows = Vec::new();
    for (k, (fault, site)) in model.faults.iter().zip(&timed.sites).enumerate() {
        let counts = sampler.count_timed(
            timing,
            Some((&fault.mode, &draw_of(fault, site.worst_sigma))),
            trials,
            mc.seed,
            (k as u64 + 1) << 20,
        );
        compare(
            &format!("{} (timed)", site.name),
            &site.outcome,
            &counts,
            &mut rows,
        );
    }
    Ok(rows)
}
