//! Building piecewise-linear functions: linear forms, order statistics (median, min, max,
//! range) and linear combinations of piecewise functions.
//!
//! An order statistic of k arguments has one piece per total ordering of the arguments (k!
//! pieces), each carrying all k(k-1)/2 pairwise guards. For arguments p < q (by position in
//! the canonical order of readings: channels in file order, then signals in file order) with
//! `d = arg_q - arg_p`, the ordering that puts p first has the guard `d >= 0` and the one that
//! puts q first has `-d > 0`: ties go to the lower position, so every point lies in exactly
//! one piece, and the two guards are exact negations of each other (coefficients negated bit
//! for bit, zeros stored as +0.0), which the analysis uses to find empty intersections.
//!
//! A linear combination of piecewise functions multiplies out their pieces; a pair of pieces
//! whose guards hold a guard and its exact negation is empty and dropped; identical guards are
//! merged (the same argument pair always yields the same guard, since it is built from the
//! same forms by the same arithmetic). Guards are interned so that these tests are integer
//! comparisons.

use std::collections::HashMap;

use super::compiled::{Guard, LinearForm, Piece, PiecewiseLinear};
use super::limits::{MAX_PIECES, MAX_PRODUCT_PAIRS};

/// Why a function could not be built.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum PieceError {
    /// More than `MAX_PIECES` pieces.
    TooManyPieces,
    /// More than `MAX_PRODUCT_PAIRS` pairs of pieces to examine.
    TooManyPairs,
}

/// Which order statistic.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum OrderKind {
    Median,
    Min,
    Max,
    /// max - min
    Range,
}

/// A piece with interned guards (sorted ids).
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct IPiece {
    pub guards: Vec<u32>,
    pub value: LinearForm,
}

/// A piecewise-linear function with interned guards.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Pw {
    pub pieces: Vec<IPiece>,
}

type Key = (Vec<u64>, u64, bool);

/// One combination of pieces: the merged guards and the value of each factor.
type Combo = (Vec<u32>, Vec<LinearForm>);

/// A guard after simplification.
#[derive(Clone)]
enum Interned {
    Always,
    Never,
    Id(u32),
}

/// Interns guards and builds functions over `n` channels.
pub(crate) struct Builder {
    n: usize,
    guards: Vec<Guard>,
    index: HashMap<Key, u32>,
    /// Id of the exact negation, once it exists.
    neg: Vec<Option<u32>>,
}

fn clean(x: f64) -> f64 {
    // -0.0 + 0.0 == +0.0; every other value is unchanged
    x + 0.0
}

fn key(form: &LinearForm, strict: bool) -> Key {
    (
        form.coeffs.iter().map(|c| c.to_bits()).collect(),
        form.constant.to_bits(),
        strict,
    )
}

/// `a - b`, coefficient by coefficient, zeros as +0.0.
fn sub(a: &LinearForm, b: &LinearForm) -> LinearForm {
    LinearForm {
        coeffs: a
            .coeffs
            .iter()
            .zip(&b.coeffs)
            .map(|(x, y)| clean(x - y))
            .collect(),
        constant: clean(a.constant - b.constant),
    }
}

/// `-a`, zeros as +0.0.
fn neg(a: &LinearForm) -> LinearForm {
    LinearForm {
        coeffs: a.coeffs.iter().map(|x| clean(-x)).collect(),
        constant: clean(-a.constant),
    }
}

/// `sum_t w_t * f_t + constant`.
fn combine_forms(terms: &[(f64, &LinearForm)], constant: f64, n: usize) -> LinearForm {
    let mut out = LinearForm::zero(n);
    for (w, f) in terms {
        for (o, c) in out.coeffs.iter_mut().zip(&f.coeffs) {
            *o += w * c;
        }
        out.constant += w * f.constant;
    }
    out.constant += constant;
    for c in out.coeffs.iter_mut() {
        *c = clean(*c);
    }
    out.constant = clean(out.constant);
    out
}

/// All permutations of `0..k` in lexicographic order.
fn permutations(k: usize) -> Vec<Vec<usize>> {
    let mut p: Vec<usize> = (0..k).collect();
    let mut out = vec![p.clone()];
    loop {
        // next permutation (Knuth, TAOCP 7.2.1.2, Algorithm L)
        let Some(i) = (1..k).rev().find(|&i| p[i - 1] < p[i]) else {
            return out;
        };
        let i = i - 1;
        let Some(j) = (i + 1..k).rev().find(|&j| p[j] > p[i]) else {
            return out;
        };
        p.swap(i, j);
        p[i + 1..].reverse();
        out.push(p.clone());
    }
}

impl Builder {
    pub(crate) fn new(n: usize) -> Builder {
        Builder {
            n,
            guards: Vec::new(),
            index: HashMap::new(),
            neg: Vec::new(),
        }
    }

    /// Interns `form > 0` (strict) or `form >= 0`; a constant form is decided at once.
    fn intern(&mut self, form: LinearForm, strict: bool) -> Interned {
        if form.is_constant() {
            let c = form.constant;
            let holds = if strict { c > 0.0 } else { c >= 0.0 };
            return if holds {
                Interned::Always
            } else {
                Interned::Never
            };
        }
        let k = key(&form, strict);
        if let Some(id) = self.index.get(&k) {
            return Interned::Id(*id);
        }
        let id = self.guards.len() as u32;
        let negated = neg(&form);
        let nk = key(&negated, !strict);
        let nid = self.index.get(&nk).copied();
        if let Some(nid) = nid
            && let Some(slot) = self.neg.get_mut(nid as usize)
        {
            *slot = Some(id);
        }
        self.guards.push(Guard { form, strict });
        self.neg.push(nid);
        self.index.insert(k, id);
        Interned::Id(id)
    }

    /// Union of two sorted guard lists; `None` when it holds a guard and its negation.
    fn merge(&self, a: &[u32], b: &[u32]) -> Option<Vec<u32>> {
        let mut out = Vec::with_capacity(a.len() + b.len());
        let (mut i, mut j) = (0, 0);
        while i < a.len() || j < b.len() {
            let next = match (a.get(i), b.get(j)) {
                (Some(x), Some(y)) if x == y => {
                    i += 1;
                    j += 1;
                    *x
                }
                (Some(x), Some(y)) if x < y => {
                    i += 1;
                    *x
                }
                (Some(x), None) => {
                    i += 1;
                    *x
                }
                (_, Some(y)) => {
                    j += 1;
                    *y
                }
                (None, None) => break,
            };
            out.push(next);
        }
        for g in &out {
            if let Some(Some(n)) = self.neg.get(*g as usize)
                && out.binary_search(n).is_ok()
            {
                return None;
            }
        }
        Some(out)
    }

    /// A linear function.
    pub(crate) fn linear(&self, form: LinearForm) -> Pw {
        Pw {
            pieces: vec![IPiece {
                guards: Vec::new(),
                value: form,
            }],
        }
    }

    /// Every non-empty combination of one piece from each function: (guards, values).
    fn product(&self, fns: &[&Pw]) -> Result<Vec<Combo>, PieceError> {
        let mut acc: Vec<Combo> = vec![(Vec::new(), Vec::new())];
        let mut pairs = 0usize;
        for f in fns {
            let mut next = Vec::new();
            for (guards, values) in &acc {
                for p in &f.pieces {
                    pairs += 1;
                    if pairs > MAX_PRODUCT_PAIRS {
                        return Err(PieceError::TooManyPairs);
                    }
                    if let Some(g) = self.merge(guards, &p.guards) {
                        let mut v = values.clone();
                        v.push(p.value.clone());
                        next.push((g, v));
                        if next.len() > MAX_PIECES {
                            return Err(PieceError::TooManyPieces);
                        }
                    }
                }
            }
            acc = next;
        }
        Ok(acc)
    }

    /// `sum_t w_t * f_t + constant` for piecewise `f_t`.
    pub(crate) fn combine(&self, terms: &[(f64, &Pw)], constant: f64) -> Result<Pw, PieceError> {
        let fns: Vec<&Pw> = terms.iter().map(|(_, f)| *f).collect();
        let combos = self.product(&fns)?;
        let pieces = combos
            .into_iter()
            .map(|(guards, values)| {
                let t: Vec<(f64, &LinearForm)> =
                    terms.iter().map(|(w, _)| *w).zip(values.iter()).collect();
                IPiece {
                    guards,
                    value: combine_forms(&t, constant, self.n),
                }
            })
            .collect();
        Ok(Pw { pieces })
    }

    /// An order statistic of `args` (given in canonical order).
    pub(crate) fn order(&mut self, args: &[&Pw], kind: OrderKind) -> Result<Pw, PieceError> {
        let k = args.len();
        if k == 0 {
            return Ok(self.linear(LinearForm::zero(self.n)));
        }
        let combos = self.product(args)?;
        let perms = permutations(k);
        if perms.len().saturating_mul(combos.len()) > MAX_PRODUCT_PAIRS {
            return Err(PieceError::TooManyPairs);
        }
        let mut pieces = Vec::new();
        for (base, vals) in combos {
            // pair guards: (p, q) -> (guard when p comes first, guard when q comes first)
            let mut pair: Vec<Vec<(Interned, Interned)>> = Vec::with_capacity(k);
            for p in 0..k {
                let mut row = Vec::new();
                for q in 0..k {
                    if q <= p {
                        row.push((Interned::Always, Interned::Always));
                        continue;
                    }
                    let d = sub(&vals[q], &vals[p]);
                    let nd = neg(&d);
                    let first_p = self.intern(d, false);
                    let first_q = self.intern(nd, true);
                    row.push((first_p, first_q));
                }
                pair.push(row);
            }
            'perm: for perm in &perms {
                let mut pos = vec![0usize; k];
                for (rank, arg) in perm.iter().enumerate() {
                    pos[*arg] = rank;
                }
                let mut own = Vec::new();
                for p in 0..k {
                    for q in p + 1..k {
                        let (a, b) = &pair[p][q];
                        let g = if pos[p] < pos[q] { a } else { b };
                        match g {
                            Interned::Always => {}
                            Interned::Never => continue 'perm,
                            Interned::Id(id) => own.push(*id),
                        }
                    }
                }
                own.sort_unstable();
                own.dedup();
                let Some(guards) = self.merge(&base, &own) else {
                    continue;
                };
                let v = |r: usize| &vals[perm[r]];
                let value = match kind {
                    OrderKind::Min => v(0).clone(),
                    OrderKind::Max => v(k - 1).clone(),
                    OrderKind::Range => {
                        combine_forms(&[(1.0, v(k - 1)), (-1.0, v(0))], 0.0, self.n)
                    }
                    OrderKind::Median if k % 2 == 1 => v(k / 2).clone(),
                    OrderKind::Median => {
                        combine_forms(&[(0.5, v(k / 2 - 1)), (0.5, v(k / 2))], 0.0, self.n)
                    }
                };
                pieces.push(IPiece { guards, value });
                if pieces.len() > MAX_PIECES {
                    return Err(PieceError::TooManyPieces);
                }
            }
        }
        Ok(Pw { pieces })
    }

    /// The public form, with guards spelled out.
    pub(crate) fn export(&self, pw: &Pw) -> PiecewiseLinear {
        PiecewiseLinear {
            pieces: pw
                .pieces
                .iter()
                .map(|p| Piece {
                    guards: p
                        .guards
                        .iter()
                        .filter_map(|id| self.guards.get(*id as usize).cloned())
                        .collect(),
                    value: p.value.clone(),
                })
                .collect(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn permutations_are_all_distinct() {
        let p = permutations(4);
        assert_eq!(p.len(), 24); // 4! = 24
        let mut q = p.clone();
        q.sort();
        q.dedup();
        assert_eq!(q.len(), 24);
    }

    #[test]
    fn median_of_three_has_six_pieces_with_three_guards() {
        let mut b = Builder::new(3);
        let args: Vec<Pw> = (0..3)
            .map(|i| b.linear(LinearForm::coordinate(3, i)))
            .collect();
        let refs: Vec<&Pw> = args.iter().collect();
        let m = b
            .order(&refs, OrderKind::Median)
            .unwrap_or(Pw { pieces: vec![] });
        assert_eq!(m.pieces.len(), 6);
        assert!(m.pieces.iter().all(|p| p.guards.len() == 3));
        let f = b.export(&m);
        // ties: (1, 1, 0) lies in exactly one piece, and the median is 1
        assert_eq!(f.count_containing(&[1.0, 1.0, 0.0]), 1);
        assert_eq!(f.eval(&[1.0, 1.0, 0.0]), 1.0);
        assert_eq!(f.count_containing(&[2.0, 2.0, 2.0]), 1);
    }

    #[test]
    fn product_of_same_orderings_drops_contradictions() {
        let mut b = Builder::new(3);
        let args: Vec<Pw> = (0..3)
            .map(|i| b.linear(LinearForm::coordinate(3, i)))
            .collect();
        let refs: Vec<&Pw> = args.iter().collect();
        let m = b
            .order(&refs, OrderKind::Median)
            .unwrap_or(Pw { pieces: vec![] });
        let s = b
            .order(&refs, OrderKind::Range)
            .unwrap_or(Pw { pieces: vec![] });
        // median + range over the same arguments: 6 x 6 pairs, only the 6 matching survive
        let c = b
            .combine(&[(1.0, &m), (1.0, &s)], 0.0)
            .unwrap_or(Pw { pieces: vec![] });
        assert_eq!(c.pieces.len(), 6);
    }
}
