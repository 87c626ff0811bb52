//! Vortex tubes ("worms") in 3D velocity fields: slab-streamed detection, union–find
//! labelling across slabs and periodic boundaries, core lines, cross-section fits of 2D vortex
//! models, axial stretching and the Burgers strain–diffusion balance.
//!
//! # Overview
//! - [`VolumeSource`]: a volume handed out in blocks of z-planes ([`MemoryVolume`] for a
//!   field in memory, [`ReaderVolume`] for a file through `vortcat-field`).
//! - [`survey_tubes`] runs three streamed passes (statistics, regions, stations; see
//!   [`survey`]) and returns a [`TubeSurvey`]: per-station results ([`Station`]) and per-tube
//!   summaries ([`Tube`]).
//! - At each station the velocity is sampled on the plane normal to the local axis, the
//!   station's convection and the axial component are removed, and Lamb–Oseen and Burgers
//!   models are fitted with `vortcat-fit` ([`station`]).
//!
//! # Physics
//! The axial strain rate at a station is γ_axial = ê·S·ê, with S the strain-rate tensor and ê
//! the local axis. A Burgers vortex (Burgers 1948) — u_θ = Γ/(2πr)(1 − exp(−r²/rc²)),
//! u_r = −γr/2, u_z = γz — is steady when stretching balances viscous diffusion,
//! rc² = 4ν/γ; the *balance ratio* rc/√(4ν/γ_axial) is then 1. With the Kolmogorov scales
//! η = (ν³/ε)^¼ and τ_η = (ν/ε)^½ (Kolmogorov 1941; ε = 2ν⟨S:S⟩) the survey reports rc/η,
//! Γ/ν and γ_axial·τ_η; intense worms in isotropic turbulence have rc of a few η
//! (Jiménez, Wray, Saffman & Rogallo 1993).
//!
//! # Conventions
//! Those of `vortcat-field`: arrays `[iz, iy, ix]`, signed spacings, right-handed axes, NaN
//! for invalid vectors, units of the input. Results do not depend on the slab size or the
//! number of threads. The crate never prints; it logs through `log` at debug level.
//!
//! # Reference
//! J. M. Burgers (1948), *Adv. Appl. Mech.* 1, 171–199. A. N. Kolmogorov (1941), *Dokl. Akad.
//! Nauk SSSR* 30, 301–305. J. Jiménez, A. A. Wray, P. G. Saffman & R. S. Rogallo (1993),
//! *J. Fluid Mech.* 255, 65–90. J. Jeong & F. Hussain (1995), *J. Fluid Mech.* 285, 69–94.
#![deny(missing_docs)]
// Tensor and axis loops index several arrays at once, as the formulas do (Aᵢⱼ, eᵢ Sᵢⱼ eⱼ).
#![allow(clippy::needless_range_loop)]

pub mod error;
mod label;
pub mod settings;
mod slab;
pub mod source;
pub mod station;
pub mod survey;
mod trace;

pub use error::TubeError;
pub use settings::{Kolmogorov, TubeSettings};
pub use source::{MemoryVolume, ReaderVolume, VolumeSource};
pub use station::Station;
pub use survey::{survey_tubes, KolmogorovScales, SurveyStats, Tube, TubeSurvey};
