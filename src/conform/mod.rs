//! Conformance checking placeholder.
