//! Per-fit output.

use serde::{Deserialize, Serialize};

use crate::flags::Flag;
use crate::model::{Model, ModelKind};
use crate::select::InformationCriterion;

/// How the solver ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FitStatus {
    /// A convergence test (cost reduction, step size or gradient) was met.
    Converged,
    /// The iteration cap was reached first.
    MaxIterations,
    /// No step reduced the cost even with very strong damping.
    Stalled,
    /// The data do not determine the model: no velocity variation in the window, or a singular
    /// normal matrix at the optimum.
    Degenerate,
}

/// Parameter values (or their standard errors) in physical units.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Parameters {
    /// Centre `[x0, y0]`, length units.
    #[serde(deserialize_with = "crate::serde_nan::arr2")]
    pub centre: [f64; 2],
    /// Convection velocity `[uc, vc]`, velocity units.
    #[serde(deserialize_with = "crate::serde_nan::arr2")]
    pub convection: [f64; 2],
    /// Own model parameters in the order of [`FitResult::parameter_names`] after the first four
    /// (e.g. Γ, rc, γ), physical units.
    #[serde(deserialize_with = "crate::serde_nan::vec")]
    pub model: Vec<f64>,
    /// Background gradient `[e1, e2, ω]` (1/time) if fitted: `u += e1·dx + (e2 − ω/2)·dy`,
    /// `v += (e2 + ω/2)·dx − e1·dy` with `(dx, dy)` measured from the centre.
    #[serde(deserialize_with = "crate::serde_nan::opt_arr3")]
    pub background: Option<[f64; 3]>,
}

impl Parameters {
    /// All values in the order of the full parameter vector.
    pub fn to_vec(&self) -> Vec<f64> {
        let mut v = vec![
            self.centre[0],
            self.centre[1],
            self.convection[0],
            self.convection[1],
        ];
        v.extend_from_slice(&self.model);
        if let Some(b) = self.background {
            v.extend_from_slice(&b);
        }
        v
    }
}

/// A named value with its standard error.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Estimate {
    /// Parameter name.
    pub name: String,
    /// Value, physical units.
    #[serde(deserialize_with = "crate::serde_nan::f64")]
    pub value: f64,
    /// Standard error, same units (NaN if the covariance is singular).
    #[serde(deserialize_with = "crate::serde_nan::f64")]
    pub standard_error: f64,
}

/// Quantities derived from the fitted parameters.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct Derived {
    /// Radius of the peak azimuthal velocity (1.12091 rc for the Gaussian-core models).
    #[serde(deserialize_with = "crate::serde_nan::f64")]
    pub peak_radius: f64,
    /// Peak azimuthal velocity (0.63817 Γ/(2π rc) for the Gaussian-core models), signed like Γ.
    #[serde(deserialize_with = "crate::serde_nan::f64")]
    pub peak_azimuthal_velocity: f64,
    /// Standard error of the peak velocity (delta method with the full covariance).
    #[serde(deserialize_with = "crate::serde_nan::f64")]
    pub peak_azimuthal_velocity_error: f64,
    /// Circulation Reynolds number Γ/ν, if ν is known.
    pub circulation_reynolds: Option<f64>,
    /// Burgers: strain rate γ from the inflow, 1/time.
    pub strain_rate_inflow: Option<f64>,
    /// Burgers: standard error of γ.
    pub strain_rate_inflow_error: Option<f64>,
    /// Burgers with known ν: strain rate implied by the core radius, 4ν/rc².
    pub strain_rate_from_radius: Option<f64>,
    /// Burgers with known ν: standard error of 4ν/rc².
    pub strain_rate_from_radius_error: Option<f64>,
    /// Burgers: effective viscosity γ·rc²/4 (length²/time).
    pub effective_viscosity: Option<f64>,
    /// Burgers: standard error of the effective viscosity.
    pub effective_viscosity_error: Option<f64>,
    /// Burgers with known ν: γ·rc²/(4ν), the ratio of the two strain rates (1 for a steady
    /// Burgers vortex).
    pub viscosity_ratio: Option<f64>,
}

/// Everything a fit returns.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FitResult {
    /// Model kind.
    pub model: ModelKind,
    /// Model configuration.
    pub model_config: Model,
    /// Names of the full parameter vector: `x0, y0, uc, vc`, the model's own, `bg_e1, bg_e2,
    /// bg_vorticity` if fitted.
    pub parameter_names: Vec<String>,
    /// Fitted values.
    pub parameters: Parameters,
    /// Standard errors from `σ² (JᵀJ)⁻¹` (σ² = RSS/(m − p)).
    pub standard_errors: Parameters,
    /// Covariance of the full parameter vector, physical units, row-major `p × p`.
    #[serde(deserialize_with = "crate::serde_nan::mat")]
    pub covariance: Vec<Vec<f64>>,
    /// Start vector used by the solver.
    pub start: Parameters,
    /// Solver status.
    pub status: FitStatus,
    /// Quality flags.
    pub flags: Vec<Flag>,
    /// Solver iterations (accepted and rejected trial steps).
    pub iterations: u64,
    /// Passes over the data made by the solver (residuals and normal equations in one pass).
    /// Not counted: the pass of the exact linear start in [`crate::fit`]; for Lamb–Oseen and
    /// free-γ Burgers with the plain loss the solver's first normal equations follow exactly
    /// from that pass, so it makes one pass fewer than it has iterations.
    pub evaluations: u64,
    /// Valid vectors used.
    pub n_vectors: usize,
    /// Residuals (2 per vector).
    pub n_residuals: usize,
    /// Fitted parameters.
    pub n_parameters: usize,
    /// Residual sum of squares Σ (u_model − u)² + (v_model − v)², velocity² units.
    #[serde(deserialize_with = "crate::serde_nan::f64")]
    pub rss: f64,
    /// Total sum of squares of the data about their mean velocity.
    #[serde(deserialize_with = "crate::serde_nan::f64")]
    pub tss: f64,
    /// RMS residual per component, √(RSS / m).
    #[serde(deserialize_with = "crate::serde_nan::f64")]
    pub rms_residual: f64,
    /// Noise estimate σ = √(Σ w r² / (m − p)).
    #[serde(deserialize_with = "crate::serde_nan::f64")]
    pub noise_sigma: f64,
    /// R² = 1 − RSS/TSS of both velocity components (NaN if TSS = 0).
    #[serde(deserialize_with = "crate::serde_nan::f64")]
    pub r_squared: f64,
    /// Condition number of `JᵀJ` after scaling to unit diagonal (scale-free; ∞ if singular;
    /// NaN if not computed, see [`FitSettings::compute_condition_number`](crate::FitSettings)).
    #[serde(deserialize_with = "crate::serde_nan::f64")]
    pub condition_number: f64,
    /// Derived quantities.
    pub derived: Derived,
}

impl FitResult {
    /// Named estimates of every parameter.
    pub fn estimates(&self) -> Vec<Estimate> {
        let v = self.parameters.to_vec();
        let e = self.standard_errors.to_vec();
        self.parameter_names
            .iter()
            .zip(v.iter().zip(&e))
            .map(|(n, (v, e))| Estimate {
                name: n.clone(),
                value: *v,
                standard_error: *e,
            })
            .collect()
    }

    /// The estimate of one parameter by name.
    pub fn estimate(&self, name: &str) -> Option<Estimate> {
        self.estimates().into_iter().find(|e| e.name == name)
    }

    /// Circulation Γ.
    pub fn circulation(&self) -> f64 {
        self.parameters.model[0]
    }

    /// Core radius rc.
    pub fn core_radius(&self) -> f64 {
        self.parameters.model[1]
    }

    /// Whether the fit raised `flag`.
    pub fn has_flag(&self, flag: Flag) -> bool {
        self.flags.contains(&flag)
    }

    /// RSS with a floor of 1e-24·TSS so that information criteria stay finite for exact data.
    pub fn floored_rss(&self) -> f64 {
        self.rss.max(1e-24 * self.tss).max(f64::MIN_POSITIVE)
    }

    /// Value of an information criterion, with `k = n_parameters + 1` (noise variance).
    pub fn information_criterion(&self, c: InformationCriterion) -> f64 {
        c.score(self.floored_rss(), self.n_residuals, self.n_parameters + 1)
    }
}
