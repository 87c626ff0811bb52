//! Lamb–Oseen vortex. This file is the template the other model files copy: a doc comment with
//! formula, parameters (unit, valid range), assumptions and reference; one unit struct; one
//! `impl VortexModel`; unit tests at the bottom.

use serde::{Deserialize, Serialize};

use super::{axisymmetric, Dimension, ModelKind, VortexModel};

/// `r_peak / rc` of a Gaussian-core vortex (Lamb–Oseen, Burgers): `sqrt(t*)` where `t*` is the
/// positive root of `1 + 2t = eᵗ`. Literature value 1.12091 (e.g. Saffman 1992, *Vortex
/// Dynamics*, §2.1); recomputed here by root finding and checked by a test.
pub const GAUSSIAN_PEAK_RADIUS_RATIO: f64 = 1.120_906_422_778_534_1;

/// `u_θ,max · 2π rc / Γ` of a Gaussian-core vortex: `(1 − e^{−t*}) / sqrt(t*)`. Literature value
/// 0.63817; recomputed and checked by a test.
pub const GAUSSIAN_PEAK_VELOCITY_FACTOR: f64 = 0.638_172_686_338_951_4;

/// Lamb–Oseen vortex: the viscous diffusion of a line vortex.
///
/// # Formula
/// `u_θ(r) = Γ / (2π r) · (1 − exp(−r² / rc²))`, `u_r = 0`, with `r` the distance from the
/// centre. Peak azimuthal velocity `0.63817 · Γ / (2π rc)` at `r = 1.12091 · rc`.
///
/// # Parameters
/// - `circulation` Γ: length²/time (e.g. m²/s), any sign (positive counter-clockwise), finite.
/// - `core_radius` rc: length, `rc > 0`; `rc² = 4ν t` for a vortex diffusing for time `t`.
///
/// # Assumptions
/// Two-dimensional, axisymmetric, unbounded fluid, no axial strain, an isolated vortex; the
/// core radius is the Gaussian width, not the radius of peak velocity.
///
/// # Reference
/// C. W. Oseen (1912), "Über Wirbelbewegung in einer reibenden Flüssigkeit", *Arkiv för
/// Matematik, Astronomi och Fysik* 7, 14–21. H. Lamb (1932), *Hydrodynamics*, 6th ed.,
/// Cambridge University Press, §334a.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct LambOseen;

const INV_TWO_PI: f64 = 1.0 / (2.0 * std::f64::consts::PI);

/// Gaussian core function `g(s) = (1 − e^{−s/a}) / s` with `s = r²`, `a = rc²`, and its
/// derivatives `∂g/∂s` and `∂g/∂a`; accurate at and near the centre.
#[inline(always)]
pub(crate) fn gaussian_core(s: f64, a: f64) -> (f64, f64, f64) {
    // Reciprocals of the loop-invariant a (hoisted by the compiler once inlined).
    let inv_a = 1.0 / a;
    let inv_a2 = inv_a * inv_a;
    let t = s * inv_a;
    let e = crate::fastmath::exp_nonpositive(-t);
    let dg_da = -e * inv_a2;
    if t < 1e-2 {
        // Taylor series of (1 − e^{−t})/t to t⁴ and of its derivative to t⁴; truncation errors
        // t⁵/720 and t⁵/840 are below 2e-13 (relative) for t < 1e-2.
        let g = (1.0 - t * (0.5 - t * (1.0 / 6.0 - t * (1.0 / 24.0 - t / 120.0)))) * inv_a;
        let dg_ds = (-0.5 + t * (1.0 / 3.0 - t * (0.125 - t * (1.0 / 30.0 - t / 144.0)))) * inv_a2;
        (g, dg_ds, dg_da)
    } else {
        // For t ≥ 1e-2, 1 − e^{−t} from one exp call keeps 14 digits; the numerator of ∂g/∂s
        // (≈ −t²/2 for small t) keeps 12.
        let one_minus = 1.0 - e;
        let inv_s = 1.0 / s;
        let g = one_minus * inv_s;
        let dg_ds = (t * e - one_minus) * inv_s * inv_s;
        (g, dg_ds, dg_da)
    }
}

impl VortexModel for LambOseen {
    fn kind(&self) -> ModelKind {
        ModelKind::LambOseen
    }

    fn to_model(&self) -> super::Model {
        super::Model::LambOseen(*self)
    }

    fn parameter_names(&self) -> &'static [&'static str] {
        &["circulation", "core_radius"]
    }

    fn parameter_dimensions(&self) -> &'static [Dimension] {
        &[Dimension::Circulation, Dimension::Length]
    }

    fn peak_radius_ratio(&self, _p: &[f64]) -> f64 {
        GAUSSIAN_PEAK_RADIUS_RATIO
    }

    fn rescaled(&self, _length: f64, _velocity: f64) -> Self {
        *self
    }

    #[inline]
    fn velocity(&self, dx: f64, dy: f64, p: &[f64]) -> [f64; 2] {
        let (g, _, _) = gaussian_core(dx * dx + dy * dy, p[1] * p[1]);
        let k = p[0] * INV_TWO_PI * g;
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
        let c = p[0] * INV_TWO_PI;
        let (g, dg_ds, dg_da) = gaussian_core(dx * dx + dy * dy, p[1] * p[1]);
        let vel = axisymmetric(dx, dy, c * g, c * dg_ds, 0.0, 0.0, du, dv);
        // ∂K/∂Γ = g/(2π); ∂K/∂rc = c · ∂g/∂a · 2 rc.
        let dk_dgamma = INV_TWO_PI * g;
        let dk_drc = c * dg_da * 2.0 * p[1];
        du[2] = -dk_dgamma * dy;
        dv[2] = dk_dgamma * dx;
        du[3] = -dk_drc * dy;
        dv[3] = dk_drc * dx;
        vel
    }

    fn gaussian_kernel(&self) -> Option<super::GaussianKernel> {
        Some(super::GaussianKernel::LambOseen)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Oseen 1912 / Lamb 1932: u_θ = Γ/(2πr)(1 − e^{−r²/rc²}); evaluate at r = rc directly.
    #[test]
    fn azimuthal_velocity_at_core_radius() {
        let (gamma, rc) = (2.0, 0.5);
        let [u, v] = LambOseen.velocity(rc, 0.0, &[gamma, rc]);
        let expected = gamma / (2.0 * std::f64::consts::PI * rc) * (1.0 - (-1.0f64).exp());
        // Only rounding separates the two expressions.
        assert_relative_eq!(v, expected, max_relative = 1e-14);
        assert_relative_eq!(u, 0.0, epsilon = 1e-15);
    }

    /// Far field is the potential vortex Γ/(2πr) (Lamb 1932 §334a): at r = 10 rc the Gaussian
    /// term is e^{−100}, far below f64 precision.
    #[test]
    fn far_field_is_potential_vortex() {
        let (gamma, rc, r) = (-1.3, 0.1, 1.0);
        let v = LambOseen.velocity(0.0, r, &[gamma, rc]);
        // u = −u_θ sinθ with θ = 90°, so u = −Γ/(2πr).
        assert_relative_eq!(
            v[0],
            -gamma / (2.0 * std::f64::consts::PI * r),
            max_relative = 1e-14
        );
    }

    /// Near the axis the flow is solid-body rotation with Ω = Γ/(2π rc²) (Taylor limit of the
    /// formula); the series branch and the direct branch must join smoothly at t = 1e-2.
    #[test]
    fn centre_is_solid_body_rotation_and_branches_join() {
        let (gamma, rc) = (1.0, 1.0);
        let v = LambOseen.velocity(1e-6, 0.0, &[gamma, rc])[1];
        assert_relative_eq!(
            v / 1e-6,
            gamma / (2.0 * std::f64::consts::PI),
            max_relative = 1e-9
        );
        let below = gaussian_core(1e-2 * (1.0 - 1e-13), 1.0);
        let above = gaussian_core(1e-2 * (1.0 + 1e-13), 1.0);
        // The two branches agree to the truncation and rounding errors stated in
        // `gaussian_core` (2e-13 for g, 1e-12 for its derivative); the 2e-13 step in t moves
        // g by only 1e-15.
        assert_relative_eq!(below.0, above.0, max_relative = 1e-12);
        assert_relative_eq!(below.1, above.1, max_relative = 1e-11);
        // Exactly zero on the axis (no 0/0).
        let c = LambOseen.velocity(0.0, 0.0, &[gamma, rc]);
        approx::assert_abs_diff_eq!(c[0], 0.0, epsilon = f64::MIN_POSITIVE);
        approx::assert_abs_diff_eq!(c[1], 0.0, epsilon = f64::MIN_POSITIVE);
    }

    /// The peak constants 1.12091 and 0.63817 are quoted from memory of the literature; verify
    /// them by finding the maximum of u_θ(r) numerically (golden-section search on the formula).
    #[test]
    fn peak_constants_verified_numerically() {
        let f = |r: f64| (1.0 - (-r * r).exp()) / r;
        let (mut a, mut b) = (0.5f64, 2.0f64);
        let phi = 0.5 * (5f64.sqrt() - 1.0);
        for _ in 0..200 {
            let c = b - phi * (b - a);
            let d = a + phi * (b - a);
            if f(c) > f(d) {
                b = d;
            } else {
                a = c;
            }
        }
        let r_peak = 0.5 * (a + b);
        // Golden-section search locates a flat maximum to about sqrt(eps) ≈ 1e-8.
        assert_relative_eq!(r_peak, GAUSSIAN_PEAK_RADIUS_RATIO, max_relative = 1e-7);
        assert_relative_eq!(r_peak, 1.12091, max_relative = 1e-5);
        assert_relative_eq!(
            f(r_peak),
            GAUSSIAN_PEAK_VELOCITY_FACTOR,
            max_relative = 1e-12
        );
        assert_relative_eq!(f(r_peak), 0.63817, max_relative = 1e-5);
        // And the root of 1 + 2t = eᵗ (stationarity condition) at t = ratio²; a relative error
        // of t of 1e-16 moves the two sides apart by about 1.5e-16, so 1e-14 has margin.
        let t = GAUSSIAN_PEAK_RADIUS_RATIO.powi(2);
        assert_relative_eq!(1.0 + 2.0 * t, t.exp(), max_relative = 1e-14);
        let (r, vmax) = LambOseen.peak_azimuthal_velocity(&[2.0 * std::f64::consts::PI, 1.0]);
        assert_relative_eq!(r, GAUSSIAN_PEAK_RADIUS_RATIO, max_relative = 1e-15);
        assert_relative_eq!(vmax, GAUSSIAN_PEAK_VELOCITY_FACTOR, max_relative = 1e-14);
    }
}
