//! Small dense symmetric linear algebra on fixed-size arrays (no allocation).

// Index loops mirror the textbook formulas of the factorisations.
#![allow(clippy::needless_range_loop)]

/// Largest number of fitted parameters: centre (2), convection (2), model (≤ 3),
/// background gradient (3).
pub const MAXP: usize = 10;

/// A fixed-size square matrix.
pub type Mat = [[f64; MAXP]; MAXP];

/// Solve `m x = b` for symmetric positive definite `m` (leading `n × n` block) by Cholesky
/// decomposition in place; `b` is overwritten with `x`. Returns false if `m` is not positive
/// definite (Press et al. 2007, *Numerical Recipes* 3rd ed., §2.9).
pub fn cholesky_solve(m: &mut Mat, n: usize, b: &mut [f64; MAXP]) -> bool {
    if !cholesky(m, n) {
        return false;
    }
    for i in 0..n {
        let mut s = b[i];
        for k in 0..i {
            s -= m[i][k] * b[k];
        }
        b[i] = s / m[i][i];
    }
    for i in (0..n).rev() {
        let mut s = b[i];
        for k in (i + 1)..n {
            s -= m[k][i] * b[k];
        }
        b[i] = s / m[i][i];
    }
    true
}

/// Lower Cholesky factor in the lower triangle of `m`.
fn cholesky(m: &mut Mat, n: usize) -> bool {
    for j in 0..n {
        let mut d = m[j][j];
        for k in 0..j {
            d -= m[j][k] * m[j][k];
        }
        if d.is_nan() || d <= 0.0 || d.is_infinite() {
            return false;
        }
        let d = d.sqrt();
        m[j][j] = d;
        for i in (j + 1)..n {
            let mut s = m[i][j];
            for k in 0..j {
                s -= m[i][k] * m[j][k];
            }
            m[i][j] = s / d;
        }
    }
    true
}

/// Inverse of a symmetric positive definite matrix after equilibration to unit diagonal
/// (which makes the pivot test scale-free). `None` if singular to working precision: a pivot
/// of the equilibrated matrix below `1e-13` (relative conditioning worse than ~1e13).
pub fn invert_spd(a: &Mat, n: usize) -> Option<Mat> {
    let mut d = [0.0; MAXP];
    for i in 0..n {
        if a[i][i].is_nan() || a[i][i] <= 0.0 {
            return None;
        }
        d[i] = 1.0 / a[i][i].sqrt();
    }
    let mut m = [[0.0; MAXP]; MAXP];
    for i in 0..n {
        for j in 0..n {
            m[i][j] = a[i][j] * d[i] * d[j];
        }
    }
    let mut l = m;
    if !cholesky(&mut l, n) {
        return None;
    }
    for i in 0..n {
        if l[i][i] * l[i][i] < 1e-13 {
            return None;
        }
    }
    let mut inv = [[0.0; MAXP]; MAXP];
    for c in 0..n {
        let mut b = [0.0; MAXP];
        b[c] = 1.0;
        for i in 0..n {
            let mut s = b[i];
            for k in 0..i {
                s -= l[i][k] * b[k];
            }
            b[i] = s / l[i][i];
        }
        for i in (0..n).rev() {
            let mut s = b[i];
            for k in (i + 1)..n {
                s -= l[k][i] * b[k];
            }
            b[i] = s / l[i][i];
        }
        for i in 0..n {
            inv[i][c] = b[i] * d[i] * d[c];
        }
    }
    Some(inv)
}

/// Eigenvalues of the leading `n × n` block of a symmetric matrix by cyclic Jacobi rotations
/// (Press et al. 2007, §11.1), in no particular order.
pub fn symmetric_eigenvalues(a: &Mat, n: usize) -> [f64; MAXP] {
    let mut m = *a;
    for _sweep in 0..100 {
        let mut off = 0.0;
        for i in 0..n {
            for j in (i + 1)..n {
                off += m[i][j] * m[i][j];
            }
        }
        let mut diag = 0.0;
        for (i, row) in m.iter().enumerate().take(n) {
            diag += row[i] * row[i];
        }
        if off <= 1e-30 * diag || off == 0.0 {
            break;
        }
        for p in 0..n {
            for q in (p + 1)..n {
                // An element below 1e-18 of the geometric mean of its diagonal pair moves the
                // eigenvalues by ~1e-36 relative: skip the rotation (the last sweeps of a
                // converged matrix then cost only this test).
                let apq = m[p][q].abs();
                if apq < f64::MIN_POSITIVE || apq < 1e-18 * (m[p][p] * m[q][q]).abs().sqrt() {
                    continue;
                }
                let theta = (m[q][q] - m[p][p]) / (2.0 * m[p][q]);
                let t = theta.signum() / (theta.abs() + (theta * theta + 1.0).sqrt());
                let t = if theta == 0.0 { 1.0 } else { t };
                let c = 1.0 / (t * t + 1.0).sqrt();
                let s = t * c;
                for k in 0..n {
                    let (mkp, mkq) = (m[k][p], m[k][q]);
                    m[k][p] = c * mkp - s * mkq;
                    m[k][q] = s * mkp + c * mkq;
                }
                for k in 0..n {
                    let (mpk, mqk) = (m[p][k], m[q][k]);
                    m[p][k] = c * mpk - s * mqk;
                    m[q][k] = s * mpk + c * mqk;
                }
            }
        }
    }
    let mut e = [0.0; MAXP];
    for (i, ei) in e.iter_mut().enumerate().take(n) {
        *ei = m[i][i];
    }
    e
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn hilbert(n: usize) -> Mat {
        let mut h = [[0.0; MAXP]; MAXP];
        for i in 0..n {
            for j in 0..n {
                h[i][j] = 1.0 / (i + j + 1) as f64;
            }
        }
        h
    }

    /// Inverse of the 4×4 Hilbert matrix has known integer entries (e.g. Higham 2002,
    /// *Accuracy and Stability of Numerical Algorithms*, §28.1): (H⁻¹)₀₀ = 16, (H⁻¹)₃₃ = 2800,
    /// (H⁻¹)₀₃ = −140.
    #[test]
    fn hilbert_inverse_entries() {
        let inv = invert_spd(&hilbert(4), 4).unwrap();
        // cond(H4) ≈ 1.5e4, so about 12 digits survive.
        assert_relative_eq!(inv[0][0], 16.0, max_relative = 1e-10);
        assert_relative_eq!(inv[3][3], 2800.0, max_relative = 1e-10);
        assert_relative_eq!(inv[0][3], -140.0, max_relative = 1e-10);
        let mut b = [0.0; MAXP];
        b[..4].copy_from_slice(&[1.0, 1.0, 1.0, 1.0]);
        let mut m = hilbert(4);
        assert!(cholesky_solve(&mut m, 4, &mut b));
        // H4⁻¹·1 = row sums of H4⁻¹ = (−4, 60, −180, 140).
        for (x, e) in b.iter().zip([-4.0, 60.0, -180.0, 140.0]) {
            assert_relative_eq!(*x, e, max_relative = 1e-9);
        }
    }

    /// Eigenvalues of [[2,1],[1,2]] are 1 and 3; the condition number of H4 is 15513.74
    /// (2-norm; value from numpy.linalg.cond(scipy.linalg.hilbert(4)) = 15513.7387).
    #[test]
    fn jacobi_eigenvalues() {
        let mut a = [[0.0; MAXP]; MAXP];
        a[0][0] = 2.0;
        a[1][1] = 2.0;
        a[0][1] = 1.0;
        a[1][0] = 1.0;
        let mut e = symmetric_eigenvalues(&a, 2);
        e[..2].sort_by(f64::total_cmp);
        assert_relative_eq!(e[0], 1.0, max_relative = 1e-14);
        assert_relative_eq!(e[1], 3.0, max_relative = 1e-14);
        let e = symmetric_eigenvalues(&hilbert(4), 4);
        let (lo, hi) = e[..4]
            .iter()
            .fold((f64::MAX, f64::MIN), |(a, b), &x| (a.min(x), b.max(x)));
        assert_relative_eq!(hi / lo, 15513.74, max_relative = 1e-5);
        let mut s = [[0.0; MAXP]; MAXP];
        s[0][0] = 1.0;
        s[1][1] = 1e-20;
        assert!(
            invert_spd(&s, 2).is_some(),
            "diagonal scaling alone is not singular"
        );
        s[0][1] = 1e-10 * (1.0 - 1e-15);
        s[1][0] = s[0][1];
        assert!(
            invert_spd(&s, 2).is_none(),
            "correlation 1 − 1e-15 is singular"
        );
    }
}
