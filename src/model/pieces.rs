//! Building piecewise-linear functions: linear forms, order statistics (median, min, max,
//! range) and linear combinations of piecewise functions.
//!
//! An order statistic of k arguments has one piece per rank pattern that decides its value
//! (which argument is the minimum; which two are the minimum and the maximum of a range;
//! which is the middle, or the middle pair, of a median and which lie below it), not one
//! per ordering: 12 pieces for a range or an even median of four where the orderings are 24.
//! A piece's guards compare neighbouring blocks of its pattern. For arguments p < q (by position in
//! the canonical order of readings: channels in file order, then signals in file order) with
//! `d = arg_q - arg_p`, the ordering that puts p first has the guard `d >= 0` and the one that
//! puts q first has `-d > 0`: ties go to the lower position, so every point lies in exactly
//! one piece, and the two guards are exact negations of each other (coefficients negated bit
//! for bit, zeros stored as +0.0), which the analysis uses to find empty intersections.
//!
//! A linear combination of piecewise functions multiplies out their pieces; a pair of pieces
//! whose guards hold a guard and its exact negation, or two or three guards whose forms
//! cancel with one strict (a cycle, [`guards_contradict`]), is empty and dropped; identical guards are
//! merged (the same argument pair always yields the same guard, since it is built from the
//! same forms by the same arithmetic). Guards are interned so that these tests are integer
//! comparisons.

use std::collections::HashMap;

use super::compiled::{Guard, LinearForm, OrderStat, Piece, PiecewiseLinear, guards_contradict};
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

/// The arguments of an order statistic split into blocks, every argument of a block before
/// every argument of the next, and the value as weights on arguments: the rank pattern that
/// decides the statistic. "Before" is the strict total order of the readings with ties
/// broken by position, so every point has exactly one ordering and lies in exactly one
/// pattern of each kind.
#[derive(Debug, Clone, PartialEq)]
struct RankPattern {
    blocks: Vec<Vec<usize>>,
    value: Vec<(f64, usize)>,
}

/// `n choose r`, saturating.
fn choose(n: usize, r: usize) -> usize {
    if r > n {
        return 0;
    }
    let r = r.min(n - r);
    let mut out: usize = 1;
    for i in 0..r {
        out = out.saturating_mul(n - i) / (i + 1);
    }
    out
}

/// How many rank patterns [`rank_patterns`] gives, without building them.
pub(crate) fn rank_pattern_count(k: usize, kind: OrderKind) -> usize {
    match kind {
        _ if k <= 1 => 1,
        OrderKind::Min | OrderKind::Max => k,
        OrderKind::Range => k * (k - 1),
        OrderKind::Median if k % 2 == 1 => k.saturating_mul(choose(k - 1, k / 2)),
        OrderKind::Median => choose(k, 2).saturating_mul(choose(k - 2, k / 2 - 1)),
    }
}

/// The pieces an order statistic `stat` (a range for `None`) of `k` arguments compiles to,
/// at least (each combination with the pieces of its arguments adds more).
pub fn order_piece_count(stat: Option<OrderStat>, k: usize) -> usize {
    let kind = match stat {
        None => OrderKind::Range,
        Some(OrderStat::Median) => OrderKind::Median,
        Some(OrderStat::Min) => OrderKind::Min,
        Some(OrderStat::Max) => OrderKind::Max,
    };
    rank_pattern_count(k, kind)
}

/// The rank patterns of an order statistic of `k` arguments: the pieces it needs.
/// - min (max): which argument is first (last): `k` patterns;
/// - range: which is first and which is last: `k (k - 1)`;
/// - median of odd `k`: which is the middle and which lie below it: `k C(k-1, (k-1)/2)`;
/// - median of even `k` (the mean of the middle two): which pair is in the middle and which
///   lie below it: `C(k, 2) C(k-2, k/2-1)`.
///
/// Every ordering of the arguments falls in exactly one pattern, and the statistic is the
/// same linear form on all of them, so these pieces are the orderings merged where the
/// value agrees (`k!` orderings before: 24 for four arguments, where a range or an even
/// median needs 12).
fn rank_patterns(k: usize, kind: OrderKind) -> Vec<RankPattern> {
    let all: Vec<usize> = (0..k).collect();
    let without = |skip: &[usize]| -> Vec<usize> {
        all.iter().copied().filter(|i| !skip.contains(i)).collect()
    };
    let mut out = Vec::new();
    if k == 1 {
        let value = match kind {
            OrderKind::Range => Vec::new(),
            _ => vec![(1.0, 0)],
        };
        out.push(RankPattern {
            blocks: vec![vec![0]],
            value,
        });
        return out;
    }
    match kind {
        OrderKind::Min => {
            for i in 0..k {
                out.push(RankPattern {
                    blocks: vec![vec![i], without(&[i])],
                    value: vec![(1.0, i)],
                });
            }
        }
        OrderKind::Max => {
            for i in 0..k {
                out.push(RankPattern {
                    blocks: vec![without(&[i]), vec![i]],
                    value: vec![(1.0, i)],
                });
            }
        }
        OrderKind::Range => {
            for first in 0..k {
                for last in 0..k {
                    if first == last {
                        continue;
                    }
                    let middle = without(&[first, last]);
                    let blocks = if middle.is_empty() {
                        vec![vec![first], vec![last]]
                    } else {
                        vec![vec![first], middle, vec![last]]
                    };
                    out.push(RankPattern {
                        blocks,
                        value: vec![(1.0, last), (-1.0, first)],
                    });
                }
            }
        }
        OrderKind::Median => {
            let middles: Vec<Vec<usize>> = if k % 2 == 1 {
                (0..k).map(|i| vec![i]).collect()
            } else {
                (0..k)
                    .flat_map(|j| (j + 1..k).map(move |l| vec![j, l]))
                    .collect()
            };
            let below_count = (k - 1) / 2;
            for middle in middles {
                let rest = without(&middle);
                for below in subsets(&rest, below_count) {
                    let above: Vec<usize> = rest
                        .iter()
                        .copied()
                        .filter(|i| !below.contains(i))
                        .collect();
                    let mut blocks = Vec::with_capacity(3);
                    if !below.is_empty() {
                        blocks.push(below);
                    }
                    blocks.push(middle.clone());
                    if !above.is_empty() {
                        blocks.push(above);
                    }
                    let value = if middle.len() == 1 {
                        vec![(1.0, middle[0])]
                    } else {
                        middle.iter().map(|i| (0.5, *i)).collect()
                    };
                    out.push(RankPattern { blocks, value });
                }
            }
        }
    }
    out
}

/// Every subset of `items` with `size` elements, in lexicographic order of positions.
fn subsets(items: &[usize], size: usize) -> Vec<Vec<usize>> {
    let n = items.len();
    if size > n {
        return Vec::new();
    }
    let mut out = Vec::new();
    let mut idx: Vec<usize> = (0..size).collect();
    loop {
        out.push(idx.iter().map(|i| items[*i]).collect());
        // next combination: the rightmost index that can still move
        let Some(i) = (0..size).rev().find(|&i| idx[i] < n - size + i) else {
            return out;
        };
        idx[i] += 1;
        for j in i + 1..size {
            idx[j] = idx[j - 1] + 1;
        }
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
        let spelled: Vec<&Guard> = out
            .iter()
            .filter_map(|id| self.guards.get(*id as usize))
            .collect();
        if guards_contradict(&spelled) {
            return None;
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
    ///
    /// One piece per rank pattern that decides the value (see [`rank_patterns`]), not per
    /// ordering: the guards say which arguments come before which, between neighbouring
    /// blocks of the pattern only (the rest follows by transitivity).
    pub(crate) fn order(&mut self, args: &[&Pw], kind: OrderKind) -> Result<Pw, PieceError> {
        let k = args.len();
        if k == 0 {
            return Ok(self.linear(LinearForm::zero(self.n)));
        }
        let count = rank_pattern_count(k, kind);
        if count > MAX_PIECES {
            return Err(PieceError::TooManyPieces);
        }
        let combos = self.product(args)?;
        if count.saturating_mul(combos.len()) > MAX_PRODUCT_PAIRS {
            return Err(PieceError::TooManyPairs);
        }
        let patterns = rank_patterns(k, kind);
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
            // the guard "a comes before b"
            let before = |a: usize, b: usize| -> &Interned {
                if a < b { &pair[a][b].0 } else { &pair[b][a].1 }
            };
            'pattern: for pattern in &patterns {
                let mut own = Vec::new();
                for blocks in pattern.blocks.windows(2) {
                    for &a in &blocks[0] {
                        for &b in &blocks[1] {
                            match before(a, b) {
                                Interned::Always => {}
                                Interned::Never => continue 'pattern,
                                Interned::Id(id) => own.push(*id),
                            }
                        }
                    }
                }
                own.sort_unstable();
                own.dedup();
                let Some(guards) = self.merge(&base, &own) else {
                    continue;
                };
                let terms: Vec<(f64, &LinearForm)> =
                    pattern.value.iter().map(|(w, i)| (*w, &vals[*i])).collect();
                let value = match terms.as_slice() {
                    [(w, form)] if *w == 1.0 => (*form).clone(),
                    _ => combine_forms(&terms, 0.0, self.n),
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
    fn rank_patterns_are_counted_and_distinct() {
        // Counts of the rank patterns (combinatorics, common practice): which argument is
        // first or last, which pair of them, or which is the middle and which lie below.
        for k in 1..=8 {
            for kind in [
                OrderKind::Min,
                OrderKind::Max,
                OrderKind::Range,
                OrderKind::Median,
            ] {
                let patterns = rank_patterns(k, kind);
                assert_eq!(patterns.len(), rank_pattern_count(k, kind), "{k} {kind:?}");
                let mut distinct = patterns.clone();
                distinct.dedup();
                assert_eq!(distinct.len(), patterns.len());
            }
        }
        assert_eq!(rank_pattern_count(4, OrderKind::Median), 12); // 6 pairs x 2 below
        assert_eq!(rank_pattern_count(5, OrderKind::Median), 30); // 5 x C(4, 2)
        assert_eq!(rank_pattern_count(16, OrderKind::Range), 240);
    }

    #[test]
    fn every_ordering_falls_in_exactly_one_rank_pattern() {
        // Every ordering of five distinct readings (the 120 orderings of a small brute
        // force) lies in one piece of each statistic, whose value is the statistic.
        for k in 1..=5usize {
            let mut b = Builder::new(k);
            let args: Vec<Pw> = (0..k)
                .map(|i| b.linear(LinearForm::coordinate(k, i)))
                .collect();
            let refs: Vec<&Pw> = args.iter().collect();
            let mut x: Vec<f64> = (0..k).map(|i| i as f64).collect();
            // Heap's algorithm over the values (order of visits does not matter)
            let mut orderings = Vec::new();
            permute(&mut x, k, &mut orderings);
            for kind in [
                OrderKind::Min,
                OrderKind::Max,
                OrderKind::Range,
                OrderKind::Median,
            ] {
                let f = b
                    .order(&refs, kind)
                    .map(|pw| b.export(&pw))
                    .unwrap_or(PiecewiseLinear { pieces: vec![] });
                for point in &orderings {
                    assert_eq!(f.count_containing(point), 1, "{kind:?} {point:?}");
                    let mut sorted = point.clone();
                    sorted.sort_by(f64::total_cmp);
                    let want = match kind {
                        OrderKind::Min => sorted[0],
                        OrderKind::Max => sorted[k - 1],
                        OrderKind::Range => sorted[k - 1] - sorted[0],
                        OrderKind::Median if k % 2 == 1 => sorted[k / 2],
                        OrderKind::Median => 0.5 * (sorted[k / 2 - 1] + sorted[k / 2]),
                    };
                    assert_eq!(f.eval(point), want, "{kind:?} {point:?}");
                }
                // ties lie in exactly one piece too
                assert_eq!(f.count_containing(&vec![1.0; k]), 1);
            }
        }
    }

    fn permute(x: &mut Vec<f64>, m: usize, out: &mut Vec<Vec<f64>>) {
        if m <= 1 {
            out.push(x.clone());
            return;
        }
        for i in 0..m {
            permute(x, m - 1, out);
            let j = if m.is_multiple_of(2) { i } else { 0 };
            x.swap(j, m - 1);
        }
    }

    #[test]
    fn median_of_three_has_six_pieces_with_two_guards() {
        let mut b = Builder::new(3);
        let args: Vec<Pw> = (0..3)
            .map(|i| b.linear(LinearForm::coordinate(3, i)))
            .collect();
        let refs: Vec<&Pw> = args.iter().collect();
        let m = b
            .order(&refs, OrderKind::Median)
            .unwrap_or(Pw { pieces: vec![] });
        assert_eq!(m.pieces.len(), 6);
        assert!(m.pieces.iter().all(|p| p.guards.len() == 2));
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
