//! Errors of the tube survey. A station whose fit does not converge is a flagged result, never
//! an error; errors are for inputs and settings that make the survey meaningless.

use thiserror::Error;

/// What can go wrong in a tube survey.
#[derive(Debug, Error)]
pub enum TubeError {
    /// Reading the volume failed (the message names the file).
    #[error(transparent)]
    Field(#[from] vortcat_field::FieldError),
    /// The criterion or gradient computation refused the data or the settings.
    #[error("detection: {0}")]
    Detect(#[from] vortcat_detect::DetectError),
    /// A setting is out of its valid range.
    #[error("invalid setting {name} = {value}: {reason}")]
    InvalidSetting {
        /// Setting name.
        name: &'static str,
        /// Offending value, as text.
        value: String,
        /// Why it is refused.
        reason: &'static str,
    },
    /// The source is not a volume.
    #[error("expected a 3D (volume) grid, found {found} dimensions")]
    NotAVolume {
        /// Dimensions found.
        found: usize,
    },
    /// No point of the volume has a computable criterion value.
    #[error("no point of the volume has a computable {criterion} value")]
    NothingComputable {
        /// Criterion name.
        criterion: &'static str,
    },
    /// More voxels above the threshold than the labelling can index.
    #[error("{count} points above the threshold exceed the labelling limit of {limit}; raise the threshold")]
    TooManyVoxels {
        /// Points above the threshold so far.
        count: u64,
        /// The limit.
        limit: u64,
    },
}
