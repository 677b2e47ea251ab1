"""Trace encodings: one feature vector per case, ready for clustering.

Each profile is a transformer with ``fit(log)`` / ``transform(log)`` / ``fit_transform(log)``
and ``feature_names_``. Count profiles return a ``scipy.sparse.csr_matrix`` built on the native
buffers without a copy (or a dense array with ``sparse=False``); the attribute and performance
profiles return dense arrays. A profile fitted on one log applies to another: activities the
fitted log did not have are ignored and counted in a :class:`~tracemill.DataQualityWarning`.

References
----------
Song, Günther and van der Aalst (2008), "Trace clustering in process mining", BPM 2008
Workshops, LNBIP 17: the profile view of a case (activities, transitions, attributes,
performance). Salton and Buckley (1988), "Term-weighting approaches in automatic text
retrieval": tf-idf weighting.

Notes
-----
Event logs often hold personal data; features derived from them (durations, attributes) do too.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from typing import Any, ClassVar, Literal

import numpy as np

from . import _core
from .exceptions import DataQualityWarning, NotFittedError
from .exceptions import param_error as _param

Weighting = Literal["count", "binary", "tfidf"]



def _check_log(log: Any, who: str) -> Any:
    from .log import EventLog

    if not isinstance(log, EventLog):
        raise _param("log", f"{who} expects a tracemill.EventLog; got {type(log).__name__}")
    return log


def _code_map(log: Any, names: list[str]) -> np.ndarray:
    """For each activity code of ``log``: its index in ``names`` or UINT32_MAX (unseen)."""
    index = {a: i for i, a in enumerate(names)}
    unseen = np.iinfo(np.uint32).max
    return np.array([index.get(a, unseen) for a in log.activities], dtype=np.uint32)


def _warn_unseen(n: int, who: str) -> None:
    if n:
        warnings.warn(f"{who}: {n} events of activities not seen in fit were ignored",
                      DataQualityWarning, stacklevel=3)


def _csr(indptr: np.ndarray, indices: np.ndarray, data: np.ndarray, shape: tuple[int, int]) -> Any:
    import scipy.sparse as sp

    return sp.csr_matrix((data, indices, indptr), shape=shape, copy=False)


class _Base:
    """Parameter handling shared by the profiles (scikit-learn conventions)."""

    @classmethod
    def _param_names(cls) -> list[str]:
        import inspect

        sig = inspect.signature(cls.__init__)
        return [p for p in sig.parameters if p != "self"]

    def get_params(self, deep: bool = True) -> dict[str, Any]:
        """The constructor parameters."""
        return {k: getattr(self, k) for k in self._param_names()}

    def set_params(self, **params: Any) -> Any:
        """Set constructor parameters; returns self."""
        for k, v in params.items():
            if k not in self._param_names():
                raise _param(k, f"{type(self).__name__} has no parameter {k!r}")
            setattr(self, k, v)
        return self

    def __repr__(self) -> str:
        args = ", ".join(f"{k}={getattr(self, k)!r}" for k in self._param_names())
        return f"{type(self).__name__}({args})"[:200]

    def _check_fitted(self) -> None:
        if not hasattr(self, "feature_names_"):
            raise NotFittedError(f"this {type(self).__name__} is not fitted yet; call fit first")

    def fit_transform(self, log: Any, y: Any = None) -> Any:
        """Fit on ``log`` and encode it."""
        return self.fit(log).transform(log)


class _CountProfile(_Base):
    _n_min = 1
    _n_max = 1

    weighting: str
    norm: str | None
    sparse: bool

    def _check_common(self) -> None:
        if self.weighting not in ("count", "binary", "tfidf"):
            raise _param("weighting", f"The 'weighting' parameter of {type(self).__name__} must be "
                         f"'count', 'binary' or 'tfidf'. Got {self.weighting!r} instead.")
        if self.norm not in (None, "l1", "l2"):
            raise _param("norm", f"The 'norm' parameter of {type(self).__name__} must be None, "
                         f"'l1' or 'l2'. Got {self.norm!r} instead.")

    def _vocab(self, log: Any, cmap: np.ndarray, n_ref: int) -> tuple[np.ndarray, ...]:
        return _core.ngram_fit(log.handle, cmap, n_ref, self._n_min, self._n_max, None)

    def fit(self, log: Any, y: Any = None) -> Any:
        """Learn the vocabulary (and idf weights) from ``log``; returns self."""
        _check_log(log, type(self).__name__)
        self._check_common()
        self.activities_ = list(log.activities)
        cmap = np.arange(len(self.activities_), dtype=np.uint32)
        off, codes, df = self._vocab(log, cmap, len(self.activities_))
        self.vocabulary_offsets_ = off
        self.vocabulary_codes_ = codes
        self.document_frequency_ = df.astype(np.int64)
        n = log.n_cases
        self.idf_ = (np.log((1.0 + n) / (1.0 + df.astype(np.float64))) + 1.0
                     if self.weighting == "tfidf" else None)
        names = np.asarray(self.activities_, dtype=object)
        self.feature_names_ = [">".join(names[codes[off[j]:off[j + 1]]])
                               for j in range(len(off) - 1)]
        return self

    def transform(self, log: Any) -> Any:
        """Encode the cases of ``log`` (one row per case, in log order)."""
        self._check_fitted()
        _check_log(log, type(self).__name__)
        cmap = _code_map(log, self.activities_)
        indptr, indices, data, n_cols, unseen = _core.ngram_transform(
            log.handle, cmap, len(self.activities_), self.vocabulary_offsets_,
            self.vocabulary_codes_, self.weighting == "binary", self.idf_,
            self.norm or "none")
        _warn_unseen(unseen, type(self).__name__)
        self.n_unseen_events_ = int(unseen)
        x = _csr(indptr, indices, data, (log.n_cases, n_cols))
        return x if self.sparse else x.toarray()


class ActivityProfile(_CountProfile):
    """Per case, how often each activity occurs (bag of activities).

    Parameters
    ----------
    weighting : {'count', 'binary', 'tfidf'}, default='count'
        Counts, presence (1.0), or counts times the smoothed inverse document frequency
        ``ln((1 + n) / (1 + df)) + 1`` learnt in ``fit`` (as scikit-learn's TfidfTransformer).
    norm : {None, 'l1', 'l2'}, default=None
        Scale each row to unit norm after weighting.
    sparse : bool, default=True
        Return a ``scipy.sparse.csr_matrix``; ``False`` returns a dense array.

    Attributes
    ----------
    feature_names_ : list of str
        The activities, in column order (those of the fitted log).
    document_frequency_ : ndarray
        Cases of the fitted log containing each activity.
    idf_ : ndarray or None
        The idf weights (tfidf only).
    n_unseen_events_ : int
        Events of the last transformed log whose activity was not seen in fit.

    Notes
    -----
    Event logs often hold personal data. Profiles describe what cases did, not why.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> frame = pd.DataFrame({"case": ["r1", "r1", "r1", "r2", "r2"],
    ...     "activity": ["Receive bike", "Inspect", "Inspect", "Receive bike", "Hand over"],
    ...     "time": pd.date_range("2025-01-06", periods=5, freq="h")})
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time")
    >>> prof = tm.encode.ActivityProfile(sparse=False)
    >>> prof.fit_transform(log)
    array([[1., 2., 0.],
           [1., 0., 1.]])
    >>> prof.feature_names_
    ['Receive bike', 'Inspect', 'Hand over']
    """

    def __init__(self, *, weighting: Weighting = "count", norm: str | None = None,
                 sparse: bool = True) -> None:
        self.weighting = weighting
        self.norm = norm
        self.sparse = sparse

    def _vocab(self, log: Any, cmap: np.ndarray, n_ref: int) -> tuple[np.ndarray, ...]:
        return _core.activity_vocab(log.handle, cmap, n_ref)


class TransitionProfile(_CountProfile):
    """Per case, how often each directly-follows pair ``a > b`` occurs.

    Parameters are those of :class:`ActivityProfile`. Columns are the pairs seen in the fitted
    log, named ``'a>b'``.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> frame = pd.DataFrame({"case": ["r1", "r1", "r1", "r2", "r2"],
    ...     "activity": ["Receive bike", "Inspect", "Hand over", "Receive bike", "Hand over"],
    ...     "time": pd.date_range("2025-01-06", periods=5, freq="h")})
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time")
    >>> prof = tm.encode.TransitionProfile(sparse=False)
    >>> prof.fit_transform(log)
    array([[1., 0., 1.],
           [0., 1., 0.]])
    >>> prof.feature_names_
    ['Receive bike>Inspect', 'Receive bike>Hand over', 'Inspect>Hand over']
    """

    _n_min = 2
    _n_max = 2

    def __init__(self, *, weighting: Weighting = "count", norm: str | None = None,
                 sparse: bool = True) -> None:
        self.weighting = weighting
        self.norm = norm
        self.sparse = sparse


class NgramProfile(_CountProfile):
    """Per case, counts of contiguous activity n-grams of length ``n_min`` to ``n``.

    Parameters
    ----------
    n : int, default=3
        Longest n-gram.
    n_min : int, default=1
        Shortest n-gram.
    max_features : int or None, default=None
        Keep only the most frequent n-grams (by total count in the fitted log; ties: shorter,
        then by activity order).
    weighting, norm, sparse
        As in :class:`ActivityProfile`.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> frame = pd.DataFrame({"case": ["r1"] * 3,
    ...     "activity": ["Receive bike", "Inspect", "Hand over"],
    ...     "time": pd.date_range("2025-01-06", periods=3, freq="h")})
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time")
    >>> tm.encode.NgramProfile(n=3, n_min=2).fit(log).feature_names_
    ['Receive bike>Inspect', 'Inspect>Hand over', 'Receive bike>Inspect>Hand over']
    """

    def __init__(self, n: int = 3, *, n_min: int = 1, max_features: int | None = None,
                 weighting: Weighting = "count", norm: str | None = None,
                 sparse: bool = True) -> None:
        self.n = n
        self.n_min = n_min
        self.max_features = max_features
        self.weighting = weighting
        self.norm = norm
        self.sparse = sparse

    def _vocab(self, log: Any, cmap: np.ndarray, n_ref: int) -> tuple[np.ndarray, ...]:
        for name in ("n", "n_min"):
            v = getattr(self, name)
            if not isinstance(v, (int, np.integer)) or v < 1:
                raise _param(name, f"The {name!r} parameter of NgramProfile must be an int in "
                             f"the range [1, inf). Got {v!r} instead.")
        if self.n_min > self.n:
            raise _param("n_min", f"n_min ({self.n_min}) must not exceed n ({self.n})")
        mf = self.max_features
        if mf is not None and (not isinstance(mf, (int, np.integer)) or mf < 1):
            raise _param("max_features", "The 'max_features' parameter of NgramProfile must be "
                         f"None or an int in the range [1, inf). Got {mf!r} instead.")
        return _core.ngram_fit(log.handle, cmap, n_ref, int(self.n_min), int(self.n),
                               None if mf is None else int(mf))


class PerformanceProfile(_Base):
    """Per case: duration, number of events, mean and max waiting time, and the time spent per
    activity, in ``unit`` (hours by default).

    The waiting times are the gaps between consecutive events of the case (0 for a one-event
    case). The time spent on an activity is the sum of the gaps that end at its events: the
    time from the previous event of the case until this one completed.

    Parameters
    ----------
    per_activity : bool, default=True
        Add one column of time spent per activity.
    unit : {'s', 'min', 'h', 'd'}, default='h'
        Time unit of the output.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> frame = pd.DataFrame({"case": ["r1", "r1", "r1"],
    ...     "activity": ["Receive bike", "Inspect", "Hand over"],
    ...     "time": pd.to_datetime(["2025-01-06 09:00", "2025-01-06 10:00", "2025-01-06 13:00"])})
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time")
    >>> tm.encode.PerformanceProfile(per_activity=False).fit_transform(log)
    array([[4., 3., 2., 3.]])
    """

    _UNITS: ClassVar[dict[str, float]] = {"s": 1.0, "min": 60.0, "h": 3600.0, "d": 86400.0}

    def __init__(self, *, per_activity: bool = True, unit: str = "h") -> None:
        self.per_activity = per_activity
        self.unit = unit

    def fit(self, log: Any, y: Any = None) -> PerformanceProfile:
        """Remember the activities of ``log``; returns self."""
        _check_log(log, "PerformanceProfile")
        if self.unit not in self._UNITS:
            raise _param("unit", f"The 'unit' parameter of PerformanceProfile must be one of "
                         f"{list(self._UNITS)}. Got {self.unit!r} instead.")
        self.activities_ = list(log.activities)
        u = self.unit
        names = [f"duration_{u}", "n_events", f"mean_wait_{u}", f"max_wait_{u}"]
        if self.per_activity:
            names += [f"time_{u}:{a}" for a in self.activities_]
        self.feature_names_ = names
        return self

    def transform(self, log: Any) -> np.ndarray:
        """Encode the cases of ``log``."""
        self._check_fitted()
        _check_log(log, "PerformanceProfile")
        cmap = _code_map(log, self.activities_)
        flat, unseen = _core.performance_profile(log.handle, cmap, len(self.activities_))
        _warn_unseen(unseen, "PerformanceProfile")
        x = flat.reshape(log.n_cases, 4 + len(self.activities_))
        scale = self._UNITS[self.unit]
        x[:, [0, 2, 3]] /= scale
        x[:, 4:] /= scale
        return x if self.per_activity else np.ascontiguousarray(x[:, :4])


class AttributeProfile(_Base):
    """Case attributes as features: categorical ones one-hot, numeric ones standardised.

    Parameters
    ----------
    attributes : list of str or None, default=None
        Case attributes to use (default: all).
    scale : bool, default=True
        Standardise numeric columns with the mean and standard deviation of the fitted log
        (timestamps become seconds first; booleans are 0/1 and not scaled).
    null_indicator : bool, default=True
        For each column with nulls in the fitted log, add a 0/1 column ``<name>=null``; null
        numeric values become the fitted mean (0 after scaling).

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> frame = pd.DataFrame({"case": ["r1", "r2", "r3"], "activity": ["Receive bike"] * 3,
    ...     "time": pd.date_range("2025-01-06", periods=3, freq="h"),
    ...     "bike": ["city", "road", "city"], "price": [100.0, 300.0, None]})
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time",
    ...                              case_attributes=["bike", "price"])
    >>> prof = tm.encode.AttributeProfile(scale=False)
    >>> prof.fit_transform(log)
    array([[  1.,   0., 100.,   0.],
           [  0.,   1., 300.,   0.],
           [  1.,   0., 200.,   1.]])
    >>> prof.feature_names_
    ['bike=city', 'bike=road', 'price', 'price=null']
    """

    def __init__(self, *, attributes: Sequence[str] | None = None, scale: bool = True,
                 null_indicator: bool = True) -> None:
        self.attributes = attributes
        self.scale = scale
        self.null_indicator = null_indicator

    @staticmethod
    def _columns(log: Any) -> dict[str, tuple]:
        return {t[0]: t for t in log.handle.case_attrs()}

    def fit(self, log: Any, y: Any = None) -> AttributeProfile:
        """Learn categories, means and scales from ``log``; returns self."""
        _check_log(log, "AttributeProfile")
        cols = self._columns(log)
        wanted = list(cols) if self.attributes is None else list(self.attributes)
        for a in wanted:
            if a not in cols:
                raise _param("attributes", f"the log has no case attribute {a!r}; it has "
                             f"{sorted(cols)}")
        spec: list[dict[str, Any]] = []
        names: list[str] = []
        for a in wanted:
            _name, kind, values, valid, dict_ = cols[a]
            has_null = valid is not None and not bool(np.all(valid))
            if kind == "str":
                cats = list(dict_)
                spec.append({"name": a, "kind": "cat", "cats": cats, "null": has_null})
                names += [f"{a}={c}" for c in cats]
            else:
                v = np.asarray(values, dtype=np.float64)
                if kind == "time":
                    v = v / 1e9
                ok = np.ones(len(v), bool) if valid is None else np.asarray(valid, bool)
                mean = float(v[ok].mean()) if ok.any() else 0.0
                std = float(v[ok].std()) if ok.any() else 1.0
                scale = self.scale and kind != "bool"
                spec.append({"name": a, "kind": kind, "mean": mean,
                             "std": std if std > 0 else 1.0, "scale": scale, "null": has_null})
                names.append(a)
            if has_null and self.null_indicator:
                names.append(f"{a}=null")
        self.spec_ = spec
        self.feature_names_ = names
        return self

    def transform(self, log: Any) -> np.ndarray:
        """Encode the cases of ``log``; unseen categories give all-zero one-hot columns and are
        counted in a warning."""
        self._check_fitted()
        _check_log(log, "AttributeProfile")
        cols = self._columns(log)
        n = log.n_cases
        blocks: list[np.ndarray] = []
        unseen = 0
        for s in self.spec_:
            a = s["name"]
            if a not in cols:
                raise _param("log", f"the log has no case attribute {a!r} (it was fitted on one)")
            _name, kind, values, valid, dict_ = cols[a]
            ok = np.ones(n, bool) if valid is None else np.asarray(valid, bool)
            if s["kind"] == "cat":
                if kind != "str":
                    raise _param("log", f"case attribute {a!r} was text in fit but is {kind} now")
                index = {c: i for i, c in enumerate(s["cats"])}
                remap = np.array([index.get(c, -1) for c in dict_], dtype=np.int64)
                raw = np.where(ok, np.asarray(values, dtype=np.int64), 0)
                codes = remap[raw] if len(remap) else np.full(n, -1, dtype=np.int64)
                codes = np.where(ok, codes, -1)
                unseen += int(np.sum((codes < 0) & ok))
                b = np.zeros((n, len(s["cats"])))
                rows = np.nonzero(codes >= 0)[0]
                b[rows, codes[rows]] = 1.0
                blocks.append(b)
            else:
                if kind == "str":
                    raise _param("log", f"case attribute {a!r} was numeric in fit but is text now")
                v = np.asarray(values, dtype=np.float64)
                if kind == "time":
                    v = v / 1e9
                v = np.where(ok, v, s["mean"])
                if s["scale"]:
                    v = (v - s["mean"]) / s["std"]
                blocks.append(v[:, None])
            if s["null"] and self.null_indicator:
                blocks.append((~ok).astype(np.float64)[:, None])
        if unseen:
            warnings.warn(f"AttributeProfile: {unseen} case attribute values not seen in fit "
                          "were encoded as all zeros", DataQualityWarning, stacklevel=2)
        return np.hstack(blocks) if blocks else np.zeros((n, 0))


class ProfileUnion(_Base):
    """Several profiles side by side, each multiplied by a weight.

    Parameters
    ----------
    profiles : list of (name, profile) or (name, profile, weight)
        The parts; feature names become ``'name:feature'``.
    sparse : bool, default=True
        Return a CSR matrix (dense parts are converted); ``False`` returns a dense array.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> frame = pd.DataFrame({"case": ["r1", "r1", "r2", "r2"],
    ...     "activity": ["Receive bike", "Hand over", "Receive bike", "Inspect"],
    ...     "time": pd.date_range("2025-01-06", periods=4, freq="h")})
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time")
    >>> u = tm.encode.ProfileUnion([("act", tm.encode.ActivityProfile()),
    ...                             ("tr", tm.encode.TransitionProfile(), 2.0)], sparse=False)
    >>> u.fit_transform(log)
    array([[1., 1., 0., 2., 0.],
           [1., 0., 1., 0., 2.]])
    >>> u.feature_names_[-1]
    'tr:Receive bike>Inspect'
    """

    def __init__(self, profiles: Sequence[tuple], *, sparse: bool = True) -> None:
        self.profiles = profiles
        self.sparse = sparse

    def _parts(self) -> list[tuple[str, Any, float]]:
        out = []
        for p in self.profiles:
            if not isinstance(p, tuple) or len(p) not in (2, 3):
                raise _param("profiles", "each part must be (name, profile) or "
                             f"(name, profile, weight); got {p!r}")
            w = float(p[2]) if len(p) == 3 else 1.0
            if not np.isfinite(w) or w < 0:
                raise _param("profiles", f"the weight of part {p[0]!r} must be finite and >= 0")
            out.append((str(p[0]), p[1], w))
        if not out:
            raise _param("profiles", "ProfileUnion needs at least one profile")
        return out

    def fit(self, log: Any, y: Any = None) -> ProfileUnion:
        """Fit every part on ``log``; returns self."""
        names: list[str] = []
        for name, prof, _w in self._parts():
            prof.fit(log)
            names += [f"{name}:{f}" for f in prof.feature_names_]
        self.feature_names_ = names
        return self

    def transform(self, log: Any) -> Any:
        """Encode ``log`` with every part and stack the columns."""
        import scipy.sparse as sp

        self._check_fitted()
        mats, weights = [], []
        for _name, prof, w in self._parts():
            x = prof.transform(log)
            mats.append(sp.csr_matrix(x))
            weights.append(w)
        # Stacked natively, in parallel (scipy's hstack is single-threaded).
        indptr, indices, data, n_cols = _core.csr_hstack(
            [np.asarray(x.indptr, dtype=np.int64) for x in mats],
            [np.asarray(x.indices, dtype=np.int32) for x in mats],
            [np.asarray(x.data, dtype=np.float64) for x in mats],
            [x.shape[1] for x in mats], weights, log.n_cases)
        out = _csr(indptr, indices, data, (log.n_cases, n_cols))
        return out if self.sparse else out.toarray()


__all__ = [
    "ActivityProfile",
    "AttributeProfile",
    "NgramProfile",
    "PerformanceProfile",
    "ProfileUnion",
    "TransitionProfile",
]
