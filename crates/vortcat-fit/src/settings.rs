//! Fit settings with a validating builder and documented defaults.

use serde::{Deserialize, Serialize};

use crate::averaging::PivAveraging;
use crate::error::FitError;
use crate::loss::Loss;
use crate::select::InformationCriterion;

/// Thresholds of the quality flags (see `docs/flags.md` for the rules and reasons).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct FlagThresholds {
    /// Minimum core radius in grid spacings (default 2: below that the core is represented by
    /// fewer than about 4 × 4 vectors and rc is biased by the grid).
    pub min_core_spacings: f64,
    /// Largest tolerated fraction of invalid vectors in the window (default 0.05).
    pub max_invalid_fraction: f64,
    /// Largest tolerated fraction of window nodes outside the domain (default 0.01).
    pub max_outside_fraction: f64,
    /// Smallest tolerated R² of the velocity in the window (default 0.9).
    pub min_r_squared: f64,
    /// Largest tolerated relative standard error of Γ or rc (default 0.2).
    pub max_relative_uncertainty: f64,
    /// Largest tolerated move of the centre from the detection, in fitted core radii (default 1).
    pub max_centre_shift: f64,
}

impl Default for FlagThresholds {
    fn default() -> Self {
        FlagThresholds {
            min_core_spacings: 2.0,
            max_invalid_fraction: 0.05,
            max_outside_fraction: 0.01,
            min_r_squared: 0.9,
            max_relative_uncertainty: 0.2,
            max_centre_shift: 1.0,
        }
    }
}

/// All settings of a fit. Build with [`FitSettings::builder`] (validating) or take
/// [`FitSettings::default`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct FitSettings {
    /// Window radius as a multiple of the detection radius (dimensionless, > 0; default 3: for
    /// a detection radius about rc a Gaussian vortex has 1 − e⁻⁹ of its circulation inside).
    pub window_multiple: f64,
    /// Residual loss (default [`Loss::Linear`]: exact uncertainties for Gaussian noise).
    pub loss: Loss,
    /// Iteration cap of the solver (default 100; a good start converges in about 5–15).
    pub max_iterations: u64,
    /// Relative cost-reduction tolerance (default 1e-8, as scipy's `least_squares`: with m
    /// residuals it stops the parameters within about √(1e-8·m) ≈ 0.004 standard errors of the
    /// minimum for m = 1400, far below the statistical error).
    pub ftol: f64,
    /// Relative step tolerance on the dimensionless parameters (default 1e-8).
    pub xtol: f64,
    /// Tolerance on the cosine between the residual vector and any Jacobian column (default
    /// 1e-8; the MINPACK gradient test, scale-free).
    pub gtol: f64,
    /// PIV interrogation-window averaging of the model (default none).
    pub piv_averaging: Option<PivAveraging>,
    /// Fit a uniform trace-free background velocity gradient (pure strain and rotation) about
    /// the centre (default false).
    pub background_gradient: bool,
    /// Kinematic viscosity ν (length²/time) if known, for Γ/ν and the Burgers balance check
    /// (default none).
    pub viscosity: Option<f64>,
    /// Information criterion for model choice (default BIC; see `docs/models.md`).
    pub criterion: InformationCriterion,
    /// Minimum number of valid vectors (default 10, and never fewer than parameters + 1).
    pub min_vectors: usize,
    /// Flag thresholds.
    pub thresholds: FlagThresholds,
    /// Compute [`FitResult::condition_number`](crate::FitResult::condition_number) (default
    /// true). It is a diagnostic only — no flag, status or error depends on it — and costs an
    /// eigen-decomposition per fit (about 2–3 % of a survey's time); when false the field is NaN.
    #[serde(default = "yes")]
    pub compute_condition_number: bool,
}

fn yes() -> bool {
    true
}

impl Default for FitSettings {
    fn default() -> Self {
        FitSettings {
            window_multiple: 3.0,
            loss: Loss::Linear,
            max_iterations: 100,
            ftol: 1e-8,
            xtol: 1e-8,
            gtol: 1e-8,
            piv_averaging: None,
            background_gradient: false,
            viscosity: None,
            criterion: InformationCriterion::Bic,
            min_vectors: 10,
            thresholds: FlagThresholds::default(),
            compute_condition_number: true,
        }
    }
}

fn positive(name: &'static str, value: f64) -> Result<(), FitError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(FitError::InvalidSetting {
            name,
            value,
            reason: "must be finite and > 0",
        })
    }
}

fn non_negative(name: &'static str, value: f64) -> Result<(), FitError> {
    if value.is_finite() && value >= 0.0 {
        Ok(())
    } else {
        Err(FitError::InvalidSetting {
            name,
            value,
            reason: "must be finite and ≥ 0",
        })
    }
}

impl FitSettings {
    /// A builder starting from the defaults.
    pub fn builder() -> FitSettingsBuilder {
        FitSettingsBuilder {
            s: FitSettings::default(),
        }
    }

    /// Window radius for a detection radius.
    pub fn window_radius(&self, detection_radius: f64) -> f64 {
        self.window_multiple * detection_radius
    }

    /// Check every setting.
    pub fn validate(&self) -> Result<(), FitError> {
        positive("window_multiple", self.window_multiple)?;
        match self.loss {
            Loss::Linear => {}
            Loss::Huber { scale } | Loss::SoftL1 { scale } => positive("loss scale", scale)?,
        }
        if self.max_iterations == 0 {
            return Err(FitError::InvalidSetting {
                name: "max_iterations",
                value: 0.0,
                reason: "must be ≥ 1",
            });
        }
        positive("ftol", self.ftol)?;
        positive("xtol", self.xtol)?;
        positive("gtol", self.gtol)?;
        if let Some(a) = self.piv_averaging {
            positive("piv window_size", a.window_size)?;
            if !(1..=8).contains(&a.points_per_axis) {
                return Err(FitError::InvalidSetting {
                    name: "piv points_per_axis",
                    value: a.points_per_axis as f64,
                    reason: "must be 1 to 8",
                });
            }
        }
        if let Some(nu) = self.viscosity {
            positive("viscosity", nu)?;
        }
        let t = &self.thresholds;
        non_negative("min_core_spacings", t.min_core_spacings)?;
        non_negative("max_invalid_fraction", t.max_invalid_fraction)?;
        non_negative("max_outside_fraction", t.max_outside_fraction)?;
        if !(t.min_r_squared.is_finite() && t.min_r_squared <= 1.0) {
            return Err(FitError::InvalidSetting {
                name: "min_r_squared",
                value: t.min_r_squared,
                reason: "must be finite and ≤ 1",
            });
        }
        positive("max_relative_uncertainty", t.max_relative_uncertainty)?;
        positive("max_centre_shift", t.max_centre_shift)?;
        Ok(())
    }
}

/// Builder of [`FitSettings`]; [`FitSettingsBuilder::build`] validates.
#[derive(Debug, Clone)]
pub struct FitSettingsBuilder {
    s: FitSettings,
}

impl FitSettingsBuilder {
    /// See [`FitSettings::window_multiple`].
    pub fn window_multiple(mut self, v: f64) -> Self {
        self.s.window_multiple = v;
        self
    }
    /// See [`FitSettings::loss`].
    pub fn loss(mut self, v: Loss) -> Self {
        self.s.loss = v;
        self
    }
    /// See [`FitSettings::max_iterations`].
    pub fn max_iterations(mut self, v: u64) -> Self {
        self.s.max_iterations = v;
        self
    }
    /// Set ftol, xtol and gtol together.
    pub fn tolerances(mut self, ftol: f64, xtol: f64, gtol: f64) -> Self {
        self.s.ftol = ftol;
        self.s.xtol = xtol;
        self.s.gtol = gtol;
        self
    }
    /// See [`FitSettings::piv_averaging`].
    pub fn piv_averaging(mut self, v: Option<PivAveraging>) -> Self {
        self.s.piv_averaging = v;
        self
    }
    /// See [`FitSettings::background_gradient`].
    pub fn background_gradient(mut self, v: bool) -> Self {
        self.s.background_gradient = v;
        self
    }
    /// See [`FitSettings::viscosity`].
    pub fn viscosity(mut self, v: Option<f64>) -> Self {
        self.s.viscosity = v;
        self
    }
    /// See [`FitSettings::criterion`].
    pub fn criterion(mut self, v: InformationCriterion) -> Self {
        self.s.criterion = v;
        self
    }
    /// See [`FitSettings::min_vectors`].
    pub fn min_vectors(mut self, v: usize) -> Self {
        self.s.min_vectors = v;
        self
    }
    /// See [`FitSettings::thresholds`].
    pub fn thresholds(mut self, v: FlagThresholds) -> Self {
        self.s.thresholds = v;
        self
    }
    /// See [`FitSettings::compute_condition_number`].
    pub fn compute_condition_number(mut self, v: bool) -> Self {
        self.s.compute_condition_number = v;
        self
    }
    /// Validate and return the settings.
    pub fn build(self) -> Result<FitSettings, FitError> {
        self.s.validate()?;
        Ok(self.s)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn builder_validates_and_carries_values() {
        assert!(FitSettings::default().validate().is_ok());
        let e = FitSettings::builder()
            .window_multiple(-1.0)
            .build()
            .unwrap_err();
        assert_eq!(
            e,
            FitError::InvalidSetting {
                name: "window_multiple",
                value: -1.0,
                reason: "must be finite and > 0"
            }
        );
        let e = FitSettings::builder()
            .loss(Loss::Huber { scale: 0.0 })
            .build()
            .unwrap_err();
        assert!(matches!(
            e,
            FitError::InvalidSetting {
                name: "loss scale",
                ..
            }
        ));
        let e = FitSettings::builder()
            .piv_averaging(Some(PivAveraging {
                window_size: 1.0,
                points_per_axis: 9,
            }))
            .build()
            .unwrap_err();
        assert!(matches!(
            e,
            FitError::InvalidSetting {
                name: "piv points_per_axis",
                ..
            }
        ));
        let s = FitSettings::builder()
            .window_multiple(2.0)
            .max_iterations(7)
            .build()
            .unwrap();
        assert_eq!(s.max_iterations, 7);
        assert!((s.window_radius(1.5) - 3.0).abs() < 1e-15);
    }
}
