"""Concept drift: did the process change over time?

Cases are ordered by start time and two adjacent windows of cases slide along the log. At each
position the windows are compared with statistical tests (the windowed approach of Bose, van
der Aalst, Žliobaitė, Pechenizkiy 2011 and the run-based test of Maaradji, Dumas, La Rosa,
Ostovar 2015):

* ``variants`` — counts of activity sequences, chi-square (or G) test of independence;
* ``activities`` — counts of events per activity, same test;
* ``directly_follows`` — counts of directly-follows pairs, same test;
* ``duration`` — case durations, two-sample Kolmogorov–Smirnov test.

A change point is declared where a behaviour's p-value stays below ``alpha`` for at least
``persistence`` consecutive positions; it is placed at the smallest p-value of that run, and
the output says what differs between the windows around it.

Notes
-----
Events of one case are not independent, so p-values of the activity and directly-follows tests
are approximate (too small when cases repeat activities); the variant test counts one item per
case. Many positions are tested: treat isolated small p-values with care, which is what
``persistence`` is for. A detected change is a change in the recorded behaviour, not its cause.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from . import _core
from ._output import Col, make_frame
from ._output import fmt_hours as _hours
from .exceptions import param_error as _param

__all__ = ["DriftResult", "chi2_sf", "detect_drift", "ks_test", "table_test"]

FEATURES = ("variants", "activities", "directly_follows", "duration")




class DriftResult:
    """The outcome of :func:`detect_drift`.

    Attributes
    ----------
    series : DataFrame
        One row per tested position: ``position`` (index in start order of the first case of
        the detection window), ``time`` (its start time), and ``p_<behaviour>`` /
        ``stat_<behaviour>`` for each behaviour.
    changes : DataFrame
        One row per change point: ``position``, ``time``, ``behaviours`` (those significant
        there), ``p_value`` (smallest), ``what_changed`` (a short description).
    window, step : int
        Window size and step in cases.
    """

    def __init__(self, series: Any, changes: Any, window: int, step: int, alpha: float,
                 order: np.ndarray) -> None:
        self.series = series
        self.changes = changes
        self.window = window
        self.step = step
        self.alpha = alpha
        self.order = order

    def __repr__(self) -> str:
        return (f"DriftResult(window={self.window}, step={self.step}, "
                f"n_changes={len(self.changes)})")

    def to_text(self) -> str:
        """A readable summary of the change points."""
        if len(self.changes) == 0:
            return (f"No change point: no behaviour stayed below p = {self.alpha} between "
                    f"windows of {self.window} cases.")
        lines = [f"{len(self.changes)} change point(s) (windows of {self.window} cases, "
                 f"alpha {self.alpha}):"]
        for r in self.changes.itertuples():
            lines.append(f"  case #{r.position} in start order ({r.time}): {r.behaviours}, "
                         f"p = {r.p_value:.2g}; {r.what_changed}")
        return "\n".join(lines)

    def plot(self, ax: Any = None) -> Any:
        """p-values over time (log scale) with the significance level and change points."""
        import matplotlib.pyplot as plt

        if ax is None:
            _, ax = plt.subplots(figsize=(9, 3.5))
        s = self.series
        for f in FEATURES:
            col = f"p_{f}"
            if col in s:
                ax.plot(s["time"], np.clip(s[col].to_numpy(dtype=float), 1e-300, 1), label=f)
        ax.set_yscale("log")
        ax.axhline(self.alpha, color="0.3", ls="--", lw=0.8, label=f"alpha {self.alpha}")
        for t in self.changes["time"]:
            ax.axvline(t, color="crimson", lw=1.2)
        ax.set_ylabel("p-value (adjacent windows)")
        ax.set_xlabel("start of the detection window")
        ax.legend(fontsize=8, loc="lower left")
        return ax


def _runs(mask: np.ndarray, persistence: int) -> list[tuple[int, int]]:
    out = []
    i = 0
    n = len(mask)
    while i < n:
        if mask[i]:
            j = i
            while j < n and mask[j]:
                j += 1
            if j - i >= persistence:
                out.append((i, j))
            i = j
        else:
            i += 1
    return out


def _describe(log: Any, order: np.ndarray, pos: int, w: int) -> str:
    arr = log.arrays()
    off, act = arr["offsets"], arr["activity"]
    names = log.activities
    ref, det = order[pos - w:pos], order[pos:pos + w]

    def per_case_counts(cases: np.ndarray) -> np.ndarray:
        idx = np.concatenate([np.arange(off[c], off[c + 1]) for c in cases])
        return np.bincount(act[idx], minlength=len(names)) / len(cases)

    a, b = per_case_counts(ref), per_case_counts(det)
    parts = []
    for k in np.argsort(-np.abs(b - a))[:2]:
        if abs(b[k] - a[k]) >= 0.02:
            parts.append(f"'{names[k]}' {a[k]:.2f} -> {b[k]:.2f} per case")
    _start, _end, dur, _ = log.handle.case_stats()
    d0, d1 = np.median(dur[ref]), np.median(dur[det])
    if d0 > 0 and abs(d1 / d0 - 1) >= 0.1:
        parts.append(f"median duration {_hours(d0)} -> {_hours(d1)}")
    return "; ".join(parts) or "small shifts in many frequencies"


def detect_drift(log: Any, *, window: int | None = None, step: int | None = None,
                 alpha: float = 0.001, persistence: int = 3, test: str = "chi2",
                 behaviours: tuple[str, ...] | list[str] = FEATURES,
                 kind: str = "pandas") -> DriftResult:
    """Find change points in a log by comparing adjacent windows of cases.

    Parameters
    ----------
    log : EventLog
    window : int, optional
        Cases per window (default: ``max(30, n_cases // 20)``). Two windows must fit in the log.
    step : int, optional
        Cases between tested positions (default ``max(1, window // 5)``).
    alpha : float, default=0.001
        Significance level of each test.
    persistence : int, default=3
        Consecutive significant positions needed to declare a change.
    test : {'chi2', 'g'}, default='chi2'
        Pearson's chi-square or the G-test for the count tables (no continuity correction).
    behaviours : sequence of str
        Any of 'variants', 'activities', 'directly_follows', 'duration'.

    Returns
    -------
    DriftResult

    Raises
    ------
    ParameterError
        A window larger than half the log, or a bad option.

    References
    ----------
    Bose, van der Aalst, Žliobaitė, Pechenizkiy (2011), Handling concept drift in process
    mining, CAiSE, LNCS 6741. Maaradji, Dumas, La Rosa, Ostovar (2015), Fast and accurate
    business process drift detection, BPM, LNCS 9253.

    Examples
    --------
    >>> import pandas as pd, tracemill as tm
    >>> rows = []
    >>> for c in range(200):
    ...     steps = ["Receive", "Repair", "Hand over"] if c < 100 else ["Receive", "Check",
    ...                                                                  "Repair", "Hand over"]
    ...     for k, a in enumerate(steps):
    ...         t = pd.Timestamp("2025-01-01") + pd.Timedelta(hours=c * 5 + k)
    ...         rows.append((f"r{c}", a, t))
    >>> log = tm.EventLog.from_frame(pd.DataFrame(rows, columns=["case", "step", "at"]),
    ...                              case="case", activity="step", timestamp="at")
    >>> res = tm.drift.detect_drift(log, window=40, step=5)
    >>> res.changes["position"].tolist()
    [100]
    """
    n = log.n_cases
    if window is None:
        window = max(30, n // 20)
    if step is None:
        step = max(1, window // 5)
    if test not in ("chi2", "g"):
        raise _param("test", f"test must be 'chi2' or 'g'; got {test!r}")
    if not 0 < alpha < 1:
        raise _param("alpha", f"alpha must be in (0, 1); got {alpha}")
    if int(persistence) < 1:
        raise _param("persistence", f"persistence must be >= 1; got {persistence}")
    bad = [b for b in behaviours if b not in FEATURES]
    if bad or not behaviours:
        raise _param("behaviours", f"behaviours must be among {FEATURES}; got {list(behaviours)}")
    order, pos, stat, p = _core.drift_series(log.handle, int(window), int(step), test == "g")
    start = log.handle.case_stats()[0]
    times = start[order[pos]]
    cols: dict[str, Col] = {"position": Col(pos), "time": Col(times, kind="time", tz=log._tz)}
    for j, f in enumerate(FEATURES):
        if f in behaviours:
            cols[f"p_{f}"] = Col(p[:, j])
            cols[f"stat_{f}"] = Col(stat[:, j])
    series = make_frame(cols, "pandas")
    # change points per behaviour, merged when closer than a window
    found: list[tuple[int, float, str]] = []
    for j, f in enumerate(FEATURES):
        if f not in behaviours:
            continue
        for a, b in _runs(p[:, j] < alpha, int(persistence)):
            seg = p[a:b, j]
            # smallest p; among equal ones (e.g. underflow to 0) the largest statistic, then
            # the middle of the tied stretch
            m = seg.min()
            ties = np.flatnonzero(seg == m)
            if len(ties) > 1:
                st = stat[a:b, j][ties]
                ties = ties[st == st.max()]
            k = a + int(ties[len(ties) // 2])
            found.append((k, float(p[k, j]), f))
    found.sort()
    merged: list[list[Any]] = []
    for k, pv, f in found:
        if merged and pos[k] - pos[merged[-1][0]] < window:
            g = merged[-1]
            g[2].append(f)
            if pv < g[1]:
                g[0], g[1] = k, pv
        else:
            merged.append([k, pv, [f]])
    ch_pos = np.asarray([pos[g[0]] for g in merged], dtype=np.int64)
    changes = make_frame({
        "position": Col(ch_pos),
        "time": Col(start[order[ch_pos]] if len(ch_pos) else np.zeros(0, np.int64), kind="time",
                    tz=log._tz),
        "behaviours": Col(np.asarray([", ".join(sorted(set(g[2]))) for g in merged],
                                     dtype=object)),
        "p_value": Col(np.asarray([g[1] for g in merged], dtype=np.float64)),
        "what_changed": Col(np.asarray([_describe(log, order, int(pos[g[0]]), int(window))
                                        for g in merged], dtype=object)),
    }, kind)
    return DriftResult(series if kind == "pandas" else make_frame(cols, kind), changes,
                       int(window), int(step), alpha, order)


def table_test(table: Any, *, test: str = "chi2") -> dict[str, float]:
    """Test of independence on a table of counts (rows = windows or groups).

    Returns ``statistic``, ``dof``, ``p_value`` and ``n_columns`` (columns that were not empty).
    No continuity correction is applied (scipy's ``chi2_contingency(..., correction=False)``);
    ``test='g'`` gives the G-test (``lambda_='log-likelihood'``).

    Examples
    --------
    >>> from tracemill.drift import table_test
    >>> round(table_test([[30, 20, 0], [10, 20, 20]])["statistic"], 6)
    30.0
    """
    if test not in ("chi2", "g"):
        raise _param("test", f"test must be 'chi2' or 'g'; got {test!r}")
    t = np.ascontiguousarray(table, dtype=np.float64)
    if t.ndim != 2:
        raise _param("table", f"table must be 2-D; got shape {t.shape}")
    stat, dof, p, nc = _core.table_test(t, test == "g")
    return {"statistic": stat, "dof": dof, "p_value": p, "n_columns": nc}


def ks_test(a: Any, b: Any, *, method: str = "auto") -> dict[str, float]:
    """Two-sample, two-sided Kolmogorov–Smirnov test: ``statistic`` (D) and ``p_value``.

    ``method='exact'`` counts lattice paths (Hodges 1957); 'asymp' uses the Kolmogorov limit;
    'auto' is exact up to ``len(a) * len(b) = 10**7``.

    Examples
    --------
    >>> from tracemill.drift import ks_test
    >>> r = ks_test(list(range(1, 11)), list(range(6, 16)))
    >>> round(r["statistic"], 3), round(r["p_value"], 6)
    (0.5, 0.167821)
    """
    limits = {"auto": 10_000_000, "exact": 2**63, "asymp": 0}
    if method not in limits:
        raise _param("method", f"method must be 'auto', 'exact' or 'asymp'; got {method!r}")
    x = np.ascontiguousarray(a, dtype=np.float64)
    y = np.ascontiguousarray(b, dtype=np.float64)
    d, p = _core.ks_2samp(x, y, limits[method])
    return {"statistic": d, "p_value": p}


def chi2_sf(x: float, dof: float) -> float:
    """Upper tail of the chi-square distribution, ``P(X > x)`` with ``dof`` degrees of
    freedom."""
    return float(_core.chi2_sf(float(x), float(dof)))
