"""The :class:`EventLog`: a columnar, immutable event log backed by native kernels."""

from __future__ import annotations

import html
import os
import re
import warnings
from collections.abc import Callable, Sequence
from typing import Any, Literal

import numpy as np

from . import _core
from ._frames import _AWARE, prepare
from ._output import Col, check_kind, make_frame
from .exceptions import DataQualityWarning, SchemaError
from .exceptions import param_error as _param

WindowRule = Literal["contained", "intersecting", "started", "completed"]



def _to_ns(t: Any, name: str) -> int:
    """A timestamp-like value (str, datetime, numpy/pandas timestamp, int ns) as int ns UTC.
    Naive values are taken as UTC; aware ones are converted to UTC."""
    if isinstance(t, (bool, np.bool_)):
        raise _param(name, f"{name} must be a timestamp (text, datetime or int ns); got {t!r}")
    if isinstance(t, (int, np.integer)):
        return int(t)
    try:
        import pandas as pd
    except ImportError:  # pragma: no cover - pandas is optional
        pd = None
    try:
        if pd is not None:
            ts = pd.Timestamp(t)
            if ts is not pd.NaT:
                if ts.tzinfo is not None:
                    ts = ts.tz_convert("UTC").tz_localize(None)
                return int(ts.as_unit("ns").value)
        elif isinstance(t, str) and re.search(_AWARE, t) is None:  # pragma: no cover
            t = np.datetime64(t, "ns")
        if isinstance(t, np.datetime64) and not np.isnat(t):  # pragma: no cover
            return int(t.astype("datetime64[ns]").astype(np.int64))
    except (ValueError, TypeError, OverflowError) as e:
        raise _param(name, f"{name} must be a timestamp (text, datetime or int ns); got {t!r}: "
                     f"{e}") from e
    raise _param(name, f"{name} must be a timestamp (text, datetime or int ns); got {t!r}")


class EventLog:
    """An immutable, columnar event log.

    Events of a case are stored together, ordered by timestamp (ties keep input order).
    Activities, case ids, resources and text attributes are dictionary-encoded; timestamps are
    int64 nanoseconds in UTC. Derived views (variants, case statistics, directly-follows
    counts) are computed in parallel native code and cached.

    Build one with :meth:`from_frame` (pandas, polars or pyarrow), :meth:`from_xes` or
    :func:`tracemill.simulate`.

    Notes
    -----
    Event logs often hold personal data (customers, employees, patients). Handle them under the
    data-protection rules that apply to you; pseudonymise case and resource ids before sharing.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> frame = pd.DataFrame({
    ...     "order": ["r1", "r1", "r2", "r2", "r2"],
    ...     "step": ["Receive bike", "Hand over", "Receive bike", "Inspect", "Hand over"],
    ...     "at": pd.to_datetime(["2025-01-06 09:00", "2025-01-06 11:00", "2025-01-06 09:30",
    ...                           "2025-01-06 10:00", "2025-01-07 16:00"]),
    ... })
    >>> log = tm.EventLog.from_frame(frame, case="order", activity="step", timestamp="at")
    >>> log.n_cases, log.n_events
    (2, 5)
    >>> log.variants()["count"].tolist()
    [1, 1]
    """

    __slots__ = ("_case_originals", "_column_tz", "_h", "_source_info", "_tz")

    def __init__(self, handle: Any, case_originals: np.ndarray, tz: str | None,
                 column_tz: dict[str, str | None] | None = None) -> None:
        self._h = handle
        self._source_info: Any = None  # what the source file declared (see tracemill.xes)
        self._case_originals = case_originals
        self._tz = tz
        self._column_tz = dict(column_tz or {})

    def _derive(self, handle: Any) -> EventLog:
        return EventLog(handle, self._case_originals, self._tz, self._column_tz)

    # ------------------------------------------------------------------ construction
    @classmethod
    def from_frame(
        cls,
        frame: Any,
        *,
        case: str,
        activity: str,
        timestamp: str,
        resource: str | None = None,
        lifecycle: str | None = None,
        case_attributes: Sequence[str] | None = None,
        event_attributes: Sequence[str] | None = None,
        timestamp_format: str | None = None,
    ) -> EventLog:
        """Build a log from a pandas DataFrame, a polars DataFrame or a pyarrow Table.

        Parameters
        ----------
        frame : pandas.DataFrame, polars.DataFrame or pyarrow.Table
            One row per event.
        case, activity, timestamp : str
            Column names of the case id, the activity and the timestamp. Nulls are errors.
        resource, lifecycle : str, optional
            Columns of the resource and the lifecycle transition (e.g. ``start``/``complete``).
        case_attributes : list of str, optional
            Columns that hold one value per case (nulls are ignored; two different values in
            one case are an error).
        event_attributes : list of str, optional
            Further per-event columns, kept with their types.
        timestamp_format : str, optional
            ``strptime`` format for text timestamps; ISO 8601 is parsed without it.

        Returns
        -------
        EventLog

        Raises
        ------
        SchemaError
            Missing column (the message suggests the close name), null case id or activity,
            conflicting case attribute values.
        TimestampError
            Null or unparseable timestamps, or naive and aware timestamps mixed.

        Warns
        -----
        DataQualityWarning
            Duplicate events (kept) and rows out of time order within a case (sorted).

        Notes
        -----
        Naive timestamps are taken as UTC and given back naive by :meth:`to_frame`;
        aware ones are converted to UTC and given back in their zone.
        """
        prep = prepare(frame, case=case, activity=activity, timestamp=timestamp,
                       resource=resource, lifecycle=lifecycle,
                       case_attributes=list(case_attributes or []),
                       event_attributes=list(event_attributes or []),
                       timestamp_format=timestamp_format)
        handle, n_dup, n_reordered = _core.build_log(**prep.kwargs)
        _warn_report(n_dup, n_reordered)
        return cls(handle, prep.case_originals, prep.time_zone, prep.column_tz)

    @classmethod
    def from_xes(cls, source: str | os.PathLike[str] | Any) -> EventLog:
        """Read an IEEE 1849 XES file (plain or gzip) or file-like object.

        Nested attributes are flattened to dotted keys (``parent.child``; list items
        ``parent.0``, ``parent.1``, ...). Unknown elements are reported as warnings, traces
        without events are skipped with a warning; a DOCTYPE (entity definitions) is refused.
        """
        from .xes import read_xes

        return read_xes(source)

    def to_xes(self, path: str | os.PathLike[str]) -> None:
        """Write the log as an XES file (IEEE 1849-2016 compatible); gzip when the path ends
        in ``.gz``."""
        from .xes import write_xes

        write_xes(self, path)

    # ------------------------------------------------------------------ basic properties
    @property
    def n_cases(self) -> int:
        """Number of cases."""
        return int(self._h.n_cases)

    @property
    def n_events(self) -> int:
        """Number of events."""
        return int(self._h.n_events)

    @property
    def activities(self) -> list[str]:
        """The activity names (the dictionary; index = activity code)."""
        return list(self._h.activity_names)

    @property
    def case_ids(self) -> np.ndarray:
        """The case ids, one per case in log order."""
        keys = self._h.core_arrays()[1]
        return self._case_originals[keys]

    @property
    def handle(self) -> Any:
        """The native handle (for tracemill's own estimators)."""
        return self._h

    def arrays(self) -> dict[str, np.ndarray]:
        """The log's core columns as numpy arrays (no per-event Python objects).

        Returns ``offsets`` (CSR, ``n_cases + 1``), ``activity`` (codes), ``time`` (int64 ns
        UTC), ``case`` (case index of each event) and ``row`` (input row of each event).
        """
        offsets, _keys, act, time, row = self._h.core_arrays()
        return {"offsets": offsets, "activity": act, "time": time,
                "case": self._h.case_of_events(), "row": row}

    def __len__(self) -> int:
        return self.n_cases

    def __repr__(self) -> str:
        return (f"EventLog(n_cases={self.n_cases}, n_events={self.n_events}, "
                f"n_activities={len(self.activities)})")

    def _repr_html_(self) -> str:
        top = self.variants().head(5)
        rows = "".join(
            f"<tr><td>{r['count']}</td><td>{r['share']:.1%}</td>"
            f"<td>{html.escape(' → '.join(r['activities']))}</td></tr>"
            for _, r in top.iterrows())
        return (f"<b>EventLog</b>: {self.n_cases:,} cases, {self.n_events:,} events, "
                f"{len(self.activities)} activities<table><tr><th>cases</th><th>share</th>"
                f"<th>top variants</th></tr>{rows}</table>")

    def __getstate__(self) -> dict[str, Any]:
        from . import __version__

        # The frame is in log order; the activity dictionary (its order defines the activity
        # codes and may hold activities that a selected log lacks) and the input row of each
        # event are kept as well, so that the log comes back identical.
        return {"version": __version__, "frame": self.to_frame("pandas"),
                "spec": self._spec(), "activities": self.activities,
                "row": self._h.core_arrays()[4]}

    def __setstate__(self, state: dict[str, Any]) -> None:
        from . import __version__

        if state.get("version") != __version__:
            warnings.warn(f"unpickling an EventLog saved by tracemill {state.get('version')} "
                          f"with {__version__}", DataQualityWarning, stacklevel=2)
        spec = {"resource": None, "lifecycle": None, "case_attributes": [],
                "event_attributes": [], "timestamp_format": None, **state["spec"]}
        prep = prepare(state["frame"], **spec)
        names = state.get("activities")
        if names is not None:
            pos = {a: i for i, a in enumerate(names)}
            lut = np.array([pos[a] for a in prep.kwargs["activity_names"]], dtype=np.uint32)
            prep.kwargs["activity"] = lut[prep.kwargs["activity"]]
            prep.kwargs["activity_names"] = list(names)
        if state.get("row") is not None:
            prep.kwargs["row"] = np.ascontiguousarray(state["row"], dtype=np.uint64)
        handle, _n_dup, _n_reordered = _core.build_log(**prep.kwargs)
        other = EventLog(handle, prep.case_originals, prep.time_zone, prep.column_tz)
        for k in self.__slots__:
            object.__setattr__(self, k, getattr(other, k))

    def _spec(self) -> dict[str, Any]:
        spec: dict[str, Any] = {"case": "case", "activity": "activity", "timestamp": "timestamp"}
        if self._h.resource() is not None:
            spec["resource"] = "resource"
        if self._h.lifecycle() is not None:
            spec["lifecycle"] = "lifecycle"
        spec["event_attributes"] = [t[0] for t in self._h.event_attrs()]
        spec["case_attributes"] = [t[0] for t in self._h.case_attrs()]
        return spec

    # ------------------------------------------------------------------ conversion
    def to_frame(self, kind: str = "pandas") -> Any:
        """The events as a dataframe (``kind`` = 'pandas', 'polars' or 'arrow').

        Columns: ``case``, ``activity``, ``timestamp``, then ``resource`` and ``lifecycle``
        when present, event attributes, and case attributes repeated on each event. Rows are in
        log order (by case, then time).

        Notes
        -----
        Values come back as given; some types change. Times are nanoseconds, naive or in the
        column's zone (a fixed offset becomes ``+HH:MM``; polars takes only whole-hour offsets).
        In pandas, a float NaN was read as null and comes back as ``<NA>`` in a nullable
        ``Float64`` column; integer and boolean columns with nulls become ``Int64`` and
        ``boolean``; text becomes the default string dtype; integer case ids come back as
        ``int64``. In polars and Arrow, text is ``String``/``large_string``.
        """
        check_kind(kind)
        _offsets, keys, act, time, _row = self._h.core_arrays()
        case_of = self._h.case_of_events()
        cols: dict[str, Col] = {
            "case": Col(self._case_originals[keys][case_of]),
            "activity": Col(act, kind="text", names=self.activities),
            "timestamp": Col(time, kind="time", tz=self._tz),
        }
        for role in ("resource", "lifecycle"):
            t = getattr(self._h, role)()
            if t is not None:
                cols[role] = _col_of(t, None)
        for t in self._h.event_attrs():
            cols[t[0]] = _col_of(t, self._column_tz.get(t[0]))
        for t in self._h.case_attrs():
            c = _col_of(t, self._column_tz.get(t[0]))
            c.values = np.asarray(c.values)[case_of]
            if c.valid is not None:
                c.valid = c.valid[case_of]
            cols[t[0]] = c
        return make_frame(cols, kind)

    # ------------------------------------------------------------------ views
    def variants(self, kind: str = "pandas") -> Any:
        """Distinct activity sequences, most frequent first.

        Columns: ``variant`` (rank, 0 = most frequent), ``count`` (cases), ``share``,
        ``length`` and ``activities`` (tuple of names in pandas, a list of strings in polars
        and Arrow). Ties on count are ordered by first appearance. :meth:`variant_cases` gives
        the cases of a variant.
        """
        offsets, acts, counts, _cv, _co, _cases = self._h.variants()
        names = np.asarray(self.activities, dtype=object)
        seqs = np.empty(len(counts), dtype=object)
        seqs[:] = [tuple(names[acts[offsets[i]:offsets[i + 1]]]) for i in range(len(counts))]
        cols = {
            "variant": Col(np.arange(len(counts), dtype=np.int64)),
            "count": Col(counts.astype(np.int64)),
            "share": Col(counts / max(self.n_cases, 1)),
            "length": Col(np.diff(offsets)),
            "activities": Col(seqs, kind="seq"),
        }
        return make_frame(cols, kind)

    def variant_of_cases(self) -> np.ndarray:
        """The variant rank of each case (as in :meth:`variants`)."""
        return self._h.variants()[3]

    def variant_cases(self, variant: int) -> np.ndarray:
        """The case ids of variant ``variant`` (its rank in :meth:`variants`)."""
        _o, _a, counts, _cv, co, cases = self._h.variants()
        if not 0 <= variant < len(counts):
            raise _param("variant", f"variant must be in [0, {len(counts)}); got {variant}")
        idx = cases[co[variant]:co[variant + 1]]
        return self.case_ids[idx]

    def case_table(self, kind: str = "pandas") -> Any:
        """One row per case: ``case``, ``start``, ``end``, ``duration``, ``n_events``,
        ``variant``, ``repeats`` (events repeating an activity of the case) and the case
        attributes."""
        start, end, dur, length = self._h.case_stats()
        cols: dict[str, Col] = {
            "case": Col(self.case_ids),
            "start": Col(start, kind="time", tz=self._tz),
            "end": Col(end, kind="time", tz=self._tz),
            "duration": Col(dur, kind="duration"),
            "n_events": Col(length.astype(np.int64)),
            "variant": Col(self.variant_of_cases().astype(np.int64)),
            "repeats": Col(self._h.rework()[2].astype(np.int64)),
        }
        for t in self._h.case_attrs():
            cols[t[0]] = _col_of(t, self._column_tz.get(t[0]))
        return make_frame(cols, kind)

    def directly_follows(self, kind: str = "pandas") -> Any:
        """Directly-follows pairs within cases with the time between the two events.

        Columns: ``source``, ``target``, ``count`` (occurrences), ``cases`` (distinct cases),
        ``mean_gap``, ``median_gap`` and ``p90_gap`` (durations; percentiles interpolate
        linearly, as numpy and pandas do by default).
        """
        f, t, count, cases, mean, median, p90 = self._h.directly_follows()
        names = self.activities
        cols = {
            "source": Col(f, kind="text", names=names),
            "target": Col(t, kind="text", names=names),
            "count": Col(count.astype(np.int64)),
            "cases": Col(cases.astype(np.int64)),
            "mean_gap": Col(mean, kind="duration"),
            "median_gap": Col(median, kind="duration"),
            "p90_gap": Col(p90, kind="duration"),
        }
        return make_frame(cols, kind)

    def activity_stats(self, kind: str = "pandas") -> Any:
        """Per activity: ``events``, ``cases``, ``starts`` and ``ends`` (cases starting/ending
        with it), ``rework_cases`` and ``repeats`` (repetition within cases), the wait before it
        (``wait_mean``, ``wait_median``, ``wait_total``: time since the previous event of the
        case, or since the previous completion when lifecycle start/complete events exist) and,
        with lifecycle data, the service time from start to complete (``service_mean``,
        ``service_median``)."""
        ev, cs, st, en = self._h.activity_counts()
        rc, rep, _ = self._h.rework()
        _wc, wm, wmed, wt, _sc, sm, smed = self._h.activity_times()
        cols = {
            "activity": Col(np.asarray(self.activities, dtype=object)),
            "events": Col(ev.astype(np.int64)),
            "cases": Col(cs.astype(np.int64)),
            "starts": Col(st.astype(np.int64)),
            "ends": Col(en.astype(np.int64)),
            "rework_cases": Col(rc.astype(np.int64)),
            "repeats": Col(rep.astype(np.int64)),
            "wait_mean": Col(wm, kind="duration"),
            "wait_median": Col(wmed, kind="duration"),
            "wait_total": Col(wt, kind="duration"),
            "service_mean": Col(sm, kind="duration"),
            "service_median": Col(smed, kind="duration"),
        }
        return make_frame(cols, kind)

    # ------------------------------------------------------------------ selections
    def select_cases(self, which: Any) -> EventLog:
        """A new log with some cases, in log order.

        ``which`` is a boolean mask with one entry per case, or an array of case ids.
        """
        arr = np.asarray(which)
        if arr.dtype == bool:
            if arr.shape != (self.n_cases,):
                raise _param("which", f"the case mask has shape {arr.shape}; expected "
                             f"({self.n_cases},)")
            return self._derive(self._h.select_mask(np.ascontiguousarray(arr)))
        ids = self.case_ids
        pos = {v: i for i, v in enumerate(ids.tolist())}
        missing = [v for v in arr.tolist() if v not in pos]
        if missing:
            raise _param("which", f"unknown case ids: {missing[:5]}"
                         f"{' ...' if len(missing) > 5 else ''}")
        # np.unique sorts and drops repeated ids: each case is selected at most once.
        idx = np.unique(np.fromiter((pos[v] for v in arr.tolist()), dtype=np.int64,
                                    count=len(arr)))
        return self._derive(self._h.select_cases(idx))

    def keep_events(self, mask: Any) -> EventLog:
        """A new log with the events where ``mask`` (one entry per event, in log order as in
        :meth:`to_frame`) is true. Cases left without events are dropped, with a
        :class:`DataQualityWarning` saying how many."""
        m = np.asarray(mask)
        if m.dtype != bool or m.shape != (self.n_events,):
            raise _param("mask", f"the event mask must be boolean with shape ({self.n_events},); "
                         f"got {m.dtype} {m.shape}")
        handle, dropped = self._h.select_events(np.ascontiguousarray(m))
        if dropped:
            warnings.warn(f"{dropped} cases had no event left and were dropped",
                          DataQualityWarning, stacklevel=2)
        return self._derive(handle)

    def with_lifecycle(self, *transitions: str) -> EventLog:
        """Only the events whose lifecycle transition is one of ``transitions`` (e.g.
        ``"complete"``), so that variants and directly-follows relations count each activity
        instance once. Names compare case-insensitively; events with a null transition are
        dropped too."""
        t = self._h.lifecycle()
        if t is None:
            err = SchemaError("the log has no lifecycle column")
            err.column = "lifecycle"
            raise err
        _name, _kind, codes, valid, names = t
        # Transitions compare case-insensitively, as the service-time view does.
        lowered = np.asarray([str(n).lower() for n in names], dtype=object)
        wanted = np.isin(lowered, [t.lower() for t in transitions])
        keep = wanted[codes] if len(names) else np.zeros(len(codes), dtype=bool)
        if valid is not None:
            keep &= valid
        return self.keep_events(keep)

    def where(self, predicate: Callable[[Any], Any]) -> EventLog:
        """Cases for which ``predicate(case_table)`` is true (a boolean Series or array).

        >>> import pandas as pd, tracemill as tm
        >>> log, _ = tm.workshop(200, random_state=4)
        >>> slow = log.where(lambda t: t["duration"] > pd.Timedelta(days=5))
        >>> 0 < slow.n_cases < log.n_cases
        True
        """
        mask = np.asarray(predicate(self.case_table()), dtype=bool)
        return self.select_cases(mask)

    def within(self, start: Any, end: Any, rule: WindowRule = "contained") -> EventLog:
        """Cases related to the time window ``[start, end)`` by ``rule``: ``contained`` (all
        events inside), ``intersecting`` (some event inside), ``started`` or ``completed``
        (first or last event inside).

        ``start`` and ``end`` are text, datetimes or int ns since the epoch; aware values are
        converted to UTC and naive ones are read as UTC, as naive timestamps are when a log is
        built."""
        s, e = _to_ns(start, "start"), _to_ns(end, "end")
        if e <= s:
            raise _param("end", "the window end must be after its start")
        return self.select_cases(self._h.window_mask(s, e, rule))

    def top_variants(self, share: float) -> EventLog:
        """Cases of the most frequent variants that together cover at least ``share`` (0-1] of
        the cases."""
        return self.select_cases(self._h.top_variants_mask(float(share)))

    def with_length(self, min_events: int = 1, max_events: int | None = None) -> EventLog:
        """Cases with between ``min_events`` and ``max_events`` events (inclusive)."""
        mx = np.iinfo(np.int64).max if max_events is None else int(max_events)
        if min_events < 0 or mx < min_events:
            raise _param("min_events" if min_events < 0 else "max_events",
                         f"need 0 <= min_events <= max_events; got {min_events} and {max_events}")
        return self.select_cases(self._h.length_mask(int(min_events), mx))

    def sample(self, n: int | None = None, *, frac: float | None = None,
               random_state: int = 0) -> EventLog:
        """A uniform random sample of cases (``n`` cases or a fraction ``frac``), seeded."""
        if (n is None) == (frac is None):
            raise _param("n", "give exactly one of n and frac")
        if isinstance(random_state, bool) or not isinstance(random_state, (int, np.integer)) \
                or not 0 <= random_state < 2**64:
            raise _param("random_state", "random_state must be an int in [0, 2**64); got "
                         f"{random_state!r}")
        if frac is not None:
            if not 0 < frac <= 1:
                raise _param("frac", f"frac must be in (0, 1]; got {frac}")
            n = max(1, round(frac * self.n_cases))
        idx = self._h.sample_cases(int(n), int(random_state))
        return self._derive(self._h.select_cases(idx))

    def split(self, labels: Any) -> dict[Any, EventLog]:
        """One sub-log per distinct label; ``labels`` has one entry per case (e.g. cluster
        labels). Keys are the labels, in sorted order."""
        lab = np.asarray(labels)
        if lab.shape != (self.n_cases,):
            raise _param("labels", f"split needs one label per case: got shape {lab.shape} for "
                         f"{self.n_cases} cases")
        uniq, inv = np.unique(lab, return_inverse=True)
        parts = self._h.split(inv.astype(np.int64))
        return {uniq[k].item() if hasattr(uniq[k], "item") else uniq[k]: self._derive(h)
                for k, h in parts}


def _col_of(t: tuple, tz: str | None) -> Col:
    _name, kind, values, valid, names = t
    if kind == "str":
        return Col(values, kind="text", names=names, valid=valid)
    if kind == "time":
        return Col(values, kind="time", valid=valid, tz=tz)
    return Col(values, valid=valid)


def _warn_report(n_dup: int, n_reordered: int, n_empty: int = 0) -> None:
    if n_dup:
        warnings.warn(f"{n_dup} duplicate events (same case, activity, timestamp, resource and "
                      "lifecycle as an earlier event) were kept", DataQualityWarning, stacklevel=3)
    if n_reordered:
        warnings.warn(f"{n_reordered} events were out of time order within their case and were "
                      "sorted (ties keep input order); none was dropped", DataQualityWarning,
                      stacklevel=3)
    if n_empty:
        warnings.warn(f"{n_empty} traces without events were skipped", DataQualityWarning,
                      stacklevel=3)


__all__ = ["EventLog", "SchemaError"]
