//! The one mapping from [`TmError`] to Python exceptions (classes in `tracemill.exceptions`).

use pyo3::exceptions::PyKeyboardInterrupt;
use pyo3::prelude::*;

use crate::error::TmError;

pyo3::import_exception!(tracemill.exceptions, SchemaError);
pyo3::import_exception!(tracemill.exceptions, TimestampError);
pyo3::import_exception!(tracemill.exceptions, FormatError);
pyo3::import_exception!(tracemill.exceptions, ParameterError);
pyo3::import_exception!(tracemill.exceptions, DataError);
pyo3::import_exception!(tracemill.exceptions, LimitError);
pyo3::import_exception!(tracemill.exceptions, TracemillIOError);
pyo3::import_exception!(tracemill.exceptions, InternalError);

/// Attach structured fields (`column`, `row`, `line`, `parameter`) to a raised exception.
fn with_fields(err: PyErr, fields: &[(&str, Option<Py<PyAny>>)]) -> PyErr {
    Python::attach(|py| {
        let value = err.value(py);
        for (k, v) in fields {
            let v = v.as_ref().map_or_else(|| py.None(), |x| x.clone_ref(py));
            let _ = value.setattr(*k, v);
        }
    });
    err
}

/// Convert a core error into the matching Python exception.
pub fn to_py(e: TmError) -> PyErr {
    let msg = e.to_string();
    Python::attach(|py| {
        let s = |x: &Option<String>| {
            x.as_ref()
                .and_then(|v| v.clone().into_pyobject(py).ok())
                .map(|o| o.into_any().unbind())
        };
        let u = |x: &Option<u64>| {
            x.and_then(|v| v.into_pyobject(py).ok().map(|o| o.into_any().unbind()))
        };
        match &e {
            TmError::Schema { column, row, .. } => with_fields(
                SchemaError::new_err(msg),
                &[("column", s(column)), ("row", u(row))],
            ),
            TmError::Timestamp {
                column, row, line, ..
            } => with_fields(
                TimestampError::new_err(msg),
                &[("column", s(column)), ("row", u(row)), ("line", u(line))],
            ),
            TmError::Format { line, .. } => {
                with_fields(FormatError::new_err(msg), &[("line", u(line))])
            }
            TmError::Parameter { name, .. } => with_fields(
                ParameterError::new_err(msg),
                &[("parameter", s(&Some(name.clone())))],
            ),
            TmError::Data { .. } => DataError::new_err(msg),
            TmError::Limit { .. } => LimitError::new_err(msg),
            TmError::Io { .. } => TracemillIOError::new_err(msg),
            TmError::Interrupted => PyKeyboardInterrupt::new_err("interrupted"),
            TmError::Internal { .. } => InternalError::new_err(format!(
                "{msg} (this is a bug in tracemill; please report it)"
            )),
        }
    })
}
