//! The terminal table of `concord analyze` (the default format), at most 100 columns wide.

use std::fmt::Write as _;

use crate::analysis::engine::FigureMethod;
use crate::analysis::metrics::{LFM_TARGETS, SPFM_TARGETS};

use super::cautions::CAUTIONS;
use crate::analysis::isolation::IsolationAnalysis;
use crate::analysis::timing::TimedAnalysis;

use super::format::{
    AmplitudeStyle, bound, describe_amplitude, describe_confirm, describe_isolation_rule, fit,
    number, percent_floor, percent_with_bound, probability, seconds, wrap,
};
use super::{ReportInput, TOOL_VERSION, input_sha256};

/// The table text.
pub fn render(input: &ReportInput<'_>) -> String {
    let arch = input.architecture;
    let model = &arch.model;
    let a = input.analysis;
    let unit = &model.unit;
    let mut out = String::new();
    let _ = writeln!(
        out,
        "concord {TOOL_VERSION}  |  {}  |  {}",
        model.name, arch.path
    );
    let _ = writeln!(out, "input sha256 {}", input_sha256(&arch.source));
    let _ = writeln!(
        out,
        "unit {unit}  |  output {}  |  safety band [{}, {}] {unit}  |  method {}",
        model.output_description,
        number(model.safety_lower),
        number(model.safety_upper),
        input.method
    );
    let ordered = a
        .sites
        .iter()
        .filter(|s| s.method == FigureMethod::OrderStatistics)
        .count();
    if ordered > 0 || a.baseline_method == FigureMethod::OrderStatistics {
        let _ = writeln!(
            out,
            "figures by order statistics given a shared term: baseline {}, {ordered} of {} sites \
             (the rest by polytopes)",
            if a.baseline_method == FigureMethod::OrderStatistics {
                "yes"
            } else {
                "no"
            },
            a.sites.len()
        );
    }
    let _ = writeln!(out);
    let b = &a.baseline;
    let _ = writeln!(out, "Fault-free baseline");
    let _ = writeln!(
        out,
        "  false alarm (a check fires)           {:>11}  ± {}",
        probability(b.alarm().value),
        bound(b.alarm().error)
    );
    let _ = writeln!(
        out,
        "  fault-free violation (output outside) {:>11}  ± {}",
        probability(b.violation().value),
        bound(b.violation().error)
    );
    let _ = writeln!(
        out,
        "  of which undetected, p_vu             {:>11}  ± {}",
        probability(b.p_vu.value),
        bound(b.p_vu.error)
    );
    let _ = writeln!(out);
    let _ = writeln!(out, "Fault sites: coverage and residual");
    let _ = writeln!(
        out,
        "{:<16} {:>8} {:>7} {:>8} {:>13} {:>10} {:>7} {:>11} {:>11}",
        "site",
        "FIT",
        "mode",
        "DC %",
        "DC all-dang %",
        "p_vu",
        "bound",
        "worst sigma",
        "resid. FIT"
    );
    for s in &a.sites {
        let o = &s.outcome;
        let dc = o.dc().map_or("-".to_string(), |d| percent_floor(d.value));
        let worst = s
            .worst
            .as_ref()
            .map_or("-".to_string(), |w| number(w.sigma));
        let _ = writeln!(
            out,
            "{:<16} {:>8} {:>7} {:>8} {:>13} {:>10} {:>7} {:>11} {:>11}",
            clip(&s.name, 16),
            number(s.fit),
            s.mode,
            dc,
            percent_floor(o.dc_all_dangerous().value),
            probability(o.p_vu.value),
            bound(o.p_vu.error),
            worst,
            fit(s.residual_fit().value)
        );
    }
    let _ = writeln!(out);
    let _ = writeln!(out, "Fault sites: the other outcomes");
    let _ = writeln!(
        out,
        "{:<16} {:>10} {:>7} {:>10} {:>7} {:>10} {:>7} {:>11}",
        "site", "p_vd", "bound", "p_sd", "bound", "p_sq", "bound", "latent FIT"
    );
    for s in &a.sites {
        let o = &s.outcome;
        let _ = writeln!(
            out,
            "{:<16} {:>10} {:>7} {:>10} {:>7} {:>10} {:>7} {:>11}",
            clip(&s.name, 16),
            probability(o.p_vd.value),
            bound(o.p_vd.error),
            probability(o.p_sd.value),
            bound(o.p_sd.error),
            probability(o.p_sq.value),
            bound(o.p_sq.error),
            fit(s.latent_fit().value)
        );
    }
    let _ = writeln!(out);
    let _ = writeln!(out, "Fault models (amplitudes in {unit})");
    for s in &a.sites {
        let _ = writeln!(
            out,
            "  {:<16} {:<7} {}",
            clip(&s.name, 16),
            s.mode,
            clip(
                &describe_amplitude(&s.amplitude, false, AmplitudeStyle::Compact),
                74
            )
        );
    }
    let _ = writeln!(out);
    let m = &a.metrics;
    let _ = writeln!(
        out,
        "Hardware metrics (targets: ISO 26262-5:2018 Tables 4 and 5, recalled, not checked \
         against\nthe published text; a target is met when the value minus its error bound \
         meets it)"
    );
    let _ = writeln!(out, "  total rate          {} FIT", fit(m.total_fit));
    let _ = writeln!(
        out,
        "  residual rate       {} FIT ± {}",
        fit(m.residual_fit.value),
        bound(m.residual_fit.error)
    );
    let _ = writeln!(
        out,
        "  latent rate         {} FIT ± {}",
        fit(m.latent_fit.value),
        bound(m.latent_fit.error)
    );
    let _ = writeln!(
        out,
        "  SPFM                {} %   {}  ({})",
        percent_with_bound(m.spfm),
        m.asil_spfm.verdict(),
        targets(&SPFM_TARGETS)
    );
    let _ = writeln!(
        out,
        "  LFM                 {} %   {}  ({})",
        percent_with_bound(m.lfm),
        m.asil_lfm.verdict(),
        targets(&LFM_TARGETS)
    );
    let _ = writeln!(out, "  SFF (IEC 61508-2)   {} %", percent_with_bound(m.sff));
    if let Some(dc) = m.dc_avg {
        let _ = writeln!(out, "  DC, rate-weighted   {} %", percent_with_bound(dc));
    }
    let _ = writeln!(
        out,
        "  residual rate budget: {} (single-point part of the PMHF only)",
        m.asil_residual_budget.verdict()
    );
    if let Some(t) = &a.timed {
        timed_section(&mut out, t, a);
    }
    if let Some(i) = &a.isolation {
        isolation_section(&mut out, i, unit);
    }
    if let Some(t) = &a.tolerances {
        super::tolerances::table_section(&mut out, t);
    }
    if let Some(rows) = input.verification {
        let _ = writeln!(out);
        let agree = rows.iter().filter(|r| r.agrees).count();
        let _ = writeln!(
            out,
            "Monte Carlo cross-check: {agree} of {} figures inside their 99.9 % interval",
            rows.len()
        );
        for r in rows.iter().filter(|r| !r.agrees) {
            let _ = writeln!(
                out,
                "  DISAGREES  {} {}: exact {} ± {}, sampled {} in [{}, {}]",
                r.scenario,
                r.figure,
                probability(r.exact.value),
                bound(r.exact.error),
                probability(r.sampled),
                probability(r.interval.0),
                probability(r.interval.1)
            );
        }
    }
    let warnings: Vec<String> = arch
        .warnings
        .iter()
        .map(|w| w.to_string())
        .chain(a.warnings.iter().cloned())
        .collect();
    if !warnings.is_empty() {
        let _ = writeln!(out);
        let _ = writeln!(out, "Warnings");
        for w in warnings {
            let _ = writeln!(out, "  - {w}");
        }
    }
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "DC = p_vd / (p_vd + p_vu); DC all-dang = 1 - p_vu, the coverage when every fault of \
         the site\ncounts as dangerous (dc_all_dangerous in JSON)."
    );
    let _ = writeln!(
        out,
        "Coverages are truncated to two decimals, never rounded up; bounds are numerical only."
    );
    for c in CAUTIONS {
        for line in wrap(&format!("Caution: {c}"), 98) {
            let _ = writeln!(out, "{line}");
        }
    }
    out
}

/// The figures over time: the rule, the false alarms per hour, each site over the interval,
/// the metrics with the timed outcomes.
fn timed_section(out: &mut String, t: &TimedAnalysis, a: &crate::analysis::Analysis) {
    let timing = &t.timing;
    let _ = writeln!(out);
    let head = format!(
        "Over time: a sample every {}; a fault counts as confirmed after {}; the deadline is {} \
         ({} samples); the output is dangerous when outside its band in at least {} sample{}",
        seconds(timing.sample_period),
        describe_confirm(&timing.confirm),
        seconds(timing.deadline),
        timing.samples,
        timing.danger_samples,
        if timing.danger_samples == 1 { "" } else { "s" }
    );
    for line in wrap(&head, 98) {
        let _ = writeln!(out, "{line}");
    }
    let fa = t.false_alarms_per_hour;
    let between = t
        .hours_between_false_alarms()
        .map_or("none occur".to_string(), |h| {
            format!("one every {} h of operation", number(h.value))
        });
    let _ = writeln!(
        out,
        "  false alarms without a fault   {} per hour ± {}  ({between})",
        probability(fa.value),
        bound(fa.error)
    );
    let _ = writeln!(
        out,
        "{:<16} {:>8} {:>13} {:>10} {:>7} {:>11} {:>11} {:>11}",
        "site", "DC %", "DC all-dang %", "p_vu", "bound", "in time %", "worst sigma", "resid. FIT"
    );
    for (ts, s) in t.sites.iter().zip(&a.sites) {
        let o = &ts.outcome;
        let in_time = ts.detected_by.last().map_or(0.0, |d| d.value);
        let _ = writeln!(
            out,
            "{:<16} {:>8} {:>13} {:>10} {:>7} {:>11} {:>11} {:>11}",
            clip(&ts.name, 16),
            o.dc().map_or("-".to_string(), |d| percent_floor(d.value)),
            percent_floor(o.dc_all_dangerous().value),
            probability(o.p_vu.value),
            bound(o.p_vu.error),
            percent_floor(in_time),
            ts.worst_sigma.map_or("-".to_string(), number),
            fit(o.p_vu.value * s.fit)
        );
    }
    // The detection curves at up to eight samples, evenly spaced, the deadline last.
    let n = timing.samples;
    let columns: Vec<usize> = {
        let k = n.min(8);
        let mut c: Vec<usize> = (1..=k).map(|j| (j * n).div_ceil(k)).collect();
        c.dedup();
        c
    };
    let _ = write!(out, "  confirmed by, %   ");
    for j in &columns {
        let _ = write!(out, " {:>9}", seconds(*j as f64 * timing.sample_period));
    }
    let _ = writeln!(out);
    for ts in &t.sites {
        let _ = write!(out, "  {:<16} ", clip(&ts.name, 16));
        for j in &columns {
            let p = ts.detected_by.get(j - 1).map_or(0.0, |d| d.value);
            let _ = write!(out, " {:>9}", percent_floor(p));
        }
        let _ = writeln!(out);
    }
    let m = &t.metrics;
    let _ = writeln!(
        out,
        "  with these outcomes: SPFM {} % ({}), residual rate {} FIT ± {}",
        percent_with_bound(m.spfm),
        m.asil_spfm.verdict(),
        fit(m.residual_fit.value),
        bound(m.residual_fit.error)
    );
    let _ = writeln!(
        out,
        "  (\"in time\": the rule confirms by the deadline, dangerous or not; DC counts a fault \
         confirmed\n  after the deadline as not detected)"
    );
}

/// Isolation: the rule, the false alarms that drop a channel, each site's classes, the end
/// states of a single fault and the architectures without each channel.
fn isolation_section(out: &mut String, i: &IsolationAnalysis, unit: &str) {
    let _ = writeln!(out);
    let head = format!(
        "Isolation after detection: {} (candidates {})",
        describe_isolation_rule(&i.rule, unit),
        i.candidates.join(", ")
    );
    for line in wrap(&head, 98) {
        let _ = writeln!(out, "{line}");
    }
    let drops: Vec<String> = i
        .candidates
        .iter()
        .zip(&i.baseline.blamed)
        .map(|(c, p)| format!("{c} {}", probability(p.value)))
        .collect();
    indented(
        out,
        &format!(
            "false alarms that drop a channel: {}; none blamed {}",
            drops.join(", "),
            probability(i.baseline.declined.value)
        ),
    );
    let _ = writeln!(
        out,
        "{:<16} {:>10} {:>10} {:>11} {:>12} {:>7} {:>11} {:>11}",
        "site",
        "isolated",
        "wrong ch.",
        "none blamed",
        "not detected",
        "bound",
        "sigma",
        "after drop"
    );
    for s in &i.sites {
        let not_detected = s.quiet_safe.add(s.quiet_violated);
        let largest = [s.isolated, s.wrong, s.blame.declined, not_detected]
            .iter()
            .map(|e| e.error)
            .fold(0.0, f64::max);
        let _ = writeln!(
            out,
            "{:<16} {:>10} {:>10} {:>11} {:>12} {:>7} {:>11} {:>11}",
            clip(&s.name, 16),
            probability(s.isolated.value),
            probability(s.wrong.value),
            probability(s.blame.declined.value),
            probability(not_detected.value),
            bound(largest),
            s.sigma.map_or("-".to_string(), number),
            s.after_drop_residual
                .map_or("-".to_string(), |e| probability(e.value))
        );
    }
    let e = &i.end_states;
    indented(
        out,
        &format!(
            "end states of a single fault (FIT-weighted): continues {} %, shutdown {} %, fault \
             stays in the vote {} %, residual {} %",
            percent_floor(e.continues.value),
            percent_floor(e.shutdown.value),
            percent_floor(e.fault_stays.value),
            percent_floor(e.residual.value)
        ),
    );
    for d in &i.degraded {
        let text = match &d.analysis {
            Ok(a) => format!(
                "without {}: output {}, checks {}; false alarm {}, SPFM {} %, residual rate \
                 {} FIT",
                d.dropped,
                d.output,
                if d.checks.is_empty() {
                    "none".to_string()
                } else {
                    d.checks.join(", ")
                },
                probability(a.baseline.alarm().value),
                percent_with_bound(a.metrics.spfm),
                fit(a.metrics.residual_fit.value)
            ),
            Err(why) => format!("without {}: no degraded architecture ({why})", d.dropped),
        };
        indented(out, &text);
    }
    let _ = writeln!(
        out,
        "  (\"wrong ch.\": a healthy channel blamed, the fault stays in the vote; \"after drop\": a\n  \
         channel dropped, the fault still there, and the rest then dangerous and quiet, the\n  \
         next sample taken as independent; a sigma is where the wrong blame is largest)"
    );
}

/// `text` wrapped to the table's width, every line indented by two spaces.
fn indented(out: &mut String, text: &str) {
    for line in wrap(text, 96) {
        let _ = writeln!(out, "  {line}");
    }
}

fn targets(list: &[(crate::analysis::metrics::Asil, f64)]) -> String {
    let mut parts: Vec<String> = list
        .iter()
        .rev()
        .map(|(a, t)| format!("{} >= {}", a.label(), percent_floor(*t)))
        .collect();
    parts.dedup();
    parts.join(", ")
}

fn clip(text: &str, width: usize) -> String {
    if text.chars().count() <= width {
        text.to_string()
    } else {
        let mut s: String = text.chars().take(width.saturating_sub(1)).collect();
        s.push('~');
        s
    }
}
