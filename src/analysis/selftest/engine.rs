//! Selftest cases of the probability engine: each function of `prob` against mpmath tables
//! and a published closed form.

use nalgebra::DMatrix;
use serde::Deserialize;

use crate::prob::polytope::{Band, ErrorTarget, Gaussian, Polytope};
use crate::prob::quadrature::{QuadratureOptions, integrate};
use crate::prob::{Estimate, bivariate, normal, tolerance};

use super::{Case, Measure, ReferenceData};

/// Relative accuracy asked of the normal CDF and upper tail (Cody 1969 rational
/// approximations with complementary forms in the tails; measured against mpmath at 1e-15
/// in tests/prob_normal.rs, asked here with a margin).
pub const NORMAL_REL: f64 = 1e-14;

/// Rounding allowance of a reference computed in double precision from terms of size 1.
const ROUNDING: f64 = 8.0 * f64::EPSILON;

/// One row of the normal table.
#[derive(Debug, Clone, Deserialize)]
pub struct NormalRow {
    /// The argument.
    pub x: f64,
    /// `Phi(x)`.
    pub cdf: f64,
    /// `1 - Phi(x)`.
    pub sf: f64,
}

/// One row of the bivariate table.
#[derive(Debug, Clone, Deserialize)]
pub struct BivariateRow {
    /// First limit.
    pub h: f64,
    /// Second limit.
    pub k: f64,
    /// Correlation.
    pub rho: f64,
    /// `P(X <= h, Y <= k)`.
    pub lower_orthant: f64,
}

/// A number that may be written as `"inf"` or `"-inf"` in the table.
#[derive(Debug, Clone, Copy, Deserialize)]
#[serde(untagged)]
pub enum Limit {
    /// A finite number.
    Number(f64),
    /// `"inf"` or `"-inf"`.
    Text(TextLimit),
}

/// An infinite limit written as text.
#[derive(Debug, Clone, Copy, Deserialize)]
pub enum TextLimit {
    /// `+inf`.
    #[serde(rename = "inf")]
    Plus,
    /// `-inf`.
    #[serde(rename = "-inf")]
    Minus,
}

impl Limit {
    /// The value as a float.
    pub fn value(self) -> f64 {
        match self {
            Limit::Number(v) => v,
            Limit::Text(TextLimit::Plus) => f64::INFINITY,
            Limit::Text(TextLimit::Minus) => f64::NEG_INFINITY,
        }
    }
}

/// One gaussian vector in a box.
#[derive(Debug, Clone, Deserialize)]
pub struct PolytopeRow {
    /// Case name in the stored table.
    pub name: String,
    /// How the reference was computed.
    pub source: String,
    /// Mean vector.
    pub mean: Vec<f64>,
    /// Covariance, row by row.
    pub cov: Vec<Vec<f64>>,
    /// Lower ends of the box.
    pub lower: Vec<Limit>,
    /// Upper ends of the box.
    pub upper: Vec<Limit>,
    /// The probability.
    pub value: f64,
    /// The reference's own tolerance.
    pub tol: f64,
}

/// One definite integral.
#[derive(Debug, Clone, Deserialize)]
pub struct QuadratureRow {
    /// Name in the stored table; the integrand is defined in [`integrand`].
    pub name: String,
    /// The integral.
    pub value: f64,
}

const NORMAL: &str = "normal distribution";
const BIVARIATE: &str = "bivariate normal";
const SHEPPARD: &str = "bivariate normal, closed form";
const POLYTOPE: &str = "gaussian vector in a box";
const QUADRATURE: &str = "adaptive quadrature";

/// `Phi(x)` for `x <= 0` and the upper tail `1 - Phi(x)` for `x > 0`, relative, against
/// mpmath.
pub fn normal_cases(data: &ReferenceData) -> Vec<Case> {
    data.normal
        .iter()
        .map(|row| {
            let (name, computed, reference) = if row.x <= 0.0 {
                (format!("Phi({})", row.x), normal::cdf(row.x), row.cdf)
            } else {
                (format!("1 - Phi({})", row.x), normal::sf(row.x), row.sf)
            };
            Case::new(
                NORMAL,
                name,
                data.sources.normal.clone(),
                Ok((computed, 0.0)),
                reference,
                NORMAL_REL * reference.abs(),
                Measure::Relative,
            )
        })
        .collect()
}

/// `P(X <= h, Y <= k)` by Genz (2004) against mpmath, absolute (and relative in the tail,
/// as the engine promises).
pub fn bivariate_cases(data: &ReferenceData) -> Vec<Case> {
    data.bivariate
        .iter()
        .map(|row| {
            let computed = bivariate::lower_orthant(row.h, row.k, row.rho);
            Case::new(
                BIVARIATE,
                format!("P(X<={}, Y<={}; rho={})", row.h, row.k, row.rho),
                data.sources.bivariate.clone(),
                Ok((computed, 0.0)),
                row.lower_orthant,
                tolerance::BIVARIATE_ORTHANT_ABS
                    + tolerance::BIVARIATE_ORTHANT_REL * row.lower_orthant.abs(),
                Measure::Absolute,
            )
        })
        .collect()
}

/// Sheppard's (1899) orthant formula: `P(X <= 0, Y <= 0) = 1/4 + asin(rho) / (2 pi)` for
/// standard normals with correlation `rho` (also Owen 1956, eq. 2.7).
pub fn sheppard_cases(data: &ReferenceData) -> Vec<Case> {
    let _ = data;
    [-0.99f64, -0.7, -0.25, 0.0, 0.1, 0.5, 0.9, 0.999]
        .iter()
        .map(|&rho| {
            let reference = 0.25 + rho.asin() / (2.0 * std::f64::consts::PI);
            Case::new(
                SHEPPARD,
                format!("P(X<=0, Y<=0; rho={rho})"),
                "Sheppard (1899) orthant formula 1/4 + asin(rho)/(2 pi)",
                Ok((bivariate::lower_orthant(0.0, 0.0, rho), 0.0)),
                reference,
                tolerance::BIVARIATE_ORTHANT_ABS + ROUNDING,
                Measure::Absolute,
            )
        })
        .collect()
}

/// Gaussian vectors of three to six coordinates in boxes, against mpmath one-factor
/// reductions (40 digits); relative, so the tail cases near 1e-11 count.
pub fn polytope_cases(data: &ReferenceData) -> Vec<Case> {
    let tol = ErrorTarget {
        abs: 1e-15,
        rel: 1e-7,
        max_points: 4_000_000,
    };
    data.polytope
        .iter()
        .map(|row| {
            let computed = box_probability(row, &tol)
                .map(|e| (e.value, e.error))
                .map_err(|e| e.to_string());
            Case::new(
                POLYTOPE,
                format!("{} (n = {})", row.name, row.mean.len()),
                format!("{} ({})", data.sources.polytope, row.source),
                computed,
                row.value,
                row.tol + 1e-15,
                Measure::Relative,
            )
        })
        .collect()
}

fn box_probability(
    row: &PolytopeRow,
    tol: &ErrorTarget,
) -> Result<Estimate, crate::prob::ProbError> {
    let n = row.mean.len();
    let cov = DMatrix::from_fn(n, n, |i, j| {
        row.cov
            .get(i)
            .and_then(|r| r.get(j))
            .copied()
            .unwrap_or(f64::NAN)
    });
    let gaussian = Gaussian::new(&row.mean, &cov)?;
    let mut polytope = Polytope::new();
    for (i, (lo, hi)) in row.lower.iter().zip(&row.upper).enumerate() {
        let mut unit = vec![0.0; n];
        if let Some(u) = unit.get_mut(i) {
            *u = 1.0;
        }
        polytope.push(unit, Band::closed(lo.value(), hi.value()));
    }
    gaussian.probability(&polytope, tol)
}

/// An integrand with its interval `[a, b]` and breakpoints.
pub type Integrand = (fn(f64) -> f64, f64, f64, Vec<f64>);

/// The integrand of a stored quadrature case, with its interval and breakpoints.
pub fn integrand(name: &str) -> Option<Integrand> {
    fn exp_sin50(x: f64) -> f64 {
        (-x).exp() * (50.0 * x).sin()
    }
    fn exp_over(x: f64) -> f64 {
        (-x).exp() / (1.0 + x * x)
    }
    fn kink(x: f64) -> f64 {
        (x - 1.0 / 3.0).abs() * x.exp()
    }
    match name {
        "exp_sin50_0_pi" => Some((exp_sin50, 0.0, std::f64::consts::PI, Vec::new())),
        "exp_over_1px2_0_inf" => Some((exp_over, 0.0, f64::INFINITY, Vec::new())),
        "kink_times_exp" => Some((kink, 0.0, 1.0, vec![1.0 / 3.0])),
        _ => None,
    }
}

/// Adaptive Gauss–Kronrod (QUADPACK style, Piessens et al. 1983) against mpmath integrals.
pub fn quadrature_cases(data: &ReferenceData) -> Vec<Case> {
    let opts = QuadratureOptions {
        abs_tol: 1e-13,
        rel_tol: 1e-10,
        max_intervals: 500,
    };
    data.quadrature
        .iter()
        .map(|row| {
            let computed = match integrand(&row.name) {
                Some((f, a, b, breaks)) => {
                    integrate(|x| Ok(Estimate::new(f(x), 0.0)), a, b, &breaks, &opts)
                        .map(|r| (r.value, r.error))
                        .map_err(|e| e.to_string())
                }
                None => Err(format!("no integrand named {} in this build", row.name)),
            };
            Case::new(
                QUADRATURE,
                row.name.clone(),
                data.sources.quadrature.clone(),
                computed,
                row.value,
                ROUNDING * row.value.abs().max(1.0 / 50.0),
                Measure::Absolute,
            )
        })
        .collect()
}
