//! The analysis layer: coverage figures per fault site, the worst case over an unknown
//! spread, the fault-free baseline, hardware metrics, and an independent Monte Carlo engine.
//!
//! - [`cells`]: the output and checks split into linear cells.
//! - [`evaluate`]: each outcome as disjoint polytopes, evaluated for a gaussian scenario.
//! - [`scenario`]: a fault site as a family of gaussians in its amplitude.
//! - [`site`]: amplitude models (known and unknown sigma, uniform, points) per site.
//! - [`isolation`]: which channel a detection blames, and the architecture without it.
//! - [`metrics`]: SPFM, LFM, SFF, residual and latent FIT, ASIL targets.
//! - [`run`]: the whole exact analysis of a file.
//! - [`montecarlo`]: plain sampling through separate code, for verification.
//! - [`sweep`]: the analysis over values of one or two keys of the file.
//! - [`spread`]: one site's figures over the spread of its fault amplitude.
//! - [`tolerances`]: every figure's range over a box of input tolerances.
//! - [`tune`]: the widest comparator band that meets a coverage target.
//! - [`compare`]: several architectures reduced to one line each.
//! - [`outcome`]: the four probabilities and the coverage figures derived from them.
//! - [`sensitivity`]: the derivative of every figure by every numeric input.
//! - [`selftest`]: the built-in validation suite against outside references.
//! - [`options`]: the numerical settings of an analysis (tolerances and budgets).
//! - [`error`]: the errors of the analysis layer.

pub mod blame;
pub mod cells;
pub mod compare;
pub mod engine;
pub mod error;
pub mod evaluate;
pub mod isolation;
pub mod isolation_sampling;
pub mod metrics;
pub mod montecarlo;
pub mod options;
pub mod ordered;
pub mod outcome;
pub mod run;
pub mod scenario;
pub mod selftest;
pub mod sensitivity;
pub mod site;
pub mod spread;
pub mod sweep;
pub mod timed_sampling;
pub mod timed_tune;
pub mod timing;
mod timing_split;
pub mod tolerances;
pub mod tune;
pub mod uniform;
pub mod workload;

pub use error::{AnalysisError, RequestField};
pub use options::AnalysisOptions;
pub use outcome::{Figure, Outcome};
pub use run::{Analysis, analyze};
