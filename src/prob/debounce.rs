//! Debounced detection over a run of samples: which confirmation rule trips when, and how
//! often it trips without a fault.
//!
//! A diagnostic rarely reacts to one firing sample. It confirms: `n` consecutive firing
//! samples, at least `m` of the last `n`, or an up/down counter that climbs on a firing
//! sample, falls on a quiet one and trips at a level. Given the terms that stay constant over
//! the interval, the samples are independent, so the rule is a small Markov chain over its
//! states driven by the per-sample probabilities (the embedding of runs and scan statistics
//! into a finite chain: Fu and Koutras 1994, "Distribution theory of runs: a Markov chain
//! approach", JASA 89). [`DebounceChain::interval`] carries, beside the rule's state, how many
//! samples so far left the safety band, so that one pass gives the four outcome
//! probabilities over the interval and the detection curve.
//!
//! Without a fault the rule's verdict (tripped or not) switches on now and then: an alarm
//! episode. [`episode_rate`] is the steady-state rate of episodes per sample, in closed form
//! for runs and windows and by the GTH elimination (Grassmann, Taksar and Heyman 1985,
//! Operations Research 33, which subtracts nothing and so keeps tiny probabilities to full
//! relative accuracy) for counters.

use super::error::ProbError;

/// Longest window of a "count of the last n" rule (its chain has up to 2^(n-1) states).
pub const MAX_WINDOW: usize = 16;

/// Largest trip level of a counter, and longest run of a consecutive rule.
pub const MAX_LEVEL: usize = 256;

/// How a diagnostic confirms a fault from its per-sample verdicts.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Debounce {
    /// Trips when `count` consecutive samples fire.
    Consecutive {
        /// The run length that trips.
        count: usize,
    },
    /// Trips when at least `count` of the last `window` samples fire.
    Window {
        /// Firing samples needed.
        count: usize,
        /// Samples looked back over (the newest included).
        window: usize,
    },
    /// A counter that starts at 0, climbs by `up` on a firing sample, falls by `down` (not
    /// below 0) on a quiet one, and trips when it reaches `trip`.
    Counter {
        /// Step on a firing sample.
        up: usize,
        /// Step on a quiet sample.
        down: usize,
        /// The level that trips.
        trip: usize,
    },
}

impl Debounce {
    /// The rule that trips on the first firing sample (one sample, no confirmation).
    pub const IMMEDIATE: Debounce = Debounce::Consecutive { count: 1 };

    /// Checks the rule's numbers.
    ///
    /// # Errors
    /// [`ProbError::InvalidArgument`] naming the number and its allowed range.
    pub fn validate(&self) -> Result<(), ProbError> {
        let bad = |m: String| Err(ProbError::InvalidArgument(m));
        match *self {
            Debounce::Consecutive { count } if count == 0 || count > MAX_LEVEL => bad(format!(
                "a run of {count} consecutive samples: give 1 to {MAX_LEVEL}"
            )),
            Debounce::Window { count, window }
                if window == 0 || window > MAX_WINDOW || count == 0 || count > window =>
            {
                bad(format!(
                    "{count} of the last {window} samples: give a window of 1 to {MAX_WINDOW} \
                     and a count of 1 to the window"
                ))
            }
            Debounce::Counter { up, down, trip }
                if up == 0 || down == 0 || trip == 0 || trip > MAX_LEVEL || up > trip =>
            {
                bad(format!(
                    "a counter stepping up {up}, down {down}, tripping at {trip}: give steps of \
                     at least 1, a trip level of 1 to {MAX_LEVEL} and a step up no larger than it"
                ))
            }
            _ => Ok(()),
        }
    }

    /// The rule's chain.
    ///
    /// # Errors
    /// As [`Debounce::validate`].
    pub fn chain(&self) -> Result<DebounceChain, ProbError> {
        self.validate()?;
        Ok(match *self {
            Debounce::Consecutive { count } => DebounceChain {
                on_fire: (0..count)
                    .map(|run| (run + 1 < count).then_some(run + 1))
                    .collect(),
                on_quiet: vec![0; count],
            },
            Debounce::Counter { up, down, trip } => DebounceChain {
                on_fire: (0..trip)
                    .map(|level| (level + up < trip).then_some(level + up))
                    .collect(),
                on_quiet: (0..trip).map(|level| level.saturating_sub(down)).collect(),
            },
            Debounce::Window { count, window } => window_chain(count, window),
        })
    }

    /// Samples the rule needs at the least before it can trip.
    pub fn fastest_trip(&self) -> usize {
        match *self {
            Debounce::Consecutive { count } => count,
            Debounce::Window { count, .. } => count,
            Debounce::Counter { up, trip, .. } => trip.div_ceil(up.max(1)),
        }
    }
}

/// The states of a "count of the last n" rule: the last `window - 1` verdicts as bits
/// (bit 0 the newest) holding fewer than `count` firings; a firing sample trips when the
/// window with it holds `count`.
fn window_chain(count: usize, window: usize) -> DebounceChain {
    let bits = window - 1;
    let mask: u32 = if bits == 0 { 0 } else { (1u32 << bits) - 1 };
    let mut index = vec![usize::MAX; 1usize << bits];
    let mut states: Vec<u32> = vec![0];
    index[0] = 0;
    let mut on_fire = Vec::new();
    let mut on_quiet = Vec::new();
    let mut next = 0;
    while next < states.len() {
        let w = states[next];
        next += 1;
        let mut target = |bits_after: u32, states: &mut Vec<u32>| {
            let slot = &mut index[bits_after as usize];
            if *slot == usize::MAX {
                *slot = states.len();
                states.push(bits_after);
            }
            *slot
        };
        let fired = w.count_ones() as usize + 1 >= count;
        on_fire.push(if fired {
            None
        } else {
            Some(target(((w << 1) | 1) & mask, &mut states))
        });
        on_quiet.push(target((w << 1) & mask, &mut states));
    }
    DebounceChain { on_fire, on_quiet }
}

/// A confirmation rule as a chain: state 0 is the reset state; a firing sample moves to the
/// next state or trips (`None`), a quiet one never trips.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DebounceChain {
    on_fire: Vec<Option<usize>>,
    on_quiet: Vec<usize>,
}

/// The joint probabilities of one sample, given the constant terms: fires and leaves the
/// safety band, stays quiet and leaves it, fires inside it, quiet inside it (the order of the
/// four outcomes `p_vd, p_vu, p_sd, p_sq`).
pub type SampleOutcome = [f64; 4];

/// What a rule does over an interval of samples.
#[derive(Debug, Clone, PartialEq)]
pub struct IntervalFigures {
    /// Over the interval: dangerous and tripped, dangerous and not tripped, tripped and not
    /// dangerous, neither (dangerous: the output left the band in at least the required
    /// number of samples; tripped: the rule tripped by the last sample).
    pub outcome: [f64; 4],
    /// `detected_by[j]`: the probability that the rule has tripped by sample `j + 1`.
    pub detected_by: Vec<f64>,
}

impl DebounceChain {
    /// Number of states (the tripped state not counted).
    pub fn states(&self) -> usize {
        self.on_fire.len()
    }

    /// The state after one verdict, `None` when the rule trips.
    pub fn step(&self, state: usize, fired: bool) -> Option<usize> {
        if fired {
            self.on_fire.get(state).copied().flatten()
        } else {
            self.on_quiet.get(state).copied()
        }
    }

    /// The rule over `samples` samples from its reset state, each sample independent with the
    /// joint probabilities `sample`; dangerous means at least `danger` samples (1 or more)
    /// outside the safety band. Sums of products of the inputs only (no subtraction), so small
    /// figures keep their relative accuracy. Work: `samples * states * (danger + 1)`.
    pub fn interval(
        &self,
        sample: SampleOutcome,
        samples: usize,
        danger: usize,
    ) -> IntervalFigures {
        let danger = danger.max(1);
        let width = danger + 1;
        let [vd, vu, sd, sq] = sample.map(|p| p.max(0.0));
        let (violate, safe) = (vd + vu, sd + sq);
        let mut undetected = vec![0.0; self.states() * width];
        let mut next_undetected = vec![0.0; undetected.len()];
        let mut detected = vec![0.0; width];
        let mut next_detected = vec![0.0; width];
        undetected[0] = 1.0;
        let mut detected_by = Vec::with_capacity(samples);
        for _ in 0..samples {
            next_undetected.iter_mut().for_each(|x| *x = 0.0);
            next_detected.iter_mut().for_each(|x| *x = 0.0);
            for d in 0..width {
                let up = (d + 1).min(danger);
                next_detected[up] += detected[d] * violate;
                next_detected[d] += detected[d] * safe;
            }
            for s in 0..self.states() {
                for d in 0..width {
                    let mass = undetected[s * width + d];
                    if mass == 0.0 {
                        continue;
                    }
                    let up = (d + 1).min(danger);
                    match self.on_fire[s] {
                        None => {
                            next_detected[up] += mass * vd;
                            next_detected[d] += mass * sd;
                        }
                        Some(t) => {
                            next_undetected[t * width + up] += mass * vd;
                            next_undetected[t * width + d] += mass * sd;
                        }
                    }
                    let t = self.on_quiet[s];
                    next_undetected[t * width + up] += mass * vu;
                    next_undetected[t * width + d] += mass * sq;
                }
            }
            std::mem::swap(&mut undetected, &mut next_undetected);
            std::mem::swap(&mut detected, &mut next_detected);
            detected_by.push(detected.iter().sum());
        }
        let quiet_danger: f64 = (0..self.states())
            .map(|s| undetected[s * width + danger])
            .sum();
        let quiet_safe: f64 = (0..self.states())
            .flat_map(|s| (0..danger).map(move |d| (s, d)))
            .map(|(s, d)| undetected[s * width + d])
            .sum();
        IntervalFigures {
            outcome: [
                detected[danger],
                quiet_danger,
                detected[..danger].iter().sum(),
                quiet_safe,
            ],
            detected_by,
        }
    }
}

/// Alarm episodes per sample in steady fault-free operation: the rate at which the rule's
/// verdict turns from quiet to tripped when each sample fires independently with
/// probability `p` (the verdict is not latched: it follows the samples, as the rule
/// defines it, and each turn-on counts once).
///
/// - `count` of the last `window`: the newest sample fires, the one that just left the
///   window did not, and the `window - 1` between hold `count - 1` firings:
///   `C(window - 1, count - 1) p^count (1 - p)^(window - count + 1)` (a run of `r` is the case
///   `count = window = r`: `p^r (1 - p)`).
/// - counter: the level saturates at the trip level and the verdict is "tripped" there; the
///   rate is `p` times the steady-state probability of the levels one step up from tripping,
///   the steady state by GTH elimination.
///
/// # Errors
/// As [`Debounce::validate`]; a `p` outside `[0, 1]`.
pub fn episode_rate(rule: &Debounce, p: f64) -> Result<f64, ProbError> {
    rule.validate()?;
    if !(0.0..=1.0).contains(&p) {
        return Err(ProbError::InvalidArgument(format!(
            "a firing probability of {p}: give a value in [0, 1]"
        )));
    }
    Ok(match *rule {
        Debounce::Consecutive { count } => window_rate(count, count, p),
        Debounce::Window { count, window } => window_rate(count, window, p),
        Debounce::Counter { up, down, trip } => counter_rate(up, down, trip, p),
    })
}

/// An upper bound on how far [`episode_rate`] moves when `p` moves by at most `error`: the
/// largest change over the ends of `[p - error, p + error]` (clamped to `[0, 1]`) and, for a
/// window rule, the peak of its polynomial when it lies inside. For a counter the rate is
/// evaluated at the ends and at eight points between; its bound is a generous twice the
/// largest change seen (the rate is smooth in `p`).
///
/// # Errors
/// As [`episode_rate`].
pub fn episode_rate_sensitivity(rule: &Debounce, p: f64, error: f64) -> Result<f64, ProbError> {
    let centre = episode_rate(rule, p)?;
    let (lo, hi) = ((p - error).max(0.0), (p + error).min(1.0));
    let mut points = vec![lo, hi];
    let mut factor = 1.0;
    match *rule {
        Debounce::Consecutive { count } => points.push(count as f64 / (count as f64 + 1.0)),
        Debounce::Window { count, window } => points.push(count as f64 / (window as f64 + 1.0)),
        Debounce::Counter { .. } => {
            points.extend((1..9).map(|k| lo + (hi - lo) * k as f64 / 9.0));
            factor = 2.0;
        }
    }
    let mut worst: f64 = 0.0;
    for x in points.into_iter().filter(|x| *x >= lo && *x <= hi) {
        worst = worst.max((episode_rate(rule, x)? - centre).abs());
    }
    Ok(factor * worst)
}

fn window_rate(count: usize, window: usize, p: f64) -> f64 {
    let ways = binomial(window - 1, count - 1);
    ways * super::int_pow(p, count as u32) * super::int_pow(1.0 - p, (window - count + 1) as u32)
}

/// `C(n, k)` as a float (exact for the sizes of [`MAX_WINDOW`]).
fn binomial(n: usize, k: usize) -> f64 {
    let mut c = 1.0;
    for i in 0..k {
        c = c * (n - i) as f64 / (i + 1) as f64;
    }
    c.round()
}

/// The episode rate of a counter: states `0..=trip`, the last one the tripped verdict.
fn counter_rate(up: usize, down: usize, trip: usize, p: f64) -> f64 {
    if p <= 0.0 || p >= 1.0 {
        // Never fires, or fires always: the verdict never changes after the start.
        return 0.0;
    }
    let n = trip + 1;
    let mut matrix = vec![vec![0.0; n]; n];
    for (level, row) in matrix.iter_mut().enumerate() {
        row[(level + up).min(trip)] += p;
        row[level.saturating_sub(down)] += 1.0 - p;
    }
    let pi = stationary_gth(matrix);
    let entering: f64 = (0..trip).filter(|l| l + up >= trip).map(|l| pi[l]).sum();
    entering * p
}

/// The stationary distribution of an irreducible chain by GTH elimination (Grassmann,
/// Taksar and Heyman 1985): states are removed from the last down, the removed state's
/// outflow redistributed over the rest; no subtraction anywhere.
fn stationary_gth(mut p: Vec<Vec<f64>>) -> Vec<f64> {
    let n = p.len();
    let mut outflow = vec![0.0; n];
    for k in (1..n).rev() {
        let s: f64 = p[k][..k].iter().sum();
        outflow[k] = s;
        if s <= 0.0 {
            continue;
        }
        let (upper, lower) = p.split_at_mut(k);
        let removed = &lower[0];
        for row in upper.iter_mut() {
            let factor = row[k] / s;
            if factor == 0.0 {
                continue;
            }
            for (cell, out) in row[..k].iter_mut().zip(&removed[..k]) {
                *cell += factor * out;
            }
        }
    }
    let mut pi = vec![0.0; n];
    pi[0] = 1.0;
    for k in 1..n {
        if outflow[k] <= 0.0 {
            continue;
        }
        let inflow: f64 = (0..k).map(|i| pi[i] * p[i][k]).sum();
        pi[k] = inflow / outflow[k];
    }
    let total: f64 = pi.iter().sum();
    pi.iter().map(|x| x / total).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_sample_one_verdict_is_the_sample_itself() {
        // With one sample and a rule that trips on the first firing sample, the interval is
        // the sample (definition).
        let chain = Debounce::IMMEDIATE.chain().unwrap();
        let f = chain.interval([0.1, 0.2, 0.3, 0.4], 1, 1);
        assert_eq!(f.outcome, [0.1, 0.2, 0.3, 0.4]);
        assert_eq!(f.detected_by, vec![0.1 + 0.3]);
    }

    #[test]
    fn window_states_hold_fewer_firings_than_the_count() {
        // 3 of the last 5: windows of 4 bits with at most 2 ones: 1 + 4 + 6 = 11 (counting).
        let chain = Debounce::Window {
            count: 3,
            window: 5,
        }
        .chain()
        .unwrap();
        assert_eq!(chain.states(), 11);
    }

    #[test]
    fn rules_outside_their_ranges_are_refused() {
        for rule in [
            Debounce::Consecutive { count: 0 },
            Debounce::Window {
                count: 3,
                window: 2,
            },
            Debounce::Window {
                count: 1,
                window: 17,
            },
            Debounce::Counter {
                up: 0,
                down: 1,
                trip: 3,
            },
            Debounce::Counter {
                up: 4,
                down: 1,
                trip: 3,
            },
        ] {
            assert!(rule.chain().is_err(), "{rule:?}");
        }
        assert!(episode_rate(&Debounce::IMMEDIATE, 1.5).is_err());
    }

    #[test]
    fn gth_matches_detailed_balance_of_a_unit_counter() {
        // Birth-death chain on 0..=L with up and down steps of 1: pi_l proportional to
        // (p / (1 - p))^l (detailed balance, common practice); entering L = pi_{L-1} p.
        let (p, trip) = (0.2, 4);
        let rho: f64 = p / (1.0 - p);
        let norm: f64 = (0..=trip)
            .map(|l| crate::prob::int_pow(rho, l as u32))
            .sum();
        let expected = crate::prob::int_pow(rho, trip as u32 - 1) / norm * p;
        let got = counter_rate(1, 1, trip, p);
        assert!(
            (got - expected).abs() <= 1e-15 * expected,
            "{got} {expected}"
        );
    }
}
