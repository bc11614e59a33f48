//! Cases of the figures over time: the confirmation chain against Feller's success runs and
//! his mean waiting time, and a whole timed analysis whose detection curve is Feller's run
//! probability at a per-sample firing probability from the normal tails.

use crate::analysis::{AnalysisOptions, analyze};
use crate::model::load_str;
use crate::prob::debounce::Debounce;
use crate::prob::int_pow;

use super::whole::outside;
use super::{Case, Measure, ReferenceData};

const TIMED: &str = "figures over time";

const FELLER: &str = "Feller, An Introduction to Probability Theory, vol. 1, 3rd ed., ch. XIII, \
                      sec. 7: generating function of the waiting time for a success run \
                      (recalled from memory; held to enumeration in tests/prob_debounce.rs)";

/// Probability of no run of `r` successes in `n` trials, from Feller's generating function
/// `(1 - p^r s^r) / (1 - s + q p^r s^(r+1))` as a recurrence.
fn no_run(p: f64, r: usize, n: usize) -> f64 {
    let q = 1.0 - p;
    let pr = int_pow(p, r as u32);
    let mut v = vec![0.0f64; n + 1];
    for k in 0..=n {
        let prev = if k >= 1 { v[k - 1] } else { 0.0 };
        let back = if k > r { v[k - r - 1] } else { 0.0 };
        let mut x = prev - q * pr * back;
        if k == 0 {
            x += 1.0;
        }
        if k == r {
            x -= pr;
        }
        v[k] = x;
    }
    v[n]
}

/// Rounding allowance of the chain's sums.
const CHAIN_ABS: f64 = 1e-13;

/// The cases of this group.
pub fn timing_cases(_data: &ReferenceData) -> Vec<Case> {
    let mut cases = Vec::new();
    for (p, r, n) in [(0.3, 3usize, 10usize), (0.5, 4, 25), (0.05, 2, 100)] {
        let computed = Debounce::Consecutive { count: r }
            .chain()
            .map(|c| {
                let f = c.interval([0.0, 0.0, p, 1.0 - p], n, 1);
                (f.detected_by.last().copied().unwrap_or(0.0), 0.0)
            })
            .map_err(|e| e.to_string());
        cases.push(Case::new(
            TIMED,
            format!("run of {r} in {n} samples, p = {p}"),
            FELLER,
            computed,
            1.0 - no_run(p, r, n),
            CHAIN_ABS,
            Measure::Absolute,
        ));
    }
    for (p, r) in [(0.5f64, 3usize), (0.7, 4)] {
        let reference = (1.0 - int_pow(p, r as u32)) / ((1.0 - p) * int_pow(p, r as u32));
        let computed = Debounce::Consecutive { count: r }
            .chain()
            .map(|c| {
                let f = c.interval([0.0, 0.0, p, 1.0 - p], 4000, 1);
                (
                    1.0 + f.detected_by.iter().map(|d| 1.0 - d).sum::<f64>(),
                    0.0,
                )
            })
            .map_err(|e| e.to_string());
        cases.push(Case::new(
            TIMED,
            format!("mean wait for a run of {r}, p = {p}"),
            "Feller, vol. 1, ch. XIII: (1 - p^r) / ((1 - p) p^r)",
            computed,
            reference,
            1e-10 * reference,
            Measure::Relative,
        ));
    }
    // A whole timed analysis: one channel N(1, 1) (a point fault of 1 on a zero-mean
    // channel), a window check at 2, confirmed by 3 consecutive firing samples within 10
    // samples: the confirmation by the deadline is 1 - no_run(p, 3, 10), p = P(|x| > 2).
    let text = "name = \"one channel confirmed\"\nunit = \"V\"\n\n[channels.a]\nsigma = 1.0\n\n\
                [output]\nkind = \"linear\"\nof = { a = 1.0 }\n\n[checks.window]\nkind = \
                \"linear\"\nof = { a = 1.0 }\nlimit = 2.0\n\n[safety]\nlimit = 3.0\n\n\
                [timing]\nsample_period = 0.005\ndeadline = 0.05\nconfirm = { consecutive = 3 }\n\n\
                [faults.offset]\nfit = 10.0\nhits = { a = 1.0 }\nmode = \"add\"\n\
                amplitude = { points = [[1.0, 1.0]] }\n";
    let computed = load_str(text, "timed.toml")
        .map_err(|e| e.to_string())
        .and_then(|arch| {
            analyze(&arch.model, &AnalysisOptions::default(), false).map_err(|e| e.to_string())
        })
        .and_then(|a| {
            a.timed
                .and_then(|t| t.sites.first().and_then(|s| s.detected_by.last().copied()))
                .map(|d| (d.value, d.error))
                .ok_or_else(|| "no timed figures".to_string())
        });
    cases.push(Case::new(
        TIMED,
        "whole analysis: confirmed within 10 samples",
        format!("{FELLER}; p = P(|N(1, 1)| > 2) by libm erfc"),
        computed,
        1.0 - no_run(outside(1.0, 1.0, 2.0), 3, 10),
        CHAIN_ABS,
        Measure::Absolute,
    ));
    cases
}
