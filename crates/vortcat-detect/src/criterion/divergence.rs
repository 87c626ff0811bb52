//! In-plane divergence.
//!
//! # Formula
//! `D = ∂u/∂x + ∂v/∂y`. For incompressible flow `∇·u = 0`, so `D = −∂w/∂z`: the out-of-plane
//! strain rate. In a plane normal to a stretched vortex (Burgers vortex, axial strain γ) D = −γ
//! everywhere; the fitting crate uses the mean of D over a core as an estimate of γ that is
//! independent of the swirl fit.
//!
//! # Units
//! 1/time.
//!
//! # Assumptions
//! Incompressible flow for the interpretation as −∂w/∂z; the plane must be normal to the
//! stretching direction for D = −γ. Not a vortex criterion, so it is not among
//! [`crate::Criterion`]. In PIV data D also collects out-of-plane loss of particle pairs and
//! calibration errors, so a non-zero mean D is a sign of 3D flow *or* of measurement bias.
//!
//! # Reference
//! J. M. Burgers (1948). "A mathematical model illustrating the theory of turbulence".
//! *Adv. Appl. Mech.* 1, 171–199 (the stretched vortex with u_r = −γr/2, u_z = γz).

use ndarray::Array2;
use vortcat_field::PlaneField;

use crate::error::DetectError;
use crate::gradient::{map_plane, EdgeOrder, GradientScheme};
use crate::tensor::Tensor2;

/// In-plane divergence at a point.
#[inline]
pub fn plane_value(t: &Tensor2) -> f64 {
    t.trace()
}

/// In-plane divergence field, `[iy, ix]`, NaN where not computable.
pub fn plane(
    field: &PlaneField,
    scheme: GradientScheme,
    edge: EdgeOrder,
) -> Result<Array2<f64>, DetectError> {
    map_plane(field, scheme, edge, plane_value)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn trace_of_axisymmetric_sink_flow() {
        // u_r = −γr/2 (Burgers 1948 radial inflow): ∂u/∂x = ∂v/∂y = −γ/2, D = −γ.
        let g = 0.8;
        assert_relative_eq!(
            plane_value(&Tensor2([[-0.5 * g, -1.0], [1.0, -0.5 * g]])),
            -g,
            epsilon = 1e-15
        );
    }
}
