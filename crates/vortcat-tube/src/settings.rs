//! Settings of a tube survey, each with a documented default, and their validation.

use vortcat_detect::{Criterion, EdgeOrder, GradientScheme, Threshold};
use vortcat_fit::{FitSettings, Model, ModelKind};

use crate::error::TubeError;

/// Default number of z-planes per slab (the memory knob: a slab of `n` planes of an
/// `nx × ny` grid holds about `(n + 2·halo)·nx·ny·13` bytes of velocity and mask).
pub const DEFAULT_SLAB_PLANES: usize = 32;

/// Default minimum voxels of a tube region: a 3 × 3 × 3 block, the 3D analogue of the planar
/// 3 × 3 minimum (our choice, as in `vortcat-detect`).
pub const DEFAULT_MIN_VOXELS: usize = 27;

/// Default minimum core-line length, in grid spacings (our choice: a tube must be clearly
/// longer than it is thick to be one; worms in DNS are tens of η long and a few η thick,
/// Jiménez et al. 1993).
pub const DEFAULT_MIN_LENGTH_SPACINGS: f64 = 6.0;

/// Default station spacing along the core line, in grid spacings (our choice: neighbouring
/// stations share few samples, and a tube of 20 spacings gets 10 stations).
pub const DEFAULT_STATION_SPACINGS: f64 = 2.0;

/// Default cap of the cross-section window radius, in grid spacings. It bounds the slab halo
/// (and so the memory) whatever the data; a tube whose window would be larger is fitted in
/// the capped window and flagged `window_capped`.
pub const DEFAULT_MAX_WINDOW_SPACINGS: f64 = 24.0;

/// Where the Kolmogorov scales come from.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum Kolmogorov {
    /// Not known: the normalised columns stay empty.
    #[default]
    Unknown,
    /// Given: length scale η and time scale τ_η (input units).
    Given {
        /// η, length units.
        eta: f64,
        /// τ_η, time units.
        tau: f64,
    },
    /// Computed from the field's mean dissipation rate ε = 2ν⟨S:S⟩ (needs the viscosity).
    FromField,
}

/// Every choice of a tube survey.
#[derive(Debug, Clone, PartialEq)]
pub struct TubeSettings {
    /// Detection criterion (default λ2, Jeong & Hussain 1995; Q and λci also fit tubes; Γ1, Γ2
    /// are planar and refused).
    pub criterion: Criterion,
    /// Velocity-gradient scheme (default 4th-order central: simulation fields are smooth and
    /// limited by truncation error, not by measurement noise).
    pub scheme: GradientScheme,
    /// Order of one-sided differences at non-periodic edges and masked vectors.
    pub edge: EdgeOrder,
    /// Threshold on the criterion strength: `Default` (1.5 × rms of the positive part over
    /// the whole volume), `RelativeToRms` or `Absolute`. Percentiles need every value at once
    /// and are refused in a streamed survey.
    pub threshold: Threshold,
    /// Minimum voxels of a tube region.
    pub min_voxels: usize,
    /// Periodic axes `[x, y, z]`: a region that crosses a periodic face is one tube.
    pub periodic: [bool; 3],
    /// z-planes per slab (≥ 1); results do not depend on it.
    pub slab_planes: usize,
    /// Minimum core-line length (length units); `None` = [`DEFAULT_MIN_LENGTH_SPACINGS`].
    pub min_length: Option<f64>,
    /// Station spacing along the core line (length units); `None` =
    /// [`DEFAULT_STATION_SPACINGS`].
    pub station_spacing: Option<f64>,
    /// Cross-section window radius as a multiple of the section's equivalent radius (default
    /// the fitting crate's window multiple, 3).
    pub window_multiple: f64,
    /// Cap of the window radius in grid spacings ([`DEFAULT_MAX_WINDOW_SPACINGS`]).
    pub max_window_spacings: f64,
    /// Models fitted at each station and chosen between (default Lamb–Oseen and Burgers).
    pub models: Vec<Model>,
    /// Fit settings (the viscosity is taken from [`TubeSettings::viscosity`]).
    pub fit: FitSettings,
    /// Kinematic viscosity ν (length²/time), for the balance ratio, Γ/ν and ε.
    pub viscosity: Option<f64>,
    /// Kolmogorov scales for the normalised columns.
    pub kolmogorov: Kolmogorov,
}

impl Default for TubeSettings {
    fn default() -> Self {
        let fit = FitSettings::default();
        Self {
            criterion: Criterion::Lambda2,
            scheme: GradientScheme::Central4,
            edge: EdgeOrder::default(),
            threshold: Threshold::Default,
            min_voxels: DEFAULT_MIN_VOXELS,
            periodic: [false; 3],
            slab_planes: DEFAULT_SLAB_PLANES,
            min_length: None,
            station_spacing: None,
            window_multiple: fit.window_multiple,
            max_window_spacings: DEFAULT_MAX_WINDOW_SPACINGS,
            models: vec![
                ModelKind::LambOseen.default_model(),
                ModelKind::Burgers.default_model(),
            ],
            fit,
            viscosity: None,
            kolmogorov: Kolmogorov::Unknown,
        }
    }
}

fn bad(name: &'static str, value: impl std::fmt::Display, reason: &'static str) -> TubeError {
    TubeError::InvalidSetting {
        name,
        value: value.to_string(),
        reason,
    }
}

fn positive(name: &'static str, v: f64) -> Result<(), TubeError> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(bad(name, v, "must be finite and > 0"))
    }
}

impl TubeSettings {
    /// Checks every setting; errors name the setting and its value.
    pub fn validate(&self) -> Result<(), TubeError> {
        if !self.criterion.supports_volume() {
            return Err(bad(
                "criterion",
                self.criterion,
                "is planar; use lambda2, q or swirling-strength",
            ));
        }
        if matches!(self.threshold, Threshold::Percentile(_)) {
            return Err(bad(
                "threshold",
                "percentile",
                "needs every value at once; use default, rms or absolute for volumes",
            ));
        }
        if let Threshold::RelativeToRms(k) | Threshold::Absolute(k) = self.threshold {
            if !k.is_finite() {
                return Err(bad("threshold", k, "must be finite"));
            }
        }
        if self.slab_planes == 0 {
            return Err(bad("slab_planes", 0, "must be at least 1"));
        }
        if self.min_voxels == 0 {
            return Err(bad("min_voxels", 0, "must be at least 1"));
        }
        if let Some(l) = self.min_length {
            if !(l.is_finite() && l >= 0.0) {
                return Err(bad("min_length", l, "must be finite and ≥ 0"));
            }
        }
        if let Some(s) = self.station_spacing {
            positive("station_spacing", s)?;
        }
        positive("window_multiple", self.window_multiple)?;
        positive("max_window_spacings", self.max_window_spacings)?;
        if self.max_window_spacings < 3.0 {
            return Err(bad(
                "max_window_spacings",
                self.max_window_spacings,
                "must be at least 3 (a smaller window cannot constrain a fit)",
            ));
        }
        if self.models.is_empty() {
            return Err(bad("models", "[]", "at least one model"));
        }
        if let Some(nu) = self.viscosity {
            positive("viscosity", nu)?;
        }
        match self.kolmogorov {
            Kolmogorov::Given { eta, tau } => {
                positive("kolmogorov eta", eta)?;
                positive("kolmogorov tau", tau)?;
            }
            Kolmogorov::FromField if self.viscosity.is_none() => {
                return Err(bad(
                    "compute_kolmogorov",
                    true,
                    "needs the viscosity (ε = 2ν⟨S:S⟩)",
                ));
            }
            _ => {}
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_are_valid_and_bad_values_are_named() {
        TubeSettings::default().validate().unwrap();
        let s = TubeSettings {
            slab_planes: 0,
            ..TubeSettings::default()
        };
        assert!(s
            .validate()
            .unwrap_err()
            .to_string()
            .contains("slab_planes"));
        let s = TubeSettings {
            criterion: Criterion::Gamma1,
            ..TubeSettings::default()
        };
        assert!(s.validate().unwrap_err().to_string().contains("criterion"));
        let s = TubeSettings {
            kolmogorov: Kolmogorov::FromField,
            ..TubeSettings::default()
        };
        assert!(s.validate().unwrap_err().to_string().contains("viscosity"));
        let s = TubeSettings {
            threshold: Threshold::Percentile(90.0),
            ..TubeSettings::default()
        };
        assert!(s.validate().is_err());
    }
}
