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
//!    answer ([`Method::Planar`]); with three, the first variable is integrated by adaptive
//!    Gauss–Kronrod with breakpoints at the projections of the polytope's vertices and
//!    wherever a later row, or a pair of them, switches over a small share of the mass
//!    (`Plan::switches`; nearly parallel directions make such switches narrow)
//!    ([`Method::Nested`], deterministic, error four times the Kronrod estimate), unless
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
//!    the polytope empty ([`Method::Empty`]) or bounds its probability by how thin it is
//!    (`depth_bound`; the smallest slab if that is less). A lattice round in which some
//!    shift met no point inside says little about how small the inside is (all shifts
//!    missing it report 0 with a spread of 0): until every shift has met it, that bound is
//!    the error ([`lattice::Run::with_bound`]), and the lattice goes on while it misses the
//!    target.
//!
//! Every factor of the sequential conditioning is a normal interval from
//! [`normal::interval`], which takes the tail that does not cancel, and the conditioning
//! variables are drawn from the tail they lie in, so tiny probabilities keep their relative
//! accuracy (the method samples the polytope, not the whole space).

use nalgebra::DMatrix;
use serde::Serialize;

use crate::prob::bivariate::StandardBivariate;
use crate::prob::cholesky::{self, Factor};
use crate::prob::error::ProbError;
use crate::prob::estimate::Estimate;
use crate::prob::feasibility::{self, HalfSpace};
use crate::prob::lattice;
use crate::prob::normal;
use crate::prob::quadrature::{self, QuadratureOptions};
use crate::prob::strip::Strips;
use crate::prob::tolerance;

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
pub struct Tolerance {
    /// Absolute error target.
    pub abs: f64,
    /// Relative error target.
    pub rel: f64,
    /// Budget of lattice points, summed over all random shifts.
    pub max_points: usize,
}

impl Default for Tolerance {
    fn default() -> Self {
        Self {
            abs: 1e-12,
            rel: 1e-6,
            max_points: 2_000_000,
        }
    }
}

impl Tolerance {
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
pub enum Method {
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
    pub method: Method,
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
    /// [`Method::Empty`], with the default one).
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
    pub fn probability(&self, polytope: &Polytope, tol: &Tolerance) -> Result<Estimate, ProbError> {
        Ok(self.probability_detailed(polytope, tol)?.estimate)
    }

    /// [`Gaussian::probability`] with the method, the points used and the rank.
    ///
    /// # Errors
    /// As [`Gaussian::probability`].
    pub fn probability_detailed(
        &self,
        polytope: &Polytope,
        tol: &Tolerance,
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
        tol: &Tolerance,
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
        tol: &Tolerance,
        options: &Options,
    ) -> Result<PolytopeProbability, ProbError> {
        tol.validate()?;
        self.validate(polytope)?;
        let rank = self.rank();
        let exact = |value: f64, directions: usize| PolytopeProbability {
            estimate: Estimate::new(value, 0.0),
            method: Method::Deterministic,
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
        let with_error = |value: f64, error: f64, method: Method, points, variables| {
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
            return Ok(with_error(0.0, 0.0, Method::Univariate, 0, 1));
        }
        if rows.len() == 1 {
            let value = normal::interval(rows[0].lower, rows[0].upper);
            let error = value * tolerance::ROUNDING_REL;
            return Ok(with_error(value, error, Method::Univariate, 0, 1));
        }
        if rows.len() == 2 && options.exact_paths {
            // Two unit directions: the bivariate normal rectangle (Genz 2004) with the cosine
            // of the two directions as the correlation.
            let e = pair_law(&rows[0], &rows[1]).rectangle_estimate(
                [rows[0].lower, rows[1].lower],
                [rows[0].upper, rows[1].upper],
            );
            return Ok(with_error(e.value, e.error, Method::Bivariate, 0, 2));
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
                    method: Method::Bounded,
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
            return Ok(with_error(value, error, Method::Univariate, 0, 1));
        }
        if options.exact_paths && plan.variables == 2 {
            let e = plan.pair_tail(&[]);
            let error = e.error + plan.neglect_error();
            return Ok(with_error(e.value, error, Method::Planar, 0, 2));
        }
        // What the geometry alone says (module notes, step 6): a proof of emptiness
        // answers at once; otherwise the bound stands in for the lattice's error until
        // every shift has met the polytope.
        let known_bound = match depth_bound(&rows, rank) {
            Depth::Empty => return Ok(with_error(0.0, 0.0, Method::Empty, 0, plan.variables)),
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
                Method::Lattice,
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
            let aim = Tolerance {
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
                    Method::Nested,
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

    /// Steps 2 and 3 of the method: deterministic rows out, random rows normalised and
    /// merged.
    fn reduce(&self, polytope: &Polytope) -> Reduced {
        let r = self.rank();
        let mut rows: Vec<UnitRow> = Vec::new();
        for (a, band) in polytope.rows.iter().zip(polytope.bands.iter()) {
            let mut b = vec![0.0; r];
            let mut shift = 0.0;
            let mut shift_abs = 0.0;
            // sum of |a_i| sd_i: the size of the random terms before they cancel
            let mut terms = 0.0;
            for (i, &ai) in a.iter().enumerate() {
                if ai == 0.0 {
                    continue;
                }
                shift += ai * self.mean[i];
                shift_abs += (ai * self.mean[i]).abs();
                let row = self.factor.row(i);
                terms += ai.abs() * row.iter().map(|v| v * v).sum::<f64>().sqrt();
                for (bk, &lk) in b.iter_mut().zip(row.iter()) {
                    *bk += ai * lk;
                }
            }
            let b_norm = b.iter().map(|v| v * v).sum::<f64>().sqrt();
            if b_norm <= tolerance::DEGENERATE_ROW_REL * terms || b_norm == 0.0 {
                if band.contains(shift) {
                    continue;
                }
                return Reduced::Zero;
            }
            if band.lower == f64::NEG_INFINITY && band.upper == f64::INFINITY {
                continue;
            }
            let lower = (band.lower - shift) / b_norm;
            let upper = (band.upper - shift) / b_norm;
            let finite_end = |v: f64| if v.is_finite() { v.abs() } else { 0.0 };
            let slack = tolerance::ROUNDING_REL
                * ((finite_end(band.lower).max(finite_end(band.upper)) + shift_abs) / b_norm
                    + finite_end(lower).max(finite_end(upper)));
            for v in b.iter_mut() {
                *v /= b_norm;
            }
            // Each entry of `b` rounds by at most ROUNDING_REL of the sizes that entered
            // it, so `|error of b| <= ROUNDING_REL * terms` (triangle inequality), twice
            // that over `b_norm` after normalising.
            let dir_error = tolerance::ROUNDING_REL * (2.0 * terms / b_norm + 1.0);
            let new = UnitRow {
                dir: b,
                lower,
                upper,
                slack,
                tilt: 0.0,
                dir_error,
            };
            rows_merge(&mut rows, new);
        }
        Reduced::Rows(rows)
    }
}

/// Add a unit row, intersecting it with a parallel or antiparallel row already present
/// (the small difference of the two directions is kept as the merged row's tilt).
fn rows_merge(rows: &mut Vec<UnitRow>, new: UnitRow) {
    for row in rows.iter_mut() {
        let gap = |sign: f64| -> f64 {
            row.dir
                .iter()
                .zip(new.dir.iter())
                .map(|(a, b)| (a - sign * b) * (a - sign * b))
                .sum::<f64>()
                .sqrt()
        };
        let (same_gap, opposite_gap) = (gap(1.0), gap(-1.0));
        let same = same_gap <= tolerance::PARALLEL_ROW_ABS;
        let opposite = opposite_gap <= tolerance::PARALLEL_ROW_ABS;
        if same || opposite {
            let turn = if same { same_gap } else { opposite_gap };
            row.tilt = row.tilt.max(new.tilt + MEAN_ABS_NORMAL * turn);
            let (lower, upper) = if same {
                (new.lower, new.upper)
            } else {
                (-new.upper, -new.lower)
            };
            row.lower = row.lower.max(lower);
            row.upper = row.upper.min(upper);
            row.slack = row.slack.max(new.slack);
            row.dir_error = row.dir_error.max(new.dir_error) + turn;
            return;
        }
    }
    rows.push(new);
}

enum Reduced {
    /// A deterministic row fails: the probability is exactly 0.
    Zero,
    /// The random rows left (possibly none).
    Rows(Vec<UnitRow>),
}

/// A random constraint `lower <= dir . z <= upper` with `|dir| = 1`.
#[derive(Debug, Clone)]
struct UnitRow {
    dir: Vec<f64>,
    lower: f64,
    upper: f64,
    /// Bound on the rounding error of `lower` and `upper`.
    slack: f64,
    /// Mean size `E|d . z|` of a direction `d` dropped from the row (a nearly parallel row
    /// merged into it, or a residual left out of the sequential conditioning): its ends
    /// then move at random by that much (see [`UnitRow::tilt_error`]).
    tilt: f64,
    /// Bound on the Euclidean distance of `dir` from the exact direction (rounding, and a
    /// merged row's dropped direction): within `|z| <= R` the row's value is off by at
    /// most `dir_error * R`.
    dir_error: f64,
}

impl UnitRow {
    /// Moving an end `h` by `slack` moves the probability by at most the density of the
    /// unit row at `h` times `slack`; for a small probability `value` the first-order change
    /// is taken as `value * (|h| + 1) * slack` instead (the hazard rate of a half-space,
    /// `phi(h) / P(Z > h) < |h| + 1`), so that tail probabilities keep a relative bound.
    fn rounding_error(&self, value: f64) -> f64 {
        let end = |h: f64| {
            if h.is_finite() {
                normal::pdf(h).min(value * (h.abs() + 1.0))
            } else {
                0.0
            }
        };
        self.slack * (end(self.lower) + end(self.upper))
    }

    /// What the dropped direction can change: the probability that the row's value and
    /// its tilted value lie on two sides of an end `h` is at most the density there times
    /// the mean shift, `tilt * phi(h)` per finite end. Absolute, not relative: a slab
    /// thinner than the tilt can lose all of its probability.
    fn tilt_error(&self) -> f64 {
        if self.tilt == 0.0 {
            return 0.0;
        }
        let end = |h: f64| if h.is_finite() { normal::pdf(h) } else { 0.0 };
        self.tilt * (end(self.lower) + end(self.upper))
    }
}

/// One row of the lower-trapezoidal system, divided by its leading coefficient:
/// `lower <= w_j + coef . w[..j] <= upper`, or an indicator on `w[..j]` when its leading
/// coefficient vanished.
#[derive(Debug, Clone)]
struct PlanRow {
    coef: Vec<f64>,
    lower: f64,
    upper: f64,
    indicator: bool,
}

/// The sequential-conditioning integrand: variables in order, each with its rows.
#[derive(Debug, Clone)]
struct Plan {
    variables: usize,
    groups: Vec<Vec<PlanRow>>,
    /// Rows that joined a group with a small residual direction dropped, as tilt on their
    /// ends: the error that dropping adds (see [`Plan::neglect_error`]).
    neglected: Vec<UnitRow>,
    /// The slopes on the second-to-last variable of the last group's strip rows (every row
    /// of that group that is not an indicator), for the exact pair tail.
    last_strips: Strips,
}

/// The standard bivariate law of two unit directions: correlation their cosine, and the
/// complement `sqrt(1 - rho^2)` their sine from Lagrange's identity
/// `|a|^2 |b|^2 - (a.b)^2 = sum_{i<j} (a_i b_j - a_j b_i)^2`, which keeps full relative
/// precision for nearly parallel directions (channel sigmas decades apart), where
/// `1 - rho^2` from a rounded cosine would not (see [`StandardBivariate::with_complement`]).
fn pair_law(first: &UnitRow, second: &UnitRow) -> StandardBivariate {
    let (a, b) = (&first.dir, &second.dir);
    let rho: f64 = a.iter().zip(b).map(|(x, y)| x * y).sum();
    let mut wedge = 0.0;
    for i in 0..a.len().min(b.len()) {
        for j in i + 1..a.len().min(b.len()) {
            let t = a[i] * b[j] - a[j] * b[i];
            wedge += t * t;
        }
    }
    StandardBivariate::with_complement(rho.clamp(-1.0, 1.0), wedge.sqrt())
}

/// The interval of one nested variable cut to where the integrand can be non-zero, and
/// breakpoints where later rows switch on or off (see [`Plan::switches`]).
struct Switches {
    lower: f64,
    upper: f64,
    points: Vec<f64>,
}

/// Outcome of the nested (three- or four-variable) path.
struct NestedOutcome {
    value: f64,
    error: f64,
    evaluations: usize,
    converged: bool,
}

/// `E[Z | a < Z < b]` for standard normal `Z`, with a finite fallback when the interval
/// has no representable mass.
fn truncated_mean(a: f64, b: f64) -> f64 {
    let fallback = || match (a.is_finite(), b.is_finite()) {
        (true, true) => 0.5 * (a + b),
        (true, false) => a,
        (false, true) => b,
        (false, false) => 0.0,
    };
    if a >= b {
        return fallback();
    }
    let mass = normal::interval(a, b);
    if mass.is_nan() || mass <= f64::MIN_POSITIVE * 1e10 {
        return fallback();
    }
    let m = (normal::pdf(a) - normal::pdf(b)) / mass;
    if m.is_finite() {
        m.clamp(a, b)
    } else {
        fallback()
    }
}

/// `E|Z| = sqrt(2 / pi)` for standard normal `Z`.
const MEAN_ABS_NORMAL: f64 = 0.797_884_560_802_865_4;

/// Largest magnitude of a conditioning variable (the normal quantile of the smallest
/// positive double is about -38.5).
const W_CLAMP: f64 = 38.5;

/// A standard normal variable conditioned on `(a, b)` (mass `mass`) at uniform `u`,
/// computed from the tail it lies in so that extreme intervals stay accurate.
fn conditional_draw(a: f64, b: f64, mass: f64, u: f64) -> f64 {
    let w = if a >= 0.0 {
        -normal::quantile(normal::sf(b) + (1.0 - u) * mass)
    } else if b <= 0.0 {
        normal::quantile(normal::cdf(a) + u * mass)
    } else {
        let below = normal::cdf(a) + u * mass;
        if below <= 0.5 {
            normal::quantile(below)
        } else {
            -normal::quantile(normal::sf(b) + (1.0 - u) * mass)
        }
    };
    if w.is_nan() {
        truncated_mean(a, b)
    } else {
        w.clamp(a.max(-W_CLAMP), b.min(W_CLAMP))
    }
}

impl Plan {
    /// Triangularise the unit rows by Householder reflections of `z`, choosing at each
    /// step the row with the smallest conditional probability given the earlier variables
    /// at their truncated means (Genz and Bretz 2009, sec. 4.1.3).
    fn build(rows: &[UnitRow], rank: usize) -> Self {
        let m = rows.len();
        let mut w: Vec<Vec<f64>> = rows.iter().map(|row| row.dir.clone()).collect();
        let mut remaining: Vec<usize> = (0..m).collect();
        let mut means: Vec<f64> = Vec::new();
        let mut groups: Vec<Vec<usize>> = Vec::new();
        let mut neglected: Vec<UnitRow> = Vec::new();
        for j in 0..rank {
            if remaining.is_empty() {
                break;
            }
            // Pivot choice.
            let mut best = (f64::INFINITY, 0usize);
            for (pos, &i) in remaining.iter().enumerate() {
                let s: f64 = w[i][..j].iter().zip(means.iter()).map(|(c, y)| c * y).sum();
                let d = w[i][j..].iter().map(|v| v * v).sum::<f64>().sqrt();
                let a = (rows[i].lower - s) / d;
                let b = (rows[i].upper - s) / d;
                let p = normal::interval(a, b);
                if p < best.0 {
                    best = (p, pos);
                }
            }
            let pivot = remaining.remove(best.1);
            // Householder reflection of columns j.. mapping the pivot row onto +d e_j.
            let x: Vec<f64> = w[pivot][j..].to_vec();
            let d = x.iter().map(|v| v * v).sum::<f64>().sqrt();
            let alpha = if x[0] >= 0.0 { -d } else { d };
            let mut v = x.clone();
            v[0] -= alpha;
            let vv: f64 = v.iter().map(|t| t * t).sum();
            let flip = alpha < 0.0;
            for &q in remaining.iter().chain(std::iter::once(&pivot)) {
                if vv > 0.0 {
                    let dot: f64 = v.iter().zip(w[q][j..].iter()).map(|(a, b)| a * b).sum();
                    let f = 2.0 * dot / vv;
                    for (wq, vk) in w[q][j..].iter_mut().zip(v.iter()) {
                        *wq -= f * vk;
                    }
                }
                if flip {
                    w[q][j] = -w[q][j];
                }
            }
            w[pivot][j] = d;
            for t in w[pivot][j + 1..].iter_mut() {
                *t = 0.0;
            }
            let mut group = vec![pivot];
            remaining.retain(|&q| {
                let res = w[q][j + 1..].iter().map(|t| t * t).sum::<f64>().sqrt();
                if res <= tolerance::LINEAR_DEPENDENCE_ABS {
                    group.push(q);
                    if res > 0.0 {
                        // Dropping `res * Z` from the row moves its ends by that much, on
                        // average E|Z| = sqrt(2 / pi) times res.
                        neglected.push(UnitRow {
                            dir: Vec::new(),
                            lower: rows[q].lower,
                            upper: rows[q].upper,
                            slack: 0.0,
                            tilt: MEAN_ABS_NORMAL * res,
                            dir_error: res,
                        });
                    }
                    false
                } else {
                    true
                }
            });
            for &q in &group {
                for t in w[q][j + 1..].iter_mut() {
                    *t = 0.0;
                }
            }
            // Truncated mean of the new variable over its combined bounds.
            let (mut a, mut b) = (f64::NEG_INFINITY, f64::INFINITY);
            for &q in &group {
                let lead = w[q][j];
                if lead == 0.0 {
                    continue;
                }
                let s: f64 = w[q][..j].iter().zip(means.iter()).map(|(c, y)| c * y).sum();
                let (lo, hi) = ((rows[q].lower - s) / lead, (rows[q].upper - s) / lead);
                let (lo, hi) = if lead > 0.0 { (lo, hi) } else { (hi, lo) };
                a = a.max(lo);
                b = b.min(hi);
            }
            means.push(truncated_mean(a, b));
            groups.push(group);
        }
        let groups: Vec<Vec<PlanRow>> = groups
            .iter()
            .enumerate()
            .map(|(j, group)| {
                group
                    .iter()
                    .map(|&q| {
                        let lead = w[q][j];
                        if lead == 0.0 {
                            PlanRow {
                                coef: w[q][..j].to_vec(),
                                lower: rows[q].lower,
                                upper: rows[q].upper,
                                indicator: true,
                            }
                        } else if lead > 0.0 {
                            PlanRow {
                                coef: w[q][..j].iter().map(|c| c / lead).collect(),
                                lower: rows[q].lower / lead,
                                upper: rows[q].upper / lead,
                                indicator: false,
                            }
                        } else {
                            PlanRow {
                                coef: w[q][..j].iter().map(|c| c / lead).collect(),
                                lower: rows[q].upper / lead,
                                upper: rows[q].lower / lead,
                                indicator: false,
                            }
                        }
                    })
                    .collect()
            })
            .collect();
        let variables = groups.len();
        let slopes: Vec<f64> = if variables >= 2 {
            groups[variables - 1]
                .iter()
                .filter(|row| !row.indicator)
                .map(|row| row.coef.get(variables - 2).copied().unwrap_or(0.0))
                .collect()
        } else {
            Vec::new()
        };
        Plan {
            variables,
            groups,
            neglected,
            last_strips: Strips::new(&slopes),
        }
    }

    /// The last two variables integrated exactly given the earlier ones `w` (length
    /// `variables - 2`): `P(second-to-last and last variable in their bounds | w)`, the
    /// polygon probability of [`crate::prob::strip`].
    fn pair_tail(&self, w: &[f64]) -> Estimate {
        let v = self.variables;
        if v < 2 {
            return Estimate::new(self.first_factor(), 0.0);
        }
        let (jt, jy) = (v - 2, v - 1);
        let Some((mut a, mut b)) = bounds(&self.groups[jt], &w[..jt.min(w.len())]) else {
            return Estimate::zero();
        };
        let last = &self.groups[jy];
        // On the stack: this runs for every point of the integration. A polytope has at
        // most MAX_ROWS rows (checked on entry), so every strip fits.
        let mut lower = [0.0; MAX_ROWS];
        let mut upper = [0.0; MAX_ROWS];
        let mut strips = 0;
        for row in last {
            let s: f64 = row.coef.iter().zip(w.iter()).map(|(c, y)| c * y).sum();
            let c = row.coef.get(jt).copied().unwrap_or(0.0);
            if row.indicator {
                // lower <= s + c t <= upper restricts the second-to-last variable t.
                if c == 0.0 {
                    if !(row.lower <= s && s <= row.upper) {
                        return Estimate::zero();
                    }
                    continue;
                }
                let (lo, hi) = ((row.lower - s) / c, (row.upper - s) / c);
                let (lo, hi) = if c > 0.0 { (lo, hi) } else { (hi, lo) };
                a = a.max(lo);
                b = b.min(hi);
            } else if strips < MAX_ROWS {
                lower[strips] = row.lower - s;
                upper[strips] = row.upper - s;
                strips += 1;
            }
        }
        if a >= b {
            return Estimate::zero();
        }
        self.last_strips
            .probability(a, b, &lower[..strips], &upper[..strips])
    }

    /// Three (or more) variables, deterministically: the first variable (and for four, the
    /// second inside it) by adaptive Gauss–Kronrod over Genz's uniform variable `u`
    /// (`P = e_1 ∫_0^1 P(rest | w_1(u)) du`, `w_1(u)` the conditional draw), the last two
    /// exact. Between the projections of the (slice) polytope's vertices the integrand is
    /// analytic; they are made interval ends, so that no narrow part of the support and no
    /// kink is left for the Kronrod error estimate to miss.
    ///
    /// `max_evaluations` caps the pair tails evaluated: past it (or when the outer
    /// breakpoints alone promise more) the rule stops with
    /// [`ProbError::BudgetExhausted`], for the caller to go back to the lattice rule.
    fn nested(&self, tol: &Tolerance, max_evaluations: usize) -> Result<NestedOutcome, ProbError> {
        let outer_budget = (tol.max_points / 21).clamp(1, tolerance::NESTED_MAX_INTERVALS);
        let mut prefix = Vec::with_capacity(self.variables);
        self.nested_level(
            &mut prefix,
            0.5 * tol.abs,
            0.5 * tol.rel,
            outer_budget,
            max_evaluations,
        )
    }

    /// `P(variables prefix.len().. in their bounds | earlier variables = prefix)` to about
    /// `max(abs, rel * value)`.
    fn nested_level(
        &self,
        prefix: &mut Vec<f64>,
        abs: f64,
        rel: f64,
        max_intervals: usize,
        max_evaluations: usize,
    ) -> Result<NestedOutcome, ProbError> {
        let none = NestedOutcome {
            value: 0.0,
            error: 0.0,
            evaluations: 0,
            converged: true,
        };
        let j = prefix.len();
        if self.variables <= j + 2 {
            let e = self.pair_tail(prefix);
            return Ok(NestedOutcome {
                value: e.value,
                error: e.error,
                evaluations: 1,
                converged: true,
            });
        }
        let Some((a, b)) = bounds(&self.groups[j], prefix) else {
            return Ok(none);
        };
        let Some(switches) = self.switches(prefix, a, b) else {
            return Ok(none);
        };
        let (a, b) = (switches.lower, switches.upper);
        let mass = normal::interval(a, b);
        if mass.is_nan() || mass <= 0.0 {
            return Ok(none);
        }
        let prism = if self.last_is_faint() {
            self.vertex_projections(prefix, true)
        } else {
            Vec::new()
        };
        let breakpoints: Vec<f64> = self
            .vertex_projections(prefix, false)
            .into_iter()
            .chain(prism)
            .chain(switches.points)
            .filter(|t| *t > a && *t < b)
            .map(|t| normal::interval(a, t) / mass)
            .filter(|u| u.is_finite() && *u > 0.0 && *u < 1.0)
            .collect();
        // Half of the target for this rule, half for the inner values it integrates. (A
        // subnormal mass would overflow the quotient; the target is then unbounded.)
        let (inner_abs, inner_rel) = ((0.5 * abs / mass).min(f64::MAX), 0.5 * rel);
        // Each interval between breakpoints costs at least one Kronrod rule here, each of
        // whose nodes costs at least one below.
        let nodes = 21 * (breakpoints.len() + 1);
        let least = if self.variables > j + 3 {
            nodes * 21
        } else {
            nodes
        };
        let over_budget = |evaluations: usize| ProbError::BudgetExhausted {
            achieved: f64::INFINITY,
            requested: abs.max(rel),
            points: evaluations,
        };
        if least > max_evaluations {
            return Err(over_budget(least));
        }
        let opts = QuadratureOptions {
            abs_tol: inner_abs,
            rel_tol: 0.5 * rel,
            max_intervals: max_intervals + breakpoints.len(),
        };
        let mut evaluations = 0usize;
        let mut converged = true;
        let (integral, ok) = quadrature::integrate_with_status(
            |u| {
                prefix.push(conditional_draw(a, b, mass, u));
                let inner = self.nested_level(
                    prefix,
                    inner_abs,
                    inner_rel,
                    tolerance::NESTED_INNER_MAX_INTERVALS,
                    max_evaluations.saturating_sub(evaluations),
                );
                prefix.pop();
                let inner = inner?;
                evaluations += inner.evaluations;
                if evaluations > max_evaluations {
                    return Err(over_budget(evaluations));
                }
                converged &= inner.converged;
                Ok(Estimate::new(inner.value, inner.error))
            },
            0.0,
            1.0,
            &breakpoints,
            &opts,
        )?;
        Ok(NestedOutcome {
            value: mass * integral.value,
            error: mass * integral.error,
            evaluations,
            converged: converged && ok,
        })
    }

    /// How the rows of the later variables switch on and off as the variable
    /// `j = prefix.len()` moves through `(a, b)`, for the nested rule.
    ///
    /// Given the earlier variables and `w_j = t`, a later row `lower <= s + c t + R <= upper`
    /// has `R ~ N(0, rest^2)` (the row's weight on the variables after `j`), so its
    /// conditional slab probability is a smoothed step in `t` centred at `(end - s) / c` of
    /// width `rest / |c|`. Where some row's probability is below `Phi(-W_CLAMP)` (under the
    /// smallest double) the integrand is zero to machine precision: the interval is cut
    /// there, which the exact answer does not notice. A step whose steep middle holds less
    /// than [`tolerance::NESTED_NARROW_SWITCH`] of the interval's mass gets breakpoints
    /// around it, and so does a kink where two rows of one later group trade places. Both matter when the directions are nearly parallel (channel sigmas decades
    /// apart) or a step lies in a tail: the integrand then lives on, or changes over, a
    /// sliver of the interval that the Kronrod nodes of the whole interval never sample.
    /// `None` when the cut leaves nothing.
    fn switches(&self, prefix: &[f64], a: f64, b: f64) -> Option<Switches> {
        let j = prefix.len();
        let (mut lower, mut upper) = (a, b);
        let mut points = Vec::new();
        let mass = normal::interval(a, b);
        // Breakpoints around a switch centred at `centre` of width `width` when it holds a
        // small share of the interval's mass: the Kronrod nodes are spread by mass (the
        // rule runs over Genz's uniform variable), so a switch that is narrow or far in a
        // tail falls between them.
        let mut narrow = |centre: f64, width: f64, reach: f64| {
            let middle = reach * width;
            let share = normal::interval((centre - middle).max(a), (centre + middle).min(b)) / mass;
            if share < tolerance::NESTED_NARROW_SWITCH {
                for step in tolerance::NESTED_SWITCH_STEPS {
                    points.push(centre - step * width);
                    points.push(centre + step * width);
                }
            }
        };
        for row in self.groups.iter().skip(j + 1).flatten() {
            let c = row.coef.get(j).copied().unwrap_or(0.0);
            if c == 0.0 || !c.is_finite() {
                continue;
            }
            let s: f64 = row.coef.iter().zip(prefix).map(|(v, y)| v * y).sum();
            let own = if row.indicator { 0.0 } else { 1.0 };
            let rest = (row.coef.iter().skip(j + 1).map(|v| v * v).sum::<f64>() + own).sqrt();
            let width = rest / c.abs();
            for (end, is_lower) in [(row.lower, true), (row.upper, false)] {
                if !end.is_finite() {
                    continue;
                }
                let centre = (end - s) / c;
                // The row needs c t above (lower end) or below (upper end) end - s, give or
                // take W_CLAMP * rest; which side of the centre survives depends on c's sign.
                if is_lower == (c > 0.0) {
                    lower = lower.max(centre - W_CLAMP * width);
                } else {
                    upper = upper.min(centre + W_CLAMP * width);
                }
                // a step: judged by its steep middle (the outer steps reach its flat ends)
                narrow(centre, width, tolerance::NESTED_SWITCH_STEPS[1]);
            }
        }
        // Two rows of one later group bound its variable in turn: the bound passes from
        // one to the other where `(coef_a - coef_b) . w = end_a - end_b`, a kink of the
        // integrand blurred only by the variables between `j` and the group (the group's
        // own variable cancels), however steep each row is on its own.
        for group in self.groups.iter().skip(j + 1) {
            let strips: Vec<&PlanRow> = group.iter().filter(|row| !row.indicator).collect();
            for (i, first) in strips.iter().enumerate() {
                for second in &strips[i + 1..] {
                    let diff = |k: usize| {
                        first.coef.get(k).copied().unwrap_or(0.0)
                            - second.coef.get(k).copied().unwrap_or(0.0)
                    };
                    let c = diff(j);
                    if c == 0.0 || !c.is_finite() {
                        continue;
                    }
                    let len = first.coef.len().max(second.coef.len());
                    let s: f64 = (0..j).map(|k| diff(k) * prefix[k]).sum();
                    let rest = (j + 1..len).map(|k| diff(k) * diff(k)).sum::<f64>().sqrt();
                    for ea in [first.lower, first.upper] {
                        for eb in [second.lower, second.upper] {
                            if ea.is_finite() && eb.is_finite() {
                                // a kink: judged by its whole reach, a kink the
                                // nodes straddle is resolved by bisection
                                let reach = tolerance::NESTED_SWITCH_STEPS[2];
                                narrow((ea - eb - s) / c, rest / c.abs(), reach);
                            }
                        }
                    }
                }
            }
        }
        (lower < upper).then_some(Switches {
            lower,
            upper,
            points,
        })
    }

    /// Bound on what the residual directions dropped by [`Plan::build`] can change (each
    /// as a random shift of its row's ends).
    fn neglect_error(&self) -> f64 {
        self.neglected.iter().map(UnitRow::tilt_error).sum()
    }

    /// Whether the last variable has, in some row of its group, a weight below
    /// [`tolerance::NESTED_NARROW_SWITCH`] times the row's other coefficients (its rows
    /// are then nearly parallel to it; see [`Plan::vertex_projections`]).
    fn last_is_faint(&self) -> bool {
        self.groups.last().is_some_and(|group| {
            group.iter().any(|row| {
                let others = row.coef.iter().map(|c| c * c).sum::<f64>().sqrt();
                !row.indicator && tolerance::NESTED_NARROW_SWITCH * others > 1.0
            })
        })
    }

    /// Whether the vertex enumeration of the nested path stays small: at most
    /// [`tolerance::NESTED_MAX_PLANE_SETS`] sets of planes for the whole polytope.
    fn nested_fits(&self) -> bool {
        let k = self.variables;
        let planes: usize = self
            .groups
            .iter()
            .flatten()
            .map(|row| usize::from(row.lower.is_finite()) + usize::from(row.upper.is_finite()))
            .sum();
        let mut sets: u128 = 1;
        for i in 0..k as u128 {
            sets = sets * (planes as u128).saturating_sub(i) / (i + 1);
        }
        // Four variables work too (an inner rule per outer node); the caller tries the
        // lattice rule on them first.
        (k == 3 || k == 4) && sets <= tolerance::NESTED_MAX_PLANE_SETS
    }

    /// The probability of the first variable's interval (the whole answer when there is
    /// only one variable).
    fn first_factor(&self) -> f64 {
        let w: [f64; 0] = [];
        match self.groups.first() {
            Some(group) => match bounds(group, &w) {
                Some((a, b)) => normal::interval(a, b),
                None => 0.0,
            },
            None => 1.0,
        }
    }

    /// The integrand at a point `x` of the unit cube of dimension `variables - 1`.
    fn eval(&self, x: &[f64], w: &mut [f64]) -> f64 {
        let mut prod = 1.0;
        for (j, group) in self.groups.iter().enumerate() {
            let Some((a, b)) = bounds(group, &w[..j]) else {
                return 0.0;
            };
            let mass = normal::interval(a, b);
            prod *= mass;
            if prod.is_nan() || prod <= 0.0 {
                return 0.0;
            }
            if j + 1 < self.variables {
                w[j] = conditional_draw(a, b, mass, x[j]);
            }
        }
        prod
    }

    /// The coordinate of variable `prefix.len()` at every vertex of the slice of the
    /// polytope where the earlier variables equal `prefix`: each set of `k` constraint
    /// planes (`k` the variables left) meeting in one point that satisfies every row, to a
    /// rounding allowance. Vertices slightly outside only add harmless breakpoints.
    ///
    /// With `drop_last`, the vertices of the cross-section where the last variable is 0
    /// instead (one variable fewer). When the last variable's weight in its rows is tiny
    /// next to their other coefficients (nearly parallel directions), the polytope is,
    /// to within that weight, a prism along it, and the prism's edges put near-kinks into
    /// the integrand that the true vertices do not mark; the rows' planes are blurred by
    /// the dropped variable, so their copies shifted by [`tolerance::NESTED_SWITCH_STEPS`]
    /// count as planes too.
    fn vertex_projections(&self, prefix: &[f64], drop_last: bool) -> Vec<f64> {
        let j0 = prefix.len();
        let k = self
            .variables
            .saturating_sub(j0)
            .saturating_sub(usize::from(drop_last));
        if k == 0 {
            return Vec::new();
        }
        // (row, lower, upper, blur): `blur` is 1 for a row whose own (dropped) variable
        // still enters it with weight 1, else 0.
        let mut rows: Vec<(Vec<f64>, f64, f64, f64)> = Vec::new();
        for (j, group) in self.groups.iter().enumerate().skip(j0) {
            for row in group {
                let s: f64 = row.coef.iter().zip(prefix).map(|(c, y)| c * y).sum();
                let mut r = vec![0.0; k];
                for (i, c) in row.coef.iter().enumerate().skip(j0).take(k) {
                    r[i - j0] = *c;
                }
                let own_dropped = !row.indicator && j - j0 >= k;
                if !row.indicator && !own_dropped {
                    r[j - j0] = 1.0;
                }
                if r.iter().all(|c| *c == 0.0) {
                    // A row on the dropped variable alone: no plane of the cross-section.
                    continue;
                }
                let blur = if own_dropped { 1.0 } else { 0.0 };
                rows.push((r, row.lower - s, row.upper - s, blur));
            }
        }
        // A row with its own variable dropped is a plane blurred by that standard normal:
        // the integrand changes fast where the blurred band meets the other planes, so its
        // copies shifted by the switch steps are planes too.
        let mut planes: Vec<(&[f64], f64)> = Vec::new();
        for (r, lo, hi, blur) in &rows {
            for end in [*lo, *hi] {
                if end.is_finite() {
                    for step in tolerance::NESTED_SWITCH_STEPS {
                        planes.push((r.as_slice(), end - step * blur));
                        if step * blur > 0.0 {
                            planes.push((r.as_slice(), end + step * blur));
                        }
                    }
                }
            }
        }
        planes.dedup();
        let mut out = Vec::new();
        let mut chosen: Vec<usize> = (0..k).collect();
        if planes.len() < k {
            return out;
        }
        let mut set: Vec<(&[f64], f64)> = Vec::with_capacity(k);
        loop {
            set.clear();
            set.extend(chosen.iter().map(|&i| planes[i]));
            if let Some(x) = solve_planes(&set) {
                let size = 1.0 + x.iter().map(|t| t.abs()).sum::<f64>();
                let reach = tolerance::NESTED_SWITCH_STEPS[2];
                let feasible = rows.iter().all(|(r, lo, hi, blur)| {
                    let v: f64 = r.iter().zip(&x).map(|(a, b)| a * b).sum();
                    // relative to the row's own scale (rows divided by a tiny leading
                    // coefficient reach 1e12), and across a blurred row's band
                    let norm = r.iter().map(|a| a.abs()).fold(0.0, f64::max);
                    let slack = tolerance::VERTEX_SLACK_REL * size * norm.max(1.0) + reach * blur;
                    v >= lo - slack && v <= hi + slack
                });
                if feasible {
                    out.push(x[0]);
                }
            }
            // Next k-subset in lexicographic order.
            let n = planes.len();
            let mut i = k;
            while i > 0 && chosen[i - 1] == n - k + i - 1 {
                i -= 1;
            }
            if i == 0 {
                break;
            }
            chosen[i - 1] += 1;
            for t in i..k {
                chosen[t] = chosen[t - 1] + 1;
            }
        }
        out.sort_by(f64::total_cmp);
        out.dedup();
        out
    }

    /// The integrand with the last two variables exact, at a point `x` of the unit cube of
    /// dimension `variables - 2`.
    fn eval_with_pair(&self, x: &[f64], w: &mut [f64]) -> f64 {
        let head = self.variables.saturating_sub(2);
        let mut prod = 1.0;
        for (j, group) in self.groups.iter().enumerate().take(head) {
            let Some((a, b)) = bounds(group, &w[..j]) else {
                return 0.0;
            };
            let mass = normal::interval(a, b);
            prod *= mass;
            if prod.is_nan() || prod <= 0.0 {
                return 0.0;
            }
            w[j] = conditional_draw(a, b, mass, x[j]);
        }
        prod * self.pair_tail(&w[..head]).value
    }

    /// A lattice run for this plan: over `variables - 2` dimensions with the last two
    /// variables exact (`exact_pair`, four or more variables), else `variables - 1`.
    fn lattice_run(&self, seed: u64, exact_pair: bool) -> lattice::Run {
        let dim = if exact_pair && self.variables >= 4 {
            self.variables - 2
        } else {
            self.variables - 1
        };
        lattice::Run::new(dim, seed, lattice::Periodisation::Polynomial)
    }

    /// Go on with a run from [`Plan::lattice_run`] (the same `exact_pair`) up to
    /// `max_points` in all.
    fn lattice_extend<T: Fn(f64) -> f64>(
        &self,
        run: &mut lattice::Run,
        max_points: usize,
        target: T,
        exact_pair: bool,
    ) -> lattice::Outcome {
        let mut w = vec![0.0; self.variables];
        if exact_pair && self.variables >= 4 {
            run.extend(max_points, target, |x| self.eval_with_pair(x, &mut w))
        } else {
            run.extend(max_points, target, |x| self.eval(x, &mut w))
        }
    }
}

/// What the geometry of the rows alone says about the probability of their polytope.
#[derive(Debug, Clone, Copy)]
enum Depth {
    /// No point within [`normal::UNDERFLOW_X`] of the origin in every coordinate is
    /// inside: the probability is below every double.
    Empty,
    /// The probability is at most this.
    Thin(f64),
}

/// An upper bound on the probability of the polytope of `rows` (in `rank` standard normal
/// coordinates) from how deep a point can lie inside it: [`feasibility::margin_bound`]
/// within the box `|z_j| <= UNDERFLOW_X`, outside which the probability is below every
/// double. A negative margin proves the polytope empty. Otherwise a convex body of
/// inradius `t` in `n` dimensions is at most `2 t sqrt(n + 1)` wide (Steinhagen 1922,
/// Abh. Math. Sem. Univ. Hamburg 1:15-26: `2 t sqrt(n)` for odd `n`, `2 t (n + 1) / sqrt(n + 2)`
/// for even `n`), so it lies in a slab of that width, whose probability is at most the
/// width times the largest normal density `1 / sqrt(2 pi)`. Row ends move out first by
/// their rounding slack and by what the rounding of their directions can change within
/// the box (`UnitRow::dir_error`), so that the proof holds for the exact rows.
fn depth_bound(rows: &[UnitRow], rank: usize) -> Depth {
    let negated: Vec<Vec<f64>> = rows
        .iter()
        .map(|row| row.dir.iter().map(|v| -v).collect())
        .collect();
    let radius = normal::UNDERFLOW_X;
    let n = rank as f64;
    let mut spaces = Vec::with_capacity(2 * rows.len());
    for (row, minus) in rows.iter().zip(&negated) {
        // Within the box, |z| <= radius sqrt(n).
        let give = row.slack + row.dir_error * radius * n.sqrt();
        if row.upper.is_finite() {
            spaces.push(HalfSpace {
                normal: &row.dir,
                offset: row.upper + give,
            });
        }
        if row.lower.is_finite() {
            spaces.push(HalfSpace {
                normal: minus,
                offset: -row.lower + give,
            });
        }
    }
    let outside = (2.0 * n * normal::sf(radius)).min(1.0);
    match feasibility::margin_bound(&spaces, rank, radius) {
        Some(margin) if margin < 0.0 => Depth::Empty,
        Some(margin) => {
            let width = 2.0 * (n + 1.0).sqrt() * margin;
            Depth::Thin((width * normal::pdf(0.0) + outside).min(1.0))
        }
        None => Depth::Thin(1.0),
    }
}

/// The point where `k` planes `r . x = e` in `k` dimensions meet, by Gaussian elimination
/// with partial pivoting; `None` when they do not meet in one point (nearly parallel
/// planes: a pivot below `SINGULAR_PLANES_REL` after scaling the normals to unit length).
fn solve_planes(planes: &[(&[f64], f64)]) -> Option<Vec<f64>> {
    const MAX: usize = 4;
    let k = planes.len();
    if k == 0 || k > MAX {
        return None;
    }
    // Stack storage: the vertex enumeration solves many small systems.
    // Each plane scaled to a unit normal first: planes of very different scales (rows
    // divided by a tiny leading coefficient next to plain bounds) would otherwise make the
    // small one look like a rounding remainder of the large one.
    let mut m = [[0.0f64; MAX + 1]; MAX];
    for (row, (r, e)) in m.iter_mut().zip(planes) {
        let norm = r.iter().take(k).map(|v| v * v).sum::<f64>().sqrt();
        if norm == 0.0 || !norm.is_finite() {
            return None;
        }
        for (slot, v) in row.iter_mut().zip(r.iter().take(k)) {
            *slot = *v / norm;
        }
        row[k] = *e / norm;
    }
    for col in 0..k {
        let pivot = (col..k).max_by(|&a, &b| m[a][col].abs().total_cmp(&m[b][col].abs()))?;
        if m[pivot][col].abs() <= tolerance::SINGULAR_PLANES_REL {
            return None;
        }
        m.swap(col, pivot);
        let (done, rest) = m.split_at_mut(col + 1);
        let pivot_row = &done[col];
        for row in rest.iter_mut().take(k - col - 1) {
            let f = row[col] / pivot_row[col];
            if f != 0.0 {
                for (target, source) in row[col..=k].iter_mut().zip(&pivot_row[col..=k]) {
                    *target -= f * source;
                }
            }
        }
    }
    let mut x = vec![0.0; k];
    for row in (0..k).rev() {
        let s: f64 = (row + 1..k).map(|c| m[row][c] * x[c]).sum();
        x[row] = (m[row][k] - s) / m[row][row];
    }
    x.iter().all(|t| t.is_finite()).then_some(x)
}

/// Combined bounds `(a, b)` of a variable given the earlier ones, `None` when empty.
fn bounds(group: &[PlanRow], w: &[f64]) -> Option<(f64, f64)> {
    let (mut a, mut b) = (f64::NEG_INFINITY, f64::INFINITY);
    for row in group {
        let s: f64 = row.coef.iter().zip(w.iter()).map(|(c, y)| c * y).sum();
        if row.indicator {
            if !(row.lower <= s && s <= row.upper) {
                return None;
            }
            continue;
        }
        a = a.max(row.lower - s);
        b = b.min(row.upper - s);
    }
    if a < b { Some((a, b)) } else { None }
}
