//! The one error type of the core.
//!
//! Problems with single cells of a table are not errors: they are
//! [`crate::table::InputProblem`] values reported beside a result. An
//! [`Error`] means no result can be produced at all.

use serde::Serialize;
use std::fmt;

/// What kind of failure stopped the analysis.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ErrorKind {
    /// The input has no usable data, or not enough of it.
    InvalidData,
    /// An option (unit, model name, enzyme concentration) is not valid.
    InvalidOption,
    /// The numbers could not be fitted at all (for example no starting
    /// values could be formed). A fit that merely fails to converge is not
    /// an error: it is reported in the fit's termination.
    Numerical,
}

/// An error with a message written for a scientist.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Error {
    /// The kind of failure.
    pub kind: ErrorKind,
    /// What went wrong and what was expected.
    pub message: String,
}

impl Error {
    /// An [`ErrorKind::InvalidData`] error.
    pub fn invalid_data(message: impl Into<String>) -> Self {
        Error { kind: ErrorKind::InvalidData, message: message.into() }
    }

    /// An [`ErrorKind::InvalidOption`] error.
    pub fn invalid_option(message: impl Into<String>) -> Self {
        Error { kind: ErrorKind::InvalidOption, message: message.into() }
    }

    /// An [`ErrorKind::Numerical`] error.
    pub fn numerical(message: impl Into<String>) -> Self {
        Error { kind: ErrorKind::Numerical, message: message.into() }
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for Error {}
