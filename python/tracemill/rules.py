"""Frequent itemsets and association rules over cases (or any baskets).

Which activities, attribute values and resources occur together in cases, and which of those
co-occurrences are surprising? Build :class:`Transactions` (one per case with
:meth:`Transactions.from_log`, or from plain data), mine them with :func:`frequent_itemsets`
(FP-Growth by default, Eclat or Apriori on request) and turn the itemsets into
:func:`association_rules` with their counts and published interestingness measures.

Rules describe associations in past data, not causes; event logs often hold personal data.
"""

from __future__ import annotations

import difflib
import itertools
import warnings
from collections.abc import Callable, Iterable, Sequence
from numbers import Integral, Real
from typing import Any, Literal

import numpy as np

from . import _core
from ._output import Col, check_kind, make_frame
from .exceptions import DataError, DataQualityWarning
from .exceptions import param_error as _param

Progress = Callable[[int, int], Any] | None

MEASURES = ("support", "confidence", "lift", "leverage", "conviction", "jaccard", "cosine",
            "kulczynski", "all_confidence", "max_confidence", "imbalance_ratio", "certainty",
            "zhang")



def _factorize(values: list[Any]) -> tuple[np.ndarray, list[Any]]:
    """Codes (uint32) and names, names sorted when they are mutually comparable."""
    if not values:
        return np.zeros(0, dtype=np.uint32), []
    arr = np.array(values) if not isinstance(values[0], (tuple, list)) else None
    if arr is not None and arr.ndim == 1 and arr.dtype.kind in "iu" and arr.size:
        # Integers (Python semantics: equal values are one item): a presence table when the
        # range is small, a sort otherwise.
        lo, hi = int(arr.min()), int(arr.max())
        if hi - lo < 50_000_000:
            present = np.zeros(hi - lo + 1, dtype=bool)
            present[arr - lo] = True
            uniq = np.flatnonzero(present)
            remap = np.cumsum(present, dtype=np.int64) - 1
            return remap[arr - lo].astype(np.uint32), (uniq + lo).tolist()
        uniq, inv = np.unique(arr, return_inverse=True)
        return inv.astype(np.uint32).ravel(), uniq.tolist()
    if arr is not None and arr.ndim == 1 and arr.dtype.kind == "U" and \
            all(type(v) is str for v in values):
        uniq, inv = np.unique(arr, return_inverse=True)
        return inv.astype(np.uint32).ravel(), uniq.tolist()
    try:
        import pandas as pd

        codes, uniq = pd.factorize(np.asarray(values, dtype=object), sort=False)
        names = list(uniq)
    except ImportError:  # pragma: no cover
        d: dict[Any, int] = {}
        codes = np.fromiter((d.setdefault(v, len(d)) for v in values), dtype=np.int64,
                            count=len(values))
        names = list(d)
    try:
        order = sorted(range(len(names)), key=lambda i: names[i])
    except TypeError:
        order = list(range(len(names)))
    remap = np.empty(len(names), dtype=np.uint32)
    remap[np.asarray(order, dtype=np.int64)] = np.arange(len(names), dtype=np.uint32)
    return remap[codes], [names[i] for i in order]


def _csr_from_pairs(rows: np.ndarray, codes: np.ndarray, n_rows: int) -> tuple[np.ndarray,
                                                                               np.ndarray]:
    order = np.argsort(rows, kind="stable")
    counts = np.bincount(rows, minlength=n_rows) if len(rows) else np.zeros(n_rows, np.int64)
    offsets = np.zeros(n_rows + 1, dtype=np.int64)
    np.cumsum(counts, out=offsets[1:])
    return offsets, np.ascontiguousarray(codes[order], dtype=np.uint32)


class Transactions:
    """A transaction database: one set of items per transaction, with item names.

    An item counts once per transaction (presence, not frequency). Empty transactions are
    allowed and counted: they lower every relative support. Build one from a log
    (:meth:`from_log`, one transaction per case) or from plain data (:meth:`from_lists`,
    :meth:`from_frame`, :meth:`from_sparse`).

    Attributes
    ----------
    item_names : list
        The item names; item code ``k`` is ``item_names[k]``.

    Examples
    --------
    >>> import tracemill as tm
    >>> t = tm.Transactions.from_lists([["bread", "milk"], ["bread", "beer"], []])
    >>> t.n_transactions, t.n_items, t.n_empty
    (3, 3, 1)
    >>> t.item_names
    ['beer', 'bread', 'milk']
    """

    __slots__ = ("_h", "item_names")

    def __init__(self, handle: Any, item_names: list[Any]) -> None:
        self._h = handle
        self.item_names = item_names

    # ------------------------------------------------------------------ constructors
    @classmethod
    def from_csr(cls, offsets: Any, items: Any, item_names: Sequence[Any]) -> Transactions:
        """From CSR arrays: ``items[offsets[t]:offsets[t + 1]]`` are the item codes of
        transaction ``t``, each code indexing ``item_names``."""
        names = list(item_names)
        if len(set(names)) != len(names):
            dup = next(n for n, c in _counts(names).items() if c > 1)
            raise _param("item_names", f"item names must be distinct; {dup!r} repeats")
        off = np.ascontiguousarray(offsets, dtype=np.int64)
        it = np.asarray(items)
        if it.size and (it.dtype.kind not in "iu" or it.min() < 0):
            raise _param("items", "item codes must be non-negative integers")
        h = _core.build_transactions(off, np.ascontiguousarray(it, dtype=np.uint32), len(names))
        return cls(h, names)

    @classmethod
    def from_lists(cls, lists: Iterable[Iterable[Any]]) -> Transactions:
        """From one iterable of hashable items per transaction (repeats count once).

        >>> import tracemill as tm
        >>> tm.Transactions.from_lists([[1, 2, 2], [2]]).to_lists()
        [[1, 2], [2]]
        """
        lists = lists if isinstance(lists, list) else list(lists)
        if not all(isinstance(x, (list, tuple)) for x in lists):
            lists = [x if isinstance(x, (list, tuple)) else
                     (_bad_list(x) if isinstance(x, (str, bytes)) else list(x)) for x in lists]
        lengths = np.fromiter(map(len, lists), dtype=np.int64, count=len(lists))
        flat = list(itertools.chain.from_iterable(lists))
        codes, names = _factorize(flat)
        offsets = np.zeros(len(lists) + 1, dtype=np.int64)
        np.cumsum(lengths, out=offsets[1:])
        return cls.from_csr(offsets, codes, names)

    @classmethod
    def from_frame(cls, frame: Any) -> Transactions:
        """From a one-hot table: one row per transaction, one boolean or 0/1 column per item
        (pandas or polars). The column names are the item names."""
        mod = type(frame).__module__.split(".")[0]
        if mod == "polars":
            names = list(frame.columns)
            cols = [frame.get_column(c).to_numpy() for c in names]
        elif mod == "pandas":
            names = list(frame.columns)
            cols = [frame[c].to_numpy() for c in names]
        else:
            raise _param("frame", "from_frame takes a pandas or polars DataFrame of booleans "
                         f"or 0/1; got {type(frame).__name__}")
        n = len(frame)
        mats = []
        for name, v in zip(names, cols, strict=False):
            if v.dtype == bool:
                mats.append(v)
                continue
            if v.dtype.kind in "iuf":
                bad = ~np.isin(v, (0, 1))
                if bad.any():
                    row = int(np.flatnonzero(bad)[0])
                    e = _param("frame", f"column {name!r} must hold booleans or 0/1; row {row} "
                               f"holds {v[row]!r}")
                    e.column, e.row = str(name), row
                    raise e
                mats.append(v == 1)
                continue
            e = _param("frame", f"column {name!r} must hold booleans or 0/1; its dtype is "
                       f"{v.dtype}")
            e.column = str(name)
            raise e
        mat = np.column_stack(mats) if mats else np.zeros((n, 0), dtype=bool)
        rows, items = np.nonzero(mat)
        offsets, codes = _csr_from_pairs(rows, items, n)
        return cls.from_csr(offsets, codes, names)

    @classmethod
    def from_sparse(cls, matrix: Any, item_names: Sequence[Any] | None = None) -> Transactions:
        """From a scipy.sparse matrix (rows = transactions, columns = items); a stored non-zero
        entry means presence. Negative or NaN entries are refused."""
        import scipy.sparse as sp

        if not sp.issparse(matrix):
            raise _param("matrix", f"from_sparse takes a scipy.sparse matrix; got "
                         f"{type(matrix).__name__}")
        m = sp.csr_matrix(matrix, copy=True)
        if m.data.size:
            if np.isnan(m.data).any() if m.data.dtype.kind == "f" else False:
                raise DataError("the sparse matrix holds NaN entries; presence must be "
                                "non-negative")
            if (m.data < 0).any():
                r = int(np.searchsorted(m.indptr, np.flatnonzero(m.data < 0)[0], side="right") - 1)
                raise DataError(f"the sparse matrix holds a negative entry in row {r}; "
                                "presence must be non-negative")
        m.eliminate_zeros()
        m.sort_indices()
        names = list(range(m.shape[1])) if item_names is None else list(item_names)
        if len(names) != m.shape[1]:
            raise _param("item_names", f"item_names has {len(names)} names for "
                         f"{m.shape[1]} columns")
        return cls.from_csr(m.indptr.astype(np.int64), m.indices, names)

    @classmethod
    def from_log(cls, log: Any, *, activities: bool = True, directly_follows: bool = False,
                 case_attributes: Sequence[str] | None = None, resources: bool = False,
                 label: Any = None, label_name: str = "label", bins: int = 4,
                 bin_edges: dict[str, Sequence[float]] | None = None) -> Transactions:
        """One transaction per case of an event log, with the items you choose.

        Parameters
        ----------
        log : EventLog
        activities : bool, default=True
            An item per activity present in the case (its name, e.g. ``Inspect``).
        directly_follows : bool, default=False
            An item per directly-follows pair present (``Inspect->Repair``).

        Item codes follow this order: activities, directly-follows pairs, resources, case
        attributes, label.
        case_attributes : list of str, optional
            Case attributes as ``name=value`` items. Numeric and time attributes are binned by
            quantiles (``bins`` bins; ``name=[lo, hi)``) unless ``bin_edges[name]`` gives the
            edges. A missing value adds no item (counted in a DataQualityWarning).
        resources : bool, default=False
            An item per resource that worked on the case (``resource=Anna``).
        label : array-like, optional
            One value per case (e.g. ``slow`` / ``on time``, or booleans): an item
            ``label_name=value``, so that rules can target it with ``consequent=``.
        label_name : str, default="label"
        bins : int, default=4
        bin_edges : dict, optional

        Examples
        --------
        >>> import pandas as pd, tracemill as tm
        >>> frame = pd.DataFrame({"case": ["a", "a", "b"], "act": ["x", "y", "x"],
        ...                       "t": pd.to_datetime(["2025-01-01", "2025-01-02", "2025-01-01"])})
        >>> log = tm.EventLog.from_frame(frame, case="case", activity="act", timestamp="t")
        >>> tm.Transactions.from_log(log, directly_follows=True,
        ...                          label=[True, False], label_name="slow").to_lists()
        [['x', 'y', 'x->y', 'slow=True'], ['x', 'slow=False']]
        """
        n_cases = log.n_cases
        h = log.handle
        arr = log.arrays()
        case_of = arr["case"].astype(np.int64)
        act = arr["activity"].astype(np.int64)
        row_parts: list[np.ndarray] = []
        code_parts: list[np.ndarray] = []
        names: list[str] = []
        kinds: list[str] = []

        def add(rows: np.ndarray, local: np.ndarray, local_names: list[str], kind: str) -> None:
            row_parts.append(rows.astype(np.int64))
            code_parts.append(local.astype(np.int64) + len(names))
            names.extend(local_names)
            kinds.extend([kind] * len(local_names))

        if activities:
            add(case_of, act, [str(a) for a in log.activities], "activity")
        if directly_follows:
            same = case_of[1:] == case_of[:-1]
            n_act = len(log.activities)
            pair = act[:-1][same] * n_act + act[1:][same]
            uniq, inv = np.unique(pair, return_inverse=True)
            acts = log.activities
            add(case_of[1:][same], inv,
                [f"{acts[p // n_act]}->{acts[p % n_act]}" for p in uniq.tolist()],
                "directly-follows pair")
        if resources:
            t = h.resource()
            if t is None:
                raise _param("resources", "the log has no resource column")
            _name, _kind, values, valid, rnames = t
            keep = np.ones(len(values), bool) if valid is None else valid
            if _kind == "str":
                labels = [f"resource={r}" for r in rnames]
                codes = np.asarray(values, dtype=np.int64)
            else:
                uniq, codes = np.unique(np.asarray(values), return_inverse=True)
                labels = [f"resource={r}" for r in uniq.tolist()]
            add(case_of[keep], codes[keep], labels, "resource")
        if case_attributes:
            attrs = {t[0]: t for t in h.case_attrs()}
            edges = bin_edges or {}
            for a in case_attributes:
                if a not in attrs:
                    close = difflib.get_close_matches(a, list(attrs), n=1)
                    hint = f"; did you mean {close[0]!r}?" if close else \
                        f"; the case attributes are {sorted(attrs)}"
                    raise _param("case_attributes", f"unknown case attribute {a!r}{hint}")
                rows, local, lnames = _attribute_items(attrs[a], edges.get(a), bins)
                add(rows, local, lnames, "case attribute")
        if label is not None:
            lab = np.asarray(label, dtype=object)
            if lab.shape != (n_cases,):
                raise _param("label", f"label needs one value per case: got shape {lab.shape} "
                             f"for {n_cases} cases")
            ok = np.array([v is not None and v == v for v in lab.tolist()], dtype=bool)
            codes, uniq = _factorize(lab[ok].tolist())
            add(np.flatnonzero(ok), codes, [f"{label_name}={v}" for v in uniq], "label")
        if len(set(names)) != len(names):
            seen: dict[str, str] = {}
            for nm, k in zip(names, kinds, strict=False):
                if nm in seen:
                    raise DataError(f"the item name {nm!r} comes from both a {seen[nm]} and a "
                                    f"{k}; rename the activity or attribute value")
                seen[nm] = k
        rows = np.concatenate(row_parts) if row_parts else np.zeros(0, np.int64)
        codes = np.concatenate(code_parts) if code_parts else np.zeros(0, np.int64)
        offsets, items = _csr_from_pairs(rows, codes, n_cases)
        return cls.from_csr(offsets, items, names)

    # ------------------------------------------------------------------ properties
    @property
    def n_transactions(self) -> int:
        """Number of transactions (empty ones included)."""
        return int(self._h.n_transactions)

    @property
    def n_items(self) -> int:
        """Number of distinct items."""
        return len(self.item_names)

    @property
    def n_empty(self) -> int:
        """Number of empty transactions."""
        return int(self._h.n_empty)

    @property
    def handle(self) -> Any:
        """The native handle."""
        return self._h

    def __len__(self) -> int:
        return self.n_transactions

    def __repr__(self) -> str:
        return (f"Transactions(n_transactions={self.n_transactions}, n_items={self.n_items}, "
                f"n_empty={self.n_empty})")

    def arrays(self) -> dict[str, np.ndarray]:
        """``offsets`` (CSR, int64) and ``items`` (uint32 codes into :attr:`item_names`)."""
        off, items = self._h.arrays()
        return {"offsets": off, "items": items}

    def to_lists(self) -> list[list[Any]]:
        """The transactions as lists of item names (items in code order)."""
        off, items = self._h.arrays()
        names = self.item_names
        flat = [names[i] for i in items.tolist()]
        return [flat[off[k]:off[k + 1]] for k in range(len(off) - 1)]

    def item_support(self, kind: str = "pandas") -> Any:
        """Per item: ``item``, ``count`` and ``support`` (share of transactions)."""
        c = self._h.item_counts().astype(np.int64)
        names = np.empty(len(self.item_names), dtype=object)
        names[:] = self.item_names
        return make_frame({"item": Col(names), "count": Col(c),
                           "support": Col(c / max(self.n_transactions, 1))}, kind)

    def __getstate__(self) -> dict[str, Any]:
        a = self.arrays()
        return {"offsets": a["offsets"], "items": a["items"], "names": self.item_names}

    def __setstate__(self, state: dict[str, Any]) -> None:
        other = Transactions.from_csr(state["offsets"], state["items"], state["names"])
        self._h, self.item_names = other._h, other.item_names


def _counts(xs: list[Any]) -> dict[Any, int]:
    out: dict[Any, int] = {}
    for x in xs:
        out[x] = out.get(x, 0) + 1
    return out


def _bad_list(x: Any) -> list[Any]:
    raise _param("lists", f"each transaction must be a list of items, not a string ({x!r}); "
                 "wrap single items in a list")


def _fmt_edge(v: float, is_time: bool) -> str:
    if is_time:
        return str(np.datetime64(int(v), "ns").astype("datetime64[s]")).replace("T", " ")
    return f"{v:g}"


def _attribute_items(t: tuple, edges: Sequence[float] | None,
                     bins: int) -> tuple[np.ndarray, np.ndarray, list[str]]:
    name, kind, values, valid, dictionary = t
    values = np.asarray(values)
    ok = np.ones(len(values), bool) if valid is None else np.asarray(valid, bool).copy()
    if kind == "float":
        ok &= ~np.isnan(values)
    n_missing = int((~ok).sum())
    if n_missing:
        warnings.warn(f"case attribute {name!r} is missing for {n_missing} cases; those cases "
                      "get no item for it", DataQualityWarning, stacklevel=3)
    rows = np.flatnonzero(ok)
    v = values[ok]
    if kind == "str":
        return rows, v.astype(np.int64), [f"{name}={d}" for d in dictionary]
    if kind == "bool":
        return rows, v.astype(np.int64), [f"{name}=False", f"{name}=True"]
    is_time = kind == "time"
    x = v.astype(np.float64)
    if edges is None:
        if isinstance(bins, bool) or not isinstance(bins, Integral) or bins < 1:
            raise _param("bins", f"bins must be an int >= 1; got {bins!r}")
        if len(x) == 0:
            return rows, np.zeros(0, np.int64), []
        e = np.unique(np.quantile(x, np.linspace(0, 1, int(bins) + 1)))
        if len(e) == 1:
            e = np.array([e[0], e[0]])
    else:
        e = np.asarray(edges, dtype=np.float64)
        if e.ndim != 1 or len(e) < 2 or np.any(np.diff(e) <= 0) or np.isnan(e).any():
            raise _param("bin_edges", f"bin_edges[{name!r}] must be increasing with at least "
                         "two values")
        outside = (x < e[0]) | (x > e[-1])
        if outside.any():
            raise DataError(f"case attribute {name!r} has {int(outside.sum())} values outside "
                            f"bin_edges [{e[0]:g}, {e[-1]:g}]")
    idx = np.clip(np.searchsorted(e, x, side="right") - 1, 0, max(len(e) - 2, 0))
    labels = []
    for k in range(max(len(e) - 1, 1)):
        lo, hi = e[k], e[min(k + 1, len(e) - 1)]
        close = "]" if k == len(e) - 2 else ")"
        labels.append(f"{name}=[{_fmt_edge(lo, is_time)}, {_fmt_edge(hi, is_time)}{close}")
    return rows, idx.astype(np.int64), labels


# ---------------------------------------------------------------------- itemsets
def _tuples(names: Sequence[Any], offsets: np.ndarray, items: np.ndarray) -> np.ndarray:
    """An object array of tuples of names, one per CSR row (vectorised by length)."""
    n = len(offsets) - 1
    out = np.empty(n, dtype=object)
    if n == 0:
        return out
    nm = np.empty(len(names), dtype=object)
    nm[:] = list(names)
    lengths = np.diff(offsets)
    for L in np.unique(lengths).tolist():
        rows = np.flatnonzero(lengths == L)
        if L == 0:
            out[rows] = [()] * len(rows)
            continue
        idx = offsets[rows][:, None] + np.arange(L)[None, :]
        block = nm[items[idx]]
        out[rows] = list(map(tuple, block.tolist()))
    return out


class FrequentItemsets:
    """The result of :func:`frequent_itemsets`.

    Attributes
    ----------
    item_names : list
    n_transactions : int
    min_count : int
        The minimum support count used.
    target : str
    truncated : bool
        Whether the search stopped at ``max_itemsets`` (``on_limit='truncate'``).
    """

    def __init__(self, offsets: np.ndarray, items: np.ndarray, counts: np.ndarray,
                 item_names: list[Any], n_transactions: int, min_count: int, target: str,
                 truncated: bool) -> None:
        self._offsets, self._items, self._counts = offsets, items, counts
        self.item_names = item_names
        self.n_transactions = n_transactions
        self.min_count = min_count
        self.target = target
        self.truncated = truncated

    def __len__(self) -> int:
        return len(self._counts)

    def __repr__(self) -> str:
        return (f"FrequentItemsets(n_itemsets={len(self)}, n_transactions="
                f"{self.n_transactions}, min_count={self.min_count}, target={self.target!r}"
                f"{', truncated=True' if self.truncated else ''})")

    def arrays(self) -> dict[str, np.ndarray]:
        """``offsets`` (CSR), ``items`` (codes into :attr:`item_names`, ascending within an
        itemset) and ``counts``; itemsets in canonical order (length, then codes)."""
        return {"offsets": self._offsets, "items": self._items, "counts": self._counts}

    def to_frame(self, kind: str = "pandas") -> Any:
        """``itemset`` (tuple of item names), ``support``, ``count`` and ``length``, most
        frequent first (ties: shorter first, then by item code)."""
        check_kind(kind)
        order = np.argsort(-self._counts.astype(np.int64), kind="stable")
        sets = _tuples(self.item_names, self._offsets, self._items)[order]
        c = self._counts.astype(np.int64)[order]
        return make_frame({
            "itemset": Col(sets),
            "support": Col(c / max(self.n_transactions, 1)),
            "count": Col(c),
            "length": Col(np.diff(self._offsets)[order]),
        }, kind)

    def _repr_html_(self) -> str:
        return f"<pre>{self!r}</pre>" + self.to_frame().head(10).to_html(index=False)


def _min_support_args(min_support: Any) -> dict[str, Any]:
    if isinstance(min_support, bool) or not isinstance(min_support, Real):
        raise _param("min_support", "min_support must be a fraction in (0, 1] or a count "
                     f"(int >= 1); got {min_support!r}")
    if isinstance(min_support, Integral):
        if min_support < 1:
            raise _param("min_support", f"min_support as a count must be >= 1; got "
                         f"{min_support}")
        return {"min_count": int(min_support)}
    return {"min_fraction": float(min_support)}


def _check_choice(name: str, value: Any, choices: tuple[str, ...]) -> None:
    if value not in choices:
        raise _param(name, f"The {name!r} parameter must be one of {list(choices)}. Got "
                     f"{value!r} instead.")


def _check_int(name: str, value: Any, low: int, allow_none: bool = False) -> None:
    if value is None and allow_none:
        return
    if isinstance(value, bool) or not isinstance(value, Integral) or value < low:
        raise _param(name, f"The {name!r} parameter must be an int in the range [{low}, inf)"
                     f"{' or None' if allow_none else ''}. Got {value!r} instead.")


def frequent_itemsets(transactions: Transactions, min_support: float | int = 0.01, *,
                      max_len: int | None = None,
                      target: Literal["all", "closed", "maximal"] = "all",
                      algorithm: Literal["fpgrowth", "eclat", "apriori"] = "fpgrowth",
                      max_itemsets: int = 10_000_000,
                      on_limit: Literal["error", "truncate"] = "error",
                      progress: Progress = None) -> FrequentItemsets:
    """Frequent itemsets of a transaction database.

    Parameters
    ----------
    transactions : Transactions
    min_support : float or int, default=0.01
        A fraction of the transactions in (0, 1] (float) or a count (int, at most the number
        of transactions). An itemset is frequent when ``count / n >= min_support`` or
        ``count >= min_support``.
    max_len : int, optional
        Longest itemset to find.
    target : {'all', 'closed', 'maximal'}, default='all'
        Closed: no proper superset has the same count. Maximal: no proper superset is
        frequent. (Relative to ``max_len`` when it is set.)
    algorithm : {'fpgrowth', 'eclat', 'apriori'}, default='fpgrowth'
        All give the same itemsets. FP-Growth runs in parallel over conditional trees; Eclat
        uses diffsets; Apriori suits small inputs.
    max_itemsets : int, default=10_000_000
        Bound on the number of frequent itemsets searched, so that a too-low support cannot
        exhaust memory.
    on_limit : {'error', 'truncate'}, default='error'
        At the bound, raise :class:`~tracemill.LimitError` (saying how many were found and
        which parameter to raise) or return ``max_itemsets`` itemsets with ``truncated=True``.
    progress : callable, optional
        Called about every 100 ms with ``(done, total)`` top-level items. Ctrl-C stops the
        search.

    Returns
    -------
    FrequentItemsets

    Notes
    -----
    Itemsets describe co-occurrence in past data, not causes. Event logs often hold personal
    data: handle the results under the rules that apply to you.

    References
    ----------
    Han, Pei & Yin (2000), Mining frequent patterns without candidate generation, SIGMOD.
    Zaki (2000), Scalable algorithms for association mining, IEEE TKDE; Zaki & Gouda (2003),
    Fast vertical mining using diffsets, KDD. Agrawal & Srikant (1994), Fast algorithms for
    mining association rules, VLDB.

    Examples
    --------
    Han, Kamber & Pei's nine transactions at a minimum count of 2:

    >>> import tracemill as tm
    >>> t = tm.Transactions.from_lists([
    ...     ["I1", "I2", "I5"], ["I2", "I4"], ["I2", "I3"], ["I1", "I2", "I4"], ["I1", "I3"],
    ...     ["I2", "I3"], ["I1", "I3"], ["I1", "I2", "I3", "I5"], ["I1", "I2", "I3"]])
    >>> fi = tm.frequent_itemsets(t, 2)
    >>> len(fi), len(tm.frequent_itemsets(t, 2, target="closed"))
    (13, 9)
    >>> fi.to_frame().head(3)
      itemset   support  count  length
    0   (I2,)  0.777778      7       1
    1   (I1,)  0.666667      6       1
    2   (I3,)  0.666667      6       1
    """
    if not isinstance(transactions, Transactions):
        raise _param("transactions", "frequent_itemsets takes a tracemill.Transactions; build "
                     "one with Transactions.from_lists / from_frame / from_sparse / from_log")
    args = _min_support_args(min_support)
    _check_int("max_len", max_len, 1, allow_none=True)
    _check_choice("target", target, ("all", "closed", "maximal"))
    _check_choice("algorithm", algorithm, ("fpgrowth", "eclat", "apriori"))
    _check_int("max_itemsets", max_itemsets, 1)
    _check_choice("on_limit", on_limit, ("error", "truncate"))
    off, items, counts, truncated, min_count = _core.mine_itemsets(
        transactions.handle, max_len=max_len, target=target, algorithm=algorithm,
        max_itemsets=int(max_itemsets), truncate=on_limit == "truncate", progress=progress,
        **args)
    return FrequentItemsets(off, items, counts, transactions.item_names,
                            transactions.n_transactions, int(min_count), target,
                            bool(truncated))


# ---------------------------------------------------------------------- rules
class AssociationRules:
    """The result of :func:`association_rules`: rules ``X -> Y`` with counts and measures.

    Attributes
    ----------
    item_names : list
    n_transactions : int
    sort_by : str
    """

    def __init__(self, parts: tuple[np.ndarray, ...], item_names: list[Any],
                 n_transactions: int, sort_by: str) -> None:
        ao, ai, co, ci, nx, ny, nxy = parts
        self.item_names = item_names
        self.n_transactions = n_transactions
        self.sort_by = sort_by
        cols = dict(_core.rule_measures(int(n_transactions), nx, ny, nxy))
        key = cols[sort_by]
        # Descending by the measure, ties by count then the (deterministic) mining order.
        order = np.lexsort((np.arange(len(nxy)), -nxy.astype(np.float64), -key))
        self._ante = _tuples(item_names, ao, ai)[order]
        self._cons = _tuples(item_names, co, ci)[order]
        self._counts = {"n_x": nx.astype(np.int64)[order], "n_y": ny.astype(np.int64)[order],
                        "n_xy": nxy.astype(np.int64)[order]}
        self._measures = {k: v[order] for k, v in cols.items()}

    def __len__(self) -> int:
        return len(self._ante)

    def __repr__(self) -> str:
        return (f"AssociationRules(n_rules={len(self)}, n_transactions={self.n_transactions}, "
                f"sort_by={self.sort_by!r})")

    def to_frame(self, kind: str = "pandas") -> Any:
        """``antecedent``, ``consequent`` (tuples of item names), the counts ``n_x``, ``n_y``,
        ``n_xy`` (transactions with X, with Y, with both) and ``n``, then every measure:
        support, confidence, lift, leverage, conviction, jaccard, cosine, kulczynski,
        all_confidence, max_confidence, imbalance_ratio, certainty, zhang."""
        check_kind(kind)
        cols: dict[str, Col] = {"antecedent": Col(self._ante), "consequent": Col(self._cons)}
        for k, v in self._counts.items():
            cols[k] = Col(v)
        cols["n"] = Col(np.full(len(self), self.n_transactions, dtype=np.int64))
        for k in MEASURES:
            cols[k] = Col(self._measures[k])
        return make_frame(cols, kind)

    def describe(self, n: int = 10) -> str:
        """The top ``n`` rules (in ``sort_by`` order) as sentences a person can read."""
        if len(self) == 0:
            return "No rule passes the filters."
        lines = []
        tot = self.n_transactions
        for r in range(min(n, len(self))):
            a = ", ".join(map(str, self._ante[r]))
            c = ", ".join(map(str, self._cons[r]))
            nx, ny, nxy = (int(self._counts[k][r]) for k in ("n_x", "n_y", "n_xy"))
            m = self._measures
            lines.append(
                f"{r + 1}. {{{a}}} -> {{{c}}}: of the {nx:,} with {{{a}}}, {nxy:,} "
                f"({m['confidence'][r]:.0%}) also have {{{c}}}, against {ny / tot:.0%} of all "
                f"{tot:,}; lift {m['lift'][r]:.2f}, leverage {m['leverage'][r]:+.3f}, "
                f"kulczynski {m['kulczynski'][r]:.2f}")
        lines.append("(Association in past data, not cause.)")
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        return f"<pre>{self!r}\n{self.describe(5)}</pre>"


def association_rules(itemsets: FrequentItemsets, *, min_confidence: float = 0.5,
                      min_lift: float | None = None,
                      consequent: Sequence[Any] | Any | None = None,
                      sort_by: str = "lift", max_rules: int = 10_000_000,
                      progress: Progress = None) -> AssociationRules:
    """All rules ``X -> Y`` from frequent itemsets, filtered and ranked.

    Every frequent itemset ``Z`` with two or more items gives a rule for every split into a
    non-empty antecedent ``X`` and consequent ``Y = Z - X``.

    Parameters
    ----------
    itemsets : FrequentItemsets
        Every frequent itemset (``target='all'``, not truncated).
    min_confidence : float, default=0.5
        Keep rules with ``n_xy / n_x >= min_confidence``.
    min_lift : float, optional
        Keep rules with lift at least this.
    consequent : item or list of items, optional
        Keep only rules whose consequent is exactly these items (e.g. ``"slow=True"``).
    sort_by : str, default='lift'
        Any measure column; rules are sorted by it, descending.
    max_rules : int, default=10_000_000
        Bound on the number of rules.
    progress : callable, optional

    Returns
    -------
    AssociationRules

    Notes
    -----
    The counts ``n_x``, ``n_y``, ``n_xy`` and ``n`` are in the table so that every measure can
    be checked by hand. A rule shows association in past data, not cause; a high lift on few
    transactions is fragile, so look at ``n_xy`` too.

    Examples
    --------
    Tan, Steinbach & Kumar's market baskets:

    >>> import tracemill as tm
    >>> t = tm.Transactions.from_lists([
    ...     ["Bread", "Milk"], ["Bread", "Diapers", "Beer", "Eggs"],
    ...     ["Milk", "Diapers", "Beer", "Cola"], ["Bread", "Milk", "Diapers", "Beer"],
    ...     ["Bread", "Milk", "Diapers", "Cola"]])
    >>> rules = tm.association_rules(tm.frequent_itemsets(t, 2), consequent="Beer")
    >>> r = rules.to_frame().set_index("antecedent").loc[[("Diapers", "Milk")]]
    >>> r[["support", "confidence", "lift"]].round(3).to_numpy().tolist()
    [[0.4, 0.667, 1.111]]
    """
    if not isinstance(itemsets, FrequentItemsets):
        raise _param("itemsets", "association_rules takes the result of frequent_itemsets")
    if isinstance(min_confidence, bool) or not isinstance(min_confidence, Real) or \
            not 0 <= min_confidence <= 1:
        raise _param("min_confidence", "The 'min_confidence' parameter must be a float in the "
                     f"range [0, 1]. Got {min_confidence!r} instead.")
    if min_lift is not None and (not isinstance(min_lift, Real) or not min_lift >= 0):
        raise _param("min_lift", "The 'min_lift' parameter must be a float >= 0 or None. Got "
                     f"{min_lift!r} instead.")
    _check_choice("sort_by", sort_by, MEASURES)
    _check_int("max_rules", max_rules, 1)
    if itemsets.target != "all" or itemsets.truncated:
        raise DataError("association rules need every frequent itemset; these are "
                        f"{'truncated' if itemsets.truncated else itemsets.target + ' only'}: "
                        "mine again with target='all' (and a larger max_itemsets)")
    cons_codes = None
    if consequent is not None:
        wanted = list(consequent) if isinstance(consequent, (list, tuple, set, frozenset)) \
            else [consequent]
        if not wanted:
            raise _param("consequent", "the consequent filter is empty")
        pos = {v: i for i, v in enumerate(itemsets.item_names)}
        missing = [v for v in wanted if v not in pos]
        if missing:
            close = difflib.get_close_matches(str(missing[0]), [str(x) for x in pos], n=3)
            hint = f"; close names: {close}" if close else ""
            raise _param("consequent", f"unknown item(s) in consequent: {missing}{hint}")
        cons_codes = [pos[v] for v in wanted]
    a = itemsets.arrays()
    parts = _core.mine_rules(a["offsets"], a["items"], a["counts"], itemsets.n_transactions,
                             True, min_confidence=float(min_confidence),
                             min_lift=None if min_lift is None else float(min_lift),
                             consequent=cons_codes, max_rules=int(max_rules),
                             progress=progress)
    return AssociationRules(parts, itemsets.item_names, itemsets.n_transactions, sort_by)


__all__ = ["AssociationRules", "FrequentItemsets", "Transactions", "association_rules",
           "frequent_itemsets"]


# ---------------------------------------------------------------------- demo
def demo_section(log: Any, truth: Any, *, top: int = 5) -> str:
    """The demo's rules section: which activities, attribute values and planted segments go
    with slow cases (slowest 10 % by duration), which orderings of steps recur among slow
    cases, and what happens within an hour of what.

    Needs only the log and ``truth.segment`` / ``truth.segment_names`` (and, if present,
    ``truth.deviation`` / ``truth.deviation_names``)."""
    from .sequences import SequentialPatterns, frequent_episodes

    ct = log.case_table()
    dur = ct["duration"].to_numpy().astype("timedelta64[ns]").astype(np.int64)
    slow = dur >= np.quantile(dur, 0.9)
    seg = np.asarray(truth.segment)
    seg_names = list(truth.segment_names)
    items_label = np.where(slow, "slow", "not slow")
    attrs = [t[0] for t in log.handle.case_attrs() if t[1] in ("str", "bool")][:4]
    t = Transactions.from_log(log, activities=True, case_attributes=attrs or None,
                              label=items_label, label_name="duration")
    # Add the planted segment as an item so the rules can be checked against the truth.
    off, items = t.arrays()["offsets"], t.arrays()["items"]
    n_items = t.n_items
    seg_items = n_items + seg.astype(np.int64)
    new_items = np.insert(items.astype(np.int64), off[1:], seg_items)
    new_off = off + np.arange(len(off))
    names = list(t.item_names) + [f"segment={s}" for s in seg_names]
    t = Transactions.from_csr(new_off, new_items, names)
    parts = []
    fi = frequent_itemsets(t, 0.02, max_len=4)
    parts.append(f"{len(fi):,} frequent itemsets at 2 % support over {t.n_transactions:,} "
                 f"cases and {t.n_items} items (activities, {len(attrs)} case attributes, "
                 "the planted segment, slow / not slow).")
    r = association_rules(fi, min_confidence=0.0, min_lift=1.0, consequent="duration=slow",
                          sort_by="lift")
    parts.append("\nWhat goes with slow cases (slowest 10 %), by lift:")
    parts.append(r.describe(top))
    seg_rules = association_rules(fi, min_confidence=0.6, sort_by="lift")
    fr = seg_rules.to_frame()
    fr = fr[fr["consequent"].map(lambda c: len(c) == 1 and str(c[0]).startswith("segment="))]
    parts.append("\nRules that point to a planted segment (confidence >= 0.6):")
    if len(fr):
        for row in fr.head(top).itertuples():
            parts.append(f"  {{{', '.join(map(str, row.antecedent))}}} -> {row.consequent[0]}: "
                         f"confidence {row.confidence:.0%}, lift {row.lift:.2f} "
                         f"(n_xy {row.n_xy:,} of n_x {row.n_x:,})")
    else:
        parts.append("  none at this support")
    slow_log = log.select_cases(slow)
    sp = SequentialPatterns(min_support=0.3, max_len=4, return_cases=False).fit(slow_log)
    p = sp.patterns_
    p = p[p["length"] >= 3].head(top)
    parts.append("\nOrderings of steps that recur among slow cases (other steps may come "
                 "between):")
    for row in p.itertuples():
        parts.append(f"  {' .. '.join(map(str, row.pattern))}: {row.support:.0%} of slow cases")
    # MINEPI counts: cases last days while steps are instants, so the share of one-hour
    # windows (WINEPI) holding any pair is small and hard to read; a count is not.
    ep = frequent_episodes(log, "1h", kind="serial", measure="minepi",
                           min_frequency=max(1, round(0.02 * log.n_cases)), max_size=2)
    e = ep.to_frame()
    e = e[e["size"] == 2].sort_values("minimal_occurrences", ascending=False,
                                      kind="stable").head(top)
    parts.append("\nWhat follows what within one hour (serial episodes, minimal occurrences):")
    for row in e.itertuples():
        parts.append(f"  {row.episode[0]} then {row.episode[1]}: "
                     f"{int(row.minimal_occurrences):,} times")
    parts.append("(Rules and patterns show association in past cases, not cause.)")
    return "\n".join(parts)
