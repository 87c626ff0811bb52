//! The TOML run configuration: one section per pipeline stage. What the user wrote (file and
//! flags) is parsed here, then resolved by [`crate::plan`] into the library settings; every
//! default lives in the library that owns it and is copied here only through `Default`.

use std::path::Path;

use anyhow::Context;
use serde::{Deserialize, Serialize};
use vortcat_field::InputSpec;

/// A whole config file.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Config {
    /// How to read the input files.
    pub input: InputSpec,
    /// Properties of the fluid.
    pub fluid: FluidConfig,
    /// How vortex cores are found.
    pub detection: DetectionConfig,
    /// How models are fitted.
    pub fit: FitConfig,
    /// When a fit is flagged.
    pub flags: FlagConfig,
    /// How vortex tubes are found in volumes (`--geometry volume`).
    pub volume: VolumeConfig,
}

/// `[fluid]`.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct FluidConfig {
    /// Kinematic viscosity ν in (length unit)²/s, e.g. 1.0e-6 for water at 20 °C in m²/s.
    /// Without it, Γ/ν, 4ν/rc² and the viscosity ratio are left empty.
    pub viscosity: Option<f64>,
}

/// `[detection]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct DetectionConfig {
    /// `vorticity`, `q`, `lambda2`, `swirling-strength`, `delta`, `gamma1`, `gamma2`.
    pub criterion: String,
    /// Velocity-gradient scheme: `central2`, `central4`, `least-squares`.
    pub gradient: String,
    /// Threshold rule: `default` (the criterion's own), `absolute`, `rms` (a multiple of the
    /// field's rms), `percentile`.
    pub threshold: String,
    /// Value of the threshold rule (ignored for `default`).
    pub threshold_value: Option<f64>,
    /// Smallest region, in grid cells.
    pub min_cells: usize,
    /// Split regions that hold two separated peaks.
    pub split: bool,
    /// Neighbourhood radius of Γ1/Γ2, in grid spacings.
    pub gamma_radius: usize,
}

impl Default for DetectionConfig {
    fn default() -> Self {
        let d = vortcat_detect::DetectionSettings::default();
        Self {
            criterion: d.criterion().name().to_string(),
            gradient: d.scheme().name().to_string(),
            threshold: "default".into(),
            threshold_value: None,
            min_cells: d.min_cells(),
            split: d.split().is_some(),
            gamma_radius: d.gamma_radius(),
        }
    }
}

/// `[fit]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct FitConfig {
    /// Models to fit and choose between: `lamb-oseen`, `burgers`, `rankine`, `vatistas`.
    pub models: Vec<String>,
    /// Fitting-window radius as a multiple of the detected region's equivalent radius.
    pub window_multiple: f64,
    /// `linear` (plain least squares), `huber` or `soft-l1`.
    pub loss: String,
    /// Residual scale of a robust loss, in velocity units.
    pub loss_scale: Option<f64>,
    /// Iteration cap of the solver.
    pub max_iterations: u64,
    /// Relative tolerance on the cost, the step and the gradient.
    pub tolerance: f64,
    /// Fit a uniform background velocity gradient too.
    pub background_gradient: bool,
    /// `bic` or `aic`.
    pub information_criterion: String,
    /// Fewest valid vectors a fit needs.
    pub min_vectors: usize,
    /// PIV interrogation-window size in length units; when given, models are averaged over it.
    pub piv_window: Option<f64>,
    /// With a viscosity: `free` (γ fitted, balance only checked) or `imposed` (rc² = 4ν/γ).
    pub burgers_balance: String,
}

impl Default for FitConfig {
    fn default() -> Self {
        let d = vortcat_fit::FitSettings::default();
        Self {
            models: vec!["lamb-oseen".into(), "burgers".into()],
            window_multiple: d.window_multiple,
            loss: "linear".into(),
            loss_scale: None,
            max_iterations: d.max_iterations,
            tolerance: d.ftol,
            background_gradient: d.background_gradient,
            information_criterion: "bic".into(),
            min_vectors: d.min_vectors,
            piv_window: None,
            burgers_balance: "free".into(),
        }
    }
}

/// `[flags]`: thresholds of the quality flags (see docs/flags.md).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct FlagConfig {
    /// Core under-resolved below this many grid spacings.
    pub min_core_spacings: f64,
    /// Window clipped when more than this fraction of its nodes are invalid.
    pub max_invalid_fraction: f64,
    /// Window clipped when more than this fraction of its nodes lie outside the domain.
    pub max_outside_fraction: f64,
    /// Low R² below this.
    pub min_r_squared: f64,
    /// Large uncertainty above this relative standard error of Γ or rc.
    pub max_relative_uncertainty: f64,
    /// Centre moved by more than this many core radii from the detection.
    pub max_centre_shift: f64,
}

impl Default for FlagConfig {
    fn default() -> Self {
        let t = vortcat_fit::FitSettings::default().thresholds;
        Self {
            min_core_spacings: t.min_core_spacings,
            max_invalid_fraction: t.max_invalid_fraction,
            max_outside_fraction: t.max_outside_fraction,
            min_r_squared: t.min_r_squared,
            max_relative_uncertainty: t.max_relative_uncertainty,
            max_centre_shift: t.max_centre_shift,
        }
    }
}

/// `[volume]`: the tube survey of volume snapshots (`--geometry volume`). Fits use `[fit]`
/// and the viscosity `[fluid]`; the defaults are those of `vortcat_tube::TubeSettings`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct VolumeConfig {
    /// `lambda2`, `q` or `swirling-strength` (planar criteria are refused).
    pub criterion: String,
    /// Velocity-gradient scheme: `central2`, `central4`, `least-squares`.
    pub gradient: String,
    /// Threshold rule: `default` (the criterion's own), `absolute` or `rms`.
    pub threshold: String,
    /// Value of the threshold rule (ignored for `default`).
    pub threshold_value: Option<f64>,
    /// Smallest tube region, in voxels.
    pub min_voxels: usize,
    /// z-planes read at a time (the memory knob); results do not depend on it.
    pub slab_planes: usize,
    /// Periodic axes, any of `x`, `y`, `z`.
    pub periodic: Vec<String>,
    /// Shortest core line kept, in length units [default: 6 grid spacings].
    pub min_length: Option<f64>,
    /// Distance between stations along the core line, in length units [default: 2 grid
    /// spacings].
    pub station_spacing: Option<f64>,
    /// Kolmogorov length scale η (length units), with `kolmogorov_tau`.
    pub kolmogorov_eta: Option<f64>,
    /// Kolmogorov time scale τ_η (s), with `kolmogorov_eta`.
    pub kolmogorov_tau: Option<f64>,
    /// Compute η and τ_η from the field's dissipation ε = 2ν⟨S:S⟩ (needs fluid.viscosity).
    pub compute_kolmogorov: bool,
}

impl Default for VolumeConfig {
    fn default() -> Self {
        let d = vortcat_tube::TubeSettings::default();
        Self {
            criterion: d.criterion.name().to_string(),
            gradient: d.scheme.name().to_string(),
            threshold: "default".into(),
            threshold_value: None,
            min_voxels: d.min_voxels,
            slab_planes: d.slab_planes,
            periodic: ["x", "y", "z"]
                .iter()
                .zip(d.periodic)
                .filter(|(_, p)| *p)
                .map(|(a, _)| a.to_string())
                .collect(),
            min_length: d.min_length,
            station_spacing: d.station_spacing,
            kolmogorov_eta: None,
            kolmogorov_tau: None,
            compute_kolmogorov: false,
        }
    }
}

impl Config {
    /// Reads and parses a config file.
    pub fn load(path: &Path) -> anyhow::Result<Self> {
        let text = std::fs::read_to_string(path)
            .with_context(|| format!("{}: cannot read config", path.display()))?;
        toml::from_str(&text).map_err(|e| {
            anyhow::anyhow!(
                "{}: invalid config: {}",
                path.display(),
                e.to_string().replace('\n', " ")
            )
        })
    }

    /// The config as TOML with every value written out.
    pub fn to_toml(&self) -> anyhow::Result<String> {
        Ok(toml::to_string(self)?)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn printed_config_parses_back_to_itself() {
        let c = Config::default();
        let text = c.to_toml().unwrap();
        let back: Config = toml::from_str(&text).unwrap();
        assert_eq!(back, c);
        assert!(text.contains("[detection]") && text.contains("[fit]") && text.contains("[flags]"));
    }

    #[test]
    fn unknown_keys_are_refused() {
        assert!(toml::from_str::<Config>("[fit]\nmodel = \"burgers\"\n").is_err());
        assert!(toml::from_str::<Config>("[output]\n").is_err());
    }
}
