//! Sections 1 and 2 of the report: the summary and the job and scope.

use std::fmt::Write as _;

use crate::model::Detection;

use crate::report::ReportInput;
use crate::report::format::{fit, number, percent_floor, xml_escape as esc};
use crate::report::json::AnalysisJson;

use super::{json_number, section_start, verdict_html};

pub(super) fn summary(o: &mut String, doc: &AnalysisJson) {
    section_start(o, "summary", 1, "Summary");
    let m = &doc.metrics;
    let worst = doc
        .sites
        .iter()
        .max_by(|a, b| a.residual_fit.total_cmp(&b.residual_fit));
    o.push_str(r#"<div class="keyfigs">"#);
    let fig = |o: &mut String, label: &str, key: &str, value: f64, shown: String, note: String| {
        let _ = write!(
            o,
            r#"<div class="keyfig"><div class="label">{}</div><div class="value" data-key="{}" data-value="{}">{}</div><div class="note">{}</div></div>"#,
            esc(label),
            esc(key),
            json_number(value),
            esc(&shown),
            note
        );
    };
    // With tolerances of the inputs the verdicts judge the worst value over their box.
    let worst_box = super::results::worst_over_box(doc);
    let note = |label: &str, worst: Option<(String, &str)>| match worst {
        Some((shown, verdict)) => format!(
            "{} (worst over the tolerances: {})",
            asil_note(verdict),
            esc(&shown)
        ),
        None => asil_note(label),
    };
    fig(
        o,
        "SPFM",
        "metrics/spfm",
        m.spfm,
        format!("{} %", percent_floor(m.spfm)),
        note(
            &m.asil_spfm,
            worst_box.as_ref().map(|w| {
                (
                    format!("{} %", percent_floor(w.spfm.value)),
                    w.spfm.label.as_str(),
                )
            }),
        ),
    );
    fig(
        o,
        "LFM",
        "metrics/lfm",
        m.lfm,
        format!("{} %", percent_floor(m.lfm)),
        note(
            &m.asil_lfm,
            worst_box.as_ref().map(|w| {
                (
                    format!("{} %", percent_floor(w.lfm.value)),
                    w.lfm.label.as_str(),
                )
            }),
        ),
    );
    fig(
        o,
        "Residual rate",
        "metrics/residual_fit",
        m.residual_fit,
        format!("{} FIT", fit(m.residual_fit)),
        note(
            &m.asil_residual_budget,
            worst_box.as_ref().map(|w| {
                (
                    format!("{} FIT", fit(w.residual.value)),
                    w.residual.label.as_str(),
                )
            }),
        ),
    );
    fig(
        o,
        "Total rate",
        "metrics/total_fit",
        m.total_fit,
        format!("{} FIT", number(m.total_fit)),
        format!("{} fault sites", doc.sites.len()),
    );
    o.push_str("</div>\n");
    o.push_str("<p>A target counts as met only when the value minus its error bound meets it (for the residual rate: the value plus its bound stays below it); section 8 lists the targets.</p>\n");
    if worst_box.is_some() {
        o.push_str("<p>The file states tolerances of its inputs: the key figures are for the inputs as written, and each verdict judges the worst value over the box of tolerances (section 11).</p>\n");
    }
    if let Some(w) = worst {
        let _ = writeln!(
            o,
            "<p>The largest residual rate comes from fault site <strong>{}</strong>: {} FIT of its {} FIT pass the checks unnoticed and drive the output out of its safety band{}.</p>",
            esc(&w.name),
            esc(&fit(w.residual_fit)),
            esc(&number(w.fit)),
            w.worst_sigma.map_or(String::new(), |s| format!(
                " (worst case at a fault spread of {} {})",
                esc(&number(s)),
                esc(&doc.unit)
            ))
        );
    }
    let disagree = doc
        .verification
        .as_ref()
        .map(|rows| rows.iter().filter(|r| !r.agrees).count());
    match disagree {
        Some(0) => o.push_str(
            "<p>The independent Monte Carlo cross-check agrees with every exact figure (section 12).</p>\n",
        ),
        Some(n) => {
            let _ = writeln!(
                o,
                r#"<p class="alert">✗ The Monte Carlo cross-check disagrees on {n} figure(s): see section 12 before using these figures.</p>"#
            );
        }
        None => o.push_str(
            "<p>The Monte Carlo cross-check was not run for this report (section 12).</p>\n",
        ),
    }
    if !doc.warnings.is_empty() || doc.sites.iter().any(|s| !s.warnings.is_empty()) {
        o.push_str(
            r#"<p class="alert">⚠ The analysis issued warnings: see the end of section 6.</p>"#,
        );
        o.push('\n');
    }
    o.push_str("</section>\n");
}

pub(super) fn asil_note(label: &str) -> String {
    match label {
        "D" | "C" | "B" => verdict_html(true, &format!("meets the ASIL {label} target")),
        "n/a" => esc("no rate to judge"),
        _ => verdict_html(false, "below the ASIL B target"),
    }
}

pub(super) fn scope(o: &mut String, input: &ReportInput<'_>, doc: &AnalysisJson) {
    let m = &input.architecture.model;
    section_start(o, "scope", 2, "Job and scope");
    let detection = match m.detection {
        Detection::Any => "any check fires".to_string(),
        Detection::AtLeast(k) => format!("at least {k} checks fire"),
    };
    let _ = writeln!(
        o,
        "<p>This report states, for each listed fault site of <em>{}</em>, the probability that the fault drives the output <code>{}</code> out of its safety band [{}, {}] {} with and without the diagnostics noticing, and the hardware metrics that follow. The diagnostics are {}; a fault counts as detected when {detection}.</p>",
        esc(&doc.name),
        esc(&m.output_description),
        esc(&number(m.safety_lower)),
        esc(&number(m.safety_upper)),
        esc(&doc.unit),
        if m.checks.len() == 1 {
            "one check".to_string()
        } else {
            format!("{} checks", m.checks.len())
        }
    );
    o.push_str(
        "<p>In scope: the random hardware faults listed in section 4, each with its failure rate and amplitude model, one at a time, on top of the fault-free noise of the channels. Not in scope: systematic faults (specification, software, tools), faults not listed in the file, multiple-point faults beyond the latent share, the reaction to a detected fault, and timing (fault tolerant time interval).</p>\n",
    );
    o.push_str(
        "<p>Reading guide: <strong>DC</strong> is the share of dangerous outcomes the checks catch, p<sub>vd</sub> / (p<sub>vd</sub> + p<sub>vu</sub>) (ISO 26262-5); <strong>DC, all dangerous</strong> is 1 − p<sub>vu</sub>, the coverage to enter when every fault of the site is counted as dangerous. p<sub>vu</sub> is the residual: the output leaves its band and no check fires. p<sub>sd</sub> is an alarm without violation, p<sub>sq</sub> a quiet, safe outcome (a candidate latent fault).</p>\n",
    );
    o.push_str("</section>\n");
}
