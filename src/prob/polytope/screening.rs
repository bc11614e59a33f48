//! Screening bounds: the pair law of two unit rows and what the geometry alone says
//! (emptiness proof, depth bound).

use crate::prob::bivariate::StandardBivariate;
use crate::prob::feasibility::{self, HalfSpace};
use crate::prob::normal;

use super::reduction::UnitRow;

/// The standard bivariate law of two unit directions: correlation their cosine, and the
/// complement `sqrt(1 - rho^2)` their sine from Lagrange's identity
/// `|a|^2 |b|^2 - (a.b)^2 = sum_{i<j} (a_i b_j - a_j b_i)^2`, which keeps full relative
/// precision for nearly parallel directions (channel sigmas decades apart), where
/// `1 - rho^2` from a rounded cosine would not (see [`StandardBivariate::with_complement`]).
pub(super) fn pair_law(first: &UnitRow, second: &UnitRow) -> StandardBivariate {
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

/// What the geometry of the rows alone says about the probability of their polytope.
#[derive(Debug, Clone, Copy)]
pub(super) enum Depth {
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
pub(super) fn depth_bound(rows: &[UnitRow], rank: usize) -> Depth {
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

/// Allowance for rounding in [`Gaussian::empty_for_every_shift`], relative to the sizes of
/// the terms of a row: far above the unit roundoff of the few sums involved, and far below
/// the margins by which the polytopes of an analysis are empty (a standard deviation or so).
const SHIFT_EMPTY_GIVE_REL: f64 = 1e-12;

impl super::Gaussian {
    /// Whether the polytope is empty for every shift of the mean by `amplitude * direction`
    /// with the amplitude in `[lower, upper]`: a proof, not a guess. The rows are written in
    /// the standard normal coordinates `z` and the amplitude together, the amplitude scaled
    /// so that its range is the box side, and [`feasibility::margin_bound`] must prove that
    /// no point of `|z_j| <= UNDERFLOW_X` (outside which the probability is below every
    /// double) and of the range lies inside. Each row end moves out first by
    /// [`SHIFT_EMPTY_GIVE_REL`] of the row's terms; a row that reads neither `z` nor the
    /// amplitude is left out. Both only widen the polytope, so they can only cost a proof.
    /// An integral over a uniform amplitude uses it to skip the polytopes that only the
    /// combination of their rows empties (three checks on differences whose tripping
    /// states contradict, say), which are otherwise found empty at every point of the rule.
    pub fn empty_for_every_shift(
        &self,
        polytope: &super::Polytope,
        direction: &[f64],
        lower: f64,
        upper: f64,
    ) -> bool {
        let (dim, rank) = (self.dim(), self.rank());
        if direction.len() != dim
            || polytope.rows.len() != polytope.bands.len()
            || !(lower.is_finite() && upper.is_finite() && lower <= upper)
        {
            return false;
        }
        let radius = normal::UNDERFLOW_X;
        let (mid, half) = (0.5 * (lower + upper), 0.5 * (upper - lower));
        // Half-space normals over (z, t), with F = mid + half t / radius, |t| <= radius.
        let mut normals: Vec<Vec<f64>> = Vec::with_capacity(2 * polytope.rows.len());
        let mut offsets: Vec<f64> = Vec::with_capacity(2 * polytope.rows.len());
        for (row, band) in polytope.rows.iter().zip(&polytope.bands) {
            if row.len() != dim {
                return false;
            }
            let mut b = vec![0.0; rank + 1];
            let (mut shift, mut shift_size, mut gain, mut gain_size, mut spread) =
                (0.0, 0.0, 0.0, 0.0, 0.0);
            for (i, &a) in row.iter().enumerate() {
                if a == 0.0 {
                    continue;
                }
                shift += a * self.mean[i];
                shift_size += (a * self.mean[i]).abs();
                gain += a * direction[i];
                gain_size += (a * direction[i]).abs();
                let l = self.factor.row(i);
                spread += a.abs() * l.iter().map(|v| v * v).sum::<f64>().sqrt();
                for (bk, &lk) in b.iter_mut().zip(l) {
                    *bk += a * lk;
                }
            }
            b[rank] = gain * half / radius;
            let norm = b.iter().map(|v| v * v).sum::<f64>().sqrt();
            if !(norm > 0.0 && norm.is_finite()) {
                continue;
            }
            let centre = shift + gain * mid;
            let ends = [band.lower, band.upper]
                .iter()
                .filter(|v| v.is_finite())
                .fold(0.0_f64, |m, v| m.max(v.abs()));
            let give = SHIFT_EMPTY_GIVE_REL
                * (ends
                    + shift_size
                    + gain_size * (mid.abs() + half)
                    + (spread + norm) * radius * ((rank + 1) as f64).sqrt())
                / norm;
            let unit: Vec<f64> = b.iter().map(|v| v / norm).collect();
            if band.upper.is_finite() {
                normals.push(unit.clone());
                offsets.push((band.upper - centre) / norm + give);
            }
            if band.lower.is_finite() {
                normals.push(unit.iter().map(|v| -v).collect());
                offsets.push((centre - band.lower) / norm + give);
            }
        }
        if normals.is_empty() {
            return false;
        }
        let spaces: Vec<HalfSpace> = normals
            .iter()
            .zip(&offsets)
            .map(|(normal, &offset)| HalfSpace { normal, offset })
            .collect();
        matches!(
            feasibility::margin_bound(&spaces, rank + 1, radius),
            Some(margin) if margin < 0.0
        )
    }
}
