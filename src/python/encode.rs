//! Bindings for trace encodings and pairwise distances (`tracemill.encode`,
//! `tracemill.cluster`). Arrays are borrowed, never copied on the way in; results move into
//! numpy without a copy.

use numpy::{IntoPyArray, PyArray1, PyReadonlyArray1};
use pyo3::prelude::*;
use pyo3::types::PyTuple;
use rayon::prelude::*;

use super::errors::to_py;
use super::log::PyLog;
use super::run::run;
use crate::distance::levenshtein::{edit_pdist, SubCosts};
use crate::distance::{pdist, Metric};
use crate::encode::{self, NgramOptions, NgramVocab, Norm};
use crate::error::TmError;

pub(crate) fn slice<'a, T: numpy::Element>(
    a: &'a PyReadonlyArray1<'_, T>,
    what: &str,
) -> PyResult<&'a [T]> {
    a.as_slice().map_err(|_| {
        to_py(TmError::param(
            what,
            format!("internal conversion: '{what}' must be a C-contiguous 1-D array"),
        ))
    })
}

fn vocab_tuple<'py>(py: Python<'py>, v: NgramVocab) -> PyResult<Bound<'py, PyTuple>> {
    let off: Vec<i64> = v.offsets.iter().map(|&o| o as i64).collect();
    PyTuple::new(
        py,
        [
            off.into_pyarray(py).into_any(),
            v.codes.into_pyarray(py).into_any(),
            v.df.into_pyarray(py).into_any(),
        ],
    )
}

/// Fit an n-gram vocabulary: `(offsets, codes, df)`.
#[pyfunction]
#[pyo3(signature = (log, map, n_ref, n_min, n_max, max_features=None, progress=None))]
pub fn ngram_fit<'py>(
    py: Python<'py>,
    log: &PyLog,
    map: PyReadonlyArray1<'py, u32>,
    n_ref: usize,
    n_min: usize,
    n_max: usize,
    max_features: Option<usize>,
    progress: Option<Py<PyAny>>,
) -> PyResult<Bound<'py, PyTuple>> {
    let m = slice(&map, "map")?;
    let l = &*log.inner;
    let v = run(py, progress, |ctl| {
        encode::ngram_fit(l, m, n_ref, n_min, n_max, max_features, ctl)
    })?;
    vocab_tuple(py, v)
}

/// The all-activities vocabulary with document frequencies: `(offsets, codes, df)`.
#[pyfunction]
pub fn activity_vocab<'py>(
    py: Python<'py>,
    log: &PyLog,
    map: PyReadonlyArray1<'py, u32>,
    n_ref: usize,
) -> PyResult<Bound<'py, PyTuple>> {
    let m = slice(&map, "map")?;
    let l = &*log.inner;
    let v = run(py, None, |_| encode::activity_vocab(l, m, n_ref))?;
    vocab_tuple(py, v)
}

/// Apply a vocabulary: `(indptr, indices, data, n_cols, n_unseen_events)`; `indptr` is int32
/// when the matrix is small enough, so scipy keeps all three buffers as they are.
#[pyfunction]
#[pyo3(signature = (log, map, n_ref, vocab_offsets, vocab_codes, binary=false, idf=None, norm="none", progress=None))]
pub fn ngram_transform<'py>(
    py: Python<'py>,
    log: &PyLog,
    map: PyReadonlyArray1<'py, u32>,
    n_ref: usize,
    vocab_offsets: PyReadonlyArray1<'py, i64>,
    vocab_codes: PyReadonlyArray1<'py, u32>,
    binary: bool,
    idf: Option<PyReadonlyArray1<'py, f64>>,
    norm: &str,
    progress: Option<Py<PyAny>>,
) -> PyResult<Bound<'py, PyTuple>> {
    let m = slice(&map, "map")?;
    let off = slice(&vocab_offsets, "vocab_offsets")?;
    let codes = slice(&vocab_codes, "vocab_codes")?;
    if off.is_empty()
        || off[0] != 0
        || off.windows(2).any(|w| w[1] < w[0])
        || off[off.len() - 1] as usize != codes.len()
    {
        return Err(to_py(TmError::param(
            "vocabulary",
            "inconsistent vocabulary offsets",
        )));
    }
    let vocab = NgramVocab {
        offsets: off.iter().map(|&o| o as usize).collect(),
        codes: codes.to_vec(),
        df: Vec::new(),
    };
    let opts = NgramOptions {
        binary,
        idf: match &idf {
            Some(a) => Some(slice(a, "idf")?.to_vec()),
            None => None,
        },
        norm: Norm::parse(norm).map_err(to_py)?,
    };
    let l = &*log.inner;
    let (csr, unseen) = run(py, progress, |ctl| {
        encode::ngram_transform(l, m, n_ref, &vocab, &opts, ctl)
    })?;
    let (indptr, indices, data, n_cols) = csr_arrays(py, csr);
    PyTuple::new(
        py,
        [
            indptr,
            indices,
            data,
            n_cols.into_pyobject(py)?.into_any(),
            unseen.into_pyobject(py)?.into_any(),
        ],
    )
}

/// A CSR matrix as numpy arrays `(indptr, indices, data, n_cols)`; `indptr` is int32 when the
/// values allow, so that scipy keeps both index arrays as they are instead of copying one.
fn csr_arrays(
    py: Python<'_>,
    csr: encode::Csr,
) -> (Bound<'_, PyAny>, Bound<'_, PyAny>, Bound<'_, PyAny>, usize) {
    let indptr = if csr.indices.len() < i32::MAX as usize {
        let small: Vec<i32> = csr.indptr.par_iter().map(|&v| v as i32).collect();
        small.into_pyarray(py).into_any()
    } else {
        csr.indptr.into_pyarray(py).into_any()
    };
    (
        indptr,
        csr.indices.into_pyarray(py).into_any(),
        csr.data.into_pyarray(py).into_any(),
        csr.n_cols,
    )
}

/// Stack CSR parts side by side (see `encode::hstack`); returns `(indptr, indices, data,
/// n_cols)`.
#[pyfunction]
pub fn csr_hstack<'py>(
    py: Python<'py>,
    indptrs: Vec<PyReadonlyArray1<'py, i64>>,
    indices: Vec<PyReadonlyArray1<'py, i32>>,
    data: Vec<PyReadonlyArray1<'py, f64>>,
    n_cols: Vec<usize>,
    weights: Vec<f64>,
    n_rows: usize,
) -> PyResult<Bound<'py, PyTuple>> {
    if indices.len() != indptrs.len()
        || data.len() != indptrs.len()
        || n_cols.len() != indptrs.len()
    {
        return Err(to_py(TmError::param(
            "profiles",
            "internal conversion: one indptr, indices, data and width per part",
        )));
    }
    let mut parts = Vec::with_capacity(indptrs.len());
    for (((p, i), d), &c) in indptrs.iter().zip(&indices).zip(&data).zip(&n_cols) {
        parts.push(encode::CsrView {
            indptr: slice(p, "indptr")?,
            indices: slice(i, "indices")?,
            data: slice(d, "data")?,
            n_cols: c,
        });
    }
    let csr = run(py, None, |_| encode::hstack(&parts, &weights, n_rows))?;
    let (indptr, indices, data, n_cols) = csr_arrays(py, csr);
    PyTuple::new(
        py,
        [indptr, indices, data, n_cols.into_pyobject(py)?.into_any()],
    )
}

/// The performance profile as a flat row-major array and the number of unseen events.
#[pyfunction]
pub fn performance_profile<'py>(
    py: Python<'py>,
    log: &PyLog,
    map: PyReadonlyArray1<'py, u32>,
    n_ref: usize,
) -> PyResult<(Bound<'py, PyArray1<f64>>, u64)> {
    let m = slice(&map, "map")?;
    let l = &*log.inner;
    let (v, u) = run(py, None, |ctl| {
        encode::performance_profile(l, m, n_ref, ctl)
    })?;
    Ok((v.into_pyarray(py), u))
}

/// Condensed pairwise distances of `n x d` rows.
#[pyfunction]
#[pyo3(signature = (x, n, d, metric, max_bytes, progress=None))]
pub fn pairwise_condensed<'py>(
    py: Python<'py>,
    x: PyReadonlyArray1<'py, f64>,
    n: usize,
    d: usize,
    metric: &str,
    max_bytes: u64,
    progress: Option<Py<PyAny>>,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let xs = slice(&x, "X")?;
    let met = Metric::parse(metric).map_err(to_py)?;
    Ok(run(py, progress, |ctl| pdist(xs, n, d, met, max_bytes, ctl))?.into_pyarray(py))
}

/// Square form of a condensed vector (parallel).
#[pyfunction]
pub fn squareform<'py>(
    py: Python<'py>,
    cond: PyReadonlyArray1<'py, f64>,
    n: usize,
    max_bytes: u64,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let c = slice(&cond, "distances")?;
    Ok(run(py, None, |_| crate::distance::squareform(c, n, max_bytes))?.into_pyarray(py))
}

/// Condensed edit distances between sequences in CSR form.
#[pyfunction]
#[pyo3(signature = (offsets, codes, sub_cost, n_activities, normalised, max_bytes, progress=None))]
pub fn edit_condensed<'py>(
    py: Python<'py>,
    offsets: PyReadonlyArray1<'py, i64>,
    codes: PyReadonlyArray1<'py, u32>,
    sub_cost: Option<PyReadonlyArray1<'py, f64>>,
    n_activities: usize,
    normalised: bool,
    max_bytes: u64,
    progress: Option<Py<PyAny>>,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let off: Vec<usize> = slice(&offsets, "offsets")?
        .iter()
        .map(|&o| o.max(0) as usize)
        .collect();
    let c = slice(&codes, "codes")?;
    if off.is_empty() || off.windows(2).any(|w| w[1] < w[0]) || off[off.len() - 1] != c.len() {
        return Err(to_py(TmError::param(
            "offsets",
            "inconsistent sequence offsets",
        )));
    }
    let sub = match &sub_cost {
        Some(a) => Some(
            SubCosts::new(n_activities, slice(a, "substitution_cost")?.to_vec()).map_err(to_py)?,
        ),
        None => None,
    };
    Ok(run(py, progress, |ctl| {
        edit_pdist(&off, c, sub.as_ref(), normalised, max_bytes, ctl)
    })?
    .into_pyarray(py))
}

/// Check a precomputed square matrix (raises on the first bad cell).
#[pyfunction]
pub fn check_square(py: Python<'_>, m: PyReadonlyArray1<'_, f64>, n: usize) -> PyResult<()> {
    let s = slice(&m, "X")?;
    run(py, None, |_| crate::distance::check_square(s, n))
}
