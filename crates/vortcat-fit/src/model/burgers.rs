//! Burgers vortex (copy of the Lamb–Oseen template with the radial inflow added).

use serde::{Deserialize, Serialize};

use super::lamb_oseen::gaussian_core;
use super::{axisymmetric, Dimension, ModelKind, VortexModel, GAUSSIAN_PEAK_RADIUS_RATIO};

/// How the Burgers balance `rc² = 4ν/γ` between stretching and diffusion is used.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case", tag = "balance")]
pub enum ViscousBalance {
    /// γ is a free parameter; the balance is only checked afterwards (derived quantities compare
    /// the effective viscosity γ·rc²/4 with a known ν).
    Free,
    /// γ = 4ν/rc² is imposed with the given kinematic viscosity ν (length²/time, > 0); the own
    /// parameters are then only Γ and rc.
    Imposed {
        /// Kinematic viscosity ν, length²/time.
        viscosity: f64,
    },
}

/// Burgers vortex: a Gaussian vortex held steady by axial stretching against viscous diffusion.
///
/// # Formula
/// `u_θ(r) = Γ / (2π r) · (1 − exp(−r² / rc²))` and the radial inflow of the axisymmetric
/// stretching strain, `u_r(r) = −γ r / 2` (axial velocity `u_z = γ z`, not seen in the plane).
/// Steady when `rc² = 4ν/γ`. Peak azimuthal velocity as Lamb–Oseen.
///
/// # Parameters
/// - `circulation` Γ: length²/time, any sign, finite.
/// - `core_radius` rc: length, `rc > 0`.
/// - `strain_rate` γ (only with [`ViscousBalance::Free`]): 1/time; positive for stretching
///   (inflow in the measurement plane). Not bounded, so that a fit of a vortex without
///   stretching can return γ ≈ 0 of either sign and its significance can be judged.
///
/// # Assumptions
/// Axisymmetric strain, vortex axis normal to the measurement plane, steady, isolated vortex;
/// the plane velocity field contains the in-plane part of the strain only.
///
/// # Reference
/// J. M. Burgers (1948), "A mathematical model illustrating the theory of turbulence",
/// *Advances in Applied Mechanics* 1, 171–199.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Burgers {
    /// How γ relates to ν and rc.
    pub balance: ViscousBalance,
}

impl Burgers {
    /// Burgers vortex with free strain rate γ.
    pub fn free() -> Self {
        Burgers {
            balance: ViscousBalance::Free,
        }
    }

    /// Burgers vortex with γ = 4ν/rc² imposed for kinematic viscosity `viscosity`.
    pub fn imposed(viscosity: f64) -> Self {
        Burgers {
            balance: ViscousBalance::Imposed { viscosity },
        }
    }

    /// Strain rate γ for own parameters `p` (free: `p[2]`; imposed: 4ν/rc²).
    pub fn strain_rate(&self, p: &[f64]) -> f64 {
        match self.balance {
            ViscousBalance::Free => p[2],
            ViscousBalance::Imposed { viscosity } => 4.0 * viscosity / (p[1] * p[1]),
        }
    }
}

impl Default for Burgers {
    fn default() -> Self {
        Self::free()
    }
}

const INV_TWO_PI: f64 = 1.0 / (2.0 * std::f64::consts::PI);

impl VortexModel for Burgers {
    fn kind(&self) -> ModelKind {
        ModelKind::Burgers
    }

    fn to_model(&self) -> super::Model {
        super::Model::Burgers(*self)
    }

    fn parameter_names(&self) -> &'static [&'static str] {
        match self.balance {
            ViscousBalance::Free => &["circulation", "core_radius", "strain_rate"],
            ViscousBalance::Imposed { .. } => &["circulation", "core_radius"],
        }
    }

    fn parameter_dimensions(&self) -> &'static [Dimension] {
        match self.balance {
            ViscousBalance::Free => &[Dimension::Circulation, Dimension::Length, Dimension::Rate],
            ViscousBalance::Imposed { .. } => &[Dimension::Circulation, Dimension::Length],
        }
    }

    fn extra_bounds(&self) -> &'static [(f64, f64)] {
        match self.balance {
            ViscousBalance::Free => &[(f64::NEG_INFINITY, f64::INFINITY)],
            ViscousBalance::Imposed { .. } => &[],
        }
    }

    fn extra_start(&self) -> &'static [f64] {
        match self.balance {
            ViscousBalance::Free => &[0.0],
            ViscousBalance::Imposed { .. } => &[],
        }
    }

    fn is_linear(&self, k: usize) -> bool {
        k == 0 || (k == 2 && self.balance == ViscousBalance::Free)
    }

    fn peak_radius_ratio(&self, _p: &[f64]) -> f64 {
        GAUSSIAN_PEAK_RADIUS_RATIO
    }

    fn rescaled(&self, length: f64, velocity: f64) -> Self {
        match self.balance {
            ViscousBalance::Free => *self,
            ViscousBalance::Imposed { viscosity } => {
                Burgers::imposed(viscosity / Dimension::Viscosity.scale(length, velocity))
            }
        }
    }

    #[inline]
    fn velocity(&self, dx: f64, dy: f64, p: &[f64]) -> [f64; 2] {
        let (g, _, _) = gaussian_core(dx * dx + dy * dy, p[1] * p[1]);
        let k = p[0] * INV_TWO_PI * g;
        let m = -0.5 * self.strain_rate(p);
        [-k * dy + m * dx, k * dx + m * dy]
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
        let m = -0.5 * self.strain_rate(p);
        let vel = axisymmetric(dx, dy, c * g, c * dg_ds, m, 0.0, du, dv);
        let dk_dgamma = INV_TWO_PI * g;
        let dk_drc = c * dg_da * 2.0 * p[1];
        du[2] = -dk_dgamma * dy;
        dv[2] = dk_dgamma * dx;
        du[3] = -dk_drc * dy;
        dv[3] = dk_drc * dx;
        match self.balance {
            ViscousBalance::Free => {
                // ∂M/∂γ = −1/2.
                du[4] = -0.5 * dx;
                dv[4] = -0.5 * dy;
            }
            ViscousBalance::Imposed { viscosity } => {
                // M = −2ν/rc², ∂M/∂rc = 4ν/rc³.
                let dm_drc = 4.0 * viscosity / (p[1] * p[1] * p[1]);
                du[3] += dm_drc * dx;
                dv[3] += dm_drc * dy;
            }
        }
        vel
    }

    fn gaussian_kernel(&self) -> Option<super::GaussianKernel> {
        Some(match self.balance {
            ViscousBalance::Free => super::GaussianKernel::BurgersFree,
            ViscousBalance::Imposed { viscosity } => {
                super::GaussianKernel::BurgersImposed { viscosity }
            }
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::LambOseen;
    use approx::assert_relative_eq;

    /// Burgers 1948: u_r = −γr/2 and the azimuthal profile equals Lamb–Oseen's.
    #[test]
    fn radial_inflow_and_azimuthal_profile() {
        let (gamma, rc, strain) = (1.5, 0.3, 4.0);
        let b = Burgers::free();
        let (x, y) = (0.2, -0.1);
        let vb = b.velocity(x, y, &[gamma, rc, strain]);
        let vl = LambOseen.velocity(x, y, &[gamma, rc]);
        let r = (x * x + y * y).sqrt();
        // Radial component = projection on (x, y)/r; Lamb–Oseen has none.
        let ur = (vb[0] * x + vb[1] * y) / r;
        assert_relative_eq!(ur, -strain * r / 2.0, max_relative = 1e-13);
        let ut_b = (-vb[0] * y + vb[1] * x) / r;
        let ut_l = (-vl[0] * y + vl[1] * x) / r;
        assert_relative_eq!(ut_b, ut_l, max_relative = 1e-13);
    }

    /// Burgers 1948: the steady solution has rc² = 4ν/γ; with the balance imposed the inflow
    /// at radius r must be −(4ν/rc²) r / 2.
    #[test]
    fn imposed_balance_gives_strain_4nu_over_rc2() {
        let (nu, rc) = (1.0e-6, 2.0e-3);
        let b = Burgers::imposed(nu);
        assert_relative_eq!(
            b.strain_rate(&[1.0, rc]),
            4.0 * nu / (rc * rc),
            max_relative = 1e-15
        );
        let v = b.velocity(rc, 0.0, &[0.0, rc]);
        assert_relative_eq!(v[0], -0.5 * 4.0 * nu / (rc * rc) * rc, max_relative = 1e-14);
        // Rescaling lengths by L and velocities by U scales ν by U·L; the solver-unit strain
        // rate times U/L is the physical one.
        let (l, u) = (1e-2, 0.5);
        let bs = b.rescaled(l, u);
        let gs = bs.strain_rate(&[1.0, rc / l]);
        assert_relative_eq!(gs * u / l, 4.0 * nu / (rc * rc), max_relative = 1e-13);
    }
}
