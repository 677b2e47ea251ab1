"""Conformance checking: how well a Petri net fits a log, and where cases deviate.

* :func:`token_replay` - token-based replay (Rozinat & van der Aalst 2008);
* :func:`align` - optimal alignments (Adriansyah, van Dongen & van der Aalst 2011);
* :func:`precision` - escaping-edges precision (Muñoz-Gama & Carmona 2010);
* :func:`simplicity` - inverse arc degree;
* :func:`quality_table` - fitness, precision and size of several models on one log.

Notes
-----
Conformance results describe the recorded cases against a model; a deviation says that the
record differs from the model, not that anyone did something wrong. Event logs hold personal
data: keep per-case diagnostics under the same protection as the log.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from . import _core
from ._output import Col, make_frame
from .exceptions import DataError, ParameterError
from .log import EventLog
from .models import PetriNet

#: Alignment move kinds, by code.
MOVE_KINDS = ("sync", "log", "model", "silent")


def _check_int(name: str, v: Any, lo: int) -> int:
    if isinstance(v, bool) or not isinstance(v, (int, np.integer)) or v < lo:
        e = ParameterError(f"{name} must be an int >= {lo}; got {v!r}")
        e.parameter = name
        raise e
    return int(v)


def _args(net: Any, log: Any) -> tuple[tuple, Any]:
    if not isinstance(net, PetriNet):
        raise DataError(f"expected a tracemill.PetriNet; got {type(net).__name__}")
    if not isinstance(log, EventLog):
        raise DataError(f"expected a tracemill.EventLog; got {type(log).__name__}")
    return net._spec(), log.handle


def _fit(p: np.ndarray, c: np.ndarray, m: np.ndarray, r: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        a = np.where(c > 0, 1 - m / np.maximum(c, 1), 1.0)
        b = np.where(p > 0, 1 - r / np.maximum(p, 1), 1.0)
    return 0.5 * a + 0.5 * b


class ReplayResult:
    """Token-based replay of a log on a net.

    Attributes
    ----------
    fitness : float
        ``1/2 (1 - m/c) + 1/2 (1 - r/p)`` with counters summed over all cases.
    produced, consumed, missing, remaining : int
        Log-level counters.
    """

    def __init__(self, net: PetriNet, log: EventLog, out: tuple) -> None:
        (self._p, self._c, self._m, self._r, self._u, self._loff, self._lt, self._lk,
         self._case_variant, self._counts, totals, self.fitness) = out
        self.produced, self.consumed, self.missing, self.remaining = (int(x) for x in totals)
        self._net = net
        self._case_ids = log.case_ids

    def __repr__(self) -> str:
        return (f"ReplayResult(fitness={self.fitness:.4f}, produced={self.produced}, "
                f"consumed={self.consumed}, missing={self.missing}, "
                f"remaining={self.remaining})")

    def cases(self, kind: str = "pandas") -> Any:
        """Per case: ``case``, ``variant``, ``produced``, ``consumed``, ``missing``,
        ``remaining``, ``unmatched`` (events no transition carries) and ``fitness``."""
        v = self._case_variant.astype(np.int64)
        p, c, m, r = (x.astype(np.int64)[v] for x in (self._p, self._c, self._m, self._r))
        cols = {
            "case": Col(self._case_ids),
            "variant": Col(v),
            "produced": Col(p), "consumed": Col(c), "missing": Col(m), "remaining": Col(r),
            "unmatched": Col(self._u.astype(np.int64)[v]),
            "fitness": Col(_fit(p, c, m, r)),
        }
        return make_frame(cols, kind)

    def lacking(self, case: int | None = None, kind: str = "pandas") -> Any:
        """Transitions that fired without enough tokens: ``transition``, ``label``,
        ``missing_tokens`` (summed over cases) and ``cases`` (cases affected); for one
        ``case`` (position in the log) the firings of that case in order."""
        names = self._net.transitions
        labels = [lab if lab is not None else "" for lab in self._net.labels]
        if case is not None:
            var = int(self._case_variant[case])
            a, b = self._loff[var], self._loff[var + 1]
            t = self._lt[a:b]
            cols = {"transition": Col(t, kind="text", names=names),
                    "label": Col(t, kind="text", names=labels),
                    "missing_tokens": Col(self._lk[a:b].astype(np.int64))}
            return make_frame(cols, kind)
        nt = len(names)
        tok = np.zeros(nt, dtype=np.int64)
        cases = np.zeros(nt, dtype=np.int64)
        for v in range(len(self._counts)):
            a, b = self._loff[v], self._loff[v + 1]
            n = int(self._counts[v])
            ts = self._lt[a:b]
            np.add.at(tok, ts, self._lk[a:b].astype(np.int64) * n)
            cases[np.unique(ts)] += n
        idx = np.flatnonzero(tok > 0)
        idx = idx[np.argsort(-tok[idx], kind="stable")]
        cols = {"transition": Col(idx.astype(np.uint32), kind="text", names=names),
                "label": Col(idx.astype(np.uint32), kind="text", names=labels),
                "missing_tokens": Col(tok[idx]), "cases": Col(cases[idx])}
        return make_frame(cols, kind)


def token_replay(net: PetriNet, log: EventLog, *, max_silent_states: int = 10_000) -> ReplayResult:
    """Replay ``log`` on ``net`` counting produced, consumed, missing and remaining tokens.

    Parameters
    ----------
    net : PetriNet
        Needs an initial and a final marking; must be bounded (checked, an unbounded place is
        reported as a DataError).
    log : EventLog
    max_silent_states : int, default=10000
        Markings explored when searching silent steps that enable a transition.

    Returns
    -------
    ReplayResult

    Notes
    -----
    Silent transitions are fired along the shortest silent path that enables the next event's
    transition. Events whose activity no transition carries are counted as ``unmatched`` and
    cost one missing and one remaining token each (never an error).

    References
    ----------
    Rozinat & van der Aalst (2008), Information Systems 33(1):64-95.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> rows = [(c, a) for c, t in enumerate(["abc", "ac"]) for a in t]
    >>> frame = pd.DataFrame(rows, columns=["case", "act"])
    >>> frame["t"] = pd.date_range("2025-01-06", periods=len(frame), freq="h")
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="act", timestamp="t")
    >>> net = tm.ProcessTree.from_nested(("sequence", "a", "b", "c")).to_petri_net()
    >>> r = tm.token_replay(net, log)
    >>> r.cases()["fitness"].round(3).tolist()   # "ac": m = r = 1 of p = c = 3
    [1.0, 0.667]
    """
    spec, h = _args(net, log)
    mss = _check_int("max_silent_states", max_silent_states, 1)
    return ReplayResult(net, log, _core.replay(spec, h, mss))


class AlignmentResult:
    """Optimal alignments of a log's cases to a net.

    Attributes
    ----------
    fitness : float
        ``1 - Σ cost / Σ (|trace| + model_run_cost)`` over aligned cases.
    mean_trace_fitness : float
        Mean of the per-case fitness values (the other common convention).
    model_run_cost : int
        Cost of the cheapest complete run of the net (visible transitions).
    gave_up_cases : numpy.ndarray
        Positions of the cases whose search hit ``max_states`` (their cost is missing).
    """

    def __init__(self, net: PetriNet, log: EventLog, out: tuple) -> None:
        (self._cost, self._gave, self._expanded, self._moff, self._mk, self._me, self._mt,
         self._case_variant, self._counts, self._len, tail) = out
        self.model_run_cost, self.fitness, self.mean_trace_fitness, ngu = tail
        self.model_run_cost = int(self.model_run_cost)
        self.n_gave_up_cases = int(ngu)
        self._net = net
        self._log = log
        self.gave_up_cases = np.flatnonzero(self._gave[self._case_variant])

    def __repr__(self) -> str:
        return (f"AlignmentResult(fitness={self.fitness:.4f}, "
                f"gave_up_cases={self.n_gave_up_cases})")

    def cases(self, kind: str = "pandas") -> Any:
        """Per case: ``case``, ``variant``, ``cost`` (missing if the search gave up),
        ``fitness``, ``gave_up``, ``states`` (search states expanded for its variant)."""
        v = self._case_variant.astype(np.int64)
        cost = self._cost[v]
        ok = cost >= 0
        den = (self._len[v] + self.model_run_cost).astype(float)
        with np.errstate(divide="ignore", invalid="ignore"):
            fit = np.where(ok, np.where(den > 0, 1 - np.maximum(cost, 0) / den, 1.0), np.nan)
        cols = {
            "case": Col(self._log.case_ids),
            "variant": Col(v),
            "cost": Col(np.maximum(cost, 0), valid=ok),
            "fitness": Col(fit),
            "gave_up": Col(self._gave[v]),
            "states": Col(self._expanded[v].astype(np.int64)),
        }
        return make_frame(cols, kind)

    def moves(self, case: int, kind: str = "pandas") -> Any:
        """The moves of ``case`` (position in the log): ``move`` ('sync', 'log', 'model',
        'silent'), ``activity`` (the event's, for sync and log moves), ``transition`` and
        ``label`` (for sync and model moves)."""
        var = int(self._case_variant[case])
        a, b = self._moff[var], self._moff[var + 1]
        k, e, t = self._mk[a:b], self._me[a:b], self._mt[a:b]
        trace = self._log.arrays()["activity"][self._log.arrays()["offsets"][case]:
                                             self._log.arrays()["offsets"][case + 1]]
        acts = self._log.activities
        act_codes = np.where(e >= 0, trace[np.maximum(e, 0)] if len(trace) else 0, 0)
        labels = [lab if lab is not None else "" for lab in self._net.labels]
        cols = {
            "move": Col(k.astype(np.uint32), kind="text", names=list(MOVE_KINDS)),
            "activity": Col(act_codes.astype(np.uint32), kind="text", names=acts, valid=e >= 0),
            "transition": Col(np.maximum(t, 0).astype(np.uint32), kind="text",
                              names=self._net.transitions, valid=t >= 0),
            "label": Col(np.maximum(t, 0).astype(np.uint32), kind="text", names=labels,
                         valid=t >= 0),
        }
        return make_frame(cols, kind)

    def deviations(self, kind: str = "pandas") -> Any:
        """Log and visible model moves over all cases: ``move``, ``activity`` (the event's for
        log moves, the transition's label for model moves), ``occurrences`` and ``cases``."""
        acts = self._log.activities
        counts: dict[tuple[int, str], list[int]] = {}
        for v in range(len(self._counts)):
            a, b = self._moff[v], self._moff[v + 1]
            n = int(self._counts[v])
            seen: set[tuple[int, str]] = set()
            case = int(np.flatnonzero(self._case_variant == v)[0]) if b > a else -1
            for k, e, t in zip(self._mk[a:b], self._me[a:b], self._mt[a:b], strict=False):
                if k == 1:
                    off = self._log.arrays()["offsets"][case]
                    key = (1, acts[int(self._log.arrays()["activity"][off + e])])
                elif k == 2:
                    key = (2, str(self._net.labels[t]))
                else:
                    continue
                c = counts.setdefault(key, [0, 0])
                c[0] += n
                if key not in seen:
                    c[1] += n
                    seen.add(key)
        keys = sorted(counts, key=lambda x: (-counts[x][0], x))
        names = sorted({k[1] for k in keys})
        ix = {x: i for i, x in enumerate(names)}
        cols = {
            "move": Col(np.array([k[0] for k in keys], dtype=np.uint32), kind="text",
                        names=list(MOVE_KINDS)),
            "activity": Col(np.array([ix[k[1]] for k in keys], dtype=np.uint32), kind="text",
                            names=names),
            "occurrences": Col(np.array([counts[k][0] for k in keys], dtype=np.int64)),
            "cases": Col(np.array([counts[k][1] for k in keys], dtype=np.int64)),
        }
        return make_frame(cols, kind)


def align(net: PetriNet, log: EventLog, *, max_states: int = 200_000) -> AlignmentResult:
    """Optimal alignments with the standard cost function (log and visible model moves cost
    1, synchronous and silent moves 0), one A* search per variant, in parallel.

    Parameters
    ----------
    net : PetriNet
        Needs an initial and a final marking; must be bounded.
    log : EventLog
    max_states : int, default=200000
        States a variant's search may expand; variants that reach it are reported in
        ``gave_up_cases`` instead of running on.

    Returns
    -------
    AlignmentResult

    Notes
    -----
    The A* heuristic counts remaining events whose activity no transition carries (admissible,
    so alignments are optimal); it is weaker than the marking-equation bound, so badly fitting
    long traces on large nets may need a higher ``max_states``.

    References
    ----------
    Adriansyah, van Dongen & van der Aalst (2011), "Conformance checking using cost-based
    fitness analysis", IEEE EDOC, 55-64.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> rows = [(c, a) for c, t in enumerate(["abc", "ac", "abxc"]) for a in t]
    >>> frame = pd.DataFrame(rows, columns=["case", "act"])
    >>> frame["t"] = pd.date_range("2025-01-06", periods=len(frame), freq="h")
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="act", timestamp="t")
    >>> net = tm.ProcessTree.from_nested(("sequence", "a", "b", "c")).to_petri_net()
    >>> res = tm.align(net, log)
    >>> res.cases()["cost"].tolist()
    [0, 1, 1]
    >>> res.moves(1)["move"].tolist()
    ['sync', 'model', 'sync']
    """
    spec, h = _args(net, log)
    ms = _check_int("max_states", max_states, 1)
    return AlignmentResult(net, log, _core.align(spec, h, ms))


def precision(net: PetriNet, log: EventLog, *, max_silent_states: int = 10_000) -> float:
    """Escaping-edges precision ``1 - Σ ω|EE| / Σ ω|AT|`` (Muñoz-Gama & Carmona 2010).

    For each prefix followed by another event, ``AT`` is the set of activities the model
    allows after it (visible transitions enabled, also through silent steps) and ``EE`` those
    the log never shows after that prefix; ``ω`` counts the cases through the prefix.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> rows = [(c, a) for c, t in enumerate(["abd", "abd"]) for a in t]
    >>> frame = pd.DataFrame(rows, columns=["case", "act"])
    >>> frame["t"] = pd.date_range("2025-01-06", periods=len(frame), freq="h")
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="act", timestamp="t")
    >>> net = tm.ProcessTree.from_nested(("sequence", "a", ("choice", "b", "c"), "d"))
    >>> round(tm.precision(net.to_petri_net(), log), 4)   # 1 - 2/8: c is never seen after a
    0.75
    """
    spec, h = _args(net, log)
    mss = _check_int("max_silent_states", max_silent_states, 1)
    return float(_core.precision(spec, h, mss)[0])


def simplicity(net: PetriNet) -> float:
    """Inverse arc degree ``1 / (1 + max(0, mean arcs per node - 2))``."""
    if not isinstance(net, PetriNet):
        raise DataError(f"expected a tracemill.PetriNet; got {type(net).__name__}")
    return float(_core.net_simplicity(net._spec()))


def quality_table(models: Mapping[str, PetriNet], log: EventLog, *, alignments: bool = True,
                  max_states: int = 200_000, kind: str = "pandas") -> Any:
    """Fitness, precision, simplicity and size of each model on one log.

    Columns: ``model``, ``replay_fitness``, ``alignment_fitness`` (missing when
    ``alignments=False``), ``precision``, ``simplicity``, ``places``, ``transitions``,
    ``silent``, ``arcs``, ``gave_up_cases``.
    """
    names = list(models)
    rows: dict[str, list[Any]] = {k: [] for k in (
        "replay_fitness", "alignment_fitness", "precision", "simplicity", "places",
        "transitions", "silent", "arcs", "gave_up_cases")}
    for name in names:
        net = models[name]
        rows["replay_fitness"].append(token_replay(net, log).fitness)
        if alignments:
            a = align(net, log, max_states=max_states)
            rows["alignment_fitness"].append(a.fitness)
            rows["gave_up_cases"].append(a.n_gave_up_cases)
        else:
            rows["alignment_fitness"].append(np.nan)
            rows["gave_up_cases"].append(0)
        rows["precision"].append(precision(net, log))
        rows["simplicity"].append(simplicity(net))
        rows["places"].append(len(net.places))
        rows["transitions"].append(len(net.transitions))
        rows["silent"].append(int(net.silent.sum()))
        rows["arcs"].append(net.n_arcs)
    cols = {"model": Col(np.arange(len(names), dtype=np.uint32), kind="text", names=names)}
    for k, v in rows.items():
        cols[k] = Col(np.asarray(v, dtype=np.float64 if "fitness" in k or k in (
            "precision", "simplicity") else np.int64))
    return make_frame(cols, kind)
