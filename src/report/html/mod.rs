//! The report for a safety case: one self-contained HTML file (inline CSS and SVG, no
//! script, no outside resource), readable offline and printable on A4.
//!
//! Sections, each an `<section id=...>`, in reading order: `summary`, `scope`, `architecture`,
//! `inputs`, `assumptions`, `results`, `curves`, `metrics`, `timing`, `isolation`,
//! `tolerances`, `crosscheck`, `method`, `reproduce`, `cautions` ([`SECTIONS`]).
//!
//! Every computed number is taken from the JSON document of [`super::json::document`], so
//! the report and `concord analyze --format json` cannot disagree. A number cell carries the
//! JSON value exactly in `data-value` (the same text serde_json writes) and its JSON path in
//! `data-key`, e.g. `sites/a_drift/p_vu` or `metrics/spfm`; the visible text is rounded for
//! reading (probabilities to four significant digits, coverages truncated to two decimals).
//!
//! The page is XHTML-compatible (every element closed, attributes quoted), so that it can be
//! checked with an XML parser.
//!
//! Files: `mod.rs` the page, its header and the cells every section writes; one file per
//! group of sections: `summary.rs` (1-2), `inputs.rs` (3-5), `results.rs` (6-8),
//! `timing.rs` (9), `isolation.rs` (10), `tolerances.rs` (11), `evidence.rs` (12-15); the
//! stylesheet `report.css`.

mod evidence;
mod inputs;
mod isolation;
mod results;
mod summary;
mod timing;
mod tolerances;

use std::fmt::Write as _;

use super::ReportInput;
use super::date::Date;
use super::format::{bound, percent_floor, probability, xml_escape as esc};
use super::json::{AnalysisJson, SiteJson, document};
use evidence::{cautions, crosscheck, method, reproduce};
use inputs::{architecture, assumptions, inputs};
pub use results::{coverage_chart, residual_chart};
use results::{curves, metrics, results};
use summary::{scope, summary};

/// The ids of the report's sections, in order.
pub const SECTIONS: [&str; 15] = [
    "summary",
    "scope",
    "architecture",
    "inputs",
    "assumptions",
    "results",
    "curves",
    "metrics",
    "timing",
    "isolation",
    "tolerances",
    "crosscheck",
    "method",
    "reproduce",
    "cautions",
];

/// What the report states about how it was made, beyond the analysis itself.
#[derive(Debug, Clone, PartialEq)]
pub struct HtmlOptions {
    /// The date printed on the report.
    pub date: Date,
    /// The command that reproduces the report, as the reader should type it.
    pub command: String,
    /// Samples per scenario and seed of the Monte Carlo cross-check, when it was run.
    pub monte_carlo: Option<(u64, u64)>,
}

/// Width of the charts in pixels (they scale to the page through their `viewBox`).
const CHART_W: u32 = 760;

const STYLE: &str = include_str!("report.css");

/// A JSON number exactly as serde_json writes it (the `data-value` of a cell).
fn json_number(v: f64) -> String {
    serde_json::to_string(&v).unwrap_or_else(|_| "null".to_string())
}

/// A number in scientific form for reading: `4.514e-10` as 4.514×10<sup>−10</sup> (HTML).
fn sci_html(text: &str) -> String {
    match text.split_once('e') {
        Some((mantissa, "0")) => mantissa.to_string(),
        Some((mantissa, exponent)) => {
            format!("{mantissa}×10<sup>{}</sup>", exponent.replace('-', "−"))
        }
        None => text.to_string(),
    }
}

/// A number cell: the visible text (HTML, numbers only), and the exact value with its JSON
/// path.
fn cell(key: &str, value: f64, shown: &str, error: Option<f64>, error_shown: &str) -> String {
    let err_attr = error.map_or(String::new(), |e| {
        format!(r#" data-error="{}""#, json_number(e))
    });
    let err_text = if error.is_some() {
        format!(r#"<span class="pm">± {error_shown}</span>"#)
    } else {
        String::new()
    };
    format!(
        r#"<td class="num" data-key="{}" data-value="{}"{err_attr}>{}{err_text}</td>"#,
        esc(key),
        json_number(value),
        shown
    )
}

fn prob_cell(key: &str, value: f64, error: f64) -> String {
    cell(
        key,
        value,
        &sci_html(&probability(value)),
        Some(error),
        &sci_html(&bound(error)),
    )
}

fn percent_cell(key: &str, value: f64, error: Option<f64>, unit: &str) -> String {
    let e = error.map(|e| e * 100.0);
    cell(
        key,
        value,
        &format!("{}{unit}", percent_floor(value)),
        error,
        &e.map_or(String::new(), |e| sci_html(&bound(e))),
    )
}

fn text_cell(text: &str) -> String {
    format!("<td>{}</td>", esc(text))
}

fn verdict_html(met: bool, text: &str) -> String {
    if met {
        format!(r#"<span class="met">✓ {}</span>"#, esc(text))
    } else {
        format!(r#"<span class="unmet">✗ {}</span>"#, esc(text))
    }
}

fn site_key(s: &SiteJson, field: &str) -> String {
    format!("sites/{}/{field}", s.name)
}

/// The report as HTML text.
pub fn render(input: &ReportInput<'_>, options: &HtmlOptions) -> String {
    let doc = document(input);
    let mut o = String::with_capacity(200_000);
    let title = format!("Diagnostic coverage: {}", doc.name);
    o.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n");
    o.push_str("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n");
    let _ = writeln!(o, "<title>{}</title>", esc(&title));
    let _ = writeln!(o, "<style>\n{STYLE}</style>\n</head>\n<body>\n<main>");
    header(&mut o, input, &doc, options);
    summary(&mut o, &doc);
    scope(&mut o, input, &doc);
    architecture(&mut o, input);
    inputs(&mut o, input);
    assumptions(&mut o, input, &doc);
    results(&mut o, &doc);
    curves(&mut o, &doc);
    metrics(&mut o, &doc);
    timing::timing(&mut o, &doc);
    isolation::isolation(&mut o, &doc);
    tolerances::tolerances(&mut o, &doc);
    crosscheck(&mut o, &doc, options);
    method(&mut o, input, options);
    reproduce(&mut o, &doc, options);
    cautions(&mut o);
    o.push_str("</main>\n</body>\n</html>\n");
    o
}

fn section_start(o: &mut String, id: &str, number: usize, heading: &str) {
    let _ = writeln!(
        o,
        r#"<section id="{id}"><h2><span class="secno">{number}</span> {}</h2>"#,
        esc(heading)
    );
}

fn header(o: &mut String, input: &ReportInput<'_>, doc: &AnalysisJson, options: &HtmlOptions) {
    let _ = writeln!(
        o,
        r#"<header class="doc"><p class="kicker">concord · diagnostic coverage report</p><h1>{}</h1>"#,
        esc(&doc.name)
    );
    let _ = writeln!(
        o,
        r#"<dl class="facts"><dt>Input file</dt><dd><code>{}</code></dd><dt>SHA-256</dt><dd><code class="hash">{}</code></dd><dt>Date</dt><dd>{}</dd><dt>Tool</dt><dd>concord {}</dd><dt>Method</dt><dd>{}</dd></dl>"#,
        esc(&doc.input_file),
        esc(&doc.input_sha256),
        options.date,
        esc(&doc.tool_version),
        esc(match input.method {
            "exact" => "exact integration with error bounds",
            "montecarlo" => "Monte Carlo sampling",
            other => other,
        })
    );
    let _ = writeln!(
        o,
        r#"<p class="notice">The figures below are estimates under the assumptions of section 5. The analyst remains responsible for their use; the applicable standards and the assessor decide what is acceptable (section 15).</p></header>"#
    );
}
