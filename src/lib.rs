//! tracemill: columnar event logs and parallel kernels for analysing them.
//!
//! The core is pure Rust (no Python); the optional `python` feature adds the bindings in
//! [`python`](crate) (`src/python/`). Modules:
//!
//! * [`log`]: the event log, its derived views and selections;
//! * [`encode`]: trace encodings (activity, transition, n-gram and performance profiles);
//! * [`distance`]: pairwise distances (vector metrics, edit distance), condensed or square;
//! * [`cluster`]: k-means, k-medoids, hierarchical clustering, DBSCAN and quality indices;
//! * [`control`]: cancellation and progress for long kernels;
//! * [`error`]: the error type shared by all kernels.

#![warn(missing_docs)]

pub mod cluster;
pub mod control;
pub mod distance;
pub mod encode;
pub mod error;
pub mod log;

#[cfg(feature = "python")]
mod python;

pub use error::{TmError, TmResult};
pub use log::{EventLog, LogInput};
