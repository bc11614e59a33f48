//! Sensitivity of every figure to every numeric input of a file: the derivative of each
//! site's `dc`, `dc_all_dangerous` and residual rate, of the metrics and of the fault-free
//! false alarm, with respect to each number that an override can set, with an error bound,
//! and the elasticity (relative change per relative change).
//!
//! Method: central differences of whole analyses at steps `h` and `2h`, combined by
//! Richardson extrapolation, `D = (4 D(h) - D(2h)) / 3`. The error bound adds the truncation
//! estimate `|D(h) - D(2h)| / 3` (the change of the first-order estimate) and the figures' own
//! bounds carried through the difference formula. Near an input's edge (a sigma near zero, a
//! correlation near one) the one-sided second-order formula is used. The step is a small part
//! of the input (`STEP_REL`), or of a natural scale for an input of zero: the smallest
//! channel sigma for inputs in the file's unit, one for dimensionless ones (gains, weights,
//! correlations, latent coverages).
//!
//! A worst case over an unknown sigma is differentiated with the sigma held at its worst
//! value: at an interior maximum the derivative of the maximum is the partial derivative
//! there (the envelope theorem; Milgrom and Segal 2002, Econometrica 70(2), theorem 1, recalled
//! from memory). This also spares the scan at every step. Figures that the worst sigma does
//! not maximise (`dc`, the LFM) are differentiated with it held too, and marked. A worst case at an end of its range
//! is flagged in the cautions. Timing and isolation sections are left out: these are the
//! one-sample figures.

use rayon::prelude::*;

use crate::model::{Amplitude, Architecture, CompiledModel};
use crate::prob::Estimate;

use super::error::AnalysisError;
use super::options::AnalysisOptions;
use super::run::{Analysis, analyze};

/// Step of a finite difference relative to the input (or to its natural scale).
pub const STEP_REL: f64 = 1e-4;

/// One figure of an analysis, named.
#[derive(Debug, Clone, PartialEq)]
pub struct FigureValue {
    /// The fault site, or `None` for the metrics and the fault-free false alarm.
    pub site: Option<String>,
    /// `dc`, `dc_all_dangerous`, `residual_fit`, `spfm`, `lfm`, `false_alarm`.
    pub figure: &'static str,
    /// The value with its bound.
    pub value: Estimate,
}

/// The derivative of one figure with respect to one input.
#[derive(Debug, Clone, PartialEq)]
pub struct Sensitivity {
    /// The dotted key of the input.
    pub key: String,
    /// The input's value in the file.
    pub input: f64,
    /// The fault site, or `None` for the metrics and the false alarm.
    pub site: Option<String>,
    /// The figure.
    pub figure: &'static str,
    /// The figure's value.
    pub value: f64,
    /// d figure / d input.
    pub derivative: f64,
    /// Bound of the derivative: truncation estimate plus the figures' own bounds.
    pub error: f64,
    /// `derivative * input / value`, when both are non-zero.
    pub elasticity: Option<f64>,
    /// True when the figure is taken at a worst sigma it does not itself maximise (`dc`, and
    /// the LFM, of a site of unknown spread): the derivative holds that sigma fixed and
    /// leaves out how the worst sigma moves with the input.
    pub sigma_held: bool,
}

/// Every sensitivity of a file, ranked within each figure by the size of the effect.
#[derive(Debug, Clone, PartialEq)]
pub struct SensitivityAnalysis {
    /// Ranked: figures in analysis order, inputs by decreasing |elasticity| (then
    /// |derivative x input|).
    pub rows: Vec<Sensitivity>,
    /// Statements the reader needs (worst cases at a range end, inputs left out).
    pub cautions: Vec<String>,
    /// The inputs considered.
    pub inputs: usize,
}

/// The figures of an analysis in a fixed order.
pub fn figures_of(a: &Analysis) -> Vec<FigureValue> {
    let mut out = Vec::new();
    for s in &a.sites {
        if let Some(dc) = s.outcome.dc() {
            out.push(FigureValue {
                site: Some(s.name.clone()),
                figure: "dc",
                value: dc,
            });
        }
        out.push(FigureValue {
            site: Some(s.name.clone()),
            figure: "dc_all_dangerous",
            value: s.outcome.dc_all_dangerous(),
        });
        out.push(FigureValue {
            site: Some(s.name.clone()),
            figure: "residual_fit",
            value: s.residual_fit(),
        });
    }
    let m = &a.metrics;
    for (figure, value) in [
        ("spfm", m.spfm),
        ("lfm", m.lfm),
        ("residual_fit", m.residual_fit),
        ("false_alarm", a.baseline.alarm()),
    ] {
        out.push(FigureValue {
            site: None,
            figure,
            value,
        });
    }
    out
}

/// Whether an input is a pure number (gain, weight, correlation, coverage) rather than a
/// quantity in the file's unit.
fn dimensionless(key: &str) -> bool {
    key.ends_with(".rho")
        || key.ends_with("latent_coverage")
        || key.ends_with(".fit")
        || key.contains(".from.")
        || key.contains(".hits.")
        || key.contains(".of.")
}

/// The model of `arch` with `overrides`, the unknown sigmas pinned (`pins`), and timing
/// and isolation left out. `None` when the overrides make the file invalid.
fn pinned_model(
    arch: &Architecture,
    pins: &[(String, f64)],
    overrides: &[(String, f64)],
) -> Option<CompiledModel> {
    let mut all = pins.to_vec();
    all.extend_from_slice(overrides);
    let mut model = arch.with_overrides(&all).ok()?.model;
    model.timing = None;
    model.isolation = None;
    Some(model)
}

/// The analysis of [`pinned_model`]; `None` when the overrides make the file invalid.
fn pinned_analysis(
    arch: &Architecture,
    pins: &[(String, f64)],
    overrides: &[(String, f64)],
    options: &AnalysisOptions,
) -> Result<Option<Analysis>, AnalysisError> {
    let Some(model) = pinned_model(arch, pins, overrides) else {
        return Ok(None);
    };
    analyze(&model, options, false).map(Some)
}

/// The values and bounds of the figures, matched to `names` (a figure missing at a step,
/// such as a `dc` that became undefined, gives `None`).
fn matched(a: &Analysis, names: &[FigureValue]) -> Vec<Option<Estimate>> {
    let found = figures_of(a);
    names
        .iter()
        .map(|n| {
            found
                .iter()
                .find(|f| f.site == n.site && f.figure == n.figure)
                .map(|f| f.value)
        })
        .collect()
}

/// The sensitivity of every figure of `arch` to every numeric input.
///
/// # Errors
/// The base analysis's errors.
pub fn sensitivity(
    arch: &Architecture,
    options: &AnalysisOptions,
) -> Result<SensitivityAnalysis, AnalysisError> {
    let mut base_model = arch.model.clone();
    base_model.timing = None;
    base_model.isolation = None;
    let base = analyze(&base_model, options, false)?;
    let names = figures_of(&base);
    let mut cautions = Vec::new();
    // The unknown sigmas held at their worst values (the envelope theorem).
    let mut pins = Vec::new();
    let mut searched: Vec<String> = Vec::new();
    for (fault, site) in base_model.faults.iter().zip(&base.sites) {
        if let (Amplitude::GaussianUnknownSigma { .. }, Some(w)) = (&fault.amplitude, &site.worst) {
            searched.push(fault.name.clone());
            pins.push((
                format!("faults.{}.amplitude.gaussian.sigma", fault.name),
                w.sigma,
            ));
            if w.local_maxima.first().is_some_and(|m| m.at_range_end) {
                cautions.push(format!(
                    "the worst case of '{}' sits at an end of its sigma range ({}): the \
                     derivatives hold that sigma, while the true worst case would move with the \
                     range",
                    fault.name, w.sigma
                ));
            }
        }
    }
    let scale = base_model
        .own_sigmas
        .iter()
        .copied()
        .filter(|s| *s > 0.0)
        .fold(f64::INFINITY, f64::min);
    let scale = if scale.is_finite() { scale } else { 1.0 };
    let inputs = arch.numeric_inputs();
    // The analysis at the held sigmas: the template that a change of one fault site's
    // inputs edits (its other sites and the baseline do not move).
    let pinned_base =
        pinned_analysis(arch, &pins, &[], options)?.ok_or_else(|| AnalysisError::Unsupported {
            message: "the file with its unknown sigmas held at their worst values is not valid"
                .into(),
        })?;
    let per_input: Vec<Result<InputRows, AnalysisError>> = inputs
        .par_iter()
        .map(|(key, x)| {
            let natural = if dimensionless(key) { 1.0 } else { scale };
            let h = STEP_REL * x.abs().max(natural);
            let reach = Reach::of(key, &base_model.faults);
            let at = |k: f64| -> Result<Option<Vec<Option<Estimate>>>, AnalysisError> {
                let set = [(key.clone(), x + k * h)];
                let found = match reach {
                    Reach::Everything => pinned_analysis(arch, &pins, &set, options)?,
                    Reach::Site(i) => site_analysis(arch, &pins, &set, &pinned_base, i, options)?,
                    Reach::Rate(i) => rate_analysis(arch, &set, &pinned_base, i),
                };
                Ok(found.map(|a| matched(&a, &names)))
            };
            let (p1, m1, p2, m2) = (at(1.0)?, at(-1.0)?, at(2.0)?, at(-2.0)?);
            let centre = || -> Result<Option<Vec<Option<Estimate>>>, AnalysisError> {
                Ok(Some(matched(&pinned_base, &names)))
            };
            // Which formula: central when both sides are valid, else one-sided.
            let scheme = match (&p1, &m1, &p2, &m2) {
                (Some(_), Some(_), Some(_), Some(_)) => Scheme::Central,
                (Some(_), _, Some(_), _) => Scheme::Forward,
                (_, Some(_), _, Some(_)) => Scheme::Backward,
                _ => {
                    return Ok((
                        Vec::new(),
                        Some(format!(
                            "{key}: the file is not valid on either side of {x}; no derivative"
                        )),
                    ));
                }
            };
            let c = match scheme {
                Scheme::Central => None,
                _ => centre()?,
            };
            let mut rows = Vec::new();
            for (i, n) in names.iter().enumerate() {
                let get = |v: &Option<Vec<Option<Estimate>>>| v.as_ref().and_then(|v| v[i]);
                let d = match scheme {
                    Scheme::Central => central(get(&p1), get(&m1), get(&p2), get(&m2), h),
                    Scheme::Forward => one_sided(get(&c), get(&p1), get(&p2), h),
                    Scheme::Backward => one_sided(get(&c), get(&m1), get(&m2), -h),
                };
                let Some((derivative, error)) = d else {
                    continue;
                };
                let value = n.value.value;
                let unknown_site =
                    |site: &Option<String>| site.as_ref().is_some_and(|s| searched.contains(s));
                let sigma_held = match (n.site.as_ref(), n.figure) {
                    (Some(_), "dc") => unknown_site(&n.site),
                    (None, "lfm") => !searched.is_empty(),
                    _ => false,
                };
                let elasticity = (value != 0.0 && *x != 0.0).then(|| derivative * x / value);
                rows.push(Sensitivity {
                    key: key.clone(),
                    input: *x,
                    site: n.site.clone(),
                    figure: n.figure,
                    value,
                    derivative,
                    error,
                    elasticity,
                    sigma_held,
                });
            }
            let note = (scheme != Scheme::Central).then(|| {
                format!("{key}: one-sided differences (the file is not valid on one side of {x})")
            });
            Ok((rows, note))
        })
        .collect();
    let mut rows = Vec::new();
    for r in per_input {
        let (mut found, note) = r?;
        rows.append(&mut found);
        cautions.extend(note);
    }
    if !searched.is_empty() {
        cautions.push(format!(
            "sites of unknown spread ({}): the residual, dc_all_dangerous and SPFM are \
             differentiated as worst cases (exact by the envelope theorem: the worst sigma is \
             held, and its own movement adds nothing at an interior maximum); their dc and the \
             LFM are not what the worst sigma maximises, so their derivatives (marked \
             sigma_held) leave out how the worst sigma moves with the input",
            searched.join(", ")
        ));
    }
    cautions.push(
        "derivatives are of the one-sample figures (timing and isolation sections left out); \
         each holds for small changes only: a figure with a kink (a band edge, a worst case \
         that jumps to another local maximum) can change faster further away"
            .into(),
    );
    // Rank: figures in analysis order, within each the largest effects first.
    let order = |r: &Sensitivity| {
        names
            .iter()
            .position(|n| n.site == r.site && n.figure == r.figure)
            .unwrap_or(usize::MAX)
    };
    let effect = |r: &Sensitivity| {
        r.elasticity
            .map_or((r.derivative * r.input).abs(), f64::abs)
    };
    rows.sort_by(|a, b| {
        order(a)
            .cmp(&order(b))
            .then(effect(b).total_cmp(&effect(a)))
            .then(a.key.cmp(&b.key))
    });
    Ok(SensitivityAnalysis {
        rows,
        cautions,
        inputs: inputs.len(),
    })
}

/// The rows of one input, and a note when it needed one-sided differences or none.
type InputRows = (Vec<Sensitivity>, Option<String>);

/// What a change of one input can move.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Reach {
    /// Any figure: the whole file is analysed again.
    Everything,
    /// Only the figures of fault site `i` (and the metrics): that site is analysed again.
    Site(usize),
    /// Only the rates of site `i` (its `fit` or `latent_coverage`): no probability moves,
    /// the metrics are recomputed from the same outcomes.
    Rate(usize),
}

impl Reach {
    fn of(key: &str, faults: &[crate::model::CompiledFault]) -> Reach {
        let Some(rest) = key.strip_prefix("faults.") else {
            return Reach::Everything;
        };
        let Some(i) = faults.iter().position(|f| {
            rest.strip_prefix(f.name.as_str())
                .is_some_and(|r| r.starts_with('.'))
        }) else {
            return Reach::Everything;
        };
        if rest.ends_with(".fit") || rest.ends_with(".latent_coverage") {
            Reach::Rate(i)
        } else {
            Reach::Site(i)
        }
    }
}

/// The pinned base analysis with fault site `i` analysed again under `overrides`.
fn site_analysis(
    arch: &Architecture,
    pins: &[(String, f64)],
    overrides: &[(String, f64)],
    base: &Analysis,
    i: usize,
    options: &AnalysisOptions,
) -> Result<Option<Analysis>, AnalysisError> {
    let Some(mut model) = pinned_model(arch, pins, overrides) else {
        return Ok(None);
    };
    let Some(fault) = model.faults.get(i).cloned() else {
        return Ok(None);
    };
    model.faults = vec![fault];
    let one = analyze(&model, options, false)?;
    let mut out = base.clone();
    if let (Some(slot), Some(site)) = (out.sites.get_mut(i), one.sites.into_iter().next()) {
        *slot = site;
    }
    out.metrics = super::metrics::metrics(&out.sites);
    Ok(Some(out))
}

/// The pinned base analysis with the failure rate or latent coverage of site `i` as
/// `overrides` set them (the file is read with them, so that a value out of range is
/// refused as in any analysis).
fn rate_analysis(
    arch: &Architecture,
    overrides: &[(String, f64)],
    base: &Analysis,
    i: usize,
) -> Option<Analysis> {
    let edited = arch.with_overrides(overrides).ok()?;
    let fault = edited.model.faults.get(i)?;
    let mut out = base.clone();
    let site = out.sites.get_mut(i)?;
    site.fit = fault.fit;
    site.latent_coverage = fault.latent_coverage;
    out.metrics = super::metrics::metrics(&out.sites);
    Some(out)
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Scheme {
    Central,
    Forward,
    Backward,
}

/// Richardson-extrapolated central difference from `f(x + h)`, `f(x - h)`, `f(x + 2h)`,
/// `f(x - 2h)`, with its bound (see the module header).
fn central(
    p1: Option<Estimate>,
    m1: Option<Estimate>,
    p2: Option<Estimate>,
    m2: Option<Estimate>,
    h: f64,
) -> Option<(f64, f64)> {
    let (p1, m1, p2, m2) = (p1?, m1?, p2?, m2?);
    let d1 = (p1.value - m1.value) / (2.0 * h);
    let d2 = (p2.value - m2.value) / (4.0 * h);
    let d = (4.0 * d1 - d2) / 3.0;
    let noise = 4.0 / 3.0 * (p1.error + m1.error) / (2.0 * h)
        + 1.0 / 3.0 * (p2.error + m2.error) / (4.0 * h);
    Some((d, (d1 - d2).abs() / 3.0 + noise))
}

/// The one-sided second-order difference `(-3 f(x) + 4 f(x + h) - f(x + 2h)) / (2h)` (`h`
/// negative for the backward one), with the change from the first-order difference as its
/// truncation estimate.
fn one_sided(
    c: Option<Estimate>,
    p1: Option<Estimate>,
    p2: Option<Estimate>,
    h: f64,
) -> Option<(f64, f64)> {
    let (c, p1, p2) = (c?, p1?, p2?);
    let d = (-3.0 * c.value + 4.0 * p1.value - p2.value) / (2.0 * h);
    let first = (p1.value - c.value) / h;
    let noise = (3.0 * c.error + 4.0 * p1.error + p2.error) / (2.0 * h.abs());
    Some((d, (d - first).abs() + noise))
}
