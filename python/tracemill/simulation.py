"""Simulate event logs with ground truth, from a process description of tracemill's own design.

The description is a JSON-compatible dictionary (see :func:`simulate` and the built-in
:data:`WORKSHOP`): case arrivals, segments of cases that behave differently, case attributes
that depend on the segment, resource pools with a capacity (cases queue first in, first out, so
bottlenecks arise), activities with duration distributions, a flow tree of sequence, choice,
parallel and loop nodes, injected deviations and a behaviour change at a date. The engine is
native: plans are drawn in parallel, one seeded random stream per case, and timed by a single
discrete-event run, so results depend only on ``random_state``.

Simulated data is invented: use it for demos, tests and teaching, never as evidence about a
real process.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from dataclasses import dataclass
from functools import cache
from typing import Any

import numpy as np

from . import _core
from .log import EventLog, _warn_report


@dataclass(frozen=True)
class Truth:
    """What the simulation planted, one entry per case in log order.

    Attributes
    ----------
    case_ids : ndarray
        The case ids, aligned with the other arrays.
    segment : ndarray of int
        Index into ``segment_names`` of each case's segment.
    segment_names : list of str
    deviation : ndarray of int
        Index into ``deviation_names`` (0 = no deviation).
    deviation_names : list of str
    change_time : numpy.datetime64 or None
        When the planted behaviour change takes effect (UTC), if any.
    after_change : ndarray of bool
        Whether each case arrived at or after the change.
    """

    case_ids: np.ndarray
    segment: np.ndarray
    segment_names: list[str]
    deviation: np.ndarray
    deviation_names: list[str]
    change_time: np.datetime64 | None
    after_change: np.ndarray

    @property
    def segment_labels(self) -> np.ndarray:
        """The segment name of each case."""
        return np.asarray(self.segment_names, dtype=object)[self.segment]

    def to_frame(self, kind: str = "pandas") -> Any:
        """One row per case: ``case``, ``segment``, ``deviation``, ``after_change``."""
        from ._output import Col, make_frame

        return make_frame({
            "case": Col(self.case_ids),
            "segment": Col(self.segment.astype(np.uint32), kind="text",
                           names=self.segment_names),
            "deviation": Col(self.deviation.astype(np.uint32), kind="text",
                             names=self.deviation_names),
            "after_change": Col(self.after_change),
        }, kind)


@cache
def _workshop_text() -> str:
    return str(_core.workshop_json())


def workshop_spec() -> dict[str, Any]:
    """The built-in scenario's process description (a fresh copy you may edit): a
    bicycle-repair workshop with planted segments, a bottleneck, deviations and a drift."""
    return json.loads(_workshop_text())


def simulate(spec: dict[str, Any] | str, n_cases: int, *, random_state: int = 0,
             progress: Callable[[int, int], Any] | None = None) -> tuple[EventLog, Truth]:
    """Simulate ``n_cases`` cases of a process description.

    Parameters
    ----------
    spec : dict or str
        The process description (a dict or its JSON text); see :func:`workshop_spec` for a full
        example and the module documentation of ``src/sim`` for every key.
    n_cases : int
        Number of cases to generate.
    random_state : int, default=0
        Seed; the same seed gives the same log whatever the number of threads.
    progress : callable, optional
        Called about every 100 ms with ``(done, total)``.

    Returns
    -------
    log : EventLog
    truth : Truth

    Examples
    --------
    >>> import tracemill as tm
    >>> log, truth = tm.simulate(tm.workshop_spec(), 500, random_state=1)
    >>> log.n_cases
    500
    >>> sorted(set(truth.segment_labels)) == sorted(truth.segment_names)
    True
    """
    text = spec if isinstance(spec, str) else json.dumps(spec)
    if not isinstance(n_cases, (int, np.integer)) or n_cases < 1:
        from .exceptions import ParameterError

        e = ParameterError(f"n_cases must be a positive integer; got {n_cases!r}")
        e.parameter = "n_cases"
        raise e
    handle, n_dup, n_reo, t = _core.simulate(text, int(n_cases), int(random_state), progress)
    _warn_report(n_dup, n_reo)
    names = np.asarray(handle.case_names, dtype=object)
    log = EventLog(handle, names, "UTC")
    seg, seg_names, dev, dev_names, change, after = t
    truth = Truth(
        case_ids=log.case_ids,
        segment=np.asarray(seg, dtype=np.int64),
        segment_names=list(seg_names),
        deviation=np.asarray(dev, dtype=np.int64),
        deviation_names=list(dev_names),
        change_time=None if change is None else np.datetime64(int(change), "ns"),
        after_change=np.asarray(after, dtype=bool),
    )
    return log, truth


def workshop(n_cases: int = 20_000, *, random_state: int = 0,
             progress: Callable[[int, int], Any] | None = None) -> tuple[EventLog, Truth]:
    """Simulate the built-in bicycle-repair workshop (see :func:`workshop_spec`).

    Examples
    --------
    >>> import tracemill as tm
    >>> log, truth = tm.workshop(300, random_state=3)
    >>> log.n_cases, len(truth.segment)
    (300, 300)
    """
    return simulate(_workshop_text(), n_cases, random_state=random_state, progress=progress)


__all__ = ["Truth", "simulate", "workshop", "workshop_spec"]
