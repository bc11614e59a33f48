//! Line charts as SVG text, for the HTML report and for sweep and tuning plots.
//!
//! A [`Chart`] holds named series of `(x, y)` points, horizontal reference lines (e.g. the
//! DC levels 60 / 90 / 99 %) and labelled markers (e.g. the worst case); [`render_svg`]
//! draws it with the `plotters` crate into one `<svg>` element that can be written to a
//! file or inlined in HTML.
//!
//! The look is concord's own: a left-aligned title, a light grid, the legend in a strip
//! below the plot. Colour is never the only cue: every series has its own dash pattern and
//! point shape as well as its own colour, so the chart reads in black and white.
//!
//! Data that cannot be drawn are skipped, never a panic: non-finite coordinates, and on a
//! logarithmic axis values that are zero or negative. A chart with no drawable point in any
//! series is an error ([`PlotError::NoData`]).

use plotters::coord::Shift;
use plotters::coord::ranged1d::{Ranged, ValueFormatter};
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::format::{TICK, format_number, wrap};

/// One named line of points.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// The name shown in the legend.
    pub label: String,
    /// The points `(x, y)`, drawn in the given order.
    pub points: Vec<(f64, f64)>,
}

/// A horizontal line across the plot at `y`, labelled at its right end.
#[derive(Debug, Clone, PartialEq)]
pub struct ReferenceLine {
    /// Where the line is drawn, in the unit of the y axis.
    pub y: f64,
    /// The text beside the line, e.g. `DC 90 %`.
    pub label: String,
}

/// One marked point with a label beside it.
#[derive(Debug, Clone, PartialEq)]
pub struct Marker {
    /// Position on the x axis.
    pub x: f64,
    /// Position on the y axis.
    pub y: f64,
    /// The text beside the mark, e.g. `worst case`.
    pub label: String,
}

/// How an axis maps values to positions.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scale {
    /// Equal steps for equal differences.
    Linear,
    /// Equal steps for equal ratios (base 10); values `<= 0` are skipped.
    Log,
}

/// A line chart.
#[derive(Debug, Clone, PartialEq)]
pub struct Chart {
    /// The title above the plot.
    pub title: String,
    /// The x-axis title, with its unit, e.g. `fault spread sigma [mV]`.
    pub x_label: String,
    /// The y-axis title, with its unit.
    pub y_label: String,
    /// Scale of the x axis.
    pub x_scale: Scale,
    /// Scale of the y axis.
    pub y_scale: Scale,
    /// The lines, each with its own colour, dash pattern and point shape.
    pub series: Vec<Series>,
    /// Horizontal reference levels, e.g. DC 60 / 90 / 99 %.
    pub reference_lines: Vec<ReferenceLine>,
    /// Marked points, e.g. the worst case.
    pub markers: Vec<Marker>,
    /// Paragraphs of small text under the legend, e.g. the cautions (wrapped to the width;
    /// empty for none).
    pub caption: Vec<String>,
}

/// Why a chart could not be drawn.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PlotError {
    /// No series holds a point that can be drawn on the chosen scales.
    #[error(
        "chart '{title}': no series has a point that can be drawn (points must be finite, and \
         positive on a logarithmic axis); give at least one such point or use a linear scale"
    )]
    NoData {
        /// The chart's title.
        title: String,
    },
    /// The requested size is too small or too large to draw on.
    #[error(
        "chart '{title}': size {width} x {height} px cannot be drawn; use a width of \
         {MIN_WIDTH} to {MAX_SIDE} px and a height of {MIN_HEIGHT} to {MAX_SIDE} px"
    )]
    Size {
        /// The chart's title.
        title: String,
        /// Requested width in pixels.
        width: u32,
        /// Requested height in pixels.
        height: u32,
    },
    /// The data span a range that cannot be mapped to the plot (e.g. overflow).
    #[error("chart '{title}': the {axis} axis spans no usable range ({detail}); check the data")]
    Range {
        /// The chart's title.
        title: String,
        /// `x` or `y`.
        axis: &'static str,
        /// What went wrong.
        detail: String,
    },
    /// The drawing library reported an error.
    #[error("chart '{title}': drawing failed: {detail}")]
    Draw {
        /// The chart's title.
        title: String,
        /// The library's message.
        detail: String,
    },
}

/// Smallest width that leaves room for the axes and the plot.
pub const MIN_WIDTH: u32 = 240;
/// Smallest height that leaves room for the title, the plot and a legend row.
pub const MIN_HEIGHT: u32 = 180;
/// Largest width or height accepted.
pub const MAX_SIDE: u32 = 8000;

/// Widest logarithmic axis, in decades (wider ones are unreadable and slow to tick).
pub const MAX_DECADES: f64 = 120.0;

/// Series colours (our own palette, dark enough to print, distinct in hue and lightness).
const PALETTE: [RGBColor; 6] = [
    RGBColor(0x1d, 0x4e, 0x89), // deep blue
    RGBColor(0xc0, 0x5a, 0x0c), // burnt orange
    RGBColor(0x2f, 0x7d, 0x4a), // moss green
    RGBColor(0x7b, 0x3f, 0x98), // plum
    RGBColor(0x8c, 0x6a, 0x12), // ochre
    RGBColor(0x3c, 0x3c, 0x3c), // graphite
];

/// Dash patterns `(dash, gap)` in pixels; `None` is a solid line.
const DASHES: [Option<(u32, u32)>; 4] = [None, Some((9, 5)), Some((3, 3)), Some((14, 4))];

/// Point shapes, cycled through per series.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Glyph {
    Circle,
    Triangle,
    Square,
    Cross,
    Diamond,
}

const GLYPHS: [Glyph; 5] = [
    Glyph::Circle,
    Glyph::Triangle,
    Glyph::Square,
    Glyph::Cross,
    Glyph::Diamond,
];

/// At most this many point shapes are drawn along one series (evenly thinned beyond it).
const MAX_GLYPHS_PER_SERIES: usize = 24;

const FONT: &str = "sans-serif";
const INK: RGBColor = RGBColor(0x22, 0x22, 0x22);
const REFERENCE_INK: RGBColor = RGBColor(0x6b, 0x6b, 0x6b);
const GRID: RGBColor = RGBColor(0xdd, 0xdd, 0xdd);
const LEGEND_ROW: u32 = 18;
/// Height of one caption line, and the average width of a caption character (font size 13,
/// which plotters writes as about 10.5 px), both in pixels.
const CAPTION_ROW: u32 = 14;
const CAPTION_CHAR: u32 = 6;
const TITLE_BAND: u32 = 30;

/// The drawable data of a chart after skipping what cannot be drawn.
struct DrawableChart {
    series: Vec<(String, Vec<(f64, f64)>)>,
    reference_lines: Vec<ReferenceLine>,
    markers: Vec<Marker>,
    x: (f64, f64),
    y: (f64, f64),
}

fn usable(value: f64, scale: Scale) -> bool {
    value.is_finite() && (scale == Scale::Linear || value > 0.0)
}

/// Widens `[lo, hi]` by a margin (5 % linear, a quarter decade logarithmic), and a
/// degenerate range to a visible one.
fn padded(
    lo: f64,
    hi: f64,
    scale: Scale,
    title: &str,
    axis: &'static str,
) -> Result<(f64, f64), PlotError> {
    let (a, b) = match scale {
        Scale::Linear => {
            let span = hi - lo;
            if span > 0.0 {
                (lo - 0.05 * span, hi + 0.05 * span)
            } else {
                let half = if lo == 0.0 { 1.0 } else { 0.1 * lo.abs() };
                (lo - half, hi + half)
            }
        }
        Scale::Log => {
            let factor = if hi > lo {
                // In logarithms, so that a range such as 1e-300..1e300 does not overflow.
                (0.05 * (hi.ln() - lo.ln())).exp().max(1.05)
            } else {
                2.0
            };
            (
                (lo / factor).max(lo.min(f64::MIN_POSITIVE)),
                (hi * factor).min(hi.max(f64::MAX)),
            )
        }
    };
    let decades_ok = scale == Scale::Linear || (b.log10() - a.log10()) <= MAX_DECADES;
    let ok = decades_ok
        && a.is_finite()
        && b.is_finite()
        && b > a
        && (b - a).is_finite()
        && (scale == Scale::Linear || a > 0.0);
    if ok {
        Ok((a, b))
    } else {
        Err(PlotError::Range {
            title: title.to_string(),
            axis,
            detail: format!("from {lo:e} to {hi:e}"),
        })
    }
}

fn prepare(chart: &Chart) -> Result<DrawableChart, PlotError> {
    let series: Vec<(String, Vec<(f64, f64)>)> = chart
        .series
        .iter()
        .map(|s| {
            let pts = s
                .points
                .iter()
                .copied()
                .filter(|(x, y)| usable(*x, chart.x_scale) && usable(*y, chart.y_scale))
                .collect();
            (s.label.clone(), pts)
        })
        .collect();
    let markers: Vec<Marker> = chart
        .markers
        .iter()
        .filter(|m| usable(m.x, chart.x_scale) && usable(m.y, chart.y_scale))
        .cloned()
        .collect();
    let reference_lines: Vec<ReferenceLine> = chart
        .reference_lines
        .iter()
        .filter(|r| usable(r.y, chart.y_scale))
        .cloned()
        .collect();
    let xs = series
        .iter()
        .flat_map(|(_, p)| p.iter().map(|(x, _)| *x))
        .chain(markers.iter().map(|m| m.x));
    let ys = series
        .iter()
        .flat_map(|(_, p)| p.iter().map(|(_, y)| *y))
        .chain(markers.iter().map(|m| m.y))
        .chain(reference_lines.iter().map(|r| r.y));
    let (Some(x_lo), Some(x_hi)) = (min(xs.clone()), max(xs)) else {
        return Err(no_data(chart));
    };
    let (Some(y_lo), Some(y_hi)) = (min(ys.clone()), max(ys)) else {
        return Err(no_data(chart));
    };
    if series.iter().all(|(_, p)| p.is_empty()) {
        return Err(no_data(chart));
    }
    Ok(DrawableChart {
        x: padded(x_lo, x_hi, chart.x_scale, &chart.title, "x")?,
        y: padded(y_lo, y_hi, chart.y_scale, &chart.title, "y")?,
        series,
        reference_lines,
        markers,
    })
}

fn no_data(chart: &Chart) -> PlotError {
    PlotError::NoData {
        title: chart.title.clone(),
    }
}

fn min(values: impl Iterator<Item = f64>) -> Option<f64> {
    values.reduce(f64::min)
}

fn max(values: impl Iterator<Item = f64>) -> Option<f64> {
    values.reduce(f64::max)
}

/// A tick label: plain decimals between 0.001 and 100 000, else `1e-6` style
/// ([`TICK`]).
pub fn tick_label(value: f64) -> String {
    format_number(value, &TICK)
}

/// Draws `chart` as an SVG document (font sizes in the SVG are those of plotters, which
/// writes a requested size `s` as `s / 1.24` px) `width` x `height` pixels.
///
/// # Errors
/// [`PlotError::Size`] for a size outside [`MIN_WIDTH`]..[`MAX_SIDE`] x
/// [`MIN_HEIGHT`]..[`MAX_SIDE`]; [`PlotError::NoData`] when no series has a drawable point;
/// [`PlotError::Range`] when the data overflow an axis; [`PlotError::Draw`] if the drawing
/// library fails.
pub fn render_svg(chart: &Chart, width: u32, height: u32) -> Result<String, PlotError> {
    if !(MIN_WIDTH..=MAX_SIDE).contains(&width) || !(MIN_HEIGHT..=MAX_SIDE).contains(&height) {
        return Err(PlotError::Size {
            title: chart.title.clone(),
            width,
            height,
        });
    }
    let data = prepare(chart)?;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (width, height)).into_drawing_area();
        let fail = |e: &dyn std::fmt::Display| PlotError::Draw {
            title: chart.title.clone(),
            detail: e.to_string(),
        };
        root.fill(&WHITE).map_err(|e| fail(&e))?;
        let per_row = legend_columns(width);
        let rows = data.series.len().div_ceil(per_row).max(1) as u32;
        let legend_height = rows * LEGEND_ROW + 10;
        let caption = caption_lines(&chart.caption, width);
        let caption_height = if caption.is_empty() {
            0
        } else {
            caption.len() as u32 * CAPTION_ROW + 8
        };
        let (main, caption_area) = root.split_vertically(height.saturating_sub(caption_height));
        let (upper, legend) =
            main.split_vertically(height.saturating_sub(caption_height + legend_height));
        let (title_area, plot_area) = upper.split_vertically(TITLE_BAND);
        title_area
            .draw(&Text::new(
                chart.title.clone(),
                (12, 8),
                TextStyle::from((FONT, 19).into_font().style(FontStyle::Bold))
                    .color(&INK)
                    .pos(Pos::new(HPos::Left, VPos::Top)),
            ))
            .map_err(|e| fail(&e))?;
        match (chart.x_scale, chart.y_scale) {
            (Scale::Linear, Scale::Linear) => draw_plot(
                &plot_area,
                chart,
                &data,
                RangedCoordf64::from(data.x.0..data.x.1),
                RangedCoordf64::from(data.y.0..data.y.1),
            ),
            (Scale::Log, Scale::Linear) => draw_plot(
                &plot_area,
                chart,
                &data,
                LogCoord::from((data.x.0..data.x.1).log_scale()),
                RangedCoordf64::from(data.y.0..data.y.1),
            ),
            (Scale::Linear, Scale::Log) => draw_plot(
                &plot_area,
                chart,
                &data,
                RangedCoordf64::from(data.x.0..data.x.1),
                LogCoord::from((data.y.0..data.y.1).log_scale()),
            ),
            (Scale::Log, Scale::Log) => draw_plot(
                &plot_area,
                chart,
                &data,
                LogCoord::from((data.x.0..data.x.1).log_scale()),
                LogCoord::from((data.y.0..data.y.1).log_scale()),
            ),
        }
        .map_err(|e| fail(&e))?;
        draw_legend(&legend, &data, per_row).map_err(|e| fail(&e))?;
        for (i, line) in caption.iter().enumerate() {
            caption_area
                .draw(&Text::new(
                    line.clone(),
                    (12, (i as u32 * CAPTION_ROW) as i32),
                    TextStyle::from((FONT, 13).into_font())
                        .color(&REFERENCE_INK)
                        .pos(Pos::new(HPos::Left, VPos::Top)),
                ))
                .map_err(|e| fail(&e))?;
        }
        root.present().map_err(|e| fail(&e))?;
    }
    Ok(svg)
}

type DrawResult = Result<(), DrawingAreaErrorKind<std::io::Error>>;

/// The caption's paragraphs wrapped to the picture's width (continuation lines indented).
fn caption_lines(paragraphs: &[String], width: u32) -> Vec<String> {
    let chars = (width.saturating_sub(24) / CAPTION_CHAR).max(20) as usize;
    paragraphs.iter().flat_map(|p| wrap(p, chars)).collect()
}

/// Right margin: room for the longest reference-line label (about 7 px per character at
/// the label size).
fn reference_margin(lines: &[ReferenceLine]) -> u32 {
    let longest = lines
        .iter()
        .map(|r| r.label.chars().count())
        .max()
        .unwrap_or(0);
    if longest == 0 {
        18
    } else {
        (14 + 7 * longest as u32).min(240)
    }
}

fn legend_columns(width: u32) -> usize {
    ((width.saturating_sub(24)) / 230).max(1) as usize
}

fn line_style(index: usize) -> ShapeStyle {
    PALETTE[index % PALETTE.len()].stroke_width(2)
}

fn glyph_of(index: usize) -> Glyph {
    GLYPHS[index % GLYPHS.len()]
}

fn dash_of(index: usize) -> Option<(u32, u32)> {
    DASHES[index % DASHES.len()]
}

/// A point shape of `size` pixels at `at`, as an element for any coordinate system.
fn glyph_element<'b, DB: DrawingBackend + 'b, C: Clone + 'b>(
    glyph: Glyph,
    at: C,
    size: i32,
    style: ShapeStyle,
) -> DynElement<'b, DB, C> {
    let s = size;
    let base = EmptyElement::<C, DB>::at(at);
    match glyph {
        Glyph::Circle => (base + Circle::new((0, 0), s, style)).into_dyn(),
        Glyph::Triangle => (base + TriangleMarker::new((0, 0), s + 1, style)).into_dyn(),
        Glyph::Square => (base + Rectangle::new([(-s, -s), (s, s)], style)).into_dyn(),
        Glyph::Cross => (base + Cross::new((0, 0), s, style.stroke_width(2))).into_dyn(),
        Glyph::Diamond => {
            let d = s + 1;
            (base + Polygon::new(vec![(0, -d), (d, 0), (0, d), (-d, 0)], style)).into_dyn()
        }
    }
}

fn draw_plot<X, Y>(
    area: &DrawingArea<SVGBackend<'_>, Shift>,
    chart: &Chart,
    data: &DrawableChart,
    x: X,
    y: Y,
) -> DrawResult
where
    X: Ranged<ValueType = f64> + ValueFormatter<f64>,
    Y: Ranged<ValueType = f64> + ValueFormatter<f64>,
{
    let mut ctx = ChartBuilder::on(area)
        .margin_left(8)
        // Room on the right for the labels of the reference lines.
        .margin_right(reference_margin(&data.reference_lines))
        .margin_top(6)
        .margin_bottom(4)
        .x_label_area_size(44)
        .y_label_area_size(64)
        .build_cartesian_2d(x, y)?;
    ctx.configure_mesh()
        .x_desc(chart.x_label.as_str())
        .y_desc(chart.y_label.as_str())
        .x_labels(8)
        .y_labels(8)
        .x_label_formatter(&|v| tick_label(*v))
        .y_label_formatter(&|v| tick_label(*v))
        .bold_line_style(GRID.stroke_width(1))
        .light_line_style(TRANSPARENT)
        .axis_style(INK.stroke_width(1))
        .label_style((FONT, 14).into_font().color(&INK))
        .axis_desc_style((FONT, 15).into_font().color(&INK))
        .draw()?;

    let (x0, x1) = data.x;
    // Reference lines first, so that the data lie on top of them; labels in the right margin.
    for r in &data.reference_lines {
        ctx.draw_series(DashedLineSeries::new(
            vec![(x0, r.y), (x1, r.y)],
            6,
            4,
            REFERENCE_INK.stroke_width(1),
        ))?;
        ctx.draw_series(std::iter::once(
            EmptyElement::at((x1, r.y))
                + Text::new(
                    r.label.clone(),
                    (5, 0),
                    TextStyle::from((FONT, 13).into_font())
                        .color(&REFERENCE_INK)
                        .pos(Pos::new(HPos::Left, VPos::Center)),
                ),
        ))?;
    }

    for (i, (_, points)) in data.series.iter().enumerate() {
        if points.is_empty() {
            continue;
        }
        let style = line_style(i);
        match dash_of(i) {
            None => {
                ctx.draw_series(LineSeries::new(points.iter().copied(), style))?;
            }
            Some((dash, gap)) => {
                ctx.draw_series(DashedLineSeries::new(
                    points.iter().copied(),
                    dash,
                    gap,
                    style,
                ))?;
            }
        }
        let step = points.len().div_ceil(MAX_GLYPHS_PER_SERIES).max(1);
        let glyph = glyph_of(i);
        let color = PALETTE[i % PALETTE.len()];
        let st = color.filled();
        let pts = points.iter().step_by(step).copied();
        // One arm per shape: the element types differ, so each is its own series.
        match glyph {
            Glyph::Circle => {
                ctx.draw_series(pts.map(|p| EmptyElement::at(p) + Circle::new((0, 0), 3, st)))?;
            }
            Glyph::Triangle => {
                ctx.draw_series(
                    pts.map(|p| EmptyElement::at(p) + TriangleMarker::new((0, 0), 4, st)),
                )?;
            }
            Glyph::Square => {
                ctx.draw_series(
                    pts.map(|p| EmptyElement::at(p) + Rectangle::new([(-3, -3), (3, 3)], st)),
                )?;
            }
            Glyph::Cross => {
                ctx.draw_series(
                    pts.map(|p| EmptyElement::at(p) + Cross::new((0, 0), 3, color.stroke_width(2))),
                )?;
            }
            Glyph::Diamond => {
                ctx.draw_series(pts.map(|p| {
                    EmptyElement::at(p) + Polygon::new(vec![(0, -4), (4, 0), (0, 4), (-4, 0)], st)
                }))?;
            }
        }
    }

    for m in &data.markers {
        // Label to the left of the mark when the mark sits in the right part of the plot.
        let right_half = match chart.x_scale {
            Scale::Linear => (m.x - x0) / (x1 - x0) > 0.6,
            Scale::Log => (m.x / x0).ln() / (x1 / x0).ln() > 0.6,
        };
        let (dx, anchor) = if right_half {
            (-10, HPos::Right)
        } else {
            (10, HPos::Left)
        };
        ctx.draw_series(std::iter::once(
            EmptyElement::at((m.x, m.y))
                + Circle::new((0, 0), 7, INK.stroke_width(2))
                + Circle::new((0, 0), 2, INK.filled())
                + Text::new(
                    m.label.clone(),
                    (dx, -8),
                    TextStyle::from((FONT, 14).into_font().style(FontStyle::Bold))
                        .color(&INK)
                        .pos(Pos::new(anchor, VPos::Bottom)),
                ),
        ))?;
    }
    Ok(())
}

fn draw_legend(
    area: &DrawingArea<SVGBackend<'_>, Shift>,
    data: &DrawableChart,
    per_row: usize,
) -> DrawResult {
    let (width, _) = area.dim_in_pixel();
    let column = ((width.saturating_sub(24)) / per_row as u32) as i32;
    for (i, (label, _)) in data.series.iter().enumerate() {
        let row = (i / per_row) as i32;
        let col = (i % per_row) as i32;
        let x = 16 + col * column;
        let y = 6 + row * LEGEND_ROW as i32 + LEGEND_ROW as i32 / 2;
        let style = line_style(i);
        match dash_of(i) {
            None => area.draw(&PathElement::new(vec![(x, y), (x + 34, y)], style))?,
            Some((dash, gap)) => {
                let (dash, gap) = (dash as i32, gap as i32);
                let mut start = x;
                while start < x + 34 {
                    let end = (start + dash).min(x + 34);
                    area.draw(&PathElement::new(vec![(start, y), (end, y)], style))?;
                    start = end + gap;
                }
            }
        }
        let color = PALETTE[i % PALETTE.len()];
        area.draw(&glyph_element(glyph_of(i), (x + 17, y), 3, color.filled()))?;
        area.draw(&Text::new(
            label.clone(),
            (x + 42, y),
            TextStyle::from((FONT, 14).into_font())
                .color(&INK)
                .pos(Pos::new(HPos::Left, VPos::Center)),
        ))?;
    }
    Ok(())
}

#[cfg(test)]
mod tests;
