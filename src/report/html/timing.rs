//! Section 9 of the report: the figures over time (the confirmation rule, the deadline, the
//! false alarms per hour, each site over the interval with its detection curve, and the
//! metrics with the timed outcomes), or a note that every figure is for one sample.

use std::fmt::Write as _;

use crate::prob::debounce::Debounce;
use crate::report::format::{describe_confirm, fit, number, probability, seconds};
use crate::report::json::{AnalysisJson, ConfirmJson, TimingJson};
use crate::report::plot::{Chart, ReferenceLine, Scale, Series};

use super::results::chart_figure;
use super::{cell, percent_cell, prob_cell, sci_html, section_start, text_cell};

fn rule_of(c: &ConfirmJson) -> Debounce {
    match *c {
        ConfirmJson::Consecutive { count } => Debounce::Consecutive { count },
        ConfirmJson::CountOfLast { count, window } => Debounce::Window { count, window },
        ConfirmJson::Counter { up, down, trip } => Debounce::Counter { up, down, trip },
    }
}

pub(super) fn timing(o: &mut String, doc: &AnalysisJson) {
    section_start(o, "timing", 9, "Detection in time and false alarms");
    let Some(t) = &doc.timing else {
        o.push_str("<p>The file has no timing section: every figure above is for one sample, as if the diagnostic confirmed on the first firing sample and the deadline were one sample long.</p>\n</section>\n");
        return;
    };
    let _ = writeln!(
        o,
        "<p>The channels are sampled every {}. A fault counts as confirmed after {}; it must be confirmed within the deadline of {} ({} samples; the fault is taken to strike just after a sample). The output counts as dangerous when it leaves the safety band in at least {} sample{} of the interval. Shared sources keep their value over the interval{}; own noise is drawn anew every sample{}. The figures below are over the interval and replace the one-sample ones for the question \"is the fault confirmed in time?\".</p>",
        seconds(t.sample_period),
        crate::report::format::xml_escape(&describe_confirm(&rule_of(&t.confirm))),
        seconds(t.deadline),
        t.samples,
        t.danger_samples,
        if t.danger_samples == 1 { "" } else { "s" },
        if t.fresh_sources.is_empty() {
            String::new()
        } else {
            format!(
                " except {}, drawn anew every sample",
                crate::report::format::xml_escape(&t.fresh_sources.join(", "))
            )
        },
        if t.constant_channels.is_empty() {
            String::new()
        } else {
            format!(
                " except that of {}, constant over the interval",
                crate::report::format::xml_escape(&t.constant_channels.join(", "))
            )
        },
    );
    false_alarms(o, t);
    sites(o, t);
    chart_figure(
        o,
        detection_chart(t),
        360,
        "Probability that the rule has confirmed the fault, against the time since the fault (at the worst σ for a site of unknown spread). The curve ends at the deadline.",
    );
    let m = &t.metrics;
    let _ = writeln!(
        o,
        r#"<table class="narrow"><thead><tr><th>with the timed outcomes</th><th class="num">value</th></tr></thead><tbody><tr>{}{}</tr><tr>{}{}</tr><tr>{}{}</tr></tbody></table>"#,
        text_cell("SPFM [%]"),
        percent_cell("timing/metrics/spfm", m.spfm, Some(m.error.spfm), ""),
        text_cell("residual rate [FIT]"),
        cell(
            "timing/metrics/residual_fit",
            m.residual_fit,
            &fit(m.residual_fit),
            Some(m.error.residual_fit),
            &sci_html(&crate::report::format::bound(m.error.residual_fit))
        ),
        text_cell("LFM [%]"),
        percent_cell("timing/metrics/lfm", m.lfm, Some(m.error.lfm), ""),
    );
    o.push_str("<p>A fault confirmed after the deadline counts as not detected. The ASIL verdicts of section 8 are for one sample; where the function needs confirmation within a deadline, these are the figures to hold against the targets.</p>\n</section>\n");
}

fn false_alarms(o: &mut String, t: &TimingJson) {
    let between = match t.hours_between_false_alarms {
        Some(h) => cell(
            "timing/hours_between_false_alarms",
            h,
            &number(h),
            t.error.hours_between_false_alarms,
            &t.error
                .hours_between_false_alarms
                .map_or(String::new(), |e| {
                    sci_html(&crate::report::format::bound(e))
                }),
        ),
        None => r#"<td class="num">none occur</td>"#.to_string(),
    };
    let _ = writeln!(
        o,
        r#"<table class="narrow"><thead><tr><th>without a fault</th><th class="num">value</th></tr></thead><tbody><tr>{}{}</tr><tr>{}{}</tr><tr>{}{}</tr></tbody></table>"#,
        text_cell("false alarms per hour of operation"),
        prob_cell(
            "timing/false_alarms_per_hour",
            t.false_alarms_per_hour,
            t.error.false_alarms_per_hour
        ),
        text_cell("mean hours between two false alarms"),
        between,
        text_cell("false alarms per sample"),
        prob_cell(
            "timing/false_alarms_per_sample",
            t.false_alarms_per_sample,
            t.error.false_alarms_per_sample
        ),
    );
    o.push_str("<p>A false alarm is a turn of the rule's verdict from quiet to confirmed without a fault, counted once however long it lasts (the rule follows the samples and is not latched); the terms constant over an interval are averaged over their spread.</p>\n");
}

fn sites(o: &mut String, t: &TimingJson) {
    o.push_str(r#"<table class="wide results"><thead><tr><th>site</th><th class="num">DC in time [%]</th><th class="num">DC, all dangerous [%]</th><th class="num">residual p<sub>vu</sub></th><th class="num">confirmed by the deadline [%]</th><th class="num">residual [FIT]</th></tr></thead><tbody>"#);
    o.push('\n');
    for s in &t.sites {
        let key = |f: &str| format!("timing/sites/{}/{f}", s.name);
        let dc = match s.dc {
            Some(v) => percent_cell(&key("dc"), v, s.error.dc, ""),
            None => r#"<td class="num">–</td>"#.to_string(),
        };
        let confirmed = s.confirmed_by_deadline;
        let _ = writeln!(
            o,
            "<tr>{}{}{}{}{}{}</tr>",
            text_cell(&s.name),
            dc,
            percent_cell(
                &key("dc_all_dangerous"),
                s.dc_all_dangerous,
                s.error.dc_all_dangerous,
                ""
            ),
            prob_cell(&key("p_vu"), s.p_vu, s.error.p_vu),
            cell(
                &key("confirmed_by_deadline"),
                confirmed,
                &crate::report::format::percent_floor(confirmed),
                None,
                ""
            ),
            cell(
                &key("residual_fit"),
                s.residual_fit,
                &fit(s.residual_fit),
                None,
                ""
            ),
        );
    }
    o.push_str("</tbody></table>\n");
}

/// The detection curves of every site: the probability of a confirmation by each sample.
pub fn detection_chart(t: &TimingJson) -> Option<Chart> {
    if t.sites.is_empty() {
        return None;
    }
    Some(Chart {
        title: "Confirmation after a fault".to_string(),
        x_label: "time since the fault [ms]".to_string(),
        y_label: "P(confirmed)".to_string(),
        x_scale: Scale::Linear,
        y_scale: Scale::Linear,
        series: t
            .sites
            .iter()
            .map(|s| Series {
                label: s.name.clone(),
                points: s
                    .detection_curve
                    .iter()
                    .map(|p| (p.time * 1e3, p.p_detected))
                    .collect(),
            })
            .collect(),
        reference_lines: vec![ReferenceLine {
            y: 1.0,
            label: format!("certain (deadline {})", seconds(t.deadline)),
        }],
        markers: Vec::new(),
        caption: vec![format!(
            "false alarms without a fault: {} per hour",
            probability(t.false_alarms_per_hour)
        )],
    })
}
