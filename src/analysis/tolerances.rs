//! Figures over a box of input tolerances (`analyze --within KEY=LO:HI`): for every figure of
//! `sensitivity::figures_of`, the lowest and the highest value over the box, with the input
//! values where each is reached and its error bound.
//!
//! The search: a full grid of the box ([`GRID_POINTS`]: 41 points for one input, 15 per
//! input for two, 7 for three, 5 for four, 3 for five and six; the corners included), each point a whole analysis of the file edited by the
//! overrides, with every worst case over an unknown sigma searched afresh. A figure that is
//! monotone along every grid line in every input has its extremes at corners of the box, which
//! the grid holds. For any other figure each extreme of the grid is refined by golden-section
//! searches, one input at a time, over the grid cells either side of it, until a sweep moves
//! no input (bounded, at most `REFINE_SWEEPS` sweeps). What this guarantees: the corners and
//! the grid exactly, and a local optimum near the grid's best point; an extreme narrower than
//! one grid cell elsewhere in the box can be missed, which a grid of higher resolution (the
//! tests use 20 x 20) would show.

use rayon::prelude::*;

use crate::model::Architecture;
use crate::prob::Estimate;

use super::error::{AnalysisError, RequestField};
use super::options::AnalysisOptions;
use super::run::analyze;
use super::sensitivity::{FigureValue, figures_of};

/// Most inputs in one box (the grid grows as its power: 729 analyses for six).
pub const MAX_TOLERANCES: usize = 6;

/// Grid points per input for one to [`MAX_TOLERANCES`] inputs: at least three, so that a
/// figure's monotonicity along every grid line can be read off the grid.
const GRID_POINTS: [usize; MAX_TOLERANCES] = [41, 15, 7, 5, 3, 3];

/// Sweeps of the refinement (each a golden-section search per input).
const REFINE_SWEEPS: usize = 3;

/// Golden-section steps per search (the bracket shrinks by 0.618 each).
const GOLDEN_STEPS: usize = 14;

/// One input and its tolerance.
#[derive(Debug, Clone, PartialEq)]
pub struct ToleranceInput {
    /// The dotted key.
    pub key: String,
    /// The value in the file.
    pub nominal: f64,
    /// The lower end of the tolerance.
    pub lower: f64,
    /// The upper end.
    pub upper: f64,
}

/// The range of one figure over the box.
#[derive(Debug, Clone, PartialEq)]
pub struct FigureRange {
    /// The fault site, or `None` for the metrics and the false alarm.
    pub site: Option<String>,
    /// The figure.
    pub figure: &'static str,
    /// The value with the inputs as in the file.
    pub nominal: f64,
    /// The lowest value found, with its bound.
    pub lowest: Estimate,
    /// The inputs where it is reached, in the order of the inputs.
    pub lowest_at: Vec<f64>,
    /// The highest value found, with its bound.
    pub highest: Estimate,
    /// The inputs where it is reached.
    pub highest_at: Vec<f64>,
    /// Whether the figure is monotone along every grid line (extremes at corners).
    pub monotone: bool,
}

/// Every figure over the box.
#[derive(Debug, Clone, PartialEq)]
pub struct ToleranceAnalysis {
    /// The inputs and their tolerances.
    pub inputs: Vec<ToleranceInput>,
    /// Grid points per input.
    pub grid_points: usize,
    /// Whole analyses spent.
    pub evaluations: usize,
    /// One range per figure, in the order of `figures_of`.
    pub figures: Vec<FigureRange>,
}

impl ToleranceAnalysis {
    /// The range of a metric (site `None`) by its key, e.g. `spfm`.
    pub fn metric(&self, figure: &str) -> Option<&FigureRange> {
        self.figures
            .iter()
            .find(|f| f.site.is_none() && f.figure == figure)
    }
}

type Point = Vec<f64>;

/// The figures at one point of the box, or an error naming the point.
fn figures_at(
    arch: &Architecture,
    inputs: &[ToleranceInput],
    point: &[f64],
    names: &[FigureValue],
    options: &AnalysisOptions,
) -> Result<Vec<Option<Estimate>>, AnalysisError> {
    let overrides: Vec<(String, f64)> = inputs
        .iter()
        .zip(point)
        .map(|(i, v)| (i.key.clone(), *v))
        .collect();
    let edited = arch
        .with_overrides(&overrides)
        .map_err(|source| AnalysisError::Model {
            context: format!(
                "the tolerance box at {}",
                super::sweep::describe_overrides(&overrides)
            ),
            source: Box::new(source),
        })?;
    let mut model = edited.model;
    model.timing = None;
    model.isolation = None;
    let a = analyze(&model, options, false)?;
    let found = figures_of(&a);
    Ok(names
        .iter()
        .map(|n| {
            found
                .iter()
                .find(|f| f.site == n.site && f.figure == n.figure)
                .map(|f| f.value)
        })
        .collect())
}

/// The ranges of every figure over the box `within` (key, lower, upper).
///
/// # Errors
/// [`AnalysisError::InvalidRequest`] for a key that is no numeric input of the file, an
/// empty tolerance or more than [`MAX_TOLERANCES`] inputs; a model error when the file is
/// not valid somewhere in the box; engine errors.
pub fn over_box(
    arch: &Architecture,
    within: &[(String, f64, f64)],
    options: &AnalysisOptions,
) -> Result<ToleranceAnalysis, AnalysisError> {
    if within.is_empty() || within.len() > MAX_TOLERANCES {
        return Err(AnalysisError::invalid(
            RequestField::Tolerances,
            format!(
                "give one to {MAX_TOLERANCES} tolerances (the grid of the box grows as its power); \
                 found {}",
                within.len()
            ),
        ));
    }
    let known = arch.numeric_inputs();
    let mut inputs = Vec::new();
    for (key, lower, upper) in within {
        let Some((_, nominal)) = known.iter().find(|(k, _)| k == key) else {
            let list: Vec<&str> = known.iter().map(|(k, _)| k.as_str()).take(12).collect();
            return Err(AnalysisError::invalid(
                RequestField::Tolerances,
                format!(
                    "`{key}` is not a numeric input of the file; inputs are e.g. {}",
                    list.join(", ")
                ),
            ));
        };
        if !(lower.is_finite() && upper.is_finite() && lower < upper) {
            return Err(AnalysisError::invalid(
                RequestField::Tolerances,
                format!(
                    "the tolerance of `{key}` must be LO:HI with LO < HI, found {lower}:{upper}"
                ),
            ));
        }
        if inputs.iter().any(|i: &ToleranceInput| i.key == *key) {
            return Err(AnalysisError::invalid(
                RequestField::Tolerances,
                format!("`{key}` is given twice"),
            ));
        }
        inputs.push(ToleranceInput {
            key: key.clone(),
            nominal: *nominal,
            lower: *lower,
            upper: *upper,
        });
    }
    let mut nominal_model = arch.model.clone();
    nominal_model.timing = None;
    nominal_model.isolation = None;
    let nominal = analyze(&nominal_model, options, false)?;
    let names = figures_of(&nominal);
    let k = inputs.len();
    let g = GRID_POINTS[k - 1];
    let axis = |i: usize, j: usize| {
        let input = &inputs[i];
        input.lower + (input.upper - input.lower) * j as f64 / (g - 1) as f64
    };
    let count = g.pow(k as u32);
    let index_of = |mut n: usize| -> Vec<usize> {
        (0..k)
            .map(|_| {
                let j = n % g;
                n /= g;
                j
            })
            .collect()
    };
    let grid: Vec<Result<Vec<Option<Estimate>>, AnalysisError>> = (0..count)
        .into_par_iter()
        .map(|n| {
            let idx = index_of(n);
            let point: Point = idx.iter().enumerate().map(|(i, j)| axis(i, *j)).collect();
            figures_at(arch, &inputs, &point, &names, options)
        })
        .collect();
    let grid: Vec<Vec<Option<Estimate>>> = grid.into_iter().collect::<Result<_, _>>()?;
    let mut evaluations = count;
    let point_of = |n: usize| -> Point {
        index_of(n)
            .iter()
            .enumerate()
            .map(|(i, j)| axis(i, *j))
            .collect()
    };
    let mut figures = Vec::with_capacity(names.len());
    for (f, name) in names.iter().enumerate() {
        let value = |n: usize| grid[n][f].map(|e| e.value);
        // Monotone along every grid line in every input?
        let mut monotone = true;
        for n in 0..count {
            for (i, at) in index_of(n).into_iter().enumerate() {
                if at + 2 >= g {
                    continue;
                }
                let step = g.pow(i as u32);
                if let (Some(a), Some(b), Some(c)) =
                    (value(n), value(n + step), value(n + 2 * step))
                {
                    if (b - a) * (c - b) < 0.0 {
                        monotone = false;
                    }
                } else {
                    monotone = false;
                }
            }
        }
        let defined: Vec<usize> = (0..count).filter(|&n| value(n).is_some()).collect();
        let Some(&first) = defined.first() else {
            continue;
        };
        let mut low_n = first;
        let mut high_n = first;
        for &n in &defined {
            if value(n) < value(low_n) {
                low_n = n;
            }
            if value(n) > value(high_n) {
                high_n = n;
            }
        }
        let mut lowest = (point_of(low_n), grid[low_n][f].unwrap_or_default());
        let mut highest = (point_of(high_n), grid[high_n][f].unwrap_or_default());
        if !monotone {
            for (best, sign) in [(&mut lowest, 1.0), (&mut highest, -1.0)] {
                evaluations += refine(arch, &inputs, &names, f, best, sign, g, options)?;
            }
        }
        figures.push(FigureRange {
            site: name.site.clone(),
            figure: name.figure,
            nominal: name.value.value,
            lowest: lowest.1,
            lowest_at: lowest.0,
            highest: highest.1,
            highest_at: highest.0,
            monotone,
        });
    }
    Ok(ToleranceAnalysis {
        inputs,
        grid_points: g,
        evaluations,
        figures,
    })
}

/// Improves `best` (a point and its value) for `sign * figure` to be smallest by golden-section
/// searches, one input at a time, over one grid cell either side, until a sweep moves no
/// input or `REFINE_SWEEPS` sweeps are done. Returns the analyses spent.
#[allow(clippy::too_many_arguments)]
fn refine(
    arch: &Architecture,
    inputs: &[ToleranceInput],
    names: &[FigureValue],
    figure: usize,
    best: &mut (Point, Estimate),
    sign: f64,
    g: usize,
    options: &AnalysisOptions,
) -> Result<usize, AnalysisError> {
    let mut spent = 0;
    let inv_phi = (5f64.sqrt() - 1.0) / 2.0;
    for _ in 0..REFINE_SWEEPS {
        let mut moved = false;
        for i in 0..inputs.len() {
            let cell = (inputs[i].upper - inputs[i].lower) / (g - 1) as f64;
            let (mut a, mut b) = (
                (best.0[i] - cell).max(inputs[i].lower),
                (best.0[i] + cell).min(inputs[i].upper),
            );
            let mut eval = |x: f64| -> Result<Option<Estimate>, AnalysisError> {
                let mut p = best.0.clone();
                p[i] = x;
                spent += 1;
                Ok(figures_at(arch, inputs, &p, names, options)?[figure])
            };
            let score = |e: Option<Estimate>| e.map_or(f64::INFINITY, |e| sign * e.value);
            let mut c = b - inv_phi * (b - a);
            let mut d = a + inv_phi * (b - a);
            let mut fc = eval(c)?;
            let mut fd = eval(d)?;
            for _ in 0..GOLDEN_STEPS {
                if score(fc) < score(fd) {
                    b = d;
                    d = c;
                    fd = fc;
                    c = b - inv_phi * (b - a);
                    fc = eval(c)?;
                } else {
                    a = c;
                    c = d;
                    fc = fd;
                    d = a + inv_phi * (b - a);
                    fd = eval(d)?;
                }
            }
            for (x, e) in [(c, fc), (d, fd)] {
                if let Some(e) = e
                    && sign * e.value < sign * best.1.value
                {
                    best.0[i] = x;
                    best.1 = e;
                    moved = true;
                }
            }
        }
        if !moved {
            break;
        }
    }
    Ok(spent)
}
