//! Cancellation and progress shared between a kernel and whoever waits for it.
//!
//! Kernels poll [`Control::check`] at coarse intervals (per chunk, never per event) and bump
//! [`Control::advance`]. The Python bindings run the kernel on a worker thread, re-attach to the
//! interpreter about every 100 ms to look for Ctrl-C, and report progress to a callback. Rayon
//! workers never touch Python.

use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};

use crate::error::{TmError, TmResult};

/// A cancel flag and a progress counter.
#[derive(Debug, Default)]
pub struct Control {
    cancelled: AtomicBool,
    done: AtomicU64,
    total: AtomicU64,
}

impl Control {
    /// A fresh control: not cancelled, no progress.
    pub fn new() -> Self {
        Self::default()
    }
    /// Ask the kernel to stop at its next check.
    pub fn cancel(&self) {
        self.cancelled.store(true, Ordering::Relaxed);
    }
    /// Whether cancellation was asked for.
    pub fn is_cancelled(&self) -> bool {
        self.cancelled.load(Ordering::Relaxed)
    }
    /// `Err(Interrupted)` once cancellation was asked for.
    pub fn check(&self) -> TmResult<()> {
        if self.is_cancelled() {
            Err(TmError::Interrupted)
        } else {
            Ok(())
        }
    }
    /// Set the amount of work expected (in the kernel's own units).
    pub fn set_total(&self, total: u64) {
        self.total.store(total, Ordering::Relaxed);
    }
    /// Record `n` more units done.
    pub fn advance(&self, n: u64) {
        self.done.fetch_add(n, Ordering::Relaxed);
    }
    /// `(done, total)` so far.
    pub fn progress(&self) -> (u64, u64) {
        (
            self.done.load(Ordering::Relaxed),
            self.total.load(Ordering::Relaxed),
        )
    }
}

/// A control that is never cancelled, for callers that do not need one.
pub fn no_control() -> Control {
    Control::new()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cancel_then_check_fails() {
        let c = Control::new();
        assert!(c.check().is_ok());
        c.advance(3);
        c.set_total(10);
        assert_eq!(c.progress(), (3, 10));
        c.cancel();
        assert_eq!(c.check(), Err(TmError::Interrupted));
    }
}
