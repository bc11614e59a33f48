//! The confirmation rules of `prob::debounce` against outside references: Feller's
//! generating function of the waiting time for a success run, his mean waiting time, the
//! detailed balance of a birth–death chain, and brute-force enumeration of every sequence
//! of sample verdicts, with each rule applied as its definition reads (not through the chain).

// Index loops read as the formulas do.
#![allow(clippy::needless_range_loop)]

use concord::prob::debounce::{Debounce, episode_rate, episode_rate_sensitivity};

/// The rule applied to a sequence of verdicts by its definition; the index of the sample
/// (0-based) at which it first trips.
fn trips_at(rule: &Debounce, fired: &[bool]) -> Option<usize> {
    match *rule {
        Debounce::Consecutive { count } => {
            let mut run = 0;
            for (t, f) in fired.iter().enumerate() {
                run = if *f { run + 1 } else { 0 };
                if run >= count {
                    return Some(t);
                }
            }
            None
        }
        Debounce::Window { count, window } => (0..fired.len()).find(|&t| {
            let start = (t + 1).saturating_sub(window);
            fired[start..=t].iter().filter(|f| **f).count() >= count
        }),
        Debounce::Counter { up, down, trip } => {
            let mut level = 0usize;
            for (t, f) in fired.iter().enumerate() {
                level = if *f {
                    level + up
                } else {
                    level.saturating_sub(down)
                };
                if level >= trip {
                    return Some(t);
                }
            }
            None
        }
    }
}

fn rules() -> Vec<Debounce> {
    vec![
        Debounce::Consecutive { count: 1 },
        Debounce::Consecutive { count: 3 },
        Debounce::Window {
            count: 2,
            window: 3,
        },
        Debounce::Window {
            count: 3,
            window: 5,
        },
        Debounce::Window {
            count: 4,
            window: 4,
        },
        Debounce::Counter {
            up: 1,
            down: 1,
            trip: 3,
        },
        Debounce::Counter {
            up: 2,
            down: 1,
            trip: 5,
        },
        Debounce::Counter {
            up: 3,
            down: 2,
            trip: 4,
        },
    ]
}

#[test]
fn runs_follow_fellers_generating_function() {
    // Feller, An Introduction to Probability Theory and Its Applications, vol. 1, 3rd ed.,
    // ch. XIII, sec. 7 (recalled from memory): the probability q_n of no success run of
    // length r in n trials has the generating function
    // (1 - p^r s^r) / (1 - s + q p^r s^(r+1)), so
    // q_n = q_(n-1) - q p^r q_(n-r-1) + [n = 0] - p^r [n = r].
    for &p in &[0.1f64, 0.5, 0.8] {
        for &r in &[1usize, 2, 3, 5] {
            let n_max = 40;
            let q = 1.0 - p;
            let pr = p.powi(r as i32);
            let mut no_run = vec![0.0f64; n_max + 1];
            for n in 0..=n_max {
                let prev = if n >= 1 { no_run[n - 1] } else { 0.0 };
                let back = if n > r { no_run[n - r - 1] } else { 0.0 };
                let mut v = prev - q * pr * back;
                if n == 0 {
                    v += 1.0;
                }
                if n == r {
                    v -= pr;
                }
                no_run[n] = v;
            }
            let chain = Debounce::Consecutive { count: r }.chain().unwrap();
            let f = chain.interval([0.0, 0.0, p, q], n_max, 1);
            for n in 1..=n_max {
                let got = 1.0 - f.detected_by[n - 1];
                assert!(
                    (got - no_run[n]).abs() <= 1e-13,
                    "p {p} r {r} n {n}: chain {got}, Feller {}",
                    no_run[n]
                );
            }
        }
    }
}

#[test]
fn mean_waiting_time_for_a_run_is_fellers() {
    // Feller vol. 1, ch. XIII (the formula the issue quotes): the mean waiting time for r
    // consecutive successes is (1 - p^r) / ((1 - p) p^r). From the chain: sum over t >= 0 of
    // P(T > t).
    for &(p, r) in &[(0.5f64, 3usize), (0.7, 4), (0.9, 2), (0.3, 2)] {
        let expected = (1.0 - p.powi(r as i32)) / ((1.0 - p) * p.powi(r as i32));
        let samples = 4000;
        let chain = Debounce::Consecutive { count: r }.chain().unwrap();
        let f = chain.interval([0.0, 0.0, p, 1.0 - p], samples, 1);
        let tail = 1.0 - f.detected_by[samples - 1];
        assert!(tail < 1e-13, "p {p} r {r}: tail {tail} not negligible");
        let mean = 1.0 + f.detected_by.iter().map(|d| 1.0 - d).sum::<f64>();
        assert!(
            (mean - expected).abs() <= 1e-10 * expected,
            "p {p} r {r}: {mean} vs {expected}"
        );
    }
}

#[test]
fn every_rule_matches_brute_force_over_all_verdict_sequences() {
    // Enumeration of all 2^n sequences of independent verdicts (each sample fires with
    // probability p): the probability of a trip by each sample.
    let p = 0.37;
    let n = 12;
    for rule in rules() {
        let chain = rule.chain().unwrap();
        let f = chain.interval([0.0, 0.0, p, 1.0 - p], n, 1);
        let mut by = vec![0.0; n];
        for code in 0u32..(1 << n) {
            let fired: Vec<bool> = (0..n).map(|i| code >> i & 1 == 1).collect();
            let ones = fired.iter().filter(|f| **f).count() as i32;
            let weight = p.powi(ones) * (1.0 - p).powi(n as i32 - ones);
            if let Some(t) = trips_at(&rule, &fired) {
                for b in by.iter_mut().skip(t) {
                    *b += weight;
                }
            }
        }
        for t in 0..n {
            assert!(
                (f.detected_by[t] - by[t]).abs() <= 1e-13,
                "{rule:?} sample {}: chain {} enumeration {}",
                t + 1,
                f.detected_by[t],
                by[t]
            );
        }
    }
}

#[test]
fn danger_and_detection_jointly_match_brute_force() {
    // All 4^n sequences of joint sample outcomes (fires / leaves the band), n = 6: the four
    // interval outcomes by definition (dangerous: at least k samples outside the band;
    // detected: the rule tripped by the last sample).
    let sample = [0.05, 0.1, 0.25, 0.6];
    let n = 6;
    for rule in rules() {
        for danger in 1..=3 {
            let f = rule.chain().unwrap().interval(sample, n, danger);
            let mut expected = [0.0; 4];
            for code in 0u32..(1 << (2 * n)) {
                let kinds: Vec<usize> = (0..n).map(|i| (code >> (2 * i) & 3) as usize).collect();
                let weight: f64 = kinds.iter().map(|k| sample[*k]).product();
                let fired: Vec<bool> = kinds.iter().map(|k| *k == 0 || *k == 2).collect();
                let outside = kinds.iter().filter(|k| **k <= 1).count();
                let detected = trips_at(&rule, &fired).is_some();
                let dangerous = outside >= danger;
                let slot = match (dangerous, detected) {
                    (true, true) => 0,
                    (true, false) => 1,
                    (false, true) => 2,
                    (false, false) => 3,
                };
                expected[slot] += weight;
            }
            for i in 0..4 {
                assert!(
                    (f.outcome[i] - expected[i]).abs() <= 1e-14,
                    "{rule:?} danger {danger} outcome {i}: {} vs {}",
                    f.outcome[i],
                    expected[i]
                );
            }
        }
    }
}

/// The steady-state episode rate of a window rule by enumeration: all 2^(w+1) sequences of
/// the samples t - w .. t; an episode starts at t when the window ending at t holds the
/// count and the one ending at t - 1 does not.
fn window_rate_enumerated(count: usize, window: usize, p: f64) -> f64 {
    let len = window + 1;
    let mut rate = 0.0;
    for code in 0u32..(1 << len) {
        let fired: Vec<bool> = (0..len).map(|i| code >> i & 1 == 1).collect();
        let ones = fired.iter().filter(|f| **f).count() as i32;
        let weight = p.powi(ones) * (1.0 - p).powi(len as i32 - ones);
        let now = fired[1..].iter().filter(|f| **f).count() >= count;
        let before = fired[..window].iter().filter(|f| **f).count() >= count;
        if now && !before {
            rate += weight;
        }
    }
    rate
}

#[test]
fn window_episode_rates_match_enumeration() {
    for &(count, window) in &[(1usize, 1usize), (2, 3), (3, 5), (4, 4), (5, 12)] {
        for &p in &[1e-3, 0.05, 0.5, 0.9] {
            let rule = if count == window {
                Debounce::Consecutive { count }
            } else {
                Debounce::Window { count, window }
            };
            let got = episode_rate(&rule, p).unwrap();
            let expected = window_rate_enumerated(count, window, p);
            assert!(
                (got - expected).abs() <= 1e-13 * expected.max(1e-300),
                "{count} of {window}, p {p}: {got} vs {expected}"
            );
        }
    }
}

#[test]
fn counter_episode_rates_match_power_iteration_and_detailed_balance() {
    // An independent steady state: the distribution of the level iterated from level 0
    // until it no longer moves (power iteration), for counters whose steps are not 1.
    for &(up, down, trip) in &[(2usize, 1usize, 5usize), (3, 2, 4), (1, 1, 6)] {
        for &p in &[0.05, 0.3, 0.6] {
            let rule = Debounce::Counter { up, down, trip };
            let mut pi = vec![0.0; trip + 1];
            pi[0] = 1.0;
            for _ in 0..20_000 {
                let mut next = vec![0.0; trip + 1];
                for (l, m) in pi.iter().enumerate() {
                    next[(l + up).min(trip)] += m * p;
                    next[l.saturating_sub(down)] += m * (1.0 - p);
                }
                pi = next;
            }
            let expected: f64 = (0..trip)
                .filter(|l| l + up >= trip)
                .map(|l| pi[l])
                .sum::<f64>()
                * p;
            let got = episode_rate(&rule, p).unwrap();
            assert!(
                (got - expected).abs() <= 1e-12 * expected,
                "{rule:?} p {p}: {got} vs {expected}"
            );
        }
    }
    // Unit steps: detailed balance pi_l ~ (p / q)^l (common practice for birth-death
    // chains); tiny p keeps full relative accuracy (GTH subtracts nothing).
    let (p, trip) = (1e-6f64, 5usize);
    let rho = p / (1.0 - p);
    let norm: f64 = (0..=trip).map(|l| rho.powi(l as i32)).sum();
    let expected = rho.powi(trip as i32 - 1) / norm * p;
    let got = episode_rate(
        &Debounce::Counter {
            up: 1,
            down: 1,
            trip,
        },
        p,
    )
    .unwrap();
    assert!(
        (got - expected).abs() <= 1e-13 * expected,
        "{got} vs {expected}"
    );
}

#[test]
fn sensitivity_bounds_the_change_over_the_interval() {
    // The bound must cover the rate anywhere in [p - e, p + e] (checked on a dense grid).
    for rule in rules() {
        for &(p, e) in &[(0.01, 1e-4), (0.5, 0.05), (0.2, 0.01)] {
            let centre = episode_rate(&rule, p).unwrap();
            let bound = episode_rate_sensitivity(&rule, p, e).unwrap();
            for k in 0..=200 {
                let x = p - e + 2.0 * e * k as f64 / 200.0;
                let v = episode_rate(&rule, x).unwrap();
                assert!(
                    (v - centre).abs() <= bound * (1.0 + 1e-12) + 1e-300,
                    "{rule:?} p {p} e {e} at {x}: change {} above bound {bound}",
                    (v - centre).abs()
                );
            }
        }
    }
}
