//! Bindings for the clustering kernels and quality indices (`tracemill.cluster`).

use numpy::{IntoPyArray, PyArray1, PyReadonlyArray1};
use pyo3::prelude::*;

use super::encode::slice;
use super::errors::to_py;
use super::run::run;
use crate::cluster::dbscan::{dbscan as dbscan_kernel, DbscanInput};
use crate::cluster::hierarchical::{self, Linkage};
use crate::cluster::kmeans::{self, Init, KMeansParams, Points};
use crate::cluster::kmedoids::{fasterpam as fasterpam_kernel, MedoidInit};
use crate::cluster::quality::{self, Dist};
use crate::distance::Metric;
use crate::error::TmError;

type F64Arr<'py> = PyReadonlyArray1<'py, f64>;

fn points<'a>(
    x: Option<&'a [f64]>,
    sparse: Option<(&'a [i64], &'a [i32], &'a [f64])>,
    n: usize,
    d: usize,
) -> PyResult<Points<'a>> {
    match (x, sparse) {
        (Some(x), None) => Ok(Points::Dense { x, n, d }),
        (None, Some((indptr, indices, data))) => Ok(Points::Sparse {
            indptr,
            indices,
            data,
            n,
            d,
        }),
        _ => Err(to_py(TmError::param(
            "X",
            "give dense values or a sparse matrix, not both",
        ))),
    }
}

/// k-means: `(centers, labels, inertia, n_iter)`.
#[pyfunction]
#[pyo3(signature = (x, indptr, indices, data, n, d, weights, n_clusters, init, init_centers, n_init, max_iter, tol, seed, progress=None))]
pub fn kmeans_fit<'py>(
    py: Python<'py>,
    x: Option<F64Arr<'py>>,
    indptr: Option<PyReadonlyArray1<'py, i64>>,
    indices: Option<PyReadonlyArray1<'py, i32>>,
    data: Option<F64Arr<'py>>,
    n: usize,
    d: usize,
    weights: Option<F64Arr<'py>>,
    n_clusters: usize,
    init: &str,
    init_centers: Option<F64Arr<'py>>,
    n_init: usize,
    max_iter: usize,
    tol: f64,
    seed: u64,
    progress: Option<Py<PyAny>>,
) -> PyResult<(
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<u32>>,
    f64,
    usize,
)> {
    let xs = x.as_ref().map(|a| slice(a, "X")).transpose()?;
    let sp = match (&indptr, &indices, &data) {
        (Some(a), Some(b), Some(c)) => {
            Some((slice(a, "indptr")?, slice(b, "indices")?, slice(c, "data")?))
        }
        _ => None,
    };
    let p = points(xs, sp, n, d)?;
    let w = weights
        .as_ref()
        .map(|a| slice(a, "sample_weight"))
        .transpose()?;
    let init = match init {
        "k-means++" => Init::KMeansPlusPlus,
        "random" => Init::Random,
        "array" => Init::Given(
            init_centers
                .as_ref()
                .map(|a| slice(a, "init").map(<[f64]>::to_vec))
                .transpose()?
                .unwrap_or_default(),
        ),
        other => {
            return Err(to_py(TmError::param(
                "init",
                format!("init must be 'k-means++', 'random' or an array of centres; got '{other}'"),
            )))
        }
    };
    let params = KMeansParams {
        n_clusters,
        init,
        n_init,
        max_iter,
        tol,
        seed,
    };
    let f = run(py, progress, |ctl| kmeans::fit(&p, w, &params, ctl))?;
    Ok((
        f.centers.into_pyarray(py),
        f.labels.into_pyarray(py),
        f.inertia,
        f.n_iter,
    ))
}

/// Closest centre per point and inertia.
#[pyfunction]
#[pyo3(signature = (x, indptr, indices, data, n, d, weights, centers))]
pub fn kmeans_predict<'py>(
    py: Python<'py>,
    x: Option<F64Arr<'py>>,
    indptr: Option<PyReadonlyArray1<'py, i64>>,
    indices: Option<PyReadonlyArray1<'py, i32>>,
    data: Option<F64Arr<'py>>,
    n: usize,
    d: usize,
    weights: Option<F64Arr<'py>>,
    centers: F64Arr<'py>,
) -> PyResult<(Bound<'py, PyArray1<u32>>, f64)> {
    let xs = x.as_ref().map(|a| slice(a, "X")).transpose()?;
    let sp = match (&indptr, &indices, &data) {
        (Some(a), Some(b), Some(c)) => {
            Some((slice(a, "indptr")?, slice(b, "indices")?, slice(c, "data")?))
        }
        _ => None,
    };
    let p = points(xs, sp, n, d)?;
    let w = weights
        .as_ref()
        .map(|a| slice(a, "sample_weight"))
        .transpose()?;
    let c = slice(&centers, "centers")?;
    let (labels, inertia) = run(py, None, |_| kmeans::predict(&p, c, w))?;
    Ok((labels.into_pyarray(py), inertia))
}

/// FasterPAM: `(medoids, labels, loss, n_iter, n_swaps)`.
#[pyfunction]
#[pyo3(signature = (m, n, n_clusters, weights, init, init_medoids, seed, max_iter, progress=None))]
pub fn fasterpam<'py>(
    py: Python<'py>,
    m: F64Arr<'py>,
    n: usize,
    n_clusters: usize,
    weights: Option<F64Arr<'py>>,
    init: &str,
    init_medoids: Option<PyReadonlyArray1<'py, i64>>,
    seed: u64,
    max_iter: usize,
    progress: Option<Py<PyAny>>,
) -> PyResult<(
    Bound<'py, PyArray1<i64>>,
    Bound<'py, PyArray1<u32>>,
    f64,
    usize,
    usize,
)> {
    let ms = slice(&m, "X")?;
    let w = weights
        .as_ref()
        .map(|a| slice(a, "sample_weight"))
        .transpose()?;
    let init = match init {
        "build" => MedoidInit::Build,
        "random" => MedoidInit::Random(seed),
        "array" => MedoidInit::Given(
            init_medoids
                .as_ref()
                .map(|a| slice(a, "init").map(|s| s.iter().map(|&v| v.max(0) as usize).collect()))
                .transpose()?
                .unwrap_or_default(),
        ),
        other => {
            return Err(to_py(TmError::param(
                "init",
                format!(
                    "init must be 'build', 'random' or an array of medoid indices; got '{other}'"
                ),
            )))
        }
    };
    let f = run(py, progress, |ctl| {
        fasterpam_kernel(ms, n, n_clusters, w, &init, max_iter, ctl)
    })?;
    let med: Vec<i64> = f.medoids.iter().map(|&v| v as i64).collect();
    Ok((
        med.into_pyarray(py),
        f.labels.into_pyarray(py),
        f.loss,
        f.n_iter,
        f.n_swaps,
    ))
}

/// Linkage matrix (flat, `(n - 1) * 4`) from a condensed vector.
#[pyfunction]
#[pyo3(signature = (cond, n, method, progress=None))]
pub fn linkage_condensed<'py>(
    py: Python<'py>,
    cond: F64Arr<'py>,
    n: usize,
    method: &str,
    progress: Option<Py<PyAny>>,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let c = slice(&cond, "distances")?;
    let m = Linkage::parse(method).map_err(to_py)?;
    Ok(run(py, progress, |ctl| {
        hierarchical::linkage_condensed(c, n, m, ctl)
    })?
    .into_pyarray(py))
}

/// Linkage matrix (flat) from vectors, `O(n d)` memory (ward, centroid, median).
#[pyfunction]
#[pyo3(signature = (x, n, d, method, progress=None))]
pub fn linkage_vectors<'py>(
    py: Python<'py>,
    x: F64Arr<'py>,
    n: usize,
    d: usize,
    method: &str,
    progress: Option<Py<PyAny>>,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let xs = slice(&x, "X")?;
    let m = Linkage::parse(method).map_err(to_py)?;
    Ok(run(py, progress, |ctl| {
        hierarchical::linkage_vectors(xs, n, d, m, ctl)
    })?
    .into_pyarray(py))
}

/// Flat labels from a linkage matrix.
#[pyfunction]
#[pyo3(signature = (z, n, n_clusters=None, threshold=None))]
pub fn cut_linkage<'py>(
    py: Python<'py>,
    z: F64Arr<'py>,
    n: usize,
    n_clusters: Option<usize>,
    threshold: Option<f64>,
) -> PyResult<Bound<'py, PyArray1<i64>>> {
    let zs = slice(&z, "linkage")?;
    Ok(hierarchical::cut(zs, n, n_clusters, threshold)
        .map_err(to_py)?
        .into_pyarray(py))
}

fn dist_of<'a>(x: &'a [f64], n: usize, d: usize, metric: &str) -> PyResult<Dist<'a>> {
    if metric == "precomputed" {
        Ok(Dist::Square { m: x, n })
    } else {
        Ok(Dist::Vectors {
            x,
            n,
            d,
            metric: Metric::parse(metric).map_err(to_py)?,
        })
    }
}

/// DBSCAN: `(labels, core)`.
#[pyfunction]
#[pyo3(signature = (x, n, d, metric, eps, min_samples, weights=None, progress=None))]
pub fn dbscan<'py>(
    py: Python<'py>,
    x: F64Arr<'py>,
    n: usize,
    d: usize,
    metric: &str,
    eps: f64,
    min_samples: f64,
    weights: Option<F64Arr<'py>>,
    progress: Option<Py<PyAny>>,
) -> PyResult<(Bound<'py, PyArray1<i64>>, Bound<'py, PyArray1<bool>>)> {
    let xs = slice(&x, "X")?;
    let w = weights
        .as_ref()
        .map(|a| slice(a, "sample_weight"))
        .transpose()?;
    let input = if metric == "precomputed" {
        DbscanInput::Precomputed { m: xs, n }
    } else {
        DbscanInput::Vectors {
            x: xs,
            n,
            d,
            metric: Metric::parse(metric).map_err(to_py)?,
        }
    };
    let f = run(py, progress, |ctl| {
        dbscan_kernel(input, eps, min_samples, w, ctl)
    })?;
    Ok((f.labels.into_pyarray(py), f.core.into_pyarray(py)))
}

/// Per-point silhouette values.
#[pyfunction]
#[pyo3(signature = (x, n, d, metric, labels, progress=None))]
pub fn silhouette_samples<'py>(
    py: Python<'py>,
    x: F64Arr<'py>,
    n: usize,
    d: usize,
    metric: &str,
    labels: PyReadonlyArray1<'py, i64>,
    progress: Option<Py<PyAny>>,
) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let xs = slice(&x, "X")?;
    let l = slice(&labels, "labels")?;
    let dist = dist_of(xs, n, d, metric)?;
    Ok(run(py, progress, |ctl| {
        quality::silhouette_samples(&dist, l, ctl)
    })?
    .into_pyarray(py))
}

/// Mean within-cluster distance.
#[pyfunction]
#[pyo3(signature = (x, n, d, metric, labels, progress=None))]
pub fn mean_within_distance<'py>(
    py: Python<'py>,
    x: F64Arr<'py>,
    n: usize,
    d: usize,
    metric: &str,
    labels: PyReadonlyArray1<'py, i64>,
    progress: Option<Py<PyAny>>,
) -> PyResult<f64> {
    let xs = slice(&x, "X")?;
    let l = slice(&labels, "labels")?;
    let dist = dist_of(xs, n, d, metric)?;
    run(py, progress, |ctl| {
        quality::mean_within_distance(&dist, l, ctl)
    })
}

/// Davies–Bouldin index.
#[pyfunction]
pub fn davies_bouldin<'py>(
    py: Python<'py>,
    x: F64Arr<'py>,
    n: usize,
    d: usize,
    labels: PyReadonlyArray1<'py, i64>,
) -> PyResult<f64> {
    let xs = slice(&x, "X")?;
    let l = slice(&labels, "labels")?;
    run(py, None, |_| quality::davies_bouldin(xs, n, d, l))
}

/// Calinski–Harabasz index.
#[pyfunction]
pub fn calinski_harabasz<'py>(
    py: Python<'py>,
    x: F64Arr<'py>,
    n: usize,
    d: usize,
    labels: PyReadonlyArray1<'py, i64>,
) -> PyResult<f64> {
    let xs = slice(&x, "X")?;
    let l = slice(&labels, "labels")?;
    run(py, None, |_| quality::calinski_harabasz(xs, n, d, l))
}
