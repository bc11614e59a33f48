//! The report for a safety case: one self-contained HTML file (inline CSS and SVG, no
//! script, no outside resource), readable offline and printable on A4.
//!
//! Sections, each an `<section id=...>`, in reading order: `summary`, `scope`, `architecture`,
//! `inputs`, `assumptions`, `results`, `curves`, `metrics`, `crosscheck`, `method`,
//! `reproduce`, `cautions` ([`SECTIONS`]).
//!
//! Every computed number is taken from the JSON document of [`super::json::document`], so
//! the report and `concord analyze --format json` cannot disagree. A number cell carries the
//! JSON value exactly in `data-value` (the same text serde_json writes) and its JSON path in
//! `data-key`, e.g. `sites/a_drift/p_vu` or `metrics/spfm`; the visible text is rounded for
//! reading (probabilities to four significant digits, coverages truncated to two decimals).
//!
//! The page is XHTML-compatible (every element closed, attributes quoted), so that it can be
//! checked with an XML parser.

use std::fmt::Write as _;

use crate::analysis::metrics::{self, Asil, LFM_TARGETS, PMHF_TARGETS_FIT, SPFM_TARGETS};
use crate::model::{Detection, FaultMode};
use crate::prob::Estimate;

use super::ReportInput;
use super::cautions::CAUTIONS;
use super::date::Date;
use super::diagram;
use super::format::{
    AmplitudeStyle, bound, describe_amplitude, fit, number, percent_floor, probability,
    xml_escape as esc,
};
use super::json::{AnalysisJson, SiteJson, document};
use super::plot::{self, Chart, Marker, ReferenceLine, Scale, Series};

/// The ids of the report's sections, in order.
pub const SECTIONS: [&str; 12] = [
    "summary",
    "scope",
    "architecture",
    "inputs",
    "assumptions",
    "results",
    "curves",
    "metrics",
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
        r#"<p class="notice">The figures below are estimates under the assumptions of section 5. The analyst remains responsible for their use; the applicable standards and the assessor decide what is acceptable (section 12).</p></header>"#
    );
}

fn summary(o: &mut String, doc: &AnalysisJson) {
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
    fig(
        o,
        "SPFM",
        "metrics/spfm",
        m.spfm,
        format!("{} %", percent_floor(m.spfm)),
        asil_note(&m.asil_spfm),
    );
    fig(
        o,
        "LFM",
        "metrics/lfm",
        m.lfm,
        format!("{} %", percent_floor(m.lfm)),
        asil_note(&m.asil_lfm),
    );
    fig(
        o,
        "Residual rate",
        "metrics/residual_fit",
        m.residual_fit,
        format!("{} FIT", fit(m.residual_fit)),
        asil_note(&m.asil_residual_budget),
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
            "<p>The independent Monte Carlo cross-check agrees with every exact figure (section 9).</p>\n",
        ),
        Some(n) => {
            let _ = writeln!(
                o,
                r#"<p class="alert">✗ The Monte Carlo cross-check disagrees on {n} figure(s): see section 9 before using these figures.</p>"#
            );
        }
        None => o.push_str(
            "<p>The Monte Carlo cross-check was not run for this report (section 9).</p>\n",
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

fn asil_note(label: &str) -> String {
    match label {
        "D" | "C" | "B" => verdict_html(true, &format!("meets the ASIL {label} target")),
        "n/a" => esc("no rate to judge"),
        _ => verdict_html(false, "below the ASIL B target"),
    }
}

fn scope(o: &mut String, input: &ReportInput<'_>, doc: &AnalysisJson) {
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

fn architecture(o: &mut String, input: &ReportInput<'_>) {
    section_start(o, "architecture", 3, "Architecture");
    o.push_str(r#"<figure class="diagram-figure">"#);
    o.push_str(&diagram::render_svg(input.architecture));
    let _ = writeln!(
        o,
        "<figcaption>Figure 1. The model graph of the file, computed from left to right. {}</figcaption></figure>",
        esc(diagram::KEY)
    );
    o.push_str("</section>\n");
}

fn inputs(o: &mut String, input: &ReportInput<'_>) {
    let m = &input.architecture.model;
    let unit = esc(&m.unit);
    section_start(o, "inputs", 4, "Inputs");
    let _ = writeln!(
        o,
        "<p>All deviations, limits and amplitudes are in <strong>{unit}</strong> (deviation = reported value − true value); failure rates in FIT (failures per 10<sup>9</sup> hours).</p>"
    );
    o.push_str(r#"<table class="kv"><tbody>"#);
    let full = m.full_scale.map_or("not given".to_string(), |(a, b)| {
        format!("[{}, {}] {}", number(a), number(b), m.unit)
    });
    let rows = [
        ("Measuring range (full scale)", full),
        ("Output", m.output_description.clone()),
        (
            "Safety band (violated outside)",
            format!(
                "[{}, {}] {}",
                number(m.safety_lower),
                number(m.safety_upper),
                m.unit
            ),
        ),
        (
            "Detection",
            match m.detection {
                Detection::Any => "any check fires".to_string(),
                Detection::AtLeast(k) => format!("at least {k} checks fire"),
            },
        ),
    ];
    for (k, v) in rows {
        let _ = write!(
            o,
            "<tr><th scope=\"row\">{}</th><td>{}</td></tr>",
            esc(k),
            esc(&v)
        );
    }
    o.push_str("</tbody></table>\n");

    let _ = writeln!(
        o,
        r#"<h3>Channels</h3><table class="wide"><thead><tr><th>channel</th><th class="num">systematic mean [{unit}]</th><th class="num">own σ [{unit}]</th><th class="num">total σ [{unit}]</th><th>shared sources (gain)</th></tr></thead><tbody>"#
    );
    let total = m.total_sigmas();
    for (i, name) in m.channels.iter().enumerate() {
        let sources: Vec<String> = m
            .sources
            .iter()
            .enumerate()
            .filter_map(|(j, s)| {
                let g = m.source_gains.get((i, j)).copied().unwrap_or(0.0);
                (g != 0.0).then(|| format!("{s} ({})", number(g)))
            })
            .collect();
        let _ = writeln!(
            o,
            r#"<tr><td>{}</td><td class="num">{}</td><td class="num">{}</td><td class="num">{}</td><td>{}</td></tr>"#,
            esc(name),
            esc(&number(m.own_means.get(i).copied().unwrap_or(f64::NAN))),
            esc(&number(m.own_sigmas.get(i).copied().unwrap_or(f64::NAN))),
            esc(&number(total.get(i).copied().unwrap_or(f64::NAN))),
            esc(&if sources.is_empty() {
                "none".to_string()
            } else {
                sources.join(", ")
            })
        );
    }
    o.push_str("</tbody></table>\n");

    if !m.sources.is_empty() {
        let _ = writeln!(
            o,
            r#"<h3>Shared error sources (common cause)</h3><table><thead><tr><th>source</th><th class="num">mean [{unit}]</th><th class="num">σ [{unit}]</th></tr></thead><tbody>"#
        );
        for (j, name) in m.sources.iter().enumerate() {
            let _ = writeln!(
                o,
                r#"<tr><td>{}</td><td class="num">{}</td><td class="num">{}</td></tr>"#,
                esc(name),
                esc(&number(m.source_means.get(j).copied().unwrap_or(f64::NAN))),
                esc(&number(m.source_sigmas.get(j).copied().unwrap_or(f64::NAN)))
            );
        }
        o.push_str("</tbody></table>\n");
    }

    let n = m.channels.len();
    let mut pairs = Vec::new();
    for i in 0..n {
        for j in i + 1..n {
            let rho = m.own_correlation.get((i, j)).copied().unwrap_or(0.0);
            if rho != 0.0 {
                pairs.push((i, j, rho));
            }
        }
    }
    o.push_str("<h3>Correlation of the channels' own noise</h3>");
    if pairs.is_empty() {
        o.push_str("<p>None: the own noise terms are independent.</p>\n");
    } else {
        o.push_str(
            r#"<table><thead><tr><th>between</th><th class="num">ρ</th></tr></thead><tbody>"#,
        );
        for (i, j, rho) in pairs {
            let _ = write!(
                o,
                r#"<tr><td>{} and {}</td><td class="num">{}</td></tr>"#,
                esc(&m.channels[i]),
                esc(&m.channels[j]),
                esc(&number(rho))
            );
        }
        o.push_str("</tbody></table>\n");
    }

    if !m.signals.is_empty() {
        o.push_str(r#"<h3>Derived signals</h3><table><thead><tr><th>signal</th><th>value</th></tr></thead><tbody>"#);
        for (k, (name, _)) in m.signals.iter().enumerate() {
            let d = m.signal_descriptions.get(k).cloned().unwrap_or_default();
            let _ = write!(
                o,
                "<tr><td>{}</td><td><code>{}</code></td></tr>",
                esc(name),
                esc(&d)
            );
        }
        o.push_str("</tbody></table>\n");
    }

    let _ = writeln!(
        o,
        r#"<h3>Checks</h3><table><thead><tr><th>check</th><th>value</th><th class="num">passes within [{unit}]</th></tr></thead><tbody>"#
    );
    for c in &m.checks {
        let _ = writeln!(
            o,
            r#"<tr><td>{}</td><td><code>{}</code></td><td class="num">[{}, {}]</td></tr>"#,
            esc(&c.name),
            esc(&c.description),
            esc(&end(c.lower)),
            esc(&end(c.upper))
        );
    }
    o.push_str("</tbody></table>\n");

    let _ = writeln!(
        o,
        r#"<h3>Fault sites</h3><table class="wide"><thead><tr><th>site</th><th class="num">rate [FIT]</th><th>mode</th><th>acts on (gain)</th><th>amplitude F [{unit}]</th><th class="num">latent coverage</th></tr></thead><tbody>"#
    );
    for f in &m.faults {
        let hits: Vec<String> = f
            .hits
            .iter()
            .map(|(n, g)| format!("{n} ({})", number(*g)))
            .collect();
        let mode = match f.mode {
            FaultMode::Add { .. } => "add",
            FaultMode::Replace { .. } => "replace",
        };
        let _ = writeln!(
            o,
            r#"<tr><td>{}</td><td class="num">{}</td><td>{}</td><td>{}</td><td>{}</td><td class="num">{}</td></tr>"#,
            esc(&f.name),
            esc(&number(f.fit)),
            esc(mode),
            esc(&hits.join(", ")),
            esc(&describe_amplitude(
                &f.amplitude,
                f.uniform_is_full_scale,
                AmplitudeStyle::Prose
            )),
            esc(&number(f.latent_coverage))
        );
    }
    o.push_str("</tbody></table>\n");
    o.push_str("<p class=\"tablenote\">Mode <em>add</em>: what the site acts on reads its value plus gain × F (a shared source passes this on to every channel it feeds: a common-cause fault). Mode <em>replace</em>: the channel reads gain × F, its noise gone (e.g. stuck at a value).</p>\n</section>\n");
}

fn end(v: f64) -> String {
    if v.is_finite() {
        number(v)
    } else if v > 0.0 {
        "∞".to_string()
    } else {
        "−∞".to_string()
    }
}

fn assumptions(o: &mut String, input: &ReportInput<'_>, doc: &AnalysisJson) {
    let m = &input.architecture.model;
    section_start(o, "assumptions", 5, "Assumptions");
    o.push_str("<ol class=\"assumptions\">\n");
    o.push_str("<li><strong>Gaussian noise.</strong> Without a fault, the channel deviations are jointly gaussian with the means, standard deviations, shared sources and correlations of section 4 (a singular covariance, e.g. a σ of zero, is allowed).</li>\n");
    o.push_str("<li><strong>Independent fault sites.</strong> Each fault site is analysed as the only fault present; its amplitude is independent of all noise. Rates are constant and add up across sites.</li>\n");
    o.push_str("<li><strong>Fault models.</strong> As written in the file:<ul>");
    for f in &m.faults {
        let _ = write!(
            o,
            "<li><code>{}</code>: {} ({})</li>",
            esc(&f.name),
            esc(&describe_amplitude(
                &f.amplitude,
                f.uniform_is_full_scale,
                AmplitudeStyle::Prose
            )),
            match f.mode {
                FaultMode::Add { .. } => "added to what it hits",
                FaultMode::Replace { .. } => "replaces the channel's reading",
            }
        );
    }
    o.push_str("</ul></li>\n");
    let searched: Vec<&SiteJson> = doc
        .sites
        .iter()
        .filter(|s| s.sigma_range.is_some())
        .collect();
    if searched.is_empty() {
        o.push_str("<li><strong>Fault spread.</strong> No site has an unknown spread; no worst case over σ was searched.</li>\n");
    } else {
        o.push_str("<li><strong>Unknown fault spread.</strong> Where σ is unknown, every figure of the site is taken at the σ with the largest residual p<sub>vu</sub> within the searched range:<ul>");
        for s in searched {
            if let Some([lo, hi]) = s.sigma_range {
                let _ = write!(
                    o,
                    "<li><code>{}</code>: σ from {} to {} {}</li>",
                    esc(&s.name),
                    esc(&number(lo)),
                    esc(&number(hi)),
                    esc(&doc.unit)
                );
            }
        }
        o.push_str("</ul>A worst case at an end of its range is flagged in the warnings.</li>\n");
    }
    o.push_str("<li><strong>Strict limits.</strong> A check fires when its value is below its lower or above its upper limit; the output violates the safety requirement likewise.</li>\n");
    o.push_str("<li><strong>Latent faults.</strong> A fault that neither violates nor is detected is latent, less the share that other means find (latent coverage of section 4).</li>\n");
    o.push_str("</ol>\n</section>\n");
}

fn results(o: &mut String, doc: &AnalysisJson) {
    let unit = esc(&doc.unit);
    section_start(o, "results", 6, "Results per fault site");
    o.push_str("<p>Each value is followed by its numerical error bound (±). Coverages are in percent, truncated to two decimals (never rounded up). For a site with an unknown spread the figures are those at its worst σ.</p>\n");
    let _ = writeln!(
        o,
        r#"<table class="wide results"><thead><tr><th>site</th><th class="num">rate [FIT]</th><th class="num">DC [%]</th><th class="num">DC, all dangerous [%]</th><th class="num">residual p<sub>vu</sub></th><th class="num">worst σ [{unit}]</th><th class="num">residual [FIT]</th><th class="num">latent [FIT]</th></tr></thead><tbody>"#
    );
    for s in &doc.sites {
        let dc = match s.dc {
            Some(v) => percent_cell(&site_key(s, "dc"), v, s.error.dc, ""),
            None => r#"<td class="num">–</td>"#.to_string(),
        };
        let worst = match s.worst_sigma {
            Some(w) => cell(&site_key(s, "worst_sigma"), w, &number(w), None, ""),
            None => r#"<td class="num">–</td>"#.to_string(),
        };
        let _ = writeln!(
            o,
            "<tr>{}{}{}{}{}{}{}{}</tr>",
            text_cell(&s.name),
            cell(&site_key(s, "fit"), s.fit, &number(s.fit), None, ""),
            dc,
            percent_cell(
                &site_key(s, "dc_all_dangerous"),
                s.dc_all_dangerous,
                s.error.dc_all_dangerous,
                ""
            ),
            prob_cell(&site_key(s, "p_vu"), s.p_vu, s.error.p_vu),
            worst,
            cell(
                &site_key(s, "residual_fit"),
                s.residual_fit,
                &fit(s.residual_fit),
                None,
                ""
            ),
            cell(
                &site_key(s, "latent_fit"),
                s.latent_fit,
                &fit(s.latent_fit),
                None,
                ""
            ),
        );
    }
    o.push_str("</tbody></table>\n");

    o.push_str(r#"<h3>All four outcomes</h3><table class="wide outcomes"><thead><tr><th>scenario</th><th class="num">violation, detected p<sub>vd</sub></th><th class="num">violation, undetected p<sub>vu</sub></th><th class="num">alarm without violation p<sub>sd</sub></th><th class="num">quiet and safe p<sub>sq</sub></th></tr></thead><tbody>"#);
    let b = &doc.baseline;
    let _ = writeln!(
        o,
        "<tr><td><em>fault-free</em></td>{}{}{}{}</tr>",
        prob_cell("baseline/p_vd", b.p_vd, b.error.p_vd),
        prob_cell("baseline/p_vu", b.p_vu, b.error.p_vu),
        prob_cell("baseline/p_sd", b.p_sd, b.error.p_sd),
        prob_cell("baseline/p_sq", b.p_sq, b.error.p_sq)
    );
    for s in &doc.sites {
        let _ = writeln!(
            o,
            "<tr>{}{}{}{}{}</tr>",
            text_cell(&s.name),
            prob_cell(&site_key(s, "p_vd"), s.p_vd, s.error.p_vd),
            prob_cell(&site_key(s, "p_vu"), s.p_vu, s.error.p_vu),
            prob_cell(&site_key(s, "p_sd"), s.p_sd, s.error.p_sd),
            prob_cell(&site_key(s, "p_sq"), s.p_sq, s.error.p_sq)
        );
    }
    o.push_str("</tbody></table>\n");
    let _ = writeln!(
        o,
        r#"<p>Without a fault, a check fires with probability <span class="inline-num" data-key="baseline/false_alarm" data-value="{}">{}</span> (the false alarm, the price of the thresholds) and the output leaves its band with probability <span class="inline-num" data-key="baseline/fault_free_violation" data-value="{}">{}</span> (the fault-free violation).</p>"#,
        json_number(b.false_alarm),
        sci_html(&probability(b.false_alarm)),
        json_number(b.fault_free_violation),
        sci_html(&probability(b.fault_free_violation))
    );

    let mut warnings: Vec<String> = doc.warnings.clone();
    for s in &doc.sites {
        warnings.extend(s.warnings.iter().map(|w| format!("{}: {w}", s.name)));
    }
    warnings.sort();
    warnings.dedup();
    o.push_str("<h3>Warnings</h3>");
    if warnings.is_empty() {
        o.push_str("<p>None.</p>\n");
    } else {
        o.push_str(r#"<ul class="warnings">"#);
        for w in warnings {
            let _ = write!(o, "<li>⚠ {}</li>", esc(&w));
        }
        o.push_str("</ul>\n");
    }
    o.push_str("</section>\n");
}

/// The DC-versus-spread chart of one site (coverage in percent over sigma).
pub fn coverage_chart(site: &SiteJson, unit: &str) -> Option<Chart> {
    let curve = site.curve.as_ref()?;
    let dc: Vec<(f64, f64)> = curve
        .iter()
        .filter_map(|p| p.dc.map(|d| (p.sigma, 100.0 * d)))
        .collect();
    let dc_all: Vec<(f64, f64)> = curve
        .iter()
        .map(|p| (p.sigma, 100.0 * p.dc_all_dangerous))
        .collect();
    let markers = site
        .worst_sigma
        .map(|s| Marker {
            x: s,
            y: 100.0 * site.dc_all_dangerous,
            label: format!("worst case, σ = {} {unit}", number(s)),
        })
        .into_iter()
        .collect();
    Some(Chart {
        title: format!("Coverage of {} over the fault spread", site.name),
        x_label: format!("fault spread σ [{unit}]"),
        y_label: "coverage [%]".to_string(),
        x_scale: Scale::Log,
        y_scale: Scale::Linear,
        series: vec![
            Series {
                label: "DC = p_vd / (p_vd + p_vu)".to_string(),
                points: dc,
            },
            Series {
                label: "DC, all dangerous = 1 − p_vu".to_string(),
                points: dc_all,
            },
        ],
        reference_lines: [
            (60.0, "60 % low"),
            (90.0, "90 % medium"),
            (99.0, "99 % high"),
        ]
        .iter()
        .map(|(y, l)| ReferenceLine {
            y: *y,
            label: l.to_string(),
        })
        .collect(),
        markers,
        caption: Vec::new(),
    })
}

/// The residual-over-spread chart of one site (p_vu on a log scale).
pub fn residual_chart(site: &SiteJson, unit: &str) -> Option<Chart> {
    let curve = site.curve.as_ref()?;
    Some(Chart {
        title: format!("Residual of {} over the fault spread", site.name),
        x_label: format!("fault spread σ [{unit}]"),
        y_label: "residual p_vu".to_string(),
        x_scale: Scale::Log,
        y_scale: Scale::Log,
        series: vec![Series {
            label: "p_vu: violation, no check fires".to_string(),
            points: curve.iter().map(|p| (p.sigma, p.p_vu)).collect(),
        }],
        reference_lines: vec![],
        markers: site
            .worst_sigma
            .map(|s| Marker {
                x: s,
                y: site.p_vu,
                label: format!("largest residual {}", probability(site.p_vu)),
            })
            .into_iter()
            .collect(),
        caption: Vec::new(),
    })
}

fn chart_figure(o: &mut String, chart: Option<Chart>, height: u32, caption: &str) {
    let Some(chart) = chart else {
        return;
    };
    match plot::render_svg(&chart, CHART_W, height) {
        Ok(svg) => {
            let _ = writeln!(
                o,
                r#"<figure class="chart">{svg}<figcaption>{}</figcaption></figure>"#,
                esc(caption)
            );
        }
        Err(e) => {
            let _ = writeln!(o, r#"<p class="alert">⚠ {}</p>"#, esc(&e.to_string()));
        }
    }
}

fn curves(o: &mut String, doc: &AnalysisJson) {
    section_start(o, "curves", 7, "Coverage over the fault spread");
    let with_curve: Vec<&SiteJson> = doc.sites.iter().filter(|s| s.curve.is_some()).collect();
    let unknown = doc.sites.iter().filter(|s| s.sigma_range.is_some()).count();
    if unknown == 0 {
        o.push_str("<p>No fault site has an unknown spread.</p>\n</section>\n");
        return;
    }
    if with_curve.is_empty() {
        o.push_str("<p>The curves were not computed for this report.</p>\n</section>\n");
        return;
    }
    o.push_str("<p>For a fault whose spread σ is not known, the figures change with σ: tiny spreads rarely violate, huge ones are almost always caught, and the residual peaks in between. The report takes every figure of the site at that peak (the marked worst case). Horizontal lines: the DC levels low, medium and high of ISO 26262-5 Annex D (60 / 90 / 99 %, recalled, not checked against the published text).</p>\n");
    let mut figure = 2;
    for s in with_curve {
        let _ = writeln!(o, r#"<div class="site-curves"><h3>{}</h3>"#, esc(&s.name));
        chart_figure(
            o,
            coverage_chart(s, &doc.unit),
            380,
            &format!(
                "Figure {figure}. DC and DC (all dangerous) of {} over the fault spread ({} scan points). At tiny spreads the faults hardly ever violate, so DC there only reflects noise-only violations; the worst case is decided by the residual (next figure).",
                s.name,
                s.curve.as_ref().map_or(0, Vec::len)
            ),
        );
        figure += 1;
        chart_figure(
            o,
            residual_chart(s, &doc.unit),
            300,
            &format!(
                "Figure {figure}. Residual p_vu of {} over the fault spread; the worst case is its largest value.",
                s.name
            ),
        );
        figure += 1;
        o.push_str("</div>\n");
    }
    o.push_str("</section>\n");
}

/// Each target with whether it is met, by the pass rule of every output
/// ([`metrics::meets_minimum`], [`metrics::meets_maximum`]: value minus, or plus, its bound).
fn targets_met(
    value: f64,
    error: f64,
    targets: &[(Asil, f64)],
    minimum: bool,
) -> Vec<(Asil, f64, bool)> {
    let estimate = Estimate::new(value, error);
    let mut list: Vec<(Asil, f64, bool)> = targets
        .iter()
        .map(|(a, t)| {
            let met = if minimum {
                metrics::meets_minimum(estimate, *t)
            } else {
                metrics::meets_maximum(estimate, *t)
            };
            (*a, *t, met)
        })
        .collect();
    list.sort_by_key(|(a, _, _)| *a);
    list
}

fn metrics(o: &mut String, doc: &AnalysisJson) {
    let m = &doc.metrics;
    section_start(o, "metrics", 8, "Hardware metrics against the ASIL targets");
    o.push_str("<p>Targets of ISO 26262-5:2018 Tables 4 to 6, recalled, not checked against the published text: check them against the standard in force. The residual rate is the single-point part of the PMHF only. A target counts as met only when the value minus its error bound meets it (for the residual rate: the value plus its bound stays below it), so that numerical error never lifts a design a level; every mark, the column “reached”, the summary of section 1, the terminal output and the JSON use this one rule.</p>\n");
    o.push_str(r#"<table class="wide metrics"><thead><tr><th>metric</th><th class="num">value</th><th>ASIL B</th><th>ASIL C</th><th>ASIL D</th><th>reached</th></tr></thead><tbody>"#);
    let target_cells =
        |value: f64, error: f64, targets: &[(Asil, f64)], minimum: bool, unit: &str| {
            let mut s = String::new();
            for (_, t, met) in targets_met(value, error, targets, minimum) {
                let text = if minimum {
                    format!("≥ {} {unit}", percent_floor(t))
                } else {
                    format!("< {} {unit}", number(t))
                };
                let _ = write!(s, "<td>{}</td>", verdict_html(met, &text));
            }
            s
        };
    let _ = writeln!(
        o,
        "<tr><th scope=\"row\">SPFM</th>{}{}<td>{}</td></tr>",
        percent_cell("metrics/spfm", m.spfm, Some(m.error.spfm), " %"),
        target_cells(m.spfm, m.error.spfm, &SPFM_TARGETS, true, "%"),
        esc(&m.asil_spfm)
    );
    let _ = writeln!(
        o,
        "<tr><th scope=\"row\">LFM</th>{}{}<td>{}</td></tr>",
        percent_cell("metrics/lfm", m.lfm, Some(m.error.lfm), " %"),
        target_cells(m.lfm, m.error.lfm, &LFM_TARGETS, true, "%"),
        esc(&m.asil_lfm)
    );
    let _ = writeln!(
        o,
        "<tr><th scope=\"row\">residual rate</th>{}{}<td>{}</td></tr>",
        cell(
            "metrics/residual_fit",
            m.residual_fit,
            &format!("{} FIT", fit(m.residual_fit)),
            Some(m.error.residual_fit),
            &sci_html(&bound(m.error.residual_fit))
        ),
        target_cells(
            m.residual_fit,
            m.error.residual_fit,
            &PMHF_TARGETS_FIT,
            false,
            "FIT"
        ),
        esc(&m.asil_residual_budget)
    );
    o.push_str("</tbody></table>\n");
    o.push_str(r#"<table class="kv"><tbody>"#);
    let _ = write!(
        o,
        "<tr><th scope=\"row\">total rate</th>{}</tr>",
        cell(
            "metrics/total_fit",
            m.total_fit,
            &format!("{} FIT", number(m.total_fit)),
            None,
            ""
        )
    );
    let _ = write!(
        o,
        "<tr><th scope=\"row\">latent rate</th>{}</tr>",
        cell(
            "metrics/latent_fit",
            m.latent_fit,
            &format!("{} FIT", fit(m.latent_fit)),
            Some(m.error.latent_fit),
            &sci_html(&bound(m.error.latent_fit))
        )
    );
    let _ = write!(
        o,
        "<tr><th scope=\"row\">SFF (IEC 61508-2)</th>{}</tr>",
        percent_cell("metrics/sff", m.sff, Some(m.error.sff), " %")
    );
    if let Some(dc) = m.dc_avg {
        let _ = write!(
            o,
            "<tr><th scope=\"row\">DC, rate-weighted</th>{}</tr>",
            percent_cell("metrics/dc_avg", dc, m.error.dc_avg, " %")
        );
    }
    o.push_str("</tbody></table>\n</section>\n");
}

fn crosscheck(o: &mut String, doc: &AnalysisJson, options: &HtmlOptions) {
    section_start(o, "crosscheck", 9, "Monte Carlo cross-check");
    let Some(rows) = &doc.verification else {
        o.push_str("<p>Not run for this report. Run <code>concord report FILE --verify N</code> to re-run every scenario with N samples by plain Monte Carlo sampling, an independent code path.</p>\n</section>\n");
        return;
    };
    let agree = rows.iter().filter(|r| r.agrees).count();
    let (samples, seed) = options.monte_carlo.unwrap_or((0, 0));
    let _ = writeln!(
        o,
        "<p>Every scenario was re-run by plain Monte Carlo sampling (an independent code path) with {samples} samples, seed {seed}, at the worst σ of each site. A figure agrees when the exact value lies in the sampled 99.9 % Wilson interval. <strong>{agree} of {} figures agree.</strong></p>",
        rows.len()
    );
    o.push_str(r#"<table class="wide crosscheck"><thead><tr><th>scenario</th><th>figure</th><th class="num">exact</th><th class="num">sampled</th><th class="num">99.9 % interval</th><th>agrees</th></tr></thead><tbody>"#);
    for (i, r) in rows.iter().enumerate() {
        let key = format!("verification/{i}");
        let _ = writeln!(
            o,
            r#"<tr>{}{}{}{}<td class="num">[{}, {}]</td><td>{}</td></tr>"#,
            text_cell(&r.scenario),
            text_cell(&r.figure),
            prob_cell(&format!("{key}/exact"), r.exact, r.exact_error),
            cell(
                &format!("{key}/sampled"),
                r.sampled,
                &sci_html(&probability(r.sampled)),
                None,
                ""
            ),
            sci_html(&probability(r.interval[0])),
            sci_html(&probability(r.interval[1])),
            verdict_html(r.agrees, if r.agrees { "yes" } else { "NO" })
        );
    }
    o.push_str("</tbody></table>\n</section>\n");
}

/// Meaning of each numerical setting, by its field name in `AnalysisOptions`.
const OPTION_MEANINGS: [(&str, &str); 12] = [
    (
        "polytope_abs",
        "absolute tolerance of each polytope probability",
    ),
    (
        "polytope_rel",
        "relative tolerance of each polytope probability",
    ),
    ("polytope_max_points", "lattice points allowed per polytope"),
    (
        "amplitude_abs",
        "absolute tolerance of the integral over a uniform amplitude",
    ),
    ("amplitude_rel", "relative tolerance of that integral"),
    (
        "amplitude_max_intervals",
        "subintervals allowed in that integral",
    ),
    (
        "sigma_scan_points",
        "points of the log-spaced scan over an unknown σ",
    ),
    (
        "sigma_scan_rel",
        "relative tolerance of each polytope during the scan",
    ),
    (
        "sigma_rel_tol",
        "relative tolerance in σ of the refined worst case",
    ),
    (
        "sigma_max_evaluations",
        "evaluations allowed per refinement",
    ),
    ("max_polytopes", "disjoint polytopes allowed per scenario"),
    (
        "engine",
        "which engine: automatic (order statistics from four channels where they fit, else polytopes)",
    ),
];

fn method(o: &mut String, input: &ReportInput<'_>, options: &HtmlOptions) {
    section_start(o, "method", 10, "Numerical method and tolerances");
    o.push_str("<p>Every outcome is a union of disjoint polytopes in the space of the channel deviations. Each polytope probability is integrated with its own error bound: closed forms for one and two random directions (the normal distribution; the bivariate normal by Genz 2004); exact planar slices for two conditioning variables; one adaptive Gauss–Kronrod integral over exact slices for three (deterministic); Genz's sequential conditioning with a randomised lattice rule and a fixed seed for four or more (Genz 1992; Genz and Bretz 2009), its bound the scatter of the random shifts. A uniform amplitude is integrated by adaptive Gauss–Kronrod (QUADPACK, Piessens et al. 1983) with breakpoints where the integrand steps; an unknown σ is scanned on a log grid and every local maximum of the residual refined by Brent's method (Brent 1973) in log σ. The residual is integrated directly, never as a difference of large probabilities. The bounds cover the numerical method only, not the model.</p>\n");
    o.push_str("<p>Where the channels are independent once one shared term is fixed (a shared source, a positive correlation written as one, a gaussian fault amplitude) and the output is an order statistic of channels with range or difference checks, the figures are computed instead from counts: given the shared term, “the output above L” is “at least k readings above L”, a Poisson-binomial sum, and a range check is one integral over the smallest reading (David and Nagaraja 2003, Order Statistics); the integrals over that reading and over the shared term are adaptive Gauss–Kronrod rules over windows of ±9 standard deviations, whose mass outside (2.3e-19 each) is added to the bounds. This takes polynomial time in the number of channels; models of up to three channels stay with the polytopes.</p>\n");
    let mut by_method = vec![format!(
        "fault-free baseline: {}",
        input.analysis.baseline_method.words()
    )];
    for site in &input.analysis.sites {
        by_method.push(format!("{}: {}", site.name, site.method.words()));
    }
    let _ = writeln!(
        o,
        "<p>Method of each figure set: {}.</p>",
        esc(&by_method.join("; "))
    );
    let _ = writeln!(
        o,
        "<p>Method of this report: <strong>{}</strong>. Cross-check: {}.</p>",
        esc(input.method),
        match options.monte_carlo {
            Some((n, seed)) => format!("{n} Monte Carlo samples per scenario, seed {seed}"),
            None => "not run".to_string(),
        }
    );
    o.push_str(r#"<table class="kv"><thead><tr><th>setting</th><th class="num">value</th><th>meaning</th></tr></thead><tbody>"#);
    let settings = serde_json::to_value(input.analysis.options).ok();
    if let Some(serde_json::Value::Object(map)) = settings {
        for (name, value) in map {
            let meaning = OPTION_MEANINGS
                .iter()
                .find(|(n, _)| *n == name)
                .map_or("", |(_, m)| m);
            let shown = value.as_f64().map_or_else(|| value.to_string(), number);
            let _ = write!(
                o,
                r#"<tr><td><code>{}</code></td><td class="num">{}</td><td>{}</td></tr>"#,
                esc(&name),
                esc(&shown),
                esc(meaning)
            );
        }
    }
    o.push_str("</tbody></table>\n</section>\n");
}

fn reproduce(o: &mut String, doc: &AnalysisJson, options: &HtmlOptions) {
    section_start(o, "reproduce", 11, "Reproducing this report");
    o.push_str("<p>concord is deterministic: the same input file, tool version and options give the same figures, bit for bit, whatever the number of threads. To reproduce this report, check that the file's SHA-256 matches and run the command below; <code>concord analyze FILE --format json --with-curves</code> prints the same numbers as JSON (each number cell of this page carries its exact JSON value in <code>data-value</code>).</p>\n");
    o.push_str(r#"<table class="kv"><tbody>"#);
    let rows = [
        ("tool", format!("concord {}", doc.tool_version)),
        ("input file", doc.input_file.clone()),
        ("input SHA-256", doc.input_sha256.clone()),
        ("report date", options.date.to_string()),
        ("command", options.command.clone()),
    ];
    for (k, v) in rows {
        let _ = write!(
            o,
            "<tr><th scope=\"row\">{}</th><td><code class=\"hash\">{}</code></td></tr>",
            esc(k),
            esc(&v)
        );
    }
    o.push_str("</tbody></table>\n</section>\n");
}

fn cautions(o: &mut String) {
    section_start(o, "cautions", 12, "Cautions");
    o.push_str(r#"<ul class="cautions">"#);
    for c in CAUTIONS {
        let _ = write!(o, "<li>{}</li>", esc(c));
    }
    o.push_str("</ul>\n</section>\n");
}
