//! Named numerical tolerances of the engine, in one place (no bare epsilons elsewhere).

/// Relative rounding error assumed for a value computed in closed form from a few
/// well-conditioned floating-point operations (a small multiple of machine epsilon).
pub const ROUNDING_REL: f64 = 64.0 * f64::EPSILON;

/// Absolute error bound of the bivariate normal rectangle (Genz 2004 reports about 1e-15
/// for each CDF value; a rectangle combines up to four).
pub const BIVARIATE_ABS: f64 = 5e-15;

/// A pivot of the Cholesky factor below this fraction of its own coordinate's variance is
/// treated as zero: the coordinate carries no randomness beyond the others.
pub const CHOLESKY_PIVOT_REL: f64 = 1e-12;

/// A constraint row whose random part has a norm below this fraction of the sum of its
/// terms' standard deviations (`sum |a_i| sd_i`) is treated as deterministic: the terms
/// cancel to rounding.
pub const DEGENERATE_ROW_REL: f64 = 1e-10;

/// Two constraint rows whose unit directions agree to this much (Euclidean distance) are
/// merged into one, their difference counted in the error bound. A hundred times the
/// rounding of a normalised direction: at 1e-12 two rows tilted by 1e-12 were merged into a
/// zero-width slab and a wedge of probability 1.6e-13 reported as 0 ± 0.
pub const PARALLEL_ROW_ABS: f64 = 1e-14;

/// Relative asymmetry allowed in a covariance matrix before it is rejected.
pub const SYMMETRY_REL: f64 = 1e-10;

/// QUADPACK's rounding floor for the error of one Gauss–Kronrod interval: `50 eps` times
/// the integral of `|f|` over it (Piessens et al. 1983, routine QK21).
pub const QUADPACK_ROUNDOFF_REL: f64 = 50.0 * f64::EPSILON;

/// An interval narrower than this fraction of the magnitude of its ends is not bisected any
/// more: its nodes would no longer be distinct in floating point.
pub const QUADRATURE_MIN_WIDTH_REL: f64 = 128.0 * f64::EPSILON;

/// Smallest relative tolerance on the abscissa that Brent's minimisation accepts; smaller
/// requests are raised to it so that steps never fall below the spacing of doubles.
/// (Brent 1973, ch. 5: the minimiser of a smooth function is only determined to about
/// `sqrt(eps)` relative, so tolerances below that buy nothing for smooth functions.)
pub const BRENT_X_REL_FLOOR: f64 = 4.0 * f64::EPSILON;

/// Absolute part of Brent's abscissa tolerance, as a fraction of the bracket's width times
/// the relative tolerance, so that a minimum at or near zero still terminates.
pub const BRENT_X_ABS_FRACTION: f64 = 1e-6;
/// An eigenvalue of a correlation matrix above minus this counts as non-negative (rounding of
/// the eigenvalue iteration on a singular but valid matrix, e.g. rho = 1).
pub const CORRELATION_PSD_ABS: f64 = 1e-10;

/// Weights of a `points` amplitude or a `weighted` output must sum to 1 within this.
pub const WEIGHT_SUM_ABS: f64 = 1e-9;
/// A Schur-complement (conditional) variance below `-PSD_NEGATIVE_REL` times the largest
/// variance is a negative direction beyond rounding: the covariance is not positive
/// semi-definite.
pub const PSD_NEGATIVE_REL: f64 = 1e-10;

/// A unit constraint row whose component outside the span of the rows already used as
/// pivots is shorter than this depends linearly on them: it shares their leading variable
/// in the sequential conditioning instead of opening a new one, and the dropped component
/// is added to the error bound. A thousand times the rounding of the Householder steps:
/// a larger value dropped real geometry (a band of width 1e-8 tilted by 8e-11, channel
/// sigmas 1e-4 and 1e6 in one file) by more than the bounds allowed.
pub const LINEAR_DEPENDENCE_ABS: f64 = 1e-13;

/// A set of planes (normals scaled to unit length) whose elimination meets a pivot below
/// this is singular: the planes meet in no single point (vertex enumeration).
pub const SINGULAR_PLANES_REL: f64 = 1e-10;

/// The error of a randomised lattice estimate is this many standard errors of the means
/// over the random shifts. With 12 shifts (11 degrees of freedom) a Student t quantile of
/// 3.5 leaves about 0.5 % two-sided; Genz and Bretz (2009, sec. 4.2.2) use 2.5 to 3.5.
pub const LATTICE_SPREAD_FACTOR: f64 = 3.5;
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

/// Subinterval budget of the adaptive Gauss–Kronrod rule over the first of three
/// conditioning variables (the nested path of the polytope engine); each kink of the
/// integrand costs about a dozen bisections at the default tolerances.
pub const NESTED_MAX_INTERVALS: usize = 400;

/// Relative allowance with which a computed vertex of a three-variable polytope still
/// counts as satisfying the other rows (rounding of a 3 x 3 solve).
pub const VERTEX_SLACK_REL: f64 = 1e-9;

/// A polytope whose smallest one-row probability is at most this large is also screened
/// with pairs of rows (bivariate rectangles) before it is integrated: below it, the pair
/// bound has a fair chance to fall within the absolute tolerance.
pub const PAIR_SCREEN_ABS: f64 = 1e-3;

/// Points (over all shifts: 12 x 2^12) the lattice rule spends on a polytope of four
/// conditioning variables before the nested rule takes over. Measured on the four-channel
/// example: most of its polytopes settle within a few thousand points, and those that do not
/// needed up to 3.1 million (kinks where rows trade places converge slowly on a lattice)
/// where the nested rule took 10 to 80 ms; 49 152 gave the shortest run of the budgets
/// tried (24 576: 15.2 s, 49 152: 12.7 s, 98 304: 14.8 s; lattice only: 51.6 s).
pub const LATTICE_POINTS_BEFORE_NESTED: usize = 49_152;

/// Subinterval budget of each inner Gauss–Kronrod rule of the nested path (the second of
/// four conditioning variables).
pub const NESTED_INNER_MAX_INTERVALS: usize = 100;

/// A later row whose conditional slab probability switches, as a function of the variable
/// being integrated, over less than this share of that variable's probability mass gets
/// breakpoints around its switch (the nested path): a switch that narrow can otherwise fall
/// between the Kronrod nodes, and the error estimate cannot see what it never samples.
pub const NESTED_NARROW_SWITCH: f64 = 0.05;

/// Factor on the Kronrod error estimate of the nested rule, which aims this much tighter
/// than asked: the estimate is a heuristic and fell short of the true error by 2.4 times in
/// a case the fuzzing found (tests/fuzz_found/kronrod_estimate_short.toml).
pub const NESTED_ESTIMATE_SAFETY: f64 = 4.0;

/// Multiples of a narrow switch's width at which the nested path places breakpoints on
/// either side of its centre: inside the outer ones the switch is fully resolved, beyond
/// them the slab probability differs from 0 or 1 by less than `Phi(-8)` ~ 6e-16.
pub const NESTED_SWITCH_STEPS: [f64; 3] = [0.0, 2.5, 8.0];

/// Largest number of plane sets whose meeting points the nested path enumerates to find
/// the vertices of a polytope; past it the polytope goes to the lattice rule.
pub const NESTED_MAX_PLANE_SETS: u128 = 20_000;

/// Pieces of a uniformly shifted one-direction polytope over which the argument of the normal
/// CDF moves by less than this are integrated by 20-point Gauss–Legendre, not as a
/// difference of antiderivatives (which would cancel).
pub const SHIFT_SHORT_PIECE: f64 = 0.5;

/// Rounding allowance per term of the closed-form average over a uniform shift, relative to
/// the term (a few hundred ulps: the normal CDF's own error and the arithmetic of a term).
pub const SHIFT_TERM_REL: f64 = 256.0 * f64::EPSILON;

/// Phase 1 of the simplex search in [`crate::prob::feasibility`] counts as feasible when
/// the artificial variables sum to at most this (the equations have unit normals for
/// coefficients and a right side of 0, or all ones and a right side of 1).
pub const SIMPLEX_FEASIBLE_ABS: f64 = 1e-9;

/// A reduced cost of the simplex search counts as negative below this times the largest
/// cost (smaller ones are rounding, and entering on them could cycle).
pub const SIMPLEX_COST_REL: f64 = 1e-12;

/// Smallest tableau entry the simplex search pivots on. The margin bound is verified
/// afresh from the multipliers, so these three only decide how good the bound gets, never
/// whether it holds.
pub const SIMPLEX_PIVOT_ABS: f64 = 1e-11;
