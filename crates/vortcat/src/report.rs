//! `vortcat report DIR`: the static quality-control report of a survey.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::bail;
use clap::Args;
use vortcat_report::{MapField, ReportOptions};

/// Arguments of `vortcat report`.
#[derive(Debug, Args)]
pub struct ReportArgs {
    /// Survey folder (the --out of `vortcat survey`); the report goes to DIR/report/index.html.
    #[arg(value_name = "DIR")]
    dir: PathBuf,
    #[command(flatten)]
    options: ReportFlags,
}

/// The report's choices, shared with `vortcat survey --report`.
#[derive(Debug, Clone, Args)]
pub struct ReportFlags {
    /// Detail cards for at most N flagged fits, the most doubtful first.
    #[arg(long, value_name = "N", default_value_t = ReportOptions::default().max_flagged, help_heading = "Report")]
    pub max_flagged: usize,
    /// Detail cards for the N strongest fits by |circulation|.
    #[arg(long, value_name = "N", default_value_t = ReportOptions::default().top, help_heading = "Report")]
    pub top: usize,
    /// Detail cards for a random sample of N other fits.
    #[arg(long, value_name = "N", default_value_t = ReportOptions::default().sample, help_heading = "Report")]
    pub sample: usize,
    /// Seed of the random sample (same seed, same report).
    #[arg(long, value_name = "S", default_value_t = ReportOptions::default().seed, help_heading = "Report")]
    pub seed: u64,
    /// Snapshot maps at most (those with the most flagged fits, then evenly spaced others).
    #[arg(long, value_name = "N", default_value_t = ReportOptions::default().max_maps, help_heading = "Report")]
    pub max_maps: usize,
    /// What the snapshot maps show: criterion (the survey's detection criterion) or vorticity.
    #[arg(
        long,
        value_name = "FIELD",
        default_value = "criterion",
        help_heading = "Report"
    )]
    pub map: String,
    /// Kolmogorov length η in length units: adds rc/η and γ·τ_η (τ_η = η²/ν).
    #[arg(long, value_name = "ETA", help_heading = "Report")]
    pub kolmogorov_length: Option<f64>,
}

impl ReportFlags {
    /// The defaults of `vortcat report` (for `vortcat survey --report`).
    pub fn defaults() -> Self {
        let d = ReportOptions::default();
        Self {
            max_flagged: d.max_flagged,
            top: d.top,
            sample: d.sample,
            seed: d.seed,
            max_maps: d.max_maps,
            map: "criterion".into(),
            kolmogorov_length: None,
        }
    }

    /// The library options.
    pub fn options(&self) -> anyhow::Result<ReportOptions> {
        let map_field = match self.map.as_str() {
            "criterion" => MapField::Criterion,
            "vorticity" => MapField::Vorticity,
            other => bail!("--map: unknown field '{other}' (criterion, vorticity)"),
        };
        if let Some(eta) = self.kolmogorov_length {
            if !(eta.is_finite() && eta > 0.0) {
                bail!("--kolmogorov-length must be a positive length, got {eta}");
            }
        }
        Ok(ReportOptions {
            max_flagged: self.max_flagged,
            top: self.top,
            sample: self.sample,
            seed: self.seed,
            max_maps: self.max_maps,
            map_field,
            kolmogorov_length: self.kolmogorov_length,
            ..ReportOptions::default()
        })
    }
}

/// Writes the report of survey folder `dir` and prints where it is.
pub fn write(dir: &std::path::Path, flags: &ReportFlags) -> anyhow::Result<()> {
    let options = flags.options()?;
    let summary = vortcat_report::write_report(dir, &options)?;
    for p in &summary.problems {
        eprintln!("vortcat: report: {p}");
    }
    println!(
        "report: {} vortices, {} detail cards, {} snapshot maps, {:.1} MB -> {}",
        summary.vortices,
        summary.detailed,
        summary.maps,
        summary.bytes as f64 / 1e6,
        summary.index.display()
    );
    Ok(())
}

/// Runs the command.
pub fn run(args: ReportArgs) -> anyhow::Result<ExitCode> {
    write(&args.dir, &args.options)?;
    Ok(ExitCode::SUCCESS)
}
