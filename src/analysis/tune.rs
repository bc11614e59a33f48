//! Tuning comparator limits: the widest band of one check (or of every check, scaled
//! together) whose worst-case coverage still meets a target on every chosen fault site,
//! which is the band with the smallest fault-free false-alarm probability.
//!
//! The search rests on two monotonicity facts (common practice; they follow from the
//! definitions): widening a check's band never makes it fire more often, so the fault-free
//! alarm probability falls as the band widens; and since the violation event does not depend
//! on the checks, `p_vd + p_vu` is fixed while `p_vu` can only grow, so both `dc` and
//! `dc_all_dangerous` fall too (and so does their worst case over an unknown spread, a
//! minimum of falling functions). The widest band that meets the target is therefore the
//! cheapest one. The search scans a log grid of scale factors (the trade-off curve), then
//! closes the bracket between the last grid point that meets the target and the first that
//! does not, by secant steps (see `close_bracket`).
//! A point counts as meeting the target only when its coverage minus its error bound does.
//! For a file with an `[isolation]` section the chosen band is analysed once more with its
//! isolation figures (`TuneResult::chosen_isolation`): coverage alone chose the band, and
//! the analyst reads how single faults end there.

use rayon::prelude::*;
use serde::Serialize;

use crate::model::Architecture;
pub use crate::model::{BandForm, CheckBand};
use crate::prob::Estimate;

use super::error::{AnalysisError, RequestField};
use super::options::AnalysisOptions;
use super::run::Analysis;
use super::sweep::{
    Axis, IsolationSummary, MAX_SWEEP_POINTS, Sections, analyze_point, analyze_with_overrides,
};

/// Which coverage figure the target is set on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum CoverageFigure {
    /// `p_vd / (p_vd + p_vu)` (ISO 26262-5 DC); sites with no dangerous outcome are skipped.
    #[serde(rename = "dc")]
    Dc,
    /// `1 - p_vu`: every fault of the site counts as dangerous (the conservative choice).
    #[serde(rename = "dc_all_dangerous")]
    DcAllDangerous,
}

impl CoverageFigure {
    /// The name used in files and on the command line.
    pub fn key(self) -> &'static str {
        match self {
            CoverageFigure::Dc => "dc",
            CoverageFigure::DcAllDangerous => "dc_all_dangerous",
        }
    }
}

/// What to tune and to which target.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TuneRequest {
    /// The check to tune, or `None` for every check scaled together.
    pub check: Option<String>,
    /// The coverage figure of the target.
    pub figure: CoverageFigure,
    /// The target, e.g. 0.99.
    pub target: f64,
    /// The fault sites that must meet it (empty: every site).
    pub sites: Vec<String>,
    /// The range of scale factors on the file's bands searched, e.g. `(0.1, 10)`.
    pub scale_range: (f64, f64),
    /// Points of the trade-off curve (log-spaced scale factors).
    pub curve_points: usize,
    /// Relative width of the final bracket on the scale factor.
    pub scale_rel_tol: f64,
}

impl TuneRequest {
    /// A request with the default range (0.1 to 10 times the file's bands), 41 curve points
    /// and a relative tolerance of 1e-4 on the scale.
    pub fn new(check: Option<String>, figure: CoverageFigure, target: f64) -> Self {
        Self {
            check,
            figure,
            target,
            sites: Vec::new(),
            scale_range: (0.1, 10.0),
            curve_points: 41,
            scale_rel_tol: 1e-4,
        }
    }
}

/// One point of the trade-off between coverage and false alarms.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TradeOffPoint {
    /// The scale factor on the file's bands.
    pub scale: f64,
    /// The keys set and their values at this scale.
    pub limits: Vec<(String, f64)>,
    /// Fault-free alarm probability (`p_vd + p_sd` of the baseline).
    pub false_alarm: Estimate,
    /// The smallest coverage over the chosen sites (worst case over unknown spreads).
    pub coverage: Estimate,
    /// The site with that smallest coverage.
    pub weakest_site: String,
    /// Coverage per chosen site, in file order (`None`: no dangerous outcome, for `dc`).
    pub site_coverage: Vec<(String, Option<Estimate>)>,
    /// True when `coverage - error >= target`.
    pub meets: bool,
}

/// The outcome of a tuning.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TuneResult {
    /// The request.
    pub request: TuneRequest,
    /// The checks moved, with their bands in the file, in name order.
    pub checks: Vec<CheckBand>,
    /// The chosen point: the widest band that meets the target. `None` when no band in the
    /// range does.
    pub chosen: Option<TradeOffPoint>,
    /// The first point past the chosen one that fails the target (the bracket's other end),
    /// when the chosen point is not at the end of the range.
    pub first_failing: Option<TradeOffPoint>,
    /// The point of the curve with the highest coverage (what is reachable at best).
    pub best_reachable: TradeOffPoint,
    /// True when the widest band of the range meets the target: a wider range may allow a
    /// band wider still.
    pub at_range_end: bool,
    /// The trade-off curve, by increasing scale.
    pub curve: Vec<TradeOffPoint>,
    /// The isolation figures at the chosen band, for a file with an `[isolation]` section
    /// (a band that meets the coverage target may still blame healthy channels or shut down
    /// often: the analyst reads both).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub chosen_isolation: Option<IsolationSummary>,
    /// Notes for the analyst (e.g. a curve that is not monotone within its bounds).
    pub warnings: Vec<String>,
    /// Evaluations of the whole analysis spent.
    pub evaluations: usize,
}

/// The bands the tuning moves: the named check's, or every check's, in name order (the
/// order of the keys in the trade-off curve and its outputs).
///
/// # Errors
/// [`AnalysisError::InvalidRequest`] when the named check does not exist, or the file has no
/// check.
pub fn checks_to_tune(
    arch: &Architecture,
    check: Option<&str>,
) -> Result<Vec<CheckBand>, AnalysisError> {
    let mut bands: Vec<CheckBand> = arch
        .check_bands
        .iter()
        .filter(|band| check.is_none_or(|name| name == band.name))
        .cloned()
        .collect();
    bands.sort_by(|a, b| a.name.cmp(&b.name));
    if bands.is_empty() {
        let mut names: Vec<&str> = arch
            .check_bands
            .iter()
            .map(|band| band.name.as_str())
            .collect();
        names.sort_unstable();
        return Err(AnalysisError::invalid(
            RequestField::TuneCheck,
            match check {
                Some(name) => format!(
                    "no check '{name}' in the file; the checks are: {}",
                    if names.is_empty() {
                        "none".to_string()
                    } else {
                        names.join(", ")
                    }
                ),
                None => "the file has no checks to tune".into(),
            },
        ));
    }
    Ok(bands)
}

/// The keys and values of all tuned checks at scale `factor`.
fn overrides_at(checks: &[CheckBand], factor: f64) -> Vec<(String, f64)> {
    checks.iter().flat_map(|c| c.scaled(factor)).collect()
}

/// Tunes the checks of `arch` to the request; `progress` is called after every analysis (for
/// a progress display).
///
/// # Errors
/// [`AnalysisError::InvalidRequest`] for a bad request (unknown check or site, a target
/// outside (0, 1], a bad range); model or engine errors naming the values set.
pub fn tune(
    arch: &Architecture,
    request: &TuneRequest,
    options: &AnalysisOptions,
    progress: &(dyn Fn() + Sync),
) -> Result<TuneResult, AnalysisError> {
    if !(request.target > 0.0 && request.target <= 1.0) {
        return Err(AnalysisError::invalid(
            RequestField::TuneTarget,
            format!(
                "{} is not a coverage; give a fraction in (0, 1], e.g. 0.99",
                request.target
            ),
        ));
    }
    let (lo, hi) = request.scale_range;
    if !(lo.is_finite() && hi.is_finite() && lo > 0.0 && lo < hi) {
        return Err(AnalysisError::invalid(
            RequestField::TuneScaleRange,
            format!("the scale range {lo} to {hi} must be positive and increasing"),
        ));
    }
    if request.curve_points < 2 || request.curve_points > MAX_SWEEP_POINTS {
        return Err(AnalysisError::invalid(
            RequestField::TuneCurvePoints,
            format!(
                "{} curve points; give from 2 to {MAX_SWEEP_POINTS}",
                request.curve_points,
            ),
        ));
    }
    if !(request.scale_rel_tol > 0.0 && request.scale_rel_tol < 1.0) {
        return Err(AnalysisError::invalid(
            RequestField::TuneScaleTolerance,
            format!("{} must lie in (0, 1)", request.scale_rel_tol),
        ));
    }
    let checks = checks_to_tune(arch, request.check.as_deref())?;
    let point_at = |scale: f64| -> Result<TradeOffPoint, AnalysisError> {
        let overrides = overrides_at(&checks, scale);
        let analysis = analyze_with_overrides(arch, &overrides, options)?;
        progress();
        point_of(scale, overrides, &analysis, request)
    };
    let grid = Axis::log("scale", lo, hi, request.curve_points)?.values;
    let curve: Vec<TradeOffPoint> = grid
        .par_iter()
        .map(|&scale| point_at(scale))
        .collect::<Result<_, _>>()?;
    let mut evaluations = curve.len();
    let mut warnings = Vec::new();
    let last_meeting = curve.iter().rposition(|p| p.meets);
    if let Some(i) = last_meeting.filter(|&i| curve[..i].iter().any(|p| !p.meets)) {
        warnings.push(format!(
            "the coverage is not monotone in the band over the scanned range (a narrower \
             band misses the target while scale {} meets it); the widest meeting band is \
             reported, check the curve",
            curve[i].scale
        ));
    }
    let best_reachable = curve
        .iter()
        .max_by(|a, b| a.coverage.value.total_cmp(&b.coverage.value))
        .cloned()
        .ok_or_else(|| {
            AnalysisError::invalid(RequestField::TuneCurvePoints, "the curve is empty")
        })?;
    let (chosen, first_failing, at_range_end) = match last_meeting {
        None => (None, None, false),
        Some(i) if i + 1 == curve.len() => (Some(curve[i].clone()), None, true),
        Some(i) => {
            let (good, fail, spent) =
                close_bracket(curve[i].clone(), curve[i + 1].clone(), request, &point_at)?;
            evaluations += spent;
            (Some(good), Some(fail), false)
        }
    };
    // The isolation figures at the chosen band: a failure there leaves the tuning itself
    // standing, with a warning.
    let chosen_isolation = match (&chosen, &arch.model.isolation) {
        (Some(point), Some(_)) => {
            let found = analyze_point(arch, &point.limits, options, Sections::WithIsolation);
            progress();
            evaluations += 1;
            match found {
                Ok(analysis) => analysis.isolation.as_ref().map(IsolationSummary::of),
                Err(e) => {
                    warnings.push(format!(
                        "the isolation figures at the chosen band could not be computed: {e}"
                    ));
                    None
                }
            }
        }
        _ => None,
    };
    Ok(TuneResult {
        request: request.clone(),
        checks,
        chosen,
        first_failing,
        best_reachable,
        at_range_end,
        curve,
        chosen_isolation,
        warnings,
        evaluations,
    })
}

/// How far the coverage (its value minus its bound) lies above the target: positive where a
/// point meets it.
fn margin(point: &TradeOffPoint, target: f64) -> f64 {
    point.coverage.value - point.coverage.error - target
}

/// Shrinks the bracket `[good, fail]` (the first meets the target, the second does not) until
/// `fail / good <= 1 + scale_rel_tol`; returns it with the analyses spent.
fn close_bracket(
    good: TradeOffPoint,
    fail: TradeOffPoint,
    request: &TuneRequest,
    point_at: &dyn Fn(f64) -> Result<TradeOffPoint, AnalysisError>,
) -> Result<(TradeOffPoint, TradeOffPoint, usize), AnalysisError> {
    let target = request.target;
    let closed = close_by_secant(
        (good.scale, margin(&good, target), good),
        (fail.scale, margin(&fail, target), fail),
        request.scale_rel_tol,
        |scale| {
            let point = point_at(scale)?;
            Ok((margin(&point, target), point))
        },
    )?;
    Ok((closed.good.1, closed.fail.1, closed.spent))
}

/// Shrinks a bracket of scale factors `[good, fail]`, given as `(scale, margin, payload)`
/// with the margin at least zero at `good` and below zero at `fail`, until
/// `fail / good <= 1 + rel_tol`; returns the two ends (scale, payload) and the evaluations
/// spent. `evaluate` gives the margin and payload at a scale.
///
/// The margin is smooth in the log of the scale, so the secant through the last two points
/// evaluated finds where it crosses zero far faster than halving (the secant method,
/// superlinear for a smooth function with a simple root; Dahlquist and Björck, Numerical
/// Methods, sec. 6.3, from memory). To close the bracket rather than only approach one end,
/// each probe is placed just past the crossing, by just under half the tolerance, on the far
/// side from the last point; a probe outside the bracket is pulled into it, and after three
/// probes that do not halve the bracket one halving step follows, so the work stays within a
/// small factor of bisection's at worst. A bracket wider than [`SECANT_FROM`] is halved
/// first. A point counts as meeting when its margin is at least zero.
pub(crate) fn close_by_secant<T, E>(
    good: (f64, f64, T),
    fail: (f64, f64, T),
    rel_tol: f64,
    mut evaluate: impl FnMut(f64) -> Result<(f64, T), E>,
) -> Result<ClosedBracket<T>, E> {
    let closed = (1.0 + rel_tol).ln();
    let nudge = 0.45 * closed;
    let mut spent = 0usize;
    let (mut good_scale, mut good_payload) = (good.0, good.2);
    let (mut fail_scale, mut fail_payload) = (fail.0, fail.2);
    // The last two points evaluated, (log scale, margin), the newest last.
    let mut recent = [(good.0.ln(), good.1), (fail.0.ln(), fail.1)];
    let mut slow_steps = 0usize;
    loop {
        let (lg, lf) = (good_scale.ln(), fail_scale.ln());
        let width = lf - lg;
        if width <= closed {
            break;
        }
        let [(x0, m0), (x1, m1)] = recent;
        let slope = (m1 - m0) / (x1 - x0);
        let x = if slow_steps >= 3
            || width <= 4.0 * nudge
            || width > SECANT_FROM
            || !(slope < 0.0 && slope.is_finite())
        {
            slow_steps = 0;
            0.5 * (lg + lf)
        } else {
            let crossing = x1 - m1 / slope;
            // Past the crossing, away from the side of the newest point.
            let aimed = if m1 >= 0.0 {
                crossing + nudge
            } else {
                crossing - nudge
            };
            aimed.clamp(lg + 0.5 * nudge, lf - 0.5 * nudge)
        };
        let (m, payload) = evaluate(x.exp())?;
        spent += 1;
        recent = [recent[1], (x, m)];
        if m >= 0.0 {
            good_scale = x.exp();
            good_payload = payload;
        } else {
            fail_scale = x.exp();
            fail_payload = payload;
        }
        if fail_scale.ln() - good_scale.ln() > 0.5 * width {
            slow_steps += 1;
        }
    }
    Ok(ClosedBracket {
        good: (good_scale, good_payload),
        fail: (fail_scale, fail_payload),
        spent,
    })
}

/// Widest bracket (in the log of the scale, a ratio of 1.28) on which secant steps are
/// taken; a wider one is halved first, since far from the crossing a coverage curve is flat
/// or steep in turn (a sigmoid in the log of the band) and a secant through it lands poorly.
/// The grid of `tune` brackets far narrower (a ratio of 1.12).
const SECANT_FROM: f64 = 0.25;

/// A bracket closed by [`close_by_secant`]: its two ends as (scale, payload), and the
/// evaluations spent.
pub(crate) struct ClosedBracket<T> {
    pub good: (f64, T),
    pub fail: (f64, T),
    pub spent: usize,
}

fn point_of(
    scale: f64,
    limits: Vec<(String, f64)>,
    analysis: &Analysis,
    request: &TuneRequest,
) -> Result<TradeOffPoint, AnalysisError> {
    for wanted in &request.sites {
        if !analysis.sites.iter().any(|s| &s.name == wanted) {
            let names: Vec<&str> = analysis.sites.iter().map(|s| s.name.as_str()).collect();
            return Err(AnalysisError::invalid(
                RequestField::TuneSites,
                format!(
                    "no fault site '{wanted}' in the file; the sites are: {}",
                    names.join(", ")
                ),
            ));
        }
    }
    let site_coverage: Vec<(String, Option<Estimate>)> = analysis
        .sites
        .iter()
        .filter(|s| request.sites.is_empty() || request.sites.contains(&s.name))
        .map(|s| {
            let coverage = match request.figure {
                CoverageFigure::Dc => s.outcome.dc(),
                CoverageFigure::DcAllDangerous => Some(s.outcome.dc_all_dangerous()),
            };
            (s.name.clone(), coverage)
        })
        .collect();
    let weakest = site_coverage
        .iter()
        .filter_map(|(name, coverage)| coverage.map(|coverage| (name, coverage)))
        .min_by(|a, b| (a.1.value - a.1.error).total_cmp(&(b.1.value - b.1.error)));
    let (weakest_site, coverage) = match weakest {
        Some((name, coverage)) => (name.clone(), coverage),
        // No chosen site has a dangerous outcome: nothing to cover.
        None => (String::new(), Estimate::exact(1.0)),
    };
    Ok(TradeOffPoint {
        scale,
        limits,
        false_alarm: analysis.baseline.alarm(),
        meets: coverage.value - coverage.error >= request.target,
        coverage,
        weakest_site,
        site_coverage,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn synthetic(scale: f64, target: f64) -> TradeOffPoint {
        // A falling coverage exp(-s): it meets 0.5 exactly up to s = ln 2 (exact).
        let coverage = Estimate::new((-scale).exp(), 0.0);
        TradeOffPoint {
            scale,
            limits: Vec::new(),
            false_alarm: Estimate::new(0.0, 0.0),
            coverage,
            weakest_site: String::new(),
            site_coverage: Vec::new(),
            meets: coverage.value >= target,
        }
    }

    #[test]
    fn the_bracket_closes_around_the_crossing_in_fewer_steps_than_halving() {
        let mut request = TuneRequest::new(None, CoverageFigure::DcAllDangerous, 0.5);
        request.scale_rel_tol = 1e-6;
        let point_at = |s: f64| Ok(synthetic(s, 0.5));
        let (good, fail, spent) = close_bracket(
            synthetic(0.5, 0.5),
            synthetic(1.0, 0.5),
            &request,
            &point_at,
        )
        .unwrap();
        let root = std::f64::consts::LN_2;
        assert!(good.meets && !fail.meets);
        assert!(good.scale <= root && root < fail.scale);
        assert!(fail.scale / good.scale <= 1.0 + 1e-6);
        // Halving from a ratio of 2 to 1 + 1e-6 takes ceil(log2(ln 2 / 1e-6)) = 20 steps.
        assert!(spent <= 8, "{spent} analyses");
    }

    #[test]
    fn checks_are_taken_from_the_model_in_name_order() {
        let text = "name = \"t\"\nunit = \"mm\"\n\
                    [channels.a]\nsigma = 1.0\n[channels.b]\nsigma = 1.0\n\
                    [output]\nkind = \"mean\"\nof = [\"a\", \"b\"]\n\
                    [checks.up]\nkind = \"difference\"\nof = [\"a\", \"b\"]\nupper = 1.5\n\
                    [checks.ab]\nkind = \"difference\"\nof = [\"a\", \"b\"]\nlimit = 2\n\
                    [safety]\nlimit = 3.0\n";
        let arch = crate::model::load_str(text, "t.toml").unwrap();
        let all = checks_to_tune(&arch, None).unwrap();
        assert_eq!(all[0].name, "ab");
        assert_eq!(all[0].band, BandForm::Limit(2.0));
        assert_eq!(
            all[1].band,
            BandForm::Sides {
                lower: None,
                upper: Some(1.5)
            }
        );
        let e = checks_to_tune(&arch, Some("zz")).unwrap_err().to_string();
        assert!(e.contains("ab, up"), "{e}");
    }
}
