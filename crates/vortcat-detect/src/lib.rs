//! Turns a velocity snapshot from `vortcat-field` into vortex-core candidates, using velocity
//! gradients, published swirl criteria and connected-region analysis.
//!
//! # Overview
//! - [`gradient`]: the velocity-gradient tensor on uniform grids with 2nd-order central,
//!   4th-order central and noise-robust least-squares stencils ([`GradientScheme`]), one-sided
//!   at edges and mask-aware (a stencil that would touch a masked vector narrows or becomes
//!   one-sided; a point with no possible stencil is *not computed*, never guessed). Fused paths
//!   ([`gradient::map_plane`], [`gradient::map_volume`], and [`gradient::map_plane_into`] /
//!   [`gradient::map_volume_kernel_into`] to reuse an output array across snapshots) evaluate a
//!   function of the tensor without storing any tensor field; in 3D the tensor exists only for
//!   one row of points at a time.
//! - [`criterion`]: vorticity, Q (Hunt, Wray & Moin 1988), λ2 (Jeong & Hussain 1995),
//!   swirling strength λci with swirl axis and λcr/λci (Zhou et al. 1999; Chakraborty et al.
//!   2005), Δ (Chong, Perry & Cantwell 1990), Γ1 and Γ2 (Graftieaux, Michard & Grosjean 2001),
//!   and the in-plane divergence (−∂w/∂z for incompressible flow), one file per criterion,
//!   selectable by name through [`Criterion`].
//! - [`candidate`]: thresholding ([`Threshold`]), 8/26-connected labelling, minimum size,
//!   splitting of regions with separated peaks, and per-candidate centre, sense, radius, peak,
//!   distances, region and flags ([`PlaneCandidate`], [`VolumeCandidate`]).
//! - [`DetectionSettings`]: every choice with a documented default; [`detect_plane`] and
//!   [`detect_volume`] run the whole pipeline.
//!
//! Values not computed are NaN in criterion fields and are never part of a candidate region;
//! conditions that bias a candidate are listed in its `flags`. The crate never prints; it logs
//! through the `log` facade at debug level. Results do not depend on the number of rayon
//! threads.
//!
//! # Example
//! A Lamb–Oseen vortex (circulation Γ, core radius r_c) centred off-grid, found with the
//! default settings (λci, least-squares gradient, 1.5 × rms threshold):
//! ```
//! use ndarray::Array2;
//! use vortcat_field::{Axis, Grid, PlaneField, Units};
//! use vortcat_detect::{detect_plane, DetectionSettings};
//!
//! let (n, h) = (64, 1e-3); // 64 × 64 vectors, 1 mm apart
//! let grid = Grid::plane(Axis::new("x", n, 0.0, h)?, Axis::new("y", n, 0.0, h)?, Units::default());
//! let (gamma, rc, xc, yc) = (2e-3, 5e-3, 0.0312, 0.0297);
//! let velocity = |ix: usize, iy: usize| {
//!     let (x, y) = (grid.x().coordinate(ix as f64) - xc, grid.y().coordinate(iy as f64) - yc);
//!     let r2 = x * x + y * y;
//!     let k = gamma / (2.0 * std::f64::consts::PI * r2) * (1.0 - (-r2 / (rc * rc)).exp());
//!     (-k * y, k * x)
//! };
//! let u = Array2::from_shape_fn((n, n), |(iy, ix)| velocity(ix, iy).0);
//! let v = Array2::from_shape_fn((n, n), |(iy, ix)| velocity(ix, iy).1);
//! let field = PlaneField::new(grid, u, v, None, None)?;
//!
//! let found = detect_plane(&field, &DetectionSettings::default())?;
//! assert_eq!(found.len(), 1);
//! let c = &found[0];
//! assert_eq!(c.sense, 1); // counter-clockwise
//! assert!((c.peak[0] - xc).abs() < 0.1 * h && (c.peak[1] - yc).abs() < 0.1 * h);
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
#![deny(missing_docs)]

pub mod candidate;
pub mod criterion;
pub mod eigen;
pub mod error;
pub mod gradient;
pub mod settings;
pub mod tensor;

pub use candidate::{
    detect_plane, detect_plane_report, detect_volume, detect_volume_report, plane_candidates,
    volume_candidates, CandidateFlag, Detection, PlaneCandidate, VolumeCandidate,
};
pub use criterion::Criterion;
pub use error::DetectError;
pub use gradient::{EdgeOrder, GradientScheme, PlaneGradient};
pub use settings::{DetectionSettings, DetectionSettingsBuilder, SplitSettings, Threshold};
pub use tensor::{Tensor2, Tensor3};
