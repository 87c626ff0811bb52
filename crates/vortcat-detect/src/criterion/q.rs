//! The Q criterion.
//!
//! # Formula
//! `Q = ½ (‖Ω‖² − ‖S‖²) = −½ Σᵢⱼ aᵢⱼ aⱼᵢ`, with `S = (A + Aᵀ)/2`, `Ω = (A − Aᵀ)/2`, A the
//! velocity-gradient tensor and ‖·‖ the Frobenius norm. A vortex is a connected region with
//! Q > 0 (rotation rate exceeds strain rate); Hunt et al. also require the pressure to be lower
//! than ambient, which cannot be checked from velocity alone and is not applied here.
//!
//! In a plane, A is the in-plane 2×2 tensor and Q is evaluated from it (the out-of-plane
//! derivatives are unknown and do not enter). For in-plane divergence-free flow the planar Q
//! equals det A, and in a vortex centre in solid-body rotation at angular velocity Ω it equals
//! Ω² = λci² (see [`super::swirling_strength`]). With in-plane divergence (out-of-plane
//! stretching, e.g. a Burgers vortex), Q counts the divergence as strain and is lower than λci².
//!
//! # Units
//! 1/time² (velocity unit per length unit, squared).
//!
//! # Assumptions
//! Incompressibility is assumed by the original definition; here Q is always computed from the
//! full (not deviatoric) S as written above. Q < 0 in pure strain, Q = 0 in pure shear.
//!
//! # Reference
//! J. C. R. Hunt, A. A. Wray & P. Moin (1988). "Eddies, streams, and convergence zones in
//! turbulent flows". In *Studying Turbulence Using Numerical Simulation Databases, II*,
//! Proceedings of the 1988 Summer Program, Center for Turbulence Research, Stanford
//! University, Report CTR-S88, pp. 193–208.

use ndarray::{Array2, Array3};
use vortcat_field::{PlaneField, VolumeField};

use crate::error::DetectError;
use crate::gradient::{map_plane, map_volume, EdgeOrder, GradientScheme};
use crate::tensor::{Tensor2, Tensor3};

/// Planar Q at a point.
#[inline]
pub fn plane_value(t: &Tensor2) -> f64 {
    let a = &t.0;
    -0.5 * (a[0][0] * a[0][0] + a[1][1] * a[1][1] + 2.0 * a[0][1] * a[1][0])
}

/// Q at a point of a volume.
#[inline]
pub fn volume_value(t: &Tensor3) -> f64 {
    let a = &t.0;
    let mut s = 0.0;
    for (i, row) in a.iter().enumerate() {
        for (j, &aij) in row.iter().enumerate() {
            s += aij * a[j][i];
        }
    }
    -0.5 * s
}

/// Q field of a plane, `[iy, ix]`, NaN where not computable.
pub fn plane(
    field: &PlaneField,
    scheme: GradientScheme,
    edge: EdgeOrder,
) -> Result<Array2<f64>, DetectError> {
    map_plane(field, scheme, edge, plane_value)
}

/// Q field of a volume, `[iz, iy, ix]`, NaN where not computable.
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
    fn signs_for_rotation_strain_and_shear() {
        // Hunt et al. (1988) definition evaluated by hand: rotation Ω → Q = Ω²;
        // pure strain u = a x, v = −a y → Q = −a²; pure shear u = s y → Q = 0.
        // Small exact binary fractions: rounding-free.
        let (om, a, s) = (1.5, 0.5, 3.0);
        assert_relative_eq!(
            plane_value(&Tensor2([[0.0, -om], [om, 0.0]])),
            om * om,
            epsilon = 1e-15
        );
        assert_relative_eq!(
            plane_value(&Tensor2([[a, 0.0], [0.0, -a]])),
            -a * a,
            epsilon = 1e-15
        );
        assert_relative_eq!(
            plane_value(&Tensor2([[0.0, s], [0.0, 0.0]])),
            0.0,
            epsilon = 1e-15
        );
        // The 3D formula agrees with the planar one on an embedded planar tensor.
        let t = Tensor2([[0.3, -1.1], [0.8, -0.3]]);
        assert_relative_eq!(volume_value(&t.embed()), plane_value(&t), epsilon = 1e-15);
        // and equals det A for a traceless planar tensor.
        assert_relative_eq!(plane_value(&t), t.det(), epsilon = 1e-15);
    }
}
