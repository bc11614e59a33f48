//! The tolerances of the inputs in the outputs of `analyze --within`: the JSON `tolerances`
//! object (`inputs`: `key`, `nominal`, `lower`, `upper`; `grid_points`, `evaluations`;
//! `figures`: `site` (null for the metrics and the false alarm), `figure`, `nominal`,
//! `lowest`, `lowest_at`, `lowest_error`, `highest`, `highest_at`, `highest_error`,
//! `monotone`; `asil_spfm`, `asil_lfm` and `asil_residual_budget` judged on the worst value
//! over the box) and the table's section.

use std::fmt::Write as _;

use serde::{Deserialize, Serialize};

use crate::analysis::metrics::{
    Asil, LFM_TARGETS, PMHF_TARGETS_FIT, SPFM_TARGETS, asil_for_maximum, asil_for_minimum,
};
use crate::analysis::tolerances::ToleranceAnalysis;

use super::format::{format_number, percent_floor, probability, short_style, wrap};

/// One input and its tolerance.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ToleranceInputJson {
    pub key: String,
    pub nominal: f64,
    pub lower: f64,
    pub upper: f64,
}

/// One figure over the box.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FigureRangeJson {
    pub site: Option<String>,
    pub figure: String,
    pub nominal: f64,
    pub lowest: f64,
    pub lowest_at: Vec<f64>,
    pub lowest_error: f64,
    pub highest: f64,
    pub highest_at: Vec<f64>,
    pub highest_error: f64,
    pub monotone: bool,
}

/// The `tolerances` object.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TolerancesJson {
    pub inputs: Vec<ToleranceInputJson>,
    pub grid_points: usize,
    pub evaluations: usize,
    pub figures: Vec<FigureRangeJson>,
    pub asil_spfm: String,
    pub asil_lfm: String,
    pub asil_residual_budget: String,
}

/// The ASIL verdicts on the worst value over the box, each judged on the value minus (for
/// the residual rate: plus) its bound, as the main verdicts are.
pub fn worst_verdicts(t: &ToleranceAnalysis) -> (Asil, Asil, Asil) {
    let spfm = t.metric("spfm").map_or(Asil::NotApplicable, |r| {
        asil_for_minimum(r.lowest, &SPFM_TARGETS)
    });
    let lfm = t.metric("lfm").map_or(Asil::NotApplicable, |r| {
        asil_for_minimum(r.lowest, &LFM_TARGETS)
    });
    let residual = t.metric("residual_fit").map_or(Asil::NotApplicable, |r| {
        asil_for_maximum(r.highest, &PMHF_TARGETS_FIT)
    });
    (spfm, lfm, residual)
}

/// The JSON object.
pub fn tolerances_json(t: &ToleranceAnalysis) -> TolerancesJson {
    let (spfm, lfm, residual) = worst_verdicts(t);
    TolerancesJson {
        inputs: t
            .inputs
            .iter()
            .map(|i| ToleranceInputJson {
                key: i.key.clone(),
                nominal: i.nominal,
                lower: i.lower,
                upper: i.upper,
            })
            .collect(),
        grid_points: t.grid_points,
        evaluations: t.evaluations,
        figures: t
            .figures
            .iter()
            .map(|f| FigureRangeJson {
                site: f.site.clone(),
                figure: f.figure.to_string(),
                nominal: f.nominal,
                lowest: f.lowest.value,
                lowest_at: f.lowest_at.clone(),
                lowest_error: f.lowest.error,
                highest: f.highest.value,
                highest_at: f.highest_at.clone(),
                highest_error: f.highest.error,
                monotone: f.monotone,
            })
            .collect(),
        asil_spfm: spfm.label().to_string(),
        asil_lfm: lfm.label().to_string(),
        asil_residual_budget: residual.label().to_string(),
    }
}

/// The table's section: the box, the metrics over it with the verdicts on their worst
/// values, and each site's residual rate.
pub fn table_section(out: &mut String, t: &ToleranceAnalysis) {
    let short = short_style(4);
    let _ = writeln!(out);
    let boxed: Vec<String> = t
        .inputs
        .iter()
        .map(|i| {
            format!(
                "{} in [{}, {}] (file: {})",
                i.key,
                format_number(i.lower, &short),
                format_number(i.upper, &short),
                format_number(i.nominal, &short)
            )
        })
        .collect();
    for line in wrap(
        &format!(
            "Tolerances of the inputs: {} ({} grid points per input, {} analyses)",
            boxed.join("; "),
            t.grid_points,
            t.evaluations
        ),
        98,
    ) {
        let _ = writeln!(out, "{line}");
    }
    let at = |p: &[f64]| {
        p.iter()
            .map(|v| format_number(*v, &short))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let _ = writeln!(
        out,
        "  {:<28} {:>11} {:>11} {:>11}  worst at (inputs in order)",
        "figure", "file", "lowest", "highest"
    );
    let (spfm, lfm, residual) = worst_verdicts(t);
    for f in &t.figures {
        let name = match &f.site {
            Some(s) => format!("{s} / {}", f.figure),
            None => f.figure.to_string(),
        };
        let percent = matches!(f.figure, "spfm" | "lfm" | "dc" | "dc_all_dangerous");
        let show = |v: f64| {
            if percent {
                format!("{} %", percent_floor(v))
            } else {
                probability(v)
            }
        };
        // The worst end: the lowest of a coverage or metric, the highest of a rate.
        let worst_at = if matches!(f.figure, "residual_fit" | "false_alarm") {
            at(&f.highest_at)
        } else {
            at(&f.lowest_at)
        };
        let _ = writeln!(
            out,
            "  {:<28} {:>11} {:>11} {:>11}  {}{}",
            name,
            show(f.nominal),
            show(f.lowest.value),
            show(f.highest.value),
            worst_at,
            if f.monotone { "" } else { "  (refined)" }
        );
    }
    for line in wrap(
        &format!(
            "over the box: SPFM {}, LFM {}, residual rate budget {} (each on its worst value \
             minus, for the rate plus, its bound)",
            spfm.verdict(),
            lfm.verdict(),
            residual.verdict()
        ),
        96,
    ) {
        let _ = writeln!(out, "  {line}");
    }
    let _ = writeln!(
        out,
        "  (the extremes of a grid of the box, corners included, refined by a bounded search \
         where a\n  figure is not monotone along the grid lines; an extreme narrower than one \
         grid cell can be missed)"
    );
}
