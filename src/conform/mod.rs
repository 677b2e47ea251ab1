//! Conformance checking: token replay, alignments, precision.
pub mod align;
pub mod precision;
pub mod replay;
