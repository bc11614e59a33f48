//! The figures over time (`analysis::timing`) against outside references: the one-sample
//! figures when the interval is one sample (the issue's identity), Feller's probability of a
//! success run for a channel with no constant term (normal tails from libm's erfc, an
//! implementation independent of concord's), the same averaged over a constant shared source
//! by an independent Simpson rule, the steady-state alarm rate of a window rule likewise, and
//! the Monte Carlo engine on the bundled example with timing.

use concord::analysis::montecarlo::{MonteCarloOptions, verify};
use concord::analysis::{AnalysisOptions, analyze};
use concord::model::load_str;

fn phi(x: f64) -> f64 {
    0.5 * libm::erfc(-x * std::f64::consts::FRAC_1_SQRT_2)
}

fn density(x: f64) -> f64 {
    (-0.5 * x * x).exp() / (2.0 * std::f64::consts::PI).sqrt()
}

/// `P(|N(m, sd^2)| > limit)`.
fn outside(m: f64, sd: f64, limit: f64) -> f64 {
    phi((-limit - m) / sd) + phi((m - limit) / sd)
}

/// Probability of no run of `r` successes in `n` trials (Feller, vol. 1, 3rd ed., ch. XIII,
/// sec. 7, the generating function `(1 - p^r s^r) / (1 - s + q p^r s^(r+1))`, recalled from
/// memory; `tests/prob_debounce.rs` holds it to enumeration).
fn no_run(p: f64, r: usize, n: usize) -> f64 {
    let q = 1.0 - p;
    let pr = p.powi(r as i32);
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

/// Composite Simpson over `[-10, 10]` with `2 m` panels of `f(s) phi(s)`.
fn simpson_gaussian(f: impl Fn(f64) -> f64, m: usize) -> f64 {
    let (a, b) = (-10.0, 10.0);
    let h = (b - a) / (2 * m) as f64;
    let mut total = 0.0;
    for i in 0..=2 * m {
        let x = a + i as f64 * h;
        let w = if i == 0 || i == 2 * m {
            1.0
        } else if i % 2 == 1 {
            4.0
        } else {
            2.0
        };
        total += w * f(x) * density(x);
    }
    total * h / 3.0
}

fn with_timing(text: &str, timing: &str) -> String {
    // The timing table goes before the first fault table (TOML tables are order-free, but a
    // table must not fall inside an array of tables).
    match text.find("[faults.") {
        Some(i) => format!("{}[timing]\n{timing}\n\n{}", &text[..i], &text[i..]),
        None => format!("{text}\n[timing]\n{timing}\n"),
    }
}

fn example(name: &str) -> String {
    std::fs::read_to_string(
        std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("architectures")
            .join(format!("{name}.toml")),
    )
    .expect("example")
}

#[test]
fn one_sample_of_one_period_gives_the_one_sample_figures() {
    // The issue's identity: one sample, a deadline of one period and a rule that confirms on
    // the first firing sample make every timed figure the one-sample figure (the chain of
    // one step is the sample itself; the constant terms integrated outside give back the
    // marginal). The three- and four-channel examples are left out: each point of their
    // outer integrals costs milliseconds, and their unknown-sigma sites take minutes timed.
    for name in [
        "plovrant_swa2_mean",
        "plovrant_swa2_plausibility",
        "plovrant_swa2_shared_ref",
    ] {
        let text = with_timing(&example(name), "sample_period = 0.01\ndeadline = 0.01");
        let arch = load_str(&text, name).expect("loads");
        let a = analyze(&arch.model, &AnalysisOptions::default(), false).expect("analyses");
        let timed = a.timed.as_ref().expect("timed");
        assert_eq!(timed.timing.samples, 1);
        for (s, t) in a.sites.iter().zip(&timed.sites) {
            for (one, over) in [
                (s.outcome.p_vd, t.outcome.p_vd),
                (s.outcome.p_vu, t.outcome.p_vu),
                (s.outcome.p_sd, t.outcome.p_sd),
                (s.outcome.p_sq, t.outcome.p_sq),
            ] {
                assert!(
                    (one.value - over.value).abs() <= one.error + over.error + 1e-15,
                    "{name} {}: one sample {one:?}, timed {over:?}",
                    s.name
                );
            }
            let alarm = t.outcome.p_vd.add(t.outcome.p_sd);
            let last = t.detected_by[0];
            assert!((alarm.value - last.value).abs() <= alarm.error + last.error + 1e-15);
        }
    }
}

const ONE_CHANNEL: &str = r#"
name = "one channel with a plausibility window"
unit = "V"

[channels.a]
mean = 0.0
sigma = 1.0

[output]
kind = "linear"
of = { a = 1.0 }

[checks.window]
kind = "linear"
of = { a = 1.0 }
limit = 2.0

[safety]
limit = 3.0
"#;

#[test]
fn a_run_rule_on_one_channel_follows_feller() {
    // One channel x ~ N(F, 1) with F = 1 (a point amplitude: nothing constant left to
    // integrate): a sample fires with p = P(|x| > 2) and is dangerous with
    // v = P(|x| > 3); confirmed by sample n with 1 - no_run(p, 3, n); dangerous in the
    // interval with 1 - (1 - v)^N.
    let text = format!(
        "{ONE_CHANNEL}
[timing]
sample_period = 0.005
deadline = 0.05
confirm = {{ consecutive = 3 }}

[faults.offset]
fit = 10.0
hits = {{ a = 1.0 }}
mode = \"add\"
amplitude = {{ points = [[1.0, 1.0]] }}
"
    );
    let arch = load_str(&text, "one channel").expect("loads");
    let a = analyze(&arch.model, &AnalysisOptions::default(), false).expect("analyses");
    let t = &a.timed.as_ref().expect("timed").sites[0];
    let p = outside(1.0, 1.0, 2.0);
    let v = outside(1.0, 1.0, 3.0);
    assert_eq!(t.detected_by.len(), 10);
    for (n, d) in t.detected_by.iter().enumerate() {
        let expected = 1.0 - no_run(p, 3, n + 1);
        assert!(
            (d.value - expected).abs() <= d.error + 1e-13,
            "sample {}: {d:?} vs {expected}",
            n + 1
        );
    }
    let dangerous = 1.0 - (1.0 - v).powi(10);
    let got = t.outcome.p_vd.add(t.outcome.p_vu);
    assert!(
        (got.value - dangerous).abs() <= got.error + 1e-13,
        "{got:?} vs {dangerous}"
    );
}

const SHARED: &str = r#"
name = "one channel on a shared source"
unit = "V"

[sources.s]
mean = 0.0
sigma = 1.0

[channels.a]
mean = 0.0
sigma = 0.5
from = { s = 1.0 }

[output]
kind = "linear"
of = { a = 1.0 }

[checks.window]
kind = "linear"
of = { a = 1.0 }
limit = 1.5

[safety]
limit = 3.0
"#;

#[test]
fn a_constant_source_is_averaged_outside_the_chain() {
    // Given the source value s, a sample fires with p(s) = P(|s + 0.5 z| > 1.5); the rule
    // "2 of the last 4" confirms by the deadline of 8 samples with a probability computed
    // here by enumeration of the 2^8 verdict sequences, and averaged over s by Simpson.
    // The fault-free alarm rate per sample is the window formula C(3, 1) p^2 (1 - p)^3
    // averaged the same way (the formula is held to enumeration in tests/prob_debounce.rs).
    let text = format!(
        "{SHARED}
[timing]
sample_period = 0.01
deadline = 0.08
confirm = {{ at_least = 2, of_last = 4 }}

[faults.step]
fit = 10.0
hits = {{ a = 1.0 }}
mode = \"add\"
amplitude = {{ points = [[0.5, 1.0]] }}
"
    );
    let arch = load_str(&text, "shared").expect("loads");
    let a = analyze(&arch.model, &AnalysisOptions::default(), false).expect("analyses");
    let timed = a.timed.as_ref().expect("timed");
    let confirmed_in_8 = |p: f64| {
        let mut total = 0.0;
        for code in 0u32..256 {
            let fired: Vec<bool> = (0..8).map(|i| code >> i & 1 == 1).collect();
            let ones = fired.iter().filter(|f| **f).count() as i32;
            let hit = (0..8).any(|t| {
                let start = (t + 1usize).saturating_sub(4);
                fired[start..=t].iter().filter(|f| **f).count() >= 2
            });
            if hit {
                total += p.powi(ones) * (1.0 - p).powi(8 - ones);
            }
        }
        total
    };
    let expected = simpson_gaussian(|s| confirmed_in_8(outside(s + 0.5, 0.5, 1.5)), 4000);
    let got = timed.sites[0].detected_by[7];
    assert!(
        (got.value - expected).abs() <= got.error + 1e-9,
        "{got:?} vs {expected}"
    );
    let rate = |p: f64| 3.0 * p * p * (1.0 - p).powi(3);
    let expected = simpson_gaussian(|s| rate(outside(s, 0.5, 1.5)), 4000);
    let got = timed.false_alarms_per_sample;
    assert!(
        (got.value - expected).abs() <= got.error + 1e-9 * expected,
        "{got:?} vs {expected}"
    );
    // Per hour: 360 000 samples of 10 ms.
    let per_hour = timed.false_alarms_per_hour;
    assert!((per_hour.value - got.value * 360_000.0).abs() <= 1e-9 * per_hour.value);
}

#[test]
fn the_sampler_agrees_on_the_example_with_timing() {
    // The Monte Carlo engine draws the constant terms once per trial and applies the rule
    // by its definition; every timed figure must lie in its 99.9 % interval (fixed seed).
    let arch = concord::model::load(
        &std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("architectures")
            .join("plovrant_swa2_confirmed.toml"),
    )
    .expect("loads");
    let a = analyze(&arch.model, &AnalysisOptions::default(), false).expect("analyses");
    let rows = verify(
        &arch.model,
        &a,
        &MonteCarloOptions {
            samples: 1_500_000,
            seed: 11,
        },
    )
    .expect("samples");
    let timed: Vec<_> = rows
        .iter()
        .filter(|r| r.scenario.ends_with("(timed)"))
        .collect();
    assert_eq!(timed.len(), 4 * a.sites.len());
    for r in timed {
        assert!(
            r.agrees,
            "{} {}: exact {:?}, interval {:?}",
            r.scenario, r.figure, r.exact, r.interval
        );
    }
}

#[test]
fn timing_sections_that_cannot_hold_are_refused_with_the_key_named() {
    for (timing, key, words) in [
        (
            "sample_period = 0.01\ndeadline = 0.005",
            "timing.deadline",
            "shorter than one sample",
        ),
        (
            "sample_period = -1.0\ndeadline = 0.1",
            "timing.sample_period",
            "positive",
        ),
        (
            "sample_period = 0.01\ndeadline = 0.1\nconfirm = { at_least = 5, of_last = 3 }",
            "timing.confirm",
            "out of range",
        ),
        (
            "sample_period = 0.01\ndeadline = 0.1\nconfirm = { consecutive = 2, of_last = 3 }",
            "timing.confirm",
            "exactly one of three forms",
        ),
        (
            "sample_period = 0.01\ndeadline = 0.1\ndanger_samples = 11",
            "timing.danger_samples",
            "holds 10 samples",
        ),
        (
            "sample_period = 0.01\ndeadline = 0.1\nfresh_sources = [\"a\"]",
            "timing.fresh_sources",
            "a shared source is expected",
        ),
        ("deadline = 0.1", "timing.sample_period", "missing key"),
        (
            "sample_period = 0.001\ndeadline = 9.0\nconfirm = { at_least = 8, of_last = 16 }\n\
             danger_samples = 5000",
            "timing",
            "steps of the chain",
        ),
    ] {
        let text = format!("{ONE_CHANNEL}\n[timing]\n{timing}\n");
        let err = load_str(&text, "bad.toml").expect_err(timing);
        let shown = err.to_string();
        assert!(shown.contains(key), "{timing}: {shown}");
        assert!(shown.contains(words), "{timing}: {shown}");
    }
}

#[test]
fn tuning_with_confirmation_brackets_each_rule_and_picks_the_fewest_false_alarms() {
    // The search's contract (the monotonicity it rests on is common practice: a wider band
    // fires less in every sample): each rule's band meets the target, a band 2 % wider
    // (past the 1 % bisection step) does not, and the chosen rule has the fewest false
    // alarms per hour among the rules that meet it.
    use concord::analysis::timed_tune::{default_rules, tune_with_confirmation};
    use concord::analysis::tune::{CoverageFigure, TuneRequest};
    let text = format!(
        "{ONE_CHANNEL}
[timing]
sample_period = 0.005
deadline = 0.05

[faults.offset]
fit = 10.0
hits = {{ a = 1.0 }}
mode = \"add\"
amplitude = {{ gaussian = {{ mean = 2.0, sigma = 1.0 }} }}
"
    );
    let arch = load_str(&text, "one channel").expect("loads");
    let mut request = TuneRequest::new(None, CoverageFigure::Dc, 0.9);
    request.scale_range = (0.5, 2.0);
    let options = AnalysisOptions::default();
    let rules = default_rules(10);
    let result = tune_with_confirmation(&arch, &request, &rules, &options).expect("tunes");
    assert_eq!(result.rules.len(), rules.len());
    let chosen = result.chosen.expect("a rule meets 90 %");
    for r in &result.rules {
        let Some(scale) = r.scale else { continue };
        assert!(r.coverage.value - r.coverage.error >= 0.9, "{:?}", r.rule);
        assert!(r.false_alarms_per_hour.value >= result.rules[chosen].false_alarms_per_hour.value);
        if r.at_range_end {
            continue;
        }
        let wider = load_str(
            &text.replace("limit = 2.0", &format!("limit = {}", 2.0 * scale * 1.02)),
            "wider",
        )
        .expect("loads");
        let mut model = wider.model.clone();
        if let Some(t) = model.timing.as_mut() {
            t.confirm = r.rule;
        }
        let a = analyze(&model, &options, false).expect("analyses");
        let dc = a.timed.expect("timed").sites[0]
            .outcome
            .dc()
            .expect("dangerous");
        assert!(
            dc.value - dc.error < 0.9,
            "{:?} at {}: {dc:?}",
            r.rule,
            scale * 1.02
        );
    }
}
