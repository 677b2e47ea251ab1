//! Conformance checking: token replay, alignments, precision.
pub mod replay;
pub mod align;
pub mod precision;
