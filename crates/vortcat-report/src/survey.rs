//! Reading a survey folder: `catalog.csv`, `config.toml`, `run.json`, `summary.json` and
//! `units.csv` (see `docs/catalog.md`). Only what the report, the ranking and the statistics
//! need is parsed; unknown keys are ignored so that newer surveys stay readable.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use vortcat_field::InputSpec;

use crate::error::ReportError;

/// One catalog row (one vortex), as written by `vortcat survey` and read back here; the
/// columns are described in `docs/catalog.md`. `None` is an empty CSV field and a JSON `null`:
/// the value does not apply (e.g. strain rate for a Lamb–Oseen fit) or could not be computed.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Vortex {
    /// Snapshot identifier `file#index`.
    pub snapshot: String,
    /// Vortex number within the snapshot, from 1, in detection order.
    pub vortex: usize,
    /// Source file as given on the command line (or found in a folder).
    pub file: String,
    /// Index in the file's stack.
    pub index: usize,
    /// Snapshot time, when the file records one.
    pub time: Option<f64>,
    /// Fitted centre x.
    pub x: Option<f64>,
    /// Fitted centre y.
    pub y: Option<f64>,
    /// +1 counter-clockwise in x–y, −1 clockwise, 0 undetermined.
    pub sense: i8,
    /// Chosen model name (`lamb-oseen`, `burgers`, `rankine`, `vatistas`), empty if not fitted.
    pub model: String,
    /// Fit status.
    pub status: String,
    /// Signed circulation Γ.
    pub circulation: Option<f64>,
    /// Standard error of Γ.
    pub circulation_err: Option<f64>,
    /// Core radius rc.
    pub core_radius: Option<f64>,
    /// Standard error of rc.
    pub core_radius_err: Option<f64>,
    /// Strain rate γ from the fitted inflow (Burgers).
    pub strain_rate: Option<f64>,
    /// Standard error of γ.
    pub strain_rate_err: Option<f64>,
    /// Strain rate implied by the core radius and viscosity, 4ν/rc².
    pub strain_rate_viscous: Option<f64>,
    /// Effective viscosity γ·rc²/4 over ν (1 for a Burgers vortex in balance).
    pub viscosity_ratio: Option<f64>,
    /// Peak azimuthal velocity.
    pub peak_velocity: Option<f64>,
    /// Convection velocity x.
    pub conv_u: Option<f64>,
    /// Convection velocity y.
    pub conv_v: Option<f64>,
    /// Circulation Reynolds number Γ/ν.
    pub reynolds: Option<f64>,
    /// Vectors in the fitting window.
    pub n_points: usize,
    /// RMS velocity residual.
    pub residual_rms: Option<f64>,
    /// Coefficient of determination of the velocity in the window.
    pub r2: Option<f64>,
    /// p-value of the inflow term: likelihood-ratio test of Burgers against Lamb–Oseen.
    pub inflow_p_value: Option<f64>,
    /// Fitting-window radius.
    pub window_radius: Option<f64>,
    /// Detection centre x (criterion-weighted centroid).
    pub detect_x: Option<f64>,
    /// Detection centre y.
    pub detect_y: Option<f64>,
    /// Peak criterion value in the detected region.
    pub criterion_peak: Option<f64>,
    /// Equivalent radius √(area/π) of the detected region.
    pub equivalent_radius: Option<f64>,
    /// Quality flags, separated by `;`; empty when none.
    pub flags: String,
}

impl Vortex {
    /// The quality flags as a list (empty when the fit is clean).
    pub fn flag_list(&self) -> Vec<&str> {
        self.flags.split(';').filter(|f| !f.is_empty()).collect()
    }

    /// Whether the fit carries no flag.
    pub fn is_clean(&self) -> bool {
        self.flag_list().is_empty()
    }

    /// A label unique within the survey: `snapshot` and vortex number.
    pub fn label(&self) -> String {
        format!("{} v{}", self.snapshot, self.vortex)
    }
}

/// `[fluid]` of the resolved config, plus the optional Kolmogorov scale.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct FluidSection {
    /// Kinematic viscosity ν.
    pub viscosity: Option<f64>,
    /// Kolmogorov length η (not written by every survey version; can be given to the report).
    pub kolmogorov_length: Option<f64>,
}

/// `[detection]` of the resolved config (the keys the report uses).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct DetectionSection {
    /// Criterion name.
    pub criterion: String,
    /// Gradient scheme name.
    pub gradient: String,
    /// Γ1/Γ2 neighbourhood radius in grid steps.
    pub gamma_radius: usize,
}

impl Default for DetectionSection {
    fn default() -> Self {
        let d = vortcat_detect::DetectionSettings::default();
        Self {
            criterion: d.criterion().name().to_string(),
            gradient: d.scheme().name().to_string(),
            gamma_radius: d.gamma_radius(),
        }
    }
}

/// `[fit]` of the resolved config (the keys the report uses).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct FitSection {
    /// Models fitted.
    pub models: Vec<String>,
    /// Whether a background gradient was fitted (not in the catalog, so not in the curves).
    pub background_gradient: bool,
    /// `free` or `imposed`.
    pub burgers_balance: String,
    /// PIV window size, when models were averaged over it.
    pub piv_window: Option<f64>,
}

/// `[volume]` of the resolved config: the Kolmogorov scales, when given.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct VolumeSection {
    /// Kolmogorov length η.
    pub kolmogorov_eta: Option<f64>,
    /// Kolmogorov time τ_η.
    pub kolmogorov_tau: Option<f64>,
}

/// The resolved config of a survey (`config.toml`).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SurveyConfig {
    /// How the inputs were read.
    pub input: InputSpec,
    /// Fluid properties.
    pub fluid: FluidSection,
    /// Detection settings.
    pub detection: DetectionSection,
    /// Fit settings.
    pub fit: FitSection,
    /// Volume settings (the Kolmogorov scales).
    pub volume: VolumeSection,
}

/// One input file in `run.json`.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct InputRecord {
    /// Path as given or found.
    pub path: String,
    /// Size in bytes.
    pub bytes: u64,
    /// BLAKE3 hash of the content (manifests of earlier builds call it `sha256` and hold a SHA-256).
    #[serde(alias = "sha256")]
    pub blake3: String,
    /// Snapshots in the file.
    pub snapshots: usize,
    /// Why the file could not be used.
    pub error: Option<String>,
}

/// One snapshot in `run.json`.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SnapshotRecord {
    /// Identifier `file#index`.
    pub snapshot: String,
    /// `done` or `failed`.
    pub status: String,
    /// Why it failed.
    pub error: Option<String>,
}

/// The manifest `run.json`.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct RunManifest {
    /// Tool version.
    pub version: String,
    /// Git commit of the build.
    pub git_commit: String,
    /// Command line.
    pub command: Vec<String>,
    /// SHA-256 of the resolved config.
    pub config_sha256: String,
    /// Inputs.
    pub inputs: Vec<InputRecord>,
    /// Snapshots and their status.
    pub snapshots: Vec<SnapshotRecord>,
    /// Start time (UTC, RFC 3339).
    pub started: String,
    /// End time (UTC, RFC 3339).
    pub ended: String,
    /// Worker threads.
    pub threads: usize,
}

/// Units of the catalog columns (`units.csv`).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ColumnUnits(pub BTreeMap<String, String>);

impl ColumnUnits {
    /// The unit of a column (`""` when unknown or dimensionless).
    pub fn of(&self, column: &str) -> &str {
        self.0.get(column).map_or("", String::as_str)
    }

    /// The length unit (`m` when not recorded).
    pub fn length(&self) -> &str {
        self.0.get("x").map_or("m", String::as_str)
    }

    /// The velocity unit (`m/s` when not recorded).
    pub fn velocity(&self) -> &str {
        self.0.get("peak_velocity").map_or("m/s", String::as_str)
    }
}

/// A survey folder, read.
#[derive(Debug, Clone)]
pub struct Survey {
    /// The folder.
    pub dir: PathBuf,
    /// The catalog rows in catalog order.
    pub vortices: Vec<Vortex>,
    /// The resolved config.
    pub config: SurveyConfig,
    /// The text of `config.toml`.
    pub config_text: String,
    /// The manifest.
    pub run: RunManifest,
    /// Column units.
    pub units: ColumnUnits,
}

fn read_text(path: &Path) -> Result<String, ReportError> {
    std::fs::read_to_string(path).map_err(|source| ReportError::Read {
        path: path.to_path_buf(),
        source,
    })
}

/// Reads the catalog rows of `catalog.csv`.
pub fn read_catalog(path: &Path) -> Result<Vec<Vortex>, ReportError> {
    let file = std::fs::File::open(path).map_err(|source| ReportError::Read {
        path: path.to_path_buf(),
        source,
    })?;
    let mut reader = csv::Reader::from_reader(std::io::BufReader::new(file));
    let mut rows = Vec::new();
    for (i, record) in reader.deserialize::<Vortex>().enumerate() {
        let row = record.map_err(|e| ReportError::parse(path, format!("row {}: {e}", i + 1)))?;
        rows.push(row);
    }
    Ok(rows)
}

fn read_units(path: &Path) -> Result<ColumnUnits, ReportError> {
    #[derive(Deserialize)]
    struct Line {
        column: String,
        unit: String,
    }
    let mut map = BTreeMap::new();
    if !path.exists() {
        return Ok(ColumnUnits(map));
    }
    let text = read_text(path)?;
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    for line in reader.deserialize::<Line>() {
        let line = line.map_err(|e| ReportError::parse(path, e))?;
        map.insert(line.column, line.unit);
    }
    Ok(ColumnUnits(map))
}

impl Survey {
    /// Reads the survey folder `dir`. Errors name the file that is missing or malformed.
    pub fn open(dir: &Path) -> Result<Self, ReportError> {
        if !dir.is_dir() {
            return Err(ReportError::NotASurvey {
                path: dir.to_path_buf(),
                reason: if dir.exists() {
                    "not a folder".into()
                } else {
                    "no such folder".into()
                },
            });
        }
        let catalog = dir.join("catalog.csv");
        if !catalog.is_file() {
            return Err(ReportError::NotASurvey {
                path: dir.to_path_buf(),
                reason: "it holds no catalog.csv; run `vortcat survey INPUT --out DIR` first"
                    .into(),
            });
        }
        let vortices = read_catalog(&catalog)?;
        let config_path = dir.join("config.toml");
        let config_text = read_text(&config_path)?;
        let config: SurveyConfig =
            toml::from_str(&config_text).map_err(|e| ReportError::parse(&config_path, e))?;
        let run_path = dir.join("run.json");
        let run: RunManifest = serde_json::from_str(&read_text(&run_path)?)
            .map_err(|e| ReportError::parse(&run_path, e))?;
        let units = read_units(&dir.join("units.csv"))?;
        Ok(Survey {
            dir: dir.to_path_buf(),
            vortices,
            config,
            config_text,
            run,
            units,
        })
    }

    /// Snapshots that failed, with their errors, and inputs that could not be used.
    pub fn failures(&self) -> Vec<(String, String)> {
        let mut out: Vec<(String, String)> = self
            .run
            .inputs
            .iter()
            .filter_map(|i| i.error.as_ref().map(|e| (i.path.clone(), e.clone())))
            .collect();
        out.extend(
            self.run
                .snapshots
                .iter()
                .filter(|s| s.status != "done")
                .map(|s| (s.snapshot.clone(), s.error.clone().unwrap_or_default())),
        );
        out
    }
}
