//! Vatistas vortex family (copy of the Lamb–Oseen template with an exponent parameter).

use serde::{Deserialize, Serialize};

use super::{axisymmetric, Dimension, ModelKind, VortexModel};

/// Smallest and largest admissible Vatistas exponent.
pub const VATISTAS_EXPONENT_RANGE: (f64, f64) = (1.0, 10.0);

/// Vatistas, Kozel & Mih (1991) family of vortex profiles.
///
/// # Formula
/// `u_θ(r) = Γ / (2π) · r / (rc^{2n} + r^{2n})^{1/n}`, `u_r = 0`. The peak azimuthal velocity
/// is at `r = rc` for every `n`, with value `2^{−1/n} Γ / (2π rc)`. `n = 1` is the Scully
/// (Kaufmann) vortex, `n = 2` is close to Lamb–Oseen, `n → ∞` tends to Rankine.
///
/// # Parameters
/// - `circulation` Γ: length²/time, any sign, finite.
/// - `core_radius` rc: length, `rc > 0`; here the radius of peak velocity.
/// - `exponent` n (only when fitted): dimensionless, `1 ≤ n ≤ 10` (below 1 the velocity
///   gradient at the axis is infinite; above 10 the profile is indistinguishable from Rankine at
///   PIV resolution).
///
/// # Assumptions
/// Axisymmetric, steady, isolated, no radial velocity in the plane (the original paper pairs the
/// profile with an axial and radial field that is not modelled here).
///
/// # Reference
/// G. H. Vatistas, V. Kozel & W. C. Mih (1991), "A simpler model for concentrated vortices",
/// *Experiments in Fluids* 11, 73–76.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Vatistas {
    /// `Some(n)`: exponent fixed at n; `None`: fitted as own parameter 2.
    pub exponent: Option<f64>,
}

impl Vatistas {
    /// Vatistas with the exponent fitted (starting at n = 2).
    pub fn fitted() -> Self {
        Vatistas { exponent: None }
    }

    /// Vatistas with exponent fixed at `n`.
    pub fn fixed(n: f64) -> Self {
        Vatistas { exponent: Some(n) }
    }

    /// Exponent for own parameters `p`.
    #[inline]
    pub fn exponent_of(&self, p: &[f64]) -> f64 {
        self.exponent.unwrap_or_else(|| p[2])
    }
}

impl Default for Vatistas {
    fn default() -> Self {
        Self::fitted()
    }
}

const INV_TWO_PI: f64 = 1.0 / (2.0 * std::f64::consts::PI);

/// `ln(1 + e^x)` without overflow.
#[inline]
fn softplus(x: f64) -> f64 {
    if x > 35.0 {
        x
    } else {
        x.exp().ln_1p()
    }
}

impl VortexModel for Vatistas {
    fn kind(&self) -> ModelKind {
        ModelKind::Vatistas
    }

    fn to_model(&self) -> super::Model {
        super::Model::Vatistas(*self)
    }

    fn parameter_names(&self) -> &'static [&'static str] {
        match self.exponent {
            None => &["circulation", "core_radius", "exponent"],
            Some(_) => &["circulation", "core_radius"],
        }
    }

    fn parameter_dimensions(&self) -> &'static [Dimension] {
        match self.exponent {
            None => &[
                Dimension::Circulation,
                Dimension::Length,
                Dimension::Dimensionless,
            ],
            Some(_) => &[Dimension::Circulation, Dimension::Length],
        }
    }

    fn extra_bounds(&self) -> &'static [(f64, f64)] {
        match self.exponent {
            None => &[VATISTAS_EXPONENT_RANGE],
            Some(_) => &[],
        }
    }

    fn extra_start(&self) -> &'static [f64] {
        match self.exponent {
            None => &[2.0],
            Some(_) => &[],
        }
    }

    fn peak_radius_ratio(&self, _p: &[f64]) -> f64 {
        1.0
    }

    fn rescaled(&self, _length: f64, _velocity: f64) -> Self {
        *self
    }

    #[inline]
    fn velocity(&self, dx: f64, dy: f64, p: &[f64]) -> [f64; 2] {
        let n = self.exponent_of(p);
        let a = p[1] * p[1];
        let t = (dx * dx + dy * dy) / a;
        // K = Γ/(2π a) · (1 + tⁿ)^{−1/n}
        let k = p[0] * INV_TWO_PI / a * (-(t.powf(n)).ln_1p() / n).exp();
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
        let n = self.exponent_of(p);
        let a = p[1] * p[1];
        let s = dx * dx + dy * dy;
        let t = s / a;
        // w = tⁿ/(1 + tⁿ), omw = 1/(1 + tⁿ) (both as logistic functions of l = n ln t, stable
        // for any t), sp = ln(1 + tⁿ), tn1 = t^{n−1}/(1 + tⁿ) = w/t.
        let (sp, w, omw, tn1) = if t > 0.0 {
            let l = n * t.ln();
            let w = 1.0 / (1.0 + (-l).exp());
            let omw = 1.0 / (1.0 + l.exp());
            (softplus(l), w, omw, w / t)
        } else {
            (0.0, 0.0, 1.0, if n > 1.0 { 0.0 } else { 1.0 })
        };
        let base = INV_TWO_PI / a * (-sp / n).exp();
        let k = p[0] * base;
        // K = C·(aⁿ + sⁿ)^{−1/n} ⇒ ∂K/∂s = −K s^{n−1}/(aⁿ + sⁿ) = −K t^{n−1}/(a(1 + tⁿ)).
        let dk_ds = -k * tn1 / a;
        // K = C·(aⁿ + sⁿ)^{−1/n}: ∂K/∂a = −K a^{n−1}/(aⁿ+sⁿ) = −K/(a(1 + tⁿ)); ∂a/∂rc = 2 rc.
        let dk_drc = -k * omw / a * 2.0 * p[1];
        let vel = axisymmetric(dx, dy, k, dk_ds, 0.0, 0.0, du, dv);
        du[2] = -base * dy;
        dv[2] = base * dx;
        du[3] = -dk_drc * dy;
        dv[3] = dk_drc * dx;
        if self.exponent.is_none() {
            // ln K = ln(C/a) − ln(1+tⁿ)/n ⇒ ∂K/∂n = K (ln(1+tⁿ)/n² − w ln t / n).
            let ln_t = if t > 0.0 { t.ln() } else { 0.0 };
            let dk_dn = k * (sp / (n * n) - w * ln_t / n);
            du[4] = -dk_dn * dy;
            dv[4] = dk_dn * dx;
        }
        vel
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{LambOseen, Rankine};
    use approx::assert_relative_eq;

    /// Vatistas et al. 1991: the peak is at r = rc for every n with value 2^{−1/n} Γ/(2π rc);
    /// checked by scanning the profile on a fine grid.
    #[test]
    fn peak_at_core_radius_for_all_exponents() {
        for &n in &[1.0, 1.5, 2.0, 4.0, 8.0] {
            let m = Vatistas::fixed(n);
            let p = [1.0, 1.0];
            let (mut best_r, mut best_v) = (0.0, f64::MIN);
            for i in 1..40_000 {
                let r = i as f64 * 1e-4;
                let v = m.velocity(r, 0.0, &p)[1];
                if v > best_v {
                    best_v = v;
                    best_r = r;
                }
            }
            // Grid step 1e-4 bounds the location error.
            assert_relative_eq!(best_r, 1.0, epsilon = 2e-4);
            let expected = 2f64.powf(-1.0 / n) / (2.0 * std::f64::consts::PI);
            assert_relative_eq!(best_v, expected, max_relative = 1e-7);
        }
    }

    /// Vatistas et al. 1991: n = 1 is u_θ = Γ r/(2π(rc² + r²)) (Scully); large n approaches
    /// Rankine; n = 2 is offered as an approximation of Lamb–Oseen with the same peak radius:
    /// the peaks differ by 1.2 % (2^{−1/2} against 0.63817 · 1.12091 = 0.71533) and the
    /// profiles by at most 8.5 % of the peak (computed with numpy on a fine grid: at
    /// r = 0.38 rc, where n = 2 rotates 1.2564 times slower near the axis); asserted with 9 %.
    #[test]
    fn limiting_cases() {
        let (g, rc) = (1.0, 0.7);
        let r = 0.4;
        let v1 = Vatistas::fixed(1.0).velocity(r, 0.0, &[g, rc])[1];
        assert_relative_eq!(
            v1,
            g * r / (2.0 * std::f64::consts::PI * (rc * rc + r * r)),
            max_relative = 1e-14
        );
        let vr = Rankine.velocity(2.0 * rc, 0.0, &[g, rc])[1];
        let vinf = Vatistas::fixed(60.0).velocity(2.0 * rc, 0.0, &[g, rc])[1];
        // 2^{-1/60}-type corrections vanish like (1/2)^{2n}·/n at r = 2rc.
        assert_relative_eq!(vinf, vr, max_relative = 1e-6);
        let lo_rc = rc / crate::model::GAUSSIAN_PEAK_RADIUS_RATIO;
        let vmax = LambOseen.peak_azimuthal_velocity(&[g, lo_rc]).1;
        for i in 1..50 {
            let r = i as f64 * 0.06;
            let a = LambOseen.velocity(r, 0.0, &[g, lo_rc])[1];
            let b = Vatistas::fixed(2.0).velocity(r, 0.0, &[g, rc])[1];
            assert!((a - b).abs() < 0.09 * vmax, "r {r}: {a} vs {b}");
        }
        let vpeak = Vatistas::fixed(2.0).peak_azimuthal_velocity(&[g, rc]).1;
        assert_relative_eq!(vpeak / vmax, 0.5f64.sqrt() / 0.715_33, max_relative = 1e-4);
    }
}
