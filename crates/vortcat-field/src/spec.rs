//! The input description: which arrays, datasets or columns hold the components and the
//! coordinates, how the axes are laid out, and the spacing and units when the file does not say.
//!
//! It deserialises from the `[input]` section of a TOML config, and every field can be
//! overridden afterwards (the binary maps its flags onto it). Defaults make the common case —
//! components `u`, `v`, optional `w`, coordinates `x`, `y`, `z`, time axis first — need no
//! config at all.

use serde::{Deserialize, Serialize};

use crate::error::FieldError;
use crate::grid::{Units, DEFAULT_UNIFORM_TOLERANCE};

/// How a file's arrays map onto vortcat's `[t][z][y][x]` order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Layout {
    /// Column-major for MATLAB `.mat` files, row-major for everything else.
    #[default]
    Auto,
    /// Axes as stored: `[t][z][y][x]` with x fastest (NumPy C order, h5py, NetCDF).
    RowMajor,
    /// Axes stored in reverse order, as MATLAB v7.3 (and Fortran HDF5 writers) store a
    /// column-major array: MATLAB's `u(y, x, t)` appears in the HDF5 file as `[t][x][y]`.
    /// The reader reverses the axes, so the config describes the array as the MATLAB user sees it.
    ColumnMajor,
}

/// Whether a stored array is a stack of planes or a volume.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Geometry {
    /// Planes: a 2D array is one snapshot, a 3D array a time stack of planes.
    #[default]
    Plane,
    /// Volumes: a 3D array is one snapshot, a 4D array a time stack of volumes.
    Volume,
}

/// Where the time (stack) axis sits, in the logical order after [`Layout`] is applied.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum TimeAxis {
    /// First for row-major files, last for column-major ones (MATLAB keeps time last).
    #[default]
    Auto,
    /// The first axis.
    First,
    /// The last axis.
    Last,
}

/// Explicit file format, when the extension does not say.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum FormatHint {
    /// `.npy` file(s).
    Npy,
    /// `.npz` archive.
    Npz,
    /// HDF5, MATLAB v7.3 `.mat`, NetCDF-4 `.nc`.
    Hdf5,
    /// Comma- or whitespace-separated text with x, y, u, v columns.
    Csv,
}

/// The input description. Every field has a default; see the field docs.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct InputSpec {
    /// File format; `None` = from the extension.
    pub format: Option<FormatHint>,
    /// Name of the x-velocity array / dataset path / column. Default `u`.
    pub u: String,
    /// Name of the y-velocity. Default `v`.
    pub v: String,
    /// Name of the z-velocity; used when present. Default `w`.
    pub w: String,
    /// Name of the x-coordinate array or column. Default `x`.
    pub x: String,
    /// Name of the y-coordinate. Default `y`.
    pub y: String,
    /// Name of the z-coordinate. Default `z`.
    pub z: String,
    /// Name of an optional rejected-vector mask (non-zero = rejected). Default `mask`.
    pub mask: String,
    /// Name of an optional 1D array of snapshot times. Default `t`.
    pub time: String,
    /// Grid spacing `[dx, dy(, dz)]` in length units, used when the file has no coordinates;
    /// one value applies to every axis. Must be positive: orientation comes from coordinates
    /// or from `flip_y`.
    pub spacing: Option<Vec<f64>>,
    /// Coordinates of the first grid point `[x0, y0(, z0)]` when the file has none. Default 0.
    pub origin: Option<Vec<f64>>,
    /// With spacing given and no coordinates: the y coordinate decreases with row index (image
    /// convention, row 0 at the top).
    pub flip_y: bool,
    /// Axis layout of the stored arrays.
    pub layout: Layout,
    /// Planes or volumes.
    pub geometry: Geometry,
    /// Position of the time axis.
    pub time_axis: TimeAxis,
    /// For a single `.npy` holding all components: the axis (0-based, logical order, counted
    /// after the time axis is removed) that indexes the components u, v(, w). Default 0.
    pub component_axis: usize,
    /// Unit of length, overriding any unit attribute. Default: the file's, else `m`.
    pub length_unit: Option<String>,
    /// Unit of velocity, overriding any unit attribute. Default: the file's, else `m/s`.
    pub velocity_unit: Option<String>,
    /// Relative tolerance for uniform coordinates (see [`DEFAULT_UNIFORM_TOLERANCE`]).
    pub uniform_tolerance: f64,
    /// CSV/text delimiter: `","`, `";"`, `"\t"` or `"whitespace"`; `None` = guess from the
    /// header line.
    pub delimiter: Option<String>,
}

impl Default for InputSpec {
    fn default() -> Self {
        Self {
            format: None,
            u: "u".into(),
            v: "v".into(),
            w: "w".into(),
            x: "x".into(),
            y: "y".into(),
            z: "z".into(),
            mask: "mask".into(),
            time: "t".into(),
            spacing: None,
            origin: None,
            flip_y: false,
            layout: Layout::Auto,
            geometry: Geometry::Plane,
            time_axis: TimeAxis::Auto,
            component_axis: 0,
            length_unit: None,
            velocity_unit: None,
            uniform_tolerance: DEFAULT_UNIFORM_TOLERANCE,
            delimiter: None,
        }
    }
}

impl InputSpec {
    /// Checks the description for values that can never work.
    pub fn validate(&self) -> Result<(), FieldError> {
        if let Some(s) = &self.spacing {
            if s.is_empty() || s.len() > 3 {
                return Err(FieldError::Spec(format!(
                    "spacing takes 1 to 3 values (dx[,dy[,dz]]), got {}",
                    s.len()
                )));
            }
            for (name, &d) in ["dx", "dy", "dz"].iter().zip(s) {
                if !(d.is_finite() && d > 0.0) {
                    return Err(FieldError::BadSpacing {
                        axis: name[1..].to_string(),
                        spacing: d,
                    });
                }
            }
        }
        if let Some(o) = &self.origin {
            if o.is_empty() || o.len() > 3 || o.iter().any(|c| !c.is_finite()) {
                return Err(FieldError::Spec(format!(
                    "origin takes 1 to 3 finite values (x0[,y0[,z0]]), got {o:?}"
                )));
            }
        }
        if !(self.uniform_tolerance.is_finite() && self.uniform_tolerance > 0.0) {
            return Err(FieldError::Spec(format!(
                "uniform_tolerance must be positive, got {}",
                self.uniform_tolerance
            )));
        }
        if self.u == self.v {
            return Err(FieldError::Spec(format!(
                "u and v name the same array '{}'",
                self.u
            )));
        }
        Ok(())
    }

    /// The spacing given for spatial axis `axis` (0 = x, 1 = y, 2 = z), if any; a single value
    /// applies to every axis.
    pub fn spacing_for(&self, axis: usize) -> Option<f64> {
        let s = self.spacing.as_ref()?;
        Some(*s.get(axis).unwrap_or(&s[0]))
    }

    /// The origin given for spatial axis `axis`, default 0.
    pub fn origin_for(&self, axis: usize) -> f64 {
        self.origin
            .as_ref()
            .and_then(|o| o.get(axis).copied())
            .unwrap_or(0.0)
    }

    /// The layout for a file: `Auto` resolves by extension (`.mat` → column-major).
    pub fn resolved_layout(&self, path: &std::path::Path) -> Layout {
        match self.layout {
            Layout::Auto => {
                let mat = path
                    .extension()
                    .and_then(|e| e.to_str())
                    .is_some_and(|e| e.eq_ignore_ascii_case("mat"));
                if mat {
                    Layout::ColumnMajor
                } else {
                    Layout::RowMajor
                }
            }
            l => l,
        }
    }

    /// This description with the layout resolved for `path`, as the readers use it.
    pub fn for_file(&self, path: &std::path::Path) -> InputSpec {
        InputSpec {
            layout: self.resolved_layout(path),
            ..self.clone()
        }
    }

    /// Whether the time axis is first in logical order (call on a [`InputSpec::for_file`]
    /// description: `Auto` layout counts as row-major).
    pub fn time_first(&self) -> bool {
        match self.time_axis {
            TimeAxis::First => true,
            TimeAxis::Last => false,
            TimeAxis::Auto => self.layout != Layout::ColumnMajor,
        }
    }

    /// Units after applying overrides to what the file said.
    pub fn units(&self, file_length: Option<String>, file_velocity: Option<String>) -> Units {
        let d = Units::default();
        Units {
            length: self.length_unit.clone().or(file_length).unwrap_or(d.length),
            velocity: self
                .velocity_unit
                .clone()
                .or(file_velocity)
                .unwrap_or(d.velocity),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn empty_toml_gives_defaults() {
        let spec: InputSpec = toml::from_str("").unwrap();
        assert_eq!(spec, InputSpec::default());
        assert!(spec.time_first());
    }

    #[test]
    fn toml_section_parses_and_unknown_keys_are_refused() {
        let spec: InputSpec =
            toml::from_str("u = \"/piv/U\"\nlayout = \"column-major\"\nspacing = [0.5]\n").unwrap();
        assert_eq!(spec.u, "/piv/U");
        assert!(!spec.time_first(), "MATLAB keeps time last");
        let auto = InputSpec::default();
        assert_eq!(
            auto.resolved_layout(std::path::Path::new("a/run.MAT")),
            Layout::ColumnMajor
        );
        assert_eq!(
            auto.resolved_layout(std::path::Path::new("run.h5")),
            Layout::RowMajor
        );
        assert!(!auto.for_file(std::path::Path::new("run.mat")).time_first());
        assert_eq!(spec.spacing_for(1), Some(0.5));
        assert!(toml::from_str::<InputSpec>("uu = \"a\"").is_err());
    }

    #[test]
    fn zero_and_negative_spacing_are_refused() {
        for bad in [0.0, -1.0, f64::NAN] {
            let spec = InputSpec {
                spacing: Some(vec![1.0, bad]),
                ..Default::default()
            };
            assert!(spec.validate().is_err(), "{bad}");
        }
    }
}
