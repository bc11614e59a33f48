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
//! bisects between the last grid point that meets the target and the first that does not.
//! A point counts as meeting the target only when its coverage minus its error bound does.

use rayon::prelude::*;
use serde::Serialize;

use crate::prob::Estimate;

use super::error::AnalysisError;
use super::options::AnalysisOptions;
use super::run::Analysis;
use super::sweep::analyze_with_overrides;

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

/// The band of one check as the file writes it, which decides the keys a scale sets.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub enum BandForm {
    /// `limit = L`: the band `[-L, L]`.
    Limit(f64),
    /// `lower` and/or `upper` (a missing side is open).
    Sides {
        /// The lower end, if any.
        lower: Option<f64>,
        /// The upper end, if any.
        upper: Option<f64>,
    },
}

/// One check the tuning moves.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TunedCheck {
    /// The check's name.
    pub name: String,
    /// Its band in the file.
    pub band: BandForm,
}

impl TunedCheck {
    /// The keys and values that scale this band by `k`: a `limit` is multiplied; a two-sided
    /// band keeps its centre and has its half-width multiplied; a one-sided band has its
    /// end multiplied.
    pub fn overrides(&self, k: f64) -> Vec<(String, f64)> {
        let key = |side: &str| format!("checks.{}.{side}", self.name);
        match &self.band {
            BandForm::Limit(l) => vec![(key("limit"), l * k)],
            BandForm::Sides {
                lower: Some(lo),
                upper: Some(hi),
            } => {
                let centre = 0.5 * (lo + hi);
                let half = 0.5 * (hi - lo);
                vec![
                    (key("lower"), centre - half * k),
                    (key("upper"), centre + half * k),
                ]
            }
            BandForm::Sides {
                lower: Some(lo),
                upper: None,
            } => vec![(key("lower"), lo * k)],
            BandForm::Sides {
                lower: None,
                upper: Some(hi),
            } => vec![(key("upper"), hi * k)],
            BandForm::Sides {
                lower: None,
                upper: None,
            } => Vec::new(),
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
    /// Relative tolerance of the bisection on the scale factor.
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
    /// The checks moved, with their bands in the file.
    pub checks: Vec<TunedCheck>,
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
    /// Notes for the analyst (e.g. a curve that is not monotone within its bounds).
    pub warnings: Vec<String>,
    /// Evaluations of the whole analysis spent.
    pub evaluations: usize,
}

/// The bands of the checks in the file's text (which keys the file uses).
///
/// # Errors
/// [`AnalysisError::InvalidOption`] when the named check does not exist or has no band.
pub fn checks_to_tune(text: &str, check: Option<&str>) -> Result<Vec<TunedCheck>, AnalysisError> {
    let table: toml::Table = toml::from_str(text).map_err(|e| AnalysisError::InvalidOption {
        option: "FILE".into(),
        message: format!("the file is not TOML: {e}"),
    })?;
    let checks = table.get("checks").and_then(|c| c.as_table());
    let number = |v: Option<&toml::Value>| -> Option<f64> {
        v.and_then(|v| v.as_float().or_else(|| v.as_integer().map(|i| i as f64)))
    };
    let mut list = Vec::new();
    if let Some(checks) = checks {
        for (name, body) in checks {
            if check.is_some_and(|c| c != name) {
                continue;
            }
            let body = body.as_table();
            let limit = number(body.and_then(|b| b.get("limit")));
            let lower = number(body.and_then(|b| b.get("lower")));
            let upper = number(body.and_then(|b| b.get("upper")));
            let band = match limit {
                Some(l) => BandForm::Limit(l),
                None => BandForm::Sides { lower, upper },
            };
            list.push(TunedCheck {
                name: name.clone(),
                band,
            });
        }
    }
    if list.is_empty() {
        let names: Vec<String> = checks
            .map(|c| c.keys().cloned().collect())
            .unwrap_or_default();
        return Err(AnalysisError::InvalidOption {
            option: "--check".into(),
            message: match check {
                Some(c) => format!(
                    "no check '{c}' in the file; the checks are: {}",
                    if names.is_empty() {
                        "none".to_string()
                    } else {
                        names.join(", ")
                    }
                ),
                None => "the file has no checks to tune".into(),
            },
        });
    }
    Ok(list)
}

/// The keys and values of all tuned checks at scale `k`.
fn overrides_at(checks: &[TunedCheck], k: f64) -> Vec<(String, f64)> {
    checks.iter().flat_map(|c| c.overrides(k)).collect()
}

/// Tunes the checks of the file `text` (named `path` in messages) to the request;
/// `progress` is called after every analysis (for a progress display).
///
/// # Errors
/// [`AnalysisError::InvalidOption`] for a bad request (unknown check or site, a target
/// outside (0, 1], a bad range); model or engine errors naming the values set.
pub fn tune(
    text: &str,
    path: &str,
    request: &TuneRequest,
    options: &AnalysisOptions,
    progress: &(dyn Fn() + Sync),
) -> Result<TuneResult, AnalysisError> {
    let bad = |option: &str, message: String| AnalysisError::InvalidOption {
        option: option.into(),
        message,
    };
    if !(request.target > 0.0 && request.target <= 1.0) {
        return Err(bad(
            "--target-dc",
            format!(
                "{} is not a coverage; give a fraction in (0, 1], e.g. 0.99",
                request.target
            ),
        ));
    }
    let (lo, hi) = request.scale_range;
    if !(lo.is_finite() && hi.is_finite() && lo > 0.0 && lo < hi) {
        return Err(bad(
            "--scale",
            format!("the scale range {lo} to {hi} must be positive and increasing"),
        ));
    }
    if request.curve_points < 2 || request.curve_points > super::sweep::MAX_SWEEP_POINTS {
        return Err(bad(
            "--points",
            format!(
                "{} curve points; give from 2 to {}",
                request.curve_points,
                super::sweep::MAX_SWEEP_POINTS
            ),
        ));
    }
    if !(request.scale_rel_tol > 0.0 && request.scale_rel_tol < 1.0) {
        return Err(bad(
            "scale_rel_tol",
            format!("{} must lie in (0, 1)", request.scale_rel_tol),
        ));
    }
    let checks = checks_to_tune(text, request.check.as_deref())?;
    let at = |k: f64| -> Result<TradeOffPoint, AnalysisError> {
        let overrides = overrides_at(&checks, k);
        let analysis = analyze_with_overrides(text, path, &overrides, options)?;
        progress();
        point_of(k, overrides, &analysis, request)
    };
    let grid = super::sweep::Axis::log("scale", lo, hi, request.curve_points)?.values;
    let curve: Vec<TradeOffPoint> = grid.par_iter().map(|&k| at(k)).collect::<Result<_, _>>()?;
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
        .ok_or_else(|| bad("--points", "the curve is empty".into()))?;
    let (chosen, first_failing, at_range_end) = match last_meeting {
        None => (None, None, false),
        Some(i) if i + 1 == curve.len() => (Some(curve[i].clone()), None, true),
        Some(i) => {
            let mut good = curve[i].clone();
            let mut fail = curve[i + 1].clone();
            while fail.scale / good.scale > 1.0 + request.scale_rel_tol {
                let mid = (good.scale * fail.scale).sqrt();
                let p = at(mid)?;
                evaluations += 1;
                if p.meets {
                    good = p;
                } else {
                    fail = p;
                }
            }
            (Some(good), Some(fail), false)
        }
    };
    Ok(TuneResult {
        request: request.clone(),
        checks,
        chosen,
        first_failing,
        best_reachable,
        at_range_end,
        curve,
        warnings,
        evaluations,
    })
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
            return Err(AnalysisError::InvalidOption {
                option: "--site".into(),
                message: format!(
                    "no fault site '{wanted}' in the file; the sites are: {}",
                    names.join(", ")
                ),
            });
        }
    }
    let site_coverage: Vec<(String, Option<Estimate>)> = analysis
        .sites
        .iter()
        .filter(|s| request.sites.is_empty() || request.sites.contains(&s.name))
        .map(|s| {
            let c = match request.figure {
                CoverageFigure::Dc => s.outcome.dc(),
                CoverageFigure::DcAllDangerous => Some(s.outcome.dc_all_dangerous()),
            };
            (s.name.clone(), c)
        })
        .collect();
    let weakest = site_coverage
        .iter()
        .filter_map(|(n, c)| c.map(|c| (n, c)))
        .min_by(|a, b| (a.1.value - a.1.error).total_cmp(&(b.1.value - b.1.error)));
    let (weakest_site, coverage) = match weakest {
        Some((n, c)) => (n.clone(), c),
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

    #[test]
    fn a_two_sided_band_keeps_its_centre() {
        let c = TunedCheck {
            name: "x".into(),
            band: BandForm::Sides {
                lower: Some(-1.0),
                upper: Some(3.0),
            },
        };
        assert_eq!(
            c.overrides(2.0),
            vec![
                ("checks.x.lower".to_string(), -3.0),
                ("checks.x.upper".to_string(), 5.0)
            ]
        );
    }

    #[test]
    fn checks_are_read_with_their_form() {
        let text = "[checks.ab]\nlimit = 2\n[checks.up]\nupper = 1.5\n";
        let all = checks_to_tune(text, None).unwrap();
        assert_eq!(all[0].band, BandForm::Limit(2.0));
        assert_eq!(
            all[1].band,
            BandForm::Sides {
                lower: None,
                upper: Some(1.5)
            }
        );
        let e = checks_to_tune(text, Some("zz")).unwrap_err().to_string();
        assert!(e.contains("ab, up"), "{e}");
    }
}
