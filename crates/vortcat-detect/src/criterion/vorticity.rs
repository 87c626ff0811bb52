//! Vorticity.
//!
//! # Formula
//! ω = ∇ × u. In a plane only the out-of-plane component is available from in-plane data:
//! `ω_z = ∂v/∂x − ∂u/∂y`. In a volume the vector
//! `ω = (∂w/∂y − ∂v/∂z, ∂u/∂z − ∂w/∂x, ∂v/∂x − ∂u/∂y)` and its magnitude |ω|.
//!
//! # Units
//! 1/time: velocity unit per length unit of the grid (e.g. (m/s)/m = 1/s).
//!
//! # Assumptions
//! None beyond a differentiable field. Vorticity is not a vortex criterion in the strict sense:
//! it is also large in shear layers with no swirl (a pure shear `u = s y` has ω_z = −s), so a
//! vorticity-based core detection also picks up shear layers. Its sign gives the rotation sense
//! (positive = counter-clockwise seen from +z, the vortcat convention). It is used here as the
//! sense of every planar candidate and as the orientation of 3D swirl axes.
//!
//! For a Lamb–Oseen vortex of circulation Γ and core radius r_c the centre value is
//! ω(0) = Γ/(π r_c²); for solid-body rotation at angular velocity Ω, ω = 2Ω.
//!
//! # Reference
//! G. K. Batchelor (1967). *An Introduction to Fluid Dynamics*. Cambridge University Press,
//! Cambridge (kinematics of the velocity gradient: rate of strain and vorticity).
//!
//! This file is the template for the other criteria: a module doc with formula, units,
//! assumptions and reference; point functions on [`Tensor2`]/[`Tensor3`]; field functions on
//! `vortcat-field` types using the fused gradient paths; unit tests at the bottom.

use ndarray::{Array2, Array3};
use vortcat_field::{PlaneField, VolumeField};

use crate::error::DetectError;
use crate::gradient::{map_plane, map_volume, EdgeOrder, GradientScheme};
use crate::tensor::{Tensor2, Tensor3};

/// ω_z at a point of a plane.
#[inline]
pub fn plane_value(t: &Tensor2) -> f64 {
    t.0[1][0] - t.0[0][1]
}

/// The vorticity vector at a point of a volume.
#[inline]
pub fn volume_vector(t: &Tensor3) -> [f64; 3] {
    t.vorticity()
}

/// |ω| at a point of a volume.
#[inline]
pub fn volume_magnitude(t: &Tensor3) -> f64 {
    let w = t.vorticity();
    (w[0] * w[0] + w[1] * w[1] + w[2] * w[2]).sqrt()
}

/// ω_z field of a plane, `[iy, ix]`, NaN where not computable.
pub fn plane(
    field: &PlaneField,
    scheme: GradientScheme,
    edge: EdgeOrder,
) -> Result<Array2<f64>, DetectError> {
    map_plane(field, scheme, edge, plane_value)
}

/// |ω| field of a volume, `[iz, iy, ix]`, NaN where not computable.
pub fn volume_magnitude_field(
    field: &VolumeField,
    scheme: GradientScheme,
    edge: EdgeOrder,
) -> Result<Array3<f32>, DetectError> {
    map_volume(field, scheme, edge, volume_magnitude)
}

/// The three components `[ω_x, ω_y, ω_z]` of a volume. Stores three scalar fields: use
/// [`volume_magnitude_field`] or [`volume_vector`] at chosen points when memory matters.
pub fn volume_vector_field(
    field: &VolumeField,
    scheme: GradientScheme,
    edge: EdgeOrder,
) -> Result<[Array3<f32>; 3], DetectError> {
    Ok([
        map_volume(field, scheme, edge, |t| t.vorticity()[0])?,
        map_volume(field, scheme, edge, |t| t.vorticity()[1])?,
        map_volume(field, scheme, edge, |t| t.vorticity()[2])?,
    ])
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn solid_body_rotation_has_vorticity_twice_the_angular_velocity() {
        // Batchelor (1967): for u = −Ωy, v = Ωx, ω_z = 2Ω. Exact arithmetic.
        let om = 0.75;
        assert_relative_eq!(
            plane_value(&Tensor2([[0.0, -om], [om, 0.0]])),
            1.5,
            epsilon = 1e-15
        );
        let t = Tensor2([[0.0, -om], [om, 0.0]]).embed();
        assert_relative_eq!(volume_magnitude(&t), 1.5, epsilon = 1e-15);
    }

    #[test]
    fn pure_shear_has_vorticity_but_no_rotation_of_its_own() {
        // u = s y: ω_z = −s (Batchelor 1967): vorticity does not tell shear from swirl.
        let s = 2.0;
        assert_relative_eq!(
            plane_value(&Tensor2([[0.0, s], [0.0, 0.0]])),
            -2.0,
            epsilon = 1e-15
        );
    }
}
