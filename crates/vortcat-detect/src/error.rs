//! Errors of the detection crate. Every variant carries the offending values, so the binary can
//! tell the user what to change without re-deriving it.

/// What can go wrong while computing gradients, criteria or candidates.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DetectError {
    /// An axis has too few points to take any derivative along it (a one-sided first-order
    /// difference needs two points).
    #[error(
        "axis {axis} has {len} point(s); at least {needed} are needed to differentiate along it"
    )]
    AxisTooShort {
        /// Axis name (`x`, `y` or `z`).
        axis: &'static str,
        /// Number of points on the axis.
        len: usize,
        /// Minimum number of points.
        needed: usize,
    },
    /// A criterion name that is not one of [`crate::Criterion::ALL`].
    #[error("unknown criterion '{name}'; known: vorticity, q, lambda2, swirling-strength, delta, gamma1, gamma2")]
    UnknownCriterion {
        /// The name given.
        name: String,
    },
    /// A gradient-scheme name that is not known.
    #[error("unknown gradient scheme '{name}'; known: central2, central4, least-squares")]
    UnknownScheme {
        /// The name given.
        name: String,
    },
    /// The criterion is not defined for this dimensionality (Γ1 and Γ2 are planar criteria).
    #[error("criterion {criterion} is not defined for {ndim}D fields")]
    Unsupported {
        /// Criterion name.
        criterion: &'static str,
        /// Dimensionality of the field.
        ndim: usize,
    },
    /// A setting outside its admissible range.
    #[error("invalid setting {name} = {value}: {reason}")]
    InvalidSetting {
        /// Setting name.
        name: &'static str,
        /// The value given (formatted).
        value: String,
        /// The admissible range.
        reason: &'static str,
    },
    /// The field has too few computable criterion values to derive a relative threshold.
    #[error("no point of the field has a computable {criterion} value (all {points} points masked or on degenerate stencils)")]
    NothingComputable {
        /// Criterion name.
        criterion: &'static str,
        /// Number of grid points.
        points: usize,
    },
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn messages_carry_the_offending_values() {
        let e = DetectError::AxisTooShort {
            axis: "y",
            len: 1,
            needed: 2,
        };
        assert_eq!(
            e.to_string(),
            "axis y has 1 point(s); at least 2 are needed to differentiate along it"
        );
        let e = DetectError::InvalidSetting {
            name: "min_cells",
            value: "0".into(),
            reason: "must be at least 1",
        };
        assert!(e.to_string().contains("min_cells = 0"), "{e}");
        let e = DetectError::Unsupported {
            criterion: "gamma2",
            ndim: 3,
        };
        assert!(
            e.to_string().contains("gamma2") && e.to_string().contains("3D"),
            "{e}"
        );
    }
}
