"""Sequential patterns (PrefixSpan) and frequent episodes (WINEPI / MINEPI) over cases.

Which orderings of steps recur, even with other steps in between? :class:`SequentialPatterns`
mines them from the activity sequences of cases (or any sequences, including sequences of
itemsets), with optional gap and span constraints. What tends to happen within a short time
window of what? :func:`frequent_episodes` finds serial and parallel episodes inside sliding
time windows, per case or over each resource's stream of work.

Patterns describe regularities in past data, not causes; event logs often hold personal data.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Sequence
from numbers import Integral, Real
from typing import Any, Literal

import numpy as np

from . import _core
from ._output import Col, check_kind, make_frame
from .exceptions import NotFittedError
from .exceptions import param_error as _param
from .rules import _factorize, _min_support_args

Progress = Callable[[int, int], Any] | None



def _is_log(x: Any) -> bool:
    return type(x).__name__ == "EventLog" and hasattr(x, "handle")


def _duration_ns(value: Any, name: str, *, allow_zero: bool = True) -> int | None:
    """A duration (int ns, numpy/pandas timedelta, datetime.timedelta or text like '2h')."""
    if value is None:
        return None
    if isinstance(value, bool):
        raise _param(name, f"{name} must be a duration; got {value!r}")
    if isinstance(value, Integral):
        ns = int(value)
    elif isinstance(value, np.timedelta64):
        ns = int(value.astype("timedelta64[ns]").astype(np.int64))
    else:
        try:
            import pandas as pd

            ns = int(pd.Timedelta(value).value)
        except (ValueError, TypeError, ImportError) as e:
            raise _param(name, f"{name} must be a duration (int ns, timedelta or text such as "
                         f"'2h'); got {value!r}") from e
    if ns < 0 or (ns == 0 and not allow_zero):
        raise _param(name, f"{name} must be {'non-negative' if allow_zero else 'positive'}; "
                     f"got {value!r}")
    return ns


class SequentialPatterns:
    """Frequent sequential patterns by PrefixSpan (Pei et al. 2001).

    A pattern ``(a, b, c)`` is contained in a case when ``a``, ``b`` and ``c`` occur in this
    order, with any steps in between (unless a gap constraint says otherwise); its support is
    the number of cases containing it, each counted once.

    Parameters
    ----------
    min_support : float or int, default=0.05
        A fraction of the sequences in (0, 1] or a count.
    max_len : int, optional
        Longest pattern, in items.
    max_gap_events : int, optional
        Consecutive matched events at most this many positions apart (1 = directly follows).
    max_gap_time : duration, optional
        Consecutive matched events at most this far apart in time.
    min_span, max_span : duration, optional
        Time from the first to the last matched event.
    closed : bool, default=False
        Only closed patterns (no super-pattern with the same support); not with constraints.
    return_cases : bool, default=True
        Keep the cases that contain each pattern (``cases`` column; memory grows with the sum
        of the supports).
    max_patterns : int, default=10_000_000
        Bound on the number of patterns; above it a LimitError says which parameter to raise.
    progress : callable, optional
        Called with ``(done, total)`` top-level items about every 100 ms.

    Attributes
    ----------
    patterns_ : pandas.DataFrame
        ``pattern`` (tuple of activities, or of tuples of items for itemset sequences),
        ``support`` (share), ``count``, ``length`` and ``cases`` (case ids), most frequent
        first.
    n_sequences_ : int
    min_count_ : int
    item_names_ : list

    Notes
    -----
    Patterns show what recurs in past cases, not why. Event logs often hold personal data.

    References
    ----------
    Pei, Han, Mortazavi-Asl, Pinto, Chen, Dayal & Hsu (2001), PrefixSpan: mining sequential
    patterns efficiently by prefix-projected pattern growth, ICDE, 215-224.

    Examples
    --------
    >>> import tracemill as tm
    >>> sp = tm.SequentialPatterns(min_support=2).fit(
    ...     [["a", "b", "c"], ["a", "c"], ["b", "a", "c"]])
    >>> sp.patterns_[["pattern", "count"]].head(4)
      pattern  count
    0    (a,)      3
    1    (c,)      3
    2  (a, c)      3
    3    (b,)      2
    """

    def __init__(self, min_support: float | int = 0.05, *, max_len: int | None = None,
                 max_gap_events: int | None = None, max_gap_time: Any = None,
                 min_span: Any = None, max_span: Any = None, closed: bool = False,
                 return_cases: bool = True, max_patterns: int = 10_000_000,
                 progress: Progress = None) -> None:
        self.min_support = min_support
        self.max_len = max_len
        self.max_gap_events = max_gap_events
        self.max_gap_time = max_gap_time
        self.min_span = min_span
        self.max_span = max_span
        self.closed = closed
        self.return_cases = return_cases
        self.max_patterns = max_patterns
        self.progress = progress

    def get_params(self, deep: bool = True) -> dict[str, Any]:
        """The constructor parameters."""
        import inspect

        names = [p for p in inspect.signature(type(self).__init__).parameters if p != "self"]
        return {n: getattr(self, n) for n in names}

    def set_params(self, **params: Any) -> SequentialPatterns:
        """Set constructor parameters."""
        valid = self.get_params()
        for k, v in params.items():
            if k not in valid:
                raise _param(k, f"invalid parameter {k!r} for SequentialPatterns")
            setattr(self, k, v)
        return self

    def __repr__(self) -> str:
        changed = {k: v for k, v in self.get_params().items()
                   if v != type(self)().get_params()[k]}
        return f"SequentialPatterns({', '.join(f'{k}={v!r}' for k, v in changed.items())})"

    def _validate(self) -> dict[str, Any]:
        args = _min_support_args(self.min_support)
        for name in ("max_len", "max_gap_events"):
            v = getattr(self, name)
            if v is not None and (isinstance(v, bool) or not isinstance(v, Integral) or v < 1):
                raise _param(name, f"The {name!r} parameter of SequentialPatterns must be an "
                             f"int in the range [1, inf) or None. Got {v!r} instead.")
        v = self.max_patterns
        if isinstance(v, bool) or not isinstance(v, Integral) or v < 1:
            raise _param("max_patterns", "The 'max_patterns' parameter of SequentialPatterns "
                         f"must be an int in the range [1, inf). Got {v!r} instead.")
        for name in ("closed", "return_cases"):
            if not isinstance(getattr(self, name), bool):
                raise _param(name, f"The {name!r} parameter must be a bool.")
        args.update(max_len=self.max_len, max_gap_events=self.max_gap_events,
                    max_gap_time=_duration_ns(self.max_gap_time, "max_gap_time"),
                    min_span=_duration_ns(self.min_span, "min_span"),
                    max_span=_duration_ns(self.max_span, "max_span"),
                    closed=self.closed, return_cases=self.return_cases,
                    max_patterns=int(self.max_patterns), progress=self.progress)
        return args

    def fit(self, X: Any, y: Any = None, *, times: Sequence[Sequence[Any]] | None = None
            ) -> SequentialPatterns:
        """Mine the patterns of ``X``: an EventLog (one sequence per case, with its times), or
        a list of sequences whose elements are items or, for itemset sequences, lists/sets/
        tuples of items. ``times`` (plain sequences only) gives one int per element."""
        args = self._validate()
        if _is_log(X):
            arr = X.arrays()
            seq_off = arr["offsets"].astype(np.int64)
            items = arr["activity"].astype(np.uint32)
            tms = arr["time"].astype(np.int64)
            names: list[Any] = list(X.activities)
            elem_off = None
            self.case_ids_ = X.case_ids
        else:
            seqs = [list(s) for s in X]
            nested = any(isinstance(e, (list, tuple, set, frozenset)) for s in seqs for e in s)
            if nested:
                elems = [list(e) if isinstance(e, (list, tuple, set, frozenset)) else [e]
                         for s in seqs for e in s]
                flat = list(itertools.chain.from_iterable(elems))
                codes, names = _factorize(flat)
                elem_off = np.zeros(len(elems) + 1, dtype=np.int64)
                np.cumsum([len(e) for e in elems], out=elem_off[1:])
            else:
                flat = list(itertools.chain.from_iterable(seqs))
                codes, names = _factorize(flat)
                elem_off = None
            items = codes.astype(np.uint32)
            seq_off = np.zeros(len(seqs) + 1, dtype=np.int64)
            np.cumsum([len(s) for s in seqs], out=seq_off[1:])
            tms = None
            if times is not None:
                tl = [list(t) for t in times]
                if len(tl) != len(seqs) or any(
                        len(a) != len(b) for a, b in zip(tl, seqs, strict=True)):
                    raise _param("times", "times needs one value per element of each sequence")
                tms = np.asarray(list(itertools.chain.from_iterable(tl)), dtype=np.int64)
            self.case_ids_ = np.arange(len(seqs))
        off, it, new_el, sup, coff, cases, min_count = _core.mine_sequences(
            seq_off, elem_off, items, len(names), times=tms, **args)
        self.item_names_ = names
        self.n_sequences_ = len(seq_off) - 1
        self.min_count_ = int(min_count)
        self._arrays = {"offsets": off, "items": it, "new_element": new_el, "support": sup,
                        "case_offsets": coff, "cases": cases}
        self.patterns_ = self.to_frame()
        return self

    def _check(self) -> None:
        if not hasattr(self, "_arrays"):
            raise NotFittedError("this SequentialPatterns is not fitted yet; call fit first")

    def to_frame(self, kind: str = "pandas") -> Any:
        """The patterns as a dataframe (see ``patterns_``)."""
        self._check()
        check_kind(kind)
        a = self._arrays
        off, it, new_el, sup = a["offsets"], a["items"], a["new_element"], a["support"]
        n = len(sup)
        names = self.item_names_
        itemset_seqs = bool(n) and not bool(new_el.all())
        pats = np.empty(n, dtype=object)
        if itemset_seqs:
            for i in range(n):
                els: list[list[Any]] = []
                for k in range(off[i], off[i + 1]):
                    if new_el[k]:
                        els.append([])
                    els[-1].append(names[it[k]])
                pats[i] = tuple(tuple(e) for e in els)
        else:
            from .rules import _tuples

            pats = _tuples(names, off, it)
        order = np.argsort(-sup.astype(np.int64), kind="stable")
        cols: dict[str, Col] = {
            "pattern": Col(pats[order]),
            "support": Col(sup[order] / max(self.n_sequences_, 1)),
            "count": Col(sup.astype(np.int64)[order]),
            "length": Col(np.diff(off)[order]),
        }
        if self.return_cases and len(a["case_offsets"]) == n + 1:
            co, cs = a["case_offsets"], a["cases"]
            ids = self.case_ids_
            c = np.empty(n, dtype=object)
            c[:] = [ids[cs[co[i]:co[i + 1]]] for i in order.tolist()]
            cols["cases"] = Col(c)
        return make_frame(cols, kind)


def frequent_sequences(X: Any, min_support: float | int = 0.05, **params: Any) -> Any:
    """Shortcut: ``SequentialPatterns(min_support, **params).fit(X).patterns_``.

    >>> import tracemill as tm
    >>> len(tm.frequent_sequences([["a", "b"], ["a", "b"], ["b"]], 2))
    3
    """
    return SequentialPatterns(min_support, **params).fit(X).patterns_


class Episodes:
    """The result of :func:`frequent_episodes`.

    Attributes
    ----------
    kind : str
    measure : str
    window : int
        Window width in time units (ns for event logs).
    n_windows : float
        Total number of windows over all streams.
    type_names : list
    """

    def __init__(self, parts: tuple, type_names: list[Any], kind: str, measure: str,
                 window: int) -> None:
        off, types, freq, windows, mos, n_windows = parts
        self._off, self._types = off, types
        self._freq, self._windows, self._mos = freq, windows, mos
        self.n_windows = float(n_windows)
        self.type_names = type_names
        self.kind = kind
        self.measure = measure
        self.window = window

    def __len__(self) -> int:
        return len(self._freq)

    def __repr__(self) -> str:
        return (f"Episodes(n_episodes={len(self)}, kind={self.kind!r}, measure={self.measure!r}"
                f", window={self.window})")

    def _episodes(self) -> np.ndarray:
        from .rules import _tuples

        return _tuples(self.type_names, self._off, self._types)

    def to_frame(self, kind: str = "pandas") -> Any:
        """``episode`` (tuple of event types; ordered for serial episodes, sorted for
        parallel ones), ``size``, ``frequency`` (WINEPI share of windows), ``windows`` (their
        number) and ``minimal_occurrences`` (MINEPI count)."""
        check_kind(kind)
        key = self._freq if self.measure == "winepi" else self._mos.astype(np.float64)
        order = np.argsort(-key, kind="stable")
        return make_frame({
            "episode": Col(self._episodes()[order]),
            "size": Col(np.diff(self._off)[order]),
            "frequency": Col(self._freq[order]),
            "windows": Col(self._windows[order]),
            "minimal_occurrences": Col(self._mos.astype(np.int64)[order]),
        }, kind)

    def rules(self, min_confidence: float = 0.5, kind: str = "pandas") -> Any:
        """Episode rules ``antecedent => episode`` (the antecedent a sub-episode) with
        ``confidence = freq(episode) / freq(antecedent)`` under the chosen measure."""
        if isinstance(min_confidence, bool) or not isinstance(min_confidence, Real) or \
                not 0 <= min_confidence <= 1:
            raise _param("min_confidence", "The 'min_confidence' parameter must be a float in "
                         f"the range [0, 1]. Got {min_confidence!r} instead.")
        a, b, c = _core.mine_episode_rules(self._off, self._types, self._windows, self._mos,
                                           self.measure, float(min_confidence))
        eps = self._episodes()
        order = np.lexsort((b, a, -c))
        return make_frame({
            "antecedent": Col(eps[a[order]] if len(a) else np.empty(0, object)),
            "episode": Col(eps[b[order]] if len(b) else np.empty(0, object)),
            "confidence": Col(c[order]),
        }, kind)


def _streams_from_log(log: Any, by: str) -> tuple[np.ndarray, np.ndarray, np.ndarray, list]:
    arr = log.arrays()
    if by == "case":
        return (arr["offsets"].astype(np.int64), arr["activity"].astype(np.uint32),
                arr["time"].astype(np.int64), list(log.activities))
    t = log.handle.resource()
    if t is None:
        raise _param("by", "by='resource' needs a log with a resource column")
    _name, _kind, values, valid, _names = t
    values = np.asarray(values)
    keep = np.ones(len(values), bool) if valid is None else np.asarray(valid, bool)
    if _kind != "str":
        _u, values = np.unique(values, return_inverse=True)
    res = values[keep].astype(np.int64)
    act = arr["activity"][keep]
    tm_ = arr["time"][keep]
    order = np.lexsort((np.arange(len(res)), tm_, res))
    res, act, tm_ = res[order], act[order], tm_[order]
    n_res = int(res.max()) + 1 if len(res) else 0
    offsets = np.zeros(n_res + 1, dtype=np.int64)
    np.cumsum(np.bincount(res, minlength=n_res), out=offsets[1:])
    return offsets, act.astype(np.uint32), tm_.astype(np.int64), list(log.activities)


def frequent_episodes(data: Any, window: Any, *, kind: Literal["serial", "parallel"] = "serial",
                      measure: Literal["winepi", "minepi"] = "winepi",
                      min_frequency: float = 0.1, max_size: int = 4,
                      by: Literal["case", "resource"] = "case",
                      max_episodes: int = 1_000_000, progress: Progress = None) -> Episodes:
    """Frequent serial or parallel episodes within a sliding time window.

    Parameters
    ----------
    data : EventLog or list of streams
        A log (one stream per case, or per resource with ``by='resource'``: the resource's
        events of all cases in time order; events without a resource are left out), or a
        list of streams, each a list of ``(event_type, time)`` pairs with int times.
    window : duration
        Window width (> 0): a duration for logs ('30min', a timedelta, or int ns), an int for
        plain streams.
    kind : {'serial', 'parallel'}, default='serial'
        Serial episodes keep the order of the events; parallel ones do not.
    measure : {'winepi', 'minepi'}, default='winepi'
        WINEPI: frequency = share of windows containing the episode; ``min_frequency`` is a
        fraction in (0, 1]. MINEPI: number of minimal occurrences no wider than the window;
        ``min_frequency`` is a count >= 1.
    min_frequency : float, default=0.1
    max_size : int, default=4
        Largest episode, in events.
    by : {'case', 'resource'}, default='case'
    max_episodes : int, default=1_000_000
    progress : callable, optional

    Returns
    -------
    Episodes

    Notes
    -----
    Windows of a stream run from ``first - window + 1`` to ``last``, in integer time units (ns
    for logs), as in the paper. Episodes show what happens close together in time, not why.

    References
    ----------
    Mannila, Toivonen & Verkamo (1997), Discovery of frequent episodes in event sequences,
    Data Mining and Knowledge Discovery 1:259-289.

    Examples
    --------
    >>> import tracemill as tm
    >>> ep = tm.frequent_episodes([[("A", 1), ("B", 2), ("A", 4), ("C", 5), ("B", 6)]],
    ...                           window=3, min_frequency=0.3)
    >>> ep.to_frame()[["episode", "frequency", "windows"]]
      episode  frequency  windows
    0    (A,)      0.750      6.0
    1    (B,)      0.750      6.0
    2    (C,)      0.375      3.0
    3  (A, B)      0.375      3.0
    >>> ep.rules(0.5)
      antecedent episode  confidence
    0       (A,)  (A, B)         0.5
    1       (B,)  (A, B)         0.5
    """
    if kind not in ("serial", "parallel"):
        raise _param("kind", f"The 'kind' parameter must be 'serial' or 'parallel'. Got "
                     f"{kind!r} instead.")
    if measure not in ("winepi", "minepi"):
        raise _param("measure", f"The 'measure' parameter must be 'winepi' or 'minepi'. Got "
                     f"{measure!r} instead.")
    if by not in ("case", "resource"):
        raise _param("by", f"The 'by' parameter must be 'case' or 'resource'. Got {by!r} "
                     "instead.")
    for name, v in (("max_size", max_size), ("max_episodes", max_episodes)):
        if isinstance(v, bool) or not isinstance(v, Integral) or v < 1:
            raise _param(name, f"The {name!r} parameter must be an int in the range [1, inf). "
                         f"Got {v!r} instead.")
    if isinstance(min_frequency, bool) or not isinstance(min_frequency, Real):
        raise _param("min_frequency", f"min_frequency must be a number; got {min_frequency!r}")
    if _is_log(data):
        win = _duration_ns(window, "window", allow_zero=True)
        offsets, types, times, names = _streams_from_log(data, by)
    else:
        if isinstance(window, bool) or not isinstance(window, Integral):
            raise _param("window", f"for plain streams the window is an int; got {window!r}")
        win = int(window)
        streams = [list(s) for s in data]
        flat = list(itertools.chain.from_iterable(streams))
        try:
            ev = [e for e, _ in flat]
            tm_ = np.asarray([t for _, t in flat], dtype=np.int64)
        except (TypeError, ValueError) as e:
            raise _param("data", "each stream must be a list of (event_type, int time) pairs"
                         ) from e
        codes, names = _factorize(ev)
        types = codes.astype(np.uint32)
        times = tm_
        offsets = np.zeros(len(streams) + 1, dtype=np.int64)
        np.cumsum([len(s) for s in streams], out=offsets[1:])
    if win is None or win <= 0:
        raise _param("window", f"the window must have a positive length; got {window!r}")
    parts = _core.mine_episodes(offsets, types, times, len(names), int(win), kind=kind,
                                measure=measure, min_frequency=float(min_frequency),
                                max_size=int(max_size), max_episodes=int(max_episodes),
                                progress=progress)
    return Episodes(parts, names, kind, measure, int(win))


__all__ = ["Episodes", "SequentialPatterns", "frequent_episodes", "frequent_sequences"]
