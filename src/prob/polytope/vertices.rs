//! Vertices: the projections of the polytope's (slice) vertices, the nested rule's
//! breakpoints.

use crate::prob::tolerance;

use super::plan::Plan;

impl Plan {
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
    pub(super) fn vertex_projections(&self, prefix: &[f64], drop_last: bool) -> Vec<f64> {
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
}

/// The point where `k` planes `r . x = e` in `k` dimensions meet, by Gaussian elimination
/// with partial pivoting; `None` when they do not meet in one point (nearly parallel
/// planes: a pivot below `SINGULAR_PLANES_REL` after scaling the normals to unit length).
pub(super) fn solve_planes(planes: &[(&[f64], f64)]) -> Option<Vec<f64>> {
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
