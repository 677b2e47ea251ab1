//! Bindings of the evaluation kernels (`tracemill.evaluate` and `tracemill.drift` wrap them).

use numpy::{
    IntoPyArray, PyArray1, PyArray2, PyArrayMethods, PyReadonlyArray1, PyReadonlyArray2,
    PyUntypedArrayMethods,
};
use pyo3::prelude::*;
use pyo3::types::PyDict;

use super::errors::to_py;
use super::log::PyLog;
use super::run::run;
use crate::error::TmError;
use crate::eval::{drift, metrics, split, stats};

/// Confusion matrix and every score derived from it, as a dict.
#[pyfunction]
#[pyo3(signature = (y_true, y_pred, n_labels, sample_weight=None, zero_division=0.0))]
pub fn confusion_scores<'py>(
    py: Python<'py>,
    y_true: PyReadonlyArray1<'_, u32>,
    y_pred: PyReadonlyArray1<'_, u32>,
    n_labels: usize,
    sample_weight: Option<PyReadonlyArray1<'_, f64>>,
    zero_division: f64,
) -> PyResult<Bound<'py, PyDict>> {
    let t = y_true.as_array().to_vec();
    let p = y_pred.as_array().to_vec();
    let w = sample_weight.map(|w| w.as_array().to_vec());
    let c = metrics::confusion_matrix(&t, &p, n_labels, w.as_deref()).map_err(to_py)?;
    let s = metrics::scores(&c, n_labels, zero_division).map_err(to_py)?;
    let d = PyDict::new(py);
    d.set_item(
        "confusion",
        c.into_pyarray(py).reshape([n_labels, n_labels])?,
    )?;
    d.set_item("accuracy", s.accuracy)?;
    d.set_item("error", s.error)?;
    d.set_item("precision", s.precision.into_pyarray(py))?;
    d.set_item("recall", s.recall.into_pyarray(py))?;
    d.set_item("f1", s.f1.into_pyarray(py))?;
    d.set_item("support", s.support.into_pyarray(py))?;
    d.set_item("precision_avg", s.precision_avg.to_vec().into_pyarray(py))?;
    d.set_item("recall_avg", s.recall_avg.to_vec().into_pyarray(py))?;
    d.set_item("f1_avg", s.f1_avg.to_vec().into_pyarray(py))?;
    d.set_item("mcc", s.mcc)?;
    d.set_item("kappa", s.kappa)?;
    d.set_item("balanced_accuracy", s.balanced_accuracy)?;
    Ok(d)
}

/// k-fold ids (optionally shuffled with `seed`).
#[pyfunction]
#[pyo3(signature = (n, n_splits, seed=None))]
pub fn kfold_ids<'py>(
    py: Python<'py>,
    n: usize,
    n_splits: usize,
    seed: Option<u64>,
) -> PyResult<Bound<'py, PyArray1<u32>>> {
    Ok(split::kfold(n, n_splits, seed)
        .map_err(to_py)?
        .into_pyarray(py))
}

/// Stratified k-fold ids.
#[pyfunction]
#[pyo3(signature = (y, n_splits, seed=None))]
pub fn stratified_ids<'py>(
    py: Python<'py>,
    y: PyReadonlyArray1<'_, u32>,
    n_splits: usize,
    seed: Option<u64>,
) -> PyResult<Bound<'py, PyArray1<u32>>> {
    let y = y.as_array().to_vec();
    Ok(split::stratified_kfold(&y, n_splits, seed)
        .map_err(to_py)?
        .into_pyarray(py))
}

/// Group k-fold ids.
#[pyfunction]
pub fn group_ids<'py>(
    py: Python<'py>,
    groups: PyReadonlyArray1<'_, u32>,
    n_splits: usize,
) -> PyResult<Bound<'py, PyArray1<u32>>> {
    let g = groups.as_array().to_vec();
    Ok(split::group_kfold(&g, n_splits)
        .map_err(to_py)?
        .into_pyarray(py))
}

/// Expanding-window splits `(train_start, train_end, test_start, test_end)`.
#[pyfunction]
#[pyo3(signature = (n, n_splits, test_size=None, gap=0, max_train_size=None))]
pub fn time_splits(
    n: usize,
    n_splits: usize,
    test_size: Option<usize>,
    gap: usize,
    max_train_size: Option<usize>,
) -> PyResult<Vec<(usize, usize, usize, usize)>> {
    split::time_splits(n, n_splits, test_size, gap, max_train_size).map_err(to_py)
}

/// Chi-square (`g=False`) or G-test on a contingency table: `(statistic, dof, p, n_columns)`.
#[pyfunction]
#[pyo3(signature = (table, g=false))]
pub fn table_test(table: PyReadonlyArray2<'_, f64>, g: bool) -> PyResult<(f64, usize, f64, usize)> {
    let (r, c) = (table.shape()[0], table.shape()[1]);
    let t: Vec<f64> = table.as_array().iter().copied().collect();
    let res = stats::table_test(&t, r, c, g).map_err(to_py)?;
    Ok((res.statistic, res.dof, res.p_value, res.n_columns))
}

/// Two-sample Kolmogorov–Smirnov test `(D, p)`; exact when `len(a) * len(b) <= exact_limit`.
#[pyfunction]
#[pyo3(signature = (a, b, exact_limit=10_000_000))]
pub fn ks_2samp(
    py: Python<'_>,
    a: PyReadonlyArray1<'_, f64>,
    b: PyReadonlyArray1<'_, f64>,
    exact_limit: u64,
) -> PyResult<(f64, f64)> {
    let a = a.as_array().to_vec();
    let b = b.as_array().to_vec();
    run(py, None, move |_| stats::ks_2samp(&a, &b, exact_limit))
}

/// `P(χ²_dof > x)`.
#[pyfunction]
pub fn chi2_sf(x: f64, dof: f64) -> PyResult<f64> {
    if dof.is_nan() || dof <= 0.0 {
        return Err(to_py(TmError::param(
            "dof",
            format!("dof must be > 0; got {dof}"),
        )));
    }
    Ok(stats::chi2_sf(x, dof))
}

/// Windowed drift tests: `(order, positions, statistic, p_value)`.
#[pyfunction]
#[pyo3(signature = (log, window, step, g_test=false, exact_limit=10_000_000, progress=None))]
pub fn drift_series<'py>(
    py: Python<'py>,
    log: PyRef<'_, PyLog>,
    window: usize,
    step: usize,
    g_test: bool,
    exact_limit: u64,
    progress: Option<Py<PyAny>>,
) -> PyResult<(
    Bound<'py, PyArray1<i64>>,
    Bound<'py, PyArray1<i64>>,
    Bound<'py, PyArray2<f64>>,
    Bound<'py, PyArray2<f64>>,
)> {
    let l = log.inner.clone();
    let s = run(py, progress, move |ctl| {
        drift::drift_series(&l, window, step, g_test, exact_limit, ctl)
    })?;
    let k = s.positions.len();
    let order: Vec<i64> = s.order.iter().map(|&v| v as i64).collect();
    let pos: Vec<i64> = s.positions.iter().map(|&v| v as i64).collect();
    Ok((
        order.into_pyarray(py),
        pos.into_pyarray(py),
        s.statistic.into_pyarray(py).reshape([k, 4])?,
        s.p_value.into_pyarray(py).reshape([k, 4])?,
    ))
}

/// Register the evaluation functions.
pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(confusion_scores, m)?)?;
    m.add_function(wrap_pyfunction!(kfold_ids, m)?)?;
    m.add_function(wrap_pyfunction!(stratified_ids, m)?)?;
    m.add_function(wrap_pyfunction!(group_ids, m)?)?;
    m.add_function(wrap_pyfunction!(time_splits, m)?)?;
    m.add_function(wrap_pyfunction!(table_test, m)?)?;
    m.add_function(wrap_pyfunction!(ks_2samp, m)?)?;
    m.add_function(wrap_pyfunction!(chi2_sf, m)?)?;
    m.add_function(wrap_pyfunction!(drift_series, m)?)?;
    Ok(())
}
