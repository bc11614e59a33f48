//! Errors of the analysis layer.

use thiserror::Error;

use crate::model::ModelError;
use crate::prob::ProbError;

/// What went wrong while analysing a compiled architecture.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum AnalysisError {
    /// The probability engine failed on one figure of one fault site (or the baseline).
    #[error("{context}: {source}")]
    Engine {
        /// Where in the analysis it happened, e.g. `fault site 'a_stuck', residual p_vu`.
        context: String,
        /// The engine's own error.
        #[source]
        source: ProbError,
    },
    /// The decomposition into linear cells and polytopes is larger than the limit.
    #[error(
        "{what} needs {found} {unit}, more than the limit of {limit}; \
         simplify the architecture (fewer checks or fewer order-statistic inputs)"
    )]
    TooLarge {
        /// What grew too large.
        what: String,
        /// The unit counted (cells, polytopes, samples).
        unit: &'static str,
        /// The limit.
        limit: usize,
        /// What the input needs.
        found: usize,
    },
    /// A sweep asks for more points than it may run.
    #[error(
        "{what} has {found} points, more than the limit of {limit}; use fewer points \
         (a smaller --points, fewer values in --vary or --series, or split the range into \
         several sweeps)"
    )]
    TooManyPoints {
        /// Which sweep, e.g. `the sweep grid`.
        what: String,
        /// The limit.
        limit: usize,
        /// The points asked for.
        found: usize,
    },
    /// The architecture, with the values a sweep or a tuning set in it, is not valid.
    #[error("{context}:\n{source}")]
    Model {
        /// Which values were set, e.g. `sweep point safety.limit = 0`.
        context: String,
        /// The model layer's diagnostics (boxed: they are large and rare).
        #[source]
        source: Box<ModelError>,
    },
    /// A field of a request to the analysis (a tuning, a sweep, a spread curve, a Monte
    /// Carlo run) is out of range or names nothing in the model.
    #[error("invalid request, {field}: {message}")]
    InvalidRequest {
        /// The field at fault, in the analysis's own terms (the command line maps it to its
        /// option).
        field: RequestField,
        /// What is wrong and how to fix it.
        message: String,
    },
    /// A compiled model whose parts do not fit together (e.g. a replaced channel outside the
    /// channels). A model loaded from a file never has one; only a model built by hand can.
    #[error("{context}: {message}; the compiled model is inconsistent")]
    InconsistentModel {
        /// Where, e.g. `fault site 'a_stuck'`.
        context: String,
        /// What does not fit.
        message: String,
    },
    /// A figure came out as NaN or infinite: the numbers of the model are too far apart in
    /// scale for double precision. Reported instead of printing a meaningless figure.
    #[error(
        "{context}: the computation gave a non-finite figure ({figure}); the numbers of the \
         architecture are too far apart in scale for double precision; bring means, sigmas \
         and limits within a few orders of magnitude of each other (e.g. by choosing the unit)"
    )]
    NotFinite {
        /// Where, e.g. `fault site 'a_stuck'`.
        context: String,
        /// Which figure.
        figure: String,
    },
    /// Neither the order-statistic engine nor the polytope engine can take the model.
    #[error("{message}")]
    Unsupported {
        /// Why each engine declines, and what to change.
        message: String,
    },
    /// The reference data compiled into the binary for `concord selftest` do not parse.
    #[error(
        "the selftest reference data built into concord cannot be read ({0}); \
         rebuild concord from an unmodified source tree"
    )]
    ReferenceData(String),
}

/// The field of an analysis request that an [`AnalysisError::InvalidRequest`] is about.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum RequestField {
    /// `TuneRequest::target`: the coverage target.
    TuneTarget,
    /// `TuneRequest::check`: the check to tune.
    TuneCheck,
    /// `TuneRequest::sites`: the fault sites that must meet the target.
    TuneSites,
    /// `TuneRequest::scale_range`: the range of scale factors searched.
    TuneScaleRange,
    /// `TuneRequest::curve_points`: the points of the trade-off curve.
    TuneCurvePoints,
    /// `TuneRequest::scale_rel_tol`: the relative tolerance of the bisection.
    TuneScaleTolerance,
    /// The confirmation rule tuned with the bands (needs a timing section).
    TuneConfirmation,
    /// The values of a sweep axis (`Axis::values`), named by the axis's key.
    AxisValues(String),
    /// `SweepPlan::series`: the key of the second axis.
    SweepSeries,
    /// The fault site of a spread curve.
    SpreadSite,
    /// The sigmas of a spread curve.
    SpreadSigmas,
    /// `MonteCarloOptions::samples` of an analysis by sampling (`analyze_montecarlo`).
    MonteCarloSamples,
    /// `MonteCarloOptions::samples` of a cross-check of an exact analysis (`verify`).
    VerifySamples,
    /// The tolerances of the inputs (`tolerances::over_box`).
    Tolerances,
}

impl std::fmt::Display for RequestField {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            RequestField::TuneTarget => f.write_str("the tuning's coverage target"),
            RequestField::TuneCheck => f.write_str("the check to tune"),
            RequestField::TuneSites => f.write_str("the fault sites of the tuning"),
            RequestField::TuneScaleRange => f.write_str("the tuning's range of scale factors"),
            RequestField::TuneCurvePoints => f.write_str("the points of the trade-off curve"),
            RequestField::TuneScaleTolerance => {
                f.write_str("the tuning's relative tolerance on the scale")
            }
            RequestField::TuneConfirmation => {
                f.write_str("the confirmation rule tuned with the bands")
            }
            RequestField::AxisValues(key) => write!(f, "the values of {key}"),
            RequestField::SweepSeries => f.write_str("the series key of the sweep"),
            RequestField::SpreadSite => f.write_str("the fault site of the spread curve"),
            RequestField::SpreadSigmas => f.write_str("the sigmas of the spread curve"),
            RequestField::MonteCarloSamples => f.write_str("the Monte Carlo sample count"),
            RequestField::VerifySamples => f.write_str("the cross-check's sample count"),
            RequestField::Tolerances => f.write_str("the tolerances of the inputs"),
        }
    }
}

impl AnalysisError {
    /// An [`AnalysisError::InvalidRequest`] about `field`.
    pub fn invalid(field: RequestField, message: impl Into<String>) -> Self {
        Self::InvalidRequest {
            field,
            message: message.into(),
        }
    }

    /// Wraps an engine error with the place of the analysis where it happened.
    pub fn engine(context: impl Into<String>, source: ProbError) -> Self {
        Self::Engine {
            context: context.into(),
            source,
        }
    }
}
