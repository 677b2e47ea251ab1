//! tracemill: columnar event logs and parallel kernels for analysing them.
//!
//! The core is pure Rust (no Python); the optional `python` feature adds the bindings in
//! [`python`](crate) (`src/python/`). Modules:
//!
//! * [`log`]: the event log, its derived views and selections;
//! * [`rules`]: frequent itemsets and association rules;
//! * [`sequences`]: sequential patterns and episodes;
//! * [`control`]: cancellation and progress for long kernels;
//! * [`error`]: the error type shared by all kernels.

#![warn(missing_docs)]

pub mod control;
pub mod error;
pub mod log;
pub mod rules;
pub mod sequences;

#[cfg(feature = "python")]
mod python;

pub use error::{TmError, TmResult};
pub use log::{EventLog, LogInput};
