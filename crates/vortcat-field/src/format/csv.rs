//! Comma-, semicolon-, tab- or whitespace-separated text with one row per vector and columns
//! `x`, `y`, `u`, `v` (optionally `w`), as most PIV packages export. Rows may come in any
//! order; missing values are empty fields or `NaN`.
//!
//! The grid is reconstructed from the coordinates: the distinct x and y values must form
//! uniform axes (within the description's tolerance) and every row must sit on a node.
//! Scattered points are rejected with an error, never interpolated. Nodes without a row become
//! invalid vectors. A text file is one snapshot.

use std::path::Path;

use ndarray::Array2;

use super::{ArrayInfo, GridOrigin, RoleAssignment, SnapshotReader, SourceInfo};
use crate::error::FieldError;
use crate::grid::{Axis, Grid};
use crate::snapshot::{Field, PlaneField, Snapshot, SnapshotId};
use crate::spec::InputSpec;

/// The CSV reader (the file is parsed at open; it holds one snapshot).
pub struct CsvReader {
    info: SourceInfo,
    field: PlaneField,
}

fn parse_number(text: &str, row: usize, column: &str) -> Result<f64, FieldError> {
    let t = text.trim();
    if t.is_empty() {
        return Ok(f64::NAN);
    }
    t.parse::<f64>().map_err(|_| FieldError::NotNumeric {
        name: format!("row {row}, column {column}"),
        found: format!("the text '{t}'"),
    })
}

/// Distinct values of one coordinate, merging values closer than `merge` (rounding noise).
fn distinct(values: &[f64], merge: f64) -> Vec<f64> {
    let mut sorted: Vec<f64> = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    let mut out: Vec<f64> = Vec::new();
    for v in sorted {
        match out.last() {
            Some(&last) if (v - last).abs() <= merge => {}
            _ => out.push(v),
        }
    }
    out
}

impl CsvReader {
    /// Reads and grids the file.
    pub fn open(path: &Path, spec: &InputSpec) -> Result<Self, FieldError> {
        let text = std::fs::read_to_string(path).map_err(|e| {
            if e.kind() == std::io::ErrorKind::InvalidData {
                FieldError::Corrupt("not a text file (invalid UTF-8)".into())
            } else {
                FieldError::Io(e)
            }
        })?;
        Self::from_text(path, &text, spec)
    }

    /// Grids a file whose bytes are already in memory (`path` names it in the source info).
    pub fn from_bytes(path: &Path, bytes: Vec<u8>, spec: &InputSpec) -> Result<Self, FieldError> {
        let text = String::from_utf8(bytes)
            .map_err(|_| FieldError::Corrupt("not a text file (invalid UTF-8)".into()))?;
        Self::from_text(path, &text, spec)
    }

    fn from_text(path: &Path, text: &str, spec: &InputSpec) -> Result<Self, FieldError> {
        let mut lines = text
            .lines()
            .filter(|l| !l.trim().is_empty() && !l.trim_start().starts_with('#'));
        let header_line = lines
            .next()
            .ok_or_else(|| FieldError::Csv("the file is empty (no header line)".into()))?;
        let delimiter = match spec.delimiter.as_deref() {
            Some("whitespace") => None,
            Some("\\t") | Some("\t") | Some("tab") => Some(b'\t'),
            Some(d) if d.len() == 1 => Some(d.as_bytes()[0]),
            Some(d) => {
                return Err(FieldError::Spec(format!(
                    "delimiter must be one character or \"whitespace\", got '{d}'"
                )))
            }
            None => [b',', b';', b'\t']
                .into_iter()
                .find(|&c| header_line.as_bytes().contains(&c)),
        };
        let split = |line: &str| -> Vec<String> {
            match delimiter {
                Some(d) => line
                    .split(d as char)
                    .map(|s| s.trim().to_string())
                    .collect(),
                None => line.split_whitespace().map(str::to_string).collect(),
            }
        };
        let header: Vec<String> = split(header_line)
            .into_iter()
            .map(|h| h.trim_matches('"').to_string())
            .collect();
        let column = |name: &str| -> Result<usize, FieldError> {
            header
                .iter()
                .position(|h| h == name)
                .ok_or_else(|| FieldError::Missing {
                    kind: "column",
                    name: name.to_string(),
                    available: header.clone(),
                })
        };
        let (cx, cy, cu, cv) = (
            column(&spec.x)?,
            column(&spec.y)?,
            column(&spec.u)?,
            column(&spec.v)?,
        );
        let cw = column(&spec.w).ok();
        let mut rows: Vec<[f64; 5]> = Vec::new();
        for (i, line) in lines.enumerate() {
            let fields = split(line);
            let row = i + 2;
            if fields.len() != header.len() {
                return Err(FieldError::Csv(format!(
                    "row {row} has {} fields, the header has {}",
                    fields.len(),
                    header.len()
                )));
            }
            let get = |c: usize, name: &str| parse_number(fields[c].trim_matches('"'), row, name);
            rows.push([
                get(cx, &spec.x)?,
                get(cy, &spec.y)?,
                get(cu, &spec.u)?,
                get(cv, &spec.v)?,
                cw.map_or(Ok(f64::NAN), |c| get(c, &spec.w))?,
            ]);
        }
        if rows.is_empty() {
            return Err(FieldError::Csv(
                "the file has a header but no data rows".into(),
            ));
        }
        if let Some(r) = rows
            .iter()
            .position(|r| !(r[0].is_finite() && r[1].is_finite()))
        {
            return Err(FieldError::Csv(format!(
                "row {}: missing or non-finite coordinate",
                r + 2
            )));
        }
        let xs: Vec<f64> = rows.iter().map(|r| r[0]).collect();
        let ys: Vec<f64> = rows.iter().map(|r| r[1]).collect();
        let axis = |name: &str, values: &[f64]| -> Result<Axis, FieldError> {
            let (lo, hi) = values
                .iter()
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                    (a.min(v), b.max(v))
                });
            let merge = 1e-9 * (hi - lo).abs().max(f64::MIN_POSITIVE);
            let d = distinct(values, merge);
            if d.len() == 1 {
                return Err(FieldError::BadCoordinates {
                    axis: name.into(),
                    reason: "all points share one coordinate; need at least two per axis".into(),
                });
            }
            Axis::from_coordinates(name, &d, spec.uniform_tolerance).map_err(|e| match e {
                FieldError::BadCoordinates { axis, reason } => FieldError::BadCoordinates {
                    axis,
                    reason: format!("{reason} (scattered points cannot be gridded)"),
                },
                e => e,
            })
        };
        let ax = axis("x", &xs)?;
        let ay = axis("y", &ys)?;
        let (nx, ny) = (ax.len(), ay.len());
        let cells = nx
            .checked_mul(ny)
            .filter(|&n| n <= 4 * rows.len() + 16)
            .ok_or_else(|| {
                FieldError::Csv(format!(
                    "{} rows span a {nx} x {ny} grid: points are scattered, not gridded",
                    rows.len()
                ))
            })?;
        let mut u = Array2::from_elem((ny, nx), f64::NAN);
        let mut v = Array2::from_elem((ny, nx), f64::NAN);
        let mut w = cw.map(|_| Array2::from_elem((ny, nx), f64::NAN));
        let mut seen = Array2::from_elem((ny, nx), false);
        for (i, r) in rows.iter().enumerate() {
            let fx = ax.index_of(r[0]);
            let fy = ay.index_of(r[1]);
            let (ix, iy) = (fx.round(), fy.round());
            // A row further than 1 % of a spacing from a node is not on the grid.
            if (fx - ix).abs() > 0.01 || (fy - iy).abs() > 0.01 {
                return Err(FieldError::Csv(format!(
                    "row {}: point ({}, {}) is not on the grid reconstructed from the coordinates (scattered points are not supported)",
                    i + 2,
                    r[0],
                    r[1]
                )));
            }
            let idx = [iy as usize, ix as usize];
            if seen[idx] {
                return Err(FieldError::Csv(format!(
                    "row {}: a second vector at ({}, {})",
                    i + 2,
                    r[0],
                    r[1]
                )));
            }
            seen[idx] = true;
            u[idx] = r[2];
            v[idx] = r[3];
            if let Some(w) = w.as_mut() {
                w[idx] = r[4];
            }
        }
        debug_assert!(cells >= rows.len());
        let units = spec.units(None, None);
        let grid = Grid::plane(ax, ay, units);
        let field = PlaneField::new(grid.clone(), u, v, w, None)?;
        let mut roles = vec![
            RoleAssignment {
                role: "x".into(),
                source: spec.x.clone(),
            },
            RoleAssignment {
                role: "y".into(),
                source: spec.y.clone(),
            },
            RoleAssignment {
                role: "u".into(),
                source: spec.u.clone(),
            },
            RoleAssignment {
                role: "v".into(),
                source: spec.v.clone(),
            },
        ];
        if cw.is_some() {
            roles.push(RoleAssignment {
                role: "w".into(),
                source: spec.w.clone(),
            });
        }
        let info = SourceInfo {
            path: path.to_path_buf(),
            format: "csv".into(),
            arrays: header
                .iter()
                .map(|h| ArrayInfo {
                    name: h.clone(),
                    shape: vec![rows.len()],
                    dtype: "text".into(),
                })
                .collect(),
            roles,
            grid,
            grid_origin: GridOrigin::Coordinates,
            snapshots: 1,
        };
        Ok(Self { info, field })
    }
}

impl SnapshotReader for CsvReader {
    fn info(&self) -> &SourceInfo {
        &self.info
    }

    fn read(&mut self, index: usize) -> Result<Snapshot, FieldError> {
        if index != 0 {
            return Err(FieldError::IndexOutOfRange { index, len: 1 }.in_file(&self.info.path));
        }
        Ok(Snapshot {
            id: SnapshotId::new(&self.info.path, 0),
            time: None,
            field: Field::Plane(self.field.clone()),
        })
    }
}
