//! Typed errors of the fitting crate.
//!
//! Only inputs that make a fit meaningless are errors. A fit that runs but does not converge, or
//! converges to doubtful numbers, is a [`crate::FitResult`] with a [`crate::FitStatus`] and
//! [`crate::Flag`]s instead.

use thiserror::Error;

/// Everything that can make a fit impossible.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum FitError {
    /// A setting is out of its valid range.
    #[error("setting `{name}` = {value} is invalid: {reason}")]
    InvalidSetting {
        /// Name of the setting.
        name: &'static str,
        /// Offending value.
        value: f64,
        /// What the valid range is.
        reason: &'static str,
    },
    /// Sample arrays of different lengths.
    #[error("sample arrays differ in length: x {x}, y {y}, u {u}, v {v}")]
    LengthMismatch {
        /// Length of x.
        x: usize,
        /// Length of y.
        y: usize,
        /// Length of u.
        u: usize,
        /// Length of v.
        v: usize,
    },
    /// A sample holds an infinite value (NaN marks an invalid vector; infinity is an error).
    #[error("sample {index} is not finite: x {x}, y {y}, u {u}, v {v}")]
    NonFiniteSample {
        /// Index of the sample in the input slices.
        index: usize,
        /// x coordinate.
        x: f64,
        /// y coordinate.
        y: f64,
        /// u component.
        u: f64,
        /// v component.
        v: f64,
    },
    /// The window geometry is unusable.
    #[error("window {name} = {value} is invalid: {reason}")]
    InvalidWindow {
        /// Which quantity.
        name: &'static str,
        /// Offending value.
        value: f64,
        /// Why.
        reason: &'static str,
    },
    /// Too few valid vectors for the number of free parameters.
    #[error("too few valid vectors in the window: {have}, need at least {need} for {parameters} parameters")]
    TooFewSamples {
        /// Valid vectors present.
        have: usize,
        /// Minimum number required.
        need: usize,
        /// Number of free parameters of the model.
        parameters: usize,
    },
    /// The initial guess is unusable.
    #[error("initial guess {name} = {value} is invalid: {reason}")]
    InvalidGuess {
        /// Which quantity.
        name: &'static str,
        /// Offending value.
        value: f64,
        /// Why.
        reason: &'static str,
    },
    /// A start vector of the wrong length for the model.
    #[error("start vector has {have} model parameters, model `{model}` needs {need}")]
    StartLength {
        /// Model name.
        model: &'static str,
        /// Given.
        have: usize,
        /// Required.
        need: usize,
    },
    /// An unknown model name.
    #[error("unknown model `{0}` (known: lamb-oseen, burgers, rankine, vatistas)")]
    UnknownModel(String),
    /// An unknown flag name.
    #[error("unknown flag `{0}`")]
    UnknownFlag(String),
    /// An empty list of models for model selection.
    #[error("no model given for model selection")]
    NoModels,
    /// The optimisation framework reported an internal error.
    #[error("optimiser failure: {0}")]
    Solver(String),
}
