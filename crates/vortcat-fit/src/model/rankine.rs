//! Rankine vortex (copy of the Lamb–Oseen template), kept as a reference model.

use serde::{Deserialize, Serialize};

use super::{axisymmetric, Dimension, ModelKind, VortexModel};

/// Rankine vortex: solid-body rotation inside the core, potential vortex outside.
///
/// # Formula
/// `u_θ(r) = Γ r / (2π rc²)` for `r < rc`, `u_θ(r) = Γ / (2π r)` for `r ≥ rc`, `u_r = 0`.
/// Peak azimuthal velocity `Γ / (2π rc)` at `r = rc`.
///
/// # Parameters
/// - `circulation` Γ: length²/time, any sign, finite.
/// - `core_radius` rc: length, `rc > 0`.
///
/// # Assumptions
/// Inviscid, two-dimensional, axisymmetric, isolated. The velocity has a kink at `r = rc`, so
/// the derivative with respect to rc jumps there: the fit still works (samples rarely sit on the
/// circle) but the least-squares surface is not smooth; prefer the Gaussian models for data.
///
/// # Reference
/// W. J. M. Rankine (1858), *A Manual of Applied Mechanics*, Griffin, London. See also
/// Lamb (1932), *Hydrodynamics*, 6th ed., §146.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct Rankine;

const INV_TWO_PI: f64 = 1.0 / (2.0 * std::f64::consts::PI);

impl VortexModel for Rankine {
    fn kind(&self) -> ModelKind {
        ModelKind::Rankine
    }

    fn to_model(&self) -> super::Model {
        super::Model::Rankine(*self)
    }

    fn parameter_names(&self) -> &'static [&'static str] {
        &["circulation", "core_radius"]
    }

    fn parameter_dimensions(&self) -> &'static [Dimension] {
        &[Dimension::Circulation, Dimension::Length]
    }

    fn peak_radius_ratio(&self, _p: &[f64]) -> f64 {
        1.0
    }

    fn rescaled(&self, _length: f64, _velocity: f64) -> Self {
        *self
    }

    #[inline]
    fn velocity(&self, dx: f64, dy: f64, p: &[f64]) -> [f64; 2] {
        let s = dx * dx + dy * dy;
        let a = p[1] * p[1];
        let k = p[0] * INV_TWO_PI / if s < a { a } else { s };
        [-k * dy, k * dx]
    }

    #[inline(always)]
    fn velocity_jacobian(
        &self,
        dx: f64,
        dy: f64,
        p: &[f64],
        du: &mut [f64],
        dv: &mut [f64],
    ) -> [f64; 2] {
        let s = dx * dx + dy * dy;
        let a = p[1] * p[1];
        let c = p[0] * INV_TWO_PI;
        // Inside: K = c/a, ∂K/∂s = 0, ∂K/∂rc = −2c/rc³. Outside: K = c/s, ∂K/∂s = −c/s².
        let (k, dk_ds, dk_dgamma, dk_drc) = if s < a {
            (c / a, 0.0, INV_TWO_PI / a, -2.0 * c / (a * p[1]))
        } else {
            (c / s, -c / (s * s), INV_TWO_PI / s, 0.0)
        };
        let vel = axisymmetric(dx, dy, k, dk_ds, 0.0, 0.0, du, dv);
        du[2] = -dk_dgamma * dy;
        dv[2] = dk_dgamma * dx;
        du[3] = -dk_drc * dy;
        dv[3] = dk_drc * dx;
        vel
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Rankine 1858 / Lamb 1932 §146: solid body inside (u_θ ∝ r), potential outside, peak
    /// Γ/(2π rc) at r = rc, continuous there.
    #[test]
    fn piecewise_profile() {
        let (gamma, rc) = (3.0, 0.5);
        let two_pi = 2.0 * std::f64::consts::PI;
        let inside = Rankine.velocity(0.25, 0.0, &[gamma, rc])[1];
        assert_relative_eq!(
            inside,
            gamma * 0.25 / (two_pi * rc * rc),
            max_relative = 1e-14
        );
        let outside = Rankine.velocity(0.0, 2.0, &[gamma, rc])[0];
        assert_relative_eq!(outside, -gamma / (two_pi * 2.0), max_relative = 1e-14);
        let (r, vmax) = Rankine.peak_azimuthal_velocity(&[gamma, rc]);
        assert_relative_eq!(r, rc, max_relative = 1e-15);
        assert_relative_eq!(vmax, gamma / (two_pi * rc), max_relative = 1e-14);
        let just_in = Rankine.velocity(rc * (1.0 - 1e-12), 0.0, &[gamma, rc])[1];
        assert_relative_eq!(just_in, vmax, max_relative = 1e-11);
    }
}
