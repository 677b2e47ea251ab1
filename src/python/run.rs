//! One helper for running kernels from Python: release the GIL, stop on Ctrl-C, report
//! progress, and turn a panic into a `tracemill.exceptions.InternalError`.
//!
//! The kernel runs on a rayon worker (handed over by a scoped thread) with the GIL released. The calling thread waits on a
//! channel for the result (so short kernels return at once); every 100 ms it re-attaches to the interpreter, checks for signals
//! (Ctrl-C cancels the kernel through its [`Control`]) and calls the progress callback, if any,
//! with `(done, total)`. Rayon workers never call Python.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::time::Duration;

use pyo3::prelude::*;

use super::errors::to_py;
use crate::control::Control;
use crate::error::{TmError, TmResult};

/// Run `f` with the GIL released; see the module documentation.
pub fn run<T, F>(py: Python<'_>, progress: Option<Py<PyAny>>, f: F) -> PyResult<T>
where
    T: Send,
    F: FnOnce(&Control) -> TmResult<T> + Send,
{
    let ctl = Control::new();
    let mut py_err: Option<PyErr> = None;
    let out: TmResult<T> = py.detach(|| {
        std::thread::scope(|s| {
            let (tx, rx) = std::sync::mpsc::channel::<TmResult<T>>();
            let ctl_ref = &ctl;
            s.spawn(move || {
                // The kernel itself runs on a rayon worker, so that its serial parts and its
                // parallel loops share the pool's threads instead of competing with them (on
                // two cores an outside thread left the idle workers spinning against it).
                let res = catch_unwind(AssertUnwindSafe(|| rayon::scope(|_| f(ctl_ref))))
                    .unwrap_or_else(|p| {
                        let what = p
                            .downcast_ref::<&str>()
                            .map(|s| (*s).to_string())
                            .or_else(|| p.downcast_ref::<String>().cloned())
                            .unwrap_or_else(|| "unknown panic".into());
                        Err(TmError::Internal {
                            message: format!("internal error: {what}"),
                        })
                    });
                // The receiver outlives this scoped thread, so the send cannot fail.
                let _ = tx.send(res);
            });
            loop {
                match rx.recv_timeout(Duration::from_millis(100)) {
                    Ok(res) => return res,
                    Err(std::sync::mpsc::RecvTimeoutError::Disconnected) => {
                        return Err(TmError::Internal {
                            message: "internal error: worker thread failed".into(),
                        })
                    }
                    Err(std::sync::mpsc::RecvTimeoutError::Timeout) => {}
                }
                if py_err.is_some() {
                    // Cancelled: wait for the kernel to notice, without calling Python again.
                    continue;
                }
                Python::attach(|py| {
                    if let Err(e) = py.check_signals() {
                        ctl.cancel();
                        py_err = Some(e);
                        return;
                    }
                    if let Some(cb) = &progress {
                        let (done, total) = ctl.progress();
                        if let Err(e) = cb.call1(py, (done, total)) {
                            ctl.cancel();
                            py_err = Some(e);
                        }
                    }
                });
            }
        })
    });
    if let Some(e) = py_err {
        return Err(e);
    }
    out.map_err(to_py)
}
