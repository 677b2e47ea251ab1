//! Errors shared by every tracemill kernel.
//!
//! Each variant maps to one Python exception class in `tracemill.exceptions` (see
//! `src/python/errors.rs`). Messages name the column, row, case or line at fault and what was
//! expected, so that a user can find the bad value without a debugger.

use thiserror::Error;

/// The error type of the tracemill core.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum TmError {
    /// A column is missing, has the wrong type, or holds a value the schema does not allow.
    #[error("{message}")]
    Schema {
        /// The column at fault, if one is known.
        column: Option<String>,
        /// The input row (0-based) at fault, if one is known.
        row: Option<u64>,
        /// What went wrong and what was expected.
        message: String,
    },
    /// A timestamp is missing, unparseable or inconsistent (e.g. mixed naive and aware).
    #[error("{message}")]
    Timestamp {
        /// The column at fault, if one is known.
        column: Option<String>,
        /// The input row (0-based) at fault, if one is known.
        row: Option<u64>,
        /// The 1-based line of a file at fault, if one is known.
        line: Option<u64>,
        /// What went wrong and what was expected.
        message: String,
    },
    /// A file (XES, PNML, ...) is malformed, truncated or refused (e.g. DTD entities).
    #[error("{message}")]
    Format {
        /// The 1-based line of the input at fault, if one is known.
        line: Option<u64>,
        /// What went wrong and what was expected.
        message: String,
    },
    /// A parameter has a value outside its allowed range.
    #[error("{message}")]
    Parameter {
        /// The parameter name.
        name: String,
        /// What went wrong and what was expected.
        message: String,
    },
    /// The data cannot be processed as asked (e.g. an empty log, NaN features).
    #[error("{message}")]
    Data {
        /// What went wrong.
        message: String,
    },
    /// A result would exceed a memory or size budget.
    #[error("{message}")]
    Limit {
        /// What went wrong, how much was needed and which parameter to change.
        message: String,
    },
    /// An I/O error while reading or writing a file.
    #[error("{message}")]
    Io {
        /// What went wrong.
        message: String,
    },
    /// The work was cancelled (Ctrl-C).
    #[error("interrupted")]
    Interrupted,
    /// A bug in tracemill (for example a caught panic).
    #[error("{message}")]
    Internal {
        /// What went wrong.
        message: String,
    },
}

/// Result alias used across the core.
pub type TmResult<T> = Result<T, TmError>;

impl TmError {
    /// A schema error about a column (and optionally a row).
    pub fn schema(column: impl Into<String>, row: Option<u64>, message: impl Into<String>) -> Self {
        TmError::Schema {
            column: Some(column.into()),
            row,
            message: message.into(),
        }
    }
    /// A parameter error.
    pub fn param(name: impl Into<String>, message: impl Into<String>) -> Self {
        TmError::Parameter {
            name: name.into(),
            message: message.into(),
        }
    }
    /// A data error.
    pub fn data(message: impl Into<String>) -> Self {
        TmError::Data {
            message: message.into(),
        }
    }
    /// A format error at a 1-based line.
    pub fn format(line: Option<u64>, message: impl Into<String>) -> Self {
        TmError::Format {
            line,
            message: message.into(),
        }
    }
}

impl From<std::io::Error> for TmError {
    fn from(e: std::io::Error) -> Self {
        TmError::Io {
            message: e.to_string(),
        }
    }
}
