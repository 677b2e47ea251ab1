//! Python bindings (`tracemill._core`). Thin wrappers: extract arrays, check them, run the
//! kernel with the GIL released (see [`run`]), return owned numpy arrays.

mod convert;
mod errors;
mod log;
mod rules;
mod run;
mod sequences;

use pyo3::prelude::*;

/// Raise a panic inside a kernel, to test that it surfaces as `InternalError`.
#[pyfunction]
fn _panic_for_test(py: Python<'_>) -> PyResult<()> {
    run::run(py, None, |_| -> crate::TmResult<()> {
        panic!("deliberate test panic")
    })
}

/// Sleep in a cancellable kernel for `seconds`, reporting progress; used to test Ctrl-C.
#[pyfunction]
#[pyo3(signature = (seconds, progress=None))]
fn _sleep_for_test(py: Python<'_>, seconds: f64, progress: Option<Py<PyAny>>) -> PyResult<u64> {
    run::run(py, progress, move |ctl| {
        let steps = (seconds * 100.0) as u64;
        ctl.set_total(steps);
        for _ in 0..steps {
            ctl.check()?;
            std::thread::sleep(std::time::Duration::from_millis(10));
            ctl.advance(1);
        }
        Ok(steps)
    })
}

#[pymodule(gil_used = false)]
fn _core(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add("__version__", env!("CARGO_PKG_VERSION"))?;
    m.add_class::<log::PyLog>()?;
    m.add_function(wrap_pyfunction!(log::build_log, m)?)?;
    m.add_function(wrap_pyfunction!(convert::factorize_utf8, m)?)?;
    m.add_function(wrap_pyfunction!(convert::factorize_i64, m)?)?;
    m.add_class::<rules::PyTransactions>()?;
    m.add_function(wrap_pyfunction!(rules::build_transactions, m)?)?;
    m.add_function(wrap_pyfunction!(rules::mine_itemsets, m)?)?;
    m.add_function(wrap_pyfunction!(rules::mine_rules, m)?)?;
    m.add_function(wrap_pyfunction!(rules::rule_measures, m)?)?;
    m.add_function(wrap_pyfunction!(sequences::mine_sequences, m)?)?;
    m.add_function(wrap_pyfunction!(sequences::mine_episodes, m)?)?;
    m.add_function(wrap_pyfunction!(sequences::mine_episode_rules, m)?)?;
    m.add_function(wrap_pyfunction!(_panic_for_test, m)?)?;
    m.add_function(wrap_pyfunction!(_sleep_for_test, m)?)?;
    Ok(())
}
