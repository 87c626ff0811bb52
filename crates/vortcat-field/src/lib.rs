//! Gridded velocity fields for vortcat: uniform grids, plane and volume snapshots with validity
//! masks, and lazy readers for NumPy, HDF5 (including MATLAB v7.3 and NetCDF-4) and CSV files.
//!
//! # Conventions (written once, used by every vortcat crate)
//! - **Axis order.** Plane arrays are indexed `[iy, ix]`, volume arrays `[iz, iy, ix]`: x varies
//!   fastest, as in `u[y, x]` written by NumPy, h5py or NetCDF. Readers translate other layouts
//!   (Fortran-order `.npy`, MATLAB's reversed axes) into this one.
//! - **Coordinates and orientation.** Every [`Axis`] is uniform with a *signed* spacing. A y axis
//!   that decreases with row index (image convention) has a negative spacing, so derivatives, and
//!   with them the rotation sense, come out right without special cases.
//! - **Rotation sense.** Positive rotation is counter-clockwise in the x–y plane seen from +z
//!   (right-handed axes): positive ω_z = ∂v/∂x − ∂u/∂y, sense +1.
//! - **Units** travel with the grid ([`Units`]): coordinates in `Units::length`, velocities in
//!   `Units::velocity`. vortcat never converts units silently.
//! - **Masked vectors.** A vector is invalid when any component is NaN in the input or when a
//!   mask marks it rejected. Invalid vectors are `false` in `valid()` and NaN in every component.
//!   Infinite values are errors, not masks.
//! - **Snapshots** are identified by file and stack index ([`SnapshotId`]).
//!
//! # Example
//! A Lamb–Oseen vortex sampled on a small grid:
//! ```
//! use ndarray::Array2;
//! use vortcat_field::{Axis, Grid, PlaneField, Units};
//!
//! let (nx, ny, spacing) = (32, 24, 0.5e-3);
//! let grid = Grid::plane(
//!     Axis::new("x", nx, -7.75e-3, spacing)?, // half-cell offset: no point at r = 0
//!     Axis::new("y", ny, -5.75e-3, spacing)?,
//!     Units::default(),
//! );
//! let (circulation, core_radius) = (1e-3_f64, 2e-3_f64);
//! let mut u = Array2::zeros((ny, nx));
//! let mut v = Array2::zeros((ny, nx));
//! for iy in 0..ny {
//!     for ix in 0..nx {
//!         let (x, y) = (grid.x().coordinate(ix as f64), grid.y().coordinate(iy as f64));
//!         let r2 = x * x + y * y;
//!         let k = circulation / (2.0 * std::f64::consts::PI * r2) * (1.0 - (-r2 / core_radius.powi(2)).exp());
//!         u[[iy, ix]] = -k * y;
//!         v[[iy, ix]] = k * x;
//!     }
//! }
//! let field = PlaneField::new(grid, u, v, None, None)?;
//! assert!(field.valid().iter().all(|&ok| ok));
//! # Ok::<(), vortcat_field::FieldError>(())
//! ```
#![deny(missing_docs)]

pub mod error;
pub mod format;
pub mod grid;
pub mod snapshot;
pub mod spec;

pub use error::FieldError;
pub use format::{
    open, open_bytes, ArrayInfo, GridOrigin, SnapshotReader, Snapshots, SourceInfo, VolumePlanes,
};
pub use grid::{Axis, Grid, Units, DEFAULT_UNIFORM_TOLERANCE};
pub use snapshot::{Field, PlaneField, Snapshot, SnapshotId, VolumeField};
pub use spec::{FormatHint, Geometry, InputSpec, Layout, TimeAxis};
