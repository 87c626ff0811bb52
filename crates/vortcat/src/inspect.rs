//! `vortcat inspect`: what the reader sees in each file.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::Context;
use clap::Args;
use serde::Serialize;
use vortcat_field::{open, Field, SnapshotReader, SourceInfo};

use crate::input::InputArgs;

/// Arguments of `vortcat inspect`.
#[derive(Debug, Args)]
pub struct InspectArgs {
    /// Velocity files (or folders of per-component .npy files).
    #[arg(required = true, value_name = "FILE")]
    files: Vec<PathBuf>,
    #[command(flatten)]
    input: InputArgs,
    /// Read every snapshot for the invalid fraction and speed range (default: the first only).
    #[arg(long, help_heading = "Output")]
    all_snapshots: bool,
    /// Print JSON (one document with a list of files) instead of text.
    #[arg(long, help_heading = "Output")]
    json: bool,
}

/// Statistics of the snapshots read.
#[derive(Debug, Serialize)]
struct Scan {
    snapshots_read: usize,
    invalid_fraction: f64,
    speed_min: f64,
    speed_max: f64,
}

#[derive(Debug, Serialize)]
struct Report {
    #[serde(flatten)]
    info: SourceInfo,
    scan: Scan,
}

fn scan(reader: &mut dyn SnapshotReader, all: bool) -> Result<Scan, vortcat_field::FieldError> {
    let count = if all { reader.len() } else { 1 };
    let (mut invalid, mut points) = (0.0, 0usize);
    let (mut lo, mut hi) = (f64::INFINITY, 0.0_f64);
    for i in 0..count {
        let snapshot = reader.read(i)?;
        let n = snapshot.field.grid().num_points();
        invalid += snapshot.field.invalid_fraction() * n as f64;
        points += n;
        let (a, b) = snapshot.field.speed_range();
        lo = lo.min(a);
        hi = hi.max(b);
        if let Field::Volume(_) = snapshot.field {
            log::debug!("volume snapshot {i} read");
        }
    }
    Ok(Scan {
        snapshots_read: count,
        invalid_fraction: invalid / points as f64,
        speed_min: lo,
        speed_max: hi,
    })
}

fn describe(path: &Path, args: &InspectArgs) -> anyhow::Result<Report> {
    let (_, spec) = args.input.resolve()?;
    let mut reader = open(path, &spec)?;
    let scan = scan(reader.as_mut(), args.all_snapshots)?;
    Ok(Report {
        info: reader.info().clone(),
        scan,
    })
}

fn print_text(r: &Report) {
    let info = &r.info;
    let g = &info.grid;
    let units = g.units();
    println!("{}", info.path.display());
    println!("  format:     {}", info.format);
    println!("  arrays:");
    for a in &info.arrays {
        println!("    {:<24} {:<10} {:?}", a.name, a.dtype, a.shape);
    }
    let roles: Vec<String> = info
        .roles
        .iter()
        .map(|r| format!("{}={}", r.role, r.source))
        .collect();
    println!("  chosen:     {}", roles.join("  "));
    let mut dims = vec![format!("{}", g.x().len()), format!("{}", g.y().len())];
    let mut names = vec!["nx", "ny"];
    if let Some(z) = g.z() {
        dims.push(z.len().to_string());
        names.push("nz");
    }
    println!("  grid:       {} ({})", dims.join(" x "), names.join(" x "));
    let mut axes = vec![("x", g.x()), ("y", g.y())];
    if let Some(z) = g.z() {
        axes.push(("z", z));
    }
    for (name, a) in axes {
        let (lo, hi) = a.extent();
        println!(
            "    {name}: spacing {:.6e} {}, extent [{lo:.6e}, {hi:.6e}] {}",
            a.spacing(),
            units.length,
            units.length
        );
    }
    let origin = serde_json::to_value(info.grid_origin)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_default();
    println!("  grid from:  {origin}");
    println!(
        "  units:      length {}, velocity {}",
        units.length, units.velocity
    );
    println!("  snapshots:  {}", info.snapshots);
    println!(
        "  read {} snapshot(s): invalid vectors {:.2} %, speed {:.6e} .. {:.6e} {}",
        r.scan.snapshots_read,
        100.0 * r.scan.invalid_fraction,
        r.scan.speed_min,
        r.scan.speed_max,
        units.velocity
    );
}

/// Runs the command: every file is described; a file that cannot be read is reported and the
/// rest are still described; the exit code is 1 if any file failed.
pub fn run(args: InspectArgs) -> anyhow::Result<ExitCode> {
    args.input.resolve()?;
    let mut reports = Vec::new();
    let mut failed = 0;
    for path in &args.files {
        match describe(path, &args) {
            Ok(r) => {
                if !args.json {
                    print_text(&r);
                }
                reports.push(r);
            }
            Err(e) => {
                failed += 1;
                eprintln!("vortcat: error: {}", crate::one_line(&e));
            }
        }
    }
    if args.json {
        let text = serde_json::to_string_pretty(&reports).context("serialising the report")?;
        println!("{text}");
    }
    Ok(if failed == 0 {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(crate::EXIT_FAILURE)
    })
}
