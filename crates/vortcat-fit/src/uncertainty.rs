//! Standard errors, condition number and derived quantities with propagated errors.
//!
//! At the optimum the covariance of the parameters is estimated as `σ² (JᵀWJ)⁻¹` with
//! `σ² = Σ wᵢ rᵢ² / (m − p)` (Press et al. 2007, *Numerical Recipes*, §15.5; for the plain
//! loss `w = 1` and this is the textbook estimate, exact to first order for independent
//! Gaussian noise of equal variance; for a robust loss it is the usual IRLS approximation).
//! Derived quantities get their errors by the delta method `σ_f² = ∇fᵀ C ∇f`.

// Index loops mirror the matrix formulas.
#![allow(clippy::needless_range_loop)]

use crate::linalg::{invert_spd, symmetric_eigenvalues, Mat, MAXP};

/// Covariance in solver units, or `None` if `JᵀJ` is singular.
pub(crate) fn covariance(a: &Mat, n: usize, sigma2: f64) -> Option<Mat> {
    let inv = invert_spd(a, n)?;
    let mut c = [[0.0; MAXP]; MAXP];
    for i in 0..n {
        for j in 0..n {
            c[i][j] = sigma2 * inv[i][j];
        }
    }
    Some(c)
}

/// Condition number of `JᵀJ` scaled to unit diagonal (λmax/λmin of the correlation-like
/// matrix); ∞ if a diagonal entry is zero or an eigenvalue is not positive.
pub(crate) fn condition_number(a: &Mat, n: usize) -> f64 {
    let mut m = [[0.0; MAXP]; MAXP];
    for i in 0..n {
        if a[i][i].is_nan() || a[i][i] <= 0.0 {
            return f64::INFINITY;
        }
    }
    for i in 0..n {
        for j in 0..n {
            m[i][j] = a[i][j] / (a[i][i] * a[j][j]).sqrt();
        }
    }
    let e = symmetric_eigenvalues(&m, n);
    let (lo, hi) = e[..n]
        .iter()
        .fold((f64::MAX, f64::MIN), |(l, h), &x| (l.min(x), h.max(x)));
    if lo > 0.0 {
        hi / lo
    } else {
        f64::INFINITY
    }
}

/// `∇fᵀ C ∇f` over the first `n` entries.
pub(crate) fn propagate(grad: &[f64], c: &[Vec<f64>]) -> f64 {
    let mut s = 0.0;
    for (i, gi) in grad.iter().enumerate() {
        for (j, gj) in grad.iter().enumerate() {
            s += gi * c[i][j] * gj;
        }
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Straight-line fit y = a + b x on x = 0..4 with σ² = 1: Var(b) = 1/Σ(x − x̄)² = 0.1 and
    /// Var(a) = Σx²/(n Σ(x − x̄)²) = 30/50 = 0.6 (textbook linear regression, Press et al.
    /// §15.2).
    #[test]
    fn straight_line_covariance() {
        let mut a = [[0.0; MAXP]; MAXP];
        for x in 0..5 {
            let x = x as f64;
            a[0][0] += 1.0;
            a[0][1] += x;
            a[1][0] += x;
            a[1][1] += x * x;
        }
        let c = covariance(&a, 2, 1.0).unwrap();
        assert_relative_eq!(c[1][1], 0.1, max_relative = 1e-13);
        assert_relative_eq!(c[0][0], 0.6, max_relative = 1e-13);
        // cond of [[5, 10], [10, 30]] scaled to unit diagonal: ρ = 10/√150, (1+ρ)/(1−ρ).
        let rho = 10.0 / 150f64.sqrt();
        assert_relative_eq!(
            condition_number(&a, 2),
            (1.0 + rho) / (1.0 - rho),
            max_relative = 1e-12
        );
        let cv = vec![vec![c[0][0], c[0][1]], vec![c[1][0], c[1][1]]];
        // Var(a + 2b) = Var(a) + 4 Cov(a,b) + 4 Var(b), Cov(a,b) = −x̄/Sxx = −0.2.
        assert_relative_eq!(
            propagate(&[1.0, 2.0], &cv),
            0.6 - 0.8 + 0.4,
            max_relative = 1e-12
        );
    }
}
