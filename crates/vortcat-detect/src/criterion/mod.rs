//! Vortex criteria as scalar fields, one published criterion per file, and the [`Criterion`]
//! enum that selects one by name.
//!
//! Every criterion has a point function on the gradient tensor (used through the fused paths
//! [`crate::gradient::map_plane`] / [`crate::gradient::map_volume`], so no tensor field is
//! stored) and field functions on `vortcat-field` types. The detection works on the
//! *strength* of a criterion ([`Criterion::strength`]): a value that is larger the more
//! vortical the point (|ω|, Q, −λ2, λci, Δ, |Γ1|, |Γ2|).

use std::fmt;
use std::str::FromStr;

use ndarray::{Array2, Array3};
use vortcat_field::{PlaneField, VolumeField};

use crate::error::DetectError;
use crate::gradient::{EdgeOrder, GradientScheme};

pub mod delta;
pub mod divergence;
pub mod gamma;
pub mod lambda2;
pub mod q;
pub mod swirling_strength;
pub mod vorticity;

/// A vortex criterion, selectable by name (`vorticity`, `q`, `lambda2`, `swirling-strength`,
/// `delta`, `gamma1`, `gamma2`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub enum Criterion {
    /// Vorticity: ω_z in a plane, |ω| in a volume ([`vorticity`]).
    Vorticity,
    /// Q of Hunt, Wray & Moin (1988) ([`q`]).
    Q,
    /// λ2 of Jeong & Hussain (1995) ([`lambda2`]).
    Lambda2,
    /// Swirling strength λci of Zhou et al. (1999) ([`swirling_strength`]). Default: same zero
    /// set as Δ, units of a rate (so thresholds scale linearly with the flow), and the usual
    /// criterion of PIV vortex-population studies.
    #[default]
    SwirlingStrength,
    /// Discriminant Δ of Chong, Perry & Cantwell (1990) ([`delta`]).
    Delta,
    /// Γ1 of Graftieaux, Michard & Grosjean (2001) ([`gamma`]), planes only.
    Gamma1,
    /// Γ2 of Graftieaux, Michard & Grosjean (2001) ([`gamma`]), planes only.
    Gamma2,
}

impl Criterion {
    /// All criteria.
    pub const ALL: [Criterion; 7] = [
        Criterion::Vorticity,
        Criterion::Q,
        Criterion::Lambda2,
        Criterion::SwirlingStrength,
        Criterion::Delta,
        Criterion::Gamma1,
        Criterion::Gamma2,
    ];

    /// Name used in configuration files and catalogs.
    pub fn name(self) -> &'static str {
        match self {
            Criterion::Vorticity => "vorticity",
            Criterion::Q => "q",
            Criterion::Lambda2 => "lambda2",
            Criterion::SwirlingStrength => "swirling-strength",
            Criterion::Delta => "delta",
            Criterion::Gamma1 => "gamma1",
            Criterion::Gamma2 => "gamma2",
        }
    }

    /// Whether the criterion is defined on volumes (Γ1 and Γ2 are planar).
    pub fn supports_volume(self) -> bool {
        !matches!(self, Criterion::Gamma1 | Criterion::Gamma2)
    }

    /// Whether the raw value carries the rotation sense in its sign (ω_z, Γ1, Γ2 in a plane).
    pub fn is_signed(self) -> bool {
        matches!(
            self,
            Criterion::Vorticity | Criterion::Gamma1 | Criterion::Gamma2
        )
    }

    /// Detection strength of a raw value: larger = more vortical. |value| for the signed
    /// criteria, −λ2 for λ2, the value itself otherwise. NaN stays NaN.
    #[inline]
    pub fn strength(self, value: f64) -> f64 {
        match self {
            Criterion::Vorticity | Criterion::Gamma1 | Criterion::Gamma2 => value.abs(),
            Criterion::Lambda2 => -value,
            Criterion::Q | Criterion::SwirlingStrength | Criterion::Delta => value,
        }
    }

    /// The raw criterion field of a plane, `[iy, ix]`, NaN where not computable.
    /// `gamma_radius` (grid steps) is used by Γ1 and Γ2 only.
    pub fn plane_field(
        self,
        field: &PlaneField,
        scheme: GradientScheme,
        edge: EdgeOrder,
        gamma_radius: usize,
    ) -> Result<Array2<f64>, DetectError> {
        match self {
            Criterion::Vorticity => vorticity::plane(field, scheme, edge),
            Criterion::Q => q::plane(field, scheme, edge),
            Criterion::Lambda2 => lambda2::plane(field, scheme, edge),
            Criterion::SwirlingStrength => swirling_strength::plane(field, scheme, edge),
            Criterion::Delta => delta::plane(field, scheme, edge),
            Criterion::Gamma1 => gamma::gamma1(field, gamma_radius),
            Criterion::Gamma2 => gamma::gamma2(field, gamma_radius),
        }
    }

    /// The raw criterion field of a volume, `[iz, iy, ix]`, `f32` (NaN where not computable).
    /// Vorticity is reported as |ω|. Errors: [`DetectError::Unsupported`] for Γ1 and Γ2.
    pub fn volume_field(
        self,
        field: &VolumeField,
        scheme: GradientScheme,
        edge: EdgeOrder,
    ) -> Result<Array3<f32>, DetectError> {
        match self {
            Criterion::Vorticity => vorticity::volume_magnitude_field(field, scheme, edge),
            Criterion::Q => q::volume(field, scheme, edge),
            Criterion::Lambda2 => lambda2::volume(field, scheme, edge),
            Criterion::SwirlingStrength => swirling_strength::volume(field, scheme, edge),
            Criterion::Delta => delta::volume(field, scheme, edge),
            Criterion::Gamma1 | Criterion::Gamma2 => Err(DetectError::Unsupported {
                criterion: self.name(),
                ndim: 3,
            }),
        }
    }
}

impl fmt::Display for Criterion {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Criterion {
    type Err = DetectError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Criterion::ALL
            .into_iter()
            .find(|c| c.name() == s)
            .ok_or_else(|| DetectError::UnknownCriterion {
                name: s.to_string(),
            })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip_and_unknown_names_are_reported() {
        for c in Criterion::ALL {
            assert_eq!(c.name().parse::<Criterion>().unwrap(), c);
            assert_eq!(c.to_string(), c.name());
        }
        assert_eq!(
            "lambda-2".parse::<Criterion>().unwrap_err(),
            DetectError::UnknownCriterion {
                name: "lambda-2".into()
            }
        );
    }

    #[test]
    fn strength_orients_every_criterion_towards_vortices() {
        // λ2 < 0 in cores (Jeong & Hussain 1995); signed criteria by magnitude.
        assert!(Criterion::Lambda2.strength(-2.0) > Criterion::Lambda2.strength(1.0));
        assert!(Criterion::Vorticity.strength(-3.0) > Criterion::Vorticity.strength(1.0));
        assert!(Criterion::Q.strength(2.0) > Criterion::Q.strength(-1.0));
        assert!(Criterion::Gamma2.strength(f64::NAN).is_nan());
        assert!(!Criterion::Gamma1.supports_volume() && Criterion::Delta.supports_volume());
    }
}
