//! Bindings for frequent itemsets and association rules (`src/rules`).

use std::sync::Arc;

use numpy::{IntoPyArray, PyArray1};
use pyo3::prelude::*;
use pyo3::types::PyTuple;

use super::convert::{usize_arr, vec_of};
use super::errors::to_py;
use super::run::run;
use crate::error::TmError;
use crate::rules::{
    association_rules, frequent_itemsets, Algorithm, ItemsetParams, Itemsets, Measure, MinSupport,
    OnLimit, RuleParams, Target, Transactions,
};

/// CSR offsets from an int64 array, rejecting negative values.
pub(crate) fn offsets_of(obj: &Bound<'_, PyAny>, what: &str) -> PyResult<Vec<usize>> {
    let v: Vec<i64> = vec_of(obj, what)?;
    v.into_iter()
        .enumerate()
        .map(|(i, x)| {
            usize::try_from(x).map_err(|_| {
                to_py(TmError::param(
                    what,
                    format!("offset {i} of '{what}' is negative ({x})"),
                ))
            })
        })
        .collect()
}

/// A native, immutable transaction database.
#[pyclass(frozen, module = "tracemill._core", name = "TransactionsHandle")]
pub struct PyTransactions {
    pub inner: Arc<Transactions>,
}

#[pymethods]
impl PyTransactions {
    #[getter]
    fn n_transactions(&self) -> usize {
        self.inner.len()
    }
    #[getter]
    fn n_items(&self) -> usize {
        self.inner.n_items()
    }
    #[getter]
    fn n_empty(&self) -> usize {
        self.inner.n_empty()
    }
    /// `(offsets, items)`: the cleaned CSR arrays.
    fn arrays<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyTuple>> {
        PyTuple::new(
            py,
            [
                usize_arr(py, self.inner.offsets()).into_any(),
                self.inner.items().to_vec().into_pyarray(py).into_any(),
            ],
        )
    }
    /// Support count of every item.
    fn item_counts<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<u64>> {
        self.inner.item_counts().into_pyarray(py)
    }
    fn __repr__(&self) -> String {
        format!(
            "TransactionsHandle(n_transactions={}, n_items={})",
            self.inner.len(),
            self.inner.n_items()
        )
    }
}

/// Build a transaction database from CSR arrays (each transaction sorted, repeats dropped).
#[pyfunction]
pub fn build_transactions(
    py: Python<'_>,
    offsets: Bound<'_, PyAny>,
    items: Bound<'_, PyAny>,
    n_items: usize,
) -> PyResult<PyTransactions> {
    let off = offsets_of(&offsets, "offsets")?;
    let it: Vec<u32> = vec_of(&items, "items")?;
    let t = run(py, None, move |_| Transactions::from_csr(off, it, n_items))?;
    Ok(PyTransactions { inner: Arc::new(t) })
}

/// Mine frequent itemsets: `(offsets, items, counts, truncated, min_count)`.
#[pyfunction]
#[pyo3(signature = (tx, min_count=None, min_fraction=None, max_len=None, target="all", algorithm="fpgrowth", max_itemsets=10_000_000, truncate=false, progress=None))]
pub fn mine_itemsets<'py>(
    py: Python<'py>,
    tx: &PyTransactions,
    min_count: Option<u64>,
    min_fraction: Option<f64>,
    max_len: Option<usize>,
    target: &str,
    algorithm: &str,
    max_itemsets: usize,
    truncate: bool,
    progress: Option<Py<PyAny>>,
) -> PyResult<Bound<'py, PyTuple>> {
    let min_support = match (min_count, min_fraction) {
        (Some(c), None) => MinSupport::Count(c),
        (None, Some(f)) => MinSupport::Fraction(f),
        _ => {
            return Err(to_py(TmError::param(
                "min_support",
                "give exactly one of a count and a fraction",
            )))
        }
    };
    let p = ItemsetParams {
        min_support,
        max_len,
        target: Target::parse(target).map_err(to_py)?,
        algorithm: Algorithm::parse(algorithm).map_err(to_py)?,
        max_itemsets,
        on_limit: if truncate {
            OnLimit::Truncate
        } else {
            OnLimit::Error
        },
    };
    let t = Arc::clone(&tx.inner);
    let r = run(py, progress, move |ctl| frequent_itemsets(&t, &p, ctl))?;
    PyTuple::new(
        py,
        [
            usize_arr(py, &r.offsets).into_any(),
            r.items.into_pyarray(py).into_any(),
            r.counts.into_pyarray(py).into_any(),
            r.truncated.into_pyobject(py)?.to_owned().into_any(),
            r.min_count.into_pyobject(py)?.into_any(),
        ],
    )
}

/// Association rules from a complete itemset collection:
/// `(ante_offsets, ante_items, cons_offsets, cons_items, n_x, n_y, n_xy)`.
#[pyfunction]
#[pyo3(signature = (offsets, items, counts, n_transactions, complete, min_confidence=0.5, min_lift=None, consequent=None, max_rules=10_000_000, progress=None))]
pub fn mine_rules<'py>(
    py: Python<'py>,
    offsets: Bound<'py, PyAny>,
    items: Bound<'py, PyAny>,
    counts: Bound<'py, PyAny>,
    n_transactions: usize,
    complete: bool,
    min_confidence: f64,
    min_lift: Option<f64>,
    consequent: Option<Vec<u32>>,
    max_rules: usize,
    progress: Option<Py<PyAny>>,
) -> PyResult<Bound<'py, PyTuple>> {
    let off = offsets_of(&offsets, "offsets")?;
    let items: Vec<u32> = vec_of(&items, "items")?;
    let counts: Vec<u64> = vec_of(&counts, "counts")?;
    if off.first() != Some(&0)
        || off.len() != counts.len() + 1
        || off.last() != Some(&items.len())
        || off.windows(2).any(|w| w[1] <= w[0])
    {
        return Err(to_py(TmError::param(
            "itemsets",
            "the itemset arrays are inconsistent (offsets must start at 0, increase, end at \
             the number of items and have one more entry than counts)",
        )));
    }
    let s = Itemsets {
        offsets: off,
        items,
        counts,
        n_transactions,
        min_count: 1,
        truncated: false,
        complete,
    };
    let p = RuleParams {
        min_confidence,
        min_lift,
        consequent,
        max_rules,
    };
    let r = run(py, progress, move |ctl| association_rules(&s, &p, ctl))?;
    PyTuple::new(
        py,
        [
            usize_arr(py, &r.ante_offsets).into_any(),
            r.ante_items.into_pyarray(py).into_any(),
            usize_arr(py, &r.cons_offsets).into_any(),
            r.cons_items.into_pyarray(py).into_any(),
            r.n_x.into_pyarray(py).into_any(),
            r.n_y.into_pyarray(py).into_any(),
            r.n_xy.into_pyarray(py).into_any(),
        ],
    )
}

/// Every rule measure for the given counts: a list of `(name, values)`.
#[pyfunction]
pub fn rule_measures<'py>(
    py: Python<'py>,
    n: u64,
    n_x: Bound<'py, PyAny>,
    n_y: Bound<'py, PyAny>,
    n_xy: Bound<'py, PyAny>,
) -> PyResult<Vec<(String, Bound<'py, PyArray1<f64>>)>> {
    let nx: Vec<u64> = vec_of(&n_x, "n_x")?;
    let ny: Vec<u64> = vec_of(&n_y, "n_y")?;
    let nxy: Vec<u64> = vec_of(&n_xy, "n_xy")?;
    if nx.len() != nxy.len() || ny.len() != nxy.len() {
        return Err(to_py(TmError::param(
            "n_xy",
            "count arrays differ in length",
        )));
    }
    if let Some(k) = (0..nxy.len())
        .find(|&k| nxy[k] == 0 || nxy[k] > nx[k] || nxy[k] > ny[k] || nx[k] > n || ny[k] > n)
    {
        return Err(to_py(TmError::param(
            "n_xy",
            format!("rule {k} has inconsistent counts (need 1 <= n_xy <= n_x, n_y <= n)"),
        )));
    }
    let cols = run(py, None, move |_| {
        let r = crate::rules::Rules {
            n_x: nx,
            n_y: ny,
            n_xy: nxy,
            n,
            ..Default::default()
        };
        Ok(Measure::ALL
            .iter()
            .map(|&m| (m.name().to_string(), r.measure(m)))
            .collect::<Vec<_>>())
    })?;
    Ok(cols
        .into_iter()
        .map(|(k, v)| (k, v.into_pyarray(py)))
        .collect())
}
