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
    /// An option or argument of the analysis is out of range.
    #[error("invalid analysis option {option}: {message}")]
    InvalidOption {
        /// The option at fault, as the user spells it.
        option: String,
        /// What is wrong and how to fix it.
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

impl AnalysisError {
    /// Wraps an engine error with the place of the analysis where it happened.
    pub fn engine(context: impl Into<String>, source: ProbError) -> Self {
        Self::Engine {
            context: context.into(),
            source,
        }
    }
}
