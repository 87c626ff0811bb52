//! Typed errors of the report crate. Every variant names the file it concerns, so that the
//! binary can print one line a user can act on.

use std::path::PathBuf;

/// What can go wrong when reading a survey folder or writing a report.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    /// The folder does not exist or is not a folder.
    #[error("{path}: not a survey folder ({reason})")]
    NotASurvey {
        /// The folder given.
        path: PathBuf,
        /// Why not.
        reason: String,
    },
    /// A file of the survey could not be read.
    #[error("{path}: cannot read: {source}")]
    Read {
        /// The file.
        path: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// A file of the survey could not be parsed.
    #[error("{path}: invalid content: {message}")]
    Parse {
        /// The file.
        path: PathBuf,
        /// What the parser said (one line).
        message: String,
    },
    /// A report file could not be written.
    #[error("{path}: cannot write: {source}")]
    Write {
        /// The file.
        path: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// A plot could not be drawn.
    #[error("{path}: cannot draw the plot: {message}")]
    Plot {
        /// The image file that was being drawn.
        path: PathBuf,
        /// The drawing library's message.
        message: String,
    },
    /// An option has a value that cannot be used.
    #[error("invalid option: {0}")]
    Option(String),
}

impl ReportError {
    /// A parse error with the message flattened to one line.
    pub(crate) fn parse(path: impl Into<PathBuf>, message: impl std::fmt::Display) -> Self {
        ReportError::Parse {
            path: path.into(),
            message: message.to_string().replace('\n', " "),
        }
    }
}
