//! Output of `concord sweep`: rows written as they arrive (CSV or JSON), and the spread curve
//! of one fault site.
//!
//! Every CSV file opens with a comment block (lines starting with `#`: the tool version and
//! the cautions; tell a CSV reader that `#` starts a comment), every JSON object carries
//! `cautions`, and every picture a caption with the cautions in short.
//!
//! CSV columns of a parameter sweep: the swept key, the series key (when there is one),
//! `false_alarm`, `residual_fit`, `spfm`, `lfm` (each followed by `_error`, its bound),
//! `asil_spfm`, `asil_lfm`, then per fault site `SITE.dc`, `SITE.dc_error`,
//! `SITE.dc_all_dangerous`, `SITE.p_vu`, `SITE.p_vu_error`, `SITE.worst_sigma`; for a file
//! with an `[isolation]` section then `continues`, `shutdown`, `fault_stays` and per fault
//! site `SITE.isolated`, `SITE.wrong_channel`, `SITE.none_blamed` (each followed by
//! `_error`; see [`isolation_columns`]).
//!
//! JSON of a parameter sweep: one object `{"tool_version", "file", "input_sha256", "vary",
//! "series", "sites", "cautions", "rows": [...]}` whose rows are written one per line as they
//! arrive, so that a sweep of any length is never held in memory. A row of a file with an
//! `[isolation]` section carries `isolation`: `end_states` (`continues`, `shutdown`,
//! `fault_stays`, `residual`) and `sites` (`name`, `isolated`, `wrong_channel`,
//! `none_blamed`, each figure a `{"value", "error"}` pair, and `sigma`: for an unknown
//! spread, the sigma the isolation figures are taken at, where `wrong_channel` is largest;
//! the CSV leaves it out).

use std::io::{self, Write};

use serde::Serialize;

use crate::analysis::sweep::{IsolationSummary, SpreadCurve, SweepPlan, SweepRow};
use crate::prob::Estimate;

use super::cautions::{CAUTIONS, csv_comment_block, plot_caption};
use super::csv::field as csv_field;
use super::error::ReportError;
use super::plot::{Chart, Marker, PlotError, ReferenceLine, Scale, Series, render_svg};
use super::{TOOL_VERSION, input_sha256};

fn opt(v: Option<f64>) -> String {
    v.map_or(String::new(), |x| format!("{x:e}"))
}

fn est(e: Estimate) -> String {
    format!("{:e},{:e}", e.value, e.error)
}

/// The isolation columns of a sweep of a file with an `[isolation]` section, each followed
/// by its bound: the end states `continues`, `shutdown`, `fault_stays`, then per fault site
/// `SITE.isolated`, `SITE.wrong_channel`, `SITE.none_blamed` (in the order of
/// [`isolation_cells`]).
pub fn isolation_columns(sites: &[String]) -> Vec<String> {
    let figures = ["continues", "shutdown", "fault_stays"]
        .map(String::from)
        .into_iter()
        .chain(sites.iter().flat_map(|s| {
            ["isolated", "wrong_channel", "none_blamed"].map(|k| format!("{s}.{k}"))
        }));
    figures
        .flat_map(|name| {
            let error = format!("{name}_error");
            [name, error]
        })
        .collect()
}

/// The figures of [`isolation_columns`], one per pair of columns (value, bound).
pub fn isolation_cells(isolation: &IsolationSummary) -> Vec<Estimate> {
    let e = &isolation.end_states;
    let mut cells = vec![e.continues, e.shutdown, e.fault_stays];
    for s in &isolation.sites {
        cells.extend([s.isolated, s.wrong_channel, s.none_blamed]);
    }
    cells
}

/// Output formats of a sweep.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SweepFormat {
    /// One CSV row per point.
    Csv,
    /// One JSON object with one row per line.
    Json,
}

/// Writes the rows of a parameter sweep as they come.
pub struct SweepWriter<W: Write> {
    out: W,
    format: SweepFormat,
    rows_written: usize,
}

#[derive(Serialize)]
struct SweepHead<'a> {
    tool_version: &'a str,
    file: &'a str,
    input_sha256: String,
    vary: &'a str,
    series: Option<&'a str>,
    sites: &'a [String],
    cautions: &'a [&'a str],
}

impl<W: Write> SweepWriter<W> {
    /// Starts the output: the CSV header or the opening of the JSON object.
    ///
    /// # Errors
    /// Write errors of `out`.
    pub fn start(
        mut out: W,
        format: SweepFormat,
        plan: &SweepPlan,
        sites: &[String],
        isolation: bool,
        file: &str,
        text: &str,
    ) -> io::Result<Self> {
        match format {
            SweepFormat::Csv => {
                write!(out, "{}", csv_comment_block())?;
                let mut head = vec![csv_field(&plan.vary.key)];
                if let Some(s) = &plan.series {
                    head.push(csv_field(&s.key));
                }
                for k in ["false_alarm", "residual_fit", "spfm", "lfm"] {
                    head.push(k.to_string());
                    head.push(format!("{k}_error"));
                }
                head.push("asil_spfm".into());
                head.push("asil_lfm".into());
                for s in sites {
                    for k in [
                        "dc",
                        "dc_error",
                        "dc_all_dangerous",
                        "p_vu",
                        "p_vu_error",
                        "worst_sigma",
                    ] {
                        head.push(csv_field(&format!("{s}.{k}")));
                    }
                }
                if isolation {
                    head.extend(isolation_columns(sites).iter().map(|c| csv_field(c)));
                }
                writeln!(out, "{}", head.join(","))?;
            }
            SweepFormat::Json => {
                let headline = SweepHead {
                    tool_version: TOOL_VERSION,
                    file,
                    input_sha256: input_sha256(text),
                    vary: &plan.vary.key,
                    series: plan.series.as_ref().map(|s| s.key.as_str()),
                    sites,
                    cautions: &CAUTIONS,
                };
                let text = serde_json::to_string(&headline).map_err(io::Error::other)?;
                // Reopen the object to append the rows.
                let open = text.strip_suffix('}').unwrap_or(&text);
                writeln!(out, "{open},\"rows\":[")?;
            }
        }
        Ok(Self {
            out,
            format,
            rows_written: 0,
        })
    }

    /// Writes one row.
    ///
    /// # Errors
    /// Write errors of the output.
    pub fn row(&mut self, row: &SweepRow) -> io::Result<()> {
        match self.format {
            SweepFormat::Csv => {
                let mut cells = vec![format!("{:e}", row.x)];
                if let Some(s) = row.series {
                    cells.push(format!("{s:e}"));
                }
                for e in [row.false_alarm, row.residual_fit, row.spfm, row.lfm] {
                    cells.push(est(e));
                }
                cells.push(csv_field(row.asil_spfm.label()));
                cells.push(csv_field(row.asil_lfm.label()));
                for s in &row.sites {
                    cells.push(opt(s.dc.map(|d| d.value)));
                    cells.push(opt(s.dc.map(|d| d.error)));
                    cells.push(format!("{:e}", s.dc_all_dangerous.value));
                    cells.push(est(s.p_vu));
                    cells.push(opt(s.worst_sigma));
                }
                if let Some(isolation) = &row.isolation {
                    cells.extend(isolation_cells(isolation).iter().map(|e| est(*e)));
                }
                writeln!(self.out, "{}", cells.join(","))?;
            }
            SweepFormat::Json => {
                let text = serde_json::to_string(row).map_err(io::Error::other)?;
                if self.rows_written > 0 {
                    writeln!(self.out, ",")?;
                }
                write!(self.out, "{text}")?;
            }
        }
        self.rows_written += 1;
        Ok(())
    }

    /// Closes the output and hands back the writer.
    ///
    /// # Errors
    /// Write errors of the output.
    pub fn finish(mut self) -> io::Result<W> {
        if self.format == SweepFormat::Json {
            writeln!(self.out, "\n]}}")?;
        }
        self.out.flush()?;
        Ok(self.out)
    }
}

/// One point of a spread curve in JSON.
#[derive(Debug, Clone, PartialEq, Serialize)]
struct SpreadRowJson {
    sigma: f64,
    dc: Option<Estimate>,
    dc_all_dangerous: Estimate,
    p_vd: Estimate,
    p_vu: Estimate,
    p_sd: Estimate,
    p_sq: Estimate,
}

/// The worst case of a spread curve in JSON.
#[derive(Debug, Clone, PartialEq, Serialize)]
struct SpreadWorstJson {
    sigma: f64,
    dc: Option<Estimate>,
    dc_all_dangerous: Estimate,
    p_vu: Estimate,
    at_range_end: bool,
}

#[derive(Serialize)]
struct SpreadJson<'a> {
    tool_version: &'a str,
    file: &'a str,
    input_sha256: String,
    site: &'a str,
    amplitude_mean: f64,
    worst: Option<SpreadWorstJson>,
    points: Vec<SpreadRowJson>,
    cautions: &'a [&'a str],
}

/// The CSV columns of a spread curve.
pub const SPREAD_HEADER: &str = "sigma,dc,dc_error,dc_all_dangerous,p_vd,p_vd_error,p_vu,\
p_vu_error,p_sd,p_sd_error,p_sq,p_sq_error";

/// The spread curve as CSV (one row per sigma, in the order computed).
pub fn spread_csv(curve: &SpreadCurve) -> String {
    let mut out = csv_comment_block();
    out.push_str(SPREAD_HEADER);
    out.push('\n');
    for p in &curve.points {
        let o = &p.outcome;
        let dc = o.dc();
        out.push_str(&format!(
            "{:e},{},{},{:e},{},{},{},{}\n",
            p.sigma,
            opt(dc.map(|d| d.value)),
            opt(dc.map(|d| d.error)),
            o.dc_all_dangerous().value,
            est(o.p_vd),
            est(o.p_vu),
            est(o.p_sd),
            est(o.p_sq)
        ));
    }
    out
}

/// The spread curve as one JSON object, with the worst case over the swept range.
///
/// # Errors
/// Serialisation errors (none expected for finite numbers).
pub fn spread_json(curve: &SpreadCurve, file: &str, text: &str) -> Result<String, ReportError> {
    let worst = curve.worst.as_ref().and_then(|site| {
        site.worst.as_ref().map(|w| SpreadWorstJson {
            sigma: w.sigma,
            dc: site.outcome.dc(),
            dc_all_dangerous: site.outcome.dc_all_dangerous(),
            p_vu: site.outcome.p_vu,
            at_range_end: w.local_maxima.first().is_some_and(|m| m.at_range_end),
        })
    });
    let json = SpreadJson {
        tool_version: TOOL_VERSION,
        file,
        input_sha256: input_sha256(text),
        site: &curve.site,
        amplitude_mean: curve.mean,
        worst,
        points: curve
            .points
            .iter()
            .map(|p| SpreadRowJson {
                sigma: p.sigma,
                dc: p.outcome.dc(),
                dc_all_dangerous: p.outcome.dc_all_dangerous(),
                p_vd: p.outcome.p_vd,
                p_vu: p.outcome.p_vu,
                p_sd: p.outcome.p_sd,
                p_sq: p.outcome.p_sq,
            })
            .collect(),
        cautions: &CAUTIONS,
    };
    let mut text = serde_json::to_string_pretty(&json)?;
    text.push('\n');
    Ok(text)
}

/// One line for the terminal naming the worst case of a spread curve.
pub fn spread_summary(curve: &SpreadCurve, unit: &str) -> String {
    match curve
        .worst
        .as_ref()
        .and_then(|s| s.worst.as_ref().map(|w| (s, w)))
    {
        Some((site, w)) => format!(
            "worst case of '{}' over the swept spread: sigma = {:.6} {unit}, residual p_vu = {:.6e} \
             (bound {:.1e}), dc_all_dangerous = {:.6}{}",
            curve.site,
            w.sigma,
            site.outcome.p_vu.value,
            site.outcome.p_vu.error,
            site.outcome.dc_all_dangerous().value,
            if w.local_maxima.first().is_some_and(|m| m.at_range_end) {
                " (at an end of the range: widen it)"
            } else {
                ""
            }
        ),
        None => format!("'{}': one sigma only, no worst case searched", curve.site),
    }
}

/// The low, medium and high diagnostic-coverage levels of ISO 26262-5:2018 Annex D (60, 90
/// and 99 %, recalled, not checked against the published text), drawn as reference lines on every coverage plot.
pub fn dc_levels() -> Vec<ReferenceLine> {
    [
        (60.0, "low DC 60 %"),
        (90.0, "medium DC 90 %"),
        (99.0, "high DC 99 %"),
    ]
    .into_iter()
    .map(|(y, label)| ReferenceLine {
        y,
        label: label.to_string(),
    })
    .collect()
}

/// Width and height of the plots, in SVG pixels.
pub const PLOT_SIZE: (u32, u32) = (900, 560);

/// The points of a parameter sweep kept for its picture: the worst-case `dc` (in percent)
/// of every site (without series) or of one site per series value. Only two numbers per
/// point and line are kept, so a long sweep still streams its rows.
pub struct SweepPicture {
    key: String,
    series_key: Option<String>,
    /// The one site shown, or every site.
    site: Option<usize>,
    /// Points per series (the length of the swept axis).
    vary_len: usize,
    lines: Vec<Series>,
}

impl SweepPicture {
    /// An empty picture for `plan`; `site` picks the site shown (it must exist).
    ///
    /// # Errors
    /// [`ReportError::UnknownSite`] when `site` is not one of `sites`.
    pub fn new(
        plan: &SweepPlan,
        sites: &[String],
        site: Option<&str>,
    ) -> Result<Self, ReportError> {
        let site = match site {
            Some(name) => Some(sites.iter().position(|s| s == name).ok_or_else(|| {
                ReportError::UnknownSite {
                    site: name.to_string(),
                    sites: sites.to_vec(),
                }
            })?),
            None if plan.series.is_some() => Some(0),
            None => None,
        };
        let name = |i: usize| sites.get(i).cloned().unwrap_or_default();
        let lines = match (&plan.series, site) {
            (Some(axis), Some(i)) => axis
                .values
                .iter()
                .map(|v| Series {
                    label: format!(
                        "{} at {} = {}",
                        name(i),
                        axis.key,
                        super::format::number(*v)
                    ),
                    points: Vec::new(),
                })
                .collect(),
            (None, Some(i)) => vec![Series {
                label: name(i),
                points: Vec::new(),
            }],
            _ => sites
                .iter()
                .map(|s| Series {
                    label: s.clone(),
                    points: Vec::new(),
                })
                .collect(),
        };
        Ok(Self {
            key: plan.vary.key.clone(),
            series_key: plan.series.as_ref().map(|s| s.key.clone()),
            site,
            vary_len: plan.vary.values.len().max(1),
            lines,
        })
    }

    /// Adds the points of one row (a site without dangerous outcomes has no `dc`: no point).
    pub fn add(&mut self, row: &SweepRow) {
        match self.site {
            Some(i) => {
                let line = if self.series_key.is_some() {
                    row.index / self.vary_len
                } else {
                    0
                };
                if let (Some(dc), Some(series)) = (
                    row.sites.get(i).and_then(|s| s.dc),
                    self.lines.get_mut(line),
                ) {
                    series.points.push((row.x, 100.0 * dc.value));
                }
            }
            None => {
                for (site, series) in row.sites.iter().zip(self.lines.iter_mut()) {
                    if let Some(dc) = site.dc {
                        series.points.push((row.x, 100.0 * dc.value));
                    }
                }
            }
        }
    }

    /// The chart: coverage against the swept key, the DC levels, the lowest point marked.
    pub fn chart(&self, unit: &str) -> Chart {
        let lowest = self
            .lines
            .iter()
            .flat_map(|l| l.points.iter().map(move |p| (l, *p)))
            .min_by(|a, b| a.1.1.total_cmp(&b.1.1));
        Chart {
            title: match &self.series_key {
                Some(s) => format!("Worst-case DC against {} for several {s}", self.key),
                None => format!("Worst-case DC of each fault site against {}", self.key),
            },
            x_label: format!("{} [{}]", self.key, unit_of_key(&self.key, unit)),
            y_label: "worst-case DC = p_vd / (p_vd + p_vu) [%]".into(),
            x_scale: Scale::Linear,
            y_scale: Scale::Linear,
            series: self.lines.clone(),
            reference_lines: dc_levels(),
            markers: lowest
                .map(|(line, (x, y))| Marker {
                    x,
                    y,
                    label: format!(
                        "lowest: {} % ({}, {} = {})",
                        super::format::percent_floor(y / 100.0),
                        line.label,
                        self.key,
                        super::format::number(x)
                    ),
                })
                .into_iter()
                .collect(),
            caption: plot_caption(),
        }
    }

    /// The picture as SVG.
    ///
    /// # Errors
    /// The plot module's errors (e.g. no point to draw).
    pub fn svg(&self, unit: &str) -> Result<String, PlotError> {
        render_svg(&self.chart(unit), PLOT_SIZE.0, PLOT_SIZE.1)
    }
}

/// The end states of a single fault against the swept key, for a file with an `[isolation]`
/// section: one line per end state (continues, shutdown, fault stays in the vote, residual)
/// as FIT-weighted shares in percent, on a log axis (a share of zero is not drawn). With
/// series, the first series value only (the title says which).
#[derive(Debug, Clone, PartialEq)]
pub struct IsolationPicture {
    key: String,
    /// The series value drawn, when the plan has series.
    series: Option<(String, f64)>,
    /// Points per series (the length of the swept axis).
    vary_len: usize,
    lines: Vec<Series>,
}

impl IsolationPicture {
    /// An empty picture for `plan`.
    pub fn new(plan: &SweepPlan) -> Self {
        let lines = [
            "continues",
            "shutdown",
            "fault stays in the vote",
            "residual",
        ]
        .map(|label| Series {
            label: label.to_string(),
            points: Vec::new(),
        })
        .to_vec();
        Self {
            key: plan.vary.key.clone(),
            series: plan
                .series
                .as_ref()
                .and_then(|s| s.values.first().map(|v| (s.key.clone(), *v))),
            vary_len: plan.vary.values.len().max(1),
            lines,
        }
    }

    /// Adds the points of one row (rows of later series and rows without isolation figures
    /// add nothing).
    pub fn add(&mut self, row: &SweepRow) {
        if self.series.is_some() && row.index >= self.vary_len {
            return;
        }
        let Some(isolation) = &row.isolation else {
            return;
        };
        let e = &isolation.end_states;
        for (series, share) in
            self.lines
                .iter_mut()
                .zip([e.continues, e.shutdown, e.fault_stays, e.residual])
        {
            if share.value > 0.0 {
                series.points.push((row.x, 100.0 * share.value));
            }
        }
    }

    /// The chart: the four end states against the swept key.
    pub fn chart(&self, unit: &str) -> Chart {
        let at = match &self.series {
            Some((key, value)) => format!(" at {key} = {}", super::format::number(*value)),
            None => String::new(),
        };
        Chart {
            title: format!(
                "How a single fault ends (FIT-weighted) against {}{at}",
                self.key
            ),
            x_label: format!("{} [{}]", self.key, unit_of_key(&self.key, unit)),
            y_label: "share of single faults [%]".into(),
            x_scale: Scale::Linear,
            y_scale: Scale::Log,
            series: self.lines.clone(),
            reference_lines: Vec::new(),
            markers: Vec::new(),
            caption: plot_caption(),
        }
    }

    /// The picture as SVG.
    ///
    /// # Errors
    /// The plot module's errors (e.g. no point to draw).
    pub fn svg(&self, unit: &str) -> Result<String, PlotError> {
        render_svg(&self.chart(unit), PLOT_SIZE.0, PLOT_SIZE.1)
    }
}

/// The unit of a swept key: the file's unit for limits, sigmas, means and amplitudes; none
/// for correlations, FIT rates, coverages and weights.
pub fn unit_of_key(key: &str, unit: &str) -> String {
    let last = key.rsplit(['.', ']']).next().unwrap_or(key);
    match last {
        "rho" | "latent_coverage" | "at_least" => "-".to_string(),
        "fit" => "FIT".to_string(),
        _ => unit.to_string(),
    }
}

/// The spread curve as a chart: both coverage figures against sigma (log), the DC levels and
/// the worst case marked.
pub fn spread_chart(curve: &SpreadCurve, unit: &str) -> Chart {
    let dc: Vec<(f64, f64)> = curve
        .points
        .iter()
        .filter_map(|p| p.outcome.dc().map(|d| (p.sigma, 100.0 * d.value)))
        .collect();
    let all: Vec<(f64, f64)> = curve
        .points
        .iter()
        .map(|p| (p.sigma, 100.0 * p.outcome.dc_all_dangerous().value))
        .collect();
    let markers = curve
        .worst
        .as_ref()
        .and_then(|site| {
            site.worst.as_ref().map(|w| Marker {
                x: w.sigma,
                y: 100.0 * site.outcome.dc_all_dangerous().value,
                label: format!(
                    "worst case: sigma {} {unit}, residual {}",
                    super::format::number(w.sigma),
                    super::format::probability(site.outcome.p_vu.value)
                ),
            })
        })
        .into_iter()
        .collect();
    Chart {
        title: format!("Coverage of fault site '{}' against its spread", curve.site),
        x_label: format!("sigma of the fault amplitude [{unit}]"),
        y_label: "coverage [%]".into(),
        x_scale: Scale::Log,
        y_scale: Scale::Linear,
        series: vec![
            Series {
                label: "dc = p_vd / (p_vd + p_vu)".into(),
                points: dc,
            },
            Series {
                label: "dc_all_dangerous = 1 - p_vu".into(),
                points: all,
            },
        ],
        reference_lines: dc_levels(),
        markers,
        caption: plot_caption(),
    }
}

/// The spread curve as SVG.
///
/// # Errors
/// The plot module's errors.
pub fn spread_svg(curve: &SpreadCurve, unit: &str) -> Result<String, PlotError> {
    render_svg(&spread_chart(curve, unit), PLOT_SIZE.0, PLOT_SIZE.1)
}
