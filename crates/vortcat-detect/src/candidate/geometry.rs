//! Geometry of candidate regions: sub-grid peak fits, distances to the domain edge and to the
//! nearest masked vector, and principal axes.

use super::label::Space;
use crate::eigen::{symmetric3_eigenvalues, symmetric3_eigenvector};

/// Least-squares solution of the normal equations for `K` basis values per sample; `None` if
/// singular (Gaussian elimination with partial pivoting, K ≤ 6).
#[allow(clippy::needless_range_loop)] // index arithmetic of a small dense matrix
fn lsq<const K: usize>(rows: impl Iterator<Item = ([f64; K], f64)>) -> Option<[f64; K]> {
    let mut m = [[0.0; K]; K];
    let mut r = [0.0; K];
    for (phi, f) in rows {
        for i in 0..K {
            r[i] += phi[i] * f;
            for j in 0..K {
                m[i][j] += phi[i] * phi[j];
            }
        }
    }
    let scale = (0..K).map(|i| m[i][i].abs()).fold(0.0, f64::max);
    for col in 0..K {
        let piv = (col..K).max_by(|&a, &b| m[a][col].abs().total_cmp(&m[b][col].abs()))?;
        if m[piv][col].abs().is_nan() || m[piv][col].abs() <= 1e-12 * scale {
            return None;
        }
        m.swap(col, piv);
        r.swap(col, piv);
        for row in col + 1..K {
            let f = m[row][col] / m[col][col];
            for j in col..K {
                m[row][j] -= f * m[col][j];
            }
            r[row] -= f * r[col];
        }
    }
    let mut x = [0.0; K];
    for i in (0..K).rev() {
        let s: f64 = (i + 1..K).map(|j| m[i][j] * x[j]).sum();
        x[i] = (r[i] - s) / m[i][i];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

/// Stationary point of the least-squares quadratic `a + b x + c y + d x² + e xy + f y²` through
/// the samples `(x, y, value)` (offsets in cells from the window centre), if it is a maximum
/// within `max_offset` cells of the centre on each axis. At least 6 samples are needed; with
/// 3×3 samples around a maximum of a smooth field this is the usual sub-pixel peak estimator;
/// a larger window averages noise on flat-topped peaks.
pub(crate) fn quadratic_peak(samples: &[(f64, f64, f64)], max_offset: f64) -> Option<(f64, f64)> {
    if samples.len() < 6 {
        return None;
    }
    let [_, b, c, d, e, f] = lsq(samples
        .iter()
        .map(|&(x, y, v)| ([1.0, x, y, x * x, x * y, y * y], v)))?;
    // Hessian [[2d, e], [e, 2f]] must be negative definite.
    let det = 4.0 * d * f - e * e;
    if !(d < 0.0 && det > 0.0) {
        return None;
    }
    let dx = (-2.0 * f * b + e * c) / det;
    let dy = (-2.0 * d * c + e * b) / det;
    (dx.abs() <= max_offset && dy.abs() <= max_offset).then_some((dx, dy))
}

/// Vertex of the least-squares parabola `a + b x + c x²` through `(x, value)` samples (offsets
/// in cells), if it is a maximum within one cell.
pub(crate) fn parabola_peak(samples: &[(f64, f64)]) -> Option<f64> {
    if samples.len() < 3 {
        return None;
    }
    let [_, b, c] = lsq(samples.iter().map(|&(x, v)| ([1.0, x, x * x], v)))?;
    if c.is_nan() || c >= 0.0 {
        return None;
    }
    let d = -b / (2.0 * c);
    (d.abs() <= 1.0).then_some(d)
}

/// Physical coordinate of a fractional index along each axis.
pub(crate) struct Coords {
    pub origin: [f64; 3],
    pub spacing: [f64; 3],
}

impl Coords {
    pub fn at(&self, idx: [f64; 3]) -> [f64; 3] {
        [
            self.origin[0] + idx[0] * self.spacing[0],
            self.origin[1] + idx[1] * self.spacing[1],
            self.origin[2] + idx[2] * self.spacing[2],
        ]
    }
}

/// Distance from a fractional index position to the nearest domain boundary (outermost grid
/// line), physical units, over the axes with more than one point (`dims` = 2 or 3).
pub(crate) fn edge_distance(pos: [f64; 3], space: &Space, coords: &Coords, dims: usize) -> f64 {
    (0..dims)
        .map(|a| {
            let last = (space.n[a] - 1) as f64;
            pos[a].min(last - pos[a]).max(0.0) * coords.spacing[a].abs()
        })
        .fold(f64::INFINITY, f64::min)
}

/// Nearest masked vector to a fractional index position, physical distance. `invalid` holds
/// the flat indices of all masked vectors (ascending); `is_invalid` tests one flat index.
pub(crate) fn nearest_invalid(
    pos: [f64; 3],
    space: &Space,
    coords: &Coords,
    invalid: &[usize],
    is_invalid: impl Fn(usize) -> bool,
) -> Option<f64> {
    if invalid.is_empty() {
        return None;
    }
    let h = coords.spacing.map(f64::abs);
    let dist = |c: [usize; 3]| {
        let mut s = 0.0;
        for a in 0..3 {
            let d = (c[a] as f64 - pos[a]) * h[a];
            s += d * d;
        }
        s.sqrt()
    };
    // Expanding shells around the position, pruned by distance: cheap when a masked vector is
    // near, which is the common case. The shells stop after as many cells as there are
    // masked vectors, and the brute-force minimum over the list is taken instead: so the cost
    // is never more than about twice the brute force, whatever the mask looks like.
    let brute_force = || {
        invalid
            .iter()
            .map(|&f| dist(space.coords(f)))
            .min_by(f64::total_cmp)
    };
    let mut budget = invalid.len().max(64);
    let hmin = (0..3)
        .filter(|&a| space.n[a] > 1)
        .map(|a| h[a])
        .fold(f64::INFINITY, f64::min);
    let c: [isize; 3] =
        [0, 1, 2].map(|a| (pos[a].round() as isize).clamp(0, space.n[a] as isize - 1));
    let max_r = *space.n.iter().max().unwrap_or(&1) as isize;
    let mut best = f64::INFINITY;
    for r in 0..=max_r {
        if (r as f64 - 0.5) * hmin > best {
            break;
        }
        let range = |a: usize| {
            let lo = (c[a] - r).max(0);
            let hi = (c[a] + r).min(space.n[a] as isize - 1);
            lo..=hi
        };
        for z in range(2) {
            for y in range(1) {
                let on_shell_zy = (z - c[2]).abs() == r || (y - c[1]).abs() == r;
                let xs: Vec<isize> = if on_shell_zy {
                    range(0).collect()
                } else {
                    [c[0] - r, c[0] + r]
                        .into_iter()
                        .filter(|&x| x >= 0 && x < space.n[0] as isize)
                        .collect()
                };
                for x in xs {
                    if budget == 0 {
                        return brute_force();
                    }
                    budget -= 1;
                    let cell = [x as usize, y as usize, z as usize];
                    if is_invalid(space.flat(cell)) {
                        best = best.min(dist(cell));
                    }
                }
            }
        }
    }
    best.is_finite().then_some(best)
}

/// Unit direction of largest extent of a set of physical points (eigenvector of the largest
/// eigenvalue of their covariance). `None` for fewer than 2 points or a degenerate largest
/// eigenvalue (isotropic region: no preferred axis).
pub(crate) fn principal_axis(points: &[[f64; 3]]) -> Option<[f64; 3]> {
    if points.len() < 2 {
        return None;
    }
    let n = points.len() as f64;
    let mut mean = [0.0; 3];
    for p in points {
        for a in 0..3 {
            mean[a] += p[a] / n;
        }
    }
    let mut c = [[0.0; 3]; 3];
    for p in points {
        for i in 0..3 {
            for j in 0..3 {
                c[i][j] += (p[i] - mean[i]) * (p[j] - mean[j]) / n;
            }
        }
    }
    let e = symmetric3_eigenvalues(&c);
    if e[0].is_nan() || e[0] <= 0.0 || (e[0] - e[1]) <= 1e-9 * e[0] {
        return None;
    }
    let mut v = symmetric3_eigenvector(&c, e[0])?;
    // Deterministic orientation: largest component positive.
    let k = (0..3)
        .max_by(|&a, &b| v[a].abs().total_cmp(&v[b].abs()))
        .unwrap_or(0);
    if v[k] < 0.0 {
        v = v.map(|x| -x);
    }
    Some(v)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn quadratic_fits_recover_the_vertex_of_a_paraboloid() {
        // f = −(x − 0.3)² − 2(y + 0.2)² + 0.5(x − 0.3)(y + 0.2): a quadratic is fitted exactly by
        // the 6-parameter least-squares quadratic (linear algebra). Rounding only.
        let (x0, y0) = (0.3, -0.2);
        let f =
            |x: f64, y: f64| -(x - x0).powi(2) - 2.0 * (y - y0).powi(2) + 0.5 * (x - x0) * (y - y0);
        let mut v = [[0.0; 3]; 3];
        for (j, row) in v.iter_mut().enumerate() {
            for (i, o) in row.iter_mut().enumerate() {
                *o = f(i as f64 - 1.0, j as f64 - 1.0);
            }
        }
        let samples: Vec<(f64, f64, f64)> = (0..9)
            .map(|k| {
                let (x, y) = ((k % 3) as f64 - 1.0, (k / 3) as f64 - 1.0);
                (x, y, v[k / 3][k % 3])
            })
            .collect();
        let (dx, dy) = quadratic_peak(&samples, 1.0).unwrap();
        assert_relative_eq!(dx, x0, epsilon = 1e-12);
        assert_relative_eq!(dy, y0, epsilon = 1e-12);
        // A 5×5 window with two samples missing still recovers it exactly.
        let big: Vec<(f64, f64, f64)> = (0..25)
            .filter(|&k| k != 7 && k != 13)
            .map(|k| {
                let (x, y) = ((k % 5) as f64 - 2.0, (k / 5) as f64 - 2.0);
                (x, y, f(x, y))
            })
            .collect();
        let (dx, dy) = quadratic_peak(&big, 1.0).unwrap();
        assert_relative_eq!(dx, x0, epsilon = 1e-12);
        assert_relative_eq!(dy, y0, epsilon = 1e-12);
        // A saddle is rejected.
        let saddle: Vec<(f64, f64, f64)> = samples
            .iter()
            .map(|&(x, y, _)| (x, y, x * x - y * y))
            .collect();
        assert!(quadratic_peak(&saddle, 1.0).is_none());
        // Parabola of −(x − 0.25)² on three and on five points.
        let g = |x: f64| -(x - 0.25_f64).powi(2);
        let three: Vec<(f64, f64)> = [-1.0, 0.0, 1.0].iter().map(|&x| (x, g(x))).collect();
        assert_relative_eq!(parabola_peak(&three).unwrap(), 0.25, epsilon = 1e-12);
        let five: Vec<(f64, f64)> = [-2.0, -1.0, 0.0, 1.0, 2.0]
            .iter()
            .map(|&x| (x, g(x)))
            .collect();
        assert_relative_eq!(parabola_peak(&five).unwrap(), 0.25, epsilon = 1e-12);
        assert!(parabola_peak(&[(-1.0, 1.0), (0.0, 0.0), (1.0, 1.0)]).is_none());
    }

    #[test]
    fn principal_axis_of_a_tilted_line_of_points() {
        let d = [1.0 / 3.0_f64.sqrt(); 3];
        let pts: Vec<[f64; 3]> = (0..10).map(|k| d.map(|c| c * k as f64)).collect();
        let a = principal_axis(&pts).unwrap();
        // Exact line: eigenvector to rounding.
        assert_relative_eq!(a[0] * d[0] + a[1] * d[1] + a[2] * d[2], 1.0, epsilon = 1e-9);
        assert!(principal_axis(&pts[..1]).is_none());
    }

    #[test]
    fn nearest_invalid_brute_force_and_shell_search_agree() {
        // 100×100 plane with 44 % masked vectors (the shells find one at once), 1 % (a few
        // shells), and two masked vectors in a corner (the shells give up and the brute force
        // answers), each compared with the brute-force minimum over the same list.
        let space = Space { n: [100, 100, 1] };
        let coords = Coords {
            origin: [0.0; 3],
            spacing: [0.5, -0.7, 1.0],
        };
        for invalid in [
            (0..10000)
                .filter(|f| (f * 7919 + f / 100) % 9 < 4)
                .collect::<Vec<usize>>(),
            (0..10000).filter(|f| (f * 7919) % 100 == 3).collect(),
            vec![0, 101],
        ] {
            check_nearest(&space, &coords, &invalid);
        }
    }

    fn check_nearest(space: &Space, coords: &Coords, invalid: &[usize]) {
        let set: std::collections::HashSet<usize> = invalid.iter().copied().collect();
        for pos in [[10.3, 50.2, 0.0], [0.0, 0.0, 0.0], [99.0, 98.6, 0.0]] {
            let fast = nearest_invalid(pos, space, coords, invalid, |f| set.contains(&f)).unwrap();
            let brute = invalid
                .iter()
                .map(|&f| {
                    let c = space.coords(f);
                    (((c[0] as f64 - pos[0]) * 0.5).powi(2)
                        + ((c[1] as f64 - pos[1]) * 0.7).powi(2))
                    .sqrt()
                })
                .fold(f64::INFINITY, f64::min);
            // Same formula on the same cells: rounding only.
            assert_relative_eq!(fast, brute, epsilon = 1e-12);
        }
    }
}
