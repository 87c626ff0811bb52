//! The discriminant criterion Δ.
//!
//! # Formula
//! The eigenvalues of the velocity-gradient tensor A solve `λ³ + Pλ² + Qλ + R = 0` with
//! `P = −tr A`, `Q = ½(P² − tr A²)`, `R = −det A`. A has a complex pair, i.e. local streamlines
//! are closed or spiralling in a frame moving with the point, exactly when the discriminant
//! is positive. For incompressible flow (P = 0), `Δ = (Q/3)³ + (R/2)²`. For P ≠ 0 this crate
//! uses the same expression for the depressed cubic (λ = t − P/3):
//! `Δ = (p/3)³ + (q/2)²`, `p = Q − P²/3`, `q = 2P³/27 − PQ/3 + R`, which equals
//! `(27R² + (4P³ − 18PQ)R + 4Q³ − P²Q²)/108`, the general form of Chong et al.
//!
//! In a plane, with the 2×2 tensor (`λ² + Pλ + Q = 0`, `P = −tr A`, `Q = det A`):
//! `Δ = Q − P²/4 = det A − (tr A)²/4`, positive for complex eigenvalues; then `λci = √Δ`.
//!
//! # Units
//! 1/time⁶ in 3D, 1/time² in a plane. The strong dependence on the gradient magnitude in 3D
//! makes relative thresholds on Δ very sensitive to the strongest vortex of the field; prefer
//! λci (which has the same zero set) for thresholded detection.
//!
//! # Assumptions
//! None beyond differentiability; Δ > 0 is the same region as λci > 0.
//!
//! # Reference
//! M. S. Chong, A. E. Perry & B. J. Cantwell (1990). "A general classification of
//! three-dimensional flow fields". *Phys. Fluids A* 2(5), 765–777.

use ndarray::{Array2, Array3};
use vortcat_field::{PlaneField, VolumeField};

use crate::eigen::depressed_cubic;
use crate::error::DetectError;
use crate::gradient::{map_plane, map_volume, EdgeOrder, GradientScheme};
use crate::tensor::{Tensor2, Tensor3};

/// Planar Δ at a point.
#[inline]
pub fn plane_value(t: &Tensor2) -> f64 {
    let tr = t.trace();
    t.det() - 0.25 * tr * tr
}

/// Δ at a point of a volume.
#[inline]
pub fn volume_value(t: &Tensor3) -> f64 {
    depressed_cubic(t).2
}

/// Planar Δ field, `[iy, ix]`, NaN where not computable.
pub fn plane(
    field: &PlaneField,
    scheme: GradientScheme,
    edge: EdgeOrder,
) -> Result<Array2<f64>, DetectError> {
    map_plane(field, scheme, edge, plane_value)
}

/// Δ field of a volume, `[iz, iy, ix]`, NaN where not computable.
pub fn volume(
    field: &VolumeField,
    scheme: GradientScheme,
    edge: EdgeOrder,
) -> Result<Array3<f32>, DetectError> {
    map_volume(field, scheme, edge, volume_value)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn matches_the_general_discriminant_of_chong_et_al() {
        // Chong, Perry & Cantwell (1990): complex eigenvalues iff
        // 27R² + (4P³ − 18PQ)R + 4Q³ − P²Q² > 0; our Δ is that expression over 108.
        let t = Tensor3([[0.3, -1.2, 0.5], [0.7, -0.1, 0.2], [-0.4, 0.9, 0.4]]);
        let a = &t.0;
        let p = -t.trace();
        let tr2: f64 = (0..3)
            .flat_map(|i| (0..3).map(move |j| (i, j)))
            .map(|(i, j)| a[i][j] * a[j][i])
            .sum();
        let q = 0.5 * (p * p - tr2);
        let r = -t.det();
        let general = (27.0 * r * r + (4.0 * p.powi(3) - 18.0 * p * q) * r + 4.0 * q.powi(3)
            - p * p * q * q)
            / 108.0;
        // O(1) entries, polynomial of degree 6: rounding 1e-14.
        assert_relative_eq!(volume_value(&t), general, epsilon = 1e-14);
    }

    #[test]
    fn planar_delta_is_lambda_ci_squared_when_positive() {
        // Chong et al. (1990), 2D case: eigenvalues −P/2 ± √(P²/4 − Q); imaginary part √Δ.
        let t = Tensor2([[-0.2, -1.5], [1.5, -0.2]]);
        assert_relative_eq!(plane_value(&t), 2.25, epsilon = 1e-14);
        assert!(plane_value(&Tensor2([[1.0, 0.0], [0.0, -1.0]])) < 0.0);
    }
}
