//! Model files placeholder.
