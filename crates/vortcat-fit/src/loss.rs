//! Robust loss functions, applied by iteratively reweighted least squares (IRLS).
//!
//! The solver minimises `F = ½ Σ c² ρ(rᵢ²/c²)` over the residuals `rᵢ` (both velocity
//! components of every vector), with `c` the loss scale (velocity units) and `ρ(z) = z` for
//! the plain least squares. Each Gauss–Newton step uses the weights `wᵢ = ρ'(rᵢ²/c²)` at the
//! current point, so that the gradient `Σ wᵢ rᵢ ∇rᵢ` is exact and the normal matrix is
//! `Jᵀ W J` (Huber 1981, *Robust Statistics*, Wiley; Nocedal & Wright 2006, *Numerical
//! Optimization*, §10.3). The definitions of ρ match those of `scipy.optimize.least_squares`
//! so that fits with the same loss minimise the same objective.

use serde::{Deserialize, Serialize};

/// Loss applied to each residual.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case", tag = "loss")]
pub enum Loss {
    /// Plain least squares, `ρ(z) = z`. The default: uncertainties are exact for Gaussian noise.
    #[default]
    Linear,
    /// Huber: `ρ(z) = z` for `z ≤ 1`, `2√z − 1` otherwise (quadratic core, linear tails).
    Huber {
        /// Residual size (velocity units, > 0) where the loss turns linear; a common choice is
        /// about 2–3 times the expected noise of a PIV vector.
        scale: f64,
    },
    /// Soft-L1: `ρ(z) = 2(√(1 + z) − 1)`, a smooth approximation of the L1 loss.
    SoftL1 {
        /// Residual size (velocity units, > 0) where the loss turns from quadratic to linear.
        scale: f64,
    },
}

impl Loss {
    /// Loss scale `c` (1 for the linear loss, which has none).
    pub fn scale(&self) -> f64 {
        match *self {
            Loss::Linear => 1.0,
            Loss::Huber { scale } | Loss::SoftL1 { scale } => scale,
        }
    }

    /// The same loss with its scale divided by `velocity` (solver units).
    pub fn rescaled(&self, velocity: f64) -> Self {
        match *self {
            Loss::Linear => Loss::Linear,
            Loss::Huber { scale } => Loss::Huber {
                scale: scale / velocity,
            },
            Loss::SoftL1 { scale } => Loss::SoftL1 {
                scale: scale / velocity,
            },
        }
    }

    /// Contribution `c² ρ(r²/c²)` of residual `r` to `2F`, and the IRLS weight `ρ'(r²/c²)`.
    #[inline]
    pub fn rho_weight(&self, r: f64) -> (f64, f64) {
        let r2 = r * r;
        match *self {
            Loss::Linear => (r2, 1.0),
            Loss::Huber { scale } => {
                let c2 = scale * scale;
                if r2 <= c2 {
                    (r2, 1.0)
                } else {
                    let a = r.abs();
                    (c2 * (2.0 * a / scale - 1.0), scale / a)
                }
            }
            Loss::SoftL1 { scale } => {
                let c2 = scale * scale;
                let q = (1.0 + r2 / c2).sqrt();
                (2.0 * c2 * (q - 1.0), 1.0 / q)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// The weight is ρ'(z): check against a central difference of ρ for each loss, and the
    /// definitions against the closed forms in scipy.optimize.least_squares' documentation.
    #[test]
    fn weight_is_derivative_of_rho() {
        for loss in [
            Loss::Linear,
            Loss::Huber { scale: 0.7 },
            Loss::SoftL1 { scale: 0.7 },
        ] {
            for &r in &[0.1, 0.5, 1.3, 4.0, -2.0] {
                let c2 = loss.scale() * loss.scale();
                let z = r * r / c2;
                let h = 1e-6 * z;
                let rho = |z: f64| loss.rho_weight((z * c2).sqrt()).0 / c2;
                let d = (rho(z + h) - rho(z - h)) / (2.0 * h);
                // Central difference error O(h²) plus rounding ~1e-10.
                assert_relative_eq!(loss.rho_weight(r).1, d, max_relative = 1e-6);
            }
        }
        let (rho, w) = Loss::SoftL1 { scale: 1.0 }.rho_weight(3.0);
        assert_relative_eq!(rho, 2.0 * (10f64.sqrt() - 1.0), max_relative = 1e-15);
        assert_relative_eq!(w, 1.0 / 10f64.sqrt(), max_relative = 1e-15);
        let (rho, w) = Loss::Huber { scale: 1.0 }.rho_weight(3.0);
        assert_relative_eq!(rho, 2.0 * 3.0 - 1.0, max_relative = 1e-15);
        assert_relative_eq!(w, 1.0 / 3.0, max_relative = 1e-15);
    }
}
