//! Named numerical tolerances of the engine, in one place (no bare epsilons elsewhere).

/// Relative rounding error assumed for a value computed in closed form from a few
/// well-conditioned floating-point operations (a small multiple of machine epsilon).
pub const ROUNDING_REL: f64 = 64.0 * f64::EPSILON;

/// Absolute error bound of the bivariate normal rectangle (Genz 2004 reports about 1e-15
/// for each CDF value; a rectangle combines up to four).
pub const BIVARIATE_ABS: f64 = 5e-15;

/// A pivot of the Cholesky factor below this fraction of the largest diagonal entry is
/// treated as zero: the direction carries no randomness.
pub const CHOLESKY_PIVOT_REL: f64 = 1e-12;

/// A constraint row whose random part has a norm below this fraction of its full norm is
/// treated as deterministic.
pub const DEGENERATE_ROW_REL: f64 = 1e-10;

/// Two constraint rows whose unit directions agree to this much are merged into one.
pub const PARALLEL_ROW_ABS: f64 = 1e-12;

/// Relative asymmetry allowed in a covariance matrix before it is rejected.
pub const SYMMETRY_REL: f64 = 1e-10;

/// A correlation outside `[-1, 1]` by at most this much is taken as rounding in its
/// computation and clamped to the nearest end; beyond it the correlation is invalid.
pub const CORRELATION_SLACK: f64 = 1e-12;

/// Error bound of one bivariate upper-orthant term relative to the largest quantity that
/// entered it (Genz 2004 reports about 1e-15 absolute; the relative form, measured against
/// mpmath in `tests/prob_bivariate.rs`, is what keeps tail probabilities meaningful).
pub const BIVARIATE_ORTHANT_REL: f64 = 1e-13;

/// Absolute error floor of one bivariate upper-orthant term that is a difference of larger
/// terms (Genz 2004: about 1e-15; measured against mpmath in `tests/prob_bivariate.rs`).
pub const BIVARIATE_ORTHANT_ABS: f64 = 1e-15;
