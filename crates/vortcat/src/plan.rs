//! The resolved plan: the config and the flags, validated once and turned into the settings
//! of each library. Everything the survey does is decided here.

use anyhow::{anyhow, bail};
use vortcat_detect::{Criterion, DetectionSettings, GradientScheme, Threshold};
use vortcat_field::InputSpec;
use vortcat_fit::{
    Burgers, FitSettings, FlagThresholds, InformationCriterion, Loss, Model, ModelKind,
    PivAveraging,
};

use vortcat_tube::{Kolmogorov, TubeSettings};

use crate::config::Config;

/// Everything a survey needs, validated.
#[derive(Debug, Clone)]
pub struct Plan {
    /// How files are read.
    pub input: InputSpec,
    /// Detection settings.
    pub detection: DetectionSettings,
    /// Fit settings.
    pub fit: FitSettings,
    /// Models to fit and choose between.
    pub models: Vec<Model>,
    /// The tube survey of volume snapshots (`[volume]`, `[fit]`, `[fluid]`).
    pub tubes: TubeSettings,
}

fn threshold(config: &Config) -> anyhow::Result<Threshold> {
    let d = &config.detection;
    let value = || {
        d.threshold_value.ok_or_else(|| {
            anyhow!(
                "detection.threshold = \"{}\" needs detection.threshold_value",
                d.threshold
            )
        })
    };
    Ok(match d.threshold.as_str() {
        "default" => Threshold::Default,
        "absolute" => Threshold::Absolute(value()?),
        "rms" => Threshold::RelativeToRms(value()?),
        "percentile" => Threshold::Percentile(value()?),
        other => bail!(
            "detection.threshold: unknown rule '{other}' (default, absolute, rms, percentile)"
        ),
    })
}

/// Resolves `[volume]` (with the fit settings and models already resolved) into the tube
/// survey's settings. Errors name the `volume.` key.
fn tube_settings(
    config: &Config,
    fit: &FitSettings,
    models: &[Model],
) -> anyhow::Result<TubeSettings> {
    let v = &config.volume;
    let criterion: Criterion = v
        .criterion
        .parse()
        .map_err(|e| anyhow!("volume.criterion: {e}"))?;
    if !criterion.supports_volume() {
        bail!(
            "volume.criterion: '{}' is planar; use lambda2, q or swirling-strength",
            v.criterion
        );
    }
    let scheme: GradientScheme = v
        .gradient
        .parse()
        .map_err(|e| anyhow!("volume.gradient: {e}"))?;
    let value = || {
        let t = v.threshold_value.ok_or_else(|| {
            anyhow!(
                "volume.threshold = \"{}\" needs volume.threshold_value",
                v.threshold
            )
        })?;
        if !t.is_finite() {
            bail!("volume.threshold_value must be finite, got {t}");
        }
        Ok(t)
    };
    let threshold = match v.threshold.as_str() {
        "default" => Threshold::Default,
        "absolute" => Threshold::Absolute(value()?),
        "rms" => Threshold::RelativeToRms(value()?),
        other => bail!(
            "volume.threshold: unknown rule '{other}' (default, absolute, rms; percentiles need the whole volume at once)"
        ),
    };
    if v.min_voxels == 0 {
        bail!("volume.min_voxels must be at least 1");
    }
    if v.slab_planes == 0 {
        bail!("volume.slab_planes must be at least 1");
    }
    let mut periodic = [false; 3];
    for name in &v.periodic {
        let k = match name.as_str() {
            "x" => 0,
            "y" => 1,
            "z" => 2,
            other => bail!("volume.periodic: unknown axis '{other}' (x, y, z)"),
        };
        periodic[k] = true;
    }
    if let Some(l) = v.min_length {
        if !(l.is_finite() && l >= 0.0) {
            bail!("volume.min_length must be finite and at least 0, got {l}");
        }
    }
    if let Some(s) = v.station_spacing {
        if !(s.is_finite() && s > 0.0) {
            bail!("volume.station_spacing must be positive, got {s}");
        }
    }
    let kolmogorov = match (v.kolmogorov_eta, v.kolmogorov_tau, v.compute_kolmogorov) {
        (None, None, false) => Kolmogorov::Unknown,
        (None, None, true) => {
            if config.fluid.viscosity.is_none() {
                bail!("volume.compute_kolmogorov needs fluid.viscosity (ε = 2ν⟨S:S⟩)");
            }
            Kolmogorov::FromField
        }
        (Some(_), Some(_), true) => {
            bail!("volume.compute_kolmogorov: give either kolmogorov_eta and kolmogorov_tau or compute_kolmogorov, not both")
        }
        (Some(eta), Some(tau), false) => {
            for (key, x) in [("kolmogorov_eta", eta), ("kolmogorov_tau", tau)] {
                if !(x.is_finite() && x > 0.0) {
                    bail!("volume.{key} must be positive, got {x}");
                }
            }
            Kolmogorov::Given { eta, tau }
        }
        (Some(_), None, _) => bail!("volume.kolmogorov_eta needs volume.kolmogorov_tau"),
        (None, Some(_), _) => bail!("volume.kolmogorov_tau needs volume.kolmogorov_eta"),
    };
    let settings = TubeSettings {
        criterion,
        scheme,
        threshold,
        min_voxels: v.min_voxels,
        periodic,
        slab_planes: v.slab_planes,
        min_length: v.min_length,
        station_spacing: v.station_spacing,
        window_multiple: fit.window_multiple,
        models: models.to_vec(),
        fit: fit.clone(),
        viscosity: config.fluid.viscosity,
        kolmogorov,
        ..TubeSettings::default()
    };
    settings.validate().map_err(|e| anyhow!("[volume]: {e}"))?;
    Ok(settings)
}

impl Plan {
    /// Resolves a config. Errors name the offending key and value.
    pub fn resolve(config: &Config) -> anyhow::Result<Self> {
        config
            .input
            .validate()
            .map_err(|e| anyhow!("[input]: {e}"))?;
        let viscosity = config.fluid.viscosity;
        if let Some(nu) = viscosity {
            if !(nu.is_finite() && nu > 0.0) {
                bail!("fluid.viscosity must be positive, got {nu}");
            }
        }
        let d = &config.detection;
        let criterion: Criterion = d
            .criterion
            .parse()
            .map_err(|e| anyhow!("detection.criterion: {e}"))?;
        let scheme: GradientScheme = d
            .gradient
            .parse()
            .map_err(|e| anyhow!("detection.gradient: {e}"))?;
        let mut builder = DetectionSettings::builder()
            .criterion(criterion)
            .scheme(scheme)
            .threshold(threshold(config)?)
            .min_cells(d.min_cells)
            .gamma_radius(d.gamma_radius);
        if !d.split {
            builder = builder.split(None);
        }
        let detection = builder.build().map_err(|e| anyhow!("[detection]: {e}"))?;

        let f = &config.fit;
        let loss = match f.loss.as_str() {
            "linear" => Loss::Linear,
            "huber" | "soft-l1" => {
                let scale = f.loss_scale.ok_or_else(|| {
                    anyhow!(
                        "fit.loss = \"{}\" needs fit.loss_scale (velocity units)",
                        f.loss
                    )
                })?;
                if f.loss == "huber" {
                    Loss::Huber { scale }
                } else {
                    Loss::SoftL1 { scale }
                }
            }
            other => bail!("fit.loss: unknown loss '{other}' (linear, huber, soft-l1)"),
        };
        let criterion = match f.information_criterion.as_str() {
            "bic" => InformationCriterion::Bic,
            "aic" => InformationCriterion::Aic,
            other => bail!("fit.information_criterion: unknown '{other}' (bic, aic)"),
        };
        let flags = &config.flags;
        let thresholds = FlagThresholds {
            min_core_spacings: flags.min_core_spacings,
            max_invalid_fraction: flags.max_invalid_fraction,
            max_outside_fraction: flags.max_outside_fraction,
            min_r_squared: flags.min_r_squared,
            max_relative_uncertainty: flags.max_relative_uncertainty,
            max_centre_shift: flags.max_centre_shift,
        };
        let piv = f.piv_window.map(PivAveraging::new);
        let fit = FitSettings::builder()
            .window_multiple(f.window_multiple)
            .loss(loss)
            .max_iterations(f.max_iterations)
            .tolerances(f.tolerance, f.tolerance, f.tolerance)
            .piv_averaging(piv)
            .background_gradient(f.background_gradient)
            .viscosity(viscosity)
            .criterion(criterion)
            .min_vectors(f.min_vectors)
            .thresholds(thresholds)
            // Nothing vortcat writes uses it (no catalog column or flag).
            .compute_condition_number(false)
            .build()
            .map_err(|e| anyhow!("[fit]: {e}"))?;
        if f.models.is_empty() {
            bail!(
                "fit.models is empty: name at least one of lamb-oseen, burgers, rankine, vatistas"
            );
        }
        let mut models = Vec::new();
        for name in &f.models {
            let kind: ModelKind = name.parse().map_err(|e| anyhow!("fit.models: {e}"))?;
            let model = match (kind, f.burgers_balance.as_str(), viscosity) {
                (ModelKind::Burgers, "imposed", Some(nu)) => Model::Burgers(Burgers::imposed(nu)),
                (ModelKind::Burgers, "imposed", None) => {
                    bail!("fit.burgers_balance = \"imposed\" needs fluid.viscosity")
                }
                (_, "free" | "imposed", _) => kind.default_model(),
                (_, other, _) => bail!("fit.burgers_balance: unknown '{other}' (free, imposed)"),
            };
            models.push(model);
        }
        let tubes = tube_settings(config, &fit, &models)?;
        Ok(Self {
            input: config.input.clone(),
            detection,
            fit,
            models,
            tubes,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_config_resolves() {
        let plan = Plan::resolve(&Config::default()).unwrap();
        assert_eq!(plan.models.len(), 2);
        assert!(plan.fit.viscosity.is_none());
    }

    #[test]
    fn bad_values_name_their_key() {
        let mut c = Config::default();
        c.detection.criterion = "helicity".into();
        assert!(Plan::resolve(&c)
            .unwrap_err()
            .to_string()
            .contains("detection.criterion"));
        let mut c = Config::default();
        c.fit.loss = "huber".into();
        assert!(Plan::resolve(&c)
            .unwrap_err()
            .to_string()
            .contains("loss_scale"));
        let mut c = Config::default();
        c.fluid.viscosity = Some(-1.0);
        assert!(Plan::resolve(&c)
            .unwrap_err()
            .to_string()
            .contains("viscosity"));
        let mut c = Config::default();
        c.fit.burgers_balance = "imposed".into();
        assert!(Plan::resolve(&c)
            .unwrap_err()
            .to_string()
            .contains("fluid.viscosity"));
    }

    #[test]
    fn volume_section_resolves_and_names_bad_keys() {
        let plan = Plan::resolve(&Config::default()).unwrap();
        assert_eq!(plan.tubes.slab_planes, TubeSettings::default().slab_planes);
        assert_eq!(plan.tubes.criterion, TubeSettings::default().criterion);
        let mut c = Config::default();
        c.volume.periodic = vec!["x".into(), "z".into()];
        c.volume.slab_planes = 5;
        c.volume.kolmogorov_eta = Some(0.1);
        c.volume.kolmogorov_tau = Some(0.2);
        let t = Plan::resolve(&c).unwrap().tubes;
        assert_eq!(t.periodic, [true, false, true]);
        assert_eq!(t.slab_planes, 5);
        assert!(matches!(t.kolmogorov, Kolmogorov::Given { .. }));
        type Edit = fn(&mut Config);
        let cases: Vec<(Edit, &str)> = vec![
            (|c| c.volume.slab_planes = 0, "volume.slab_planes"),
            (|c| c.volume.periodic = vec!["w".into()], "volume.periodic"),
            (|c| c.volume.criterion = "gamma1".into(), "volume.criterion"),
            (
                |c| c.volume.threshold = "percentile".into(),
                "volume.threshold",
            ),
            (
                |c| c.volume.station_spacing = Some(-1.0),
                "volume.station_spacing",
            ),
            (
                |c| c.volume.kolmogorov_eta = Some(1.0),
                "volume.kolmogorov_eta",
            ),
            (|c| c.volume.compute_kolmogorov = true, "fluid.viscosity"),
        ];
        for (edit, key) in cases {
            let mut c = Config::default();
            edit(&mut c);
            let e = Plan::resolve(&c).unwrap_err().to_string();
            assert!(e.contains(key), "{key}: {e}");
        }
    }
}
