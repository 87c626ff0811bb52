//! The resolved plan: the config and the flags, validated once and turned into the settings
//! of each library. Everything the survey does is decided here.

use anyhow::{anyhow, bail};
use vortcat_detect::{Criterion, DetectionSettings, GradientScheme, Threshold};
use vortcat_field::InputSpec;
use vortcat_fit::{
    Burgers, FitSettings, FlagThresholds, InformationCriterion, Loss, Model, ModelKind,
    PivAveraging,
};

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
        Ok(Self {
            input: config.input.clone(),
            detection,
            fit,
            models,
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
}
