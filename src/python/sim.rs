//! Bindings of the simulator (`crate::sim`).

use numpy::IntoPyArray;
use pyo3::prelude::*;
use pyo3::types::PyTuple;

use super::errors::to_py;
use super::log::PyLog;
use super::run::run;
use crate::log::EventLog;
use crate::sim::{simulate as sim_run, ProcessSpec, WORKSHOP_JSON};

/// Simulate `n_cases` cases of the process described by `spec_json`.
///
/// Returns `(handle, n_duplicates, n_reordered, truth)` with `truth = (segment, segment_names,
/// deviation, deviation_names, change_time or None, after_change)`.
#[pyfunction]
#[pyo3(signature = (spec_json, n_cases, seed, progress=None))]
pub fn simulate<'py>(
    py: Python<'py>,
    spec_json: &str,
    n_cases: usize,
    seed: u64,
    progress: Option<Py<PyAny>>,
) -> PyResult<(PyLog, u64, u64, Bound<'py, PyTuple>)> {
    let spec = ProcessSpec::from_json(spec_json).map_err(to_py)?;
    let (log, rep, truth) = run(py, progress, move |ctl| {
        let sim = sim_run(&spec, n_cases, seed, ctl)?;
        ctl.check()?;
        let (log, rep) = EventLog::build(sim.input)?;
        Ok((log, rep, sim.truth))
    })?;
    let t = PyTuple::new(
        py,
        [
            truth.segment.into_pyarray(py).into_any(),
            truth.segment_names.into_pyobject(py)?.into_any(),
            truth.deviation.into_pyarray(py).into_any(),
            truth.deviation_names.into_pyobject(py)?.into_any(),
            truth.change_time.into_pyobject(py)?.into_any(),
            truth.after_change.into_pyarray(py).into_any(),
        ],
    )?;
    Ok((PyLog::new(log), rep.n_duplicates, rep.n_reordered, t))
}

/// The built-in workshop scenario as JSON text.
#[pyfunction]
pub fn workshop_json() -> &'static str {
    WORKSHOP_JSON
}

/// Check a process description; returns its normalised JSON text.
#[pyfunction]
pub fn check_spec(spec_json: &str) -> PyResult<String> {
    let spec = ProcessSpec::from_json(spec_json).map_err(to_py)?;
    spec.to_json().map_err(to_py)
}
