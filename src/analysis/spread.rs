//! The figures of one gaussian fault site over the spread (sigma) of its amplitude: the
//! curve at given sigmas and the worst case over their range, found by the same scan and
//! refinement as `analyze` uses for an unknown sigma.

use rayon::prelude::*;
use serde::Serialize;

use crate::model::{Amplitude, CompiledModel};

use super::engine::{Engine, Scenario};
use super::error::{AnalysisError, RequestField};
use super::options::AnalysisOptions;
use super::outcome::Outcome;
use super::scenario::FaultScenario;
use super::site::{SiteResult, analyze_site};
use super::sweep::check_count;

/// One point of a spread curve.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SpreadPoint {
    /// The sigma of the fault amplitude.
    pub sigma: f64,
    /// The four figures at that sigma.
    #[serde(skip)]
    pub outcome: Outcome,
}

/// The figures of one gaussian fault site over the spread of its amplitude.
#[derive(Debug, Clone, PartialEq)]
pub struct SpreadCurve {
    /// The fault site.
    pub site: String,
    /// The mean of the amplitude (kept as in the file).
    pub mean: f64,
    /// The curve, in the order of the sigmas given.
    pub points: Vec<SpreadPoint>,
    /// The worst case over the swept range (largest residual, found by the same scan and
    /// refinement as `analyze` uses for an unknown sigma), when the range is not one point.
    pub worst: Option<SiteResult>,
}

/// The sigma range a spread sweep of `site` takes by default: the file's range for an
/// unknown sigma, otherwise the range `analyze` would search had the sigma been unknown
/// ([`crate::model::default_sigma_range`]).
///
/// # Errors
/// [`AnalysisError::InvalidRequest`] when the site does not exist or its amplitude is not
/// gaussian.
pub fn default_spread_range(
    model: &CompiledModel,
    site: &str,
) -> Result<(f64, f64), AnalysisError> {
    let (_, _, range) = gaussian_site(model, site)?;
    Ok(range)
}

/// `(index, mean, default range)` of a gaussian site.
fn gaussian_site(
    model: &CompiledModel,
    site: &str,
) -> Result<(usize, f64, (f64, f64)), AnalysisError> {
    let Some(index) = model.faults.iter().position(|f| f.name == site) else {
        let names: Vec<&str> = model.faults.iter().map(|f| f.name.as_str()).collect();
        return Err(AnalysisError::invalid(
            RequestField::SpreadSite,
            format!(
                "no fault site '{site}' in the file; the sites are: {}",
                names.join(", ")
            ),
        ));
    };
    match &model.faults[index].amplitude {
        Amplitude::Gaussian { mean, .. } => {
            let bands: Vec<(f64, f64)> = model.checks.iter().map(|c| (c.lower, c.upper)).collect();
            let range = crate::model::default_sigma_range(
                (model.safety_lower, model.safety_upper),
                &bands,
                model.full_scale,
            );
            Ok((index, *mean, range))
        }
        Amplitude::GaussianUnknownSigma {
            mean,
            sigma_lo,
            sigma_hi,
            ..
        } => Ok((index, *mean, (*sigma_lo, *sigma_hi))),
        _ => Err(AnalysisError::invalid(
            RequestField::SpreadSite,
            format!(
                "fault site '{site}' has a {} amplitude; a spread sweep needs a gaussian one \
                 (amplitude = {{ gaussian = {{ mean = .., sigma = .. }} }})",
                match &model.faults[index].amplitude {
                    Amplitude::Uniform { .. } => "uniform",
                    _ => "points",
                }
            ),
        )),
    }
}

/// The four figures of gaussian fault site `site` at every sigma of `sigmas` (each positive),
/// and the worst case over `[min, max]` of them. Points run in parallel; the result does not
/// depend on the thread count.
///
/// # Errors
/// [`AnalysisError::InvalidRequest`] for an unknown or non-gaussian site or a sigma that is
/// not positive; engine errors naming the site and sigma.
pub fn spread_curve(
    model: &CompiledModel,
    site: &str,
    sigmas: &[f64],
    options: &AnalysisOptions,
) -> Result<SpreadCurve, AnalysisError> {
    let (index, mean, _) = gaussian_site(model, site)?;
    if sigmas.is_empty() {
        return Err(AnalysisError::invalid(
            RequestField::SpreadSigmas,
            "a spread sweep needs at least one sigma",
        ));
    }
    check_count("sigma", sigmas.len())?;
    if let Some(s) = sigmas.iter().find(|s| !(s.is_finite() && **s > 0.0)) {
        return Err(AnalysisError::invalid(
            RequestField::SpreadSigmas,
            format!("{s} is not a positive finite sigma; give a range of positive values"),
        ));
    }
    let engine = Engine::new(model, options);
    let fault = &model.faults[index];
    let scenario = FaultScenario::new(model, fault)?;
    let points: Vec<SpreadPoint> = sigmas
        .par_iter()
        .map(|&sigma| {
            let outcome = engine
                .outcome(Scenario::Gaussian(&scenario, mean, sigma))
                .map(|(o, _)| o)
                .map_err(|e| match e {
                    AnalysisError::Engine { context, source } => AnalysisError::Engine {
                        context: format!("fault site '{site}' at sigma {sigma}, {context}"),
                        source,
                    },
                    other => other,
                })?;
            Ok(SpreadPoint { sigma, outcome })
        })
        .collect::<Result<_, AnalysisError>>()?;
    let lo = sigmas.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = sigmas.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let worst = if lo < hi {
        let mut searched = fault.clone();
        searched.amplitude = Amplitude::GaussianUnknownSigma {
            mean,
            sigma_lo: lo,
            sigma_hi: hi,
            defaulted: false,
        };
        Some(analyze_site(&engine, &searched, options, false)?)
    } else {
        None
    };
    Ok(SpreadCurve {
        site: site.to_string(),
        mean,
        points,
        worst,
    })
}
