//! A uniform amplitude `F` on `[lower, upper]` (a channel frozen anywhere in a range): the
//! window of amplitudes where each polytope can carry probability, with the kinks and steps
//! of its integrand as breakpoints, and the adaptive integral over `F` of each outcome,
//! polytope by polytope (the general engine) or scenario by scenario (the order-statistic
//! engine).

use rayon::prelude::*;

use crate::prob::Estimate;
use crate::prob::polytope::{Gaussian, Polytope};
use crate::prob::quadrature::integrate_best_effort;
use crate::prob::shift_average::mean_over_uniform_shift;

use super::engine::{Engine, Scenario};
use super::error::AnalysisError;
use super::evaluate::{Evaluator, quiet_by_complement};
use super::options::AnalysisOptions;
use super::outcome::{Figure, Outcome};
use super::scenario::FaultScenario;
use super::site::engine_of;
/// Noise widths beyond which a row's slab can no longer hold the row: its probability is
/// then below `P(Z > 9)`, about 1.1e-19 (mpmath 1.3.0 gives 1.129e-19).
const AMPLITUDE_REACH: f64 = 9.0;

/// Where one polytope can carry probability as the amplitude `F` moves over
/// `[lower, upper]`, with the kinks and steps of its integrand: every row that the fault
/// moves confines `F` to where the row's mean lies within [`AMPLITUDE_REACH`] noise widths
/// of its band, and its band ends (and a few noise widths either side) are breakpoints.
/// `None` when no amplitude in the range can reach the polytope; `moving` is false when no
/// row depends on `F` (the integrand is constant).
#[derive(Debug, Clone, PartialEq)]
pub struct AmplitudeWindow {
    /// Start of the window.
    pub lower: f64,
    /// End of the window.
    pub upper: f64,
    /// Kinks and steps inside the window, sorted.
    pub breakpoints: Vec<f64>,
    /// Whether any row depends on the amplitude.
    pub moving: bool,
}

/// Two rows whose random parts have a correlation this close to +-1 (`1 - |rho|` below
/// it) are nearly parallel: their ends can meet at a sharp kink of the integrand.
const PARALLEL_ROWS: f64 = 0.01;

/// Breakpoints where two nearly parallel rows of a polytope trade places as the amplitude
/// moves: where their standardised ends coincide (for negative correlation, mirror each
/// other). With the rows' random parts nearly equal, the polytope's probability has a kink
/// there, smoothed only over the small spread of their difference (for instance a guard
/// `x_c0 + F <= x_c2` and a safety end `x_c2 >= -L`, both random through `x_c2` but whose
/// difference has the tiny sigma of `c0`: the kink sits at `F = -L`). No single row
/// marks it, and the Kronrod error estimate can miss it. Each kink gets the same points as
/// a row's band end ([`push_steps`]).
fn pair_kinks(
    polytope: &Polytope,
    scenario: &FaultScenario,
    profiles: &[(f64, f64, f64)],
    points: &mut Vec<f64>,
) {
    for i in 0..profiles.len() {
        for j in i + 1..profiles.len() {
            let ((mi, si, di), (mj, sj, dj)) = (profiles[i], profiles[j]);
            if !(di > 0.0 && dj > 0.0) {
                continue;
            }
            let rho = scenario.row_covariance(&polytope.rows[i], &polytope.rows[j]) / (di * dj);
            // (NaN, from a zero variance, is not nearly parallel either)
            if rho.is_nan() || 1.0 - rho.abs() >= PARALLEL_ROWS {
                continue;
            }
            let sign = rho.signum();
            // Standardised end h(F) = (end - mean - slope F) / sd; the kink solves
            // h_i(F) = sign h_j(F).
            let rate = si / di - sign * sj / dj;
            if rate == 0.0 || !rate.is_finite() {
                continue;
            }
            let width = (2.0 * (1.0 - rho.abs())).max(0.0).sqrt() / rate.abs();
            let (bi, bj) = (&polytope.bands[i], &polytope.bands[j]);
            for ei in [bi.lower, bi.upper] {
                for ej in [bj.lower, bj.upper] {
                    if !(ei.is_finite() && ej.is_finite()) {
                        continue;
                    }
                    let centre = ((ei - mi) / di - sign * (ej - mj) / dj) / rate;
                    push_steps(points, centre, width);
                }
            }
        }
    }
}

/// A step (or kink) at `centre` smoothed over `width`: the centre, and 3 and
/// [`AMPLITUDE_REACH`] widths either side, so that its steep part and its tails each get
/// pieces of their own and what is left beyond (below `P(Z > 9)` per width) is nothing an
/// adaptive rule's error estimate on a long flat piece can miss (DEVELOPERS.md, "How a
/// figure is computed", says why).
pub(crate) fn push_steps(points: &mut Vec<f64>, centre: f64, width: f64) {
    points.push(centre);
    if width > 0.0 {
        for k in [-AMPLITUDE_REACH, -3.0, 3.0, AMPLITUDE_REACH] {
            points.push(centre + k * width);
        }
    }
}

/// The [`AmplitudeWindow`] of one polytope (see there).
pub fn amplitude_window(
    polytope: &Polytope,
    scenario: &FaultScenario,
    lower: f64,
    upper: f64,
) -> Option<AmplitudeWindow> {
    let (mut lo, mut hi) = (lower, upper);
    let mut points = Vec::new();
    let mut moving = false;
    let profiles: Vec<(f64, f64, f64)> = polytope
        .rows
        .iter()
        .map(|row| scenario.row_profile(row))
        .collect();
    for ((row, band), &(mean, slope, sd)) in
        polytope.rows.iter().zip(&polytope.bands).zip(&profiles)
    {
        if slope.abs() <= f64::EPSILON * row.iter().map(|r| r.abs()).sum::<f64>() {
            continue;
        }
        moving = true;
        let reach = AMPLITUDE_REACH * sd;
        let (a, b) = (
            (band.lower - reach - mean) / slope,
            (band.upper + reach - mean) / slope,
        );
        let (a, b) = if slope > 0.0 { (a, b) } else { (b, a) };
        if !a.is_nan() {
            lo = lo.max(a);
        }
        if !b.is_nan() {
            hi = hi.min(b);
        }
        let width = sd / slope.abs();
        for end in [band.lower, band.upper] {
            if !end.is_finite() {
                continue;
            }
            push_steps(&mut points, (end - mean) / slope, width);
        }
    }
    if lo >= hi {
        return None;
    }
    pair_kinks(polytope, scenario, &profiles, &mut points);
    points.retain(|p| p.is_finite() && *p > lo && *p < hi);
    points.sort_by(f64::total_cmp);
    // Only points that rounding cannot tell apart are merged: a step as narrow as its
    // noise width (sigmas decades below the amplitude range) needs its own breakpoints.
    let min_gap = 8.0 * f64::EPSILON * lo.abs().max(hi.abs());
    points.dedup_by(|a, b| (*a - *b).abs() <= min_gap);
    Some(AmplitudeWindow {
        lower: lo,
        upper: hi,
        breakpoints: points,
        moving,
    })
}

/// The figures for a uniform amplitude on `[lower, upper]`: the mean over the range of each
/// figure, polytope by polytope: in closed form when the polytope's random rows read one
/// direction ([`mean_over_uniform_shift`]), otherwise integrated over that polytope's own
/// [`amplitude_window`] by adaptive Gauss–Kronrod (Piessens et al. 1983, QUADPACK) with its
/// breakpoints.
/// Outside its window a polytope holds less than `P(Z > AMPLITUDE_REACH)`, which is added
/// to the bound.
pub(crate) fn uniform_outcome(
    evaluator: &Evaluator,
    scenario: &FaultScenario,
    lower: f64,
    upper: f64,
    options: &AnalysisOptions,
) -> Result<Outcome, AnalysisError> {
    if upper <= lower {
        return evaluator.outcome(&scenario.at_amplitude(lower)?);
    }
    let width = upper - lower;
    let mut figures = [Estimate::zero(); 4];
    for (index, figure) in Figure::ALL.into_iter().enumerate() {
        if figure == Figure::SafeQuiet {
            // The quiet share by complement when the other three are small (see
            // `quiet_by_complement`).
            let others = figures[0].add(figures[1]).add(figures[2]);
            if let Some(q) = quiet_by_complement(others) {
                figures[index] = q;
                continue;
            }
        }
        let total = uniform_total(
            evaluator.polytopes(figure),
            scenario,
            (lower, upper),
            options,
            figure.key(),
            &|g, p| evaluator.polytope_probability(g, p, figure),
        )?;
        figures[index] =
            Estimate::new(total.value / width, total.error / width).clamp_probability();
    }
    Ok(Outcome {
        p_vd: figures[0],
        p_vu: figures[1],
        p_sd: figures[2],
        p_sq: figures[3],
    })
}

/// The integral over the amplitude range (not yet divided by its width) of the summed
/// probability of `polytopes`, polytope by polytope as [`uniform_outcome`] describes;
/// `probability` computes one polytope for one gaussian, `label` names the figure in errors.
///
/// # Errors
/// Engine failures.
pub(crate) fn uniform_total(
    polytopes: &[Polytope],
    scenario: &FaultScenario,
    range: (f64, f64),
    options: &AnalysisOptions,
    label: &str,
    probability: &(dyn Fn(&Gaussian, &Polytope) -> Result<Estimate, AnalysisError> + Sync),
) -> Result<Estimate, AnalysisError> {
    let (lower, upper) = range;
    let width = upper - lower;
    let outside = crate::prob::normal::sf(AMPLITUDE_REACH);
    // Polytope by polytope, in parallel; summed in their fixed order, so the total has the
    // same bits whatever the thread count.
    let one = |polytope: &Polytope| -> Result<Estimate, AnalysisError> {
        // Every random row reads one direction (a replaced channel): closed form.
        if let Some(mean) =
            mean_over_uniform_shift(&scenario.base, polytope, &scenario.direction, lower, upper)
        {
            return Ok(mean.scale(width));
        }
        let Some(window) = amplitude_window(polytope, scenario, lower, upper) else {
            return Ok(Estimate::new(0.0, outside * width));
        };
        let span = window.upper - window.lower;
        let beyond = Estimate::new(0.0, outside * (width - span).max(0.0));
        if !window.moving {
            let g = scenario.at_amplitude(window.lower)?;
            let p = probability(&g, polytope)?;
            return Ok(p.scale(span).add(beyond));
        }
        // Empty at every amplitude of the window (a contradiction that only the rows
        // together show): nothing to integrate.
        if scenario.base.empty_for_every_shift(
            polytope,
            &scenario.direction,
            window.lower,
            window.upper,
        ) {
            return Ok(beyond);
        }
        let mut quad = options.quadrature();
        quad.max_intervals += window.breakpoints.len();
        // The tolerances apply to the mean over the whole range: scale by its width.
        quad.abs_tol *= width;
        let integral = integrate_best_effort(
            |amplitude| {
                let g = scenario.at_amplitude(amplitude).map_err(engine_of)?;
                probability(&g, polytope).map_err(engine_of)
            },
            window.lower,
            window.upper,
            &window.breakpoints,
            &quad,
        )
        .map_err(|e| AnalysisError::engine(format!("integral of {label} over the amplitude"), e))?;
        Ok(Estimate::new(integral.value, integral.error).add(beyond))
    };
    let parts: Vec<Result<Estimate, AnalysisError>> = polytopes.par_iter().map(one).collect();
    let mut total = Estimate::zero();
    for part in parts {
        total = total.add(part?);
    }
    Ok(total)
}

/// The figures for a uniform amplitude on `[lower, upper]` when every amplitude goes to the
/// order-statistic engine: the four figures integrated together over the amplitude by
/// adaptive Gauss–Kronrod (`prob::vector_quadrature`), with breakpoints where a moved
/// channel's mean meets a safety end or another channel's mean, each shifted by a check
/// band, and a few noise widths either side.
pub(crate) fn uniform_outcome_ordered(
    engine: &Engine<'_>,
    scenario: &FaultScenario,
    lower: f64,
    upper: f64,
    options: &AnalysisOptions,
) -> Result<Outcome, AnalysisError> {
    if upper <= lower {
        return Ok(engine.outcome(Scenario::At(scenario, lower))?.0);
    }
    let width = upper - lower;
    let model = engine.model();
    let sd = model
        .total_sigmas()
        .into_iter()
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE);
    let bands: Vec<f64> = model
        .checks
        .iter()
        .flat_map(|c| [c.lower, c.upper])
        .chain([0.0])
        .collect();
    // A moved channel at a safety end, or a check band away from it (the band's end then
    // switches between the safety end and the other channel: a kink).
    let mut levels = Vec::new();
    for t in [model.safety_lower, model.safety_upper] {
        for b in &bands {
            levels.push(t + b);
            levels.push(t - b);
        }
    }
    for m in &scenario.base_mean {
        for b in &bands {
            levels.push(m + b);
            levels.push(m - b);
        }
    }
    let mut points = Vec::new();
    for (i, d) in scenario.direction.iter().enumerate() {
        if *d == 0.0 {
            continue;
        }
        let own = scenario.base_mean.get(i).copied().unwrap_or(0.0);
        for level in &levels {
            if level.is_finite() {
                push_steps(&mut points, (level - own) / d, sd / d.abs());
            }
        }
    }
    points.retain(|p| p.is_finite() && *p > lower && *p < upper);
    points.sort_by(f64::total_cmp);
    points.dedup();
    let tol = crate::prob::vector_quadrature::VectorTolerance {
        abs: options.amplitude_abs * width,
        rel: [options.amplitude_rel; 4],
        max_intervals: options.amplitude_max_intervals + points.len(),
    };
    let r = crate::prob::vector_quadrature::integrate(
        |amplitude| {
            let (o, _) = engine
                .outcome(Scenario::At(scenario, amplitude))
                .map_err(engine_of)?;
            let f = [o.p_vd, o.p_vu, o.p_sd, o.p_sq];
            Ok((f.map(|e| e.value), f.map(|e| e.error)))
        },
        lower,
        upper,
        &points,
        &tol,
    )
    .map_err(|e| AnalysisError::engine("integral of the figures over the amplitude", e))?;
    let figure =
        |i: usize| Estimate::new(r.value[i] / width, r.error[i] / width).clamp_probability();
    Ok(Outcome {
        p_vd: figure(0),
        p_vu: figure(1),
        p_sd: figure(2),
        p_sq: figure(3),
    })
}
