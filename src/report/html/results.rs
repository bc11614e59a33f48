//! Sections 6 to 8 of the report: the results per fault site, the curves over an unknown
//! sigma and the hardware metrics.

use std::fmt::Write as _;

use crate::analysis::metrics::{self, Asil, LFM_TARGETS, PMHF_TARGETS_FIT, SPFM_TARGETS};
use crate::prob::Estimate;

use crate::report::format::{bound, fit, number, percent_floor, probability, xml_escape as esc};
use crate::report::json::{AnalysisJson, SiteJson};
use crate::report::plot::{self, Chart, Marker, ReferenceLine, Scale, Series};

use super::{
    CHART_W, cell, json_number, percent_cell, prob_cell, sci_html, section_start, site_key,
    text_cell, verdict_html,
};

pub(super) fn results(o: &mut String, doc: &AnalysisJson) {
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

/// A chart as an SVG figure with its caption (or the reason it could not be drawn).
pub(super) fn chart_figure(o: &mut String, chart: Option<Chart>, height: u32, caption: &str) {
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

pub(super) fn curves(o: &mut String, doc: &AnalysisJson) {
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
pub(super) fn targets_met(
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

pub(super) fn metrics(o: &mut String, doc: &AnalysisJson) {
    let m = &doc.metrics;
    section_start(o, "metrics", 8, "Hardware metrics against the ASIL targets");
    o.push_str("<p>Targets of ISO 26262-5:2018 Tables 4 to 6, recalled, not checked against the published text: check them against the standard in force. The residual rate is the single-point part of the PMHF only. A target counts as met only when the value minus its error bound meets it (for the residual rate: the value plus its bound stays below it), so that numerical error never lifts a design a level; every mark, the column “reached”, the summary of section 1, the terminal output and the JSON use this one rule.</p>\n");
    let worst = worst_over_box(doc);
    if worst.is_some() {
        o.push_str("<p>The file states tolerances of its inputs (section 11): every mark and the column “reached” judge the worst value over the box of tolerances, not the value with the inputs as written, which is shown beside it.</p>\n");
        o.push_str(r#"<table class="wide metrics"><thead><tr><th>metric</th><th class="num">value as written</th><th class="num">worst over the tolerances</th><th>ASIL B</th><th>ASIL C</th><th>ASIL D</th><th>reached</th></tr></thead><tbody>"#);
    } else {
        o.push_str(r#"<table class="wide metrics"><thead><tr><th>metric</th><th class="num">value</th><th>ASIL B</th><th>ASIL C</th><th>ASIL D</th><th>reached</th></tr></thead><tbody>"#);
    }
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
    // Each metric: its cell as written, the worst over the box (when the file has tolerances)
    // beside it, and the marks and "reached" on the value judged.
    let value_cell = |key: &str, value: f64, error: f64, percent: bool| {
        if percent {
            percent_cell(key, value, Some(error), " %")
        } else {
            cell(
                key,
                value,
                &format!("{} FIT", fit(value)),
                Some(error),
                &sci_html(&bound(error)),
            )
        }
    };
    let rows = [
        (
            "SPFM",
            "spfm",
            (m.spfm, m.error.spfm),
            worst.as_ref().map(|w| &w.spfm),
            &m.asil_spfm,
            &SPFM_TARGETS[..],
            true,
        ),
        (
            "LFM",
            "lfm",
            (m.lfm, m.error.lfm),
            worst.as_ref().map(|w| &w.lfm),
            &m.asil_lfm,
            &LFM_TARGETS[..],
            true,
        ),
        (
            "residual rate",
            "residual_fit",
            (m.residual_fit, m.error.residual_fit),
            worst.as_ref().map(|w| &w.residual),
            &m.asil_residual_budget,
            &PMHF_TARGETS_FIT[..],
            false,
        ),
    ];
    for (label, key, (value, error), over_box, nominal_label, targets, minimum) in rows {
        let written = value_cell(&format!("metrics/{key}"), value, error, minimum);
        let (judged, box_cell, verdict) = match over_box {
            Some(w) => {
                let end = if minimum { "lowest" } else { "highest" };
                (
                    (w.value, w.error),
                    value_cell(
                        &format!("tolerances/{end}/{key}"),
                        w.value,
                        w.error,
                        minimum,
                    ),
                    w.label.clone(),
                )
            }
            None => ((value, error), String::new(), nominal_label.clone()),
        };
        let unit = if minimum { "%" } else { "FIT" };
        let _ = writeln!(
            o,
            "<tr><th scope=\"row\">{label}</th>{written}{box_cell}{}<td>{}</td></tr>",
            target_cells(judged.0, judged.1, targets, minimum, unit),
            esc(&verdict)
        );
    }
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

/// A metric's worst value over the box of tolerances, with its bound and the ASIL it reaches.
pub(super) struct JudgedMetric {
    pub value: f64,
    pub error: f64,
    pub label: String,
}

/// The worst SPFM, LFM (their lowest) and residual rate (its highest) over the box of
/// tolerances, when the analysis has one: what the verdicts of sections 1 and 8 judge.
pub(super) struct WorstOverBox {
    pub spfm: JudgedMetric,
    pub lfm: JudgedMetric,
    pub residual: JudgedMetric,
}

pub(super) fn worst_over_box(doc: &AnalysisJson) -> Option<WorstOverBox> {
    let t = doc.tolerances.as_ref()?;
    let metric = |key: &str| {
        t.figures
            .iter()
            .find(|f| f.site.is_none() && f.figure == key)
    };
    let (spfm, lfm, rate) = (metric("spfm")?, metric("lfm")?, metric("residual_fit")?);
    Some(WorstOverBox {
        spfm: JudgedMetric {
            value: spfm.lowest,
            error: spfm.lowest_error,
            label: t.asil_spfm.clone(),
        },
        lfm: JudgedMetric {
            value: lfm.lowest,
            error: lfm.lowest_error,
            label: t.asil_lfm.clone(),
        },
        residual: JudgedMetric {
            value: rate.highest,
            error: rate.highest_error,
            label: t.asil_residual_budget.clone(),
        },
    })
}
