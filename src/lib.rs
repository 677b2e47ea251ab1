//! tracemill: columnar event logs and parallel kernels for analysing them.
//!
//! The core is pure Rust (no Python); the optional `python` feature adds the bindings in
//! [`python`](crate) (`src/python/`). Modules:
//!
//! * [`log`]: the event log, its derived views and selections;
//! * [`sim`]: a process simulator that writes event logs with their ground truth;
//! * [`tree`]: classification and regression trees;
//! * [`eval`]: metrics, cross-validation splits, statistical tests, drift scans;
//! * [`encode`]: trace encodings (activity, transition, n-gram and performance profiles);
//! * [`distance`]: pairwise distances (vector metrics, edit distance), condensed or square;
//! * [`cluster`]: k-means, k-medoids, hierarchical clustering, DBSCAN and quality indices;
//! * [`rules`]: frequent itemsets and association rules;
//! * [`sequences`]: sequential patterns and episodes;
//! * [`control`]: cancellation and progress for long kernels;
//! * [`error`]: the error type shared by all kernels;
//! * [`discover`]: process discovery (directly-follows, dependency, alpha, inductive);
//! * [`conform`]: conformance checking (token replay, alignments, precision);
//! * [`io`]: PNML and BPMN files.
//! * [`xes`]: IEEE 1849 XES reading and writing.

#![warn(missing_docs)]

pub mod cluster;
pub mod conform;
pub mod control;
pub mod discover;
pub mod distance;
pub mod encode;
pub mod error;
pub mod eval;
pub mod hash;
pub mod io;
pub mod log;
pub mod rules;
pub mod sequences;
pub mod sim;
pub mod tree;
pub mod xes;

#[cfg(feature = "python")]
mod python;

pub use error::{TmError, TmResult};
pub use log::{EventLog, LogInput};
