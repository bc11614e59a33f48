//! The built-in validation suite behind `concord selftest`: reference cases that a tool
//! assessment (ISO 26262-8:2018 clause 11, confidence in the use of software tools) can cite.
//!
//! Every case computes one number with concord and compares it with a value from outside the
//! project, within a stated bound:
//!
//! - [`engine`]: the standard normal distribution, the bivariate normal, polytope
//!   probabilities and the adaptive quadrature against mpmath tables; Sheppard's (1899)
//!   orthant formula as a published closed form.
//! - [`whole`]: whole analyses against the stored SciPy/mpmath table of two independent
//!   integrations, a factorised closed form derived by hand, and agreement with the
//!   independent Monte Carlo engine.
//! - [`isolation`]: the blame of a channel stuck far outside by hand, a pair that never
//!   names a channel, and a degraded stage stated in the file against a closed form.
//! - [`sensitivity`]: derivatives of the false alarm and the residual of two channels on a
//!   shared source, derived by hand.
//! - [`timed`]: the confirmation chains against Feller's success runs and mean waiting time,
//!   and a whole timed analysis against them.
//!
//! The reference values are compiled into the binary (`reference.json` beside this file,
//! written by `tests/reference/selftest_reference.py` from the stored tables of
//! `tests/reference/`), so the suite runs wherever the binary runs. The suite is
//! deterministic: the same build gives the same report, whatever the thread count.

pub mod engine;
pub mod isolation;
pub mod sensitivity;
pub mod timed;
pub mod whole;

use rayon::prelude::*;
use serde::Deserialize;

use super::error::AnalysisError;

/// How the error and the bound of a case are measured.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Measure {
    /// `|computed - reference|`.
    Absolute,
    /// `|computed - reference| / |reference|` (tail probabilities of any size).
    Relative,
}

impl Measure {
    /// `absolute` or `relative`.
    pub fn key(self) -> &'static str {
        match self {
            Measure::Absolute => "absolute",
            Measure::Relative => "relative",
        }
    }
}

/// One case of the suite: what was computed, against what, and whether it passed.
#[derive(Debug, Clone, PartialEq)]
pub struct Case {
    /// The group, e.g. `normal distribution`.
    pub group: &'static str,
    /// The case, e.g. `Phi(-37.5)`.
    pub name: String,
    /// Where the reference comes from (paper, formula, table and the tool that made it).
    pub source: String,
    /// The value concord computed; `None` when the computation failed (see `note`).
    pub computed: Option<f64>,
    /// The reference value.
    pub reference: f64,
    /// How `error` and `bound` are measured.
    pub measure: Measure,
    /// The difference between computed and reference (in `measure`).
    pub error: f64,
    /// The largest difference allowed: concord's own error bound plus the reference's
    /// tolerance (in `measure`).
    pub bound: f64,
    /// Whether `error <= bound` (and the computation succeeded).
    pub pass: bool,
    /// Why the case failed to compute, if it did.
    pub note: Option<String>,
}

impl Case {
    /// A case from a computed value (or the error of its computation) and its bound.
    /// `concord_bound` is concord's own absolute error bound, `allowance` the absolute
    /// tolerance of the reference plus rounding; with [`Measure::Relative`] both are divided
    /// by `|reference|`.
    pub fn new(
        group: &'static str,
        name: impl Into<String>,
        source: impl Into<String>,
        computed: Result<(f64, f64), String>,
        reference: f64,
        allowance: f64,
        measure: Measure,
    ) -> Self {
        let (computed, error, bound, note) = match computed {
            Ok((value, concord_bound)) => {
                let diff = (value - reference).abs();
                let bound = concord_bound + allowance;
                match measure {
                    Measure::Absolute => (Some(value), diff, bound, None),
                    Measure::Relative => {
                        let scale = reference.abs();
                        if scale > 0.0 {
                            (Some(value), diff / scale, bound / scale, None)
                        } else {
                            (Some(value), diff, bound, None)
                        }
                    }
                }
            }
            Err(message) => (None, f64::INFINITY, allowance, Some(message)),
        };
        let pass = computed.is_some() && error.is_finite() && error <= bound;
        Self {
            group,
            name: name.into(),
            source: source.into(),
            computed,
            reference,
            measure,
            error,
            bound,
            pass,
            note,
        }
    }
}

/// The result of the whole suite, cases in a fixed order.
#[derive(Debug, Clone, PartialEq)]
pub struct SelfTest {
    /// Every case, grouped, in a fixed order.
    pub cases: Vec<Case>,
}

impl SelfTest {
    /// Number of cases that passed.
    pub fn passed(&self) -> usize {
        self.cases.iter().filter(|c| c.pass).count()
    }

    /// Number of cases that failed.
    pub fn failed(&self) -> usize {
        self.cases.len() - self.passed()
    }

    /// Whether every case passed.
    pub fn all_passed(&self) -> bool {
        self.failed() == 0
    }

    /// The groups in order of first appearance, with their case counts.
    pub fn groups(&self) -> Vec<(&'static str, usize)> {
        let mut out: Vec<(&'static str, usize)> = Vec::new();
        for c in &self.cases {
            match out.iter_mut().find(|(g, _)| *g == c.group) {
                Some((_, n)) => *n += 1,
                None => out.push((c.group, 1)),
            }
        }
        out
    }
}

/// The compiled reference data (see the module notes).
#[derive(Debug, Clone, Deserialize)]
pub struct ReferenceData {
    /// The script that wrote the data.
    pub generator: String,
    /// Where each group's values come from.
    pub sources: Sources,
    /// Standard normal CDF and upper tail.
    pub normal: Vec<engine::NormalRow>,
    /// Bivariate normal lower orthants.
    pub bivariate: Vec<engine::BivariateRow>,
    /// Gaussian vectors in boxes.
    pub polytope: Vec<engine::PolytopeRow>,
    /// Definite integrals.
    pub quadrature: Vec<engine::QuadratureRow>,
    /// Whole analyses.
    pub analysis: Vec<whole::AnalysisRow>,
}

/// Where each group of the reference data comes from.
#[derive(Debug, Clone, Deserialize)]
pub struct Sources {
    /// The normal table.
    pub normal: String,
    /// The bivariate table.
    pub bivariate: String,
    /// The polytope table.
    pub polytope: String,
    /// The quadrature table.
    pub quadrature: String,
    /// The whole-analysis table.
    pub analysis: String,
}

/// The text of the compiled reference data.
pub const REFERENCE_JSON: &str = include_str!("reference.json");

/// Parses the compiled reference data.
///
/// # Errors
/// [`AnalysisError::ReferenceData`] when the data do not parse (a defect of the build).
pub fn reference_data() -> Result<ReferenceData, AnalysisError> {
    serde_json::from_str(REFERENCE_JSON).map_err(|e| AnalysisError::ReferenceData(e.to_string()))
}

/// One group of cases: evaluated from the reference data.
pub type Group = fn(&ReferenceData) -> Vec<Case>;

/// Runs the whole suite. A case that cannot be computed is a failed case, not an error.
///
/// # Errors
/// [`AnalysisError::ReferenceData`] when the compiled reference data do not parse.
pub fn run() -> Result<SelfTest, AnalysisError> {
    let data = reference_data()?;
    // Groups run in parallel; each is deterministic and the order of the result is fixed.
    let jobs: [Group; 12] = [
        engine::normal_cases,
        engine::bivariate_cases,
        engine::sheppard_cases,
        engine::polytope_cases,
        engine::quadrature_cases,
        whole::closed_form_cases,
        whole::order_statistic_cases,
        whole::reference_table_cases,
        whole::monte_carlo_cases,
        timed::timing_cases,
        isolation::isolation_cases,
        sensitivity::sensitivity_cases,
    ];
    let cases: Vec<Vec<Case>> = jobs.par_iter().map(|job| job(&data)).collect();
    Ok(SelfTest {
        cases: cases.into_iter().flatten().collect(),
    })
}
