"""Case clustering: distances, estimators, quality indices and cluster descriptions.

From an event log to homogeneous groups of cases:

1. encode the cases (:mod:`tracemill.encode`) or compare their activity sequences directly
   (:func:`edit_distances`);
2. cluster them with :class:`KMeans`, :class:`KMedoids`, :class:`Agglomerative` or
   :class:`DBSCAN` (fit / fit_predict / predict, ``labels_``, seeded);
3. judge the result (:func:`silhouette_score`, :func:`davies_bouldin_score`,
   :func:`calinski_harabasz_score`, :func:`sweep_k`);
4. go back to the process: :func:`describe_clusters`, :func:`distinguishing_features` and
   ``log.split(labels)`` for one sub-log per group.

All kernels are native and parallel; results do not depend on the number of threads. Every
estimator accepts ``progress`` (a callable ``(done, total)`` or ``True`` to print) and stops on
Ctrl-C.

Notes
-----
Event logs often hold personal data; clusters of cases can single out people. Clusters show
which cases behave alike, not why they do.
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Sequence
from typing import Any, NamedTuple

import numpy as np

from . import _core
from ._output import Col, make_frame
from .encode import _Base, _param
from .exceptions import DataError, LimitError, NotFittedError

DEFAULT_MAX_MEMORY = 2_000_000_000
_VECTOR_METRICS = ("euclidean", "sqeuclidean", "manhattan", "cosine", "jaccard")


# ---------------------------------------------------------------------------- helpers
def _progress(p: Any) -> Callable[[int, int], None] | None:
    if p is None or p is False:
        return None
    if p is True:
        def show(done: int, total: int) -> None:
            print(f"\r  {done}/{total}", end="", file=sys.stderr, flush=True)
        return show
    if callable(p):
        return p
    raise _param("progress", f"progress must be None, True or a callable; got {p!r}")


def _seed(random_state: Any) -> int:
    if random_state is None:
        return int(np.random.default_rng().integers(0, 2**63 - 1))
    if isinstance(random_state, (int, np.integer)):
        if random_state < 0:
            raise _param("random_state", f"random_state must be >= 0; got {random_state}")
        return int(random_state)
    if isinstance(random_state, np.random.Generator):
        return int(random_state.integers(0, 2**63 - 1))
    raise _param("random_state", f"random_state must be None, an int or a numpy Generator; "
                 f"got {random_state!r}")


def _check_int(owner: str, name: str, v: Any, lo: int) -> int:
    if isinstance(v, bool) or not isinstance(v, (int, np.integer)) or v < lo:
        raise _param(name, f"The {name!r} parameter of {owner} must be an int in the range "
                     f"[{lo}, inf). Got {v!r} instead.")
    return int(v)


def _check_float(owner: str, name: str, v: Any, lo: float, open_lo: bool = False) -> float:
    ok = isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool)
    if ok:
        f = float(v)
        ok = np.isfinite(f) and (f > lo if open_lo else f >= lo)
    if not ok:
        br = "(" if open_lo else "["
        raise _param(name, f"The {name!r} parameter of {owner} must be a float in the range "
                     f"{br}{lo}, inf). Got {v!r} instead.")
    return float(v)


class _Matrix(NamedTuple):
    dense: np.ndarray | None
    indptr: np.ndarray | None
    indices: np.ndarray | None
    data: np.ndarray | None
    n: int
    d: int
    names: list[str] | None


def _matrix(X: Any, *, allow_sparse: bool = True) -> _Matrix:
    """Validate a feature matrix; NaN or infinite values raise a DataError naming the column."""
    import scipy.sparse as sp

    names = None
    if hasattr(X, "columns") and hasattr(X, "to_numpy"):
        names = [str(c) for c in X.columns]
        X = X.to_numpy(dtype=np.float64)
    if sp.issparse(X):
        X = sp.csr_matrix(X)
        if not allow_sparse:
            X = X.toarray()
        else:
            n, d = X.shape
            data = np.ascontiguousarray(X.data, dtype=np.float64)
            _check_finite(data, X.indices, names)
            return _Matrix(None, np.ascontiguousarray(X.indptr, dtype=np.int64),
                           np.ascontiguousarray(X.indices, dtype=np.int32), data, n, d, names)
    x = np.asarray(X, dtype=np.float64)
    if x.ndim != 2:
        raise _param("X", f"X must be 2-D (cases x features); got shape {x.shape}")
    n, d = x.shape
    if n == 0:
        raise DataError("X has no rows: there are no cases to cluster")
    with np.errstate(over="ignore", invalid="ignore"):
        # A sum is finite when every term is (it may overflow: then look value by value).
        maybe_bad = not np.isfinite(np.add.reduce(x, axis=None))
    if maybe_bad and not np.isfinite(x).all():
        r, c = np.argwhere(~np.isfinite(x))[0]
        col = names[c] if names else str(c)
        raise DataError(f"feature column {col!r} holds a non-finite value ({x[r, c]}) at row "
                        f"{r}; features must be finite")
    return _Matrix(np.ascontiguousarray(x).reshape(-1), None, None, None, n, d, names)


def _check_finite(data: np.ndarray, cols: np.ndarray, names: list[str] | None) -> None:
    bad = ~np.isfinite(data)
    if bad.any():
        p = int(np.argmax(bad))
        c = int(cols[p])
        raise DataError(f"feature column {names[c] if names else c!r} holds a non-finite value "
                        f"({data[p]}); features must be finite")


def _weights(sample_weight: Any, n: int) -> np.ndarray | None:
    if sample_weight is None:
        return None
    w = np.ascontiguousarray(sample_weight, dtype=np.float64)
    if w.shape != (n,):
        raise _param("sample_weight", f"sample_weight must have shape ({n},); got {w.shape}")
    return w


def _is_log(X: Any) -> bool:
    from .log import EventLog

    return isinstance(X, EventLog)


def _square(X: Any, *, check: bool = True) -> tuple[np.ndarray, int]:
    """A precomputed square matrix (checked: square, finite, >= 0, symmetric; with
    ``check=False`` only its shape, for kernels that check the values themselves)."""
    m = np.asarray(X, dtype=np.float64)
    if m.ndim != 2 or m.shape[0] != m.shape[1]:
        raise DataError(f"a precomputed distance matrix must be square; got shape {m.shape}")
    n = m.shape[0]
    if n == 0:
        raise DataError("the precomputed distance matrix is empty")
    flat = np.ascontiguousarray(m).reshape(-1)
    if check:
        _core.check_square(flat, n)
    return flat, n


# ---------------------------------------------------------------------------- distances
class VariantDistances(NamedTuple):
    """Edit distances between variants, with what is needed to go back to cases."""

    distances: np.ndarray
    """Condensed (or square) distances between variants."""
    counts: np.ndarray
    """Cases per variant (use as weights)."""
    case_variant: np.ndarray
    """The variant of each case."""


def pairwise_distances(X: Any, metric: str = "euclidean", *, form: str = "condensed",
                       max_memory: float = DEFAULT_MAX_MEMORY,
                       progress: Any = None) -> np.ndarray:
    """Pairwise distances between the rows of ``X``, in parallel.

    Parameters
    ----------
    X : array-like or sparse matrix of shape (n, d)
        Features (sparse input is densified).
    metric : {'euclidean', 'sqeuclidean', 'manhattan', 'cosine', 'jaccard'}
        ``jaccard`` treats non-zero entries as present. Cosine of a zero row: 0 to another zero
        row, 1 otherwise.
    form : {'condensed', 'square'}
        scipy's condensed vector (``scipy.spatial.distance.squareform`` and
        ``scipy.cluster.hierarchy`` accept it) or an n x n array.
    max_memory : float, default=2e9
        Refuse (LimitError) a result larger than this many bytes.

    Examples
    --------
    >>> import tracemill as tm
    >>> tm.cluster.pairwise_distances([[0.0], [1.0], [3.0]])
    array([1., 3., 2.])
    """
    if metric not in _VECTOR_METRICS:
        raise _param("metric", f"metric must be one of {list(_VECTOR_METRICS)}; got {metric!r}")
    if form not in ("condensed", "square"):
        raise _param("form", f"form must be 'condensed' or 'square'; got {form!r}")
    m = _matrix(X, allow_sparse=False)
    assert m.dense is not None
    mb = int(max_memory)
    if form == "square" and 8.0 * m.n * m.n > mb:
        need = 8.0 * m.n * m.n / 1e9
        raise LimitError(f"a square distance matrix of {m.n} rows needs {need:.1f} "
                         f"GB, above the memory budget max_memory={mb / 1e9:.1f} GB; use "
                         "form='condensed' (half the size), sample the rows, or raise max_memory")
    cond = _core.pairwise_condensed(m.dense, m.n, m.d, metric, mb, _progress(progress))
    return cond if form == "condensed" else _core.squareform(cond, m.n, mb).reshape(m.n, m.n)


def _sequences(log: Any, by_variant: bool) -> tuple[np.ndarray, np.ndarray, Any]:
    h = log.handle
    if by_variant:
        off, acts, counts, cv, _co, _cases = h.variants()
        return off.astype(np.int64), acts.astype(np.uint32), (counts, cv)
    off, _keys, acts, _t, _r = h.core_arrays()
    return off.astype(np.int64), acts.astype(np.uint32), None


def _sub_costs(log: Any, substitution_cost: Any) -> np.ndarray | None:
    if substitution_cost is None:
        return None
    acts = list(log.activities)
    m = len(acts)
    if isinstance(substitution_cost, dict):
        c = np.ones((m, m))
        np.fill_diagonal(c, 0.0)
        idx = {a: i for i, a in enumerate(acts)}
        for (a, b), v in substitution_cost.items():
            if a in idx and b in idx:
                c[idx[a], idx[b]] = v
                c[idx[b], idx[a]] = v
        return np.ascontiguousarray(c.reshape(-1))
    c = np.asarray(substitution_cost, dtype=np.float64)
    if c.shape != (m, m):
        raise _param("substitution_cost", f"substitution_cost must be a ({m}, {m}) array (one "
                     f"row per activity of the log) or a dict; got shape {c.shape}")
    return np.ascontiguousarray(c.reshape(-1))


def edit_distances(log: Any, *, by_variant: bool = True, substitution_cost: Any = None,
                   normalised: bool = False, form: str = "condensed",
                   max_memory: float = DEFAULT_MAX_MEMORY, progress: Any = None) -> Any:
    """Edit (Levenshtein) distances between the activity sequences of a log.

    Parameters
    ----------
    log : EventLog
    by_variant : bool, default=True
        Compute between variants (cases of one variant are at distance 0) and return a
        :class:`VariantDistances` with the variant counts as weights; ``False`` computes
        between all cases.
    substitution_cost : dict or array, optional
        Per-activity substitution costs: ``{(a, b): cost}`` (symmetric, others 1) or an
        ``(m, m)`` array over ``log.activities``. Insertions and deletions cost 1.
    normalised : bool, default=False
        Divide by the length of the longer sequence.
    form : {'condensed', 'square'}
    max_memory : float, default=2e9
        Refuse (LimitError) a result larger than this many bytes.

    References
    ----------
    Levenshtein (1966), Soviet Physics Doklady 10(8).

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> frame = pd.DataFrame({"case": ["r1"] * 3 + ["r2"] * 2 + ["r3"] * 3,
    ...     "activity": list("abc") + list("ac") + list("abc"),
    ...     "time": pd.date_range("2025-01-06", periods=8, freq="h")})
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time")
    >>> vd = tm.cluster.edit_distances(log)
    >>> vd.distances, vd.counts
    (array([1.]), array([2, 1], dtype=uint64))
    """
    from .log import EventLog

    if not isinstance(log, EventLog):
        raise _param("log", f"edit_distances expects an EventLog; got {type(log).__name__}")
    if form not in ("condensed", "square"):
        raise _param("form", f"form must be 'condensed' or 'square'; got {form!r}")
    off, acts, extra = _sequences(log, by_variant)
    sub = _sub_costs(log, substitution_cost)
    n = len(off) - 1
    mb = int(max_memory)
    cond = _core.edit_condensed(off, acts, sub, len(log.activities), bool(normalised), mb,
                                _progress(progress))
    d = cond if form == "condensed" else _core.squareform(cond, n, mb).reshape(n, n)
    if extra is None:
        return d
    return VariantDistances(d, extra[0], extra[1].astype(np.int64))


# ---------------------------------------------------------------------------- estimators
class _Estimator(_Base):
    labels_: np.ndarray

    def _check_fitted(self) -> None:
        if not hasattr(self, "labels_"):
            raise NotFittedError(f"this {type(self).__name__} is not fitted yet; call fit first")

    def fit_predict(self, X: Any, y: Any = None, sample_weight: Any = None) -> np.ndarray:
        """Fit and return ``labels_``."""
        return self.fit(X, sample_weight=sample_weight).labels_


class KMeans(_Estimator):
    """k-means clustering with k-means++ seeding, restarts and Hamerly's exact acceleration.

    Parameters
    ----------
    n_clusters : int, default=8
        Number of clusters; at most the number of distinct rows.
    init : {'k-means++', 'random'} or array of shape (n_clusters, n_features)
        Greedy k-means++ (Arthur and Vassilvitskii 2007; ``2 + ln k`` candidates per centre),
        ``n_clusters`` random rows, or given centres (one run).
    n_init : int, default=1
        Seeded runs; the one with the lowest inertia is kept.
    max_iter : int, default=300
    tol : float, default=1e-4
        Stop when the summed squared centre shift is at most ``tol`` times the mean feature
        variance (scikit-learn's rule); also stop when labels no longer change.
    random_state : int, numpy Generator or None
    progress : None, True or callable
        Report ``(runs done, runs)``.

    Attributes
    ----------
    cluster_centers_ : ndarray of shape (n_clusters, n_features)
    labels_ : ndarray of shape (n_samples,)
    inertia_ : float
        Weighted sum of squared distances to the closest centre.
    n_iter_ : int
    n_features_in_ : int

    Notes
    -----
    Works on dense arrays and scipy sparse matrices. ``sample_weight`` lets one row stand for
    many cases, e.g. a variant for its cases. Clusters show which cases behave alike, not why.

    References
    ----------
    Lloyd (1982), IEEE Trans. Inf. Theory 28(2); Arthur and Vassilvitskii (2007), SODA;
    Hamerly (2010), SIAM SDM.

    Examples
    --------
    >>> import numpy as np, tracemill as tm
    >>> X = np.array([[1, 2], [1, 4], [1, 0], [10, 2], [10, 4], [10, 0]])
    >>> km = tm.cluster.KMeans(n_clusters=2, n_init=3, random_state=0).fit(X)
    >>> float(km.inertia_)
    16.0
    >>> sorted(km.cluster_centers_.tolist())
    [[1.0, 2.0], [10.0, 2.0]]
    """

    def __init__(self, n_clusters: int = 8, *, init: Any = "k-means++", n_init: int = 1,
                 max_iter: int = 300, tol: float = 1e-4, random_state: Any = None,
                 progress: Any = None) -> None:
        self.n_clusters = n_clusters
        self.init = init
        self.n_init = n_init
        self.max_iter = max_iter
        self.tol = tol
        self.random_state = random_state
        self.progress = progress

    def fit(self, X: Any, y: Any = None, sample_weight: Any = None) -> KMeans:
        """Compute the clusters; returns self."""
        k = _check_int("KMeans", "n_clusters", self.n_clusters, 1)
        n_init = _check_int("KMeans", "n_init", self.n_init, 1)
        max_iter = _check_int("KMeans", "max_iter", self.max_iter, 1)
        tol = _check_float("KMeans", "tol", self.tol, 0.0)
        m = _matrix(X)
        init_centers = None
        if isinstance(self.init, str):
            if self.init not in ("k-means++", "random"):
                raise _param("init", "The 'init' parameter of KMeans must be 'k-means++', "
                             f"'random' or an array. Got {self.init!r} instead.")
            init = self.init
        else:
            c = np.asarray(self.init, dtype=np.float64)
            if c.shape != (k, m.d):
                raise _param("init", f"init centres must have shape ({k}, {m.d}); got {c.shape}")
            init, init_centers = "array", np.ascontiguousarray(c).reshape(-1)
        w = _weights(sample_weight, m.n)
        centers, labels, inertia, n_iter = _core.kmeans_fit(
            m.dense, m.indptr, m.indices, m.data, m.n, m.d, w, k, init, init_centers, n_init,
            max_iter, tol, _seed(self.random_state), _progress(self.progress))
        self.cluster_centers_ = centers.reshape(k, m.d)
        self.labels_ = labels.astype(np.int64)
        self.inertia_ = float(inertia)
        self.n_iter_ = int(n_iter)
        self.n_features_in_ = m.d
        if m.names is not None:
            self.feature_names_in_ = np.asarray(m.names, dtype=object)
        return self

    def predict(self, X: Any, sample_weight: Any = None) -> np.ndarray:
        """The closest centre of each row."""
        self._check_fitted()
        m = _matrix(X)
        if m.d != self.n_features_in_:
            raise _param("X", f"X has {m.d} features but KMeans was fitted on "
                         f"{self.n_features_in_}")
        labels, _inertia = _core.kmeans_predict(
            m.dense, m.indptr, m.indices, m.data, m.n, m.d, _weights(sample_weight, m.n),
            np.ascontiguousarray(self.cluster_centers_).reshape(-1))
        return labels.astype(np.int64)

    def score(self, X: Any, y: Any = None, sample_weight: Any = None) -> float:
        """Minus the inertia of ``X`` under the fitted centres (higher is better)."""
        self._check_fitted()
        m = _matrix(X)
        _labels, inertia = _core.kmeans_predict(
            m.dense, m.indptr, m.indices, m.data, m.n, m.d, _weights(sample_weight, m.n),
            np.ascontiguousarray(self.cluster_centers_).reshape(-1))
        return -float(inertia)


def _distance_input(X: Any, metric: str, *, substitution_cost: Any, normalised: bool,
                    max_memory: float, progress: Any, square: bool
                    ) -> tuple[np.ndarray, int, int, np.ndarray | None, np.ndarray | None]:
    """``(values, n, d, weights, case_variant)`` for estimators that accept a log (edit
    distance per variant), a precomputed matrix or vectors."""
    if metric == "levenshtein":
        if not _is_log(X):
            raise _param("metric", "metric='levenshtein' needs an EventLog as input")
        vd = edit_distances(X, by_variant=True, substitution_cost=substitution_cost,
                            normalised=normalised, form="square" if square else "condensed",
                            max_memory=max_memory, progress=progress)
        n = len(vd.counts)
        flat = np.ascontiguousarray(vd.distances).reshape(-1)
        return flat, n, 0, vd.counts.astype(np.float64), vd.case_variant
    if _is_log(X):
        raise _param("X", "an EventLog input needs metric='levenshtein'; encode the log with "
                     "tracemill.encode for vector metrics")
    if metric == "precomputed":
        # Its consumers (k-medoids, DBSCAN) check the values in the core.
        flat, n = _square(X, check=False)
        return flat, n, 0, None, None
    if metric not in _VECTOR_METRICS:
        raise _param("metric", f"metric must be one of {list(_VECTOR_METRICS)}, 'precomputed' "
                     f"or 'levenshtein'; got {metric!r}")
    m = _matrix(X, allow_sparse=False)
    assert m.dense is not None
    return m.dense, m.n, m.d, None, None


class KMedoids(_Estimator):
    """k-medoids clustering with FasterPAM; the centres (medoids) are real cases.

    Parameters
    ----------
    n_clusters : int, default=8
    metric : str, default='euclidean'
        A vector metric (see :func:`pairwise_distances`), ``'precomputed'`` (X is a square
        distance matrix) or ``'levenshtein'`` (X is an EventLog; computed per variant with the
        variant counts as weights, so medoids are variants and ``medoid_cases_`` gives one case
        of each).
    init : {'build', 'random'} or array of indices, default='build'
        PAM's greedy BUILD, random distinct rows, or given medoid rows.
    max_iter : int, default=100
    random_state : int, numpy Generator or None
    substitution_cost, normalised
        Options of the edit distance (see :func:`edit_distances`).
    max_memory : float, default=2e9
        Refuse (LimitError) a distance matrix larger than this many bytes.
    progress : None, True or callable

    Attributes
    ----------
    medoid_indices_ : ndarray
        Row (or variant) index of each medoid.
    medoid_cases_ : ndarray
        With an EventLog input: the case id of one case per medoid (its representative trace).
    labels_ : ndarray
        Cluster of each row, or of each case for an EventLog input.
    inertia_ : float
        Total (weighted) distance to the closest medoid (the FasterPAM loss).
    n_iter_ : int

    References
    ----------
    Schubert and Rousseeuw (2021), "Fast and eager k-medoids clustering", Information Systems
    101:101804; Kaufman and Rousseeuw (1990), "Finding Groups in Data".

    Examples
    --------
    >>> import numpy as np, tracemill as tm
    >>> X = np.array([[0, 0], [0, 1], [1, 0], [10, 10], [10, 11], [11, 10]])
    >>> km = tm.cluster.KMedoids(n_clusters=2).fit(X)
    >>> sorted(km.medoid_indices_.tolist()), float(km.inertia_)
    ([0, 3], 4.0)
    """

    def __init__(self, n_clusters: int = 8, *, metric: str = "euclidean", init: Any = "build",
                 max_iter: int = 100, random_state: Any = None, substitution_cost: Any = None,
                 normalised: bool = False, max_memory: float = DEFAULT_MAX_MEMORY,
                 progress: Any = None) -> None:
        self.n_clusters = n_clusters
        self.metric = metric
        self.init = init
        self.max_iter = max_iter
        self.random_state = random_state
        self.substitution_cost = substitution_cost
        self.normalised = normalised
        self.max_memory = max_memory
        self.progress = progress

    def fit(self, X: Any, y: Any = None, sample_weight: Any = None) -> KMedoids:
        """Choose the medoids; returns self."""
        k = _check_int("KMedoids", "n_clusters", self.n_clusters, 1)
        max_iter = _check_int("KMedoids", "max_iter", self.max_iter, 1)
        prog = _progress(self.progress)
        if self.metric in _VECTOR_METRICS:
            m = _matrix(X, allow_sparse=False)
            assert m.dense is not None
            cond = _core.pairwise_condensed(m.dense, m.n, m.d, self.metric,
                                            int(self.max_memory), prog)
            flat = _core.squareform(cond, m.n, int(self.max_memory))
            n, w, cv = m.n, None, None
            self.n_features_in_ = m.d
        else:
            flat, n, _d, w, cv = _distance_input(
                X, self.metric, substitution_cost=self.substitution_cost,
                normalised=self.normalised, max_memory=self.max_memory, progress=prog,
                square=True)
        if sample_weight is not None:
            if cv is not None:
                raise _param("sample_weight", "with metric='levenshtein' the variant counts are "
                             "the weights; sample_weight is not accepted")
            w = _weights(sample_weight, n)
        init_med = None
        if isinstance(self.init, str):
            if self.init not in ("build", "random"):
                raise _param("init", "The 'init' parameter of KMedoids must be 'build', "
                             f"'random' or an array of indices. Got {self.init!r} instead.")
            init = self.init
        else:
            init, init_med = "array", np.ascontiguousarray(self.init, dtype=np.int64)
        med, labels, loss, n_iter, _swaps = _core.fasterpam(
            flat, n, k, w, init, init_med, _seed(self.random_state), max_iter, prog)
        self.medoid_indices_ = med
        self.inertia_ = float(loss)
        self.n_iter_ = int(n_iter)
        labels = labels.astype(np.int64)
        if cv is not None:
            self.variant_labels_ = labels
            self.labels_ = labels[cv]
            cases = X.case_ids
            self.medoid_cases_ = np.array([cases[np.argmax(cv == v)] for v in med], dtype=object)
        else:
            self.labels_ = labels
        return self


class Agglomerative(_Estimator):
    """Agglomerative (hierarchical) clustering with seven linkages, in scipy's layout.

    Parameters
    ----------
    n_clusters : int or None, default=2
        Cut the tree into this many clusters (give this or ``distance_threshold``).
    linkage : {'ward', 'single', 'complete', 'average', 'weighted', 'centroid', 'median'}
    metric : str, default='euclidean'
        A vector metric, ``'precomputed'`` (square matrix or condensed vector) or
        ``'levenshtein'`` (X is an EventLog; variants are clustered and cases inherit their
        variant's cluster). Ward, centroid and median need Euclidean geometry.
    distance_threshold : float or None
        Cut at this merge height instead.
    max_memory : float, default=2e9
        Budget for the condensed distance matrix (not needed for ward/centroid/median on
        vectors, which run in O(n d) memory).
    progress : None, True or callable

    Attributes
    ----------
    linkage_matrix_ : ndarray of shape (n - 1, 4)
        ``[id1, id2, height, size]`` per merge; ``scipy.cluster.hierarchy.dendrogram`` and
        ``fcluster`` accept it.
    labels_ : ndarray
    n_clusters_ : int

    References
    ----------
    Lance and Williams (1967), Computer Journal 9(4); Ward (1963), JASA 58; Müllner (2011),
    arXiv:1109.2378.

    Examples
    --------
    >>> import numpy as np, tracemill as tm
    >>> X = np.array([[0, 0], [0, 1], [4, 0], [4, 2], [10, 0]])
    >>> agg = tm.cluster.Agglomerative(n_clusters=2, linkage="ward").fit(X)
    >>> agg.labels_.tolist()
    [0, 0, 0, 0, 1]
    >>> agg.linkage_matrix_[:, 2].round(6).tolist()
    [1.0, 2.0, 5.700877, 10.163661]
    """

    def __init__(self, n_clusters: int | None = 2, *, linkage: str = "ward",
                 metric: str = "euclidean", distance_threshold: float | None = None,
                 substitution_cost: Any = None, normalised: bool = False,
                 max_memory: float = DEFAULT_MAX_MEMORY, progress: Any = None) -> None:
        self.n_clusters = n_clusters
        self.linkage = linkage
        self.metric = metric
        self.distance_threshold = distance_threshold
        self.substitution_cost = substitution_cost
        self.normalised = normalised
        self.max_memory = max_memory
        self.progress = progress

    _LINKAGES = ("ward", "single", "complete", "average", "weighted", "centroid", "median")

    def fit(self, X: Any, y: Any = None, sample_weight: Any = None) -> Agglomerative:
        """Build the tree and cut it; returns self."""
        if self.linkage not in self._LINKAGES:
            raise _param("linkage", f"The 'linkage' parameter of Agglomerative must be one of "
                         f"{list(self._LINKAGES)}. Got {self.linkage!r} instead.")
        if (self.n_clusters is None) == (self.distance_threshold is None):
            raise _param("n_clusters", "give exactly one of n_clusters and distance_threshold")
        if sample_weight is not None:
            raise _param("sample_weight", "Agglomerative does not take sample weights")
        geometric = self.linkage in ("ward", "centroid", "median")
        if geometric and self.metric not in ("euclidean", "precomputed"):
            raise _param("metric", f"linkage={self.linkage!r} needs Euclidean distances "
                         f"(metric='euclidean' or a precomputed Euclidean matrix); got "
                         f"{self.metric!r}")
        prog = _progress(self.progress)
        cv = None
        if self.metric == "euclidean" and geometric and not _is_log(X):
            m = _matrix(X, allow_sparse=False)
            assert m.dense is not None
            n = m.n
            z = _core.linkage_vectors(m.dense, m.n, m.d, self.linkage, prog)
        else:
            if self.metric == "precomputed" and np.ndim(X) == 1:
                cond = np.ascontiguousarray(X, dtype=np.float64)
                n = round((1 + np.sqrt(1 + 8 * len(cond))) / 2)
            elif self.metric == "levenshtein":
                if not _is_log(X):
                    raise _param("metric", "metric='levenshtein' needs an EventLog as input")
                vd = edit_distances(X, substitution_cost=self.substitution_cost,
                                    normalised=self.normalised, max_memory=self.max_memory,
                                    progress=prog)
                cond, cv = vd.distances, vd.case_variant
                n = len(vd.counts)
            elif self.metric == "precomputed":
                flat, n = _square(X)
                sq = flat.reshape(n, n)
                cond = np.ascontiguousarray(sq[np.triu_indices(n, 1)])
            else:
                cond = pairwise_distances(X, self.metric, max_memory=self.max_memory,
                                          progress=prog)
                n = round((1 + np.sqrt(1 + 8 * len(cond))) / 2)
            z = _core.linkage_condensed(cond, n, self.linkage, prog)
        self.linkage_matrix_ = z.reshape(n - 1, 4)
        self._n = n
        labels = self._cut(self.n_clusters, self.distance_threshold)
        if cv is not None:
            self.variant_labels_ = labels
            labels = labels[cv]
        self.labels_ = labels
        self.n_clusters_ = int(labels.max()) + 1
        return self

    def _cut(self, n_clusters: int | None, threshold: float | None) -> np.ndarray:
        if n_clusters is not None:
            k = _check_int("Agglomerative", "n_clusters", n_clusters, 1)
            if k > self._n:
                raise _param("n_clusters", f"n_clusters={k} is larger than the number of "
                             f"points ({self._n})")
            return _core.cut_linkage(np.ascontiguousarray(self.linkage_matrix_).reshape(-1),
                                     self._n, k, None)
        t = _check_float("Agglomerative", "distance_threshold", threshold, 0.0)
        return _core.cut_linkage(np.ascontiguousarray(self.linkage_matrix_).reshape(-1),
                                 self._n, None, t)

    def cut(self, n_clusters: int | None = None, *,
            distance_threshold: float | None = None) -> np.ndarray:
        """Labels of another cut of the fitted tree (by number of clusters or height)."""
        if not hasattr(self, "linkage_matrix_"):
            raise NotFittedError("this Agglomerative is not fitted yet; call fit first")
        if (n_clusters is None) == (distance_threshold is None):
            raise _param("n_clusters", "give exactly one of n_clusters and distance_threshold")
        return self._cut(n_clusters, distance_threshold)


class DBSCAN(_Estimator):
    """DBSCAN: clusters of dense regions, with core, border and noise points.

    Parameters
    ----------
    eps : float, default=0.5
        Neighbourhood radius.
    min_samples : float, default=5
        Points (weights) within ``eps``, the point itself included, that make a core point.
    metric : str, default='euclidean'
        A vector metric (Euclidean uses a k-d tree), ``'precomputed'`` or ``'levenshtein'``
        (X is an EventLog; per variant with counts as weights, cases inherit labels).
    max_memory : float, default=2e9
        Budget for a distance matrix (levenshtein only).
    progress : None, True or callable

    Attributes
    ----------
    labels_ : ndarray
        Cluster per row (or case), ``-1`` for noise.
    core_sample_indices_ : ndarray
    core_mask_, border_mask_, noise_mask_ : ndarray of bool

    Notes
    -----
    A border point within reach of two clusters joins the one that reaches it first in input
    order (scikit-learn's rule), so labels match scikit-learn exactly.

    References
    ----------
    Ester, Kriegel, Sander and Xu (1996), KDD-96, 226-231.

    Examples
    --------
    >>> import numpy as np, tracemill as tm
    >>> X = np.array([[1, 2], [2, 2], [2, 3], [8, 7], [8, 8], [25, 80]])
    >>> tm.cluster.DBSCAN(eps=3, min_samples=2).fit(X).labels_.tolist()
    [0, 0, 0, 1, 1, -1]
    """

    def __init__(self, eps: float = 0.5, *, min_samples: float = 5, metric: str = "euclidean",
                 substitution_cost: Any = None, normalised: bool = False,
                 max_memory: float = DEFAULT_MAX_MEMORY, progress: Any = None) -> None:
        self.eps = eps
        self.min_samples = min_samples
        self.metric = metric
        self.substitution_cost = substitution_cost
        self.normalised = normalised
        self.max_memory = max_memory
        self.progress = progress

    def fit(self, X: Any, y: Any = None, sample_weight: Any = None) -> DBSCAN:
        """Find the clusters; returns self."""
        eps = _check_float("DBSCAN", "eps", self.eps, 0.0, open_lo=True)
        ms = _check_float("DBSCAN", "min_samples", self.min_samples, 1.0)
        prog = _progress(self.progress)
        flat, n, d, w, cv = _distance_input(
            X, self.metric, substitution_cost=self.substitution_cost,
            normalised=self.normalised, max_memory=self.max_memory, progress=prog, square=True)
        metric = "precomputed" if self.metric == "levenshtein" else self.metric
        if sample_weight is not None:
            if cv is not None:
                raise _param("sample_weight", "with metric='levenshtein' the variant counts are "
                             "the weights; sample_weight is not accepted")
            w = _weights(sample_weight, n)
        labels, core = _core.dbscan(flat, n, d, metric, eps, ms, w, prog)
        if cv is not None:
            self.variant_labels_ = labels
            labels, core = labels[cv], core[cv]
        self.labels_ = labels
        self.core_mask_ = core
        self.core_sample_indices_ = np.nonzero(core)[0]
        self.noise_mask_ = labels < 0
        self.border_mask_ = ~core & ~self.noise_mask_
        return self


# ---------------------------------------------------------------------------- quality
def _quality_input(X: Any, metric: str) -> tuple[np.ndarray, int, int]:
    if metric == "precomputed":
        flat, n = _square(X)
        return flat, n, 0
    if metric not in _VECTOR_METRICS:
        raise _param("metric", f"metric must be one of {list(_VECTOR_METRICS)} or "
                     f"'precomputed'; got {metric!r}")
    m = _matrix(X, allow_sparse=False)
    assert m.dense is not None
    return m.dense, m.n, m.d


def _labels(labels: Any, n: int) -> np.ndarray:
    lab = np.asarray(labels)
    if lab.shape != (n,):
        raise _param("labels", f"labels must have shape ({n},); got {lab.shape}")
    return np.ascontiguousarray(lab, dtype=np.int64)


def silhouette_samples(X: Any, labels: Any, *, metric: str = "euclidean",
                       progress: Any = None) -> np.ndarray:
    """Silhouette value of every point (Rousseeuw 1987); NaN for noise (label -1).

    Exact and parallel; ``s = 0`` for a point alone in its cluster.
    """
    flat, n, d = _quality_input(X, metric)
    return _core.silhouette_samples(flat, n, d, metric, _labels(labels, n), _progress(progress))


def silhouette_score(X: Any, labels: Any, *, metric: str = "euclidean",
                     sample_size: int | None = None, random_state: Any = None,
                     progress: Any = None) -> float:
    """Mean silhouette (Rousseeuw 1987, J. Comput. Appl. Math. 20).

    Parameters
    ----------
    sample_size : int or None
        Use a seeded random subset of this many points (rows and columns), as for large n.

    Examples
    --------
    >>> import tracemill as tm
    >>> X = [[1, 2], [1, 4], [1, 0], [10, 2], [10, 4], [10, 0]]
    >>> round(tm.cluster.silhouette_score(X, [0, 0, 0, 1, 1, 1]), 6)
    0.713348
    """
    if sample_size is not None:
        lab = np.asarray(labels)
        n = len(lab)
        s = _check_int("silhouette_score", "sample_size", sample_size, 2)
        rng = np.random.default_rng(_seed(random_state))
        idx = np.sort(rng.choice(n, size=min(s, n), replace=False))
        if metric == "precomputed":
            X = np.asarray(X)[np.ix_(idx, idx)]
        else:
            import scipy.sparse as sp

            X = X[idx] if sp.issparse(X) else np.asarray(X, dtype=np.float64)[idx]
        labels = lab[idx]
    s_all = silhouette_samples(X, labels, metric=metric, progress=progress)
    return float(np.nanmean(s_all))


def davies_bouldin_score(X: Any, labels: Any) -> float:
    """Davies-Bouldin index (Davies and Bouldin 1979, IEEE TPAMI 1(2)); lower is better.

    Examples
    --------
    >>> import tracemill as tm
    >>> X = [[1, 2], [1, 4], [1, 0], [10, 2], [10, 4], [10, 0]]
    >>> round(tm.cluster.davies_bouldin_score(X, [0, 0, 0, 1, 1, 1]), 6)
    0.296296
    """
    flat, n, d = _quality_input(X, "euclidean")
    return float(_core.davies_bouldin(flat, n, d, _labels(labels, n)))


def calinski_harabasz_score(X: Any, labels: Any) -> float:
    """Calinski-Harabasz index (Caliński and Harabasz 1974); higher is better.

    Examples
    --------
    >>> import tracemill as tm
    >>> X = [[1, 2], [1, 4], [1, 0], [10, 2], [10, 4], [10, 0]]
    >>> tm.cluster.calinski_harabasz_score(X, [0, 0, 0, 1, 1, 1])
    30.375
    """
    flat, n, d = _quality_input(X, "euclidean")
    return float(_core.calinski_harabasz(flat, n, d, _labels(labels, n)))


def mean_within_cluster_distance(X: Any, labels: Any, *, metric: str = "euclidean",
                                 progress: Any = None) -> float:
    """Mean distance over all pairs of points sharing a cluster (noise excluded)."""
    flat, n, d = _quality_input(X, metric)
    return float(_core.mean_within_distance(flat, n, d, metric, _labels(labels, n),
                                            _progress(progress)))


def adjusted_rand_index(labels_true: Any, labels_pred: Any) -> float:
    """Adjusted Rand index between two partitions (Hubert and Arabie 1985, J. Classification 2).

    Examples
    --------
    >>> import tracemill as tm
    >>> round(tm.cluster.adjusted_rand_index([0, 0, 0, 1, 1, 1], [0, 0, 1, 1, 2, 2]), 6)
    0.242424
    """
    a = np.asarray(labels_true)
    b = np.asarray(labels_pred)
    if a.shape != b.shape or a.ndim != 1:
        raise _param("labels_pred", "the two labelings must be 1-D of the same length")
    n = len(a)
    _, ia = np.unique(a, return_inverse=True)
    _, ib = np.unique(b, return_inverse=True)
    table = np.zeros((ia.max() + 1, ib.max() + 1), dtype=np.int64)
    np.add.at(table, (ia, ib), 1)

    def comb2(x: np.ndarray) -> float:
        x = x.astype(np.float64)
        return float((x * (x - 1) / 2).sum())

    s = comb2(table)
    sa, sb = comb2(table.sum(1)), comb2(table.sum(0))
    total = n * (n - 1) / 2
    expected = sa * sb / total if total else 0.0
    mx = (sa + sb) / 2
    if mx == expected:
        return 1.0
    return float((s - expected) / (mx - expected))


def sweep_k(X: Any, ks: Sequence[int], *, sample_weight: Any = None, n_init: int = 3,
            random_state: Any = 0, silhouette_sample_size: int | None = 5000,
            kind: str = "pandas") -> Any:
    """Fit :class:`KMeans` for each k and tabulate the quality indices.

    Columns: ``k``, ``inertia``, ``silhouette`` (sampled above ``silhouette_sample_size``
    rows), ``davies_bouldin``, ``calinski_harabasz``, ``n_iter``.

    Examples
    --------
    >>> import numpy as np, tracemill as tm
    >>> X = np.array([[1, 2], [1, 4], [1, 0], [10, 2], [10, 4], [10, 0]])
    >>> tm.cluster.sweep_k(X, [2, 3], random_state=0)["k"].tolist()
    [2, 3]
    """
    import scipy.sparse as sp

    rows: dict[str, list[float]] = {"k": [], "inertia": [], "silhouette": [],
                                    "davies_bouldin": [], "calinski_harabasz": [], "n_iter": []}
    dense = X.toarray() if sp.issparse(X) else np.asarray(X, dtype=np.float64)
    n = dense.shape[0]
    for k in ks:
        km = KMeans(n_clusters=k, n_init=n_init, random_state=random_state).fit(
            X, sample_weight=sample_weight)
        size = silhouette_sample_size if silhouette_sample_size and n > silhouette_sample_size \
            else None
        rows["k"].append(k)
        rows["inertia"].append(km.inertia_)
        rows["silhouette"].append(silhouette_score(dense, km.labels_, sample_size=size,
                                                   random_state=random_state))
        rows["davies_bouldin"].append(davies_bouldin_score(dense, km.labels_))
        rows["calinski_harabasz"].append(calinski_harabasz_score(dense, km.labels_))
        rows["n_iter"].append(km.n_iter_)
    cols = {k: Col(np.asarray(v, dtype=np.int64 if k in ("k", "n_iter") else np.float64))
            for k, v in rows.items()}
    return make_frame(cols, kind)


# ---------------------------------------------------------------------------- back to the process
def distinguishing_features(X: Any, labels: Any, feature_names: Sequence[str] | None = None,
                            *, top: int = 5, kind: str = "pandas") -> Any:
    """The features that most separate each cluster from the rest.

    For every cluster and feature: the mean inside and outside the cluster, their difference,
    and the share of cases with a non-zero value inside and outside. The ``top`` features per
    cluster by absolute difference of means are kept.

    Columns: ``cluster``, ``feature``, ``mean_in``, ``mean_out``, ``difference``,
    ``share_in``, ``share_out``.

    Notes
    -----
    A separating feature is an association within the log, not a cause of the grouping.
    """
    import scipy.sparse as sp

    lab = np.asarray(labels)
    x = X.tocsr() if sp.issparse(X) else np.asarray(X, dtype=np.float64)
    n, d = x.shape
    if lab.shape != (n,):
        raise _param("labels", f"labels must have shape ({n},); got {lab.shape}")
    names = list(feature_names) if feature_names is not None else [str(j) for j in range(d)]
    if len(names) != d:
        raise _param("feature_names", f"{len(names)} names for {d} features")
    out: dict[str, list[Any]] = {k: [] for k in ("cluster", "feature", "mean_in", "mean_out",
                                                 "difference", "share_in", "share_out")}
    for c in np.unique(lab):
        if c < 0:
            continue
        mask = lab == c
        xin, xout = x[mask], x[~mask]

        def stats(m: Any) -> tuple[np.ndarray, np.ndarray]:
            if m.shape[0] == 0:
                return np.zeros(d), np.zeros(d)
            if sp.issparse(m):
                return (np.asarray(m.mean(axis=0)).ravel(),
                        np.asarray((m != 0).mean(axis=0)).ravel())
            return m.mean(axis=0), (m != 0).mean(axis=0)

        mi, si = stats(xin)
        mo, so = stats(xout)
        diff = mi - mo
        for j in np.argsort(-np.abs(diff), kind="stable")[:top]:
            out["cluster"].append(int(c))
            out["feature"].append(names[j])
            out["mean_in"].append(mi[j])
            out["mean_out"].append(mo[j])
            out["difference"].append(diff[j])
            out["share_in"].append(si[j])
            out["share_out"].append(so[j])
    cols = {"cluster": Col(np.asarray(out["cluster"], dtype=np.int64)),
            "feature": Col(np.asarray(out["feature"], dtype=object))}
    for k in ("mean_in", "mean_out", "difference", "share_in", "share_out"):
        cols[k] = Col(np.asarray(out[k], dtype=np.float64))
    return make_frame(cols, kind)


def describe_clusters(log: Any, labels: Any, X: Any = None,
                      feature_names: Sequence[str] | None = None, *, top: int = 3,
                      kind: str = "pandas") -> Any:
    """One row per cluster: what the group is.

    Columns: ``cluster``, ``size``, ``share``, ``median_duration``, ``top_variants`` (the most
    frequent variants with their share of the cluster), and with ``X`` ``top_features`` (the
    features whose mean differs most from the other cases). A feature that some cases lack
    (a count or a presence flag) is shown with the share of cases having it, inside vs outside
    the cluster; a feature with negative values or one that nearly every case has (a scaled
    number, a duration) with its mean inside vs outside. Noise (label -1) gets its own row.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> frame = pd.DataFrame({"case": ["r1", "r1", "r2", "r2", "r3"],
    ...     "activity": ["Receive bike", "Hand over", "Receive bike", "Hand over", "Inspect"],
    ...     "time": pd.date_range("2025-01-06", periods=5, freq="h")})
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time")
    >>> d = tm.cluster.describe_clusters(log, [0, 0, 1])
    >>> d[["cluster", "size", "top_variants"]].values.tolist()
    [[0, 2, 'Receive bike > Hand over (100%)'], [1, 1, 'Inspect (100%)']]
    """
    from .log import EventLog

    if not isinstance(log, EventLog):
        raise _param("log", f"describe_clusters expects an EventLog; got {type(log).__name__}")
    lab = np.asarray(labels)
    if lab.shape != (log.n_cases,):
        raise _param("labels", f"labels must have one entry per case ({log.n_cases}); got "
                     f"shape {lab.shape}")
    off, acts, _counts, cv, _co, _cases = log.handle.variants()
    names = np.asarray(log.activities, dtype=object)
    _s, _e, dur, _len = log.handle.case_stats()
    feats = None
    col_min = None
    if X is not None:
        import scipy.sparse as sp

        feats = distinguishing_features(X, lab, feature_names, top=top, kind="pandas")
        col_min = (X.min(axis=0).toarray().ravel() if sp.issparse(X)
                   else np.asarray(X, dtype=np.float64).min(axis=0))
        col_of = {f: j for j, f in enumerate(feature_names)} if feature_names is not None \
            else {str(j): j for j in range(len(col_min))}

    def feature_text(r: Any) -> str:
        sign = "+" if r.difference >= 0 else "-"
        signed = col_min is not None and col_min[col_of[r.feature]] < 0
        if signed or (r.share_in >= 0.99 and r.share_out >= 0.99):
            return f"{sign}{r.feature} (mean {r.mean_in:.3g} vs {r.mean_out:.3g})"
        return f"{sign}{r.feature} ({r.share_in:.0%} vs {r.share_out:.0%} of cases)"

    rows: dict[str, list[Any]] = {k: [] for k in ("cluster", "size", "share", "median_duration",
                                                 "top_variants", "top_features")}
    for c in np.unique(lab):
        mask = lab == c
        size = int(mask.sum())
        vs, cnt = np.unique(cv[mask], return_counts=True)
        order = np.argsort(-cnt, kind="stable")[:top]
        tv = "; ".join(f"{' > '.join(names[acts[off[v]:off[v + 1]]])} ({cnt[i] / size:.0%})"
                       for i, v in ((i, vs[i]) for i in order))
        rows["cluster"].append(int(c))
        rows["size"].append(size)
        rows["share"].append(size / log.n_cases)
        rows["median_duration"].append(float(np.median(dur[mask])))
        rows["top_variants"].append(tv)
        if feats is not None:
            f = feats[feats["cluster"] == c]
            rows["top_features"].append("; ".join(feature_text(r) for r in f.itertuples()))
    cols = {"cluster": Col(np.asarray(rows["cluster"], dtype=np.int64)),
            "size": Col(np.asarray(rows["size"], dtype=np.int64)),
            "share": Col(np.asarray(rows["share"], dtype=np.float64)),
            "median_duration": Col(np.asarray(rows["median_duration"]), kind="duration"),
            "top_variants": Col(np.asarray(rows["top_variants"], dtype=object))}
    if feats is not None:
        cols["top_features"] = Col(np.asarray(rows["top_features"], dtype=object))
    return make_frame(cols, kind)


def demo_section(log: Any, truth: Any, labels_out: list[Any] | None = None) -> str:
    """The demo's clustering section: group the cases of the scenario and compare the groups
    with the planted segments.

    Encodes each case by the activities it contains (binary) and its case attributes (one-hot
    and scaled, weight 2), clusters with k-means (k = number of planted segments, 10 restarts),
    and reports the groups, their top variants, the adjusted Rand index against the planted
    segments and the cross-table. Behaviour alone mixes the segments with the planted drift
    (a step added half-way splits every segment in two), so the attributes carry weight here.
    """
    from .encode import ActivityProfile, AttributeProfile, ProfileUnion

    seg = np.asarray(truth.segment)
    names = list(truth.segment_names)
    k = max(2, len(names))
    enc = ProfileUnion([("act", ActivityProfile(weighting="binary"), 1.0),
                        ("attr", AttributeProfile(), 2.0)])
    x = enc.fit_transform(log)
    km = KMeans(n_clusters=k, n_init=10, random_state=0).fit(x)
    ari = adjusted_rand_index(seg, km.labels_)
    if labels_out is not None:
        labels_out.append(km.labels_)
    desc = describe_clusters(log, km.labels_, x, enc.feature_names_, top=2)
    lines = [f"Clustering the {log.n_cases:,} cases: activity + case-attribute profiles "
             f"({x.shape[1]} features), k-means with k = {k}.",
             f"Agreement with the planted segments: adjusted Rand index {ari:.3f} "
             "(1 = identical partitions, 0 = chance)."]
    for r in desc.itertuples():
        days = r.median_duration / np.timedelta64(1, "D") if hasattr(
            r.median_duration, "__truediv__") else float("nan")
        lines.append(f"\n  group {r.cluster}: {r.size:,} cases ({r.share:.0%}), median duration "
                     f"{days:.1f} days")
        lines.append(f"    top variants: {r.top_variants[:160]}")
        lines.append(f"    separating features: {r.top_features[:160]}")
    table = np.zeros((k, len(names)), dtype=np.int64)
    np.add.at(table, (km.labels_, seg), 1)
    w = max(8, *(len(n) + 2 for n in names))
    head = "    group " + "".join(f"{n:>{w}}" for n in names)
    lines.append("\n  Groups (rows) against planted segments (columns):\n" + head)
    for g in range(k):
        lines.append(f"    {g:>5} " + "".join(f"{v:>{w},}" for v in table[g]))
    lines.append("  One sub-log per group: log.split(labels); clusters show which cases behave "
                 "alike, not why.")
    return "\n".join(lines)


__all__ = [
    "DBSCAN",
    "Agglomerative",
    "KMeans",
    "KMedoids",
    "VariantDistances",
    "adjusted_rand_index",
    "calinski_harabasz_score",
    "davies_bouldin_score",
    "demo_section",
    "describe_clusters",
    "distinguishing_features",
    "edit_distances",
    "mean_within_cluster_distance",
    "pairwise_distances",
    "silhouette_samples",
    "silhouette_score",
    "sweep_k",
]
