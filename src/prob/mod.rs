//! The probability engine: everything concord computes is the probability that a
//! correlated gaussian vector lands in a polytope, possibly integrated over a fault
//! amplitude and optimised over an unknown spread.
//!
//! - [`normal`]: the standard normal CDF, its complement and quantile, accurate in both tails.
//! - [`bivariate`]: bivariate normal rectangle probabilities (Genz 2004).
//! - [`legendre`]: Gauss–Legendre rules of 6, 12 and 20 points; [`bivariate`] and
//!   [`shift_average`] use the 20-point rule, [`normal`] the 12-point one.
//! - [`polytope`]: `P(l <= A x <= u)` for `x ~ N(mu, Sigma)` (Genz 1992; Genz and Bretz 2009).
//! - [`strip`]: a standard normal pair in a convex polygon, exactly (the last two variables
//!   of the sequential conditioning).
//! - [`shift_average`]: a polytope whose random rows read one direction, averaged over a
//!   uniform shift of the mean, in closed form (a channel frozen at an arbitrary value).
//! - [`order`]: order statistics, range and difference checks of channels that are
//!   independent once a few shared terms are fixed, at polynomial cost in the number of
//!   channels (counts and one-dimensional integrals instead of orderings).
//! - [`vector_quadrature`]: adaptive Gauss–Kronrod over several integrands at once.
//! - [`debounce`]: confirmation rules over a run of samples (consecutive, m of the last n,
//!   up/down counters) as small Markov chains, and their fault-free alarm rates.
//! - [`feasibility`]: a verified bound on how deep a point can lie inside a polytope (a
//!   small simplex search checked by duality): proves a polytope empty, or thin.
//! - [`cholesky`]: pivoted Cholesky factor of a (possibly singular) covariance.
//! - [`lattice`]: randomised extensible lattice integration with a fixed seed.
//! - [`quadrature`]: adaptive Gauss–Kronrod integration (QUADPACK style).
//! - [`optimise`]: Brent's bounded minimisation and a scan that keeps every local minimum.
//! - [`tolerance`]: the named numerical tolerances shared by the engine.
//! - [`estimate`]: a value with a bound on its numerical error.
//! - [`rng`]: the seeded generator (SplitMix64) of the lattice shifts and the Monte Carlo engine.
//! - [`error`]: the errors of the engine.

pub mod bivariate;
pub mod cholesky;
pub mod debounce;
pub mod error;
pub mod estimate;
pub(crate) mod feasibility;
pub mod lattice;
pub mod legendre;
pub mod normal;
pub mod optimise;
pub mod order;
pub mod polytope;
pub mod quadrature;
pub mod rng;
pub mod shift_average;
pub mod strip;
pub mod tolerance;
pub mod vector_quadrature;

pub use error::ProbError;
pub use estimate::Estimate;

/// `x^n` by repeated multiplication in a fixed order. `f64::powi` is documented as of
/// unspecified precision, and the compiler folds it differently from the runtime routine,
/// so the same source gave results one unit in the last place apart in two builds; plain
/// products are rounded once each by IEEE 754 and give the same bits in every build.
pub fn int_pow(x: f64, n: u32) -> f64 {
    let mut result = 1.0;
    for _ in 0..n {
        result *= x;
    }
    result
}
