//! Bindings of the XES reader and writer (`crate::xes`).

use std::sync::Arc;

use pyo3::prelude::*;
use pyo3::types::{PyDict, PyList};

use super::log::PyLog;
use super::run::run;
use crate::log::EventLog;
use crate::xes::{
    read_xes, read_xes_path_with, write_xes_path_with, XesLog, XesReadOptions, XesScope, XesValue,
    XesWriteOptions,
};

fn value<'py>(py: Python<'py>, v: &XesValue) -> PyResult<Bound<'py, PyAny>> {
    Ok(match v {
        XesValue::String(s) | XesValue::Id(s) => s.clone().into_pyobject(py)?.into_any(),
        XesValue::Date(t) | XesValue::Int(t) => t.into_pyobject(py)?.into_any(),
        XesValue::Float(f) => f.into_pyobject(py)?.into_any(),
        XesValue::Boolean(b) => b.into_pyobject(py)?.to_owned().into_any(),
    })
}

fn type_name(v: &XesValue) -> &'static str {
    match v {
        XesValue::String(_) => "string",
        XesValue::Id(_) => "id",
        XesValue::Date(_) => "date",
        XesValue::Int(_) => "int",
        XesValue::Float(_) => "float",
        XesValue::Boolean(_) => "boolean",
    }
}

/// Build the log and describe the file: `(handle, n_dup, n_reordered, meta, report)`.
fn finish<'py>(
    py: Python<'py>,
    x: XesLog,
) -> PyResult<(PyLog, u64, u64, Bound<'py, PyDict>, Bound<'py, PyDict>)> {
    let XesLog {
        input,
        meta,
        report,
    } = x;
    let (log, rep) = run(py, None, move |_| EventLog::build(input))?;
    let m = PyDict::new(py);
    m.set_item("version", meta.version.clone())?;
    m.set_item("features", meta.features.clone())?;
    m.set_item("xml_attributes", meta.xml_attributes.clone())?;
    let ext = PyList::empty(py);
    for e in &meta.extensions {
        ext.append((e.name.clone(), e.prefix.clone(), e.uri.clone()))?;
    }
    m.set_item("extensions", ext)?;
    let gl = PyList::empty(py);
    for g in &meta.globals {
        let scope = match g.scope {
            XesScope::Trace => "trace",
            XesScope::Event => "event",
        };
        gl.append((
            scope,
            g.key.clone(),
            type_name(&g.value),
            value(py, &g.value)?,
        ))?;
    }
    m.set_item("globals", gl)?;
    let cl = PyList::empty(py);
    for c in &meta.classifiers {
        cl.append((c.name.clone(), c.keys.clone(), c.scope.clone()))?;
    }
    m.set_item("classifiers", cl)?;
    let at = PyList::empty(py);
    for (k, v) in &meta.attributes {
        at.append((k.clone(), type_name(v), value(py, v)?))?;
    }
    m.set_item("attributes", at)?;
    let r = PyDict::new(py);
    r.set_item("n_traces", report.n_traces)?;
    r.set_item("n_events", report.n_events)?;
    r.set_item("n_empty_traces", report.n_empty_traces)?;
    r.set_item("n_generated_labels", report.n_generated_labels)?;
    r.set_item("n_duplicate_labels", report.n_duplicate_labels)?;
    r.set_item("n_repeated_keys", report.n_repeated_keys)?;
    r.set_item("type_conflicts", report.type_conflicts.clone())?;
    r.set_item("warnings", report.warnings.clone())?;
    Ok((PyLog::new(log), rep.n_duplicates, rep.n_reordered, m, r))
}

/// Read an XES file (plain or gzip) from a path.
#[pyfunction]
#[pyo3(signature = (path, progress=None))]
pub fn read_xes_file<'py>(
    py: Python<'py>,
    path: std::path::PathBuf,
    progress: Option<Py<PyAny>>,
) -> PyResult<(PyLog, u64, u64, Bound<'py, PyDict>, Bound<'py, PyDict>)> {
    let opts = XesReadOptions::default();
    let x = run(py, progress, move |ctl| {
        read_xes_path_with(&path, &opts, ctl)
    })?;
    finish(py, x)
}

/// Read an XES document (plain or gzip) from bytes.
#[pyfunction]
pub fn read_xes_data<'py>(
    py: Python<'py>,
    data: Vec<u8>,
) -> PyResult<(PyLog, u64, u64, Bound<'py, PyDict>, Bound<'py, PyDict>)> {
    let opts = XesReadOptions::default();
    let x = run(py, None, move |ctl| {
        read_xes(std::io::BufReader::new(data.as_slice()), &opts, ctl)
    })?;
    finish(py, x)
}

/// Write a log as XES (gzip when the path ends in `.gz`).
#[pyfunction]
#[pyo3(signature = (log, path, log_name=None))]
pub fn write_xes_file(
    py: Python<'_>,
    log: &PyLog,
    path: std::path::PathBuf,
    log_name: Option<String>,
) -> PyResult<()> {
    let l = Arc::clone(&log.inner);
    let opts = XesWriteOptions {
        log_name,
        ..XesWriteOptions::default()
    };
    run(py, None, move |_| write_xes_path_with(&l, &path, &opts))
}
