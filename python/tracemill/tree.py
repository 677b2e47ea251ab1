"""Decision trees: classification and regression trees with native categorical features,
explicit missing-value routing, cost-complexity pruning, readable rules and DOT export.

The learner is tracemill's own presorted CART kernel (Rust, parallel over features). Criteria:
Gini and entropy (CART, ID3), the gain ratio (C4.5) and squared error (regression).
Categorical columns are split natively, either on a subset of categories (binary, CART) or
with one child per category (``categorical_split='multiway'``, the ID3/C4.5 tree).

Notes
-----
A tree describes associations in past data, not causes. Event logs often hold personal
data; features built from them inherit that.
"""

from __future__ import annotations

import numbers
import warnings
from collections.abc import Sequence
from typing import Any

import numpy as np

from . import _core
from ._output import Col, make_frame
from .exceptions import DataError, NotFittedError
from .exceptions import param_error as _param

__all__ = ["TreeClassifier", "TreeRegressor", "split_scores"]



def _check_int(owner: str, name: str, v: Any, lo: int, allow_none: bool = False) -> None:
    if v is None and allow_none:
        return
    if isinstance(v, bool) or not isinstance(v, numbers.Integral) or v < lo:
        extra = " or None" if allow_none else ""
        raise _param(name, f"The '{name}' parameter of {owner} must be an int in the range "
                           f"[{lo}, inf){extra}. Got {v!r} instead.")


def _check_float(owner: str, name: str, v: Any, lo: float = 0.0) -> None:
    if isinstance(v, bool) or not isinstance(v, numbers.Real) or not np.isfinite(v) or v < lo:
        raise _param(name, f"The '{name}' parameter of {owner} must be a float in the range "
                           f"[{lo}, inf). Got {v!r} instead.")


def _check_choice(owner: str, name: str, v: Any, choices: Sequence[str]) -> None:
    if v not in choices:
        opts = ", ".join(repr(c) for c in choices)
        raise _param(name, f"The '{name}' parameter of {owner} must be one of {opts}. "
                           f"Got {v!r} instead.")


# ---------------------------------------------------------------------------------- features
def _columns(X: Any) -> tuple[list[str], list[np.ndarray], bool]:
    """Column names, column arrays and whether X was a table with names."""
    mod = type(X).__module__.split(".")[0]
    if mod == "pandas" and hasattr(X, "columns"):
        return ([str(c) for c in X.columns], [X[c].to_numpy() for c in X.columns], True)
    if mod == "polars" and hasattr(X, "columns"):
        return (list(X.columns), [X[c].to_numpy() for c in X.columns], True)
    if mod == "pyarrow" and hasattr(X, "column_names"):
        return (list(X.column_names),
                [X.column(i).to_numpy(zero_copy_only=False) for i in range(X.num_columns)],
                True)
    arr = np.asarray(X)
    if arr.ndim != 2:
        raise DataError(f"X must be 2-D (rows x features); got an array of shape {arr.shape}")
    return ([f"x{j}" for j in range(arr.shape[1])], [arr[:, j] for j in range(arr.shape[1])],
            False)


def _is_null(v: np.ndarray) -> np.ndarray:
    if v.dtype.kind == "f":
        return np.isnan(v)
    if v.dtype.kind == "O":
        try:
            import pandas as pd

            return np.asarray(pd.isna(v), dtype=bool)
        except ImportError:  # pragma: no cover
            return np.array([x is None or (isinstance(x, float) and np.isnan(x)) for x in v])
    if v.dtype.kind == "M":
        return np.isnat(v)
    return np.zeros(len(v), dtype=bool)


def _auto_categorical(v: np.ndarray) -> bool:
    return v.dtype.kind in "OUSb"


def _sorted_categories(vals: np.ndarray) -> np.ndarray:
    uniq = list(dict.fromkeys(vals.tolist()))
    try:
        uniq.sort()
    except TypeError:
        uniq.sort(key=lambda x: (type(x).__name__, str(x)))
    out = np.empty(len(uniq), dtype=object)
    out[:] = uniq
    return out


class _Encoding:
    """How a feature table becomes the float64 matrix the kernel reads."""

    def __init__(self, names: list[str], categorical: list[bool], categories: dict[int, Any],
                 named: bool) -> None:
        self.names = names
        self.categorical = categorical
        self.categories = categories
        self.named = named

    @property
    def kinds(self) -> list[int]:
        return [len(self.categories[j]) if c else -1 for j, c in enumerate(self.categorical)]

    @classmethod
    def fit(cls, X: Any, categorical_features: Any, owner: str) -> _Encoding:
        names, cols, named = _columns(X)
        nf = len(cols)
        if categorical_features is None:
            cat = [False] * nf
        elif isinstance(categorical_features, str) and categorical_features == "auto":
            cat = [_auto_categorical(c) for c in cols]
        else:
            cat = [False] * nf
            for f in categorical_features:
                if isinstance(f, str):
                    if f not in names:
                        raise _param("categorical_features",
                                     f"categorical feature {f!r} is not a column of X; columns: "
                                     f"{names[:10]}")
                    cat[names.index(f)] = True
                elif isinstance(f, numbers.Integral) and 0 <= f < nf:
                    cat[int(f)] = True
                else:
                    raise _param("categorical_features",
                                 f"categorical_features entries must be column names or indices "
                                 f"in [0, {nf}); got {f!r}")
        categories: dict[int, Any] = {}
        for j in range(nf):
            if cat[j]:
                v = np.asarray(cols[j], dtype=object)
                categories[j] = _sorted_categories(v[~_is_null(v)])
        return cls(names, cat, categories, named)

    def transform(self, X: Any) -> np.ndarray:
        if (isinstance(X, np.ndarray) and X.ndim == 2 and X.dtype.kind in "fiub"
                and not any(self.categorical) and not self.named):
            if X.shape[1] != len(self.names):
                raise DataError(f"X has {X.shape[1]} features; the model was fitted on "
                                f"{len(self.names)}")
            return np.ascontiguousarray(X, dtype=np.float64)
        names, cols, named = _columns(X)
        if len(cols) != len(self.names):
            raise DataError(f"X has {len(cols)} features; the model was fitted on "
                            f"{len(self.names)}")
        if named and self.named and names != self.names:
            raise DataError(f"X has columns {names[:10]}; the model was fitted on "
                            f"{self.names[:10]} (same names, same order)")
        n = len(cols[0]) if cols else 0
        out = np.empty((n, len(cols)), dtype=np.float64)
        for j, v in enumerate(cols):
            if self.categorical[j]:
                v = np.asarray(v, dtype=object)
                null = _is_null(v)
                cats = self.categories[j]
                lookup = {c: k for k, c in enumerate(cats.tolist())}
                unseen = len(cats)
                codes = np.fromiter((lookup.get(x, unseen) for x in v.tolist()), dtype=np.float64,
                                    count=n)
                codes[null] = np.nan
                out[:, j] = codes
            else:
                try:
                    out[:, j] = np.asarray(v, dtype=np.float64)
                except (TypeError, ValueError) as e:
                    raise DataError(f"feature '{self.names[j]}' is not numeric (dtype "
                                    f"{np.asarray(v).dtype}); list it in categorical_features "
                                    "or encode it") from e
        return np.ascontiguousarray(out)


# ---------------------------------------------------------------------------------- base
class _BaseTree:
    _owner = "Tree"
    _criteria: tuple[str, ...] = ()
    _is_classifier = True

    def _validate(self) -> None:
        o = type(self).__name__
        _check_choice(o, "criterion", self.criterion, self._criteria)
        _check_int(o, "max_depth", self.max_depth, 0, allow_none=True)
        _check_int(o, "min_samples_split", self.min_samples_split, 2)
        _check_int(o, "min_samples_leaf", self.min_samples_leaf, 1)
        _check_float(o, "min_impurity_decrease", self.min_impurity_decrease)
        _check_float(o, "ccp_alpha", self.ccp_alpha)
        _check_choice(o, "categorical_split", self.categorical_split, ("binary", "multiway"))
        _check_choice(o, "missing_values", self.missing_values, ("error", "route"))
        _check_choice(o, "unseen_categories", self.unseen_categories, ("error", "route"))

    # sklearn-style parameter protocol -------------------------------------------------
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
        valid = self._param_names()
        for k, v in params.items():
            if k not in valid:
                raise _param(k, f"{type(self).__name__} has no parameter {k!r}; valid: {valid}")
            setattr(self, k, v)
        return self

    def __repr__(self) -> str:
        defaults = type(self)().get_params()
        changed = [f"{k}={v!r}" for k, v in self.get_params().items() if defaults[k] != v]
        return f"{type(self).__name__}({', '.join(changed)})"

    # fitting ----------------------------------------------------------------------------
    def _fit_args(self) -> dict[str, Any]:
        return dict(criterion=self.criterion, max_depth=self.max_depth,
                    min_samples_split=int(self.min_samples_split),
                    min_samples_leaf=int(self.min_samples_leaf),
                    min_impurity_decrease=float(self.min_impurity_decrease),
                    categorical_split=self.categorical_split,
                    missing_values=self.missing_values, ccp_alpha=float(self.ccp_alpha))

    def _prepare(self, X: Any, y: Any, sample_weight: Any) -> tuple[np.ndarray, dict[str, Any]]:
        self._validate()
        enc = _Encoding.fit(X, self.categorical_features, type(self).__name__)
        x = enc.transform(X)
        y = np.asarray(y)
        if y.ndim != 1:
            raise DataError(f"y must be 1-D; got shape {y.shape}")
        if len(y) != x.shape[0]:
            raise DataError(f"X has {x.shape[0]} rows but y has {len(y)} labels; they must have "
                            "the same length")
        if x.shape[0] == 0:
            raise DataError("cannot fit a tree on zero rows")
        w = None
        if sample_weight is not None:
            w = np.ascontiguousarray(sample_weight, dtype=np.float64)
            if w.shape != (x.shape[0],):
                raise DataError(f"sample_weight has shape {w.shape}; expected ({x.shape[0]},)")
        target = self._encode_target(y)
        if self._is_classifier:
            cw = self._class_weights(target["y_class"])
            if cw is not None:
                w = cw if w is None else w * cw
        self._enc = enc
        self._had_missing = np.isnan(x).any(axis=0)
        self.n_features_in_ = x.shape[1]
        self.feature_names_ = list(enc.names)
        if enc.named:
            self.feature_names_in_ = np.asarray(enc.names, dtype=object)
        self.categories_ = {enc.names[j]: c for j, c in enc.categories.items()}
        return x, dict(kinds=enc.kinds, names=enc.names, sample_weight=w, **target)

    def fit(self, X: Any, y: Any, sample_weight: Any = None) -> Any:
        """Grow the tree (and prune it when ``ccp_alpha > 0``). Returns self."""
        x, args = self._prepare(X, y, sample_weight)
        self.tree_ = _core.tree_fit(x, **args, **self._fit_args())
        self.n_unseen_ = 0
        return self

    def _check_fitted(self) -> None:
        if not hasattr(self, "tree_"):
            raise NotFittedError(f"This {type(self).__name__} instance is not fitted yet; call "
                                 "fit first.")

    def apply(self, X: Any) -> np.ndarray:
        """The leaf (node id) each row of X lands in.

        Rows meeting a category not seen in training are routed where missing values go and
        counted in ``n_unseen_`` (``unseen_categories='route'``), or raise ``DataError``
        (``'error'``).
        """
        self._check_fitted()
        x = self._enc.transform(X)
        leaves, n_unseen = self.tree_.apply(x, self.unseen_categories, self._enc.names)
        self.n_unseen_ = int(n_unseen)
        if n_unseen:
            warnings.warn(f"{n_unseen} rows had a category not seen in training and were routed "
                          "where missing values go", UserWarning, stacklevel=2)
        return leaves

    @property
    def _arrays(self) -> dict[str, Any]:
        a = getattr(self, "_arrays_cache", None)
        if a is None or a[0] is not self.tree_:
            a = (self.tree_, self.tree_.arrays())
            self._arrays_cache = a
        return a[1]

    def _values(self) -> np.ndarray:
        a = self._arrays
        k = max(a["n_classes"], 1)
        return a["value"].reshape(-1, k)

    @property
    def feature_importances_(self) -> np.ndarray:
        """Normalised total impurity decrease per feature (an association measure; it favours
        features with many distinct values)."""
        self._check_fitted()
        return self.tree_.feature_importances()

    @property
    def n_leaves_(self) -> int:
        """Number of leaves."""
        self._check_fitted()
        return int(self.tree_.n_leaves)

    @property
    def depth_(self) -> int:
        """Depth of the deepest leaf (root = 0)."""
        self._check_fitted()
        return int(self.tree_.depth)

    def cost_complexity_pruning_path(self, X: Any, y: Any,
                                     sample_weight: Any = None) -> dict[str, np.ndarray]:
        """Effective alphas of minimal cost-complexity pruning and the total leaf impurity of the
        tree pruned at each (Breiman et al. 1984, ch. 3). The tree is grown with
        ``ccp_alpha=0``; the estimator itself is not changed."""
        x, args = self._prepare(X, y, sample_weight)
        fa = self._fit_args()
        fa["ccp_alpha"] = 0.0
        handle = _core.tree_fit(x, **args, **fa)
        alphas, imps = handle.pruning_path()
        return {"ccp_alphas": alphas, "impurities": imps}

    def pruned(self, ccp_alpha: float) -> Any:
        """A copy of this fitted estimator pruned at ``ccp_alpha``."""
        self._check_fitted()
        import copy

        other = copy.copy(self)
        other.tree_ = self.tree_.prune(float(ccp_alpha))
        other.ccp_alpha = ccp_alpha
        other._arrays_cache = None
        return other

    # pickling ---------------------------------------------------------------------------
    def __getstate__(self) -> dict[str, Any]:
        from . import __version__

        state = dict(self.__dict__)
        state.pop("_arrays_cache", None)
        if "tree_" in state:
            state["tree_"] = self.tree_.arrays()
        state["_tracemill_version"] = __version__
        return state

    def __setstate__(self, state: dict[str, Any]) -> None:
        from . import __version__

        v = state.pop("_tracemill_version", None)
        if v != __version__:
            warnings.warn(f"unpickling a tree saved by tracemill {v} with {__version__}",
                          UserWarning, stacklevel=2)
        t = state.get("tree_")
        if isinstance(t, dict):
            enc = state["_enc"]
            state["tree_"] = _core.tree_from_arrays(
                enc.kinds, int(t["n_classes"]), state["missing_values"], t["feature"],
                t["threshold"], t["missing_slot"], t["child_ptr"], t["child_ids"], t["slot_ptr"],
                t["slots"], t["depth"], t["n_samples"], t["weighted_n"], t["impurity"],
                t["value"], t["counts"])
        self.__dict__.update(state)

    # rules and export -------------------------------------------------------------------
    def _fmt_num(self, v: float) -> str:
        return f"{v:.6g}"

    def _conditions(self) -> list[list[str]]:
        """The readable path condition of every node (list of clauses)."""
        a = self._arrays
        names = self._enc.names
        cats = self._enc.categories
        n = len(a["feature"])
        conds: list[list[str]] = [[] for _ in range(n)]
        # numeric bounds per feature along the path: (lo, hi, missing)
        bounds: list[dict[int, list[Any]]] = [{} for _ in range(n)]
        for i in range(n):
            f = int(a["feature"][i])
            if f < 0:
                continue
            kids = a["child_ids"][a["child_ptr"][i]:a["child_ptr"][i + 1]]
            mslot = int(a["missing_slot"][i])
            route_missing = self.missing_values == "route" and bool(
                getattr(self, "_had_missing", np.ones(len(names), dtype=bool))[f])
            slots = a["slots"][a["slot_ptr"][i]:a["slot_ptr"][i + 1]]
            for s, c in enumerate(kids):
                c = int(c)
                conds[c] = list(conds[i])
                bounds[c] = {k: list(v) for k, v in bounds[i].items()}
                miss = " or missing" if route_missing and s == mslot else ""
                if len(slots) == 0:
                    thr = float(a["threshold"][i])
                    b = bounds[c].setdefault(f, [-np.inf, np.inf, ""])
                    if np.isinf(thr):
                        conds[c].append(f"{names[f]} is {'missing' if s == 1 else 'present'}")
                        continue
                    if s == 0:
                        b[1] = min(b[1], thr)
                    else:
                        b[0] = max(b[0], thr)
                    b[2] = miss
                else:
                    members = [str(cats[f][k]) for k in range(len(slots)) if slots[k] == s]
                    if len(members) == 1:
                        conds[c].append(f"{names[f]} = {members[0]}{miss}")
                    else:
                        conds[c].append(f"{names[f]} in {{{', '.join(members)}}}{miss}")
        out = []
        for i in range(n):
            clauses = list(conds[i])
            for f, (lo, hi, miss) in sorted(bounds[i].items()):
                if np.isfinite(lo) and np.isfinite(hi):
                    clauses.append(f"{self._fmt_num(lo)} < {names[f]} <= {self._fmt_num(hi)}"
                                   f"{miss}")
                elif np.isfinite(hi):
                    clauses.append(f"{names[f]} <= {self._fmt_num(hi)}{miss}")
                elif np.isfinite(lo):
                    clauses.append(f"{names[f]} > {self._fmt_num(lo)}{miss}")
            out.append(clauses)
        return out

    def to_dot(self, *, max_depth: int | None = None, precision: int = 3) -> str:
        """The tree as Graphviz DOT text (boxes: split or prediction, samples, impurity)."""
        self._check_fitted()
        a = self._arrays
        names = self._enc.names
        cats = self._enc.categories
        lines = ["digraph tree {", '  node [shape=box, style="rounded", fontname="Helvetica"];']
        for i in range(len(a["feature"])):
            if max_depth is not None and a["depth"][i] > max_depth:
                continue
            f = int(a["feature"][i])
            head = self._node_summary(i, precision)
            if f >= 0:
                thr = float(a["threshold"][i])
                split = (f"{names[f]} <= {thr:.{precision}g}"
                         if not np.isnan(thr) else f"split on {names[f]}")
                label = f"{split}\\n{head}"
            else:
                label = head
            label = label.replace('"', "'")
            lines.append(f'  {i} [label="{label}"];')
            kids = a["child_ids"][a["child_ptr"][i]:a["child_ptr"][i + 1]]
            slots = a["slots"][a["slot_ptr"][i]:a["slot_ptr"][i + 1]]
            for s, c in enumerate(kids):
                if max_depth is not None and a["depth"][c] > max_depth:
                    continue
                if len(slots):
                    edge = ", ".join(str(cats[f][k]) for k in range(len(slots)) if slots[k] == s)
                else:
                    edge = "yes" if s == 0 else "no"
                had = getattr(self, "_had_missing", np.ones(len(names), dtype=bool))
                if (int(a["missing_slot"][i]) == s and self.missing_values == "route"
                        and had[f]):
                    edge += " (+missing)"
                edge = edge.replace('"', "'")
                lines.append(f'  {i} -> {int(c)} [label="{edge}"];')
        lines.append("}")
        return "\n".join(lines)

    def plot(self, ax: Any = None, *, max_depth: int | None = 3, fontsize: int = 8) -> Any:
        """Draw the tree with matplotlib (top levels up to ``max_depth``); returns the axes."""
        self._check_fitted()
        import matplotlib.pyplot as plt

        a = self._arrays
        if ax is None:
            _, ax = plt.subplots(figsize=(10, 5))
        names = self._enc.names
        pos: dict[int, tuple[float, float]] = {}
        leaves_seen = [0]

        def layout(i: int) -> float:
            kids = [int(c) for c in a["child_ids"][a["child_ptr"][i]:a["child_ptr"][i + 1]]]
            deep = max_depth is not None and a["depth"][i] >= max_depth
            if not kids or deep:
                x = float(leaves_seen[0])
                leaves_seen[0] += 1
            else:
                x = float(np.mean([layout(c) for c in kids]))
            pos[i] = (x, -float(a["depth"][i]))
            return x

        layout(0)
        for i, (x, y) in pos.items():
            f = int(a["feature"][i])
            txt = self._node_summary(i, 3).replace("\\n", "\n")
            if f >= 0 and i in pos and not (max_depth is not None and a["depth"][i] >= max_depth):
                thr = float(a["threshold"][i])
                txt = (f"{names[f]} <= {thr:.3g}" if not np.isnan(thr)
                       else f"split on {names[f]}") + "\n" + txt
                for c in a["child_ids"][a["child_ptr"][i]:a["child_ptr"][i + 1]]:
                    if int(c) in pos:
                        ax.plot([x, pos[int(c)][0]], [y, pos[int(c)][1]], color="0.6", lw=0.8,
                                zorder=1)
            ax.text(x, y, txt, ha="center", va="center", fontsize=fontsize, zorder=2,
                    bbox=dict(boxstyle="round", fc="white", ec="0.4"))
        ax.set_axis_off()
        return ax


# ---------------------------------------------------------------------------------- classifier
class TreeClassifier(_BaseTree):
    """A classification tree (CART with Gini or entropy, C4.5 gain ratio, ID3 multiway splits).

    Parameters
    ----------
    criterion : {'gini', 'entropy', 'gain_ratio'}, default='gini'
        Impurity measure; entropy is in bits.
    max_depth : int or None, default=None
        Maximum depth (root = 0); None grows until leaves are pure or too small.
    min_samples_split : int, default=2
        Nodes with fewer samples are not split.
    min_samples_leaf : int, default=1
        Every child keeps at least this many samples.
    min_impurity_decrease : float, default=0.0
        A split must decrease ``W_node / W_total * gain`` by at least this much.
    class_weight : None, 'balanced' or dict, default=None
        Weights per class (multiplied into ``sample_weight``); 'balanced' uses
        ``n_samples / (n_classes * count)``.
    categorical_features : 'auto', None or list, default='auto'
        Columns split natively as categories (names or indices). 'auto' takes text, boolean
        and categorical columns of a dataframe (or of an object array).
    categorical_split : {'binary', 'multiway'}, default='binary'
        Binary subset splits (CART) or one child per category (ID3/C4.5).
    missing_values : {'error', 'route'}, default='error'
        NaN/None in features is an error, or each split learns where missing values go.
    unseen_categories : {'route', 'error'}, default='route'
        At predict time a category not seen in training is routed like a missing value and
        counted in ``n_unseen_`` (with a warning), or raises ``DataError``.
    ccp_alpha : float, default=0.0
        Minimal cost-complexity pruning parameter.

    Attributes
    ----------
    classes_ : ndarray
        Class labels (sorted).
    tree_ : TreeHandle
        The fitted native tree.
    feature_names_ : list of str
    categories_ : dict
        Categories of each categorical feature, in code order.
    n_unseen_ : int
        Rows routed past an unseen category in the last predict/apply.

    Notes
    -----
    Splits are exact (every threshold between distinct values is tried) on presorted data;
    ties go to the lowest feature index, so results do not depend on the thread count and no
    ``random_state`` is needed. A tree shows association, not cause.

    References
    ----------
    Breiman, Friedman, Olshen, Stone (1984), *Classification and Regression Trees*.
    Quinlan (1986), Induction of decision trees, *Machine Learning* 1:81-106.
    Quinlan (1993), *C4.5: Programs for Machine Learning*.

    Examples
    --------
    >>> import numpy as np, tracemill as tm
    >>> X = np.array([[1.0], [2.0], [3.0], [4.0]])
    >>> clf = tm.TreeClassifier().fit(X, ["fast", "fast", "slow", "slow"])
    >>> clf.predict([[3.5]]).tolist()
    ['slow']
    >>> clf.rules()["rule"].tolist()
    ['x0 <= 2.5', 'x0 > 2.5']
    """

    _criteria = ("gini", "entropy", "gain_ratio")

    def __init__(self, criterion: str = "gini", max_depth: int | None = None,
                 min_samples_split: int = 2, min_samples_leaf: int = 1,
                 min_impurity_decrease: float = 0.0, class_weight: Any = None,
                 categorical_features: Any = "auto", categorical_split: str = "binary",
                 missing_values: str = "error", unseen_categories: str = "route",
                 ccp_alpha: float = 0.0) -> None:
        self.criterion = criterion
        self.max_depth = max_depth
        self.min_samples_split = min_samples_split
        self.min_samples_leaf = min_samples_leaf
        self.min_impurity_decrease = min_impurity_decrease
        self.class_weight = class_weight
        self.categorical_features = categorical_features
        self.categorical_split = categorical_split
        self.missing_values = missing_values
        self.unseen_categories = unseen_categories
        self.ccp_alpha = ccp_alpha

    def _encode_target(self, y: np.ndarray) -> dict[str, Any]:
        if y.dtype.kind == "f" and np.isnan(y).any():
            raise DataError(f"y has a missing value at row {int(np.flatnonzero(np.isnan(y))[0])}")
        classes, codes = np.unique(y, return_inverse=True)
        if len(classes) < 2:
            raise DataError(f"the target has one class only ({classes[0]!r}); a classification "
                            "tree needs at least two classes")
        self.classes_ = classes
        self.n_classes_ = len(classes)
        return dict(y_class=np.ascontiguousarray(codes, dtype=np.uint32),
                    n_classes=len(classes), y_value=None)

    def _class_weights(self, codes: np.ndarray) -> np.ndarray | None:
        cw = self.class_weight
        if cw is None:
            return None
        k = self.n_classes_
        if isinstance(cw, str) and cw == "balanced":
            counts = np.bincount(codes, minlength=k).astype(float)
            per = len(codes) / (k * counts)
        elif isinstance(cw, dict):
            per = np.ones(k)
            for lab, v in cw.items():
                hit = np.flatnonzero(self.classes_ == lab)
                if len(hit) == 0:
                    raise _param("class_weight", f"class_weight names {lab!r}, which is not a "
                                 f"class of y {self.classes_.tolist()[:10]}")
                per[hit[0]] = float(v)
        else:
            raise _param("class_weight", "The 'class_weight' parameter of TreeClassifier must be "
                         f"None, 'balanced' or a dict. Got {cw!r} instead.")
        return per[codes]

    def predict_proba(self, X: Any) -> np.ndarray:
        """Class probabilities (weighted class shares of the leaf), columns in ``classes_``."""
        leaves = self.apply(X)
        v = self._values()[leaves]
        s = v.sum(axis=1, keepdims=True)
        return np.divide(v, s, out=np.full_like(v, 1.0 / v.shape[1]), where=s > 0)

    def predict(self, X: Any) -> np.ndarray:
        """The most probable class (the first on ties)."""
        self._check_fitted()
        return self.classes_[np.argmax(self.predict_proba(X), axis=1)]

    def score(self, X: Any, y: Any) -> float:
        """Accuracy on (X, y)."""
        return float(np.mean(self.predict(X) == np.asarray(y)))

    def _node_summary(self, i: int, precision: int) -> str:
        a = self._arrays
        v = self._values()[i]
        k = int(np.argmax(v))
        counts = a["counts"].reshape(-1, self.n_classes_)[i]
        return (f"samples = {int(a['n_samples'][i])}\\n{self.criterion} = "
                f"{a['impurity'][i]:.{precision}f}\\ncounts = {counts.tolist()}\\n"
                f"class = {self.classes_[k]}")

    def rules(self, kind: str = "pandas") -> Any:
        """One readable if-then rule per leaf.

        Columns: ``leaf`` (node id), ``rule``, ``prediction``, ``n_samples`` (cases covered),
        ``support`` (share of training samples), ``confidence`` (weighted share of the predicted
        class) and one ``n_<class>`` column of training counts per class. Sorted by leaf id
        (tree order).
        """
        self._check_fitted()
        a = self._arrays
        leaves = np.flatnonzero(a["feature"] < 0)
        conds = self._conditions()
        v = self._values()[leaves]
        s = v.sum(axis=1)
        k = np.argmax(v, axis=1)
        counts = a["counts"].reshape(-1, self.n_classes_)[leaves]
        total = a["n_samples"][0]
        cols: dict[str, Col] = {
            "leaf": Col(leaves.astype(np.int64)),
            "rule": Col(np.array([" and ".join(conds[i]) or "(all)" for i in leaves],
                                 dtype=object)),
            "prediction": Col(self.classes_[k]),
            "n_samples": Col(a["n_samples"][leaves]),
            "support": Col(a["n_samples"][leaves] / total),
            "confidence": Col(np.where(s > 0, v[np.arange(len(k)), k] / np.where(s > 0, s, 1),
                                       0.0)),
        }
        for j, c in enumerate(self.classes_):
            cols[f"n_{c}"] = Col(counts[:, j].astype(np.int64))
        return make_frame(cols, kind)


# ---------------------------------------------------------------------------------- regressor
class TreeRegressor(_BaseTree):
    """A regression tree (CART, squared error), e.g. for case durations.

    Parameters are those of :class:`TreeClassifier` without ``class_weight``;
    ``criterion`` is 'squared_error'.

    Notes
    -----
    Leaves predict the weighted mean of their samples. A tree shows association, not cause.

    Examples
    --------
    >>> import numpy as np, tracemill as tm
    >>> X = np.array([[0.0], [1.0], [2.0], [3.0]])
    >>> reg = tm.TreeRegressor(max_depth=1).fit(X, [1.0, 1.0, 5.0, 5.0])
    >>> reg.predict([[0.5], [2.5]]).tolist()
    [1.0, 5.0]
    """

    _criteria = ("squared_error",)
    _is_classifier = False

    def __init__(self, criterion: str = "squared_error", max_depth: int | None = None,
                 min_samples_split: int = 2, min_samples_leaf: int = 1,
                 min_impurity_decrease: float = 0.0, categorical_features: Any = "auto",
                 categorical_split: str = "binary", missing_values: str = "error",
                 unseen_categories: str = "route", ccp_alpha: float = 0.0) -> None:
        self.criterion = criterion
        self.max_depth = max_depth
        self.min_samples_split = min_samples_split
        self.min_samples_leaf = min_samples_leaf
        self.min_impurity_decrease = min_impurity_decrease
        self.categorical_features = categorical_features
        self.categorical_split = categorical_split
        self.missing_values = missing_values
        self.unseen_categories = unseen_categories
        self.ccp_alpha = ccp_alpha

    def _encode_target(self, y: np.ndarray) -> dict[str, Any]:
        if y.dtype.kind == "m":
            y = y.astype("timedelta64[ns]").astype(np.int64).astype(np.float64)
        try:
            v = np.ascontiguousarray(y, dtype=np.float64)
        except (TypeError, ValueError) as e:
            raise DataError("a regression target must be numeric") from e
        bad = np.flatnonzero(~np.isfinite(v))
        if len(bad):
            raise DataError(f"the target has a non-finite value at row {int(bad[0])}")
        return dict(y_class=None, n_classes=0, y_value=v)

    def predict(self, X: Any) -> np.ndarray:
        """The mean target of each row's leaf."""
        return self._values()[self.apply(X), 0]

    def score(self, X: Any, y: Any) -> float:
        """Coefficient of determination R² on (X, y)."""
        y = np.asarray(y, dtype=float)
        p = self.predict(X)
        ss = float(((y - y.mean()) ** 2).sum())
        return 1.0 - float(((y - p) ** 2).sum()) / ss if ss > 0 else 0.0

    def _node_summary(self, i: int, precision: int) -> str:
        a = self._arrays
        return (f"samples = {int(a['n_samples'][i])}\\nmse = {a['impurity'][i]:.{precision}g}"
                f"\\nvalue = {self._values()[i, 0]:.{precision}g}")

    def rules(self, kind: str = "pandas") -> Any:
        """One readable rule per leaf: ``leaf``, ``rule``, ``prediction`` (mean),
        ``n_samples``, ``support``, ``std`` (standard deviation of the target in the leaf)."""
        self._check_fitted()
        a = self._arrays
        leaves = np.flatnonzero(a["feature"] < 0)
        conds = self._conditions()
        cols = {
            "leaf": Col(leaves.astype(np.int64)),
            "rule": Col(np.array([" and ".join(conds[i]) or "(all)" for i in leaves],
                                 dtype=object)),
            "prediction": Col(self._values()[leaves, 0]),
            "n_samples": Col(a["n_samples"][leaves]),
            "support": Col(a["n_samples"][leaves] / a["n_samples"][0]),
            "std": Col(np.sqrt(a["impurity"][leaves])),
        }
        return make_frame(cols, kind)


def split_scores(X: Any, y: Any, *, criterion: str = "entropy",
                 categorical_features: Any = "auto", categorical_split: str = "multiway",
                 missing_values: str = "error", sample_weight: Any = None,
                 kind: str = "pandas") -> Any:
    """The best root split of every feature: its impurity gain and its score (the gain, or the
    gain ratio for ``criterion='gain_ratio'``). A quick univariate screen of features.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> X = pd.DataFrame({"wind": ["weak", "strong", "weak", "strong"], "n": [1, 2, 3, 4]})
    >>> tm.tree.split_scores(X, [1, 0, 1, 0])["gain"].round(3).tolist()
    [1.0, 0.311]
    """
    is_cls = criterion != "squared_error"
    est: _BaseTree = (TreeClassifier(criterion=criterion) if is_cls
                      else TreeRegressor(criterion=criterion))
    est.set_params(categorical_features=categorical_features,
                   categorical_split=categorical_split, missing_values=missing_values)
    x, args = est._prepare(X, y, sample_weight)
    gain, score = _core.tree_root_scores(x, args["kinds"], args["names"], args["y_class"],
                                         args["n_classes"], args["y_value"],
                                         args["sample_weight"], criterion, categorical_split,
                                         missing_values)
    return make_frame({"feature": Col(np.asarray(est.feature_names_, dtype=object)),
                       "gain": Col(gain), "score": Col(score)}, kind)
