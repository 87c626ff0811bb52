//! Least-squares fits of vortex models (Lamb–Oseen, Burgers, Rankine, Vatistas) to the
//! velocity vectors round a detected vortex core, returning parameters with calibrated
//! uncertainties, a model choice and quality flags.
//!
//! # Overview
//! - [`Window`] holds the valid vectors inside a circle round a candidate (from plain slices or
//!   a `vortcat_field::PlaneField`), with counts of invalid and out-of-domain nodes.
//! - [`model`] has one type per model, each implementing [`VortexModel`] (velocity at a point
//!   with analytic Jacobian). Shared parameters are the centre, the convection velocity and
//!   optionally a uniform trace-free background gradient.
//! - [`fit`] starts from an [`InitialGuess`] (centre from the detection, circulation from the
//!   line integral, core radius from the peak azimuthal velocity, linear parameters solved
//!   exactly) and runs a projected Levenberg–Marquardt solver on the argmin framework with
//!   bounds, an optional robust [`Loss`] and optional PIV window averaging ([`PivAveraging`]).
//! - [`FitResult`] carries parameters, standard errors from `σ²(JᵀJ)⁻¹`, RMS residual, R²,
//!   condition number, derived quantities, a [`FitStatus`] and [`Flag`]s.
//! - [`fit_and_select`] fits several models and chooses by AIC or BIC ([`Selection`]); of the
//!   nested pair Lamb–Oseen/Burgers, the second starts from the first one's optimum.
//!
//! Non-convergence is reported in the result, never as an error; errors ([`FitError`]) are for
//! inputs that make a fit meaningless. The crate never prints; it logs through `log` at most.
//!
//! # Example
//! Fit a Lamb–Oseen vortex to noise-free synthetic data on a 0.1-spaced grid:
//! ```
//! use vortcat_fit::{fit, InitialGuess, FitSettings, FitStatus, LambOseen, VortexModel, Window};
//!
//! let (gamma, rc, centre) = (2.0, 0.5, [0.05, -0.03]);
//! let (mut x, mut y, mut u, mut v) = (vec![], vec![], vec![], vec![]);
//! for j in -20..=20 {
//!     for i in -20..=20 {
//!         let (xi, yj) = (0.1 * i as f64, 0.1 * j as f64);
//!         let [ui, vi] = LambOseen.velocity(xi - centre[0], yj - centre[1], &[gamma, rc]);
//!         x.push(xi);
//!         y.push(yj);
//!         u.push(ui + 0.3); // convected with uc = 0.3
//!         v.push(vi);
//!     }
//! }
//! let window = Window::from_samples([0.0, 0.0], 1.5, [0.1, 0.1], &x, &y, &u, &v)?;
//! let result = fit(&LambOseen, &window, &InitialGuess::at([0.0, 0.0]), &FitSettings::default())?;
//! assert_eq!(result.status, FitStatus::Converged);
//! assert!((result.circulation() - gamma).abs() < 1e-8);
//! assert!((result.core_radius() - rc).abs() < 1e-8);
//! assert!((result.parameters.convection[0] - 0.3).abs() < 1e-8);
//! assert!(result.flags.is_empty());
//! # Ok::<(), vortcat_fit::FitError>(())
//! ```
#![deny(missing_docs)]

pub mod averaging;
pub mod error;
mod fastmath;
pub mod fit;
pub mod flags;
pub mod initial;
mod kernel;
mod linalg;
pub mod loss;
pub mod model;
pub mod result;
pub mod select;
mod serde_nan;
pub mod settings;
mod solver;
mod uncertainty;
pub mod window;

pub use averaging::PivAveraging;
pub use error::FitError;
pub use fit::{fit, fit_from_start, fit_model};
pub use flags::Flag;
pub use initial::{CirculationGuess, InitialGuess};
pub use loss::Loss;
pub use model::{
    Burgers, LambOseen, Model, ModelKind, Rankine, Vatistas, ViscousBalance, VortexModel,
    GAUSSIAN_PEAK_RADIUS_RATIO, GAUSSIAN_PEAK_VELOCITY_FACTOR,
};
pub use result::{Derived, Estimate, FitResult, FitStatus, Parameters};
pub use select::{fit_and_select, InflowSignificance, InformationCriterion, Selection};
pub use settings::{FitSettings, FitSettingsBuilder, FlagThresholds};
pub use window::Window;
