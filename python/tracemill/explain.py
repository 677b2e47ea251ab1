"""Root-cause and decision-point analysis with trees.

* :func:`root_causes` — which case characteristics go with a problem (slow cases, rework, a
  rule violation, any case-level flag)? Builds case features, trains a shallow tree and reports
  the leaves that concentrate the problem: rule, cases covered, share with the problem and lift
  over the base rate.
* :func:`decision_points` — at each activity with more than one observed successor, why do
  some cases go one way and others another? Learns a tree per activity from the attributes
  known at that moment and reports its cross-validated accuracy and its rules (decision
  mining, Rozinat & van der Aalst 2006).

The case features used here (:func:`case_features`) are deliberately simple and replaceable:
case attributes (text as native categories, numbers as numbers) plus activity counts or
presence in the prefix before the problem.

Notes
-----
Trees and rules show associations in past data, not causes: a rule says which cases *were*
slow, not what would make a case fast. Confounders (e.g. season, workload) can produce any of
them. Event logs often hold personal data; so do features built from them.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np

from ._output import NS_PER_HOUR, Col, make_frame
from ._output import fmt_hours as _hours
from .evaluate import GroupKFold, KFold, StratifiedKFold, cross_validate
from .exceptions import DataError
from .exceptions import param_error as _param
from .tree import TreeClassifier

__all__ = [
    "CAUTION",
    "DecisionPointResult",
    "RootCauseResult",
    "case_features",
    "decision_points",
    "demo_section",
    "root_causes",
]

CAUTION = ("Caution: these rules are associations in past cases, not causes; check them with "
           "people who know the process before acting on them.")




def _attr_values(t: tuple) -> np.ndarray:
    """A native column tuple as a numpy array (text as object with None, numbers as float with
    NaN, times as float ns)."""
    _name, kind, values, valid, names = t
    if kind == "str":
        nm = np.asarray(list(names), dtype=object)
        codes = np.asarray(values)
        out = nm[np.clip(codes, 0, max(len(nm) - 1, 0))] if len(nm) else \
            np.full(len(codes), None, dtype=object)
        out = out.astype(object)
        if valid is not None:
            out[~np.asarray(valid)] = None
        return out
    if kind == "bool":
        out = np.asarray(values).astype(object)
        if valid is not None:
            out[~np.asarray(valid)] = None
        return out
    v = np.asarray(values).astype(np.float64)
    if valid is not None:
        v[~np.asarray(valid)] = np.nan
    return v


def _prefix_lengths(log: Any, before: Any) -> np.ndarray:
    arr = log.arrays()
    off = arr["offsets"]
    lens = np.diff(off)
    if before is None:
        return lens
    if isinstance(before, (int, np.integer)) and not isinstance(before, bool):
        if before < 0:
            raise _param("before", f"before must be >= 0 events; got {before}")
        return np.minimum(lens, int(before))
    if isinstance(before, str):
        if before not in log.activities:
            raise _param("before", f"activity {before!r} is not in the log; activities: "
                                   f"{log.activities[:10]}")
        code = log.activities.index(before)
        act = arr["activity"]
        case = arr["case"]
        hit = np.flatnonzero(act == code)
        first = np.full(log.n_cases, -1, dtype=np.int64)
        # first occurrence per case: iterate in reverse so the earliest wins
        first[case[hit[::-1]]] = hit[::-1]
        out = lens.copy()
        has = first >= 0
        out[has] = first[has] - off[:-1][has]
        return out
    raise _param("before", "before must be None, a number of events or an activity name; "
                           f"got {before!r}")


def case_features(log: Any, *, attributes: bool = True, behaviour: str | None = "counts",
                  before: Any = None) -> Any:
    """One row of features per case (a pandas DataFrame indexed like ``log.case_ids``).

    Parameters
    ----------
    attributes : bool, default=True
        Include the case attributes (text stays categorical, numbers numeric, missing values
        as None/NaN).
    behaviour : {'counts', 'presence', None}, default='counts'
        Per activity, the number of its events (``n_<activity>``) or whether it occurs
        (``has_<activity>``) in the prefix.
    before : None, int or str, default=None
        The prefix: the whole case (None), its first ``k`` events, or the events before the
        first occurrence of an activity (the whole case when it never occurs). Use it to keep
        only behaviour known before the problem arises.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> frame = pd.DataFrame({"case": ["a", "a", "b"], "step": ["Inspect", "Repair", "Inspect"],
    ...                       "at": pd.to_datetime(["2025-01-01", "2025-01-02", "2025-01-01"])})
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="step", timestamp="at")
    >>> tm.explain.case_features(log)["n_Repair"].tolist()
    [1, 0]
    """
    import pandas as pd

    data: dict[str, Any] = {}
    if attributes:
        for t in log.handle.case_attrs():
            data[t[0]] = _attr_values(t)
    if behaviour is not None:
        if behaviour not in ("counts", "presence"):
            raise _param("behaviour", "behaviour must be 'counts', 'presence' or None; got "
                                      f"{behaviour!r}")
        arr = log.arrays()
        off, act, case = arr["offsets"], arr["activity"], arr["case"]
        plen = _prefix_lengths(log, before)
        pos_in_case = np.arange(len(act)) - off[:-1][case]
        keep = pos_in_case < plen[case]
        na = len(log.activities)
        m = np.zeros((log.n_cases, na), dtype=np.int64)
        np.add.at(m, (case[keep].astype(np.int64), act[keep].astype(np.int64)), 1)
        for k, a in enumerate(log.activities):
            if behaviour == "counts":
                data[f"n_{a}"] = m[:, k]
            else:
                data[f"has_{a}"] = (m[:, k] > 0).astype(np.int64)
    if not data:
        raise DataError("no features: the log has no case attributes and behaviour is None")
    return pd.DataFrame(data, index=pd.Index(log.case_ids, name="case"))


# ---------------------------------------------------------------------------------- root cause
def _resolve_target(log: Any, target: Any, percentile: float | None, limit: Any
                    ) -> tuple[np.ndarray, str]:
    n = log.n_cases
    if isinstance(target, str) and target in ("slow", "duration"):
        dur = log.handle.case_stats()[2].astype(np.float64)
        if limit is not None:
            import pandas as pd

            lim = float(pd.Timedelta(limit).value) if not isinstance(limit, (int, float)) \
                else float(limit)
            return dur > lim, f"duration above {_hours(lim)}"
        q = 90.0 if percentile is None else float(percentile)
        if not 0 < q < 100:
            raise _param("percentile", f"percentile must be in (0, 100); got {percentile}")
        cut = float(np.percentile(dur, q))
        return dur > cut, f"duration above the {q:g}th percentile ({_hours(cut)})"
    if isinstance(target, str) and target == "rework":
        return log.handle.rework()[2] > 0, "rework (an activity repeated within the case)"
    if isinstance(target, str):
        for t in log.handle.case_attrs():
            if t[0] == target:
                v = _attr_values(t)
                if v.dtype == object:
                    vals = {x for x in v.tolist() if x is not None}
                    if not vals <= {True, False}:
                        raise _param("target", f"case attribute {target!r} is not boolean; pass "
                                               "a boolean array per case instead")
                    v = np.asarray([bool(x) if x is not None else False for x in v.tolist()])
                return np.asarray(v, dtype=float) > 0, target
        raise _param("target", "target must be 'slow', 'rework', a boolean case attribute or a "
                               f"boolean array per case; got {target!r}")
    y = np.asarray(target)
    if y.shape != (n,):
        raise DataError(f"the target has {len(y)} values but the log has {n} cases; give one "
                        "per case")
    if y.dtype != bool:
        u = set(np.unique(y).tolist())
        if not u <= {0, 1}:
            raise DataError("a target array must be boolean (or 0/1) per case")
        y = y.astype(bool)
    return y, "the given case flag"


class RootCauseResult:
    """Outcome of :func:`root_causes`.

    Attributes
    ----------
    leaves : DataFrame
        One row per leaf, strongest concentration first: ``rule``, ``cases``,
        ``problem_cases``, ``share`` (with the problem), ``lift`` (share / base rate),
        ``coverage`` (share of all problem cases that fall in the leaf), ``leaf``.
    base_rate : float
        Share of all cases with the problem.
    n_problem : int
    target : str
        What the problem is.
    tree : TreeClassifier
        The fitted tree (features in ``features``).
    features : DataFrame
        The case features used.
    caution : str
    """

    def __init__(self, leaves: Any, base_rate: float, n_problem: int, target: str,
                 tree: TreeClassifier, features: Any, y: np.ndarray) -> None:
        self.leaves = leaves
        self.base_rate = base_rate
        self.n_problem = n_problem
        self.target = target
        self.tree = tree
        self.features = features
        self.y = y
        self.caution = CAUTION

    def __repr__(self) -> str:
        return (f"RootCauseResult(target={self.target!r}, base_rate={self.base_rate:.3f}, "
                f"n_leaves={len(self.leaves)})")

    def to_text(self, top: int = 3) -> str:
        """The leaves with the highest lift, as text, with the caution."""
        lines = [f"Problem: {self.target}; {self.n_problem:,} of {len(self.y):,} cases "
                 f"(base rate {self.base_rate:.1%})."]
        shown = self.leaves[self.leaves["lift"] > 1].head(top)
        if len(shown) == 0:
            lines.append("No leaf concentrates the problem above its base rate.")
        for r in shown.itertuples():
            lines.append(f"  IF {r.rule}: {r.cases:,} cases, {r.share:.0%} with the problem, "
                         f"lift {r.lift:.1f}, {r.coverage:.0%} of all problem cases")
        lines.append(self.caution)
        return "\n".join(lines)


def root_causes(log: Any, target: Any = "slow", *, percentile: float | None = None,
                limit: Any = None, features: Any = None, before: Any = None,
                behaviour: str | None = "counts", max_depth: int = 3,
                min_samples_leaf: int | None = None, criterion: str = "entropy",
                kind: str = "pandas") -> RootCauseResult:
    """Which case characteristics go with a problem?

    Parameters
    ----------
    log : EventLog
    target : 'slow', 'rework', str or array, default='slow'
        'slow': duration above ``percentile`` (default 90) or above ``limit`` (e.g.
        ``'5 days'``); 'rework': some activity repeats in the case; the name of a boolean case
        attribute; or a boolean array with one value per case (e.g. a rule violation).
    features : DataFrame, optional
        One row per case (log order); default :func:`case_features` with ``before`` and
        ``behaviour``.
    before, behaviour
        Passed to :func:`case_features`. For a problem that arises during the case, set
        ``before`` to the activity where it shows, so that later behaviour cannot explain it.
    max_depth : int, default=3
        Depth of the tree; shallow trees give short rules.
    min_samples_leaf : int, optional
        Smallest leaf (default: 1 % of cases, at least 5).
    criterion : {'entropy', 'gini', 'gain_ratio'}, default='entropy'

    Returns
    -------
    RootCauseResult

    Notes
    -----
    The output holds associations, not causes (see ``RootCauseResult.caution``).

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> rows = []
    >>> for c in range(60):
    ...     bike = "e-bike" if c % 3 == 0 else "city"
    ...     hours = 30 if bike == "e-bike" else 2
    ...     t0 = pd.Timestamp("2025-01-01") + pd.Timedelta(hours=c)
    ...     rows += [(f"r{c}", "Receive", t0, bike),
    ...              (f"r{c}", "Hand over", t0 + pd.Timedelta(hours=hours + c % 2), bike)]
    >>> frame = pd.DataFrame(rows, columns=["case", "step", "at", "bike"])
    >>> log = tm.EventLog.from_frame(frame, case="case", activity="step", timestamp="at",
    ...                              case_attributes=["bike"])
    >>> res = tm.explain.root_causes(log, "slow", percentile=60)
    >>> res.leaves["rule"].iloc[0], float(res.leaves["share"].iloc[0])
    ('bike = e-bike', 1.0)
    """
    y, desc = _resolve_target(log, target, percentile, limit)
    n = log.n_cases
    if y.all() or not y.any():
        raise DataError(f"every case or no case has the problem ({desc}); the target has one "
                        "class only")
    if features is None:
        feats = case_features(log, before=before, behaviour=behaviour)
    else:
        feats = features
        if len(feats) != n:
            raise DataError(f"features have {len(feats)} rows but the log has {n} cases")
    msl = max(5, n // 100) if min_samples_leaf is None else int(min_samples_leaf)
    tree = TreeClassifier(criterion=criterion, max_depth=max_depth, min_samples_leaf=msl,
                          missing_values="route").fit(feats, y)
    rules = tree.rules()
    n_true = rules["n_True"].to_numpy() if "n_True" in rules else np.zeros(len(rules))
    cases = rules["n_samples"].to_numpy()
    share = n_true / np.maximum(cases, 1)
    base = float(y.mean())
    order = np.lexsort((-cases, -share))
    leaves = make_frame({
        "rule": Col(rules["rule"].to_numpy()[order]),
        "cases": Col(cases[order].astype(np.int64)),
        "problem_cases": Col(n_true[order].astype(np.int64)),
        "share": Col(share[order]),
        "lift": Col(share[order] / base),
        "coverage": Col(n_true[order] / y.sum()),
        "leaf": Col(rules["leaf"].to_numpy()[order]),
    }, kind)
    return RootCauseResult(leaves, base, int(y.sum()), desc, tree, feats, y)


# ---------------------------------------------------------------------------------- decision points
class DecisionPointResult:
    """Outcome of :func:`decision_points`.

    Attributes
    ----------
    summary : DataFrame
        One row per decision point: ``activity``, ``samples``, ``successors`` (text),
        ``majority_share`` (accuracy of always guessing the most common successor),
        ``cv_accuracy`` and ``cv_std`` (cross-validated accuracy of the tree), ``cv``
        (the splitting used).
    rules : dict
        Activity -> rules DataFrame of its tree (fitted on all samples).
    trees : dict
        Activity -> fitted :class:`~tracemill.tree.TreeClassifier`.
    caution : str
    """

    def __init__(self, summary: Any, rules: dict[str, Any], trees: dict[str, Any]) -> None:
        self.summary = summary
        self.rules = rules
        self.trees = trees
        self.caution = CAUTION

    def __repr__(self) -> str:
        return f"DecisionPointResult(n_points={len(self.summary)})"

    def to_text(self, top: int = 3) -> str:
        """The decision points best explained by the attributes, with their top rules."""
        s = self.summary.assign(gain=self.summary["cv_accuracy"] - self.summary["majority_share"])
        lines = []
        for r in s.sort_values("gain", ascending=False).head(top).itertuples():
            lines.append(f"After '{r.activity}' ({r.samples:,} times; next: {r.successors}): "
                         f"cross-validated accuracy {r.cv_accuracy:.0%} vs {r.majority_share:.0%} "
                         "by always guessing the most common")
            rl = self.rules[r.activity].sort_values("n_samples", ascending=False).head(3)
            for q in rl.itertuples():
                lines.append(f"    IF {q.rule} THEN {q.prediction} ({q.confidence:.0%} of "
                             f"{q.n_samples})")
        lines.append(self.caution)
        return "\n".join(lines)


def _decision_samples(log: Any) -> tuple[Any, np.ndarray, np.ndarray, np.ndarray]:
    """Event-level features known at each event (case attributes, latest event attribute values,
    elapsed time), the activity of each event, its successor ('(end)' after the last event) and
    the case of each event."""
    import pandas as pd

    frame = log.to_frame("pandas")
    arr = log.arrays()
    case = arr["case"].astype(np.int64)
    off = arr["offsets"]
    names = np.asarray(log.activities, dtype=object)
    act = names[arr["activity"]]
    nxt = np.empty(len(act), dtype=object)
    nxt[:-1] = act[1:]
    last = np.zeros(len(act), dtype=bool)
    last[off[1:] - 1] = True
    nxt[last] = "(end)"
    case_attr = [t[0] for t in log.handle.case_attrs()]
    skip = {"case", "activity", "timestamp", "lifecycle", *case_attr}
    ev_cols = [c for c in frame.columns if c not in skip]
    feats = pd.DataFrame(index=frame.index)
    for t in log.handle.case_attrs():
        feats[t[0]] = _attr_values(t)[case]
    if ev_cols:
        filled = frame[ev_cols].groupby(case).ffill()
        for c in ev_cols:
            col = filled[c]
            feats[c] = (col.astype(object).where(col.notna(), None)
                        if not pd.api.types.is_numeric_dtype(col) else col.astype(float))
    t = arr["time"]
    feats["elapsed_hours"] = (t - t[off[:-1]][case]) / NS_PER_HOUR
    return feats, act, nxt, case


def decision_points(log: Any, *, activities: Sequence[str] | None = None,
                    choice_points: Mapping[str, Sequence[str]] | Callable[[Any], Any] | None
                    = None, include_end: bool = True, min_samples: int = 20, max_depth: int = 3,
                    min_samples_leaf: int = 5, cv: int = 5, random_state: int = 0,
                    kind: str = "pandas") -> DecisionPointResult:
    """Learn why cases take one successor or another at each choice in the process.

    For every activity with more than one observed successor (the next activity in the case, or
    '(end)' when ``include_end``), a tree predicts the successor from what is known when the
    activity happens: the case attributes, the latest value of every event attribute (and the
    resource) up to and including that event, and the time elapsed since the case started.

    Parameters
    ----------
    activities : list of str, optional
        Only these decision activities.
    choice_points : mapping or callable, optional
        Hook for a discovered process model: ``{activity: [successor, ...]}`` (or a callable
        taking the log and returning one) naming the model's choices. Only those activities are
        analysed, and successors outside the listed branches are grouped as '(other)'. Without
        it, choices come from the log alone (directly-follows successors).
    include_end : bool, default=True
        Count the end of the case as a successor.
    min_samples : int, default=20
        Skip activities with fewer occurrences.
    max_depth, min_samples_leaf : int
        Tree settings (shallow trees give readable guards).
    cv : int, default=5
        Folds for the accuracy estimate: stratified; grouped by case when a case passes the
        activity more than once (so one case never trains and tests the same tree); fewer folds
        when a successor is rare.
    random_state : int, default=0
        Seed of the fold shuffling.

    Returns
    -------
    DecisionPointResult

    References
    ----------
    Rozinat & van der Aalst (2006), decision mining at choice points, BPM 2006, LNCS 4102.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> rows = []
    >>> for c in range(80):
    ...     bike = "e-bike" if c % 2 else "city"
    ...     nxt = "Order parts" if bike == "e-bike" else "Repair"
    ...     t0 = pd.Timestamp("2025-01-01") + pd.Timedelta(hours=c)
    ...     t1 = t0 + pd.Timedelta(hours=1)
    ...     rows += [(f"r{c}", "Inspect", t0, bike), (f"r{c}", nxt, t1, bike)]
    >>> log = tm.EventLog.from_frame(pd.DataFrame(rows, columns=["case", "step", "at", "bike"]),
    ...                              case="case", activity="step", timestamp="at",
    ...                              case_attributes=["bike"])
    >>> res = tm.explain.decision_points(log, include_end=False)
    >>> res.summary[["activity", "cv_accuracy"]].values.tolist()
    [['Inspect', 1.0]]
    """
    import pandas as pd

    feats, act, nxt, case = _decision_samples(log)
    cps = choice_points(log) if callable(choice_points) else choice_points
    keep = np.ones(len(act), dtype=bool) if include_end else nxt != "(end)"
    wanted = list(cps.keys()) if cps is not None else (
        list(activities) if activities is not None else list(dict.fromkeys(act[keep].tolist())))
    if activities is not None:
        missing = [a for a in activities if a not in log.activities]
        if missing:
            raise _param("activities", f"unknown activities {missing[:5]}")
    rows = []
    rules: dict[str, Any] = {}
    trees: dict[str, Any] = {}
    for a in wanted:
        sel = keep & (act == a)
        y = nxt[sel].copy()
        if cps is not None:
            branches = set(cps[a])
            y = np.asarray([v if v in branches else "(other)" for v in y.tolist()], dtype=object)
        labels, counts = np.unique(y.astype(str), return_counts=True)
        if len(labels) < 2 or sel.sum() < min_samples:
            continue
        X = feats[sel].reset_index(drop=True)
        groups = case[sel]
        est = TreeClassifier(max_depth=max_depth, min_samples_leaf=min_samples_leaf,
                             missing_values="route")
        repeated = len(np.unique(groups)) < len(groups)
        k = int(min(cv, counts.min())) if not repeated else int(min(cv, len(np.unique(groups))))
        if repeated and k >= 2:
            splitter: Any = GroupKFold(k)
            how = f"group {k}-fold by case"
        elif k >= 2:
            splitter = StratifiedKFold(k, shuffle=True, random_state=random_state)
            how = f"stratified {k}-fold"
        else:
            k = int(min(cv, len(y)))
            splitter = KFold(k, shuffle=True, random_state=random_state)
            how = f"{k}-fold (a successor is too rare to stratify)"
        y_s = y.astype(str)
        try:
            sc = cross_validate(est, X, y_s, cv=splitter, groups=groups)["score"].to_numpy()
        except DataError:
            # a training part with one successor only: report without a CV estimate
            sc = np.array([np.nan])
        est.fit(X, y_s)
        trees[a] = est
        rules[a] = est.rules(kind)
        succ = ", ".join(f"{lab} {c}" for lab, c in zip(labels, counts, strict=True))
        rows.append((a, int(sel.sum()), succ,
                     float(counts.max() / counts.sum()), float(np.nanmean(sc)),
                     float(np.nanstd(sc)), how))
    cols = list(zip(*rows, strict=False)) if rows else [[]] * 7
    summary = make_frame({
        "activity": Col(np.asarray(cols[0], dtype=object)),
        "samples": Col(np.asarray(cols[1], dtype=np.int64)),
        "successors": Col(np.asarray(cols[2], dtype=object)),
        "majority_share": Col(np.asarray(cols[3], dtype=np.float64)),
        "cv_accuracy": Col(np.asarray(cols[4], dtype=np.float64)),
        "cv_std": Col(np.asarray(cols[5], dtype=np.float64)),
        "cv": Col(np.asarray(cols[6], dtype=object)),
    }, kind)
    del pd
    return DecisionPointResult(summary, rules, trees)


# ---------------------------------------------------------------------------------- demo
def demo_section(log: Any, truth: Any) -> str:
    """The demo section: why the scenario's slow cases are slow, and the planted drift found.

    ``truth`` needs ``segment`` (segment index per case), ``segment_names``, ``change_time``
    (int ns or None) and ``after_change`` (bool per case).
    """
    from .drift import detect_drift

    out = ["Why are slow cases slow? (a tree on case attributes and activity counts)"]
    rc = root_causes(log, "slow", percentile=90)
    out.append(rc.to_text(top=3))
    seg = np.asarray(truth.segment)
    names = list(truth.segment_names)
    slow = rc.y
    lines = []
    for k, nm in enumerate(names):
        m = seg == k
        if m.any():
            lines.append(f"{nm} {slow[m].mean():.0%}")
    out.append("Planted truth, share of slow cases per segment: " + ", ".join(lines))
    top_leaf = int(rc.leaves["leaf"].iloc[0])
    in_top = rc.tree.apply(rc.features) == top_leaf
    if in_top.any():
        counts = np.bincount(seg[in_top], minlength=len(names))
        k = int(np.argmax(counts))
        out.append(f"The top rule's cases are {counts[k] / in_top.sum():.0%} from segment "
                   f"'{names[k]}'.")
    out.append("")
    out.append("Did the process change? (adjacent windows of cases, chi-square and KS tests)")
    dr = detect_drift(log)
    out.append(dr.to_text())
    if getattr(truth, "change_time", None) is not None and len(dr.changes):
        start = log.handle.case_stats()[0]
        planted = int(np.sum(start < int(truth.change_time)))
        got = dr.changes["position"].to_numpy()
        best = got[np.argmin(np.abs(got - planted))]
        out.append(f"Planted change before case #{planted} in start order; nearest detected at "
                   f"#{best} ({abs(best - planted) / log.n_cases:.1%} of the cases away).")
    return "\n".join(out)
