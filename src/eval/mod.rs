//! Honest evaluation: classification metrics, cross-validation splits, statistical tests and
//! concept-drift scans.
//!
//! * [`metrics`]: confusion matrix, accuracy/error, precision, recall, F1 (per class, macro,
//!   micro, weighted), Matthews correlation, Cohen's kappa;
//! * [`split`]: k-fold, stratified k-fold, group k-fold, time-ordered splits;
//! * [`stats`]: chi-square and G-tests, the chi-square tail, the two-sample
//!   Kolmogorov–Smirnov test (exact and asymptotic);
//! * [`drift`]: windowed tests over cases ordered by start time.

pub mod drift;
pub mod metrics;
pub mod split;
pub mod stats;
