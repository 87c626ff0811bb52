//! Vortex models: one type per model, one file per model, all implementing [`VortexModel`].
//!
//! A model gives the velocity a vortex induces at an offset `(dx, dy)` from its centre, in the
//! frame moving with the vortex, for the model's own parameters (circulation, core radius and
//! model-specific ones), together with the analytic derivatives of both components with respect
//! to `dx`, `dy` and each own parameter. The shared parameters (centre, convection velocity and
//! the optional uniform background gradient) are handled once by the solver.
//!
//! Conventions: positive circulation is counter-clockwise seen from +z (the rotation sense of
//! `vortcat-field`); own parameter 0 is always the circulation Γ, own parameter 1 the core radius
//! rc. [`lamb_oseen`] is the template the other model files copy.

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use crate::error::FitError;

pub mod burgers;
pub mod lamb_oseen;
pub mod rankine;
pub mod vatistas;

pub use burgers::{Burgers, ViscousBalance};
pub use lamb_oseen::{LambOseen, GAUSSIAN_PEAK_RADIUS_RATIO, GAUSSIAN_PEAK_VELOCITY_FACTOR};
pub use rankine::Rankine;
pub use vatistas::Vatistas;

/// Largest number of own parameters of any model.
pub const MAX_MODEL_PARAMS: usize = 3;

/// Physical dimension of a parameter, used to scale it into the solver's dimensionless units.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Dimension {
    /// Length, e.g. m.
    Length,
    /// Velocity, e.g. m/s.
    Velocity,
    /// Circulation, length²/time, e.g. m²/s.
    Circulation,
    /// Rate, 1/time, e.g. 1/s.
    Rate,
    /// Kinematic viscosity, length²/time.
    Viscosity,
    /// Pure number.
    Dimensionless,
}

impl Dimension {
    /// Factor converting the dimensionless solver value to physical units, for a length scale
    /// `length` and velocity scale `velocity`.
    pub fn scale(self, length: f64, velocity: f64) -> f64 {
        match self {
            Dimension::Length => length,
            Dimension::Velocity => velocity,
            Dimension::Circulation | Dimension::Viscosity => velocity * length,
            Dimension::Rate => velocity / length,
            Dimension::Dimensionless => 1.0,
        }
    }
}

/// One vortex model: velocity at a point for given parameters, with analytic Jacobian.
pub trait VortexModel: fmt::Debug + Clone + Send + Sync {
    /// Which model this is.
    fn kind(&self) -> ModelKind;

    /// The model as a run-time [`Model`] value (for results and configuration files).
    fn to_model(&self) -> Model;

    /// Names of the own parameters, in order; index 0 is `circulation`, 1 is `core_radius`.
    fn parameter_names(&self) -> &'static [&'static str];

    /// Physical dimension of each own parameter, in the order of [`Self::parameter_names`].
    fn parameter_dimensions(&self) -> &'static [Dimension];

    /// Number of own parameters.
    fn n_params(&self) -> usize {
        self.parameter_names().len()
    }

    /// Bounds `(lower, upper)` of own parameters with index ≥ 2, in solver units (those
    /// parameters are dimensionless or rates scaled by the window; see the model's docs).
    fn extra_bounds(&self) -> &'static [(f64, f64)] {
        &[]
    }

    /// Starting values of own parameters with index ≥ 2.
    fn extra_start(&self) -> &'static [f64] {
        &[]
    }

    /// Whether own parameter `k` enters the velocity linearly (used to solve for it exactly when
    /// building the start vector). The circulation always does.
    fn is_linear(&self, k: usize) -> bool {
        k == 0
    }

    /// Ratio of the radius of peak azimuthal velocity to the core radius `rc` (for the starting
    /// value of rc from the measured peak), for parameters `p`.
    fn peak_radius_ratio(&self, p: &[f64]) -> f64;

    /// Radius and value of the peak azimuthal velocity for parameters `p`.
    fn peak_azimuthal_velocity(&self, p: &[f64]) -> (f64, f64) {
        let r = self.peak_radius_ratio(p) * p[1];
        (r, self.velocity(r, 0.0, p)[1])
    }

    /// The same model with its internal constants (e.g. an imposed viscosity) expressed in units
    /// where lengths are divided by `length` and velocities by `velocity`.
    fn rescaled(&self, length: f64, velocity: f64) -> Self;

    /// Velocity `[u, v]` at offset `(dx, dy)` from the centre for own parameters `p`.
    fn velocity(&self, dx: f64, dy: f64, p: &[f64]) -> [f64; 2];

    /// Velocity `[u, v]` at offset `(dx, dy)` and its analytic derivatives: `du[0] = ∂u/∂dx`,
    /// `du[1] = ∂u/∂dy`, `du[2 + k] = ∂u/∂p[k]`, and the same for `dv`. Both slices have length
    /// at least `2 + n_params()`. Must not allocate.
    fn velocity_jacobian(
        &self,
        dx: f64,
        dy: f64,
        p: &[f64],
        du: &mut [f64],
        dv: &mut [f64],
    ) -> [f64; 2];

    /// Whether the solver may evaluate this model with its specialised Gaussian-core block
    /// kernel instead of calling [`Self::velocity_jacobian`] point by point (the same
    /// formulas, evaluated for a block of vectors at a time so that they vectorise). An
    /// implementation detail of the crate's Lamb–Oseen and Burgers models; the default `None`
    /// keeps the point-by-point evaluation, which is always correct.
    #[doc(hidden)]
    fn gaussian_kernel(&self) -> Option<GaussianKernel> {
        None
    }
}

/// Which Gaussian-core model the solver's block kernel evaluates (see
/// [`VortexModel::gaussian_kernel`]); parameters in the model's own order.
#[doc(hidden)]
#[derive(Debug, Clone, Copy, PartialEq)]
#[non_exhaustive]
pub enum GaussianKernel {
    /// Lamb–Oseen: own parameters Γ, rc.
    LambOseen,
    /// Burgers with free strain rate: Γ, rc, γ.
    BurgersFree,
    /// Burgers with γ = 4ν/rc² imposed: Γ, rc; `viscosity` ν in the units of the model value.
    BurgersImposed {
        /// Kinematic viscosity ν.
        viscosity: f64,
    },
}

/// Velocity of an axisymmetric vortex written as `u = −K·dy + M·dx`, `v = K·dx + M·dy`, with
/// `K = u_θ/r` and `M = u_r/r` functions of `s = r²`; fills the derivatives with respect to
/// `dx`, `dy` into `du[0..2]`, `dv[0..2]`.
#[inline]
#[allow(clippy::too_many_arguments)]
pub(crate) fn axisymmetric(
    dx: f64,
    dy: f64,
    k: f64,
    dk_ds: f64,
    m: f64,
    dm_ds: f64,
    du: &mut [f64],
    dv: &mut [f64],
) -> [f64; 2] {
    let (xx, yy, xy) = (2.0 * dx * dx, 2.0 * dy * dy, 2.0 * dx * dy);
    du[0] = -dk_ds * xy + m + dm_ds * xx;
    du[1] = -k - dk_ds * yy + dm_ds * xy;
    dv[0] = k + dk_ds * xx + dm_ds * xy;
    dv[1] = dk_ds * xy + m + dm_ds * yy;
    [-k * dy + m * dx, k * dx + m * dy]
}

/// The models by name.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum ModelKind {
    /// Lamb–Oseen (Gaussian) vortex.
    LambOseen,
    /// Burgers vortex (Gaussian core with axial stretching).
    Burgers,
    /// Rankine vortex (solid-body core, potential outside).
    Rankine,
    /// Vatistas, Kozel & Mih (1991) family.
    Vatistas,
}

impl ModelKind {
    /// All kinds.
    pub const ALL: [ModelKind; 4] = [
        ModelKind::LambOseen,
        ModelKind::Burgers,
        ModelKind::Rankine,
        ModelKind::Vatistas,
    ];

    /// Stable name: `lamb-oseen`, `burgers`, `rankine`, `vatistas`.
    pub fn name(self) -> &'static str {
        match self {
            ModelKind::LambOseen => "lamb-oseen",
            ModelKind::Burgers => "burgers",
            ModelKind::Rankine => "rankine",
            ModelKind::Vatistas => "vatistas",
        }
    }

    /// The model with default options: Burgers with free strain, Vatistas with fitted exponent.
    pub fn default_model(self) -> Model {
        match self {
            ModelKind::LambOseen => Model::LambOseen(LambOseen),
            ModelKind::Burgers => Model::Burgers(Burgers::free()),
            ModelKind::Rankine => Model::Rankine(Rankine),
            ModelKind::Vatistas => Model::Vatistas(Vatistas::fitted()),
        }
    }
}

impl fmt::Display for ModelKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for ModelKind {
    type Err = FitError;
    fn from_str(s: &str) -> Result<Self, FitError> {
        match s.trim().to_ascii_lowercase().replace('_', "-").as_str() {
            "lamb-oseen" | "lamboseen" | "oseen" => Ok(ModelKind::LambOseen),
            "burgers" => Ok(ModelKind::Burgers),
            "rankine" => Ok(ModelKind::Rankine),
            "vatistas" => Ok(ModelKind::Vatistas),
            _ => Err(FitError::UnknownModel(s.to_string())),
        }
    }
}

/// A configured model of any kind, for run-time choice (e.g. from a command line).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case", tag = "model")]
pub enum Model {
    /// Lamb–Oseen.
    LambOseen(LambOseen),
    /// Burgers.
    Burgers(Burgers),
    /// Rankine.
    Rankine(Rankine),
    /// Vatistas.
    Vatistas(Vatistas),
}

impl Model {
    /// Kind of the model.
    pub fn kind(&self) -> ModelKind {
        match self {
            Model::LambOseen(m) => m.kind(),
            Model::Burgers(m) => m.kind(),
            Model::Rankine(m) => m.kind(),
            Model::Vatistas(m) => m.kind(),
        }
    }
}

impl From<ModelKind> for Model {
    fn from(k: ModelKind) -> Self {
        k.default_model()
    }
}
