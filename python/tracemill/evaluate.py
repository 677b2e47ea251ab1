"""Honest evaluation: classification metrics, cross-validation splits and cross-validation.

Metrics come from one confusion matrix computed natively: accuracy and error, precision,
recall and F1 per class and averaged (macro, micro, weighted), Matthews correlation
(Matthews 1975; Gorodkin 2004 for several classes), Cohen's kappa (Cohen 1960) and balanced
accuracy. Splitters: k-fold, stratified k-fold (the fold allocation of scikit-learn's
``StratifiedKFold``), group k-fold (events of one case never on both sides), and time-ordered
splits (train on earlier cases, test on later ones). :func:`cross_validate` fits the folds in
parallel; tracemill trees share one presort across folds.

Notes
-----
A cross-validated score estimates performance on cases like the training ones. When the
process changes over time (see :mod:`tracemill.drift`), prefer time-ordered splits: random
folds then overstate how well a model will do on future cases.
"""

from __future__ import annotations

import copy
import numbers
import time
from collections.abc import Callable, Iterator
from concurrent.futures import ThreadPoolExecutor
from typing import Any

import numpy as np

from . import _core
from ._output import Col, make_frame
from .exceptions import DataError
from .exceptions import param_error as _param

__all__ = [
    "GroupKFold",
    "KFold",
    "StratifiedKFold",
    "TimeOrderedSplit",
    "accuracy",
    "classification_report",
    "classification_scores",
    "cohen_kappa",
    "confusion_matrix",
    "cross_validate",
    "error_rate",
    "f1",
    "mcc",
    "precision",
    "recall",
    "time_ordered_split",
]



# ---------------------------------------------------------------------------------- metrics
def _codes(y_true: Any, y_pred: Any, labels: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    t = np.asarray(y_true)
    p = np.asarray(y_pred)
    if t.ndim != 1 or p.ndim != 1:
        raise DataError("y_true and y_pred must be 1-D")
    if len(t) != len(p):
        raise DataError(f"y_true has {len(t)} labels and y_pred {len(p)}; they must have the "
                        "same length")
    if labels is None:
        lab = np.unique(np.concatenate([t, p]))
    else:
        lab = np.asarray(labels)
        if len(np.unique(lab)) != len(lab):
            raise _param("labels", "labels must be distinct")
    if len(lab) == 0:
        raise DataError("no labels to score")
    order = np.argsort(lab, kind="stable")
    sl = lab[order]

    def enc(v: np.ndarray, what: str) -> np.ndarray:
        pos = np.searchsorted(sl, v)
        pos = np.clip(pos, 0, len(sl) - 1)
        ok = sl[pos] == v
        if not ok.all():
            raise DataError(f"{what} has label {v[~ok][0]!r} at row {int(np.flatnonzero(~ok)[0])}"
                            f" that is not in labels {lab.tolist()[:10]}")
        return np.ascontiguousarray(order[pos], dtype=np.uint32)

    return enc(t, "y_true"), enc(p, "y_pred"), lab


def classification_scores(y_true: Any, y_pred: Any, *, labels: Any = None,
                          sample_weight: Any = None, zero_division: float = 0.0
                          ) -> dict[str, Any]:
    """Every score at once, as a dict.

    Keys: ``labels``, ``confusion`` (rows = true labels), ``accuracy``, ``error``,
    ``precision``/``recall``/``f1``/``support`` (per label), ``precision_macro``,
    ``precision_micro``, ``precision_weighted`` (and the same for recall and f1), ``mcc``,
    ``kappa``, ``balanced_accuracy``. A ratio with a zero denominator is ``zero_division``.

    Examples
    --------
    >>> import tracemill.evaluate as ev
    >>> s = ev.classification_scores([0, 1, 2, 0, 1, 2], [0, 2, 1, 0, 0, 1])
    >>> round(s["f1_macro"], 6), round(s["precision_micro"], 6)
    (0.266667, 0.333333)
    """
    t, p, lab = _codes(y_true, y_pred, labels)
    w = None if sample_weight is None else np.ascontiguousarray(sample_weight, dtype=np.float64)
    d = dict(_core.confusion_scores(t, p, len(lab), w, float(zero_division)))
    out: dict[str, Any] = {"labels": lab}
    out.update({k: d[k] for k in ("confusion", "accuracy", "error", "precision", "recall", "f1",
                                  "support", "mcc", "kappa", "balanced_accuracy")})
    for m in ("precision", "recall", "f1"):
        for j, avg in enumerate(("macro", "micro", "weighted")):
            out[f"{m}_{avg}"] = float(d[f"{m}_avg"][j])
    return out


def confusion_matrix(y_true: Any, y_pred: Any, *, labels: Any = None,
                     sample_weight: Any = None) -> np.ndarray:
    """Counts (or weights) of true label (rows) against predicted label (columns), labels
    sorted (or in the order given)."""
    s = classification_scores(y_true, y_pred, labels=labels, sample_weight=sample_weight)
    c = s["confusion"]
    return c.astype(np.int64) if sample_weight is None else c


def accuracy(y_true: Any, y_pred: Any, *, sample_weight: Any = None) -> float:
    """Share of correct predictions."""
    return float(classification_scores(y_true, y_pred, sample_weight=sample_weight)["accuracy"])


def error_rate(y_true: Any, y_pred: Any, *, sample_weight: Any = None) -> float:
    """Share of wrong predictions (``1 - accuracy``)."""
    return float(classification_scores(y_true, y_pred, sample_weight=sample_weight)["error"])


def _avg(metric: str, y_true: Any, y_pred: Any, average: str | None, labels: Any,
         pos_label: Any, zero_division: float) -> Any:
    s = classification_scores(y_true, y_pred, labels=labels, zero_division=zero_division)
    if average is None:
        return s[metric]
    if average == "binary":
        lab = s["labels"].tolist()
        if pos_label not in lab:
            raise _param("pos_label", f"pos_label={pos_label!r} is not a label ({lab[:10]})")
        return float(s[metric][lab.index(pos_label)])
    if average not in ("macro", "micro", "weighted"):
        raise _param("average", "average must be None, 'binary', 'macro', 'micro' or "
                                f"'weighted'; got {average!r}")
    return s[f"{metric}_{average}"]


def precision(y_true: Any, y_pred: Any, *, average: str | None = "macro", labels: Any = None,
              pos_label: Any = 1, zero_division: float = 0.0) -> Any:
    """Precision ``TP / (TP + FP)``: per label (``average=None``), of ``pos_label``
    ('binary'), or averaged ('macro', 'micro', 'weighted')."""
    return _avg("precision", y_true, y_pred, average, labels, pos_label, zero_division)


def recall(y_true: Any, y_pred: Any, *, average: str | None = "macro", labels: Any = None,
           pos_label: Any = 1, zero_division: float = 0.0) -> Any:
    """Recall ``TP / (TP + FN)``; ``average`` as in :func:`precision`."""
    return _avg("recall", y_true, y_pred, average, labels, pos_label, zero_division)


def f1(y_true: Any, y_pred: Any, *, average: str | None = "macro", labels: Any = None,
       pos_label: Any = 1, zero_division: float = 0.0) -> Any:
    """F1 ``2TP / (2TP + FP + FN)``; ``average`` as in :func:`precision`."""
    return _avg("f1", y_true, y_pred, average, labels, pos_label, zero_division)


def mcc(y_true: Any, y_pred: Any) -> float:
    """Matthews correlation coefficient (multiclass form of Gorodkin 2004); 0 for a degenerate
    table."""
    return float(classification_scores(y_true, y_pred)["mcc"])


def cohen_kappa(y_true: Any, y_pred: Any) -> float:
    """Cohen's kappa: agreement beyond chance, ``(p_o - p_e) / (1 - p_e)``."""
    return float(classification_scores(y_true, y_pred)["kappa"])


def classification_report(y_true: Any, y_pred: Any, *, labels: Any = None, digits: int = 3
                          ) -> str:
    """A text table: precision, recall, F1 and support per label, then accuracy, macro and
    weighted averages, MCC and kappa."""
    s = classification_scores(y_true, y_pred, labels=labels)
    names = [str(v) for v in s["labels"]]
    w = max(12, *(len(n) for n in names))
    head = f"{'':>{w}}  {'precision':>9}  {'recall':>9}  {'f1':>9}  {'support':>9}"
    lines = [head, ""]
    for j, n in enumerate(names):
        lines.append(f"{n:>{w}}  {s['precision'][j]:>9.{digits}f}  {s['recall'][j]:>9.{digits}f}"
                     f"  {s['f1'][j]:>9.{digits}f}  {s['support'][j]:>9.0f}")
    total = float(np.sum(s["support"]))
    lines.append("")
    lines.append(f"{'accuracy':>{w}}  {'':>9}  {'':>9}  {s['accuracy']:>9.{digits}f}  "
                 f"{total:>9.0f}")
    for avg in ("macro", "weighted"):
        lines.append(f"{avg + ' avg':>{w}}  {s['precision_' + avg]:>9.{digits}f}  "
                     f"{s['recall_' + avg]:>9.{digits}f}  {s['f1_' + avg]:>9.{digits}f}  "
                     f"{total:>9.0f}")
    lines.append(f"{'MCC':>{w}}  {s['mcc']:>9.{digits}f}")
    lines.append(f"{'kappa':>{w}}  {s['kappa']:>9.{digits}f}")
    return "\n".join(lines)


# ---------------------------------------------------------------------------------- splitters
def _seed(random_state: Any) -> int | None:
    if random_state is None:
        return None
    if isinstance(random_state, numbers.Integral) and not isinstance(random_state, bool):
        if random_state < 0:
            raise _param("random_state", f"random_state must be >= 0; got {random_state}")
        return int(random_state)
    raise _param("random_state", f"random_state must be None or an int; got {random_state!r}")


def _n_rows(X: Any) -> int:
    if hasattr(X, "shape"):
        return int(X.shape[0])
    return len(X)


class _FoldSplitter:
    n_splits: int

    def fold_ids(self, X: Any, y: Any = None, groups: Any = None) -> np.ndarray:
        raise NotImplementedError

    def split(self, X: Any, y: Any = None, groups: Any = None
              ) -> Iterator[tuple[np.ndarray, np.ndarray]]:
        """Yield ``(train_indices, test_indices)`` per fold."""
        f = self.fold_ids(X, y, groups)
        for k in range(self.n_splits):
            yield np.flatnonzero(f != k), np.flatnonzero(f == k)

    def get_n_splits(self, X: Any = None, y: Any = None, groups: Any = None) -> int:
        """Number of folds."""
        return self.n_splits

    def __repr__(self) -> str:
        return f"{type(self).__name__}({', '.join(f'{k}={v!r}' for k, v in vars(self).items())})"


class KFold(_FoldSplitter):
    """Consecutive folds (the first ``n % n_splits`` one sample larger), optionally shuffled
    with ``random_state``.

    Examples
    --------
    >>> from tracemill.evaluate import KFold
    >>> [t.tolist() for _, t in KFold(3).split(list(range(7)))]
    [[0, 1, 2], [3, 4], [5, 6]]
    """

    def __init__(self, n_splits: int = 5, *, shuffle: bool = False,
                 random_state: int | None = None) -> None:
        self.n_splits = n_splits
        self.shuffle = shuffle
        self.random_state = random_state

    def fold_ids(self, X: Any, y: Any = None, groups: Any = None) -> np.ndarray:
        """Fold id of each row."""
        seed = _seed(self.random_state) if self.shuffle else None
        if self.shuffle and seed is None:
            seed = 0
        return _core.kfold_ids(_n_rows(X), int(self.n_splits), seed)


class StratifiedKFold(_FoldSplitter):
    """Folds that keep the class proportions; unshuffled folds equal scikit-learn's
    ``StratifiedKFold``. More folds than samples of the smallest class is an error.

    Examples
    --------
    >>> from tracemill.evaluate import StratifiedKFold
    >>> [t.tolist() for _, t in StratifiedKFold(2).split([0] * 4, [0, 0, 1, 1])]
    [[0, 2], [1, 3]]
    """

    def __init__(self, n_splits: int = 5, *, shuffle: bool = False,
                 random_state: int | None = None) -> None:
        self.n_splits = n_splits
        self.shuffle = shuffle
        self.random_state = random_state

    def fold_ids(self, X: Any, y: Any = None, groups: Any = None) -> np.ndarray:
        """Fold id of each row."""
        if y is None:
            raise _param("y", "StratifiedKFold needs the labels y")
        y = np.asarray(y)
        if len(y) != _n_rows(X):
            raise DataError(f"X has {_n_rows(X)} rows but y has {len(y)} labels")
        _, codes = np.unique(y, return_inverse=True)
        seed = _seed(self.random_state) if self.shuffle else None
        if self.shuffle and seed is None:
            seed = 0
        return _core.stratified_ids(np.ascontiguousarray(codes, dtype=np.uint32),
                                    int(self.n_splits), seed)


class GroupKFold(_FoldSplitter):
    """Folds of whole groups (e.g. the case of each event row): a group is never on both sides.
    Largest groups are placed first, each into the currently lightest fold."""

    def __init__(self, n_splits: int = 5) -> None:
        self.n_splits = n_splits

    def fold_ids(self, X: Any, y: Any = None, groups: Any = None) -> np.ndarray:
        """Fold id of each row."""
        if groups is None:
            raise _param("groups", "GroupKFold needs groups (e.g. the case id of each row)")
        g = np.asarray(groups)
        if len(g) != _n_rows(X):
            raise DataError(f"X has {_n_rows(X)} rows but groups has {len(g)} entries")
        _, codes = np.unique(g, return_inverse=True)
        return _core.group_ids(np.ascontiguousarray(codes, dtype=np.uint32), int(self.n_splits))


class TimeOrderedSplit:
    """Expanding-window splits over rows in time order: train on earlier rows, test on the next
    block (as scikit-learn's ``TimeSeriesSplit``). Pass ``times`` to :meth:`split` when rows
    are not already sorted; ``gap`` rows are left out between train and test.

    Examples
    --------
    >>> from tracemill.evaluate import TimeOrderedSplit
    >>> [(a.tolist(), b.tolist()) for a, b in TimeOrderedSplit(3).split(range(6))]
    [([0, 1, 2], [3]), ([0, 1, 2, 3], [4]), ([0, 1, 2, 3, 4], [5])]
    """

    def __init__(self, n_splits: int = 5, *, test_size: int | None = None, gap: int = 0,
                 max_train_size: int | None = None) -> None:
        self.n_splits = n_splits
        self.test_size = test_size
        self.gap = gap
        self.max_train_size = max_train_size

    def split(self, X: Any, y: Any = None, groups: Any = None, *, times: Any = None
              ) -> Iterator[tuple[np.ndarray, np.ndarray]]:
        """Yield ``(train_indices, test_indices)``."""
        n = _n_rows(X) if not isinstance(X, range) else len(X)
        order = (np.arange(n) if times is None
                 else np.argsort(np.asarray(times), kind="stable"))
        for a, b, c, d in _core.time_splits(n, int(self.n_splits), self.test_size,
                                            int(self.gap), self.max_train_size):
            yield order[a:b], order[c:d]

    def get_n_splits(self, X: Any = None, y: Any = None, groups: Any = None) -> int:
        """Number of splits."""
        return self.n_splits


def time_ordered_split(start: Any, end: Any = None, *, test_size: float = 0.2,
                       drop_overlap: bool = True) -> tuple[np.ndarray, np.ndarray, int]:
    """Train on earlier cases, test on later ones.

    Cases are ordered by ``start`` (one per case); the last ``test_size`` share is the test
    set. With ``end`` and ``drop_overlap=True``, training cases still running when the first
    test case starts are left out, so no training case carries information from the test
    period (Weytjens & De Weerdt 2021 discuss this leakage). Returns
    ``(train_indices, test_indices, n_dropped)``.
    """
    s = np.asarray(start)
    if s.dtype.kind == "M":
        s = s.astype("datetime64[ns]").astype(np.int64)
    if not 0 < test_size < 1:
        raise _param("test_size", f"test_size must be in (0, 1); got {test_size}")
    n = len(s)
    n_test = max(1, round(test_size * n))
    if n_test >= n:
        raise DataError(f"{n} cases are too few for a test share of {test_size}")
    order = np.argsort(s, kind="stable")
    train, test = order[: n - n_test], order[n - n_test:]
    dropped = 0
    if end is not None and drop_overlap:
        e = np.asarray(end)
        if e.dtype.kind == "M":
            e = e.astype("datetime64[ns]").astype(np.int64)
        cut = s[test].min()
        keep = e[train] < cut
        dropped = int((~keep).sum())
        train = train[keep]
        if len(train) == 0:
            raise DataError("every training case overlaps the test period; lower test_size or "
                            "pass drop_overlap=False")
    return np.sort(train), np.sort(test), dropped


# ------------------------------------------------------------------------------ cross-validation
_SCORERS: dict[str, Callable[[np.ndarray, np.ndarray], float]] = {
    "accuracy": lambda t, p: float(np.mean(t == p)),
    "error": lambda t, p: float(np.mean(t != p)),
    "f1_macro": lambda t, p: f1(t, p, average="macro"),
    "f1_weighted": lambda t, p: f1(t, p, average="weighted"),
    "mcc": mcc,
    "kappa": cohen_kappa,
    "balanced_accuracy": lambda t, p: float(classification_scores(t, p)["balanced_accuracy"]),
    "r2": lambda t, p: (1.0 - float(((t - p) ** 2).sum()) / float(((t - t.mean()) ** 2).sum())
                        if float(((t - t.mean()) ** 2).sum()) > 0 else 0.0),
    "neg_mean_squared_error": lambda t, p: -float(np.mean((t - p) ** 2)),
}


def _scorer(scoring: Any) -> Callable[[np.ndarray, np.ndarray], float]:
    if callable(scoring):
        return scoring
    if scoring not in _SCORERS:
        raise _param("scoring", f"scoring must be a callable or one of {sorted(_SCORERS)}; "
                                f"got {scoring!r}")
    return _SCORERS[scoring]


def _clone(est: Any) -> Any:
    if hasattr(est, "get_params"):
        return type(est)(**est.get_params())
    return copy.deepcopy(est)


def _take(X: Any, idx: np.ndarray) -> Any:
    if hasattr(X, "iloc"):
        return X.iloc[idx]
    mod = type(X).__module__.split(".")[0]
    if mod == "polars":
        return X[idx]
    if mod == "pyarrow":
        return X.take(idx)
    return np.asarray(X)[idx]


def cross_validate(estimator: Any, X: Any, y: Any, *, cv: Any = 5, scoring: Any = "accuracy",
                   groups: Any = None, n_jobs: int | None = None, random_state: int | None = None,
                   kind: str = "pandas") -> Any:
    """Fit and score ``estimator`` on each fold; folds run in parallel.

    Parameters
    ----------
    estimator : tracemill estimator or any object with ``fit`` and ``predict``
        Cloned per fold (through ``get_params`` when it has one, else deep-copied).
    X, y : features and target
    cv : int or splitter, default=5
        An int means stratified k-fold for classifiers (k-fold for regressors and when
        ``groups`` is given: group k-fold), shuffled when ``random_state`` is set. Or any object
        with ``split(X, y, groups)``.
    scoring : str or callable(y_true, y_pred), default='accuracy'
        'accuracy', 'error', 'f1_macro', 'f1_weighted', 'mcc', 'kappa', 'balanced_accuracy',
        'r2', 'neg_mean_squared_error'.
    groups : array, optional
        Group (e.g. case) of each row for group-aware folds.
    n_jobs : int, optional
        Threads for estimators that are not tracemill trees (default: one per fold up to the
        number of cores). tracemill trees run all folds natively in parallel from one presort.

    Returns
    -------
    DataFrame
        One row per fold: ``fold``, ``n_train``, ``n_test``, ``score``, ``fit_time`` (s).

    Examples
    --------
    >>> import numpy as np, tracemill as tm
    >>> from tracemill.evaluate import cross_validate
    >>> X = np.arange(40, dtype=float).reshape(-1, 1)
    >>> y = (X[:, 0] >= 20).astype(int)
    >>> cross_validate(tm.TreeClassifier(), X, y, cv=4)["score"].tolist()
    [0.7, 1.0, 1.0, 0.8]
    """
    from .tree import TreeClassifier, TreeRegressor

    score = _scorer(scoring)
    y_arr = np.asarray(y)
    is_reg = isinstance(estimator, TreeRegressor) or getattr(estimator, "_estimator_type",
                                                             None) == "regressor"
    if isinstance(cv, numbers.Integral) and not isinstance(cv, bool):
        seed = _seed(random_state)
        if groups is not None:
            splitter: Any = GroupKFold(int(cv))
        elif is_reg:
            splitter = KFold(int(cv), shuffle=seed is not None, random_state=seed)
        else:
            splitter = StratifiedKFold(int(cv), shuffle=seed is not None, random_state=seed)
    else:
        splitter = cv
    if not hasattr(splitter, "split"):
        raise _param("cv", f"cv must be an int or a splitter with split(); got {cv!r}")
    n = _n_rows(X)
    if len(y_arr) != n:
        raise DataError(f"X has {n} rows but y has {len(y_arr)} labels; they must have the same "
                        "length")
    # Native path: tracemill trees with a partition of the rows into folds.
    if isinstance(estimator, (TreeClassifier, TreeRegressor)) and hasattr(splitter, "fold_ids"):
        fold = splitter.fold_ids(X, y_arr, groups)
        k = int(splitter.n_splits)
        est = _clone(estimator)
        t0 = time.perf_counter()
        x, args = est._prepare(X, y_arr, None)
        out = _core.tree_fold_predict(x, args["kinds"], args["names"], args["y_class"],
                                      args["n_classes"], args["y_value"], args["sample_weight"],
                                      np.ascontiguousarray(fold, dtype=np.uint32), k,
                                      **est._fit_args())
        elapsed = time.perf_counter() - t0
        if isinstance(est, TreeClassifier):
            pred = est.classes_[np.argmax(out, axis=1)]
        else:
            pred = out[:, 0]
        rows = []
        for f in range(k):
            te = fold == f
            rows.append((f, int((~te).sum()), int(te.sum()), score(y_arr[te], pred[te]),
                         elapsed / k))
        return _fold_frame(rows, kind)
    splits = list(splitter.split(X, y_arr, groups))

    def run(item: tuple[int, tuple[np.ndarray, np.ndarray]]) -> tuple[int, int, int, float,
                                                                      float]:
        f, (tr, te) = item
        est = _clone(estimator)
        t0 = time.perf_counter()
        est.fit(_take(X, tr), y_arr[tr])
        el = time.perf_counter() - t0
        return (f, len(tr), len(te), float(score(y_arr[te], np.asarray(est.predict(_take(X, te))))),
                el)

    import os

    workers = n_jobs or min(len(splits), os.cpu_count() or 1)
    if workers <= 1:
        rows = [run(it) for it in enumerate(splits)]
    else:
        with ThreadPoolExecutor(max_workers=workers) as ex:
            rows = list(ex.map(run, enumerate(splits)))
    return _fold_frame(rows, kind)


def _fold_frame(rows: list[tuple[int, int, int, float, float]], kind: str) -> Any:
    arr = list(zip(*rows, strict=False)) if rows else [[], [], [], [], []]
    return make_frame({
        "fold": Col(np.asarray(arr[0], dtype=np.int64)),
        "n_train": Col(np.asarray(arr[1], dtype=np.int64)),
        "n_test": Col(np.asarray(arr[2], dtype=np.int64)),
        "score": Col(np.asarray(arr[3], dtype=np.float64)),
        "fit_time": Col(np.asarray(arr[4], dtype=np.float64)),
    }, kind)
