//! Output of `concord compare`: the architectures side by side as a table, JSON or CSV.
//!
//! Columns: architecture, channels (those the output uses; the JSON and CSV give
//! `output_channels` and `channels`, every channel of the file), checks, the coverage per
//! fault site (a site of the same name in several files shares a column; `-` where a file
//! has no such site), the residual rate, SPFM, LFM, the ASIL whose SPFM and LFM targets are
//! both met, the false-alarm probability and the computation time. The JSON and CSV also carry `cells`, the number of
//! linear cells the evaluation split the functions into (an internal count, not in the table).

use serde::Serialize;

use crate::analysis::compare::{ArchitectureSummary, site_columns};
use crate::analysis::metrics::Asil;

use super::TOOL_VERSION;
use super::cautions::{CAUTIONS, csv_comment_block};
use super::csv::field as csv_field;
use super::error::ReportError;
use super::format::{fit, percent_floor, probability, seconds};

/// The ASIL reached on both single-point and latent fault metrics (the lower of the two).
pub fn asil_reached(row: &ArchitectureSummary) -> Asil {
    row.metrics.asil_spfm.min(row.metrics.asil_lfm)
}

fn coverage_of(row: &ArchitectureSummary, site: &str, all_dangerous: bool) -> Option<f64> {
    row.sites.iter().find(|s| s.name == site).and_then(|s| {
        if all_dangerous {
            Some(s.dc_all_dangerous.value)
        } else {
            s.dc.map(|d| d.value)
        }
    })
}

/// Lays out rows of cells in columns (first column left-aligned, the others right-aligned)
/// with a rule under the header.
fn columns(head: &[String], body: &[Vec<String>]) -> String {
    let widths: Vec<usize> = (0..head.len())
        .map(|c| {
            std::iter::once(head)
                .chain(body.iter().map(Vec::as_slice))
                .map(|l| l.get(c).map_or(0, |s| s.chars().count()))
                .max()
                .unwrap_or(0)
        })
        .collect();
    let render = |line: &[String]| -> String {
        line.iter()
            .enumerate()
            .map(|(i, cell)| {
                let w = widths.get(i).copied().unwrap_or(0);
                if i <= 1 {
                    format!("{cell:<w$}")
                } else {
                    format!("{cell:>w$}")
                }
            })
            .collect::<Vec<_>>()
            .join("  ")
            .trim_end()
            .to_string()
    };
    let mut out = render(head);
    out.push('\n');
    out.push_str(&"-".repeat(widths.iter().sum::<usize>() + 2 * widths.len().saturating_sub(1)));
    out.push('\n');
    for l in body {
        out.push_str(&render(l));
        out.push('\n');
    }
    out
}

/// The tables for a terminal: one line per architecture with the metrics and the computation
/// time, then the coverage of every fault site (a row per site name, a column per
/// architecture, `-` where the architecture has no such site).
pub fn table(rows: &[ArchitectureSummary], all_dangerous: bool) -> String {
    let sites = site_columns(rows);
    let figure = if all_dangerous {
        "dc_all_dangerous"
    } else {
        "dc"
    };
    let head: Vec<String> = [
        "#",
        "architecture",
        "channels",
        "checks",
        "lowest %",
        "residual FIT",
        "SPFM %",
        "LFM %",
        "ASIL",
        "false alarm",
        "time s",
    ]
    .map(String::from)
    .to_vec();
    let body: Vec<Vec<String>> = rows
        .iter()
        .enumerate()
        .map(|(i, r)| {
            vec![
                (i + 1).to_string(),
                r.name.clone(),
                r.output_channels.to_string(),
                r.checks.to_string(),
                r.lowest_coverage(all_dangerous)
                    .map_or("-".into(), |e| percent_floor(e.value)),
                fit(r.metrics.residual_fit.value),
                percent_floor(r.metrics.spfm.value),
                percent_floor(r.metrics.lfm.value),
                asil_reached(r).label().to_string(),
                probability(r.false_alarm.value),
                format!("{:.3}", r.seconds),
            ]
        })
        .collect();
    let mut out = String::from("Architectures compared\n\n");
    out.push_str(&columns(&head, &body));
    let mut head: Vec<String> = vec!["fault site".into(), String::new()];
    head.extend((1..=rows.len()).map(|i| format!("#{i}")));
    let body: Vec<Vec<String>> = sites
        .iter()
        .map(|s| {
            let mut line = vec![s.clone(), String::new()];
            line.extend(
                rows.iter()
                    .map(|r| coverage_of(r, s, all_dangerous).map_or("-".into(), percent_floor)),
            );
            line
        })
        .collect();
    out.push_str(&format!(
        "\nWorst-case {figure} per fault site, % (truncated to 0.01; a site of the same name \
         shares a row)\n\n"
    ));
    out.push_str(&columns(&head, &body));
    if rows.iter().any(|r| r.timed.is_some()) {
        let head: Vec<String> = [
            "#",
            "deadline",
            "samples",
            "lowest DC in time %",
            "residual FIT",
            "SPFM %",
            "false alarms / h",
        ]
        .map(String::from)
        .to_vec();
        let body: Vec<Vec<String>> = rows
            .iter()
            .enumerate()
            .map(|(i, r)| match &r.timed {
                Some(t) => vec![
                    format!("#{}", i + 1),
                    seconds(t.deadline),
                    t.samples.to_string(),
                    t.lowest_dc.map_or("-".into(), |e| percent_floor(e.value)),
                    fit(t.metrics.residual_fit.value),
                    percent_floor(t.metrics.spfm.value),
                    probability(t.false_alarms_per_hour.value),
                ],
                None => vec![
                    format!("#{}", i + 1),
                    "one sample".into(),
                    "1".into(),
                    "-".into(),
                    "-".into(),
                    "-".into(),
                    "-".into(),
                ],
            })
            .collect();
        out.push_str(
            "\nOver time (files with a [timing] section: coverage of faults confirmed by the \
             deadline, false alarms per hour of operation)\n\n",
        );
        out.push_str(&columns(&head, &body));
    }
    let head: Vec<String> = [
        "#",
        "after a detection",
        "continues %",
        "shutdown %",
        "fault stays %",
        "residual %",
    ]
    .map(String::from)
    .to_vec();
    let body: Vec<Vec<String>> = rows
        .iter()
        .enumerate()
        .map(|(i, r)| {
            let e = &r.end_states;
            vec![
                format!("#{}", i + 1),
                match r.isolation_rule {
                    Some(rule) => format!("drop by {rule}"),
                    None => "shut down".to_string(),
                },
                percent_floor(e.continues.value),
                percent_floor(e.shutdown.value),
                percent_floor(e.fault_stays.value),
                percent_floor(e.residual.value),
            ]
        })
        .collect();
    out.push_str(
        "\nAfter a single fault (FIT-weighted shares: the function goes on with a correct output, \
         shuts down, goes on with the fault still in the vote, or is dangerous and undetected)\n\n",
    );
    out.push_str(&columns(&head, &body));
    out.push_str(
        "\nchannels: the channels the output uses (the measuring hardware; a channel only a \
         check reads, such as a model estimate, is not counted); lowest: the lowest coverage \
         over the sites; ASIL: the highest level whose SPFM and LFM targets are both met, each \
         judged on its value minus its error bound (targets of ISO 26262-5:2018 Tables 4 and 5, \
         recalled, not checked against the published text); false alarm: the probability that \
         a check fires without a fault; time s: computation time of the analysis in seconds.\n\n",
    );
    for c in CAUTIONS {
        out.push_str(&format!("- {c}\n"));
    }
    out
}

#[derive(Serialize)]
struct CompareJson<'a> {
    tool_version: &'a str,
    coverage_figure: &'a str,
    site_columns: Vec<String>,
    architectures: Vec<ArchitectureJson<'a>>,
    cautions: &'a [&'a str],
}

#[derive(Serialize)]
struct ArchitectureJson<'a> {
    #[serde(flatten)]
    summary: &'a ArchitectureSummary,
    asil_reached: Asil,
}

/// The comparison as one JSON object (every figure with its error bound).
///
/// # Errors
/// Serialisation errors (none expected).
pub fn json(rows: &[ArchitectureSummary], all_dangerous: bool) -> Result<String, ReportError> {
    let j = CompareJson {
        tool_version: TOOL_VERSION,
        coverage_figure: if all_dangerous {
            "dc_all_dangerous"
        } else {
            "dc"
        },
        site_columns: site_columns(rows),
        architectures: rows
            .iter()
            .map(|r| ArchitectureJson {
                summary: r,
                asil_reached: asil_reached(r),
            })
            .collect(),
        cautions: &CAUTIONS,
    };
    let mut text = serde_json::to_string_pretty(&j)?;
    text.push('\n');
    Ok(text)
}

/// The comparison as CSV, one row per architecture, after the comment block of the cautions.
pub fn csv(rows: &[ArchitectureSummary], all_dangerous: bool) -> String {
    let sites = site_columns(rows);
    let mut head: Vec<String> = vec!["architecture".into(), "file".into(), "channels".into()];
    head.push("output_channels".into());
    head.push("checks".into());
    head.extend(sites.iter().map(|s| csv_field(s)));
    for k in [
        "residual_fit",
        "residual_fit_error",
        "spfm",
        "spfm_error",
        "lfm",
        "lfm_error",
        "asil_reached",
        "false_alarm",
        "false_alarm_error",
        "cells",
        "seconds",
    ] {
        head.push(k.into());
    }
    let timed = rows.iter().any(|r| r.timed.is_some());
    if timed {
        for k in [
            "deadline",
            "samples",
            "timed_lowest_dc",
            "timed_residual_fit",
            "timed_residual_fit_error",
            "timed_spfm",
            "false_alarms_per_hour",
            "false_alarms_per_hour_error",
        ] {
            head.push(k.into());
        }
    }
    for k in [
        "isolation_rule",
        "continues",
        "shutdown",
        "fault_stays",
        "residual_share",
    ] {
        head.push(k.into());
    }
    let mut out = csv_comment_block();
    out.push_str(&head.join(","));
    out.push('\n');
    for r in rows {
        let mut line = vec![
            csv_field(&r.name),
            csv_field(&r.path),
            r.channels.to_string(),
            r.output_channels.to_string(),
            r.checks.to_string(),
        ];
        for s in &sites {
            line.push(coverage_of(r, s, all_dangerous).map_or(String::new(), |v| format!("{v:e}")));
        }
        for e in [r.metrics.residual_fit, r.metrics.spfm, r.metrics.lfm] {
            line.push(format!("{:e}", e.value));
            line.push(format!("{:e}", e.error));
        }
        line.push(csv_field(asil_reached(r).label()));
        line.push(format!("{:e}", r.false_alarm.value));
        line.push(format!("{:e}", r.false_alarm.error));
        line.push(r.cells.to_string());
        line.push(format!("{:e}", r.seconds));
        if timed {
            match &r.timed {
                Some(t) => {
                    line.push(format!("{:e}", t.deadline));
                    line.push(t.samples.to_string());
                    line.push(
                        t.lowest_dc
                            .map_or(String::new(), |e| format!("{:e}", e.value)),
                    );
                    line.push(format!("{:e}", t.metrics.residual_fit.value));
                    line.push(format!("{:e}", t.metrics.residual_fit.error));
                    line.push(format!("{:e}", t.metrics.spfm.value));
                    line.push(format!("{:e}", t.false_alarms_per_hour.value));
                    line.push(format!("{:e}", t.false_alarms_per_hour.error));
                }
                None => line.extend(std::iter::repeat_n(String::new(), 8)),
            }
        }
        line.push(r.isolation_rule.unwrap_or("").to_string());
        let e = &r.end_states;
        for v in [e.continues, e.shutdown, e.fault_stays, e.residual] {
            line.push(format!("{:e}", v.value));
        }
        out.push_str(&line.join(","));
        out.push('\n');
    }
    out
}
