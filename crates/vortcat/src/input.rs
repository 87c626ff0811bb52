//! The input flags shared by every command that reads velocity files, and their merge over the
//! config's `[input]` section.

use std::path::PathBuf;

use clap::{Args, ValueEnum};
use vortcat_field::{FormatHint, Geometry, InputSpec, Layout, TimeAxis};

use crate::config::Config;

/// Array layout on the command line.
#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum LayoutArg {
    /// Column-major for .mat files, row-major otherwise.
    Auto,
    /// Axes as stored, x fastest (NumPy, h5py, NetCDF).
    RowMajor,
    /// Axes reversed (MATLAB v7.3 and Fortran writers).
    ColumnMajor,
}

/// Geometry on the command line.
#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum GeometryArg {
    /// 2D arrays are snapshots, 3D arrays stacks of planes.
    Plane,
    /// 3D arrays are snapshots, 4D arrays stacks of volumes.
    Volume,
}

/// Time-axis position on the command line.
#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum TimeAxisArg {
    /// First for row-major files, last for column-major ones.
    Auto,
    /// The first axis.
    First,
    /// The last axis.
    Last,
}

/// Format on the command line.
#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum FormatArg {
    /// NumPy .npy (a file, or a folder of per-component files).
    Npy,
    /// NumPy .npz archive.
    Npz,
    /// HDF5, MATLAB v7.3 .mat, NetCDF-4 .nc.
    Hdf5,
    /// Delimited or whitespace-separated text with x, y, u, v columns.
    Csv,
}

/// How to read the input files; each flag overrides the config's `[input]` section.
#[derive(Debug, Clone, Args)]
#[command(next_help_heading = "Input")]
pub struct InputArgs {
    /// TOML config file; its [input] section describes the files.
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
    /// File format (default: from the extension).
    #[arg(long, value_enum)]
    pub format: Option<FormatArg>,
    /// Array, dataset path or column holding the x-velocity [default: u].
    #[arg(long, value_name = "NAME")]
    pub u: Option<String>,
    /// Array, dataset path or column holding the y-velocity [default: v].
    #[arg(long, value_name = "NAME")]
    pub v: Option<String>,
    /// Array, dataset path or column holding the z-velocity, used when present [default: w].
    #[arg(long, value_name = "NAME")]
    pub w: Option<String>,
    /// Array or column holding x coordinates [default: x].
    #[arg(long, value_name = "NAME")]
    pub x: Option<String>,
    /// Array or column holding y coordinates [default: y].
    #[arg(long, value_name = "NAME")]
    pub y: Option<String>,
    /// Grid spacing in length units when the file has no coordinates; one value for all axes.
    #[arg(long, value_name = "DX[,DY[,DZ]]", value_delimiter = ',')]
    pub spacing: Option<Vec<f64>>,
    /// Coordinates of the first grid point, with --spacing.
    #[arg(
        long,
        value_name = "X0[,Y0[,Z0]]",
        value_delimiter = ',',
        allow_negative_numbers = true
    )]
    pub origin: Option<Vec<f64>>,
    /// With --spacing: y decreases with row index (image convention, row 0 at the top).
    #[arg(long)]
    pub flip_y: bool,
    /// Axis order of the stored arrays.
    #[arg(long, value_enum)]
    pub layout: Option<LayoutArg>,
    /// Whether arrays hold planes or volumes.
    #[arg(long, value_enum)]
    pub geometry: Option<GeometryArg>,
    /// Position of the time (stack) axis.
    #[arg(long, value_enum)]
    pub time_axis: Option<TimeAxisArg>,
    /// Unit of length (overrides the file's).
    #[arg(long, value_name = "UNIT")]
    pub length_unit: Option<String>,
    /// Unit of velocity (overrides the file's).
    #[arg(long, value_name = "UNIT")]
    pub velocity_unit: Option<String>,
}

impl InputArgs {
    /// The config (or defaults) with these flags applied, validated.
    pub fn resolve(&self) -> anyhow::Result<(Config, InputSpec)> {
        let config = match &self.config {
            Some(path) => Config::load(path)?,
            None => Config::default(),
        };
        let mut spec = config.input.clone();
        if let Some(f) = self.format {
            spec.format = Some(match f {
                FormatArg::Npy => FormatHint::Npy,
                FormatArg::Npz => FormatHint::Npz,
                FormatArg::Hdf5 => FormatHint::Hdf5,
                FormatArg::Csv => FormatHint::Csv,
            });
        }
        for (flag, field) in [
            (&self.u, &mut spec.u),
            (&self.v, &mut spec.v),
            (&self.w, &mut spec.w),
            (&self.x, &mut spec.x),
            (&self.y, &mut spec.y),
        ] {
            if let Some(value) = flag {
                *field = value.clone();
            }
        }
        if let Some(s) = &self.spacing {
            spec.spacing = Some(s.clone());
        }
        if let Some(o) = &self.origin {
            spec.origin = Some(o.clone());
        }
        if self.flip_y {
            spec.flip_y = true;
        }
        if let Some(l) = self.layout {
            spec.layout = match l {
                LayoutArg::Auto => Layout::Auto,
                LayoutArg::RowMajor => Layout::RowMajor,
                LayoutArg::ColumnMajor => Layout::ColumnMajor,
            };
        }
        if let Some(g) = self.geometry {
            spec.geometry = match g {
                GeometryArg::Plane => Geometry::Plane,
                GeometryArg::Volume => Geometry::Volume,
            };
        }
        if let Some(t) = self.time_axis {
            spec.time_axis = match t {
                TimeAxisArg::Auto => TimeAxis::Auto,
                TimeAxisArg::First => TimeAxis::First,
                TimeAxisArg::Last => TimeAxis::Last,
            };
        }
        if let Some(u) = &self.length_unit {
            spec.length_unit = Some(u.clone());
        }
        if let Some(u) = &self.velocity_unit {
            spec.velocity_unit = Some(u.clone());
        }
        spec.validate()
            .map_err(|e| anyhow::anyhow!("input description: {e}"))?;
        Ok((config, spec))
    }
}
