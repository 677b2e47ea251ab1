//! `LogHandle`: the native, frozen handle of an [`EventLog`], wrapped by the Python class
//! `tracemill.EventLog`.

use std::sync::Arc;

use numpy::{IntoPyArray, PyArray1, PyArray2};
use pyo3::prelude::*;
use pyo3::types::{PyList, PyTuple};

use super::convert::{column_from_py, column_to_py, usize_arr, vec_of};
use super::errors::to_py;
use super::run::run;
use crate::log::select::WindowRule;
use crate::log::{CaseAttrs, Column, EventLog, LogInput};

/// A native, immutable event log.
#[pyclass(frozen, module = "tracemill._core", name = "LogHandle")]
pub struct PyLog {
    pub inner: Arc<EventLog>,
}

impl PyLog {
    pub fn new(log: EventLog) -> Self {
        PyLog {
            inner: Arc::new(log),
        }
    }
}

fn opt_column(obj: Option<Bound<'_, PyAny>>) -> PyResult<Option<Column>> {
    match obj {
        Some(o) if !o.is_none() => Ok(Some(column_from_py(&o)?)),
        _ => Ok(None),
    }
}

fn columns(list: Option<Bound<'_, PyList>>) -> PyResult<Vec<Column>> {
    list.map_or_else(
        || Ok(Vec::new()),
        |l| l.iter().map(|t| column_from_py(&t)).collect(),
    )
}

/// Build a log from row-wise arrays; returns `(handle, n_duplicates, n_reordered)`.
#[pyfunction]
#[pyo3(signature = (case, case_names, activity, activity_names, time, resource=None, lifecycle=None, event_attrs=None, case_attrs=None, case_attrs_per_case=false, row=None))]
#[allow(clippy::too_many_arguments)]
pub fn build_log(
    py: Python<'_>,
    case: Bound<'_, PyAny>,
    case_names: Vec<String>,
    activity: Bound<'_, PyAny>,
    activity_names: Vec<String>,
    time: Bound<'_, PyAny>,
    resource: Option<Bound<'_, PyAny>>,
    lifecycle: Option<Bound<'_, PyAny>>,
    event_attrs: Option<Bound<'_, PyList>>,
    case_attrs: Option<Bound<'_, PyList>>,
    case_attrs_per_case: bool,
    row: Option<Bound<'_, PyAny>>,
) -> PyResult<(PyLog, u64, u64)> {
    let ca = columns(case_attrs)?;
    let input = LogInput {
        case: vec_of(&case, "case")?,
        case_names,
        activity: vec_of(&activity, "activity")?,
        activity_names,
        time: vec_of(&time, "timestamp")?,
        resource: opt_column(resource)?,
        lifecycle: opt_column(lifecycle)?,
        event_attrs: columns(event_attrs)?,
        case_attrs: if ca.is_empty() {
            CaseAttrs::None
        } else if case_attrs_per_case {
            CaseAttrs::PerCase(ca)
        } else {
            CaseAttrs::PerRow(ca)
        },
        row: match row {
            Some(r) if !r.is_none() => Some(vec_of(&r, "row")?),
            _ => None,
        },
    };
    let (log, rep) = run(py, None, move |_| EventLog::build(input))?;
    Ok((PyLog::new(log), rep.n_duplicates, rep.n_reordered))
}

#[pymethods]
impl PyLog {
    #[getter]
    fn n_cases(&self) -> usize {
        self.inner.n_cases()
    }
    #[getter]
    fn n_events(&self) -> usize {
        self.inner.n_events()
    }
    #[getter]
    fn activity_names(&self) -> Vec<String> {
        self.inner.activity_names().to_vec()
    }
    #[getter]
    fn case_names(&self) -> Vec<String> {
        self.inner.case_names().to_vec()
    }

    fn __repr__(&self) -> String {
        format!(
            "LogHandle(n_cases={}, n_events={}, n_activities={})",
            self.inner.n_cases(),
            self.inner.n_events(),
            self.inner.activity_names().len()
        )
    }

    /// `(offsets, case_key, activity, time, row)` as numpy arrays.
    fn core_arrays<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyTuple>> {
        let l = &self.inner;
        PyTuple::new(
            py,
            [
                usize_arr(py, l.offsets()).into_any(),
                l.case_keys().to_vec().into_pyarray(py).into_any(),
                l.activities().to_vec().into_pyarray(py).into_any(),
                l.times().to_vec().into_pyarray(py).into_any(),
                l.rows().to_vec().into_pyarray(py).into_any(),
            ],
        )
    }

    /// Case index of every event.
    fn case_of_events<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyArray1<u32>>> {
        let l = Arc::clone(&self.inner);
        Ok(run(py, None, move |_| Ok(l.case_of_events()))?.into_pyarray(py))
    }

    /// The standard columns present: resource and lifecycle as column tuples or None.
    fn resource<'py>(&self, py: Python<'py>) -> PyResult<Option<Bound<'py, PyTuple>>> {
        self.inner
            .resource()
            .map(|c| column_to_py(py, c))
            .transpose()
    }
    fn lifecycle<'py>(&self, py: Python<'py>) -> PyResult<Option<Bound<'py, PyTuple>>> {
        self.inner
            .lifecycle()
            .map(|c| column_to_py(py, c))
            .transpose()
    }
    fn event_attrs<'py>(&self, py: Python<'py>) -> PyResult<Vec<Bound<'py, PyTuple>>> {
        self.inner
            .event_attrs()
            .iter()
            .map(|c| column_to_py(py, c))
            .collect()
    }
    fn case_attrs<'py>(&self, py: Python<'py>) -> PyResult<Vec<Bound<'py, PyTuple>>> {
        self.inner
            .case_attrs()
            .iter()
            .map(|c| column_to_py(py, c))
            .collect()
    }

    /// `(offsets, activities, counts, case_variant, case_offsets, cases)`.
    fn variants<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyTuple>> {
        let l = Arc::clone(&self.inner);
        let v = run(py, None, move |_| Ok(l.variants()))?;
        PyTuple::new(
            py,
            [
                usize_arr(py, &v.offsets).into_any(),
                v.activities.clone().into_pyarray(py).into_any(),
                v.counts.clone().into_pyarray(py).into_any(),
                v.case_variant.clone().into_pyarray(py).into_any(),
                usize_arr(py, &v.case_offsets).into_any(),
                v.cases.clone().into_pyarray(py).into_any(),
            ],
        )
    }

    /// `(start, end, duration, length)`.
    fn case_stats<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyTuple>> {
        let l = Arc::clone(&self.inner);
        let s = run(py, None, move |_| Ok(l.case_stats()))?;
        PyTuple::new(
            py,
            [
                s.start.clone().into_pyarray(py).into_any(),
                s.end.clone().into_pyarray(py).into_any(),
                s.duration.clone().into_pyarray(py).into_any(),
                s.length.clone().into_pyarray(py).into_any(),
            ],
        )
    }

    /// `(events, cases, starts, ends)` per activity.
    fn activity_counts<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyTuple>> {
        let l = Arc::clone(&self.inner);
        let s = run(py, None, move |_| Ok(l.activity_counts()))?;
        PyTuple::new(
            py,
            [
                s.events.into_pyarray(py).into_any(),
                s.cases.into_pyarray(py).into_any(),
                s.starts.into_pyarray(py).into_any(),
                s.ends.into_pyarray(py).into_any(),
            ],
        )
    }

    /// `(from, to, count, cases, mean, median, p90)`.
    fn directly_follows<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyTuple>> {
        let l = Arc::clone(&self.inner);
        let d = run(py, None, move |_| Ok(l.directly_follows()))?;
        PyTuple::new(
            py,
            [
                d.from.into_pyarray(py).into_any(),
                d.to.into_pyarray(py).into_any(),
                d.count.into_pyarray(py).into_any(),
                d.cases.into_pyarray(py).into_any(),
                d.mean.into_pyarray(py).into_any(),
                d.median.into_pyarray(py).into_any(),
                d.p90.into_pyarray(py).into_any(),
            ],
        )
    }

    /// Directly-follows counts as a dense `n_activities x n_activities` matrix.
    fn df_counts<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyArray2<u64>>> {
        let l = Arc::clone(&self.inner);
        let na = l.activity_names().len();
        let m = run(py, None, move |_| Ok(l.df_matrix()))?;
        let arr = ndarray::Array2::from_shape_vec((na, na), m).map_err(|e| {
            to_py(crate::TmError::Internal {
                message: e.to_string(),
            })
        })?;
        Ok(arr.into_pyarray(py))
    }

    /// `(cases, repeats, case_repeats)`.
    fn rework<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyTuple>> {
        let l = Arc::clone(&self.inner);
        let r = run(py, None, move |_| Ok(l.rework()))?;
        PyTuple::new(
            py,
            [
                r.cases.into_pyarray(py).into_any(),
                r.repeats.into_pyarray(py).into_any(),
                r.case_repeats.into_pyarray(py).into_any(),
            ],
        )
    }

    /// Per activity: `(wait_count, wait_mean, wait_median, wait_total, service_count,
    /// service_mean, service_median)`.
    fn activity_times<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyTuple>> {
        let l = Arc::clone(&self.inner);
        let t = run(py, None, move |_| Ok(l.activity_times()))?;
        PyTuple::new(
            py,
            [
                t.wait_count.into_pyarray(py).into_any(),
                t.wait_mean.into_pyarray(py).into_any(),
                t.wait_median.into_pyarray(py).into_any(),
                t.wait_total.into_pyarray(py).into_any(),
                t.service_count.into_pyarray(py).into_any(),
                t.service_mean.into_pyarray(py).into_any(),
                t.service_median.into_pyarray(py).into_any(),
            ],
        )
    }

    fn select_cases(&self, py: Python<'_>, cases: Bound<'_, PyAny>) -> PyResult<PyLog> {
        let idx: Vec<i64> = vec_of(&cases, "cases")?;
        let n = self.inner.n_cases() as i64;
        if let Some(&bad) = idx.iter().find(|&&c| c < 0 || c >= n) {
            return Err(to_py(crate::TmError::param(
                "cases",
                format!("case index {bad} is out of range for a log of {n} cases"),
            )));
        }
        let idx: Vec<usize> = idx.into_iter().map(|c| c as usize).collect();
        let l = Arc::clone(&self.inner);
        Ok(PyLog::new(run(py, None, move |_| l.select_cases(&idx))?))
    }

    /// Keep the events where `mask` is true; returns `(handle, n_cases_dropped)`.
    fn select_events(&self, py: Python<'_>, mask: Bound<'_, PyAny>) -> PyResult<(PyLog, usize)> {
        let m: Vec<bool> = vec_of(&mask, "mask")?;
        let l = Arc::clone(&self.inner);
        let (log, dropped) = run(py, None, move |_| l.select_events(&m))?;
        Ok((PyLog::new(log), dropped))
    }

    fn select_mask(&self, py: Python<'_>, mask: Bound<'_, PyAny>) -> PyResult<PyLog> {
        let m: Vec<bool> = vec_of(&mask, "mask")?;
        let l = Arc::clone(&self.inner);
        Ok(PyLog::new(run(py, None, move |_| l.select_mask(&m))?))
    }

    fn window_mask<'py>(
        &self,
        py: Python<'py>,
        start: i64,
        end: i64,
        rule: &str,
    ) -> PyResult<Bound<'py, PyArray1<bool>>> {
        let r = WindowRule::parse(rule).map_err(to_py)?;
        let l = Arc::clone(&self.inner);
        Ok(run(py, None, move |_| Ok(l.window_mask(start, end, r)))?.into_pyarray(py))
    }

    fn top_variants_mask<'py>(
        &self,
        py: Python<'py>,
        share: f64,
    ) -> PyResult<Bound<'py, PyArray1<bool>>> {
        let l = Arc::clone(&self.inner);
        Ok(run(py, None, move |_| l.top_variants_mask(share))?.into_pyarray(py))
    }

    fn length_mask<'py>(
        &self,
        py: Python<'py>,
        min: usize,
        max: usize,
    ) -> Bound<'py, PyArray1<bool>> {
        self.inner.length_mask(min, max).into_pyarray(py)
    }

    fn sample_cases<'py>(
        &self,
        py: Python<'py>,
        n: usize,
        seed: u64,
    ) -> PyResult<Bound<'py, PyArray1<i64>>> {
        let idx = self.inner.sample_cases(n, seed).map_err(to_py)?;
        Ok(usize_arr(py, &idx))
    }

    fn split(&self, py: Python<'_>, labels: Bound<'_, PyAny>) -> PyResult<Vec<(i64, PyLog)>> {
        let lab: Vec<i64> = vec_of(&labels, "labels")?;
        let l = Arc::clone(&self.inner);
        let parts = run(py, None, move |_| l.split(&lab))?;
        Ok(parts.into_iter().map(|(k, g)| (k, PyLog::new(g))).collect())
    }
}
