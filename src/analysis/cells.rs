//! The decomposition of an architecture into linear cells.
//!
//! The output and every check are piecewise-linear functions of the channel deviations `x`.
//! Their common refinement splits `x`-space into disjoint convex cells (for order statistics:
//! rank patterns of the channels, see `model::pieces`); inside a cell the output and every check are affine, so every
//! event of the analysis (violation, detection, their complements) is, inside the cell, a
//! finite union of disjoint polytopes. DEVELOPERS.md "How a figure is computed" describes the
//! approach.

use crate::model::{
    CompiledModel, Detection, Formula, Guard, LinearForm, guards_contradict, order_piece_count,
};

use super::error::AnalysisError;

/// Upper limit on cells after the product of pieces (as many as the orderings of seven
/// inputs).
pub const MAX_CELLS: usize = 5040;

/// A convex region of `x`-space where the output and every check are affine.
#[derive(Debug, Clone, PartialEq)]
pub struct Cell {
    /// Half-space conditions that define the region (all must hold).
    pub guards: Vec<Guard>,
    /// The output inside the cell.
    pub output: LinearForm,
    /// Each check's value inside the cell, in the model's check order.
    pub checks: Vec<LinearForm>,
}

/// The cells of a model together with the bands that classify outcomes.
#[derive(Debug, Clone)]
pub struct CellSet {
    /// Disjoint cells that together cover `x`-space.
    pub cells: Vec<Cell>,
    /// Safety band `[lower, upper]` of the output (violated outside, strictly).
    pub safety: (f64, f64),
    /// Pass band `[lower, upper]` of each check (fires outside, strictly).
    pub check_bands: Vec<(f64, f64)>,
    /// How check firings combine into detection.
    pub detection: Detection,
}

impl CellSet {
    /// Builds the cells of a compiled model: the product of the pieces of the output and of
    /// every check, without the combinations whose guards contradict each other.
    ///
    /// # Errors
    /// [`AnalysisError::TooLarge`] when the product has more than [`MAX_CELLS`] cells.
    pub fn from_model(model: &CompiledModel) -> Result<Self, AnalysisError> {
        if !model.pieces_complete {
            return Err(AnalysisError::TooLarge {
                what: "the linear pieces of the output, a check or a signal (a median of more \
                       than eleven arguments, or a product of order statistics, cannot be \
                       multiplied out)"
                    .into(),
                unit: "pieces",
                limit: crate::model::limits::MAX_PIECES,
                found: largest_order_piece_count(model),
            });
        }
        let cells: Vec<Cell> = model
            .output
            .pieces
            .iter()
            .map(|piece| Cell {
                guards: merge_guards(&[], &piece.guards).unwrap_or_default(),
                output: piece.value.clone(),
                checks: Vec::new(),
            })
            .collect();
        Self::with_checks(model, cells)
    }

    /// The cells of the checks alone (the output left as the form 0): for events that do not
    /// look at the output, such as which channel a detection blames, so that its orderings
    /// do not split them.
    ///
    /// # Errors
    /// As [`CellSet::from_model`].
    pub fn from_checks(model: &CompiledModel) -> Result<Self, AnalysisError> {
        if !model.pieces_complete {
            return Self::from_model(model);
        }
        let n = model.channels.len();
        let start = vec![Cell {
            guards: Vec::new(),
            output: LinearForm::zero(n),
            checks: Vec::new(),
        }];
        Self::with_checks(model, start)
    }

    /// `cells` multiplied by the pieces of every check.
    fn with_checks(model: &CompiledModel, mut cells: Vec<Cell>) -> Result<Self, AnalysisError> {
        for check in &model.checks {
            let mut next = Vec::new();
            for cell in &cells {
                for piece in &check.function.pieces {
                    if let Some(guards) = merge_guards(&cell.guards, &piece.guards) {
                        let mut checks = cell.checks.clone();
                        checks.push(piece.value.clone());
                        next.push(Cell {
                            guards,
                            output: cell.output.clone(),
                            checks,
                        });
                        if next.len() > MAX_CELLS {
                            return Err(AnalysisError::TooLarge {
                                what: format!(
                                    "the product of the pieces of the output and the checks up to '{}'",
                                    check.name
                                ),
                                unit: "cells",
                                limit: MAX_CELLS,
                                found: next.len(),
                            });
                        }
                    }
                }
            }
            cells = next;
        }
        Ok(Self {
            cells,
            safety: (model.safety_lower, model.safety_upper),
            check_bands: model.checks.iter().map(|c| (c.lower, c.upper)).collect(),
            detection: model.detection,
        })
    }

    /// Number of channels (the dimension of `x`).
    pub fn dim(&self) -> usize {
        self.cells.first().map_or(0, |c| c.output.coeffs.len())
    }
}

/// Joins two guard lists; `None` when they contradict (a guard and its exact negation with
/// at least one strict side, or two or three guards that cancel with one strict, a
/// cycle: the intersection is empty). Identical guards are kept once; of
/// a strict and a non-strict copy of the same half-space the strict one is kept.
fn merge_guards(left: &[Guard], right: &[Guard]) -> Option<Vec<Guard>> {
    let mut merged: Vec<Guard> = Vec::with_capacity(left.len() + right.len());
    for guard in left.iter().chain(right) {
        let mut keep = true;
        for existing in merged.iter_mut() {
            if same_form(&existing.form, &guard.form) {
                existing.strict |= guard.strict;
                keep = false;
                break;
            }
            if negated_form(&existing.form, &guard.form) && (existing.strict || guard.strict) {
                return None;
            }
        }
        if keep {
            merged.push(guard.clone());
        }
    }
    let spelled: Vec<&Guard> = merged.iter().collect();
    if guards_contradict(&spelled) {
        return None;
    }
    Some(merged)
}

fn same_form(a: &LinearForm, b: &LinearForm) -> bool {
    a.constant == b.constant && a.coeffs == b.coeffs
}

fn negated_form(a: &LinearForm, b: &LinearForm) -> bool {
    a.constant == -b.constant && a.coeffs.iter().zip(&b.coeffs).all(|(p, q)| *p == -*q)
}

/// The most pieces that one order statistic or range of the model's functions needs on its
/// own (its rank patterns, see `model::order_piece_count`; saturating).
fn largest_order_piece_count(model: &CompiledModel) -> usize {
    fn most_pieces(f: &Formula) -> usize {
        match f {
            Formula::Channel(_) => 0,
            Formula::Sum { terms, .. } => {
                terms.iter().map(|(_, t)| most_pieces(t)).max().unwrap_or(0)
            }
            Formula::Order { stat, args } => args
                .iter()
                .map(most_pieces)
                .max()
                .unwrap_or(0)
                .max(order_piece_count(Some(*stat), args.len())),
            Formula::Range(args) => args
                .iter()
                .map(most_pieces)
                .max()
                .unwrap_or(0)
                .max(order_piece_count(None, args.len())),
        }
    }
    std::iter::once(&model.output_formula)
        .chain(model.checks.iter().map(|c| &c.formula))
        .map(most_pieces)
        .max()
        .unwrap_or(0)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn form(coeffs: &[f64]) -> LinearForm {
        LinearForm {
            coeffs: coeffs.to_vec(),
            constant: 0.0,
        }
    }

    #[test]
    fn a_guard_and_its_strict_negation_contradict() {
        let ge = Guard {
            form: form(&[1.0, -1.0]),
            strict: false,
        };
        let gt_neg = Guard {
            form: form(&[-1.0, 1.0]),
            strict: true,
        };
        assert_eq!(merge_guards(std::slice::from_ref(&ge), &[gt_neg]), None);
        // The same guard twice is kept once.
        assert_eq!(
            merge_guards(std::slice::from_ref(&ge), std::slice::from_ref(&ge)),
            Some(vec![ge])
        );
    }
}
