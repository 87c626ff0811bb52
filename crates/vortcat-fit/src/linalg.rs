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

/// Eigenvalues of the leading `n × n` block of a symmetric matrix, in no particular order:
/// Householder reduction to tridiagonal form, then the implicit QL algorithm with Wilkinson's
/// shift (Golub & Van Loan 2013, *Matrix Computations* 4th ed., §8.3; Press et al. 2007,
/// *Numerical Recipes* 3rd ed., §11.3–11.4, `tred2` without eigenvectors and `tqli`). About a
/// third of the work of cyclic Jacobi rotations at the sizes of a fit (6–10); the results agree
/// to rounding (unit test). All NaN if the QL iteration does not converge (only for non-finite
/// input: it converges cubically for every finite symmetric matrix).
pub fn symmetric_eigenvalues(a: &Mat, n: usize) -> [f64; MAXP] {
    let mut m = *a;
    // d: diagonal; e[i]: the element coupling rows i and i + 1 of the tridiagonal matrix.
    let (mut d, mut e) = ([0.0; MAXP], [0.0; MAXP]);
    for k in 0..n.saturating_sub(2) {
        // Reflect column k below the subdiagonal onto the subdiagonal element:
        // H = I − β v vᵀ with v = x − α e₁, α = −sign(x₀)‖x‖ (no cancellation in v₀).
        let mut norm2 = 0.0;
        for i in k + 1..n {
            norm2 += m[i][k] * m[i][k];
        }
        if norm2 == 0.0 {
            continue;
        }
        let x0 = m[k + 1][k];
        let alpha = if x0 > 0.0 {
            -norm2.sqrt()
        } else {
            norm2.sqrt()
        };
        let mut v = [0.0; MAXP];
        v[k + 1..n].copy_from_slice(&column(&m, k, k + 1, n)[k + 1..n]);
        v[k + 1] -= alpha;
        let vtv: f64 = v[k + 1..n].iter().map(|x| x * x).sum();
        let beta = 2.0 / vtv;
        // A₂₂ ← H A₂₂ H = A₂₂ − v wᵀ − w vᵀ with p = β A₂₂ v, w = p − (β vᵀp / 2) v.
        let mut w = [0.0; MAXP];
        for i in k + 1..n {
            let mut sum = 0.0;
            for j in k + 1..n {
                sum += m[i][j] * v[j];
            }
            w[i] = beta * sum;
        }
        let vp: f64 = (k + 1..n).map(|i| v[i] * w[i]).sum();
        let half = 0.5 * beta * vp;
        for i in k + 1..n {
            w[i] -= half * v[i];
        }
        for i in k + 1..n {
            for j in k + 1..n {
                m[i][j] -= v[i] * w[j] + w[i] * v[j];
            }
        }
        e[k] = alpha;
    }
    for i in 0..n {
        d[i] = m[i][i];
    }
    if n >= 2 {
        e[n - 2] = m[n - 1][n - 2];
    }
    // Implicit QL with Wilkinson's shift, deflating from the top (`tqli`).
    let mut iterations = 0;
    for l in 0..n {
        loop {
            let mut end = l;
            while end + 1 < n {
                let dd = d[end].abs() + d[end + 1].abs();
                if e[end].abs() <= f64::EPSILON * dd {
                    break;
                }
                end += 1;
            }
            if end == l {
                break;
            }
            iterations += 1;
            if iterations > 30 * n {
                return [f64::NAN; MAXP];
            }
            let mut g = (d[l + 1] - d[l]) / (2.0 * e[l]);
            let mut r = pythag(g, 1.0);
            g = d[end] - d[l] + e[l] / (g + r.copysign(g));
            let (mut s, mut c, mut p) = (1.0, 1.0, 0.0);
            let mut i = end;
            let mut split = false;
            while i > l {
                i -= 1;
                let f = s * e[i];
                let b = c * e[i];
                r = pythag(f, g);
                e[i + 1] = r;
                if r == 0.0 {
                    // The matrix splits here: restart the sweep on the smaller problem.
                    d[i + 1] -= p;
                    e[end] = 0.0;
                    split = true;
                    break;
                }
                s = f / r;
                c = g / r;
                g = d[i + 1] - p;
                r = (d[i] - g) * s + 2.0 * c * b;
                p = s * r;
                d[i + 1] = g + p;
                g = c * r - b;
            }
            if split {
                continue;
            }
            d[l] -= p;
            e[l] = g;
            e[end] = 0.0;
        }
    }
    d
}

/// √(a² + b²): the plain formula where it neither overflows nor underflows (always, for the
/// unit-diagonal matrices of a fit), else libm's `hypot`, which is several times slower.
#[inline]
fn pythag(a: f64, b: f64) -> f64 {
    let sum = a * a + b * b;
    if sum.is_finite() && sum >= f64::MIN_POSITIVE {
        sum.sqrt()
    } else {
        a.hypot(b)
    }
}

/// Column `k` of `m`, rows `from..to` (the rest zero).
fn column(m: &Mat, k: usize, from: usize, to: usize) -> [f64; MAXP] {
    let mut c = [0.0; MAXP];
    for i in from..to {
        c[i] = m[i][k];
    }
    c
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Reference: cyclic Jacobi rotations (Press et al. 2007, §11.1), the method used before
    /// the tridiagonal QL; slow but simple, and independent of it.
    fn jacobi_eigenvalues(a: &Mat, n: usize) -> [f64; MAXP] {
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
    fn eigenvalues_of_known_matrices() {
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

    fn sorted(mut e: [f64; MAXP], n: usize) -> Vec<f64> {
        e[..n].sort_by(f64::total_cmp);
        e[..n].to_vec()
    }

    /// The n × n second-difference matrix tridiag(−1, 2, −1) has eigenvalues
    /// 2 − 2 cos(kπ/(n + 1)), k = 1..n (a standard closed form, e.g. Strang 2007,
    /// *Computational Science and Engineering*, §1.5). I + u uᵀ has eigenvalue 1 (n − 1 times)
    /// and 1 + ‖u‖²: repeated eigenvalues exercise the deflation.
    #[test]
    fn eigenvalues_match_closed_forms() {
        for n in 1..=MAXP {
            let mut t = [[0.0; MAXP]; MAXP];
            for i in 0..n {
                t[i][i] = 2.0;
                if i + 1 < n {
                    t[i][i + 1] = -1.0;
                    t[i + 1][i] = -1.0;
                }
            }
            let got = sorted(symmetric_eigenvalues(&t, n), n);
            for (k, g) in got.iter().enumerate() {
                let want =
                    2.0 - 2.0 * ((k + 1) as f64 * std::f64::consts::PI / (n + 1) as f64).cos();
                // Backward stable: errors of a few ulp of the largest eigenvalue (≤ 4).
                assert!((g - want).abs() < 1e-14, "n {n} k {k}: {g} vs {want}");
            }
            let u: Vec<f64> = (0..n).map(|i| 0.3 + 0.1 * i as f64).collect();
            let mut r = [[0.0; MAXP]; MAXP];
            for i in 0..n {
                for j in 0..n {
                    r[i][j] = u[i] * u[j] + if i == j { 1.0 } else { 0.0 };
                }
            }
            let got = sorted(symmetric_eigenvalues(&r, n), n);
            let top = 1.0 + u.iter().map(|x| x * x).sum::<f64>();
            for g in &got[..n - 1] {
                assert!((g - 1.0).abs() < 1e-14, "n {n}: {g}");
            }
            assert!(
                (got[n - 1] - top).abs() < 1e-14 * top,
                "n {n}: {}",
                got[n - 1]
            );
        }
    }

    /// Against the Jacobi reference on pseudo-random symmetric matrices (indefinite, and
    /// positive definite like a fit's normal matrix) of every size, and a diagonal one.
    #[test]
    fn eigenvalues_agree_with_jacobi_rotations() {
        let mut state = 0x2545_f491_4f6c_dd1d_u64;
        let mut next = move || {
            // xorshift64: reproducible filler data, not statistics.
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        for n in 1..=MAXP {
            for trial in 0..20 {
                let mut a = [[0.0; MAXP]; MAXP];
                for i in 0..n {
                    for j in 0..=i {
                        let x = next();
                        a[i][j] = x;
                        a[j][i] = x;
                    }
                }
                if trial % 2 == 1 {
                    // AᵀA + 1e-3 I: SPD with a spread of eigenvalues.
                    let mut b = [[0.0; MAXP]; MAXP];
                    for i in 0..n {
                        for j in 0..n {
                            b[i][j] = (0..n).map(|k| a[k][i] * a[k][j]).sum::<f64>()
                                + if i == j { 1e-3 } else { 0.0 };
                        }
                    }
                    a = b;
                }
                let scale = (0..n).map(|i| a[i][i].abs()).fold(1.0, f64::max);
                let got = sorted(symmetric_eigenvalues(&a, n), n);
                let want = sorted(jacobi_eigenvalues(&a, n), n);
                for (g, w) in got.iter().zip(&want) {
                    // Both backward stable: agreement to ~n ulp of the matrix's scale.
                    assert!(
                        (g - w).abs() < 1e-13 * scale * n as f64,
                        "n {n}: {g} vs {w}"
                    );
                }
            }
        }
        let mut diag = [[0.0; MAXP]; MAXP];
        for i in 0..4 {
            diag[i][i] = [3.0, -1.0, 7.5, 0.0][i];
        }
        assert_eq!(
            sorted(symmetric_eigenvalues(&diag, 4), 4),
            vec![-1.0, 0.0, 3.0, 7.5]
        );
    }
}
