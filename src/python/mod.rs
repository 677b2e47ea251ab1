//! Python bindings (`tracemill._core`). Thin wrappers: extract arrays, check them, run the
//! kernel with the GIL released (see [`run`]), return owned numpy arrays.

mod cluster;
mod convert;
mod discover;
mod encode;
mod errors;
mod eval;
mod log;
mod rules;
mod run;
mod sequences;
mod sim;
mod tree;
mod xes;

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
    m.add("EVENT_TABLE_COLUMNS", xes::EVENT_TABLE.to_vec())?;
    m.add("CASE_TABLE_COLUMNS", xes::CASE_TABLE.to_vec())?;
    m.add_class::<log::PyLog>()?;
    m.add_function(wrap_pyfunction!(log::build_log, m)?)?;
    m.add_function(wrap_pyfunction!(convert::factorize_utf8, m)?)?;
    m.add_function(wrap_pyfunction!(convert::factorize_i64, m)?)?;
    m.add_function(wrap_pyfunction!(sim::simulate, m)?)?;
    m.add_function(wrap_pyfunction!(sim::workshop_json, m)?)?;
    m.add_function(wrap_pyfunction!(sim::check_spec, m)?)?;
    discover::register(m)?;
    m.add_function(wrap_pyfunction!(xes::read_xes_file, m)?)?;
    m.add_function(wrap_pyfunction!(xes::read_xes_data, m)?)?;
    m.add_function(wrap_pyfunction!(xes::write_xes_file, m)?)?;
    tree::register(m)?;
    eval::register(m)?;
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
    // trace encoding, distances and clustering
    for f in [
        wrap_pyfunction!(encode::ngram_fit, m)?,
        wrap_pyfunction!(encode::activity_vocab, m)?,
        wrap_pyfunction!(encode::ngram_transform, m)?,
        wrap_pyfunction!(encode::performance_profile, m)?,
        wrap_pyfunction!(encode::pairwise_condensed, m)?,
        wrap_pyfunction!(encode::squareform, m)?,
        wrap_pyfunction!(encode::edit_condensed, m)?,
        wrap_pyfunction!(encode::check_square, m)?,
        wrap_pyfunction!(encode::csr_hstack, m)?,
        wrap_pyfunction!(cluster::kmeans_fit, m)?,
        wrap_pyfunction!(cluster::kmeans_predict, m)?,
        wrap_pyfunction!(cluster::fasterpam, m)?,
        wrap_pyfunction!(cluster::linkage_condensed, m)?,
        wrap_pyfunction!(cluster::linkage_vectors, m)?,
        wrap_pyfunction!(cluster::cut_linkage, m)?,
        wrap_pyfunction!(cluster::dbscan, m)?,
        wrap_pyfunction!(cluster::silhouette_samples, m)?,
        wrap_pyfunction!(cluster::mean_within_distance, m)?,
        wrap_pyfunction!(cluster::davies_bouldin, m)?,
        wrap_pyfunction!(cluster::calinski_harabasz, m)?,
    ] {
        m.add_function(f)?;
    }
    Ok(())
}
