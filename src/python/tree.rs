//! Bindings of the tree learner (`tracemill.tree` wraps them in estimator classes).

use std::sync::Arc;

use numpy::{
    IntoPyArray, PyArray1, PyArray2, PyArrayMethods, PyReadonlyArray1, PyReadonlyArray2,
    PyUntypedArrayMethods,
};
use pyo3::prelude::*;
use pyo3::types::PyDict;

use super::errors::to_py;
use super::run::run;
use crate::error::TmError;
use crate::tree::{
    self, CategoricalSplit, Criterion, FeatureKind, Features, MissingPolicy, Node, Rule, Target,
    Tree, TreeParams, UnseenPolicy,
};

/// A fitted tree (immutable; pruning returns a new handle).
#[pyclass(frozen, module = "tracemill._core", name = "TreeHandle")]
pub struct PyTree {
    inner: Arc<Tree>,
}

fn kinds_of(kinds: &[i64]) -> Vec<FeatureKind> {
    kinds
        .iter()
        .map(|&k| {
            if k < 0 {
                FeatureKind::Numeric
            } else {
                FeatureKind::Categorical(k as u32)
            }
        })
        .collect()
}

fn slice2<'a>(x: &'a PyReadonlyArray2<'_, f64>) -> PyResult<(&'a [f64], usize)> {
    let n = x.shape()[0];
    let s = x.as_slice().map_err(|_| {
        to_py(TmError::data(
            "internal conversion expected a C-contiguous float64 feature matrix",
        ))
    })?;
    Ok((s, n))
}

/// Parameters from the flat arguments the Python estimators pass.
#[allow(clippy::too_many_arguments)]
fn params_of(
    criterion: &str,
    max_depth: Option<usize>,
    min_samples_split: usize,
    min_samples_leaf: usize,
    min_impurity_decrease: f64,
    categorical_split: &str,
    missing_values: &str,
    ccp_alpha: f64,
) -> PyResult<TreeParams> {
    let p = TreeParams {
        criterion: Criterion::parse(criterion).map_err(to_py)?,
        max_depth,
        min_samples_split,
        min_samples_leaf,
        min_impurity_decrease,
        categorical_split: CategoricalSplit::parse(categorical_split).map_err(to_py)?,
        missing: MissingPolicy::parse(missing_values).map_err(to_py)?,
        ccp_alpha,
    };
    p.validate().map_err(to_py)?;
    Ok(p)
}

enum OwnedTarget {
    Classes(Vec<u32>, usize),
    Values(Vec<f64>),
}

impl OwnedTarget {
    fn view(&self) -> Target<'_> {
        match self {
            OwnedTarget::Classes(y, k) => Target::Classes { y, n_classes: *k },
            OwnedTarget::Values(v) => Target::Values(v),
        }
    }
}

fn target_of(
    y_class: Option<PyReadonlyArray1<'_, u32>>,
    n_classes: usize,
    y_value: Option<PyReadonlyArray1<'_, f64>>,
) -> PyResult<OwnedTarget> {
    match (y_class, y_value) {
        (Some(y), None) => Ok(OwnedTarget::Classes(y.as_array().to_vec(), n_classes)),
        (None, Some(v)) => Ok(OwnedTarget::Values(v.as_array().to_vec())),
        _ => Err(to_py(TmError::Internal {
            message: "internal error: give exactly one of y_class and y_value".into(),
        })),
    }
}

/// Fit a tree.
#[pyfunction]
#[pyo3(signature = (x, kinds, names, y_class, n_classes, y_value, sample_weight, criterion, max_depth, min_samples_split, min_samples_leaf, min_impurity_decrease, categorical_split, missing_values, ccp_alpha, progress=None))]
#[allow(clippy::too_many_arguments)]
pub fn tree_fit(
    py: Python<'_>,
    x: PyReadonlyArray2<'_, f64>,
    kinds: Vec<i64>,
    names: Vec<String>,
    y_class: Option<PyReadonlyArray1<'_, u32>>,
    n_classes: usize,
    y_value: Option<PyReadonlyArray1<'_, f64>>,
    sample_weight: Option<PyReadonlyArray1<'_, f64>>,
    criterion: &str,
    max_depth: Option<usize>,
    min_samples_split: usize,
    min_samples_leaf: usize,
    min_impurity_decrease: f64,
    categorical_split: &str,
    missing_values: &str,
    ccp_alpha: f64,
    progress: Option<Py<PyAny>>,
) -> PyResult<PyTree> {
    let p = params_of(
        criterion,
        max_depth,
        min_samples_split,
        min_samples_leaf,
        min_impurity_decrease,
        categorical_split,
        missing_values,
        ccp_alpha,
    )?;
    let (xs, n) = slice2(&x)?;
    let target = target_of(y_class, n_classes, y_value)?;
    let w: Option<Vec<f64>> = sample_weight.map(|w| w.as_array().to_vec());
    let kinds = kinds_of(&kinds);
    let t = run(py, progress, move |ctl| {
        let f = Features::from_row_major(xs, n, kinds, p.missing, &names)?;
        tree::fit(&f, target.view(), w.as_deref(), &p, ctl)
    })?;
    Ok(PyTree { inner: Arc::new(t) })
}

/// Out-of-fold predictions (probabilities or means), one row per sample.
#[pyfunction]
#[pyo3(signature = (x, kinds, names, y_class, n_classes, y_value, sample_weight, fold, n_folds, criterion, max_depth, min_samples_split, min_samples_leaf, min_impurity_decrease, categorical_split, missing_values, ccp_alpha, progress=None))]
#[allow(clippy::too_many_arguments)]
pub fn tree_fold_predict<'py>(
    py: Python<'py>,
    x: PyReadonlyArray2<'_, f64>,
    kinds: Vec<i64>,
    names: Vec<String>,
    y_class: Option<PyReadonlyArray1<'_, u32>>,
    n_classes: usize,
    y_value: Option<PyReadonlyArray1<'_, f64>>,
    sample_weight: Option<PyReadonlyArray1<'_, f64>>,
    fold: PyReadonlyArray1<'_, u32>,
    n_folds: usize,
    criterion: &str,
    max_depth: Option<usize>,
    min_samples_split: usize,
    min_samples_leaf: usize,
    min_impurity_decrease: f64,
    categorical_split: &str,
    missing_values: &str,
    ccp_alpha: f64,
    progress: Option<Py<PyAny>>,
) -> PyResult<Bound<'py, PyArray2<f64>>> {
    let p = params_of(
        criterion,
        max_depth,
        min_samples_split,
        min_samples_leaf,
        min_impurity_decrease,
        categorical_split,
        missing_values,
        ccp_alpha,
    )?;
    let (xs, n) = slice2(&x)?;
    let target = target_of(y_class, n_classes, y_value)?;
    let dim = if n_classes > 0 { n_classes } else { 1 };
    let w: Option<Vec<f64>> = sample_weight.map(|w| w.as_array().to_vec());
    let fold = fold.as_array().to_vec();
    let kinds = kinds_of(&kinds);
    let out = run(py, progress, move |ctl| {
        let f = Features::from_row_major(xs, n, kinds, p.missing, &names)?;
        tree::fit_predict_folds(&f, target.view(), w.as_deref(), &p, &fold, n_folds, ctl)
    })?;
    let arr = out.into_pyarray(py);
    arr.reshape([n, dim])
}

/// Best root split per feature: `(gain, score)` arrays.
#[pyfunction]
#[pyo3(signature = (x, kinds, names, y_class, n_classes, y_value, sample_weight, criterion, categorical_split, missing_values, min_samples_leaf=1))]
#[allow(clippy::too_many_arguments)]
pub fn tree_root_scores<'py>(
    py: Python<'py>,
    x: PyReadonlyArray2<'_, f64>,
    kinds: Vec<i64>,
    names: Vec<String>,
    y_class: Option<PyReadonlyArray1<'_, u32>>,
    n_classes: usize,
    y_value: Option<PyReadonlyArray1<'_, f64>>,
    sample_weight: Option<PyReadonlyArray1<'_, f64>>,
    criterion: &str,
    categorical_split: &str,
    missing_values: &str,
    min_samples_leaf: usize,
) -> PyResult<(Bound<'py, PyArray1<f64>>, Bound<'py, PyArray1<f64>>)> {
    let p = params_of(
        criterion,
        None,
        2,
        min_samples_leaf,
        0.0,
        categorical_split,
        missing_values,
        0.0,
    )?;
    let (xs, n) = slice2(&x)?;
    let target = target_of(y_class, n_classes, y_value)?;
    let w: Option<Vec<f64>> = sample_weight.map(|w| w.as_array().to_vec());
    let kinds = kinds_of(&kinds);
    let res = run(py, None, move |_| {
        let f = Features::from_row_major(xs, n, kinds, p.missing, &names)?;
        tree::build::root_split_scores(&f, target.view(), w.as_deref(), &p)
    })?;
    let (g, s): (Vec<f64>, Vec<f64>) = res.into_iter().unzip();
    Ok((g.into_pyarray(py), s.into_pyarray(py)))
}

/// Rebuild a tree from the arrays of [`PyTree::arrays`].
#[pyfunction]
#[allow(clippy::too_many_arguments)]
pub fn tree_from_arrays(
    kinds: Vec<i64>,
    n_classes: usize,
    missing_values: &str,
    feature: PyReadonlyArray1<'_, i64>,
    threshold: PyReadonlyArray1<'_, f64>,
    missing_slot: PyReadonlyArray1<'_, u8>,
    child_ptr: PyReadonlyArray1<'_, i64>,
    child_ids: PyReadonlyArray1<'_, i64>,
    slot_ptr: PyReadonlyArray1<'_, i64>,
    slots: PyReadonlyArray1<'_, u8>,
    depth: PyReadonlyArray1<'_, i64>,
    n_samples: PyReadonlyArray1<'_, i64>,
    weighted_n: PyReadonlyArray1<'_, f64>,
    impurity: PyReadonlyArray1<'_, f64>,
    value: PyReadonlyArray1<'_, f64>,
    counts: PyReadonlyArray1<'_, u64>,
) -> PyResult<PyTree> {
    let bad = |m: &str| to_py(TmError::data(format!("cannot rebuild the tree: {m}")));
    let feature = feature.as_array();
    let nn = feature.len();
    let (threshold, missing_slot) = (threshold.as_array(), missing_slot.as_array());
    let (child_ptr, child_ids) = (child_ptr.as_array(), child_ids.as_array());
    let (slot_ptr, slots) = (slot_ptr.as_array(), slots.as_array());
    let (depth, n_samples) = (depth.as_array(), n_samples.as_array());
    let (weighted_n, impurity) = (weighted_n.as_array(), impurity.as_array());
    let (value, counts) = (value.as_array(), counts.as_array());
    let dim = if n_classes > 0 { n_classes } else { 1 };
    if [
        threshold.len(),
        missing_slot.len(),
        depth.len(),
        n_samples.len(),
        weighted_n.len(),
        impurity.len(),
    ]
    .iter()
    .any(|&l| l != nn)
        || child_ptr.len() != nn + 1
        || slot_ptr.len() != nn + 1
        || value.len() != nn * dim
        || counts.len() != nn * n_classes
    {
        return Err(bad("array lengths disagree"));
    }
    let mut nodes = Vec::with_capacity(nn);
    for i in 0..nn {
        let (c0, c1) = (child_ptr[i] as usize, child_ptr[i + 1] as usize);
        let (s0, s1) = (slot_ptr[i] as usize, slot_ptr[i + 1] as usize);
        if c1 < c0 || c1 > child_ids.len() || s1 < s0 || s1 > slots.len() {
            return Err(bad("offsets out of range"));
        }
        let children: Vec<usize> = (c0..c1).map(|k| child_ids[k] as usize).collect();
        if children.iter().any(|&c| c >= nn || c <= i) {
            return Err(bad("child ids out of range"));
        }
        let feat = (feature[i] >= 0).then_some(feature[i] as usize);
        if feat.is_some_and(|f| f >= kinds.len()) || feat.is_some() == children.is_empty() {
            return Err(bad("feature ids out of range"));
        }
        let rule = feat.map(|_| {
            if s1 > s0 {
                Rule::Slots((s0..s1).map(|k| slots[k]).collect())
            } else {
                Rule::Threshold(threshold[i])
            }
        });
        nodes.push(Node {
            feature: feat,
            rule,
            missing_slot: missing_slot[i],
            children,
            depth: depth[i] as usize,
            n_samples: n_samples[i] as usize,
            weighted_n: weighted_n[i],
            impurity: impurity[i],
            value: (0..dim).map(|k| value[i * dim + k]).collect(),
            counts: (0..n_classes).map(|k| counts[i * n_classes + k]).collect(),
        });
    }
    Ok(PyTree {
        inner: Arc::new(Tree {
            nodes,
            kinds: kinds_of(&kinds),
            n_classes,
            missing: MissingPolicy::parse(missing_values).map_err(to_py)?,
        }),
    })
}

#[pymethods]
impl PyTree {
    #[getter]
    fn n_leaves(&self) -> usize {
        self.inner.n_leaves()
    }
    #[getter]
    fn depth(&self) -> usize {
        self.inner.depth()
    }
    #[getter]
    fn n_nodes(&self) -> usize {
        self.inner.nodes.len()
    }

    fn __repr__(&self) -> String {
        format!(
            "TreeHandle(n_nodes={}, n_leaves={}, depth={})",
            self.inner.nodes.len(),
            self.inner.n_leaves(),
            self.inner.depth()
        )
    }

    /// `(leaf ids, number of rows routed past an unseen category)`.
    #[pyo3(signature = (x, unseen_categories, names))]
    fn apply<'py>(
        &self,
        py: Python<'py>,
        x: PyReadonlyArray2<'_, f64>,
        unseen_categories: &str,
        names: Vec<String>,
    ) -> PyResult<(Bound<'py, PyArray1<i64>>, u64)> {
        let u = UnseenPolicy::parse(unseen_categories).map_err(to_py)?;
        let (xs, n) = slice2(&x)?;
        let t = self.inner.clone();
        let (leaves, nu) = run(py, None, move |_| t.apply(xs, n, u, &names))?;
        let leaves: Vec<i64> = leaves.into_iter().map(|l| l as i64).collect();
        Ok((leaves.into_pyarray(py), nu))
    }

    /// Normalised impurity decrease per feature.
    fn feature_importances<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        self.inner.feature_importances().into_pyarray(py)
    }

    /// `(ccp_alphas, impurities)` of minimal cost-complexity pruning.
    fn pruning_path<'py>(
        &self,
        py: Python<'py>,
    ) -> (Bound<'py, PyArray1<f64>>, Bound<'py, PyArray1<f64>>) {
        let (a, i) = tree::pruning_path(&self.inner);
        (a.into_pyarray(py), i.into_pyarray(py))
    }

    /// A new tree pruned at `alpha`.
    fn prune(&self, alpha: f64) -> PyResult<PyTree> {
        if !(alpha >= 0.0 && alpha.is_finite()) {
            return Err(to_py(TmError::param(
                "ccp_alpha",
                format!("ccp_alpha must be a finite number >= 0; got {alpha}"),
            )));
        }
        Ok(PyTree {
            inner: Arc::new(tree::prune(&self.inner, alpha)),
        })
    }

    /// The tree as flat numpy arrays (see `tree_from_arrays`).
    fn arrays<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
        let t = &self.inner;
        let d = PyDict::new(py);
        let nodes = &t.nodes;
        let feature: Vec<i64> = nodes
            .iter()
            .map(|n| n.feature.map_or(-1, |f| f as i64))
            .collect();
        let threshold: Vec<f64> = nodes
            .iter()
            .map(|n| match &n.rule {
                Some(Rule::Threshold(v)) => *v,
                _ => f64::NAN,
            })
            .collect();
        let mut child_ptr = vec![0i64];
        let mut child_ids = Vec::new();
        let mut slot_ptr = vec![0i64];
        let mut slots: Vec<u8> = Vec::new();
        for n in nodes {
            child_ids.extend(n.children.iter().map(|&c| c as i64));
            child_ptr.push(child_ids.len() as i64);
            if let Some(Rule::Slots(s)) = &n.rule {
                slots.extend_from_slice(s);
            }
            slot_ptr.push(slots.len() as i64);
        }
        d.set_item("feature", feature.into_pyarray(py))?;
        d.set_item("threshold", threshold.into_pyarray(py))?;
        d.set_item(
            "missing_slot",
            nodes
                .iter()
                .map(|n| n.missing_slot)
                .collect::<Vec<u8>>()
                .into_pyarray(py),
        )?;
        d.set_item("child_ptr", child_ptr.into_pyarray(py))?;
        d.set_item("child_ids", child_ids.into_pyarray(py))?;
        d.set_item("slot_ptr", slot_ptr.into_pyarray(py))?;
        d.set_item("slots", slots.into_pyarray(py))?;
        d.set_item(
            "depth",
            nodes
                .iter()
                .map(|n| n.depth as i64)
                .collect::<Vec<_>>()
                .into_pyarray(py),
        )?;
        d.set_item(
            "n_samples",
            nodes
                .iter()
                .map(|n| n.n_samples as i64)
                .collect::<Vec<_>>()
                .into_pyarray(py),
        )?;
        d.set_item(
            "weighted_n",
            nodes
                .iter()
                .map(|n| n.weighted_n)
                .collect::<Vec<_>>()
                .into_pyarray(py),
        )?;
        d.set_item(
            "impurity",
            nodes
                .iter()
                .map(|n| n.impurity)
                .collect::<Vec<_>>()
                .into_pyarray(py),
        )?;
        d.set_item(
            "value",
            nodes
                .iter()
                .flat_map(|n| n.value.iter().copied())
                .collect::<Vec<_>>()
                .into_pyarray(py),
        )?;
        d.set_item(
            "counts",
            nodes
                .iter()
                .flat_map(|n| n.counts.iter().copied())
                .collect::<Vec<u64>>()
                .into_pyarray(py),
        )?;
        d.set_item("n_classes", t.n_classes)?;
        Ok(d)
    }
}

/// Register the tree classes and functions.
pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_class::<PyTree>()?;
    m.add_function(wrap_pyfunction!(tree_fit, m)?)?;
    m.add_function(wrap_pyfunction!(tree_fold_predict, m)?)?;
    m.add_function(wrap_pyfunction!(tree_root_scores, m)?)?;
    m.add_function(wrap_pyfunction!(tree_from_arrays, m)?)?;
    Ok(())
}
