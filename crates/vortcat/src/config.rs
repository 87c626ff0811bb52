//! The TOML run configuration. Each section belongs to one pipeline stage; this release has the
//! `[input]` section (see `vortcat_field::InputSpec`).

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
}
