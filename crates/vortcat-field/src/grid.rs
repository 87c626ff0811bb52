//! Uniform grids: one [`Axis`] per spatial direction plus the units the field is expressed in.
//!
//! A grid is *uniform*: every axis has a constant spacing. The spacing is signed. A PIV image whose
//! row index grows downward while the physical y coordinate grows upward has a negative y
//! spacing; every derivative taken through [`Axis::spacing`] then has the right sign, so the
//! rotation sense comes out right without any special case in the detection code.

use serde::{Deserialize, Serialize};

use crate::error::FieldError;

/// Relative tolerance on the spacing of coordinates that are meant to be uniform.
///
/// Each coordinate may deviate from the uniform line by this fraction of a spacing (plus float32
/// rounding, see [`Axis::from_coordinates`]). Coordinates computed as `x0 + i·dx` in float64 are
/// far closer; any deliberately stretched grid is far further off.
pub const DEFAULT_UNIFORM_TOLERANCE: f64 = 1e-4;

/// One uniformly spaced axis: `coordinate(i) = origin + i · spacing` for `i` in `0..len`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Axis {
    len: usize,
    origin: f64,
    spacing: f64,
}

impl Axis {
    /// A uniform axis. The spacing may be negative (coordinates decreasing with index) but must
    /// be finite and non-zero; the origin must be finite; the axis must hold at least one point.
    pub fn new(name: &str, len: usize, origin: f64, spacing: f64) -> Result<Self, FieldError> {
        if len == 0 {
            return Err(FieldError::EmptyAxis {
                axis: name.to_string(),
            });
        }
        if !spacing.is_finite() || spacing == 0.0 {
            return Err(FieldError::BadSpacing {
                axis: name.to_string(),
                spacing,
            });
        }
        if !origin.is_finite() {
            return Err(FieldError::BadCoordinates {
                axis: name.to_string(),
                reason: format!("origin {origin} is not finite"),
            });
        }
        Ok(Self {
            len,
            origin,
            spacing,
        })
    }

    /// An axis from explicit coordinates, which must be finite, strictly monotonic and uniform:
    /// every point within `rel_tol` of a spacing (plus float32 rounding of the largest
    /// coordinate) of the straight line through the end points. Non-uniform coordinates are rejected, never
    /// treated as uniform.
    pub fn from_coordinates(name: &str, coords: &[f64], rel_tol: f64) -> Result<Self, FieldError> {
        let bad = |reason: String| FieldError::BadCoordinates {
            axis: name.to_string(),
            reason,
        };
        match coords {
            [] => Err(FieldError::EmptyAxis {
                axis: name.to_string(),
            }),
            [only] => {
                if only.is_finite() {
                    // A single point says nothing about spacing; the caller must supply one.
                    Err(bad("a single coordinate does not define a spacing; give the spacing explicitly".into()))
                } else {
                    Err(bad(format!("coordinate {only} is not finite")))
                }
            }
            _ => {
                if let Some((i, c)) = coords.iter().enumerate().find(|(_, c)| !c.is_finite()) {
                    return Err(bad(format!("coordinate {i} is {c}")));
                }
                let n = coords.len();
                let spacing = (coords[n - 1] - coords[0]) / (n - 1) as f64;
                if spacing == 0.0 {
                    return Err(bad("all coordinates are equal".into()));
                }
                // Each point may sit off the straight line by `rel_tol` of a spacing, plus the
                // rounding of coordinates stored as float32 (most PIV exports), which a test
                // can never tell from a real deviation anyway.
                let magnitude = coords.iter().fold(0.0_f64, |m, c| m.max(c.abs()));
                let allowed = rel_tol * spacing.abs() + 4.0 * f64::from(f32::EPSILON) * magnitude;
                for (i, &c) in coords.iter().enumerate() {
                    let expected = coords[0] + i as f64 * spacing;
                    if (c - expected).abs() > allowed {
                        return Err(bad(format!(
                            "non-uniform spacing: coordinate {i} is {c:e}, a uniform grid puts it at \
                             {expected:e} (mean spacing {spacing:e}, tolerance {allowed:e}); \
                             vortcat needs a uniform grid"
                        )));
                    }
                }
                if coords.windows(2).any(|p| (p[1] - p[0]) * spacing <= 0.0) {
                    return Err(bad("coordinates are not strictly monotonic".into()));
                }
                Self::new(name, n, coords[0], spacing)
            }
        }
    }

    /// Number of points.
    pub fn len(&self) -> usize {
        self.len
    }

    /// Always false: an axis holds at least one point (kept for clippy's `len_without_is_empty`).
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// Coordinate of index 0.
    pub fn origin(&self) -> f64 {
        self.origin
    }

    /// Signed spacing between neighbouring points.
    pub fn spacing(&self) -> f64 {
        self.spacing
    }

    /// Coordinate of index `i` (also valid for fractional or out-of-range indices).
    pub fn coordinate(&self, i: f64) -> f64 {
        self.origin + i * self.spacing
    }

    /// Fractional index of coordinate `c`.
    pub fn index_of(&self, c: f64) -> f64 {
        (c - self.origin) / self.spacing
    }

    /// Smallest and largest coordinate.
    pub fn extent(&self) -> (f64, f64) {
        let last = self.coordinate((self.len - 1) as f64);
        (self.origin.min(last), self.origin.max(last))
    }

    /// All coordinates, in index order.
    pub fn coordinates(&self) -> Vec<f64> {
        (0..self.len).map(|i| self.coordinate(i as f64)).collect()
    }
}

/// Units a field is expressed in. Free text, carried through to the catalog; the defaults are SI.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Units {
    /// Unit of the coordinates and spacings, e.g. `m` or `mm`.
    pub length: String,
    /// Unit of the velocity components, e.g. `m/s`.
    pub velocity: String,
}

impl Default for Units {
    fn default() -> Self {
        Self {
            length: "m".into(),
            velocity: "m/s".into(),
        }
    }
}

/// A uniform 2D (plane) or 3D (volume) grid.
///
/// Array axis order is fixed crate-wide: planes are indexed `[iy, ix]`, volumes `[iz, iy, ix]`
/// (x varies fastest in memory), as NumPy, h5py and NetCDF users write `u[y, x]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Grid {
    x: Axis,
    y: Axis,
    z: Option<Axis>,
    units: Units,
}

impl Grid {
    /// A plane grid.
    pub fn plane(x: Axis, y: Axis, units: Units) -> Self {
        Self {
            x,
            y,
            z: None,
            units,
        }
    }

    /// A volume grid.
    pub fn volume(x: Axis, y: Axis, z: Axis, units: Units) -> Self {
        Self {
            x,
            y,
            z: Some(z),
            units,
        }
    }

    /// The x axis (array axis -1).
    pub fn x(&self) -> &Axis {
        &self.x
    }

    /// The y axis (array axis -2).
    pub fn y(&self) -> &Axis {
        &self.y
    }

    /// The z axis of a volume (array axis 0); `None` for a plane.
    pub fn z(&self) -> Option<&Axis> {
        self.z.as_ref()
    }

    /// Units of coordinates and velocities.
    pub fn units(&self) -> &Units {
        &self.units
    }

    /// 2 for a plane, 3 for a volume.
    pub fn ndim(&self) -> usize {
        if self.z.is_some() {
            3
        } else {
            2
        }
    }

    /// Shape in array order: `[ny, nx]` or `[nz, ny, nx]`.
    pub fn shape(&self) -> Vec<usize> {
        match &self.z {
            Some(z) => vec![z.len(), self.y.len(), self.x.len()],
            None => vec![self.y.len(), self.x.len()],
        }
    }

    /// Number of grid points.
    pub fn num_points(&self) -> usize {
        self.shape().iter().product()
    }

    /// The in-plane cell area |dx·dy| (used for circulation sums).
    pub fn cell_area(&self) -> f64 {
        (self.x.spacing() * self.y.spacing()).abs()
    }

    /// The same grid with new units.
    pub fn with_units(mut self, units: Units) -> Self {
        self.units = units;
        self
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn uniform_coordinates_give_origin_and_spacing() {
        let coords: Vec<f64> = (0..50).map(|i| 0.25 + 0.5 * i as f64).collect();
        let axis = Axis::from_coordinates("x", &coords, DEFAULT_UNIFORM_TOLERANCE).unwrap();
        assert_eq!(axis.len(), 50);
        // Exact binary fractions: the only error is the final division, well below 1e-12.
        assert_relative_eq!(axis.spacing(), 0.5, max_relative = 1e-12);
        assert_relative_eq!(axis.origin(), 0.25, max_relative = 1e-12);
        assert_eq!(axis.extent(), (0.25, 0.25 + 0.5 * 49.0));
    }

    #[test]
    fn decreasing_coordinates_give_negative_spacing() {
        // Image convention: row 0 at the top, y decreasing downward.
        let coords: Vec<f64> = (0..10).map(|i| 9.0 - i as f64).collect();
        let axis = Axis::from_coordinates("y", &coords, DEFAULT_UNIFORM_TOLERANCE).unwrap();
        assert_relative_eq!(axis.spacing(), -1.0, max_relative = 1e-12);
        assert_eq!(axis.extent(), (0.0, 9.0));
        assert_relative_eq!(axis.index_of(3.0), 6.0, max_relative = 1e-12);
    }

    #[test]
    fn non_uniform_coordinates_are_rejected() {
        let coords = [0.0, 1.0, 2.0, 3.5, 4.0];
        let err = Axis::from_coordinates("x", &coords, DEFAULT_UNIFORM_TOLERANCE).unwrap_err();
        assert!(err.to_string().contains("non-uniform"), "{err}");
    }

    #[test]
    fn zero_negative_and_nan_spacing_rules() {
        assert!(Axis::new("x", 4, 0.0, 0.0).is_err());
        assert!(Axis::new("x", 4, 0.0, f64::NAN).is_err());
        assert!(Axis::new("x", 0, 0.0, 1.0).is_err());
        // Negative spacing is legal at this level: it encodes orientation.
        assert!(Axis::new("y", 4, 0.0, -1.0).is_ok());
    }

    #[test]
    fn float32_rounded_coordinates_pass() {
        // Coordinates stored as f32, as most PIV exports do.
        let coords: Vec<f64> = (0..2048)
            .map(|i| (0.001_f64 * i as f64 + 0.1) as f32 as f64)
            .collect();
        assert!(Axis::from_coordinates("x", &coords, DEFAULT_UNIFORM_TOLERANCE).is_ok());
    }
}
