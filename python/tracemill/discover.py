"""Process discovery: directly-follows graphs, dependency graphs, the alpha algorithm and
inductive discovery, plus a comparison of two logs' directly-follows behaviour.

Every estimator follows scikit-learn habits: the constructor stores its parameters, ``fit(log)``
validates them, runs the native kernel and returns ``self``; results end in ``_``.

Notes
-----
Event logs often hold personal data; handle them under the rules that apply to you. A
discovered model describes the recorded behaviour of the cases in the log: it shows what
happened together or in order, not why.
"""

from __future__ import annotations

import math
from typing import Any, ClassVar

import numpy as np

from . import _core
from ._output import Col, make_frame
from .exceptions import DataError, NotFittedError, ParameterError
from .log import EventLog
from .models import DependencyGraph, DirectlyFollowsGraph, PetriNet, ProcessTree


# ------------------------------------------------------------------ parameter validation
class _Interval:
    def __init__(self, kind: type, lo: float | None, hi: float | None, closed: str = "both"):
        self.kind, self.lo, self.hi, self.closed = kind, lo, hi, closed

    def ok(self, v: Any) -> bool:
        if self.kind is int and (isinstance(v, bool) or not isinstance(v, (int, np.integer))):
            return False
        if self.kind is float and (isinstance(v, bool) or not isinstance(v, (int, float,
                                                                             np.number))):
            return False
        x = float(v)
        if math.isnan(x):
            return False
        lo_ok = self.lo is None or (x >= self.lo if self.closed in ("both", "left")
                                    else x > self.lo)
        hi_ok = self.hi is None or (x <= self.hi if self.closed in ("both", "right")
                                    else x < self.hi)
        return lo_ok and hi_ok

    def __str__(self) -> str:
        left = "[" if self.closed in ("both", "left") and self.lo is not None else "("
        right = "]" if self.closed in ("both", "right") and self.hi is not None else ")"
        lo = "-inf" if self.lo is None else f"{self.lo:g}"
        hi = "inf" if self.hi is None else f"{self.hi:g}"
        return f"{'an int' if self.kind is int else 'a float'} in the range {left}{lo}, {hi}{right}"


class _Estimator:
    _parameter_constraints: ClassVar[dict[str, Any]] = {}

    def get_params(self, deep: bool = True) -> dict[str, Any]:
        """Parameters of the estimator (scikit-learn convention)."""
        import inspect

        names = [p for p in inspect.signature(type(self).__init__).parameters if p != "self"]
        return {n: getattr(self, n) for n in names}

    def set_params(self, **params: Any) -> Any:
        """Set parameters (scikit-learn convention); returns self."""
        valid = self.get_params()
        for k, v in params.items():
            if k not in valid:
                e = ParameterError(f"{type(self).__name__} has no parameter {k!r}")
                e.parameter = k
                raise e
            setattr(self, k, v)
        return self

    def __repr__(self) -> str:
        args = ", ".join(f"{k}={v!r}" for k, v in self.get_params().items())
        return f"{type(self).__name__}({args})"

    def _validate(self) -> None:
        for name, rule in self._parameter_constraints.items():
            v = getattr(self, name)
            if isinstance(rule, _Interval):
                if not rule.ok(v):
                    e = ParameterError(f"The {name!r} parameter of {type(self).__name__} must "
                                       f"be {rule}. Got {v!r} instead.")
                    e.parameter = name
                    raise e
            elif rule is bool and not isinstance(v, (bool, np.bool_)):
                e = ParameterError(f"The {name!r} parameter of {type(self).__name__} must be "
                                   f"a bool. Got {v!r} instead.")
                e.parameter = name
                raise e

    def _check_fitted(self, attr: str) -> None:
        if not hasattr(self, attr):
            raise NotFittedError(f"This {type(self).__name__} instance is not fitted yet; "
                                 "call fit(log) first.")


def _handle(log: Any) -> Any:
    if isinstance(log, EventLog):
        return log.handle
    raise DataError(f"expected a tracemill.EventLog; got {type(log).__name__}")


# ------------------------------------------------------------------------ estimators
class DirectlyFollowsDiscovery(_Estimator):
    """Directly-follows graph with frequency and performance annotations.

    Parameters
    ----------
    min_activity_count : int, default=0
        Drop activities with fewer events (and their edges; nothing is re-linked).
    min_edge_count : int, default=0
        Drop edges (and start/end links) with fewer occurrences.
    path_coverage : float, default=1.0
        Build the graph from the most frequent variants that together cover this share of
        the cases (in (0, 1]).
    performance : bool, default=True
        Compute mean/median/90th-percentile gaps per edge.

    Attributes
    ----------
    graph_ : DirectlyFollowsGraph

    Notes
    -----
    A directly-follows graph can show paths that no case took (a -> b in some cases and b -> c
    in others); filtered graphs more so. Event logs hold personal data.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> frame = pd.DataFrame({"order": [1, 1, 1, 2, 2], "step": ["Receive", "Repair",
    ...     "Hand over", "Receive", "Hand over"], "at": pd.date_range("2025-01-06", periods=5,
    ...     freq="h")})
    >>> log = tm.EventLog.from_frame(frame, case="order", activity="step", timestamp="at")
    >>> g = tm.DirectlyFollowsDiscovery().fit(log).graph_
    >>> g.edges(include_ends=False)[["source", "target", "count"]].to_numpy().tolist()
    [['Receive', 'Repair', 1], ['Receive', 'Hand over', 1], ['Repair', 'Hand over', 1]]
    """

    _parameter_constraints: ClassVar[dict[str, Any]] = {
        "min_activity_count": _Interval(int, 0, None),
        "min_edge_count": _Interval(int, 0, None),
        "path_coverage": _Interval(float, 0, 1, "right"),
        "performance": bool,
    }

    def __init__(self, min_activity_count: int = 0, min_edge_count: int = 0,
                 path_coverage: float = 1.0, performance: bool = True) -> None:
        self.min_activity_count = min_activity_count
        self.min_edge_count = min_edge_count
        self.path_coverage = path_coverage
        self.performance = performance

    def fit(self, log: EventLog, y: Any = None) -> DirectlyFollowsDiscovery:
        """Build the graph of ``log``; returns self."""
        self._validate()
        h = _handle(log)
        out = _core.dfg(h, int(self.min_activity_count), int(self.min_edge_count),
                        float(self.path_coverage), bool(self.performance))
        self.graph_ = DirectlyFollowsGraph(log.activities, *out)
        return self


class DependencyDiscovery(_Estimator):
    """Dependency graph with the heuristic measures of Weijters & Ribeiro (2011).

    ``a => b = (|a>b| - |b>a|) / (|a>b| + |b>a| + 1)``; length-one loops
    ``|a>a| / (|a>a| + 1)``; length-two loops from the pattern ``a b a``.

    Parameters
    ----------
    dependency_threshold : float, default=0.9
        Minimum ``a => b`` of an edge, in [-1, 1].
    min_observations : int, default=1
        Minimum ``|a>b|`` of an edge.
    relative_to_best : float, default=0.05
        Keep edges within this distance of the best outgoing (or incoming) score.
    loop1_threshold, loop2_threshold : float, default=0.9
        Minimum length-one / length-two loop measures.
    all_connected : bool, default=True
        Give every activity its best incoming and outgoing edge.

    Attributes
    ----------
    graph_ : DependencyGraph

    References
    ----------
    Weijters & Ribeiro (2011), "Flexible Heuristics Miner (FHM)", IEEE CIDM.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> rows = [(c, a) for c, t in enumerate(["abd"] * 3 + ["acd"] * 2) for a in t]
    >>> frame = pd.DataFrame(rows, columns=["case", "act"])
    >>> frame["t"] = pd.date_range("2025-01-06", periods=len(frame), freq="h")
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="act", timestamp="t")
    >>> g = tm.DependencyDiscovery(dependency_threshold=0.5).fit(log).graph_
    >>> round(float(g.dependency[0, 1]), 3)   # a => b = 3 / 4
    0.75
    """

    _parameter_constraints: ClassVar[dict[str, Any]] = {
        "dependency_threshold": _Interval(float, -1, 1),
        "min_observations": _Interval(int, 0, None),
        "relative_to_best": _Interval(float, 0, 1),
        "loop1_threshold": _Interval(float, 0, 1),
        "loop2_threshold": _Interval(float, 0, 1),
        "all_connected": bool,
    }

    def __init__(self, dependency_threshold: float = 0.9, min_observations: int = 1,
                 relative_to_best: float = 0.05, loop1_threshold: float = 0.9,
                 loop2_threshold: float = 0.9, all_connected: bool = True) -> None:
        self.dependency_threshold = dependency_threshold
        self.min_observations = min_observations
        self.relative_to_best = relative_to_best
        self.loop1_threshold = loop1_threshold
        self.loop2_threshold = loop2_threshold
        self.all_connected = all_connected

    def fit(self, log: EventLog, y: Any = None) -> DependencyDiscovery:
        """Compute the measures and select the edges; returns self."""
        self._validate()
        out = _core.dependency(_handle(log), float(self.dependency_threshold),
                               int(self.min_observations), float(self.relative_to_best),
                               float(self.loop1_threshold), float(self.loop2_threshold),
                               bool(self.all_connected))
        self.graph_ = DependencyGraph(log.activities, *out)
        return self


class AlphaDiscovery(_Estimator):
    """The alpha algorithm (van der Aalst, Weijters & Maruster 2004).

    Derives the footprint (causality ->, parallelism ||, choice #) from the directly-follows
    relation and builds a workflow net with one place per maximal pair of activity sets.

    Parameters
    ----------
    max_candidates : int, default=100000
        Bound on the candidate place pairs generated (raises LimitError beyond).

    Attributes
    ----------
    net_ : PetriNet

    Notes
    -----
    Length-one and length-two loops and non-local dependencies are beyond the method; the net
    need not be sound.

    References
    ----------
    van der Aalst, Weijters & Maruster (2004), "Workflow mining: discovering process models
    from event logs", IEEE TKDE 16(9):1128-1142.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> rows = [(c, a) for c, t in enumerate(["abd", "acd"]) for a in t]
    >>> frame = pd.DataFrame(rows, columns=["case", "act"])
    >>> frame["t"] = pd.date_range("2025-01-06", periods=len(frame), freq="h")
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="act", timestamp="t")
    >>> sorted(tm.AlphaDiscovery().fit(log).net_.places)
    ['({a},{b,c})', '({b,c},{d})', 'sink', 'source']
    """

    _parameter_constraints: ClassVar[dict[str, Any]] = {"max_candidates": _Interval(int, 1, None)}

    def __init__(self, max_candidates: int = 100_000) -> None:
        self.max_candidates = max_candidates

    def fit(self, log: EventLog, y: Any = None) -> AlphaDiscovery:
        """Discover the net; returns self."""
        self._validate()
        self.net_ = PetriNet._from_spec(_core.alpha(_handle(log), int(self.max_candidates)))
        return self


class InductiveDiscovery(_Estimator):
    """Inductive discovery (Leemans, Fahland & van der Aalst 2013) with the optional
    infrequent-behaviour filter (IMf).

    Splits the log recursively by exclusive-choice, sequence, parallel and loop cuts of its
    directly-follows graph, with fall-throughs when no cut fits. Without filtering the model
    fits every trace of the log and is a sound workflow net.

    Parameters
    ----------
    noise_threshold : float, default=0.0
        IMf threshold in [0, 1]: directly-follows edges weaker than this share of the
        strongest outgoing edge of their source are ignored when looking for cuts, and empty
        traces rarer than this share are dropped. 0 gives plain IM.

    Attributes
    ----------
    tree_ : ProcessTree
    net_ : PetriNet
        The sound workflow net of ``tree_``.

    References
    ----------
    Leemans, Fahland & van der Aalst (2013), "Discovering block-structured process models from
    event logs - a constructive approach", Petri Nets, LNCS 7927; and "... containing
    infrequent behaviour", BPM Workshops, LNBIP 171.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> rows = [(c, a) for c, t in enumerate(["abcd", "acbd", "abcd"]) for a in t]
    >>> frame = pd.DataFrame(rows, columns=["case", "act"])
    >>> frame["t"] = pd.date_range("2025-01-06", periods=len(frame), freq="h")
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="act", timestamp="t")
    >>> print(tm.InductiveDiscovery().fit(log).tree_)
    sequence('a', parallel('b', 'c'), 'd')
    """

    _parameter_constraints: ClassVar[dict[str, Any]] = {"noise_threshold": _Interval(float, 0, 1)}

    def __init__(self, noise_threshold: float = 0.0) -> None:
        self.noise_threshold = noise_threshold

    def fit(self, log: EventLog, y: Any = None) -> InductiveDiscovery:
        """Discover the tree and its net; returns self."""
        self._validate()
        spec = _core.inductive(_handle(log), float(self.noise_threshold))
        self.tree_ = ProcessTree(*spec)
        self.net_ = self.tree_.to_petri_net()
        return self


# ----------------------------------------------------------------------- comparison
def compare_directly_follows(log_a: EventLog, log_b: EventLog, *, alpha: float = 0.05,
                             names: tuple[str, str] = ("a", "b"), kind: str = "pandas") -> Any:
    """Side-by-side directly-follows frequencies of two logs (or clusters) with the
    differences that are statistically significant.

    For every pair seen in either log, the share of cases containing it is compared with a
    two-proportion z-test (pooled variance); p-values are adjusted for the number of pairs with
    the Benjamini-Hochberg procedure, and ``significant`` marks adjusted p-values below
    ``alpha``. Artificial ``[start]``/``[end]`` pairs are included.

    Returns a table with ``source``, ``target``, ``count_<a>``, ``count_<b>``, ``cases_<a>``,
    ``cases_<b>``, ``share_<a>``, ``share_<b>``, ``difference`` (share b minus share a), ``z``,
    ``p_value``, ``p_adjusted``, ``significant``, sorted by adjusted p-value.

    Notes
    -----
    A significant difference says the groups differ in how often cases take that step, not
    why. With large logs tiny differences become significant: read ``difference`` too.

    References
    ----------
    Benjamini & Hochberg (1995), J. Royal Statistical Society B 57(1):289-300.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> def mk(traces):
    ...     rows = [(c, a) for c, t in enumerate(traces) for a in t]
    ...     f = pd.DataFrame(rows, columns=["case", "act"])
    ...     f["t"] = pd.date_range("2025-01-06", periods=len(f), freq="h")
    ...     return tm.EventLog.from_frame(f, case="case", activity="act", timestamp="t")
    >>> cmp = tm.compare_directly_follows(mk(["ab"] * 50), mk(["ab"] * 10 + ["ac"] * 40))
    >>> cmp.loc[cmp.significant, ["source", "target"]].to_numpy().tolist()[:2]
    [['a', 'b'], ['a', 'c']]
    """
    if not (isinstance(alpha, (int, float)) and 0 < alpha < 1):
        e = ParameterError(f"alpha must be in (0, 1); got {alpha!r}")
        e.parameter = "alpha"
        raise e
    ga = DirectlyFollowsDiscovery(performance=False).fit(log_a).graph_
    gb = DirectlyFollowsDiscovery(performance=False).fit(log_b).graph_
    ea = ga.edges(include_ends=True)
    eb = gb.edges(include_ends=True)
    na, nb = ga.n_cases, gb.n_cases
    keys: dict[tuple[str, str], list[int]] = {}
    for df, off in ((ea, 0), (eb, 2)):
        for s, t, n, c in zip(df["source"], df["target"], df["count"], df["cases"], strict=False):
            v = keys.setdefault((s, t), [0, 0, 0, 0])
            v[off], v[off + 1] = int(n), int(c)
    pairs = sorted(keys)
    arr = np.array([keys[k] for k in pairs], dtype=np.int64).reshape(-1, 4)
    ca, cb = arr[:, 1].astype(float), arr[:, 3].astype(float)
    pa, pb = ca / na, cb / nb
    pool = (ca + cb) / (na + nb)
    se = np.sqrt(pool * (1 - pool) * (1 / na + 1 / nb))
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(se > 0, (pb - pa) / se, 0.0)
    p = np.array([math.erfc(abs(x) / math.sqrt(2)) for x in z])
    m = len(p)
    order = np.argsort(p, kind="stable")
    adj = np.empty(m)
    if m:
        ranked = p[order] * m / np.arange(1, m + 1)
        adj[order] = np.minimum(np.minimum.accumulate(ranked[::-1])[::-1], 1.0)
    labels = sorted({x for k in pairs for x in k})
    lix = {x: i for i, x in enumerate(labels)}
    a, b = names
    cols = {
        "source": Col(np.array([lix[k[0]] for k in pairs], dtype=np.uint32), kind="text",
                      names=labels),
        "target": Col(np.array([lix[k[1]] for k in pairs], dtype=np.uint32), kind="text",
                      names=labels),
        f"count_{a}": Col(arr[:, 0]), f"count_{b}": Col(arr[:, 2]),
        f"cases_{a}": Col(arr[:, 1]), f"cases_{b}": Col(arr[:, 3]),
        f"share_{a}": Col(pa), f"share_{b}": Col(pb),
        "difference": Col(pb - pa), "z": Col(z), "p_value": Col(p), "p_adjusted": Col(adj),
        "significant": Col(adj < alpha),
    }
    sort = np.lexsort((np.arange(m), -np.abs(pb - pa), adj))
    for c in cols.values():
        c.values = np.asarray(c.values)[sort]
    return make_frame(cols, kind)


# ------------------------------------------------------------------------------ demo
def demo_section(log: EventLog, truth: Any, out_dir: Any = None) -> str:
    """The demo's discovery section: one model per group of cases (``truth.segment`` labels),
    its fitness and precision, the diagrams written to ``out_dir`` (DOT always; SVG too when
    ``graphviz`` is installed), and the directly-follows steps that differ most between the two
    largest groups."""
    import os

    seg = np.asarray(truth.segment)
    names = list(truth.segment_names)
    parts = log.split(seg)
    lines = ["Process models per group (inductive discovery, noise threshold 0.2)"]
    rows = []
    for k in sorted(parts):
        sub = parts[k]
        name = names[int(k)] if 0 <= int(k) < len(names) else str(k)
        m = InductiveDiscovery(noise_threshold=0.2).fit(sub)
        from .conform import align, precision, token_replay

        rep = token_replay(m.net_, sub)
        ali = align(m.net_, sub, max_states=50_000)
        prec = precision(m.net_, sub)
        rows.append([name, f"{sub.n_cases:,}", f"{rep.fitness:.3f}", f"{ali.fitness:.3f}",
                     f"{prec:.3f}", str(len(m.net_.transitions) - int(m.net_.silent.sum()))])
        lines.append(f"  {name}: {m.tree_}"[:300])
        if out_dir is not None:
            os.makedirs(out_dir, exist_ok=True)
            stem = os.path.join(os.fspath(out_dir), "model_" + "".join(
                ch if ch.isalnum() else "_" for ch in name))
            m.net_.write_dot(stem + "_net.dot")
            m.tree_.write_dot(stem + "_tree.dot")
            DirectlyFollowsDiscovery().fit(sub).graph_.write_dot(stem + "_dfg.dot")
            try:
                m.net_.render(stem + "_net.svg")
            except Exception:
                pass
    widths = [max(len(r[i]) for r in [["group", "cases", "replay fit", "align fit",
                                        "precision", "activities"], *rows]) for i in range(6)]
    head = ["group", "cases", "replay fit", "align fit", "precision", "activities"]
    table = ["  " + "  ".join(h.ljust(w) for h, w in zip(head, widths, strict=False)),
             "  " + "  ".join("-" * w for w in widths)]
    table += ["  " + "  ".join(c.ljust(w) for c, w in zip(r, widths, strict=False)) for r in rows]
    lines.append("\nFitness (token replay and alignments) and escaping-edges precision:")
    lines += table
    big = sorted(parts, key=lambda k: -parts[k].n_cases)[:2]
    if len(big) == 2:
        na, nb = (names[int(k)] if 0 <= int(k) < len(names) else str(k) for k in big)
        cmp = compare_directly_follows(parts[big[0]], parts[big[1]], names=("A", "B"))
        top = cmp[cmp["significant"]].head(5)
        lines.append(f"\nSteps whose share of cases differs most between {na} (A) and "
                     f"{nb} (B), significant after Benjamini-Hochberg:")
        for r in top.itertuples():
            lines.append(f"  {r.source} > {r.target}: {r.share_A:.1%} vs {r.share_B:.1%}")
    if out_dir is not None:
        lines.append(f"\nDiagrams (DOT, SVG when graphviz is installed) written to {out_dir}")
    return "\n".join(lines)
