//! Section 11 of the report: every figure over the tolerances of the inputs (the file's
//! `[tolerances]`), with the ASIL verdicts on the worst values, or a note that the figures
//! are for the inputs as written.

use std::fmt::Write as _;

use crate::report::format::{format_number, percent_floor, probability, short_style};
use crate::report::json::AnalysisJson;

use super::{section_start, text_cell};

pub(super) fn tolerances(o: &mut String, doc: &AnalysisJson) {
    section_start(
        o,
        "tolerances",
        11,
        "The inputs: tolerances and sensitivity",
    );
    let Some(t) = &doc.tolerances else {
        o.push_str("<p>The file gives no tolerances (a <code>[tolerances]</code> section): every figure is for the inputs as written.</p>\n");
        sensitivity(o, doc);
        o.push_str("</section>\n");
        return;
    };
    let short = short_style(4);
    o.push_str(r#"<table class="narrow"><thead><tr><th>input</th><th class="num">in the file</th><th class="num">lowest</th><th class="num">highest</th></tr></thead><tbody>"#);
    for i in &t.inputs {
        let _ = write!(
            o,
            "<tr>{}{}{}{}</tr>",
            text_cell(&i.key),
            text_cell(&format_number(i.nominal, &short)),
            text_cell(&format_number(i.lower, &short)),
            text_cell(&format_number(i.upper, &short))
        );
    }
    o.push_str("</tbody></table>\n");
    o.push_str(r#"<table class="wide results"><thead><tr><th>figure</th><th class="num">as written</th><th class="num">lowest over the box</th><th class="num">highest over the box</th><th>worst at</th></tr></thead><tbody>"#);
    o.push('\n');
    for f in &t.figures {
        let name = match &f.site {
            Some(s) => format!("{s} / {}", f.figure),
            None => f.figure.clone(),
        };
        let percent = matches!(
            f.figure.as_str(),
            "spfm" | "lfm" | "dc" | "dc_all_dangerous"
        );
        let show = |v: f64| {
            if percent {
                format!("{} %", percent_floor(v))
            } else {
                probability(v)
            }
        };
        let worst = if matches!(f.figure.as_str(), "residual_fit" | "false_alarm") {
            &f.highest_at
        } else {
            &f.lowest_at
        };
        let at: Vec<String> = t
            .inputs
            .iter()
            .zip(worst)
            .map(|(i, v)| format!("{} = {}", i.key, format_number(*v, &short)))
            .collect();
        let _ = writeln!(
            o,
            "<tr>{}{}{}{}{}</tr>",
            text_cell(&name),
            text_cell(&show(f.nominal)),
            text_cell(&show(f.lowest)),
            text_cell(&show(f.highest)),
            text_cell(&at.join(", "))
        );
    }
    o.push_str("</tbody></table>\n");
    let _ = writeln!(
        o,
        "<p>Judged on the worst value over the box (each on its value minus, for the residual rate plus, its bound): SPFM {}, LFM {}, residual rate budget {}. The extremes are those of a grid of the box with {} points per input, corners included ({} analyses), refined by a bounded search where a figure is not monotone along the grid lines; an extreme narrower than one grid cell can be missed.</p>",
        crate::report::format::xml_escape(&t.asil_spfm),
        crate::report::format::xml_escape(&t.asil_lfm),
        crate::report::format::xml_escape(&t.asil_residual_budget),
        t.grid_points,
        t.evaluations
    );
    sensitivity(o, doc);
    o.push_str("</section>\n");
}

/// Rows per metric of the sensitivity table (all are in the JSON).
const SENSITIVITY_ROWS: usize = 5;

/// The inputs that move the metrics most (with `--with-sensitivity`), or a pointer to it.
fn sensitivity(o: &mut String, doc: &AnalysisJson) {
    let Some(rows) = &doc.sensitivity else {
        o.push_str("<p>Which inputs matter is not part of this report: <code>concord report --with-sensitivity</code> adds it here, and <code>concord sensitivity</code> ranks the inputs for every figure.</p>\n");
        return;
    };
    o.push_str("<p>Which inputs move the metrics most: the derivative of each metric by each number of the file, with its bound, and the elasticity (the relative change of the metric per relative change of the input), the largest first. Central differences of whole analyses, combined by Richardson extrapolation; a site of unknown spread held at its worst σ (the envelope theorem). Every figure of every site is in the JSON (<code>analyze --with-sensitivity</code>) and in <code>concord sensitivity</code>.</p>\n");
    o.push_str(r#"<table class="wide results"><thead><tr><th>metric</th><th>input</th><th class="num">in the file</th><th class="num">derivative</th><th class="num">elasticity</th></tr></thead><tbody>"#);
    o.push('\n');
    let short = short_style(4);
    for (figure, label) in [
        ("spfm", "SPFM"),
        ("lfm", "LFM"),
        ("residual_fit", "residual rate"),
    ] {
        for r in rows
            .iter()
            .filter(|r| r.site.is_none() && r.figure == figure)
            .take(SENSITIVITY_ROWS)
        {
            let _ = writeln!(
                o,
                "<tr>{}{}{}{}{}</tr>",
                text_cell(label),
                text_cell(&r.key),
                text_cell(&format_number(r.input, &short)),
                super::cell(
                    &format!("sensitivity/{figure}/{}", r.key),
                    r.derivative,
                    &super::sci_html(&probability(r.derivative)),
                    Some(r.error),
                    &super::sci_html(&crate::report::format::bound(r.error)),
                ),
                text_cell(&format!(
                    "{}{}",
                    r.elasticity
                        .map_or("–".to_string(), |e| format_number(e, &short)),
                    if r.sigma_held { " *" } else { "" }
                ))
            );
        }
    }
    o.push_str("</tbody></table>\n");
    if rows.iter().any(|r| r.site.is_none() && r.sigma_held) {
        o.push_str("<p>* taken with the worst σ of a site held fixed, for a metric that σ does not maximise (the LFM): how the worst σ itself moves with the input is left out.</p>\n");
    }
}
