//! Array conversion between numpy and the core's columns. Exact dtypes only: coercion lives in
//! the Python adapters (`tracemill._frames`).

use std::sync::Arc;

use numpy::{IntoPyArray, PyArray1, PyReadonlyArray1};
use pyo3::prelude::*;
use pyo3::types::{PyList, PyTuple};

use crate::error::TmError;
use crate::log::{Column, Values};

use super::errors::to_py;

/// Copy a 1-D numpy array of exactly dtype `T` into a Vec, naming `what` on a dtype mismatch.
pub fn vec_of<'py, T: numpy::Element + Copy>(
    obj: &Bound<'py, PyAny>,
    what: &str,
) -> PyResult<Vec<T>> {
    let arr: PyReadonlyArray1<'py, T> = obj.extract().map_err(|_| {
        let got = obj
            .getattr("dtype")
            .map(|d| d.to_string())
            .unwrap_or_else(|_| obj.get_type().to_string());
        to_py(TmError::schema(
            what,
            None,
            format!(
                "internal conversion of '{what}' expected a 1-D numpy array of {}; got {got}",
                std::any::type_name::<T>()
            ),
        ))
    })?;
    Ok(match arr.as_slice() {
        Ok(s) => s.to_vec(),
        Err(_) => arr.as_array().iter().copied().collect(),
    })
}

/// A column from the tuple `(name, kind, values, valid or None, dictionary or None)`.
pub fn column_from_py(t: &Bound<'_, PyAny>) -> PyResult<Column> {
    let t = t.cast::<PyTuple>()?;
    let name: String = t.get_item(0)?.extract()?;
    let kind: String = t.get_item(1)?.extract()?;
    let vals = t.get_item(2)?;
    let valid_obj = t.get_item(3)?;
    let valid = if valid_obj.is_none() {
        None
    } else {
        Some(vec_of::<bool>(&valid_obj, &name)?)
    };
    let values = match kind.as_str() {
        "float" => Values::F64(vec_of(&vals, &name)?),
        "int" => Values::I64(vec_of(&vals, &name)?),
        "time" => Values::Time(vec_of(&vals, &name)?),
        "bool" => Values::Bool(vec_of(&vals, &name)?),
        "str" => {
            let dict: Vec<String> = t.get_item(4)?.extract()?;
            Values::Cat {
                codes: vec_of(&vals, &name)?,
                dict: Arc::new(dict),
            }
        }
        other => {
            return Err(to_py(TmError::schema(
                name,
                None,
                format!("unknown column kind '{other}'"),
            )))
        }
    };
    if let Some(v) = &valid {
        if v.len() != values.len() {
            return Err(to_py(TmError::schema(
                name.clone(),
                None,
                format!("column '{name}': validity mask and values differ in length"),
            )));
        }
    }
    Ok(Column {
        name,
        values,
        valid,
    })
}

/// The tuple `(name, kind, values, valid or None, dictionary or None)` of a column.
pub fn column_to_py<'py>(py: Python<'py>, c: &Column) -> PyResult<Bound<'py, PyTuple>> {
    let kind = crate::log::column::type_name(&c.values);
    let (vals, dict): (Bound<'py, PyAny>, Bound<'py, PyAny>) = match &c.values {
        Values::F64(v) => (
            v.clone().into_pyarray(py).into_any(),
            py.None().into_bound(py),
        ),
        Values::I64(v) | Values::Time(v) => (
            v.clone().into_pyarray(py).into_any(),
            py.None().into_bound(py),
        ),
        Values::Bool(v) => (
            v.clone().into_pyarray(py).into_any(),
            py.None().into_bound(py),
        ),
        Values::Cat { codes, dict } => (
            codes.clone().into_pyarray(py).into_any(),
            PyList::new(py, dict.iter())?.into_any(),
        ),
    };
    let valid: Bound<'py, PyAny> = match &c.valid {
        Some(m) => m.clone().into_pyarray(py).into_any(),
        None => py.None().into_bound(py),
    };
    PyTuple::new(
        py,
        [
            c.name.clone().into_pyobject(py)?.into_any(),
            kind.into_pyobject(py)?.into_any(),
            vals,
            valid,
            dict,
        ],
    )
}

/// A usize vector as an int64 numpy array.
pub fn usize_arr<'py>(py: Python<'py>, v: &[usize]) -> Bound<'py, PyArray1<i64>> {
    v.iter()
        .map(|&x| x as i64)
        .collect::<Vec<i64>>()
        .into_pyarray(py)
}

/// Encode a UTF-8 column given as Arrow buffers; returns `(codes, names)` with nulls coded
/// `2**32 - 1`.
#[pyfunction]
#[pyo3(signature = (offsets, data, valid, column))]
pub fn factorize_utf8<'py>(
    py: Python<'py>,
    offsets: PyReadonlyArray1<'py, i64>,
    data: PyReadonlyArray1<'py, u8>,
    valid: Option<PyReadonlyArray1<'py, bool>>,
    column: &str,
) -> PyResult<(Bound<'py, PyArray1<u32>>, Vec<String>)> {
    let o = offsets.as_slice()?;
    let d = data.as_slice()?;
    let v = valid.as_ref().map(|x| x.as_slice()).transpose()?;
    let (codes, names) = super::run::run(py, None, |_| {
        crate::log::factorize::factorize_utf8(o, d, v, column)
    })?;
    Ok((codes.into_pyarray(py), names))
}

/// Encode an int64 column; returns `(codes, uniques)` with nulls coded `2**32 - 1`.
#[pyfunction]
#[pyo3(signature = (values, valid))]
pub fn factorize_i64<'py>(
    py: Python<'py>,
    values: PyReadonlyArray1<'py, i64>,
    valid: Option<PyReadonlyArray1<'py, bool>>,
) -> PyResult<(Bound<'py, PyArray1<u32>>, Bound<'py, PyArray1<i64>>)> {
    let x = values.as_slice()?;
    let v = valid.as_ref().map(|x| x.as_slice()).transpose()?;
    let (codes, uniq) =
        super::run::run(py, None, |_| Ok(crate::log::factorize::factorize_i64(x, v)))?;
    Ok((codes.into_pyarray(py), uniq.into_pyarray(py)))
}
