//! Swirling strength λci, the swirl axis, and the inverse spiralling ratio λcr/λci.
//!
//! # Formula
//! Where the velocity-gradient tensor A has a complex-conjugate pair of eigenvalues
//! `λcr ± i λci`, the local streamlines spiral about the direction of the real eigenvector
//! (the *swirl axis*, 3D only) with angular frequency λci; the swirling strength is λci there
//! and 0 where all eigenvalues are real. The planar value uses the 2×2 in-plane tensor:
//! `λci = √(det A − (tr A)²/4)` when positive, `λcr = tr A / 2`. In 3D the eigenvalues come
//! from Cardano's solution of the characteristic cubic ([`crate::eigen::cubic_swirl`]); the
//! swirl axis is the unit real eigenvector, oriented so that ω · axis ≥ 0.
//!
//! The *inverse spiralling ratio* `λcr/λci` (Chakraborty et al. 2005) measures how fast a
//! material point spirals in (λcr < 0) or out (λcr > 0) per revolution; Chakraborty et al.
//! propose |λcr/λci| below a small bound, together with a λci threshold, as a test of orbital
//! compactness. It is reported per candidate, not used as a threshold by default.
//!
//! For a Lamb–Oseen vortex the centre is in solid-body rotation at Ω = Γ/(2π r_c²), so
//! λci(0) = Γ/(2π r_c²). Pure strain and pure shear have λci = 0.
//!
//! # Units
//! 1/time (λci, λcr, λr); the ratio is dimensionless.
//!
//! # Assumptions
//! None beyond a differentiable field (frame-invariance under Galilean changes holds, as for
//! every gradient-based criterion). In noisy PIV data λci is positive at many isolated points
//! (a random 2×2 matrix has complex eigenvalues with finite probability), hence the positive
//! detection threshold.
//!
//! # Reference
//! J. Zhou, R. J. Adrian, S. Balachandar & T. M. Kendall (1999). "Mechanisms for generating
//! coherent packets of hairpin vortices in channel flow". *J. Fluid Mech.* 387, 353–396.
//! P. Chakraborty, S. Balachandar & R. J. Adrian (2005). "On the relationships between local
//! vortex identification schemes". *J. Fluid Mech.* 535, 189–214.

use ndarray::{Array2, Array3};
use vortcat_field::{PlaneField, VolumeField};

use crate::eigen::{cubic_swirl, null_vector};
use crate::error::DetectError;
use crate::gradient::{map_plane, map_volume, EdgeOrder, GradientScheme};
use crate::tensor::{Tensor2, Tensor3};

/// Swirl of a point: the complex eigenvalue pair and, in 3D, the axis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SwirlPoint {
    /// Swirling strength λci > 0.
    pub lambda_ci: f64,
    /// Real part λcr of the complex pair.
    pub lambda_cr: f64,
    /// Unit swirl axis (3D only; `None` in a plane or when the eigenvector is degenerate).
    pub axis: Option<[f64; 3]>,
}

impl SwirlPoint {
    /// The inverse spiralling ratio λcr/λci (Chakraborty et al. 2005).
    pub fn inverse_spiralling_ratio(&self) -> f64 {
        self.lambda_cr / self.lambda_ci
    }
}

/// Planar swirl at a point, `None` when the eigenvalues are real.
#[inline]
pub fn plane_swirl(t: &Tensor2) -> Option<SwirlPoint> {
    let tr = t.trace();
    let d = t.det() - 0.25 * tr * tr;
    (d > 0.0).then(|| SwirlPoint {
        lambda_ci: d.sqrt(),
        lambda_cr: 0.5 * tr,
        axis: None,
    })
}

/// Planar λci at a point (0 without swirl).
#[inline]
pub fn plane_value(t: &Tensor2) -> f64 {
    let tr = t.trace();
    let d = t.det() - 0.25 * tr * tr;
    d.max(0.0).sqrt()
}

/// λci at a point of a volume (0 without swirl).
#[inline]
pub fn volume_value(t: &Tensor3) -> f64 {
    cubic_swirl(t).map_or(0.0, |s| s.lambda_ci)
}

/// Full 3D swirl at a point (λci, λcr and the swirl axis oriented along the vorticity), `None`
/// when all eigenvalues are real.
pub fn volume_swirl(t: &Tensor3) -> Option<SwirlPoint> {
    let s = cubic_swirl(t)?;
    let mut m = t.0;
    for (i, row) in m.iter_mut().enumerate() {
        row[i] -= s.lambda_r;
    }
    let axis = null_vector(&m).map(|mut e| {
        let w = t.vorticity();
        if w[0] * e[0] + w[1] * e[1] + w[2] * e[2] < 0.0 {
            e = [-e[0], -e[1], -e[2]];
        }
        e
    });
    Some(SwirlPoint {
        lambda_ci: s.lambda_ci,
        lambda_cr: s.lambda_cr,
        axis,
    })
}

/// Planar λci field, `[iy, ix]`, NaN where not computable.
pub fn plane(
    field: &PlaneField,
    scheme: GradientScheme,
    edge: EdgeOrder,
) -> Result<Array2<f64>, DetectError> {
    map_plane(field, scheme, edge, plane_value)
}

/// λci field of a volume, `[iz, iy, ix]`, NaN where not computable.
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
    fn rotation_strain_and_shear() {
        // Zhou et al. (1999): λci is the imaginary part of the complex eigenvalue pair.
        // Rotation Ω: eigenvalues ±iΩ. Strain and shear: real eigenvalues → λci = 0.
        let om = 1.5;
        assert_relative_eq!(
            plane_value(&Tensor2([[0.0, -om], [om, 0.0]])),
            om,
            epsilon = 1e-15
        );
        assert_relative_eq!(
            plane_value(&Tensor2([[0.5, 0.0], [0.0, -0.5]])),
            0.0,
            epsilon = 1e-15
        );
        assert_relative_eq!(
            plane_value(&Tensor2([[0.0, 3.0], [0.0, 0.0]])),
            0.0,
            epsilon = 1e-15
        );
        assert!(plane_swirl(&Tensor2([[0.0, 3.0], [0.0, 0.0]])).is_none());
        // Same in 3D for the embedded tensors (third eigenvalue 0, real).
        assert_relative_eq!(
            volume_value(&Tensor2([[0.0, -om], [om, 0.0]]).embed()),
            om,
            epsilon = 1e-12
        );
        assert_relative_eq!(
            volume_value(&Tensor2([[0.5, 0.0], [0.0, -0.5]]).embed()),
            0.0,
            epsilon = 1e-15
        );
    }

    #[test]
    fn burgers_like_tensor_has_axis_along_stretching_and_spiralling_ratio() {
        // Burgers (1948) core in its own frame: A = [[−γ/2, −Ω, 0], [Ω, −γ/2, 0], [0, 0, γ]].
        // Eigenvalues γ and −γ/2 ± iΩ, so λcr/λci = −γ/(2Ω) and the axis is +z (ω_z = 2Ω > 0).
        let (g, om) = (0.4, 2.0);
        let t = Tensor3([[-0.5 * g, -om, 0.0], [om, -0.5 * g, 0.0], [0.0, 0.0, g]]);
        let s = volume_swirl(&t).unwrap();
        // Closed-form Cardano on O(1) values: 1e-12.
        assert_relative_eq!(s.lambda_ci, om, epsilon = 1e-12);
        assert_relative_eq!(
            s.inverse_spiralling_ratio(),
            -g / (2.0 * om),
            epsilon = 1e-12
        );
        let ax = s.axis.unwrap();
        assert_relative_eq!(ax[2], 1.0, epsilon = 1e-12);
        // Reversed rotation: the axis flips with the vorticity.
        let t = Tensor3([[-0.5 * g, om, 0.0], [-om, -0.5 * g, 0.0], [0.0, 0.0, g]]);
        assert_relative_eq!(
            volume_swirl(&t).unwrap().axis.unwrap()[2],
            -1.0,
            epsilon = 1e-12
        );
        let p = plane_swirl(&Tensor2([[-0.5 * g, -om], [om, -0.5 * g]])).unwrap();
        assert_relative_eq!(
            p.inverse_spiralling_ratio(),
            -g / (2.0 * om),
            epsilon = 1e-12
        );
    }
}
