//! concord: exact diagnostic-coverage analysis of redundant measurement chains.
//!
//! The crate is layered; each layer depends only on those listed before it:
//!
//! - [`prob`]: the probability engine (normal and bivariate normal distributions, the
//!   probability of a correlated gaussian vector in a polytope, quadrature, minimisation).
//! - [`model`]: architecture files (TOML), the model graph, validation and the compiled
//!   piecewise-linear gaussian model.
//! - [`analysis`]: coverage figures per fault site, worst cases, baseline, hardware metrics,
//!   and an independent Monte Carlo cross-check.
//! - [`report`]: everything concord writes: the analysis as a table, JSON and CSV, the HTML
//!   report with its SVG charts and architecture diagram, the selftest summary, and the
//!   outputs of sweep, tune and compare.
//! - [`cli`]: command-line parsing and dispatch; `main.rs` only calls [`cli::run`].

pub mod analysis;
pub mod cli;
pub mod model;
pub mod prob;
pub mod report;
