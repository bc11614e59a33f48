//! Randomised quasi-Monte Carlo integration over the unit cube `[0, 1)^d`.
//!
//! Points: an extensible (embedded) rank-1 lattice sequence in base 2 of Korobov form
//! (Hickernell, Hong, L'Ecuyer and Lemieux 2000, "Extensible lattice sequences for
//! quasi-Monte Carlo quadrature", SIAM J. Sci. Comput. 22:1117-1138): point `i` is
//! `frac(phi_2(i) z)` with `phi_2` the van der Corput radical inverse and
//! `z = (1, a, a^2, ...) mod 2^32`, so the first `2^m` points are a rank-1 lattice rule
//! with `2^m` points and doubling reuses every point already evaluated. The Korobov
//! parameter `a` of each dimension was chosen by `tests::search_generators` (run it with
//! `cargo test --release --lib prob::lattice -- --ignored --nocapture`): among 512 random
//! odd candidates, the one whose weighted `P_2` criterion (Sloan and Joe 1994,
//! *Lattice Methods for Multiple Integration*, sec. 5; weights `1/j`) stays closest to the
//! best candidate's at every size `2^6..2^20` points.
//! Periodisation (the caller chooses, see [`Periodisation`]): the polynomial change of
//! variables `t^3 (10 - 15 t + 6 t^2)` (Sloan and Joe 1994, sec. 2.12), which
//! [`crate::prob::polytope`] uses, or the baker's (tent) transform `x -> 1 - |2x - 1|`
//! (Hickernell 2002, "Obtaining O(N^{-2+e}) convergence for lattice quadrature rules").
//! Either gives lattice rules their fast convergence on smooth non-periodic integrands.
//! Randomisation: [`SHIFTS`] independent uniform shifts drawn by [`SplitMix64`] from a
//! fixed seed. The estimate is the mean over the shifts, its error
//! [`tolerance::LATTICE_SPREAD_FACTOR`] standard errors of the shift means, once every
//! shift has met a nonzero value of the integrand; before that, a bound the caller knows in
//! advance ([`Run::with_bound`]), since shifts that all missed a small support agree on a
//! wrong value.

use crate::prob::rng::SplitMix64;
use crate::prob::tolerance;

/// Number of independent random shifts.
pub const SHIFTS: usize = 12;

/// Points per shift in the first round; later rounds double it.
pub const FIRST_ROUND: usize = 64;

/// Korobov parameter per dimension `d` (index `d - 1`), from `tests::search_generators`.
const KOROBOV: [u32; 16] = [
    279_341, 976_349, 584_105, 904_967, 388_299, 716_627, 1_023_589, 685_511, 133_159, 760_425,
    24_323, 24_323, 24_323, 760_485, 889_735, 889_735,
];

/// Largest dimension [`integrate`] supports.
pub const MAX_DIM: usize = KOROBOV.len();

/// The generating vector `(1, a, a^2, ...) mod 2^32` of dimension `dim`.
fn generator(dim: usize) -> Vec<u32> {
    let a = KOROBOV[dim.clamp(1, MAX_DIM) - 1];
    let mut z = Vec::with_capacity(dim);
    let mut p: u32 = 1;
    for _ in 0..dim {
        z.push(p);
        p = p.wrapping_mul(a);
    }
    z
}

/// Coordinate of lattice point `i` (radical-inverse order) for generator entry `z`.
fn coordinate(i: u32, z: u32) -> f64 {
    f64::from(i.reverse_bits().wrapping_mul(z)) * (1.0 / 4_294_967_296.0)
}

/// How the integrand is made periodic before the lattice rule is applied.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Periodisation {
    /// The baker's (tent) transform `x -> 1 - |2x - 1|` (Hickernell 2002): no weight, so
    /// it suits higher dimensions.
    Tent,
    /// The polynomial change of variables `x = t^3 (10 - 15 t + 6 t^2)` with weight
    /// `30 t^2 (1 - t)^2` (a Korobov-type periodising transform, Sloan and Joe 1994,
    /// sec. 2.12): the weighted integrand and its first derivative vanish at both ends,
    /// which removes the endpoint singularities of Genz's integrand in few dimensions;
    /// the weight (up to 1.875 per coordinate) inflates the variance in many.
    Polynomial,
}

/// Outcome of [`integrate`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Outcome {
    /// Mean over the shifts.
    pub value: f64,
    /// `LATTICE_SPREAD_FACTOR` standard errors of the shift means once every shift has
    /// met a nonzero value of the integrand; before that `|value|` plus the run's known
    /// bound ([`Run::with_bound`]), infinite without one (an integrand that is zero at
    /// every point evaluated so far, or on the whole cube, never converges then).
    pub error: f64,
    /// Integrand evaluations over all shifts.
    pub points: usize,
    /// Whether `error <= target(value)` was reached within the budget.
    pub converged: bool,
}

/// Compensated (Neumaier) sum, so that long sums keep full precision.
#[derive(Debug, Clone, Copy, Default)]
struct Sum {
    sum: f64,
    carry: f64,
}

impl Sum {
    fn add(&mut self, x: f64) {
        let t = self.sum + x;
        if self.sum.abs() >= x.abs() {
            self.carry += (self.sum - t) + x;
        } else {
            self.carry += (x - t) + self.sum;
        }
        self.sum = t;
    }

    fn total(&self) -> f64 {
        self.sum + self.carry
    }
}

/// A lattice integration that can be resumed with a larger budget: the points already
/// evaluated are kept (the rule is embedded), so stopping early and going on later costs
/// nothing extra.
#[derive(Debug, Clone)]
pub struct Run {
    dim: usize,
    z: Vec<u32>,
    shifts: Vec<Vec<f64>>,
    sums: [Sum; SHIFTS],
    /// Whether the shift has had a nonzero integrand value yet.
    seen: [bool; SHIFTS],
    /// A bound on the absolute value of the integral known in advance (infinite if none).
    known_bound: f64,
    periodisation: Periodisation,
    /// Points per shift evaluated so far.
    done: usize,
}

impl Run {
    /// A run over `[0, 1)^dim` (at most [`MAX_DIM`]) whose shifts come from `seed`.
    pub fn new(dim: usize, seed: u64, periodisation: Periodisation) -> Self {
        let dim = dim.min(MAX_DIM);
        let mut rng = SplitMix64::new(seed);
        let shifts: Vec<Vec<f64>> = (0..SHIFTS)
            .map(|_| (0..dim).map(|_| rng.next_f64()).collect())
            .collect();
        Self {
            dim,
            z: generator(dim),
            shifts,
            sums: [Sum::default(); SHIFTS],
            seen: [false; SHIFTS],
            known_bound: f64::INFINITY,
            periodisation,
            done: 0,
        }
    }

    /// The run with `bound >= |integral|` known in advance. It stands in for the error
    /// until every shift has met a nonzero value of the integrand (see [`Outcome`]);
    /// without it such a run cannot converge. A NaN bound counts as none, a negative one
    /// by its size.
    pub fn with_bound(mut self, bound: f64) -> Self {
        self.known_bound = if bound.is_nan() {
            f64::INFINITY
        } else {
            bound.abs()
        };
        self
    }

    /// Go on until the error meets `target(value)` or `max_points` evaluations in all
    /// (over all shifts, those of earlier calls included) are spent. `f` receives a point
    /// of the unit cube (already transformed) and returns the integrand value; it must be
    /// the same integrand on every call. A fresh run evaluates at least one round.
    pub fn extend<F, T>(&mut self, max_points: usize, target: T, mut f: F) -> Outcome
    where
        F: FnMut(&[f64]) -> f64,
        T: Fn(f64) -> f64,
    {
        // Whole lattices only: powers of two per shift, within the budget.
        let per_shift_budget = (max_points / SHIFTS).clamp(1, 1 << 31);
        let mut next = if self.done == 0 {
            let mut first = FIRST_ROUND;
            while first > per_shift_budget {
                first /= 2;
            }
            first
        } else if 2 * self.done <= per_shift_budget {
            2 * self.done
        } else {
            return self.outcome(&target, true);
        };
        let mut x = vec![0.0; self.dim];
        loop {
            let lanes = self.shifts.iter().zip(self.sums.iter_mut());
            for ((shift, sum), seen) in lanes.zip(self.seen.iter_mut()) {
                for i in self.done..next {
                    let i = i as u32;
                    let mut weight = 1.0;
                    for ((xk, &zk), &sk) in x.iter_mut().zip(self.z.iter()).zip(shift.iter()) {
                        let u = (coordinate(i, zk) + sk).fract();
                        match self.periodisation {
                            Periodisation::Tent => *xk = 1.0 - (2.0 * u - 1.0).abs(),
                            Periodisation::Polynomial => {
                                let v = u * (1.0 - u);
                                *xk = u * u * u * (10.0 - 15.0 * u + 6.0 * u * u);
                                weight *= 30.0 * v * v;
                            }
                        }
                    }
                    if weight > 0.0 {
                        let term = weight * f(&x);
                        *seen |= term != 0.0;
                        sum.add(term);
                    }
                }
            }
            self.done = next;
            let outcome = self.outcome(&target, true);
            if outcome.converged {
                return outcome;
            }
            next = 2 * self.done;
            if next > per_shift_budget {
                return outcome;
            }
        }
    }

    /// The estimate from the points so far; `converged` when `allow` and the error meets
    /// the target.
    fn outcome<T: Fn(f64) -> f64>(&self, target: &T, allow: bool) -> Outcome {
        let n = self.done.max(1) as f64;
        let means: Vec<f64> = self.sums.iter().map(|s| s.total() / n).collect();
        let k = SHIFTS as f64;
        let value = means.iter().sum::<f64>() / k;
        let spread = tolerance::LATTICE_SPREAD_FACTOR * standard_error(&means, value);
        // Unless every shift has met a nonzero value, the support is small beside the
        // lattice's spacing and the spread of the shift means (zero when no shift met it;
        // a few lucky shifts against the rest otherwise) can fall far below the error.
        // Then only `|value - integral| <= |value| + known_bound` holds for certain.
        let error = if self.seen.iter().all(|&s| s) {
            spread
        } else {
            spread.max(value.abs() + self.known_bound)
        };
        Outcome {
            value,
            error,
            points: self.done * SHIFTS,
            converged: allow && self.done > 0 && error <= target(value),
        }
    }
}

/// The standard error of the mean `value` of `means` (sample standard deviation over
/// `sqrt(len)`), computed on the deviations divided by the largest one: squaring them
/// directly underflows for spreads below about 1e-154, and a tiny probability would then
/// report an error of zero whatever its shifts disagree by.
fn standard_error(means: &[f64], value: f64) -> f64 {
    let k = means.len() as f64;
    if !value.is_finite() {
        // A non-finite shift mean: no error can be claimed (and `f64::max` would skip NaN).
        return f64::NAN;
    }
    let scale = means.iter().map(|m| (m - value).abs()).fold(0.0, f64::max);
    if k < 2.0 || scale == 0.0 || !scale.is_finite() {
        return scale;
    }
    let sum_sq: f64 = means.iter().map(|m| ((m - value) / scale).powi(2)).sum();
    scale * (sum_sq / (k - 1.0) / k).sqrt()
}

/// Integrate `f` over `[0, 1)^dim` until the error meets `target(value)` or `max_points`
/// evaluations (over all shifts) are spent; the same `seed` gives the same bits.
///
/// `f` receives a point of the unit cube (already periodised) and returns the
/// integrand value. At least one round of `SHIFTS` points is always evaluated. No bound is
/// known in advance here, so an integrand that some shift has only seen as zero gives an
/// infinite error (see [`Outcome::error`]); [`Run::with_bound`] supplies one.
pub fn integrate<F, T>(
    dim: usize,
    seed: u64,
    max_points: usize,
    periodisation: Periodisation,
    target: T,
    f: F,
) -> Outcome
where
    F: FnMut(&[f64]) -> f64,
    T: Fn(f64) -> f64,
{
    Run::new(dim, seed, periodisation).extend(max_points, target, f)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Regenerates `KOROBOV`: for each dimension, the odd Korobov parameter among 512
    /// random candidates whose weighted P_2 criterion (Sloan and Joe 1994, sec. 5: the
    /// worst-case error in the Korobov space of smoothness 2, weights 1/j) has the smallest
    /// worst ratio to the best candidate of each size over 2^6..2^20 points.
    #[test]
    #[ignore = "offline search of the lattice generators (about a minute)"]
    #[allow(clippy::needless_range_loop)] // index loops mirror the criterion formula
    fn search_generators() {
        const BITS: u32 = 20;
        const MIN_BITS: u32 = 6;
        const CANDIDATES: usize = 512;
        let dims = MAX_DIM;
        let two_pi2 = 2.0 * std::f64::consts::PI * std::f64::consts::PI;
        let weights: Vec<f64> = (0..dims).map(|j| 1.0 / (j as f64 + 1.0)).collect();
        let mut rng = SplitMix64::new(20_000_117);
        let candidates: Vec<u32> = (0..CANDIDATES)
            .map(|_| ((rng.next_u64() as u32) & ((1 << BITS) - 1)) | 1)
            .collect();
        let levels = (BITS - MIN_BITS + 1) as usize;
        // crit[c][level][d]
        let mut crit = vec![vec![vec![0.0; dims]; levels]; CANDIDATES];
        for (c, &a) in candidates.iter().enumerate() {
            let mut z = vec![0u32; dims];
            let mut p = 1u32;
            for zj in z.iter_mut() {
                *zj = p & ((1 << BITS) - 1);
                p = p.wrapping_mul(a);
            }
            let mut acc = vec![0.0; dims];
            for i in 0u32..(1 << BITS) {
                let t = i.reverse_bits() >> (32 - BITS);
                let mut prod = 1.0;
                for j in 0..dims {
                    let x = f64::from(t.wrapping_mul(z[j]) & ((1 << BITS) - 1))
                        / f64::from(1u32 << BITS);
                    prod *= 1.0 + weights[j] * two_pi2 * (x * x - x + 1.0 / 6.0);
                    acc[j] += prod - 1.0;
                }
                let count = i + 1;
                if count.is_power_of_two() && count >= (1 << MIN_BITS) {
                    let level = (count.trailing_zeros() - MIN_BITS) as usize;
                    for j in 0..dims {
                        crit[c][level][j] = acc[j] / f64::from(count);
                    }
                }
            }
        }
        let mut chosen = Vec::new();
        for d in 0..dims {
            let bests: Vec<f64> = (0..levels)
                .map(|l| {
                    let mut v: Vec<f64> = (0..CANDIDATES).map(|c| crit[c][l][d]).collect();
                    v.sort_by(f64::total_cmp);
                    v[0]
                })
                .collect();
            let score = |c: usize| {
                (0..levels)
                    .map(|l| crit[c][l][d] / bests[l])
                    .fold(0.0, f64::max)
            };
            let best = (0..CANDIDATES)
                .min_by(|&x, &y| score(x).total_cmp(&score(y)))
                .unwrap();
            println!(
                "dim {}: a = {} (worst ratio to the best {:.3}, P_2 at 2^20 {:.3e})",
                d + 1,
                candidates[best],
                score(best),
                crit[best][levels - 1][d]
            );
            chosen.push(candidates[best]);
        }
        println!("const KOROBOV: [u32; {dims}] = {chosen:?};");
    }

    #[test]
    fn smooth_integral_converges() {
        // Integral of prod_k (1 + (x_k - 1/2)) over the unit cube is 1 (by hand). Target 1e-6:
        // measured, the lattice's error estimate is 1.8e-7 after 786,432 points (true error
        // 4e-8, inside the estimate), so 1e-9 within a budget of 1e6 is out of reach.
        let out = integrate(
            4,
            7,
            1_000_000,
            Periodisation::Tent,
            |_| 1e-6,
            |x| x.iter().map(|v| 0.5 + v).product(),
        );
        assert!(out.converged);
        assert!((out.value - 1.0).abs() <= out.error.max(1e-12));
    }

    #[test]
    fn budget_is_respected() {
        let out = integrate(
            3,
            7,
            10_000,
            Periodisation::Polynomial,
            |_| 0.0,
            |x| x[0].sin() + x[1] * x[2],
        );
        assert!(!out.converged);
        assert!(out.points <= 10_000);
        // Same seed, same bits.
        let again = integrate(
            3,
            7,
            10_000,
            Periodisation::Polynomial,
            |_| 0.0,
            |x| x[0].sin() + x[1] * x[2],
        );
        assert_eq!(out, again);
    }

    #[test]
    fn error_scales_with_the_integrand_down_to_tiny_values() {
        // The spread of the shifts is homogeneous of degree one in the integrand (common
        // practice: an error estimate in the units of the value). Squared deviations of
        // shift means near 1e-200 underflow to zero and near 1e200 overflow, so a direct
        // sum of squares reported 0 and infinity there.
        let f = |x: &[f64]| x[0].sin() + x[1] * x[2];
        let unit = integrate(3, 7, 12 * 256, Periodisation::Polynomial, |_| 0.0, f);
        assert!(unit.error > 0.0);
        for scale in [1e-200, 1e-300, 1e200] {
            let scaled = integrate(
                3,
                7,
                12 * 256,
                Periodisation::Polynomial,
                |_| 0.0,
                |x| scale * f(x),
            );
            for (got, want) in [(scaled.value, unit.value), (scaled.error, unit.error)] {
                let ratio = got / (scale * want);
                assert!((ratio - 1.0).abs() < 1e-9, "scale {scale:e}: ratio {ratio}");
            }
        }
    }

    #[test]
    fn shifts_that_miss_a_small_support_fall_back_to_the_known_bound() {
        // f = 1 on 0.3 <= x_0 < 0.3 + width, else 0: integral `width` (by hand). At 64
        // points a shift, width 1e-4 is missed by every shift (0 +- 0 by the spread alone)
        // and width 1e-2 by some; only the bound known in advance says how wrong that is.
        for width in [1e-4, 1e-2] {
            let f = |x: &[f64]| {
                if (0.3..0.3 + width).contains(&x[0]) {
                    1.0
                } else {
                    0.0
                }
            };
            let blind = integrate(2, 7, 12 * 64, Periodisation::Tent, |_| 1.0, f);
            assert!(!blind.converged, "width {width}: {blind:?}");
            assert!(blind.error.is_infinite());
            let known = Run::new(2, 7, Periodisation::Tent)
                .with_bound(2.0 * width)
                .extend(12 * 64, |_| 1.0, f);
            assert!(known.converged);
            assert!((known.value - width).abs() <= known.error, "{known:?}");
            assert!(known.error >= 2.0 * width);
        }
    }

    #[test]
    fn resumed_run_gives_the_bits_of_one_run() {
        // The rule is embedded: stopping at 12 * 256 points and going on to 12 * 4096 must
        // evaluate exactly the points of one run to 12 * 4096, and return the same bits.
        // Integrand with integral 1 (prod_k (1/2 + x_k), by hand) for a sanity check.
        let f = |x: &[f64]| x.iter().map(|v| 0.5 + v).product::<f64>();
        let mut calls = 0usize;
        let mut counted = |x: &[f64]| {
            calls += 1;
            f(x)
        };
        let mut run = Run::new(3, 7, Periodisation::Polynomial);
        let early = run.extend(12 * 256, |_| 0.0, &mut counted);
        assert!(!early.converged);
        assert_eq!(early.points, 12 * 256);
        let resumed = run.extend(12 * 4096, |_| 0.0, &mut counted);
        let whole = integrate(3, 7, 12 * 4096, Periodisation::Polynomial, |_| 0.0, f);
        assert_eq!(resumed, whole);
        assert_eq!(calls, 12 * 4096);
        assert!((whole.value - 1.0).abs() <= whole.error.max(1e-12));
        // Asked for no more than it has, a run reports what it has.
        let again = run.extend(12 * 4096, |_| 0.0, f);
        assert_eq!(again, whole);
    }
}
