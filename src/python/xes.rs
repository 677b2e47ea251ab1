//! Bindings of the XES reader and writer (`crate::xes`).

use std::collections::HashSet;
use std::sync::Arc;

use pyo3::prelude::*;
use pyo3::types::{PyDict, PyList};

use super::log::PyLog;
use super::run::run;
use crate::log::{CaseAttrs, Column, EventLog, LogInput};
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

/// Column names of the Python tables: `EventLog.to_frame` (`case`, `activity`, `timestamp`,
/// `resource` and `lifecycle` when present) and `EventLog.case_table` (`start`, ...). The one
/// list: the module exports them (`EVENT_TABLE_COLUMNS`, `CASE_TABLE_COLUMNS`) for the frame
/// reader's own check.
pub(crate) const EVENT_TABLE: [&str; 3] = ["case", "activity", "timestamp"];
pub(crate) const CASE_TABLE: [&str; 6] =
    ["start", "end", "duration", "n_events", "variant", "repeats"];

/// Attributes keep their keys as column names in the Python tables, where event and case
/// attributes sit beside the standard columns and each other. A key that would replace another
/// column there (an event attribute `activity`, a trace attribute `n_events`, the same key on
/// traces and on events) is renamed `key#2` (`#3`, ...), the reader's rule for a key met twice:
/// trace attributes come first in the file, so the event attribute is the one renamed. Each
/// rename is noted in `warnings`.
fn rename_clashes(input: &mut LogInput, warnings: &mut Vec<String>) {
    let mut standard: HashSet<String> = EVENT_TABLE.iter().map(|s| (*s).to_owned()).collect();
    if input.resource.is_some() {
        standard.insert("resource".into());
    }
    if input.lifecycle.is_some() {
        standard.insert("lifecycle".into());
    }
    let case_cols: &mut [Column] = match &mut input.case_attrs {
        CaseAttrs::PerRow(c) | CaseAttrs::PerCase(c) => c,
        CaseAttrs::None => &mut [],
    };
    let mut used: HashSet<String> = standard.clone();
    used.extend(CASE_TABLE.iter().map(|s| (*s).to_owned()));
    used.extend(case_cols.iter().map(|c| c.name.clone()));
    used.extend(input.event_attrs.iter().map(|c| c.name.clone()));
    let mut rename = |col: &mut Column, what: &str, why: &str, used: &mut HashSet<String>| {
        let new = (2..)
            .map(|k| format!("{}#{k}", col.name))
            .find(|n| !used.contains(n))
            .unwrap_or_default();
        warnings.push(format!(
            "{what} '{}' is kept as column '{new}': {why}",
            col.name
        ));
        used.insert(new.clone());
        col.name = new;
    };
    let standard_name = "its key is the name of a standard column of the log's tables";
    let mut case_names = HashSet::new();
    for col in case_cols.iter_mut() {
        if standard.contains(&col.name) || CASE_TABLE.contains(&col.name.as_str()) {
            rename(col, "trace attribute", standard_name, &mut used);
        }
        case_names.insert(col.name.clone());
    }
    for col in &mut input.event_attrs {
        if standard.contains(&col.name) {
            rename(col, "event attribute", standard_name, &mut used);
        } else if case_names.contains(&col.name) {
            rename(
                col,
                "event attribute",
                "a trace attribute has the same key",
                &mut used,
            );
        }
    }
}

/// Build the log and describe the file: `(handle, n_dup, n_reordered, meta, report)`.
fn finish<'py>(
    py: Python<'py>,
    x: XesLog,
) -> PyResult<(PyLog, u64, u64, Bound<'py, PyDict>, Bound<'py, PyDict>)> {
    let XesLog {
        mut input,
        meta,
        mut report,
    } = x;
    rename_clashes(&mut input, &mut report.warnings);
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
