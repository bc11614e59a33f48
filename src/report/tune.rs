//! Output of `concord tune`: a summary for the terminal, the JSON object, and the trade-off
//! curve (coverage against false-alarm probability) as CSV. For a file with an `[isolation]`
//! section the summary and the JSON (`chosen_isolation`: `end_states` and per site
//! `isolated`, `wrong_channel`, `none_blamed`, each `{"value", "error"}`) also say how
//! single faults end at the chosen band.

use serde::Serialize;

use crate::analysis::sweep::IsolationSummary;
use crate::analysis::timed_tune::TimedTuneResult;
use crate::analysis::tune::{TradeOffPoint, TuneRequest, TuneResult};

use super::cautions::{CAUTIONS, csv_comment_block, plot_caption};
use super::csv::field as csv_field;
use super::error::ReportError;
use super::format::{
    format_number, percent_floor, percent_with_bound, plain_significant_style, probability,
    rule_label,
};
use super::plot::{Chart, Marker, PlotError, ReferenceLine, Scale, Series, render_svg};
use super::sweep::{PLOT_SIZE, dc_levels};
use super::{TOOL_VERSION, input_sha256};

/// `checks.ab.limit = 4.7218` with six significant digits, for text and pictures (the JSON
/// and CSV carry every digit).
pub fn short_point(point: &TradeOffPoint) -> String {
    point
        .limits
        .iter()
        .map(|(k, v)| format!("{k} = {}", format_number(*v, &plain_significant_style(6))))
        .collect::<Vec<_>>()
        .join(", ")
}

/// The summary for the terminal: the chosen limit, what it reaches, the price, and plain
/// words when the target cannot be met.
pub fn summary(result: &TuneResult, file: &str) -> String {
    let r = &result.request;
    let what = match &r.check {
        Some(c) => format!("check '{c}'"),
        None => "every check, bands scaled together".to_string(),
    };
    let sites = if r.sites.is_empty() {
        "every fault site".to_string()
    } else {
        r.sites.join(", ")
    };
    let mut out = format!(
        "Tuning of {what} in {file}\n\
         target: worst-case {} >= {} on {sites} (a point counts only when its value minus its \
         error bound meets the target)\n\
         range searched: {} to {} times the bands in the file, {} curve points, {} analyses\n\n",
        r.figure.key(),
        r.target,
        r.scale_range.0,
        r.scale_range.1,
        r.curve_points,
        result.evaluations
    );
    match &result.chosen {
        Some(p) => {
            out.push_str(&format!(
                "chosen: {}\n  scale on the file's bands  {:.6}\n  lowest {} {}  (site {})\n  \
                 false-alarm probability    {}\n",
                short_point(p),
                p.scale,
                r.figure.key(),
                percent_with_bound(p.coverage),
                if p.weakest_site.is_empty() {
                    "none dangerous"
                } else {
                    &p.weakest_site
                },
                probability(p.false_alarm.value)
            ));
            if let Some(f) = &result.first_failing {
                out.push_str(&format!(
                    "  a band wider than {} misses the target ({} {})\n",
                    short_point(f),
                    r.figure.key(),
                    percent_with_bound(f.coverage)
                ));
            }
            if result.at_range_end {
                out.push_str(
                    "  the widest band of the range meets the target: a wider range may allow a \
                     wider band with fewer false alarms (give --scale LO:HI)\n",
                );
            }
            if let Some(isolation) = &result.chosen_isolation {
                out.push_str(&isolation_lines(isolation));
            }
        }
        None => {
            let b = &result.best_reachable;
            out.push_str(&format!(
                "no band in the range reaches the target.\n  best reachable: {} {} at {} \
                 (site {}), false-alarm probability {}\n  narrower bands than the range allows, \
                 or other diagnostics, are needed\n",
                r.figure.key(),
                percent_with_bound(b.coverage),
                short_point(b),
                b.weakest_site,
                probability(b.false_alarm.value)
            ));
        }
    }
    for w in &result.warnings {
        out.push_str(&format!("warning: {w}\n"));
    }
    out.push('\n');
    for c in CAUTIONS {
        out.push_str(&format!("- {c}\n"));
    }
    out
}

/// What follows a detection at the chosen band (a file with an `[isolation]` section): the
/// FIT-weighted end states of a single fault and the site where a healthy channel is most
/// often blamed.
fn isolation_lines(isolation: &IsolationSummary) -> String {
    let e = &isolation.end_states;
    let mut out = format!(
        "  after a single fault at this band (FIT-weighted, the file's isolation rule):\n    \
         continues {} %, shutdown {} %, fault stays in the vote {} %, residual {} %\n",
        percent_floor(e.continues.value),
        percent_floor(e.shutdown.value),
        percent_floor(e.fault_stays.value),
        percent_floor(e.residual.value),
    );
    let worst = isolation
        .sites
        .iter()
        .max_by(|a, b| a.wrong_channel.value.total_cmp(&b.wrong_channel.value))
        .filter(|s| s.wrong_channel.value > 0.0);
    if let Some(site) = worst {
        out.push_str(&format!(
            "    a healthy channel blamed most often at site {}: probability {}\n",
            site.name,
            probability(site.wrong_channel.value)
        ));
    }
    out
}

#[derive(Serialize)]
struct TuneJson<'a> {
    tool_version: &'a str,
    file: &'a str,
    input_sha256: String,
    #[serde(flatten)]
    result: &'a TuneResult,
    cautions: &'a [&'a str],
}

/// The result as one JSON object (the request, the chosen point, the bracket, the curve, and
/// for a file with an `[isolation]` section the isolation figures at the chosen band).
///
/// # Errors
/// Serialisation errors (none expected).
pub fn json(result: &TuneResult, file: &str, text: &str) -> Result<String, ReportError> {
    let j = TuneJson {
        tool_version: TOOL_VERSION,
        file,
        input_sha256: input_sha256(text),
        result,
        cautions: &CAUTIONS,
    };
    let mut text = serde_json::to_string_pretty(&j)?;
    text.push('\n');
    Ok(text)
}

/// The trade-off curve as CSV, after the comment block of the cautions (lines starting with
/// `#`): `scale`, the keys set, `false_alarm`, `false_alarm_error`,
/// `coverage`, `coverage_error`, `weakest_site`, `meets`.
pub fn curve_csv(result: &TuneResult) -> String {
    let keys: Vec<String> = result
        .curve
        .first()
        .map(|p| p.limits.iter().map(|(k, _)| k.clone()).collect())
        .unwrap_or_default();
    let mut out = csv_comment_block();
    out.push_str("scale");
    for k in &keys {
        out.push(',');
        out.push_str(&csv_field(k));
    }
    out.push_str(",false_alarm,false_alarm_error,coverage,coverage_error,weakest_site,meets\n");
    for p in &result.curve {
        out.push_str(&row(p));
    }
    out
}

fn row(p: &TradeOffPoint) -> String {
    let mut cells = vec![format!("{:e}", p.scale)];
    cells.extend(p.limits.iter().map(|(_, v)| format!("{v:e}")));
    cells.push(format!("{:e}", p.false_alarm.value));
    cells.push(format!("{:e}", p.false_alarm.error));
    cells.push(format!("{:e}", p.coverage.value));
    cells.push(format!("{:e}", p.coverage.error));
    cells.push(csv_field(&p.weakest_site));
    cells.push(p.meets.to_string());
    format!("{}\n", cells.join(","))
}

/// The trade-off curve as a chart: the lowest coverage over the chosen sites against the
/// fault-free false-alarm probability (log), the target and the DC levels, the chosen point
/// marked.
pub fn trade_off_chart(result: &TuneResult) -> Chart {
    let r = &result.request;
    // A false-alarm probability below its own error bound cannot be told from zero and has
    // no place on a log axis: such points are left out of the picture (not of the CSV).
    let points: Vec<(f64, f64)> = result
        .curve
        .iter()
        .filter(|p| p.false_alarm.value > p.false_alarm.error)
        .map(|p| (p.false_alarm.value, 100.0 * p.coverage.value))
        .collect();
    let mut reference_lines: Vec<ReferenceLine> = dc_levels()
        .into_iter()
        .filter(|l| (l.y - 100.0 * r.target).abs() > 0.5)
        .collect();
    reference_lines.push(ReferenceLine {
        y: 100.0 * r.target,
        label: format!("target {} %", 100.0 * r.target),
    });
    let markers = result
        .chosen
        .iter()
        .map(|p| Marker {
            x: p.false_alarm.value,
            y: 100.0 * p.coverage.value,
            label: format!("chosen: {}", short_point(p)),
        })
        .collect();
    Chart {
        title: match &r.check {
            Some(c) => format!("Coverage against false alarms, band of check '{c}' varied"),
            None => "Coverage against false alarms, every band scaled together".into(),
        },
        x_label: "fault-free false-alarm probability [-]".into(),
        y_label: format!("lowest worst-case {} over the sites [%]", r.figure.key()),
        x_scale: Scale::Log,
        y_scale: Scale::Linear,
        series: vec![Series {
            label: "trade-off, one point per band (wider bands to the left; false alarms \
                    below their error bound left out)"
                .into(),
            points,
        }],
        reference_lines,
        markers,
        caption: plot_caption(),
    }
}

/// The trade-off curve as SVG.
///
/// # Errors
/// The plot module's errors (e.g. every false-alarm probability zero on the log axis).
pub fn trade_off_svg(result: &TuneResult) -> Result<String, PlotError> {
    render_svg(&trade_off_chart(result), PLOT_SIZE.0, PLOT_SIZE.1)
}

/// The joint tuning of bands and confirmation rule in text: one line per rule, the chosen
/// one marked.
pub fn confirmation_summary(result: &TimedTuneResult, request: &TuneRequest, file: &str) -> String {
    let mut out = format!(
        "concord tune --with-confirmation  |  {file}\n\ntarget: {} over the deadline >= {} % \
         on {}; a fault confirmed after the deadline counts as missed\n\n",
        request.figure.key(),
        100.0 * request.target,
        if request.sites.is_empty() {
            "every site".to_string()
        } else {
            request.sites.join(", ")
        }
    );
    out.push_str(&format!(
        "{:<2} {:<26} {:>12} {:>22} {:>22}\n",
        "", "rule", "band scale", "weakest coverage %", "false alarms / h"
    ));
    for (i, r) in result.rules.iter().enumerate() {
        let mark = if result.chosen == Some(i) { "=>" } else { "" };
        let scale = match r.scale {
            Some(s) if r.at_range_end => {
                format!(">= {}", format_number(s, &plain_significant_style(4)))
            }
            Some(s) => format_number(s, &plain_significant_style(4)),
            None => "none meets".to_string(),
        };
        out.push_str(&format!(
            "{:<2} {:<26} {:>12} {:>22} {:>22}\n",
            mark,
            rule_label(&r.rule),
            scale,
            percent_with_bound(r.coverage),
            if r.scale.is_some() {
                probability(r.false_alarms_per_hour.value)
            } else {
                "-".to_string()
            }
        ));
    }
    out.push('\n');
    match result.chosen.and_then(|i| result.rules.get(i)) {
        Some(r) => out.push_str(&format!(
            "Chosen: {} with the bands at {} times the file's: {} false alarms per hour.\n",
            rule_label(&r.rule),
            r.scale.map_or("-".into(), |s| format_number(
                s,
                &plain_significant_style(4)
            )),
            probability(r.false_alarms_per_hour.value)
        )),
        None => out.push_str(
            "No rule meets the target within the range of scales: a tighter band than the \
             range allows, a longer deadline or another architecture is needed.\n",
        ),
    }
    out.push_str(&format!(
        "({} timed analyses; coverage per rule at its widest meeting band, known to 1 % in the \
         scale; a coverage meets the target when its value minus its error bound does)\n\n",
        result.evaluations
    ));
    for c in CAUTIONS {
        out.push_str(&format!("- {c}\n"));
    }
    out
}

/// One rule of the joint tuning in JSON: its label, then the figures of the analysis.
#[derive(Serialize)]
struct RuleJson {
    label: String,
    scale: Option<f64>,
    coverage: crate::prob::Estimate,
    false_alarms_per_hour: crate::prob::Estimate,
    at_range_end: bool,
}

#[derive(Serialize)]
struct ConfirmationJson<'a> {
    tool_version: &'a str,
    input_file: &'a str,
    figure: &'a str,
    target: f64,
    sites: &'a [String],
    rules: Vec<RuleJson>,
    chosen: Option<String>,
    evaluations: usize,
    cautions: &'a [&'a str],
}

/// The joint tuning as JSON.
///
/// # Errors
/// Serialisation errors (none expected).
pub fn confirmation_json(
    result: &TimedTuneResult,
    request: &TuneRequest,
    file: &str,
) -> Result<String, ReportError> {
    let j = ConfirmationJson {
        tool_version: TOOL_VERSION,
        input_file: file,
        figure: request.figure.key(),
        target: request.target,
        sites: &request.sites,
        rules: result
            .rules
            .iter()
            .map(|r| RuleJson {
                label: rule_label(&r.rule),
                scale: r.scale,
                coverage: r.coverage,
                false_alarms_per_hour: r.false_alarms_per_hour,
                at_range_end: r.at_range_end,
            })
            .collect(),
        chosen: result
            .chosen
            .and_then(|i| result.rules.get(i))
            .map(|r| rule_label(&r.rule)),
        evaluations: result.evaluations,
        cautions: &CAUTIONS,
    };
    let mut text = serde_json::to_string_pretty(&j)?;
    text.push('\n');
    Ok(text)
}

/// The trade of the joint tuning: each rule that meets the target as a point, its widest
/// band against its false alarms per hour.
///
/// # Errors
/// The plot module's errors (e.g. no rule meets the target).
pub fn confirmation_svg(result: &TimedTuneResult) -> Result<String, PlotError> {
    let series = result
        .rules
        .iter()
        .filter(|r| r.false_alarms_per_hour.value > r.false_alarms_per_hour.error)
        .filter_map(|r| {
            r.scale.map(|s| Series {
                label: rule_label(&r.rule),
                points: vec![(s, r.false_alarms_per_hour.value)],
            })
        })
        .collect();
    let chart = Chart {
        title: "Threshold and confirmation: widest band meeting the target, and its false alarms"
            .into(),
        x_label: "band scale on the file's bands [-]".into(),
        y_label: "false alarms per hour [1/h]".into(),
        x_scale: Scale::Linear,
        y_scale: Scale::Log,
        series,
        reference_lines: Vec::new(),
        markers: result
            .chosen
            .and_then(|i| result.rules.get(i))
            .and_then(|r| {
                r.scale.map(|s| Marker {
                    x: s,
                    y: r.false_alarms_per_hour.value,
                    label: format!("chosen: {}", rule_label(&r.rule)),
                })
            })
            .into_iter()
            .collect(),
        caption: plot_caption(),
    };
    render_svg(&chart, PLOT_SIZE.0, PLOT_SIZE.1)
}
