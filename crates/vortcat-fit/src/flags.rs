//! Quality flags: when not to believe a fit. Rules and thresholds are tabulated in
//! `docs/flags.md`; thresholds live in [`crate::FlagThresholds`].

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use crate::error::FitError;
use crate::result::FitStatus;
use crate::settings::FlagThresholds;

/// A quality flag with a stable snake_case name.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Flag {
    /// Core radius below `min_core_spacings` grid spacings.
    CoreUnderResolved,
    /// More than `max_outside_fraction` of the window's grid nodes lie outside the domain.
    WindowClippedByEdge,
    /// More than `max_invalid_fraction` of the window's vectors are invalid.
    WindowInvalidVectors,
    /// The solver did not report convergence.
    NotConverged,
    /// A parameter ended on one of its bounds.
    ParameterAtBound,
    /// The centre moved more than `max_centre_shift` core radii from the detection.
    CentreMoved,
    /// R² of the velocity in the window below `min_r_squared`.
    LowRSquared,
    /// Another vortex candidate lies inside the window.
    NeighbourInWindow,
    /// Relative standard error of Γ or rc above `max_relative_uncertainty`.
    LargeUncertainty,
    /// `JᵀJ` is singular at the optimum: some parameter is not determined by the data.
    SingularCovariance,
}

impl Flag {
    /// Every flag, in table order.
    pub const ALL: [Flag; 10] = [
        Flag::CoreUnderResolved,
        Flag::WindowClippedByEdge,
        Flag::WindowInvalidVectors,
        Flag::NotConverged,
        Flag::ParameterAtBound,
        Flag::CentreMoved,
        Flag::LowRSquared,
        Flag::NeighbourInWindow,
        Flag::LargeUncertainty,
        Flag::SingularCovariance,
    ];

    /// Stable name.
    pub fn name(self) -> &'static str {
        match self {
            Flag::CoreUnderResolved => "core_under_resolved",
            Flag::WindowClippedByEdge => "window_clipped_by_edge",
            Flag::WindowInvalidVectors => "window_invalid_vectors",
            Flag::NotConverged => "not_converged",
            Flag::ParameterAtBound => "parameter_at_bound",
            Flag::CentreMoved => "centre_moved",
            Flag::LowRSquared => "low_r_squared",
            Flag::NeighbourInWindow => "neighbour_in_window",
            Flag::LargeUncertainty => "large_uncertainty",
            Flag::SingularCovariance => "singular_covariance",
        }
    }
}

impl fmt::Display for Flag {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Flag {
    type Err = FitError;
    fn from_str(s: &str) -> Result<Self, FitError> {
        Flag::ALL
            .into_iter()
            .find(|f| f.name() == s)
            .ok_or_else(|| FitError::UnknownFlag(s.to_string()))
    }
}

/// What the flag rules look at.
#[derive(Debug, Clone, Copy)]
pub(crate) struct FlagInputs {
    pub core_radius: f64,
    pub spacing: f64,
    pub invalid_fraction: f64,
    pub outside_fraction: f64,
    pub status: FitStatus,
    pub at_bound: bool,
    pub centre_shift: f64,
    pub r_squared: f64,
    pub neighbours_inside: usize,
    pub relative_error_circulation: f64,
    pub relative_error_core_radius: f64,
    pub covariance_ok: bool,
}

/// Apply the rules of `docs/flags.md`. NaN comparisons are written so that an undefined
/// statistic raises the flag (hence the negated comparisons).
#[allow(clippy::neg_cmp_op_on_partial_ord)]
pub(crate) fn evaluate(i: &FlagInputs, t: &FlagThresholds) -> Vec<Flag> {
    let mut f = Vec::new();
    if !(i.core_radius >= t.min_core_spacings * i.spacing) {
        f.push(Flag::CoreUnderResolved);
    }
    if i.outside_fraction > t.max_outside_fraction {
        f.push(Flag::WindowClippedByEdge);
    }
    if i.invalid_fraction > t.max_invalid_fraction {
        f.push(Flag::WindowInvalidVectors);
    }
    if i.status != FitStatus::Converged {
        f.push(Flag::NotConverged);
    }
    if i.at_bound {
        f.push(Flag::ParameterAtBound);
    }
    if !(i.centre_shift <= t.max_centre_shift * i.core_radius) {
        f.push(Flag::CentreMoved);
    }
    if !(i.r_squared >= t.min_r_squared) {
        f.push(Flag::LowRSquared);
    }
    if i.neighbours_inside > 0 {
        f.push(Flag::NeighbourInWindow);
    }
    let worst = i
        .relative_error_circulation
        .max(i.relative_error_core_radius);
    if !(worst <= t.max_relative_uncertainty) || !i.covariance_ok {
        f.push(Flag::LargeUncertainty);
    }
    if !i.covariance_ok {
        f.push(Flag::SingularCovariance);
    }
    f
}

#[cfg(test)]
mod tests {
    use super::*;

    fn good() -> FlagInputs {
        FlagInputs {
            core_radius: 1.0,
            spacing: 0.1,
            invalid_fraction: 0.0,
            outside_fraction: 0.0,
            status: FitStatus::Converged,
            at_bound: false,
            centre_shift: 0.01,
            r_squared: 0.99,
            neighbours_inside: 0,
            relative_error_circulation: 0.01,
            relative_error_core_radius: 0.01,
            covariance_ok: true,
        }
    }

    #[test]
    fn names_are_stable_and_round_trip() {
        for f in Flag::ALL {
            assert_eq!(f.name().parse::<Flag>().unwrap(), f);
            assert_eq!(
                serde_json::to_string(&f).unwrap(),
                format!("\"{}\"", f.name())
            );
        }
        assert!("bogus".parse::<Flag>().is_err());
    }

    #[test]
    fn each_rule_fires_at_its_threshold() {
        let t = FlagThresholds::default();
        assert!(evaluate(&good(), &t).is_empty());
        type Case = (fn(&mut FlagInputs), Flag);
        let cases: [Case; 9] = [
            (|i| i.core_radius = 0.199, Flag::CoreUnderResolved),
            (|i| i.outside_fraction = 0.02, Flag::WindowClippedByEdge),
            (|i| i.invalid_fraction = 0.06, Flag::WindowInvalidVectors),
            (|i| i.status = FitStatus::MaxIterations, Flag::NotConverged),
            (|i| i.at_bound = true, Flag::ParameterAtBound),
            (|i| i.centre_shift = 1.01, Flag::CentreMoved),
            (|i| i.r_squared = f64::NAN, Flag::LowRSquared),
            (|i| i.neighbours_inside = 1, Flag::NeighbourInWindow),
            (
                |i| i.relative_error_core_radius = 0.21,
                Flag::LargeUncertainty,
            ),
        ];
        for (set, flag) in cases {
            let mut i = good();
            set(&mut i);
            assert_eq!(evaluate(&i, &t), vec![flag]);
        }
        let mut i = good();
        i.core_radius = 0.2; // exactly 2 spacings: not under-resolved
        assert!(evaluate(&i, &t).is_empty());
    }
}
