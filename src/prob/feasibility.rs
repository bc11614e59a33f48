//! How deep inside a polytope any point can lie: a verified upper bound on the largest
//! margin `t` for which some `z` satisfies `g_i . z + t <= h_i` for every half-space
//! `g_i . z <= h_i` (unit normals) and also `|z_j| + t <= radius` for every face of the box
//! `|z_j| <= radius`; that is, on the inradius of the polytope cut to the box. A negative
//! bound proves that no point of the box lies in the polytope; a small positive one bounds
//! the inradius, hence the width and the probability (see [`crate::prob::polytope`]).
//!
//! The bound is linear programming duality (Farkas' lemma): for multipliers `lambda >= 0`
//! on the half-spaces and on the faces of the box, and any `z` of the box, the smallest
//! slack `min_i (h_i - g_i . z)` over both is at most their weighted mean
//! `sum_i lambda_i (h_i - g_i . z) / sum_i lambda_i`, which is at most
//! `(h . lambda + radius |G^T lambda|_1) / sum_i lambda_i`. A small dense simplex method
//! (two phases, Bland's rule against cycling; Chvátal 1983, *Linear Programming*, ch. 3
//! and 8) looks for the multipliers that make this smallest. The bound is then evaluated
//! afresh from the multipliers with an allowance for rounding, so a simplex run that
//! stalls or rounds badly can only give a weaker bound, never a false one.

use crate::prob::tolerance;

/// Pivots allowed in each phase: far more than the vertices a problem of at most
/// `MAX_ROWS` rows in `MAX_DIM` dimensions visits under Bland's rule in practice; past them
/// the search stops and the multipliers reached so far are verified as they are.
const MAX_PIVOTS: usize = 2_000;

/// A half-space `normal . z <= offset`, `|normal| = 1`.
#[derive(Debug, Clone, Copy)]
pub(crate) struct HalfSpace<'a> {
    pub normal: &'a [f64],
    pub offset: f64,
}

/// The verified upper bound on the largest margin of a point inside all `half_spaces` and
/// the box `|z_j| <= radius` (in `dim` dimensions), see the module notes; `None` when an
/// input is not finite, `radius` is not positive or a normal does not have `dim` entries.
pub(crate) fn margin_bound(half_spaces: &[HalfSpace], dim: usize, radius: f64) -> Option<f64> {
    if !(radius.is_finite() && radius > 0.0)
        || half_spaces.iter().any(|s| {
            !s.offset.is_finite()
                || s.normal.len() != dim
                || s.normal.iter().any(|g| !g.is_finite())
        })
    {
        return None;
    }
    // The box faces `+-e_j . z <= radius` join the half-spaces: with them the equations
    // below always have a solution (half on each of two opposite faces).
    let unit = |j: usize, sign: f64| {
        let mut e = vec![0.0; dim];
        e[j] = sign;
        e
    };
    let faces: Vec<Vec<f64>> = (0..dim)
        .flat_map(|j| [unit(j, 1.0), unit(j, -1.0)])
        .collect();
    let mut normals: Vec<&[f64]> = half_spaces.iter().map(|s| s.normal).collect();
    let mut offsets: Vec<f64> = half_spaces.iter().map(|s| s.offset).collect();
    for face in &faces {
        normals.push(face);
        offsets.push(radius);
    }
    // minimise offsets . lambda subject to G^T lambda = 0, sum lambda = 1, lambda >= 0.
    let q = normals.len();
    let mut equations: Vec<Vec<f64>> = (0..dim)
        .map(|j| {
            normals
                .iter()
                .map(|g| g.get(j).copied().unwrap_or(0.0))
                .collect()
        })
        .collect();
    equations.push(vec![1.0; q]);
    let mut rhs = vec![0.0; dim];
    rhs.push(1.0);
    let lambda = minimise(&equations, &rhs, &offsets);
    Some(verified_bound(&normals, &offsets, &lambda, dim, radius))
}

/// `(h . lambda + radius |G^T lambda|_1) / sum lambda` plus a bound on its rounding, for
/// any `lambda` (negative entries are taken as zero); `radius` when `lambda` is all zero,
/// which bounds the margin of any point of the box trivially.
fn verified_bound(
    normals: &[&[f64]],
    offsets: &[f64],
    lambda: &[f64],
    dim: usize,
    radius: f64,
) -> f64 {
    let mut weight = 0.0;
    let mut value = 0.0;
    let mut size = 0.0;
    let mut combined = vec![0.0; dim];
    for ((g, &h), &l) in normals.iter().zip(offsets).zip(lambda) {
        let l = l.max(0.0);
        if l == 0.0 {
            continue;
        }
        weight += l;
        value += l * h;
        size += l * (h.abs() + radius * g.iter().map(|v| v.abs()).sum::<f64>());
        for (c, &gj) in combined.iter_mut().zip(g.iter()) {
            *c += l * gj;
        }
    }
    if weight <= 0.0 {
        return radius;
    }
    let spread: f64 = combined.iter().map(|c| c.abs()).sum();
    // Each sum above has at most len + dim terms; a relative error of
    // (terms + 2) * epsilon on their absolute sizes covers the rounding of every product
    // and addition (Higham 2002, *Accuracy and Stability of Numerical Algorithms*, 3.1).
    let terms = (lambda.len() + dim + 2) as f64;
    let rounding = 2.0 * terms * f64::EPSILON * size;
    let bound = (value + radius * spread + rounding) / weight;
    // The sum of the weights and the division round too.
    let bound = bound + bound.abs() * (terms * f64::EPSILON + tolerance::ROUNDING_REL);
    // Overflow: the box alone bounds the margin by its half-width.
    if bound.is_finite() { bound } else { radius }
}

/// Multipliers `x >= 0` with `a x = b` (`b >= 0`) that minimise `c . x`, by the two-phase
/// simplex method with Bland's rule; the best found when the pivot limit is reached, and
/// all zero when no feasible point was found.
fn minimise(a: &[Vec<f64>], b: &[f64], c: &[f64]) -> Vec<f64> {
    let q = c.len();
    let mut t = Tableau::new(a, b, q);
    // Phase 1: reach a feasible point (artificial variables out of the way).
    let phase_one: Vec<f64> = (0..q + t.rows)
        .map(|j| if j < q { 0.0 } else { 1.0 })
        .collect();
    t.run(&phase_one, q + t.rows);
    let infeasibility: f64 = (0..t.rows)
        .filter(|&i| t.basis[i] >= q)
        .map(|i| t.rhs(i).abs())
        .sum();
    if infeasibility > tolerance::SIMPLEX_FEASIBLE_ABS {
        return vec![0.0; q];
    }
    t.drive_out_artificials(q);
    // Phase 2: the objective, with the artificial columns barred from entering.
    let phase_two: Vec<f64> = (0..q + t.rows)
        .map(|j| if j < q { c[j] } else { 0.0 })
        .collect();
    t.run(&phase_two, q);
    let mut x = vec![0.0; q];
    for i in 0..t.rows {
        if t.basis[i] < q {
            x[t.basis[i]] = t.rhs(i).max(0.0);
        }
    }
    x
}

/// A dense simplex tableau `[A | I | b]` in canonical form for its basis.
struct Tableau {
    rows: usize,
    width: usize,
    cells: Vec<f64>,
    basis: Vec<usize>,
}

impl Tableau {
    /// The tableau of `a x + s = b` with the artificial `s` basic.
    fn new(a: &[Vec<f64>], b: &[f64], q: usize) -> Self {
        let rows = a.len();
        let width = q + rows + 1;
        let mut cells = vec![0.0; rows * width];
        for (i, (row, &bi)) in a.iter().zip(b).enumerate() {
            for (j, &v) in row.iter().enumerate().take(q) {
                cells[i * width + j] = v;
            }
            cells[i * width + q + i] = 1.0;
            cells[i * width + width - 1] = bi;
        }
        Self {
            rows,
            width,
            cells,
            basis: (q..q + rows).collect(),
        }
    }

    fn at(&self, i: usize, j: usize) -> f64 {
        self.cells[i * self.width + j]
    }

    fn rhs(&self, i: usize) -> f64 {
        self.at(i, self.width - 1)
    }

    fn pivot(&mut self, r: usize, col: usize) {
        let w = self.width;
        let p = self.at(r, col);
        for v in &mut self.cells[r * w..(r + 1) * w] {
            *v /= p;
        }
        for i in 0..self.rows {
            if i == r {
                continue;
            }
            let f = self.at(i, col);
            if f == 0.0 {
                continue;
            }
            for j in 0..w {
                let delta = f * self.cells[r * w + j];
                self.cells[i * w + j] -= delta;
            }
            self.cells[i * w + col] = 0.0;
        }
        self.basis[r] = col;
    }

    /// Minimise `cost` over the columns `< allowed` entering the basis (Bland's rule:
    /// the lowest eligible column enters, ties in the ratio test leave by the lowest
    /// basic column). Stops at the optimum, on an unbounded direction or at the pivot limit.
    fn run(&mut self, cost: &[f64], allowed: usize) {
        let scale = cost.iter().fold(0.0_f64, |m, c| m.max(c.abs())).max(1.0);
        for _ in 0..MAX_PIVOTS {
            let entering = (0..allowed).find(|&j| {
                if self.basis.contains(&j) {
                    return false;
                }
                let reduced = cost[j]
                    - (0..self.rows)
                        .map(|i| cost[self.basis[i]] * self.at(i, j))
                        .sum::<f64>();
                reduced < -tolerance::SIMPLEX_COST_REL * scale
            });
            let Some(col) = entering else {
                return;
            };
            let mut leave: Option<(usize, f64)> = None;
            for i in 0..self.rows {
                let a = self.at(i, col);
                if a <= tolerance::SIMPLEX_PIVOT_ABS {
                    continue;
                }
                let ratio = self.rhs(i).max(0.0) / a;
                let better = match leave {
                    None => true,
                    Some((k, best)) => {
                        ratio < best || (ratio == best && self.basis[i] < self.basis[k])
                    }
                };
                if better {
                    leave = Some((i, ratio));
                }
            }
            let Some((row, _)) = leave else {
                return;
            };
            self.pivot(row, col);
        }
    }

    /// After phase 1: every artificial still basic (at level zero) is swapped for a real
    /// column with a usable entry in its row; a row with none is redundant and keeps its
    /// artificial (later pivots leave it at zero up to rounding, and the multipliers are
    /// verified afresh in any case).
    fn drive_out_artificials(&mut self, q: usize) {
        for i in 0..self.rows {
            if self.basis[i] < q {
                continue;
            }
            let col = (0..q)
                .filter(|j| !self.basis.contains(j))
                .max_by(|&x, &y| self.at(i, x).abs().total_cmp(&self.at(i, y).abs()));
            if let Some(col) = col
                && self.at(i, col).abs() > tolerance::SIMPLEX_PIVOT_ABS
            {
                self.pivot(i, col);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn spaces<'a>(rows: &'a [(Vec<f64>, f64)]) -> Vec<HalfSpace<'a>> {
        rows.iter()
            .map(|(g, h)| HalfSpace {
                normal: g,
                offset: *h,
            })
            .collect()
    }

    #[test]
    fn awkward_inputs_give_none_or_a_bound_without_panicking() {
        // The rule of the engine: no panic on any input.
        let nan = vec![(vec![f64::NAN, 0.0], 1.0)];
        assert_eq!(margin_bound(&spaces(&nan), 2, 5.0), None);
        let inf = vec![(vec![1.0, 0.0], f64::INFINITY)];
        assert_eq!(margin_bound(&spaces(&inf), 2, 5.0), None);
        let short = vec![(vec![1.0], 1.0)];
        assert_eq!(margin_bound(&spaces(&short), 2, 5.0), None);
        assert_eq!(margin_bound(&[], 2, f64::INFINITY), None);
        assert_eq!(margin_bound(&[], 2, 0.0), None);
        // No half-space: the box alone, margin its half-width (by hand).
        let bound = margin_bound(&[], 3, 5.0).unwrap();
        assert!((5.0..5.0 + 1e-12).contains(&bound), "{bound}");
        // Dimension zero: no box, no direction; any finite bound will do.
        assert!(margin_bound(&[], 0, 5.0).is_some());
        // A zero normal (0 <= 1 holds everywhere) and duplicated rows.
        let rows = vec![
            (vec![0.0, 0.0], 1.0),
            (vec![1.0, 0.0], 0.5),
            (vec![1.0, 0.0], 0.5),
            (vec![-1.0, 0.0], 0.5),
        ];
        let bound = margin_bound(&spaces(&rows), 2, 5.0).unwrap();
        assert!((0.5..0.5 + 1e-12).contains(&bound), "{bound}");
    }

    #[test]
    fn cube_margin_is_its_half_width() {
        // The cube |z_j| <= 0.7 in three dimensions: the largest inscribed ball has radius
        // 0.7 (geometry, common practice).
        let mut rows = Vec::new();
        for j in 0..3 {
            for sign in [1.0, -1.0] {
                let mut g = vec![0.0; 3];
                g[j] = sign;
                rows.push((g, 0.7));
            }
        }
        let bound = margin_bound(&spaces(&rows), 3, 40.0).unwrap();
        assert!((0.7..0.7 + 1e-12).contains(&bound), "{bound}");
    }

    #[test]
    fn right_triangle_margin_is_its_inradius() {
        // Legs 3 and 4 on the axes, hypotenuse 5: inradius (3 + 4 - 5) / 2 = 1 (the
        // inradius of a right triangle, area / semiperimeter = 6 / 6).
        let rows = vec![
            (vec![-1.0, 0.0], 0.0),
            (vec![0.0, -1.0], 0.0),
            (vec![0.8, 0.6], 2.4),
        ];
        let bound = margin_bound(&spaces(&rows), 2, 40.0).unwrap();
        assert!((1.0..1.0 + 1e-12).contains(&bound), "{bound}");
    }

    #[test]
    fn contradictory_half_spaces_have_a_negative_margin() {
        // z_1 <= -1 and z_1 >= 1: every point misses one of them by at least 1; the best
        // point (z_1 = 0) by exactly 1.
        let rows = vec![(vec![1.0, 0.0, 0.0], -1.0), (vec![-1.0, 0.0, 0.0], -1.0)];
        let bound = margin_bound(&spaces(&rows), 3, 40.0).unwrap();
        assert!((-1.0..-1.0 + 1e-12).contains(&bound), "{bound}");
        // A contradiction spread over three rows: z_1 + z_2 >= 3 with z_1 <= 1, z_2 <= 1.
        let s = std::f64::consts::FRAC_1_SQRT_2;
        let rows = vec![
            (vec![-s, -s], -3.0 * s),
            (vec![1.0, 0.0], 1.0),
            (vec![0.0, 1.0], 1.0),
        ];
        let bound = margin_bound(&spaces(&rows), 2, 40.0).unwrap();
        assert!(bound < 0.0, "{bound}");
    }

    #[test]
    fn a_single_point_has_margin_zero() {
        // z_1 + z_2 <= 0, z_1 >= 0, z_2 >= 0: only the origin, no room for any ball.
        let s = std::f64::consts::FRAC_1_SQRT_2;
        let rows = vec![
            (vec![s, s], 0.0),
            (vec![-1.0, 0.0], 0.0),
            (vec![0.0, -1.0], 0.0),
        ];
        let bound = margin_bound(&spaces(&rows), 2, 40.0).unwrap();
        assert!((0.0..1e-12).contains(&bound), "{bound}");
    }

    #[test]
    fn open_half_space_is_bounded_by_the_box() {
        // z_1 <= 5 alone: inside the box |z_j| <= 2 the deepest point is the box's centre,
        // 2 from the nearest face.
        let rows = vec![(vec![1.0, 0.0], 5.0)];
        let bound = margin_bound(&spaces(&rows), 2, 2.0).unwrap();
        assert!((2.0..2.0 + 1e-12).contains(&bound), "{bound}");
    }

    /// The largest margin by the `microlp` crate (an independent simplex code from the
    /// package registry): maximise `t` subject to `g_i . z + t <= h_i` and the box faces.
    fn reference_margin(rows: &[(Vec<f64>, f64)], dim: usize, radius: f64) -> f64 {
        use microlp::{ComparisonOp, OptimizationDirection, Problem};
        let mut lp = Problem::new(OptimizationDirection::Maximize);
        let z: Vec<_> = (0..dim)
            .map(|_| lp.add_var(0.0, (f64::NEG_INFINITY, f64::INFINITY)))
            .collect();
        let t = lp.add_var(1.0, (f64::NEG_INFINITY, f64::INFINITY));
        for (g, h) in rows {
            let mut terms: Vec<_> = z.iter().zip(g).map(|(&v, &c)| (v, c)).collect();
            terms.push((t, 1.0));
            lp.add_constraint(terms.as_slice(), ComparisonOp::Le, *h);
        }
        for &v in &z {
            lp.add_constraint([(v, 1.0), (t, 1.0)], ComparisonOp::Le, radius);
            lp.add_constraint([(v, -1.0), (t, 1.0)], ComparisonOp::Le, radius);
        }
        let outcome = lp.solve().expect("bounded and feasible by construction");
        outcome.into_solution().expect("no limits set").objective()
    }

    #[test]
    fn bound_matches_an_independent_solver() {
        // Random polytopes in 2 to 8 dimensions with up to 40 half-spaces, feasible and
        // not: the bound may not fall below the optimum (it would not be a bound) and,
        // when the simplex search reaches its optimum, not exceed it either. Tolerance:
        // microlp's feasibility tolerance 1e-7, times ten.
        let mut rng = crate::prob::rng::SplitMix64::new(5);
        for case in 0..300 {
            let dim = 2 + case % 7;
            let m = 2 + (rng.next_u64() % 39) as usize;
            let rows: Vec<(Vec<f64>, f64)> = (0..m)
                .map(|_| {
                    let g: Vec<f64> = (0..dim).map(|_| 2.0 * rng.next_f64() - 1.0).collect();
                    let norm = g.iter().map(|v| v * v).sum::<f64>().sqrt();
                    let h = 1.5 * rng.next_f64() - 0.5;
                    (g.iter().map(|v| v / norm).collect(), h)
                })
                .collect();
            let radius = 4.0;
            let bound = margin_bound(&spaces(&rows), dim, radius).unwrap();
            let reference = reference_margin(&rows, dim, radius);
            assert!(
                (bound - reference).abs() <= 1e-6,
                "case {case}: bound {bound} against microlp {reference}"
            );
        }
    }

    #[test]
    fn bound_is_never_below_a_witnessed_margin() {
        // Random polygons: the margin of every point of a grid (computed directly) must not
        // exceed the bound, and the best grid point must come within the grid's spacing of
        // it (the bound is tight when the simplex reaches its optimum).
        let mut rng = crate::prob::rng::SplitMix64::new(41);
        for _ in 0..200 {
            let m = 3 + (rng.next_u64() % 6) as usize;
            let rows: Vec<(Vec<f64>, f64)> = (0..m)
                .map(|_| {
                    let a = 2.0 * std::f64::consts::PI * rng.next_f64();
                    (vec![a.cos(), a.sin()], 2.0 * rng.next_f64() - 0.5)
                })
                .collect();
            let radius = 3.0;
            let bound = margin_bound(&spaces(&rows), 2, radius).unwrap();
            let steps = 240;
            let mut best = f64::NEG_INFINITY;
            for i in 0..=steps {
                for j in 0..=steps {
                    let z = [
                        -radius + 2.0 * radius * i as f64 / steps as f64,
                        -radius + 2.0 * radius * j as f64 / steps as f64,
                    ];
                    let margin = rows
                        .iter()
                        .map(|(g, h)| h - g[0] * z[0] - g[1] * z[1])
                        .chain(z.iter().map(|v| radius - v.abs()))
                        .fold(f64::INFINITY, f64::min);
                    best = best.max(margin);
                }
            }
            assert!(best <= bound, "grid margin {best} above bound {bound}");
            let spacing = 2.0 * radius / steps as f64;
            assert!(bound - best <= spacing, "bound {bound} loose: grid {best}");
        }
    }
}
