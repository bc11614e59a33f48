//! The probability that a gaussian vector lands in a polytope:
//! `P(l_i <= a_i . x <= u_i for all i)` for `x ~ N(mu, Sigma)`, `Sigma` positive
//! semi-definite (possibly singular), up to [`MAX_DIM`] coordinates and [`MAX_ROWS`] rows.
//!
//! Method.
//! 1. `Sigma = L L^T` by a pivoted Cholesky factor of rank `r` ([`cholesky`]), so
//!    `x = mu + L z` with `z` standard normal in `r` dimensions.
//! 2. Row `a_i` becomes `b_i = a_i L` with its band shifted by `a_i . mu`. A row whose
//!    random terms cancel (relative [`tolerance::DEGENERATE_ROW_REL`] to the sum of their
//!    sizes, so rows of any scale are judged alike) is deterministic:
//!    it contributes exactly 1 or 0 by [`Band::contains`] on `a_i . mu`, open ends honoured.
//! 3. Random rows are normalised to unit length and parallel or antiparallel rows merged
//!    ([`tolerance::PARALLEL_ROW_ABS`]), intersecting their bands.
//! 4. No random row: probability 1. One direction: the exact normal interval. Two
//!    directions: the bivariate normal rectangle with the cosine of the two directions as
//!    correlation. Otherwise Genz's sequential conditioning (Genz 1992, J. Comput. Graph.
//!    Stat. 1:141-149; Genz and Bretz 2009, *Computation of Multivariate Normal and t
//!    Probabilities*, Springer, ch. 4) on the rows made lower-trapezoidal by Householder
//!    reflections of the `z` variables, pivoting by the smallest expected conditional
//!    probability first (Genz and Bretz 2009, sec. 4.1.3); rows that depend linearly on
//!    the pivots so far share the last pivot's variable (the singular case of that
//!    section: their bounds combine, max of lowers and min of uppers). The integral over
//!    the unit cube is done by the randomised lattice rule of [`lattice`], deterministic
//!    for a given seed.
//!
//! 5. The last two variables of the conditioning are integrated exactly as a polygon
//!    probability of a standard normal pair ([`crate::prob::strip`]): with two variables that is the
//!    answer ([`IntegrationPath::Planar`]); with three, the first variable is integrated by adaptive
//!    Gauss–Kronrod with breakpoints at the projections of the polytope's vertices and
//!    wherever a later row, or a pair of them, switches over a small share of the mass
//!    (`Plan::switches`; nearly parallel directions make such switches narrow)
//!    ([`IntegrationPath::Nested`], deterministic, error four times the Kronrod estimate), unless
//!    the vertex enumeration would pass [`tolerance::NESTED_MAX_PLANE_SETS`] sets of planes
//!    (then the lattice rule); with four or more, the lattice rule runs over two
//!    dimensions fewer than the variables.
//!    Four variables that the lattice rule has not settled within
//!    [`tolerance::LATTICE_POINTS_BEFORE_NESTED`] points go to the nested rule (one
//!    Gauss–Kronrod rule inside another, with the breakpoints of each slice) if it can
//!    finish within the points the lattice would still need; otherwise, or if it does not
//!    settle them, the same lattice run goes on with the whole budget.
//!    Rows merged as parallel or folded into a group as dependent carry what was dropped
//!    into the bound (`UnitRow::tilt`).
//! 6. Before integrating (three or more variables; two on the plain lattice path of
//!    [`Options::exact_paths`]), linear programming duality either proves
//!    the polytope empty ([`IntegrationPath::Empty`]) or bounds its probability by how thin it is
//!    (`depth_bound`; the smallest slab if that is less). A lattice round in which some
//!    shift met no point inside says little about how small the inside is (all shifts
//!    missing it report 0 with a spread of 0): until every shift has met it, that bound is
//!    the error ([`lattice::Run::with_bound`]), and the lattice goes on while it misses the
//!    target.
//!
//! Files, in the order of the steps: this file holds the types ([`Gaussian`], [`Polytope`],
//! [`Band`], [`ErrorTarget`], [`Options`], [`IntegrationPath`], [`PolytopeProbability`]), the input
//! checks, step 1 and the entry points with the dispatch between the paths of step 4;
//! `reduction.rs` steps 2 and 3 (unit rows, their merging and their error terms);
//! `screening.rs` the bounds that answer or bound a polytope before integration (the pair
//! law of two unit rows and the depth bound of step 6); `plan.rs` the conditioning plan of
//! step 4 (Householder triangularisation, pivoting, the lattice integrand and the exact
//! pair tail of step 5); `nested.rs` the nested rule of step 5 with its switches;
//! `vertices.rs` the vertex projections that give the nested rule its breakpoints.
//!
//! Every factor of the sequential conditioning is a normal interval from
//! [`normal::interval`], which takes the tail that does not cancel, and the conditioning
//! variables are drawn from the tail they lie in, so tiny probabilities keep their relative
//! accuracy (the method samples the polytope, not the whole space).

mod nested;
mod plan;
mod reduction;
mod screening;
mod vertices;

use nalgebra::DMatrix;
use serde::Serialize;

use crate::prob::cholesky::{self, Factor};
use crate::prob::error::ProbError;
use crate::prob::estimate::Estimate;
use crate::prob::lattice;
use crate::prob::normal;
use crate::prob::tolerance;

use nested::NestedOutcome;
use plan::Plan;
use reduction::Reduced;
use screening::{Depth, depth_bound, pair_law};

/// Largest number of coordinates of the gaussian vector.
pub const MAX_DIM: usize = 16;

/// Largest number of rows of a polytope.
pub const MAX_ROWS: usize = 64;

/// The fixed seed of the random shifts of the lattice rule.
pub const DEFAULT_SEED: u64 = 0x636f_6e63_6f72_6401;

/// Numerical targets for one polytope probability.
///
/// The lattice rule stops as soon as its error estimate is at most
/// `max(abs, rel * value)`; `max_points` bounds the integrand evaluations over all shifts.
/// Exact paths (one or two directions) ignore the targets: their error is rounding only.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ErrorTarget {
    /// Absolute error target.
    pub abs: f64,
    /// Relative error target.
    pub rel: f64,
    /// Budget of lattice points, summed over all random shifts.
    pub max_points: usize,
}

impl Default for ErrorTarget {
    fn default() -> Self {
        Self {
            abs: 1e-12,
            rel: 1e-6,
            max_points: 2_000_000,
        }
    }
}

impl ErrorTarget {
    fn validate(&self) -> Result<(), ProbError> {
        if self.abs.is_nan() || self.abs < 0.0 || self.abs.is_infinite() {
            return Err(ProbError::InvalidArgument(format!(
                "absolute tolerance must be a finite number >= 0, got {}",
                self.abs
            )));
        }
        if self.rel.is_nan() || self.rel < 0.0 || self.rel.is_infinite() {
            return Err(ProbError::InvalidArgument(format!(
                "relative tolerance must be a finite number >= 0, got {}",
                self.rel
            )));
        }
        if self.max_points < lattice::SHIFTS {
            return Err(ProbError::InvalidArgument(format!(
                "max_points must be at least {} (one point per random shift), got {}",
                lattice::SHIFTS,
                self.max_points
            )));
        }
        Ok(())
    }

    fn target(&self, value: f64) -> f64 {
        self.abs.max(self.rel * value.abs())
    }
}

/// The interval a constraint row must lie in. Open ends matter only for rows that are
/// deterministic (zero variance); for random rows the boundary has probability zero.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Band {
    /// Lower end (may be `-inf`).
    pub lower: f64,
    /// Upper end (may be `+inf`).
    pub upper: f64,
    /// Whether `lower` itself is excluded.
    pub lower_open: bool,
    /// Whether `upper` itself is excluded.
    pub upper_open: bool,
}

impl Band {
    /// `[lower, upper]`.
    pub fn closed(lower: f64, upper: f64) -> Self {
        Self {
            lower,
            upper,
            lower_open: false,
            upper_open: false,
        }
    }

    /// `(lower, upper)`.
    pub fn open(lower: f64, upper: f64) -> Self {
        Self {
            lower,
            upper,
            lower_open: true,
            upper_open: true,
        }
    }

    /// `(-inf, upper)`, open at `upper`.
    pub fn below(upper: f64) -> Self {
        Self {
            lower: f64::NEG_INFINITY,
            upper,
            lower_open: true,
            upper_open: true,
        }
    }

    /// `(lower, +inf)`, open at `lower`.
    pub fn above(lower: f64) -> Self {
        Self {
            lower,
            upper: f64::INFINITY,
            lower_open: true,
            upper_open: true,
        }
    }

    /// Whether `v` lies in the band, honouring open and closed ends (NaN never does).
    pub fn contains(&self, v: f64) -> bool {
        let above_lower = if self.lower_open {
            v > self.lower
        } else {
            v >= self.lower
        };
        let below_upper = if self.upper_open {
            v < self.upper
        } else {
            v <= self.upper
        };
        above_lower && below_upper
    }

    /// Whether no number lies in the band (`lower > upper`, or equal ends with one open).
    pub fn is_empty(&self) -> bool {
        self.lower > self.upper
            || (self.lower == self.upper && (self.lower_open || self.upper_open))
    }
}

/// A polytope `{ x : row_i . x in band_i for all i }`.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Polytope {
    /// Constraint rows, each of the dimension of the gaussian vector.
    pub rows: Vec<Vec<f64>>,
    /// One band per row.
    pub bands: Vec<Band>,
}

impl Polytope {
    /// The whole space (no constraint).
    pub fn new() -> Self {
        Self::default()
    }

    /// Add the constraint `row . x in band`.
    pub fn push(&mut self, row: Vec<f64>, band: Band) {
        self.rows.push(row);
        self.bands.push(band);
    }

    /// Number of constraints.
    pub fn len(&self) -> usize {
        self.rows.len()
    }

    /// Whether there is no constraint.
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }
}

/// How a probability was computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum IntegrationPath {
    /// No random constraint is left (or a band is empty): the answer is 0 or 1 exactly.
    Deterministic,
    /// One random direction: the normal interval.
    Univariate,
    /// Within the absolute tolerance of zero: the smallest probability of one row's slab
    /// bounds the polytope's, and the midpoint of `[0, bound]` is returned.
    Bounded,
    /// Two random directions: the bivariate normal rectangle.
    Bivariate,
    /// Two conditioning variables, any number of directions: the polygon probability of a
    /// standard normal pair, exactly as a sum of bivariate rectangles ([`crate::prob::strip`]).
    Planar,
    /// Three conditioning variables: adaptive Gauss–Kronrod over the first, the last two
    /// exact ([`crate::prob::strip`]); or four, one such rule inside another, when the
    /// lattice rule has not settled them cheaply (see the module notes).
    Nested,
    /// Genz's sequential conditioning with the randomised lattice rule (for four or more
    /// variables the last two are exact, so the lattice has two dimensions fewer than the
    /// variables).
    Lattice,
    /// Linear programming duality proved that the constraints contradict each other
    /// within [`normal::UNDERFLOW_X`] standard deviations: the probability is below every
    /// double (see [`crate::prob::feasibility`]). Checked before any integration of three
    /// or more conditioning variables (two on the plain lattice path).
    Empty,
}

/// A polytope probability with diagnostics.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PolytopeProbability {
    /// The probability and its absolute error bound.
    pub estimate: Estimate,
    /// The path that computed it.
    pub method: IntegrationPath,
    /// Lattice points evaluated (0 on exact paths).
    pub points: usize,
    /// Rank of the covariance factor.
    pub rank: usize,
    /// Distinct random constraint directions after merging parallel rows.
    pub directions: usize,
    /// Variables of the sequential conditioning (the lattice dimension is two less: the
    /// last two variables are exact).
    pub variables: usize,
}

/// Choices that tests and verification runs may change; the default is what
/// [`Gaussian::probability`] uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Options {
    /// Seed of the random shifts.
    pub seed: u64,
    /// Use the exact and deterministic paths where they apply (one or two directions, two
    /// or three conditioning variables, four when the lattice is slow, the last two
    /// variables exactly); `false` sends
    /// everything with two or more directions through the plain lattice rule, a code path
    /// for cross-checks (it shares the reduction of the rows and the emptiness proof,
    /// [`IntegrationPath::Empty`], with the default one).
    pub exact_paths: bool,
    /// Return the last estimate with its honest error instead of
    /// [`ProbError::BudgetExhausted`] when the point budget runs out.
    pub best_effort: bool,
}

impl Default for Options {
    fn default() -> Self {
        Self {
            seed: DEFAULT_SEED,
            exact_paths: true,
            best_effort: false,
        }
    }
}

/// `x ~ N(mean, cov)`, factored once (pivoted Cholesky) and reused for many polytopes.
#[derive(Debug, Clone)]
pub struct Gaussian {
    mean: Vec<f64>,
    factor: Factor,
}

impl Gaussian {
    /// Validate and factor `N(mean, cov)`.
    ///
    /// # Errors
    /// `NonFinite` for NaN or infinite entries, `DimensionMismatch` when `cov` is not square
    /// of the size of `mean`, `TooLarge` beyond [`MAX_DIM`] coordinates, `NotSymmetric`
    /// beyond [`tolerance::SYMMETRY_REL`], `NotPositiveSemiDefinite` naming the coordinate.
    pub fn new(mean: &[f64], cov: &DMatrix<f64>) -> Result<Self, ProbError> {
        let n = mean.len();
        if n > MAX_DIM {
            return Err(ProbError::TooLarge {
                what: "number of coordinates".into(),
                limit: MAX_DIM,
                found: n,
            });
        }
        if cov.nrows() != n {
            return Err(ProbError::DimensionMismatch {
                what: "covariance rows (must equal the length of the mean)".into(),
                expected: n,
                found: cov.nrows(),
            });
        }
        if cov.ncols() != n {
            return Err(ProbError::DimensionMismatch {
                what: "covariance columns (must equal the length of the mean)".into(),
                expected: n,
                found: cov.ncols(),
            });
        }
        for (i, &m) in mean.iter().enumerate() {
            if !m.is_finite() {
                return Err(ProbError::NonFinite {
                    what: format!("mean[{i}]"),
                    value: m,
                });
            }
        }
        let mut flat = vec![0.0; n * n];
        for i in 0..n {
            for j in 0..n {
                let a = cov[(i, j)];
                if !a.is_finite() {
                    return Err(ProbError::NonFinite {
                        what: format!("covariance entry ({i}, {j})"),
                        value: a,
                    });
                }
            }
        }
        for i in 0..n {
            for j in 0..n {
                let a = cov[(i, j)];
                let b = cov[(j, i)];
                let scale = a
                    .abs()
                    .max(b.abs())
                    .max((cov[(i, i)] * cov[(j, j)]).abs().sqrt());
                if (a - b).abs() > tolerance::SYMMETRY_REL * scale {
                    return Err(ProbError::NotSymmetric {
                        row: i,
                        col: j,
                        a,
                        b,
                    });
                }
                flat[i * n + j] = 0.5 * (a + b);
            }
        }
        let factor = cholesky::pivoted(&flat, n)?;
        Ok(Self {
            mean: mean.to_vec(),
            factor,
        })
    }

    /// Number of coordinates `n`.
    pub fn dim(&self) -> usize {
        self.mean.len()
    }

    /// Numerical rank `r` of the covariance.
    pub fn rank(&self) -> usize {
        self.factor.rank
    }

    /// The mean vector.
    pub fn mean(&self) -> &[f64] {
        &self.mean
    }

    /// The factor `L` (`n x r`) with `cov = L L^T` up to rounding.
    pub fn factor(&self) -> DMatrix<f64> {
        DMatrix::from_row_slice(self.dim(), self.rank(), &self.factor.entries)
    }

    /// The same covariance with mean `mean + delta` (no refactorisation).
    ///
    /// # Errors
    /// `DimensionMismatch` or `NonFinite` for a bad `delta`.
    pub fn shifted(&self, delta: &[f64]) -> Result<Self, ProbError> {
        if delta.len() != self.dim() {
            return Err(ProbError::DimensionMismatch {
                what: "mean shift".into(),
                expected: self.dim(),
                found: delta.len(),
            });
        }
        let mut out = self.clone();
        for (i, (m, d)) in out.mean.iter_mut().zip(delta.iter()).enumerate() {
            *m += d;
            if !m.is_finite() {
                return Err(ProbError::NonFinite {
                    what: format!("shifted mean[{i}]"),
                    value: *m,
                });
            }
        }
        Ok(out)
    }

    /// `x = mean + L z` for a standard-normal vector `z` of length `rank` (Monte Carlo).
    ///
    /// Never panics: a short `z` counts as padded with zeros, and only the first
    /// `min(out.len(), dim)` entries of `out` are written. [`Gaussian::try_sample`] checks
    /// the lengths instead.
    pub fn sample(&self, rng_normals: &[f64], out: &mut [f64]) {
        for (i, o) in out.iter_mut().enumerate().take(self.dim()) {
            let lz: f64 = self
                .factor
                .row(i)
                .iter()
                .zip(rng_normals.iter())
                .map(|(l, z)| l * z)
                .sum();
            *o = self.mean[i] + lz;
        }
    }

    /// [`Gaussian::sample`] with the lengths checked.
    ///
    /// # Errors
    /// `DimensionMismatch` when `z` is not of length `rank` or `out` not of length `dim`.
    pub fn try_sample(&self, rng_normals: &[f64], out: &mut [f64]) -> Result<(), ProbError> {
        if rng_normals.len() != self.rank() {
            return Err(ProbError::DimensionMismatch {
                what: "standard-normal vector (length must equal the rank)".into(),
                expected: self.rank(),
                found: rng_normals.len(),
            });
        }
        if out.len() != self.dim() {
            return Err(ProbError::DimensionMismatch {
                what: "sample output".into(),
                expected: self.dim(),
                found: out.len(),
            });
        }
        self.sample(rng_normals, out);
        Ok(())
    }

    /// `P(x in polytope)` with its error bound.
    ///
    /// # Errors
    /// Input errors (see [`Gaussian::probability_with`]) and
    /// [`ProbError::BudgetExhausted`] when neither tolerance is met within the budget.
    pub fn probability(
        &self,
        polytope: &Polytope,
        tol: &ErrorTarget,
    ) -> Result<Estimate, ProbError> {
        Ok(self.probability_detailed(polytope, tol)?.estimate)
    }

    /// [`Gaussian::probability`] with the method, the points used and the rank.
    ///
    /// # Errors
    /// As [`Gaussian::probability`].
    pub fn probability_detailed(
        &self,
        polytope: &Polytope,
        tol: &ErrorTarget,
    ) -> Result<PolytopeProbability, ProbError> {
        self.probability_with(polytope, tol, &Options::default())
    }

    /// Like [`Gaussian::probability_detailed`], but when the point budget runs out the last
    /// estimate is returned with its (large, honest) error instead of an error.
    ///
    /// # Errors
    /// Input errors only.
    pub fn probability_best_effort(
        &self,
        polytope: &Polytope,
        tol: &ErrorTarget,
    ) -> Result<PolytopeProbability, ProbError> {
        let options = Options {
            best_effort: true,
            ..Options::default()
        };
        self.probability_with(polytope, tol, &options)
    }

    /// The general entry point with explicit [`Options`].
    ///
    /// # Errors
    /// `DimensionMismatch` for a row not of length `dim` or bands not matching rows,
    /// `NonFinite` for a NaN or infinite row entry or a NaN band end, `TooLarge` beyond
    /// [`MAX_ROWS`] rows, `InvalidArgument` for a bad tolerance, and `BudgetExhausted`
    /// (unless `best_effort`). An empty band is not an error: the probability is 0.
    pub fn probability_with(
        &self,
        polytope: &Polytope,
        tol: &ErrorTarget,
        options: &Options,
    ) -> Result<PolytopeProbability, ProbError> {
        tol.validate()?;
        self.validate(polytope)?;
        let rank = self.rank();
        let exact = |value: f64, directions: usize| PolytopeProbability {
            estimate: Estimate::new(value, 0.0),
            method: IntegrationPath::Deterministic,
            points: 0,
            rank,
            directions,
            variables: 0,
        };
        if polytope.bands.iter().any(Band::is_empty) {
            return Ok(exact(0.0, 0));
        }
        let rows = match self.reduce(polytope) {
            Reduced::Zero => return Ok(exact(0.0, 0)),
            Reduced::Rows(rows) => rows,
        };
        let directions = rows.len();
        let rounding = |value: f64| -> f64 {
            rows.iter()
                .map(|row| row.rounding_error(value) + row.tilt_error())
                .sum()
        };
        let with_error = |value: f64, error: f64, method: IntegrationPath, points, variables| {
            let value = value.clamp(0.0, 1.0);
            PolytopeProbability {
                estimate: Estimate::new(value, error + rounding(value)),
                method,
                points,
                rank,
                directions,
                variables,
            }
        };
        if rows.is_empty() {
            return Ok(exact(1.0, 0));
        }
        if rows.iter().any(|row| row.lower >= row.upper) {
            // A random direction confined to a single point (or less) after merging.
            return Ok(with_error(0.0, 0.0, IntegrationPath::Univariate, 0, 1));
        }
        if rows.len() == 1 {
            let value = normal::interval(rows[0].lower, rows[0].upper);
            let error = value * tolerance::ROUNDING_REL;
            return Ok(with_error(value, error, IntegrationPath::Univariate, 0, 1));
        }
        if rows.len() == 2 && options.exact_paths {
            // Two unit directions: the bivariate normal rectangle (Genz 2004) with the cosine
            // of the two directions as the correlation.
            let e = pair_law(&rows[0], &rows[1]).rectangle_estimate(
                [rows[0].lower, rows[1].lower],
                [rows[0].upper, rows[1].upper],
            );
            return Ok(with_error(
                e.value,
                e.error,
                IntegrationPath::Bivariate,
                0,
                2,
            ));
        }
        // The polytope lies inside each of its slabs, so the smallest slab probability
        // bounds it from above.
        let slab_bound = rows
            .iter()
            .map(|row| normal::interval(row.lower, row.upper))
            .fold(1.0, f64::min);
        if options.exact_paths {
            // When the slab bound is within the absolute tolerance the midpoint of
            // [0, bound] answers within it, at no integration cost (most polytopes of an
            // analysis are such far-tail corners).
            let mut bound = slab_bound;
            if bound > tol.abs && bound <= tolerance::PAIR_SCREEN_ABS {
                // Sharper: the smallest probability of two slabs together.
                'pairs: for (i, first) in rows.iter().enumerate() {
                    for second in &rows[i + 1..] {
                        let e = pair_law(first, second).rectangle_estimate(
                            [first.lower, second.lower],
                            [first.upper, second.upper],
                        );
                        bound = bound.min(e.value + e.error);
                        if bound <= tol.abs {
                            break 'pairs;
                        }
                    }
                }
            }
            if bound <= tol.abs {
                let half = 0.5 * bound;
                return Ok(PolytopeProbability {
                    estimate: Estimate::new(half, half + rounding(half)),
                    method: IntegrationPath::Bounded,
                    points: 0,
                    rank,
                    directions,
                    variables: 0,
                });
            }
        }
        let plan = Plan::build(&rows, rank);
        if plan.variables == 1 {
            let value = plan.first_factor();
            let error = value * tolerance::ROUNDING_REL + plan.neglect_error();
            return Ok(with_error(value, error, IntegrationPath::Univariate, 0, 1));
        }
        if options.exact_paths && plan.variables == 2 {
            let e = plan.pair_tail(&[]);
            let error = e.error + plan.neglect_error();
            return Ok(with_error(e.value, error, IntegrationPath::Planar, 0, 2));
        }
        // What the geometry alone says (module notes, step 6): a proof of emptiness
        // answers at once; otherwise the bound stands in for the lattice's error until
        // every shift has met the polytope.
        let known_bound = match depth_bound(&rows, rank) {
            Depth::Empty => {
                return Ok(with_error(
                    0.0,
                    0.0,
                    IntegrationPath::Empty,
                    0,
                    plan.variables,
                ));
            }
            Depth::Thin(bound) => bound.min(slab_bound),
        };
        // Rounding of the sums and of the integrand, relative to the value.
        let floor_rel = tolerance::ROUNDING_REL * (plan.variables as f64 + 1.0);
        // The lattice must leave room for the rounding terms added below.
        let target =
            |v: f64| tol.target(v) - rounding(v) - floor_rel * v.abs() - plan.neglect_error();
        let nested_fits = options.exact_paths && plan.nested_fits();
        // One lattice run, resumed if it is asked for more points later.
        // `known_bound` bounds the probability of the rows; the lattice's integrand can
        // differ from it by the neglect error, which is added to the result below.
        let mut run = plan
            .lattice_run(options.seed, options.exact_paths)
            .with_bound(known_bound);
        let mut lattice = |budget: usize| {
            let outcome = plan.lattice_extend(&mut run, budget, target, options.exact_paths);
            (
                outcome.value,
                outcome.error,
                outcome.points,
                outcome.converged,
                IntegrationPath::Lattice,
            )
        };
        let (value, error, points, converged, method) = if nested_fits {
            // Four variables: the lattice first, on a small budget. It settles most
            // polytopes of an analysis at a fraction of the nested rule's cost; the ones it
            // does not (kinks where rows trade places, tight relative targets) the nested
            // rule often settles far faster than more lattice points would. The nested
            // rule may spend what the lattice would still need at its slowest rate
            // (error falling like 1 / points), and gives way when it would spend more.
            let first = (plan.variables == 4)
                .then(|| lattice(tol.max_points.min(tolerance::LATTICE_POINTS_BEFORE_NESTED)));
            let allowance = first.map_or(usize::MAX, |(value, error, points, _, _)| {
                let short = error / target(value).max(f64::MIN_POSITIVE);
                ((points as f64) * short.max(1.0)).min(tol.max_points as f64) as usize
            });
            // The Kronrod estimate is a heuristic (QUADPACK's): it can fall short of the
            // true error by a few times when a feature is barely resolved (measured: 2.4x,
            // 1e-8 reported for 2.4e-8). It is reported times a safety factor, and the rule
            // aims that much tighter so that the reported bound still meets the target.
            let safety = tolerance::NESTED_ESTIMATE_SAFETY;
            let aim = ErrorTarget {
                abs: tol.abs / safety,
                rel: tol.rel / safety,
                max_points: tol.max_points,
            };
            let nested_answer = |nested: NestedOutcome, spent: usize| {
                (
                    nested.value,
                    nested.error * safety,
                    spent + nested.evaluations,
                    nested.converged,
                    IntegrationPath::Nested,
                )
            };
            match first {
                Some(first) if first.3 => first,
                Some(first) => match plan.nested(&aim, allowance) {
                    Ok(nested) if nested.converged => nested_answer(nested, first.2),
                    // Not settled within its allowance: the lattice with the whole budget.
                    Ok(_) | Err(ProbError::BudgetExhausted { .. }) => lattice(tol.max_points),
                    Err(e) => return Err(e),
                },
                None => nested_answer(plan.nested(&aim, usize::MAX)?, 0),
            }
        } else {
            lattice(tol.max_points)
        };
        let floor = value.abs() * floor_rel + plan.neglect_error();
        let result = with_error(value, error + floor, method, points, plan.variables);
        if !converged && !options.best_effort {
            return Err(ProbError::BudgetExhausted {
                achieved: result.estimate.error,
                requested: tol.target(value),
                points,
            });
        }
        Ok(result)
    }

    fn validate(&self, polytope: &Polytope) -> Result<(), ProbError> {
        let m = polytope.rows.len();
        if m > MAX_ROWS {
            return Err(ProbError::TooLarge {
                what: "number of polytope rows".into(),
                limit: MAX_ROWS,
                found: m,
            });
        }
        if polytope.bands.len() != m {
            return Err(ProbError::DimensionMismatch {
                what: "polytope bands (one per row)".into(),
                expected: m,
                found: polytope.bands.len(),
            });
        }
        for (i, (row, band)) in polytope.rows.iter().zip(polytope.bands.iter()).enumerate() {
            if row.len() != self.dim() {
                return Err(ProbError::DimensionMismatch {
                    what: format!("polytope row {i} (length must equal the dimension)"),
                    expected: self.dim(),
                    found: row.len(),
                });
            }
            if let Some((j, &v)) = row.iter().enumerate().find(|(_, v)| !v.is_finite()) {
                return Err(ProbError::NonFinite {
                    what: format!("polytope row {i}, entry {j}"),
                    value: v,
                });
            }
            if band.lower.is_nan() {
                return Err(ProbError::NonFinite {
                    what: format!("lower end of band {i}"),
                    value: band.lower,
                });
            }
            if band.upper.is_nan() {
                return Err(ProbError::NonFinite {
                    what: format!("upper end of band {i}"),
                    value: band.upper,
                });
            }
        }
        Ok(())
    }
}
