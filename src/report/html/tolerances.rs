//! Section 11 of the report: every figure over the tolerances of the inputs (the file's
//! `[tolerances]`), with the ASIL verdicts on the worst values, or a note that the figures
//! are for the inputs as written.

use std::fmt::Write as _;

use crate::report::format::{format_number, percent_floor, probability, short_style};
use crate::report::json::AnalysisJson;

use super::{section_start, text_cell};

pub(super) fn tolerances(o: &mut String, doc: &AnalysisJson) {
    section_start(o, "tolerances", 11, "Tolerances of the inputs");
    let Some(t) = &doc.tolerances else {
        o.push_str("<p>The file gives no tolerances (a <code>[tolerances]</code> section): every figure is for the inputs as written. <code>concord sensitivity</code> ranks the inputs by their effect.</p>\n</section>\n");
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
        "<p>Judged on the worst value over the box (each on its value minus, for the residual rate plus, its bound): SPFM {}, LFM {}, residual rate budget {}. The extremes are those of a grid of the box with {} points per input, corners included ({} analyses), refined by a bounded search where a figure is not monotone along the grid lines; an extreme narrower than one grid cell can be missed.</p>\n</section>",
        crate::report::format::xml_escape(&t.asil_spfm),
        crate::report::format::xml_escape(&t.asil_lfm),
        crate::report::format::xml_escape(&t.asil_residual_budget),
        t.grid_points,
        t.evaluations
    );
}
