//! The Monte Carlo cross-check of isolation: each sample is classified by the file's formulas
//! (the checks that fired, the detection rule) and the isolation rule as its definition reads
//! (the candidate in every fired check; the reading farthest from the sorted median, with its
//! lead over the next farthest), not through the polytopes of `analysis::isolation`.

use rayon::prelude::*;

use crate::model::{CompiledModel, Detection, FaultMode, Isolation, IsolationRule};
use crate::prob::Estimate;
use crate::prob::rng::SplitMix64;

use super::error::AnalysisError;
use super::montecarlo::{
    Agreement, CHUNK, Draw, MonteCarloOptions, NormalSource, Sampler, Z_999, draw_of, wilson,
};
use super::run::Analysis;

/// The class of a sampled point: `None` when not detected, else the blamed candidate's
/// position, or `candidates.len()` when none is blamed.
pub fn blamed_class(model: &CompiledModel, isolation: &Isolation, x: &[f64]) -> Option<usize> {
    let fired: Vec<usize> = model
        .checks
        .iter()
        .enumerate()
        .filter(|(_, c)| {
            let v = c.formula.eval(x);
            v < c.lower || v > c.upper
        })
        .map(|(i, _)| i)
        .collect();
    let detected = match model.detection {
        Detection::Any => !fired.is_empty(),
        Detection::AtLeast(k) => fired.len() >= k.max(1),
    };
    if !detected {
        return None;
    }
    let none = isolation.candidates.len();
    Some(match isolation.rule {
        IsolationRule::InEveryFiredCheck => {
            let inside: Vec<usize> = isolation
                .candidates
                .iter()
                .enumerate()
                .filter(|(_, c)| {
                    fired.iter().all(|f| {
                        isolation
                            .check_channels
                            .get(*f)
                            .is_some_and(|chs| chs.contains(c))
                    })
                })
                .map(|(i, _)| i)
                .collect();
            if inside.len() == 1 { inside[0] } else { none }
        }
        IsolationRule::FarthestFromMedian { margin } => {
            let values: Vec<f64> = isolation
                .candidates
                .iter()
                .map(|&c| x.get(c).copied().unwrap_or(f64::NAN))
                .collect();
            let mut sorted = values.clone();
            sorted.sort_by(f64::total_cmp);
            let n = sorted.len();
            let median = if n % 2 == 1 {
                sorted[n / 2]
            } else {
                0.5 * (sorted[n / 2 - 1] + sorted[n / 2])
            };
            let distance: Vec<f64> = values.iter().map(|v| (v - median).abs()).collect();
            let mut best = 0;
            for (i, d) in distance.iter().enumerate() {
                if *d > distance[best] {
                    best = i;
                }
            }
            let next = distance
                .iter()
                .enumerate()
                .filter(|(i, _)| *i != best)
                .map(|(_, d)| *d)
                .fold(f64::NEG_INFINITY, f64::max);
            if distance[best] - next > margin {
                best
            } else {
                none
            }
        }
    })
}

/// Sampled counts of the isolation classes of one scenario: one per candidate, then "none
/// blamed", then "not detected".
pub fn count_classes(
    sampler: &Sampler<'_>,
    isolation: &Isolation,
    fault: Option<(&FaultMode, &Draw)>,
    samples: u64,
    seed: u64,
    stream: u64,
) -> Vec<u64> {
    let model = sampler.model;
    let classes = isolation.candidates.len() + 2;
    let chunks = samples.div_ceil(CHUNK);
    let per_chunk: Vec<Vec<u64>> = (0..chunks)
        .into_par_iter()
        .map(|c| {
            let mut rng = SplitMix64::new(
                seed ^ stream.wrapping_mul(0xD6E8_FEB8_6659_FD93)
                    ^ c.wrapping_mul(0x9FB2_1C65_1E98_DF25),
            );
            let mut normals = NormalSource::default();
            let mut x = vec![0.0; model.channels.len()];
            let mut counts = vec![0u64; classes];
            let todo = CHUNK.min(samples - c * CHUNK);
            for _ in 0..todo {
                sampler.draw(&mut rng, &mut normals, fault, &mut x);
                let k = blamed_class(model, isolation, &x).unwrap_or(classes - 1);
                counts[k] += 1;
            }
            counts
        })
        .collect();
    let mut total = vec![0u64; classes];
    for c in per_chunk {
        for (t, v) in total.iter_mut().zip(c) {
            *t += v;
        }
    }
    total
}

/// Re-samples the isolation figures of every site (an unknown spread at the sigma where the
/// exact analysis took them) and compares `isolated`, `wrong_channel` and `none_blamed` with
/// their 99.9 % Wilson intervals. Empty when the analysis has no isolation.
///
/// # Errors
/// None today; the signature matches the other cross-checks.
pub fn verify_isolation(
    model: &CompiledModel,
    exact: &Analysis,
    mc: &MonteCarloOptions,
) -> Result<Vec<Agreement>, AnalysisError> {
    let (Some(isolation), Some(found)) = (&model.isolation, &exact.isolation) else {
        return Ok(Vec::new());
    };
    let sampler = Sampler::new(model);
    let mut rows = Vec::new();
    let n = mc.samples.max(1) as f64;
    for (k, (fault, site)) in model.faults.iter().zip(&found.sites).enumerate() {
        let draw = draw_of(fault, site.sigma);
        let counts = count_classes(
            &sampler,
            isolation,
            Some((&fault.mode, &draw)),
            mc.samples,
            mc.seed,
            (k as u64 + 1) << 12,
        );
        let none = isolation.candidates.len();
        let sum = |set: &[usize]| set.iter().map(|i| counts[*i]).sum::<u64>() as f64;
        let healthy: Vec<usize> = (0..none).filter(|i| !site.faulty.contains(i)).collect();
        let figures: [(&'static str, Estimate, f64); 3] = [
            ("isolated", site.isolated, sum(&site.faulty)),
            ("wrong_channel", site.wrong, sum(&healthy)),
            ("none_blamed", site.blame.declined, counts[none] as f64),
        ];
        for (figure, e, hits) in figures {
            let (lo, hi) = wilson(hits, n, Z_999);
            rows.push(Agreement {
                scenario: format!("{} (isolation)", site.name),
                figure,
                exact: e,
                sampled: hits / n,
                interval: (lo, hi),
                agrees: e.value + e.error >= lo && e.value - e.error <= hi,
            });
        }
    }
    Ok(rows)
}
