//! Closed-form eigen-decompositions used per grid point: no iterative solver.
//!
//! - [`symmetric3_eigenvalues`]: the trigonometric solution for a real symmetric 3×3 matrix
//!   (O. K. Smith (1961), "Eigenvalues of a symmetric 3 × 3 matrix", *Commun. ACM* 4(4), 168).
//! - [`cubic_swirl`]: Cardano's solution of the characteristic cubic of a real 3×3 matrix in the
//!   complex-pair case, arranged as in Chong, Perry & Cantwell (1990) (invariants P, Q, R).
//! - [`null_vector`]: the null direction of a rank-2 3×3 matrix as the largest cross product of
//!   two of its rows.

use crate::tensor::Tensor3;

/// Eigenvalues of the symmetric matrix `m` (only the upper triangle is read), sorted
/// `λ₁ ≥ λ₂ ≥ λ₃`.
#[inline]
pub fn symmetric3_eigenvalues(m: &[[f64; 3]; 3]) -> [f64; 3] {
    let p1 = m[0][1] * m[0][1] + m[0][2] * m[0][2] + m[1][2] * m[1][2];
    let q = (m[0][0] + m[1][1] + m[2][2]) / 3.0;
    let (d0, d1, d2) = (m[0][0] - q, m[1][1] - q, m[2][2] - q);
    let p2 = d0 * d0 + d1 * d1 + d2 * d2 + 2.0 * p1;
    let p = (p2 / 6.0).sqrt();
    if p <= f64::MIN_POSITIVE * 1e3 || !p.is_finite() {
        // A multiple of the identity (or a non-finite input, returned as is).
        return [q + 0.0 * p; 3];
    }
    let ip = 1.0 / p;
    let (b00, b11, b22) = (d0 * ip, d1 * ip, d2 * ip);
    let (b01, b02, b12) = (m[0][1] * ip, m[0][2] * ip, m[1][2] * ip);
    let det = b00 * (b11 * b22 - b12 * b12) - b01 * (b01 * b22 - b12 * b02)
        + b02 * (b01 * b12 - b11 * b02);
    let r = (0.5 * det).clamp(-1.0, 1.0);
    let phi = r.acos() / 3.0;
    let (s, c) = phi.sin_cos();
    // cos(φ + 2π/3) = −c/2 − (√3/2) s
    let e1 = q + 2.0 * p * c;
    let e3 = q + 2.0 * p * (-0.5 * c - 0.866_025_403_784_438_6 * s);
    let e2 = 3.0 * q - e1 - e3;
    [e1, e2, e3]
}

/// The scalar set-up of the trigonometric solution for a symmetric `m`: `(q, p, r)` with
/// `q = tr m / 3`, `p = √(tr (m − qI)²/6)`, `r = det((m − qI)/p)/2 ∈ [−1, 1]`, so that the
/// eigenvalues are `q + 2p cos(acos(r)/3 + 2πk/3)`. Written with selects instead of branches
/// so that loops over it vectorise; for a multiple of the identity it returns `p = 0, r = 1`.
#[inline(always)]
pub fn symmetric3_trig_setup(m: &[[f64; 3]; 3]) -> (f64, f64, f64) {
    let p1 = m[0][1] * m[0][1] + m[0][2] * m[0][2] + m[1][2] * m[1][2];
    let q = (m[0][0] + m[1][1] + m[2][2]) / 3.0;
    let (d0, d1, d2) = (m[0][0] - q, m[1][1] - q, m[2][2] - q);
    let p2 = d0 * d0 + d1 * d1 + d2 * d2 + 2.0 * p1;
    let p = (p2 / 6.0).sqrt();
    let ok = p > f64::MIN_POSITIVE * 1e3;
    let ip = if ok { 1.0 / p } else { 0.0 };
    let (b00, b11, b22) = (d0 * ip, d1 * ip, d2 * ip);
    let (b01, b02, b12) = (m[0][1] * ip, m[0][2] * ip, m[1][2] * ip);
    let det = b00 * (b11 * b22 - b12 * b12) - b01 * (b01 * b22 - b12 * b02)
        + b02 * (b01 * b12 - b11 * b02);
    let r = (0.5 * det).clamp(-1.0, 1.0);
    if ok {
        (q, p, r)
    } else {
        (q, 0.0, 1.0)
    }
}

/// λ₂ from the set-up values: `q + 2p cos(φ + 4π/3)` with `φ = acos(r)/3 ∈ [0, π/3]`,
/// evaluated as `q + p(√3 sin φ − cos φ)` with [`sin_cos_small`], so that no range reduction
/// is needed and the loop over it vectorises apart from the `acos`.
#[inline(always)]
pub fn middle_from_setup(q: f64, p: f64, r: f64) -> f64 {
    middle_from_acos(q, p, r.acos())
}

/// [`middle_from_setup`] given `acos(r)` already evaluated.
#[inline(always)]
pub fn middle_from_acos(q: f64, p: f64, acos_r: f64) -> f64 {
    let (s, c) = sin_cos_small(acos_r / 3.0);
    q + p * (SQRT_3 * s - c)
}

const SQRT_3: f64 = 1.732_050_807_568_877_2;

/// sin x and cos x for `0 ≤ x ≤ π/3` by their Taylor series to degree 21 and 20 (Horner in
/// x²). Truncation error below (π/3)²²/22! ≈ 3e-21, far under f64 rounding; the result agrees
/// with the libm functions to a few ulps (tested).
#[inline(always)]
pub fn sin_cos_small(x: f64) -> (f64, f64) {
    // (−1)^k/(2k)! and (−1)^k/(2k+1)!, k = 10 … 0.
    const C: [f64; 11] = [
        4.110_317_623_312_165e-19,
        -1.561_920_696_858_622_6e-16,
        4.779_477_332_387_385e-14,
        -1.147_074_559_772_972_5e-11,
        2.087_675_698_786_81e-9,
        -2.755_731_922_398_589_3e-7,
        2.480_158_730_158_73e-5,
        -1.388_888_888_888_889e-3,
        4.166_666_666_666_666_4e-2,
        -0.5,
        1.0,
    ];
    const S: [f64; 11] = [
        1.957_294_106_339_126e-20,
        -8.220_635_246_624_33e-18,
        2.811_457_254_345_520_6e-15,
        -7.647_163_731_819_816e-13,
        1.605_904_383_682_161_3e-10,
        -2.505_210_838_544_172e-8,
        2.755_731_922_398_589_3e-6,
        -1.984_126_984_126_984e-4,
        8.333_333_333_333_333e-3,
        -0.166_666_666_666_666_66,
        1.0,
    ];
    let x2 = x * x;
    let mut c = C[0];
    let mut s = S[0];
    for (ck, sk) in C[1..].iter().zip(&S[1..]) {
        c = c * x2 + ck;
        s = s * x2 + sk;
    }
    (s * x, c)
}

/// The middle eigenvalue λ₂ of the symmetric matrix `m` (upper triangle read): the same
/// trigonometric solution as [`symmetric3_eigenvalues`], evaluating only
/// `λ₂ = q + 2p cos(φ + 4π/3)` (one `acos`, one `cos`).
#[inline]
pub fn symmetric3_middle_eigenvalue(m: &[[f64; 3]; 3]) -> f64 {
    let (q, p, r) = symmetric3_trig_setup(m);
    middle_from_setup(q, p, r)
}

/// Swirl decomposition of a real 3×3 matrix with one real eigenvalue and a complex pair
/// `λcr ± i λci`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Swirl {
    /// The real eigenvalue λr.
    pub lambda_r: f64,
    /// Real part of the complex pair, λcr.
    pub lambda_cr: f64,
    /// Imaginary part of the complex pair, λci > 0.
    pub lambda_ci: f64,
}

/// Invariants and discriminant of the characteristic cubic `λ³ + Pλ² + Qλ + R = 0`.
///
/// Returns `(p, q, Δ)` of the depressed cubic `t³ + p t + q = 0` (λ = t − P/3), with
/// Δ = (p/3)³ + (q/2)²; Δ > 0 exactly when the matrix has a complex-conjugate pair.
#[inline]
pub fn depressed_cubic(a: &Tensor3) -> (f64, f64, f64) {
    let t = &a.0;
    let cap_p = -a.trace();
    // tr(A²) = Σ a_ij a_ji
    let mut tr_a2 = 0.0;
    for (i, row) in t.iter().enumerate() {
        for (j, &aij) in row.iter().enumerate() {
            tr_a2 += aij * t[j][i];
        }
    }
    let cap_q = 0.5 * (cap_p * cap_p - tr_a2);
    let cap_r = -a.det();
    let p = cap_q - cap_p * cap_p / 3.0;
    let q = 2.0 * cap_p * cap_p * cap_p / 27.0 - cap_p * cap_q / 3.0 + cap_r;
    let disc = (p / 3.0).powi(3) + 0.25 * q * q;
    (p, q, disc)
}

/// The swirl decomposition when the matrix has a complex pair (Δ > 0), else `None`.
#[inline]
pub fn cubic_swirl(a: &Tensor3) -> Option<Swirl> {
    let (p, q, disc) = depressed_cubic(a);
    if disc.is_nan() || disc <= 0.0 {
        return None;
    }
    let s = disc.sqrt();
    // Cardano with the larger-magnitude root first, the other from C1·C2 = −p/3 (no cancellation).
    let c1 = (-0.5 * q + if q > 0.0 { -s } else { s }).cbrt();
    let c2 = if c1 == 0.0 { 0.0 } else { -p / (3.0 * c1) };
    let shift = a.trace() / 3.0;
    let lambda_ci = 0.866_025_403_784_438_6 * (c1 - c2).abs();
    if lambda_ci <= 0.0 {
        return None;
    }
    Some(Swirl {
        lambda_r: c1 + c2 + shift,
        lambda_cr: -0.5 * (c1 + c2) + shift,
        lambda_ci,
    })
}

/// Unit null vector of a 3×3 matrix of rank 2 (the largest cross product of two rows), `None`
/// when the matrix has rank below 2 or is not finite.
pub fn null_vector(m: &[[f64; 3]; 3]) -> Option<[f64; 3]> {
    let cross = |a: &[f64; 3], b: &[f64; 3]| {
        [
            a[1] * b[2] - a[2] * b[1],
            a[2] * b[0] - a[0] * b[2],
            a[0] * b[1] - a[1] * b[0],
        ]
    };
    let cands = [
        cross(&m[0], &m[1]),
        cross(&m[0], &m[2]),
        cross(&m[1], &m[2]),
    ];
    let norm2 = |v: &[f64; 3]| v[0] * v[0] + v[1] * v[1] + v[2] * v[2];
    let best = cands
        .iter()
        .copied()
        .max_by(|a, b| norm2(a).total_cmp(&norm2(b)))?;
    let n = norm2(&best).sqrt();
    if !(n.is_finite() && n > 0.0) {
        return None;
    }
    Some([best[0] / n, best[1] / n, best[2] / n])
}

/// Unit eigenvector of the symmetric matrix `m` for its simple eigenvalue `lambda`.
pub fn symmetric3_eigenvector(m: &[[f64; 3]; 3], lambda: f64) -> Option<[f64; 3]> {
    let mut s = *m;
    for (i, row) in s.iter_mut().enumerate() {
        row[i] -= lambda;
    }
    null_vector(&s)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn symmetric_eigenvalues_match_known_matrices() {
        // [[2,1,0],[1,2,0],[0,0,5]] has eigenvalues 5, 3, 1 (hand computation: the 2×2 block
        // has 2 ± 1). Rounding of trig evaluation: 1e-12 relative.
        let e = symmetric3_eigenvalues(&[[2.0, 1.0, 0.0], [1.0, 2.0, 0.0], [0.0, 0.0, 5.0]]);
        assert_relative_eq!(e[0], 5.0, max_relative = 1e-12);
        assert_relative_eq!(e[1], 3.0, max_relative = 1e-12);
        assert_relative_eq!(e[2], 1.0, max_relative = 1e-12);
        // Diagonal and identity-multiple special cases.
        let e = symmetric3_eigenvalues(&[[-1.0, 0.0, 0.0], [0.0, 4.0, 0.0], [0.0, 0.0, 0.5]]);
        assert_relative_eq!(e[0], 4.0, max_relative = 1e-12);
        assert_relative_eq!(e[1], 0.5, max_relative = 1e-12);
        assert_relative_eq!(e[2], -1.0, max_relative = 1e-12);
        let e = symmetric3_eigenvalues(&[[7.0, 0.0, 0.0], [0.0, 7.0, 0.0], [0.0, 0.0, 7.0]]);
        assert_relative_eq!(e[1], 7.0, max_relative = 1e-15);
    }

    #[test]
    fn small_angle_sin_cos_match_libm() {
        // Reference: the platform libm (correctly rounded to within an ulp or so). Taylor
        // truncation is ~3e-21, so only rounding differences remain: 4 ulps of 1.
        for k in 0..=1000 {
            let x = std::f64::consts::FRAC_PI_3 * k as f64 / 1000.0;
            let (s, c) = sin_cos_small(x);
            assert_relative_eq!(s, x.sin(), epsilon = 4.0 * f64::EPSILON);
            assert_relative_eq!(c, x.cos(), epsilon = 4.0 * f64::EPSILON);
        }
    }

    #[test]
    fn symmetric_eigen_sum_and_product_are_invariants() {
        // Linear algebra: Σλ = trace, Πλ = det, and each λ solves det(M − λI) = 0.
        let m = [[1.3, -0.4, 0.7], [-0.4, -2.1, 0.25], [0.7, 0.25, 0.9]];
        let e = symmetric3_eigenvalues(&m);
        let t = Tensor3(m);
        assert_relative_eq!(e[0] + e[1] + e[2], t.trace(), epsilon = 1e-12);
        assert_relative_eq!(e[0] * e[1] * e[2], t.det(), epsilon = 1e-12);
        assert!(e[0] >= e[1] && e[1] >= e[2]);
        // The middle-only evaluation agrees with the full one (same closed form).
        assert_relative_eq!(symmetric3_middle_eigenvalue(&m), e[1], epsilon = 1e-12);
        for &l in &e {
            let v = symmetric3_eigenvector(&m, l).unwrap();
            for (i, row) in m.iter().enumerate() {
                let mv: f64 = (0..3).map(|j| row[j] * v[j]).sum();
                // Eigenvector residual, rounding-level for O(1) entries.
                assert_relative_eq!(mv, l * v[i], epsilon = 1e-10);
            }
        }
    }

    #[test]
    fn cubic_swirl_recovers_a_constructed_spectrum() {
        // Build A = V diag-block(λr; [λcr, λci; −λci, λcr]) V⁻¹ with V a rotation, so the spectrum
        // is λr, λcr ± iλci by construction (linear algebra).
        let (lr, lcr, lci) = (0.8, -0.3, 2.5);
        let block = Tensor3([[lcr, -lci, 0.0], [lci, lcr, 0.0], [0.0, 0.0, lr]]);
        let (c, s) = (0.6_f64, 0.8_f64);
        let r = [[1.0, 0.0, 0.0], [0.0, c, -s], [0.0, s, c]];
        let a = block.rotated(&r);
        let sw = cubic_swirl(&a).unwrap();
        // Cardano in f64 on O(1) values: 1e-12.
        assert_relative_eq!(sw.lambda_r, lr, epsilon = 1e-12);
        assert_relative_eq!(sw.lambda_cr, lcr, epsilon = 1e-12);
        assert_relative_eq!(sw.lambda_ci, lci, epsilon = 1e-12);
        // Real eigenvector: the rotated z axis, (0, −s, c) up to sign.
        let mut m = a.0;
        for (i, row) in m.iter_mut().enumerate() {
            row[i] -= sw.lambda_r;
        }
        let v = null_vector(&m).unwrap();
        assert_relative_eq!((v[1] * -s + v[2] * c).abs(), 1.0, epsilon = 1e-12);
        // All-real spectrum: no swirl.
        assert!(cubic_swirl(&Tensor3([
            [1.0, 0.0, 0.0],
            [0.0, -2.0, 0.0],
            [0.0, 0.0, 1.0]
        ]))
        .is_none());
    }
}
