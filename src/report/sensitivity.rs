//! The outputs of `concord sensitivity`: a ranked table per figure, JSON
//! (`{"sensitivities": [{"key", "site", "figure", "value", "derivative", "error",
//! "elasticity", "input"}, ...], "cautions": [...]}`, `site` null for the metrics and the
//! false alarm), CSV, and an SVG bar chart per figure ranking the inputs.

use std::fmt::Write as _;

use serde::{Deserialize, Serialize};

use crate::analysis::sensitivity::{Sensitivity, SensitivityAnalysis};

use super::cautions::{CAUTIONS, csv_comment_block};
use super::error::ReportError;
use super::format::{bound, format_number, probability, short_style, wrap, xml_escape};

/// Rows per figure in the table (all are in JSON and CSV).
pub const TABLE_ROWS: usize = 8;

fn figure_name(r: &Sensitivity) -> String {
    match &r.site {
        Some(s) => format!("{s} / {}", r.figure),
        None => r.figure.to_string(),
    }
}

/// The figures in the order of the rows.
fn groups(a: &SensitivityAnalysis) -> Vec<(String, Vec<&Sensitivity>)> {
    let mut out: Vec<(String, Vec<&Sensitivity>)> = Vec::new();
    for r in &a.rows {
        let name = figure_name(r);
        match out.last_mut() {
            Some((n, rows)) if *n == name => rows.push(r),
            _ => out.push((name, vec![r])),
        }
    }
    out
}

/// The ranked table: for each figure its value and the inputs with the largest elasticity.
pub fn table(a: &SensitivityAnalysis, file: &str) -> String {
    let mut out = format!(
        "Sensitivity of every figure to every numeric input ({} inputs)  |  {file}\n",
        a.inputs
    );
    let short = short_style(4);
    for (name, rows) in groups(a) {
        let value = rows.first().map_or(0.0, |r| r.value);
        let _ = writeln!(out, "\n{name} = {}", probability(value));
        let _ = writeln!(
            out,
            "  {:<48} {:>11} {:>11} {:>8} {:>11}",
            "input", "value", "derivative", "bound", "elasticity"
        );
        for r in rows.iter().take(TABLE_ROWS) {
            let _ = writeln!(
                out,
                "  {:<48} {:>11} {:>11} {:>8} {:>11}{}",
                clip(&r.key, 48),
                format_number(r.input, &short),
                probability(r.derivative),
                bound(r.error),
                r.elasticity
                    .map_or("-".to_string(), |e| format_number(e, &short)),
                if r.sigma_held { " *" } else { "" }
            );
        }
        if rows.len() > TABLE_ROWS {
            let _ = writeln!(
                out,
                "  ... {} more inputs (all in --format json or csv)",
                rows.len() - TABLE_ROWS
            );
        }
    }
    let _ = writeln!(
        out,
        "\nelasticity: the relative change of the figure per relative change of the input \
         (derivative x input / figure); bound: the numerical bound of the derivative; *: the \
         worst sigma held (see the notes)."
    );
    for c in &a.cautions {
        for line in wrap(&format!("Note: {c}"), 98) {
            let _ = writeln!(out, "{line}");
        }
    }
    for c in CAUTIONS {
        for line in wrap(&format!("Caution: {c}"), 98) {
            let _ = writeln!(out, "{line}");
        }
    }
    out
}

fn clip(text: &str, width: usize) -> String {
    if text.chars().count() <= width {
        text.to_string()
    } else {
        let kept: String = text.chars().take(width - 1).collect();
        format!("{kept}…")
    }
}

/// One row of the JSON: a figure's derivative by one input (also the `sensitivity` list of
/// `analyze --with-sensitivity`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SensitivityRowJson {
    pub key: String,
    pub site: Option<String>,
    pub figure: String,
    pub value: f64,
    pub derivative: f64,
    pub error: f64,
    pub elasticity: Option<f64>,
    pub input: f64,
    pub sigma_held: bool,
}

/// The rows, ranked as computed.
pub fn rows_json(a: &SensitivityAnalysis) -> Vec<SensitivityRowJson> {
    a.rows
        .iter()
        .map(|r| SensitivityRowJson {
            key: r.key.clone(),
            site: r.site.clone(),
            figure: r.figure.to_string(),
            value: r.value,
            derivative: r.derivative,
            error: r.error,
            elasticity: r.elasticity,
            input: r.input,
            sigma_held: r.sigma_held,
        })
        .collect()
}

#[derive(Serialize)]
struct DocumentJson {
    sensitivities: Vec<SensitivityRowJson>,
    cautions: Vec<String>,
}

/// The JSON document.
///
/// # Errors
/// Serialisation errors (none expected).
pub fn json(a: &SensitivityAnalysis) -> Result<String, ReportError> {
    let doc = DocumentJson {
        sensitivities: rows_json(a),
        cautions: a
            .cautions
            .iter()
            .cloned()
            .chain(CAUTIONS.iter().map(|c| c.to_string()))
            .collect(),
    };
    let mut text = serde_json::to_string_pretty(&doc)?;
    text.push('\n');
    Ok(text)
}

/// One CSV row per (figure, input), after the comment block of the cautions.
pub fn csv(a: &SensitivityAnalysis) -> String {
    let mut out = csv_comment_block();
    out.push_str("site,figure,key,input,value,derivative,error,elasticity,sigma_held\n");
    for r in &a.rows {
        let _ = writeln!(
            out,
            "{},{},{},{:e},{:e},{:e},{:e},{},{}",
            r.site.as_deref().unwrap_or(""),
            r.figure,
            r.key,
            r.input,
            r.value,
            r.derivative,
            r.error,
            r.elasticity.map_or(String::new(), |e| format!("{e:e}")),
            r.sigma_held
        );
    }
    out
}

/// Bars per chart.
const CHART_BARS: usize = 12;

/// One SVG bar chart per figure: the inputs with the largest |elasticity| (or, where it is
/// undefined, |derivative x input|), largest first, as `(file name, SVG text)`.
pub fn charts(a: &SensitivityAnalysis) -> Vec<(String, String)> {
    groups(a)
        .into_iter()
        .map(|(name, rows)| {
            let file = format!(
                "sensitivity-{}.svg",
                name.replace(" / ", "-")
                    .chars()
                    .map(|c| if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                        c
                    } else {
                        '_'
                    })
                    .collect::<String>()
            );
            (file, bar_chart(&name, &rows))
        })
        .collect()
}

fn bar_chart(name: &str, rows: &[&Sensitivity]) -> String {
    let elastic = rows.iter().all(|r| r.elasticity.is_some());
    let effect = |r: &Sensitivity| {
        if elastic {
            r.elasticity.unwrap_or(0.0)
        } else {
            r.derivative * r.input
        }
    };
    let shown: Vec<&&Sensitivity> = rows.iter().take(CHART_BARS).collect();
    let largest = shown
        .iter()
        .map(|r| effect(r).abs())
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE);
    let (width, label_w, bar_h, top) = (760.0, 300.0, 22.0, 48.0);
    let height = top + bar_h * shown.len() as f64 + 40.0;
    let centre = label_w + (width - label_w - 20.0) / 2.0;
    let half = (width - label_w - 20.0) / 2.0 - 60.0;
    let short = short_style(3);
    let mut s = format!(
        r##"<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width} {height}" width="{width}" height="{height}" font-family="sans-serif" font-size="12">"##
    );
    let _ = write!(
        s,
        r##"<rect width="100%" height="100%" fill="white"/><text x="10" y="20" font-size="15">{}</text><text x="10" y="38" fill="#555">{}</text>"##,
        xml_escape(&format!("Which input matters: {name}")),
        xml_escape(if elastic {
            "elasticity: relative change of the figure per relative change of the input"
        } else {
            "derivative x input: change of the figure per relative change of the input"
        })
    );
    let _ = write!(
        s,
        r##"<line x1="{centre}" y1="{}" x2="{centre}" y2="{}" stroke="#333"/>"##,
        top - 4.0,
        top + bar_h * shown.len() as f64
    );
    for (i, r) in shown.iter().enumerate() {
        let y = top + bar_h * i as f64;
        let e = effect(r);
        let len = half * e.abs() / largest;
        let x = if e >= 0.0 { centre } else { centre - len };
        let fill = if e >= 0.0 { "#3a6ea5" } else { "#c0504d" };
        let _ = write!(
            s,
            r##"<text x="{}" y="{}" text-anchor="end">{}</text><rect x="{x:.2}" y="{:.2}" width="{len:.2}" height="{:.2}" fill="{fill}"/><text x="{:.2}" y="{}" text-anchor="{}">{}</text>"##,
            label_w - 8.0,
            y + bar_h * 0.7,
            xml_escape(&clip(&r.key, 44)),
            y + 3.0,
            bar_h - 6.0,
            if e >= 0.0 {
                centre + len + 4.0
            } else {
                centre - len - 4.0
            },
            y + bar_h * 0.7,
            if e >= 0.0 { "start" } else { "end" },
            xml_escape(&format_number(e, &short))
        );
    }
    let _ = write!(
        s,
        r##"<text x="10" y="{}" fill="#555">{}</text></svg>"##,
        height - 12.0,
        xml_escape(
            "Derivatives for small changes, with the unknown sigmas held at their worst values; estimates under the file's assumptions."
        )
    );
    s.push('\n');
    s
}
