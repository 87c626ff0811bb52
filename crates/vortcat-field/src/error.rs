//! Errors of the field crate. Every variant carries the values a user needs to fix the input;
//! the binary adds the file name (see [`FieldError::in_file`]).

use std::path::PathBuf;

/// What can go wrong while describing or reading a velocity field.
#[derive(Debug, thiserror::Error)]
pub enum FieldError {
    /// An error tied to one input file.
    #[error("{}: {source}", path.display())]
    InFile {
        /// The offending file.
        path: PathBuf,
        /// What is wrong with it.
        #[source]
        source: Box<FieldError>,
    },
    /// Operating-system level I/O failure.
    #[error("{0}")]
    Io(#[from] std::io::Error),
    /// The file format could not be determined or is not supported.
    #[error("unsupported or unrecognised format: {0}")]
    UnknownFormat(String),
    /// The file is truncated, corrupt or not what its extension says.
    #[error("corrupt or truncated file: {0}")]
    Corrupt(String),
    /// A named array, dataset or column is absent.
    #[error("no {kind} named '{name}'; available: {}", if available.is_empty() { "none".to_string() } else { available.join(", ") })]
    Missing {
        /// "array", "dataset", "column" or "file".
        kind: &'static str,
        /// The requested name.
        name: String,
        /// What the file does contain.
        available: Vec<String>,
    },
    /// Arrays that must agree in shape do not.
    #[error("shape mismatch: {what} has shape {found:?}, expected {expected:?}")]
    ShapeMismatch {
        /// The array concerned.
        what: String,
        /// Expected shape.
        expected: Vec<usize>,
        /// Actual shape.
        found: Vec<usize>,
    },
    /// The data have the wrong number of dimensions for the requested interpretation.
    #[error("expected a {expected}-dimensional field, found {found} dimensions")]
    WrongDimension {
        /// Expected number of spatial dimensions (or array rank, in context).
        expected: usize,
        /// Actual number.
        found: usize,
    },
    /// An array's layout does not fit the input description.
    #[error("array '{name}' with shape {shape:?}: {reason}")]
    BadLayout {
        /// The array.
        name: String,
        /// Its shape.
        shape: Vec<usize>,
        /// Why it cannot be read as described.
        reason: String,
    },
    /// A value of the wrong type (e.g. strings where numbers are expected).
    #[error("'{name}' holds {found}, not numbers")]
    NotNumeric {
        /// Array, dataset or column.
        name: String,
        /// What it holds.
        found: String,
    },
    /// A spacing that is zero, negative where it must be positive, or not finite.
    #[error("bad spacing for axis {axis}: {spacing} (must be finite and non-zero; given spacings must be positive)")]
    BadSpacing {
        /// Axis name.
        axis: String,
        /// The spacing.
        spacing: f64,
    },
    /// An axis with no points.
    #[error("axis {axis} has no points")]
    EmptyAxis {
        /// Axis name.
        axis: String,
    },
    /// Coordinates that do not describe a uniform grid.
    #[error("coordinates of axis {axis}: {reason}")]
    BadCoordinates {
        /// Axis name.
        axis: String,
        /// What is wrong.
        reason: String,
    },
    /// Infinite values in a component (never a mask marker, so a corrupt input).
    #[error("component {component} holds {count} infinite value(s)")]
    NonFinite {
        /// Component name.
        component: String,
        /// How many.
        count: usize,
    },
    /// The field has no valid vector at all.
    #[error("no valid vector: every value is NaN or flagged")]
    NoValidVectors,
    /// A snapshot index past the end of the stack.
    #[error("snapshot index {index} out of range (the source holds {len})")]
    IndexOutOfRange {
        /// Requested index.
        index: usize,
        /// Number of snapshots.
        len: usize,
    },
    /// The path cannot be used as given (e.g. a directory where a file is expected).
    #[error("{0}")]
    Unusable(String),
    /// Input description (config or flags) is inconsistent.
    #[error("invalid input description: {0}")]
    Spec(String),
    /// An error from the HDF5 library.
    #[error("HDF5: {0}")]
    Hdf5(String),
    /// A CSV problem.
    #[error("CSV: {0}")]
    Csv(String),
    /// A NumPy file problem.
    #[error("NumPy: {0}")]
    Npy(String),
}

impl FieldError {
    /// Attaches the file the error belongs to (once; an error already tied to a file is kept).
    pub fn in_file(self, path: impl Into<PathBuf>) -> Self {
        match self {
            e @ FieldError::InFile { .. } => e,
            e => FieldError::InFile {
                path: path.into(),
                source: Box::new(e),
            },
        }
    }
}

impl From<hdf5::Error> for FieldError {
    fn from(e: hdf5::Error) -> Self {
        FieldError::Hdf5(e.to_string())
    }
}
