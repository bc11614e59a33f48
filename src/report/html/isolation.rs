//! Section 10 of the report: isolation after detection (the rule, the false alarms that drop
//! a channel, each site's share isolated, wrongly blamed, declined and not detected, the end
//! states of a single fault, and the architectures that run on without each channel), or a
//! note that every detection is taken to end in a shutdown.

use std::fmt::Write as _;

use crate::model::IsolationRule;
use crate::report::format::{describe_isolation_rule, fit, number, xml_escape as esc};
use crate::report::isolation_json::IsolationJson;
use crate::report::json::AnalysisJson;

use super::{cell, percent_cell, prob_cell, section_start, text_cell};

pub(super) fn isolation(o: &mut String, doc: &AnalysisJson) {
    section_start(o, "isolation", 10, "Isolation after detection");
    let Some(i) = &doc.isolation else {
        o.push_str("<p>The file has no isolation section: every detection is taken to end in a safe shutdown, and no channel is dropped. The share of single faults after which the function goes on with a correct output is then the quiet and safe share p<sub>sq</sub> of each site.</p>\n</section>\n");
        return;
    };
    let rule = match i.margin {
        Some(margin) if i.rule == "farthest_from_median" => {
            IsolationRule::FarthestFromMedian { margin }
        }
        _ if i.rule == "farthest_from_median" => IsolationRule::FarthestFromMedian { margin: 0.0 },
        _ => IsolationRule::InEveryFiredCheck,
    };
    let _ = writeln!(
        o,
        "<p>After a detection, {} (candidates: {}). A blamed channel is dropped and the function goes on with the architecture without it (below); when none is blamed it shuts down.</p>",
        esc(&describe_isolation_rule(&rule, &doc.unit)),
        esc(&i.candidates.join(", "))
    );
    false_alarms(o, i);
    sites(o, i);
    end_states(o, i);
    if let Some(st) = &i.stated {
        let mut parts = Vec::new();
        if let Some(output) = &st.output {
            parts.push(format!(
                "the output is the {output} of the channels it keeps"
            ));
        }
        if !st.set.is_empty() {
            let values: Vec<String> = st
                .set
                .iter()
                .map(|v| format!("{} = {}", v.key, crate::report::format::number(v.value)))
                .collect();
            parts.push(format!(
                "these values hold after a drop: {}",
                values.join(", ")
            ));
        }
        let _ = writeln!(
            o,
            "<p>The file states the architecture that runs on after a drop (<code>[isolation.degraded]</code>): {}; the rest follows from the file without the dropped channel.</p>",
            esc(&parts.join("; "))
        );
    }
    degraded(o, i);
    o.push_str("<p>Isolation is computed for one sample, with the same engine and error bounds as the coverage figures. For a site of unknown spread the figures are taken at the σ where a healthy channel is most often blamed (the worst case for isolation, which may differ from the worst case of the residual). \"After drop\" treats the next sample as independent of the one that blamed, and takes the architecture without the channel at its own figures (at its own worst σ).</p>\n</section>\n");
}

fn false_alarms(o: &mut String, i: &IsolationJson) {
    o.push_str(r#"<table class="narrow"><thead><tr><th>without a fault, a false alarm that</th><th class="num">probability</th></tr></thead><tbody>"#);
    for b in &i.false_alarms.blamed {
        let _ = write!(
            o,
            "<tr>{}{}</tr>",
            text_cell(&format!("drops {}", b.channel)),
            prob_cell(
                &format!("isolation/false_alarms/{}", b.channel),
                b.p,
                b.error
            )
        );
    }
    let _ = writeln!(
        o,
        "<tr>{}{}</tr></tbody></table>",
        text_cell("blames none (shutdown)"),
        prob_cell(
            "isolation/false_alarms/none_blamed",
            i.false_alarms.none_blamed,
            i.false_alarms.none_blamed_error
        )
    );
}

fn sites(o: &mut String, i: &IsolationJson) {
    o.push_str(r#"<table class="wide results"><thead><tr><th>site</th><th>faulty</th><th class="num">isolated</th><th class="num">healthy channel blamed</th><th class="num">none blamed</th><th class="num">not detected</th><th class="num">σ</th><th class="num">after drop, dangerous and quiet</th></tr></thead><tbody>"#);
    o.push('\n');
    for s in &i.sites {
        let key = |f: &str| format!("isolation/sites/{}/{f}", s.name);
        let sigma = match s.sigma {
            Some(v) => cell(&key("sigma"), v, &number(v), None, ""),
            None => r#"<td class="num">–</td>"#.to_string(),
        };
        let after = match (s.after_drop_residual, s.error.after_drop_residual) {
            (Some(v), Some(e)) => prob_cell(&key("after_drop_residual"), v, e),
            _ => r#"<td class="num">–</td>"#.to_string(),
        };
        let _ = writeln!(
            o,
            "<tr>{}{}{}{}{}{}{}{}</tr>",
            text_cell(&s.name),
            text_cell(&s.faulty.join(", ")),
            prob_cell(&key("isolated"), s.isolated, s.error.isolated),
            prob_cell(
                &key("wrong_channel"),
                s.wrong_channel,
                s.error.wrong_channel
            ),
            prob_cell(&key("none_blamed"), s.none_blamed, s.error.none_blamed),
            prob_cell(&key("not_detected"), s.not_detected, s.error.not_detected),
            sigma,
            after,
        );
    }
    o.push_str("</tbody></table>\n");
}

fn end_states(o: &mut String, i: &IsolationJson) {
    let e = &i.end_states;
    let _ = writeln!(
        o,
        r#"<table class="narrow"><thead><tr><th>end state of a single fault (FIT-weighted)</th><th class="num">share [%]</th></tr></thead><tbody><tr>{}{}</tr><tr>{}{}</tr><tr>{}{}</tr><tr>{}{}</tr></tbody></table>"#,
        text_cell("goes on with a correct output (fault isolated and removed, or masked)"),
        percent_cell(
            "isolation/end_states/continues",
            e.continues,
            Some(e.error.continues),
            ""
        ),
        text_cell("safe shutdown (none blamed)"),
        percent_cell(
            "isolation/end_states/shutdown",
            e.shutdown,
            Some(e.error.shutdown),
            ""
        ),
        text_cell("fault stays in the vote (a channel dropped, the fault still there)"),
        percent_cell(
            "isolation/end_states/fault_stays",
            e.fault_stays,
            Some(e.error.fault_stays),
            ""
        ),
        text_cell("not detected and dangerous"),
        percent_cell(
            "isolation/end_states/residual",
            e.residual,
            Some(e.error.residual),
            ""
        ),
    );
}

fn degraded(o: &mut String, i: &IsolationJson) {
    o.push_str(r#"<table class="wide"><thead><tr><th>without</th><th>output and checks</th><th class="num">false alarm</th><th class="num">SPFM [%]</th><th class="num">residual [FIT]</th></tr></thead><tbody>"#);
    o.push('\n');
    for d in &i.degraded {
        let key = |f: &str| format!("isolation/degraded/{}/{f}", d.dropped);
        match (&d.metrics, d.false_alarm) {
            (Some(m), Some(fa)) => {
                let checks = if d.checks.is_empty() {
                    "no check left".to_string()
                } else {
                    d.checks.join("; ")
                };
                let _ = writeln!(
                    o,
                    "<tr>{}{}{}{}{}</tr>",
                    text_cell(&d.dropped),
                    text_cell(&format!("{}; {checks}", d.output)),
                    cell(
                        &key("false_alarm"),
                        fa,
                        &super::sci_html(&crate::report::format::probability(fa)),
                        None,
                        ""
                    ),
                    percent_cell(&key("metrics/spfm"), m.spfm, Some(m.error.spfm), ""),
                    cell(
                        &key("metrics/residual_fit"),
                        m.residual_fit,
                        &fit(m.residual_fit),
                        None,
                        ""
                    ),
                );
            }
            _ => {
                let _ = writeln!(
                    o,
                    r#"<tr>{}<td colspan="4">{}</td></tr>"#,
                    text_cell(&d.dropped),
                    esc(d.why_not.as_deref().unwrap_or("no degraded architecture"))
                );
            }
        }
    }
    o.push_str("</tbody></table>\n");
}
