"""Shared fixtures: a small random event-log generator, hypothesis profiles, helpers.

Hypothesis profiles (``TRACEMILL_HYPOTHESIS_PROFILE``): ``fast`` (default, 50 examples),
``ci`` (the same, derandomized) and ``slow`` (1000 examples).

The generator is deliberately local to the tests (numpy ``Generator`` with fixed seeds) so that
the oracle tests do not depend on tracemill's own simulator. Its scenario is a bicycle-repair
workshop: cases are repair orders, activities are workshop steps.
"""

from __future__ import annotations

import functools
import os
import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, settings

import tracemill as tm

# --------------------------------------------------------------------------- hypothesis profiles

settings.register_profile(
    "fast", max_examples=50, deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)
settings.register_profile(
    "slow", max_examples=1000, deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)
# CI (.ci/run): as fast, but the same examples on every run and no example database.
settings.register_profile("ci", parent=settings.get_profile("fast"), derandomize=True,
                          database=None, print_blob=True)
settings.load_profile(os.environ.get("TRACEMILL_HYPOTHESIS_PROFILE", "fast"))

# --------------------------------------------------------------------------- random logs

STEPS = [
    "Receive bike", "Inspect", "Order parts", "Replace chain", "True wheel", "Adjust brakes",
    "Test ride", "Hand over", "Invoice", "Clean",
]
MECHANICS = ["Ana", "Bruno", "Chloé", "Dev", "Eşref"]
BASE = np.datetime64("2025-03-03T08:00:00", "ns").astype(np.int64)
SECOND = 1_000_000_000


@dataclass(frozen=True)
class Shape:
    """Parameters of one kind of random log."""

    name: str
    n_cases: int
    min_len: int
    max_len: int
    n_activities: int = 6
    tie_share: float = 0.1  # chance that an event has the same timestamp as the previous one
    max_gap_s: int = 2 * 24 * 3600
    tick_ns: int = SECOND  # timestamps are multiples of this
    int_ids: bool = False
    shuffle: bool = False  # rows in random order (else roughly by time, as exported)
    resource_nulls: float = 0.0
    seed: int = 0


SHAPES = [
    Shape("few_long", n_cases=4, min_len=40, max_len=150, seed=1),
    Shape("many_short", n_cases=400, min_len=1, max_len=4, n_activities=4, seed=2),
    Shape("equal_times", n_cases=60, min_len=2, max_len=12, n_activities=3, tie_share=0.6,
          max_gap_s=3, seed=3),
    Shape("int_ids", n_cases=80, min_len=1, max_len=9, int_ids=True, tick_ns=1_000_000,
          max_gap_s=600, seed=4),
    Shape("unsorted", n_cases=50, min_len=1, max_len=15, shuffle=True, tie_share=0.3,
          resource_nulls=0.2, seed=5),
    Shape("unsorted_int_ids", n_cases=120, min_len=2, max_len=6, int_ids=True, shuffle=True,
          n_activities=8, seed=6),
]


def random_event_frame(shape: Shape) -> pd.DataFrame:
    """A fresh copy of :func:`make_event_frame` (cached: the same shape gives the same frame)."""
    return _cached_frame(shape).copy()


@functools.cache
def _cached_frame(shape: Shape) -> pd.DataFrame:
    return make_event_frame(shape)


def make_event_frame(shape: Shape) -> pd.DataFrame:
    """A pandas frame with columns case, activity, timestamp (datetime64[ns], naive), resource,
    cost (float), parts (int), warranty (bool; a case attribute) and bike (str; a case
    attribute)."""
    rng = np.random.default_rng(shape.seed)
    lengths = rng.integers(shape.min_len, shape.max_len + 1, shape.n_cases)
    if shape.int_ids:
        # Random, unsorted ids so that first appearance differs from numeric order.
        ids: np.ndarray = rng.choice(10**9, size=shape.n_cases, replace=False).astype(np.int64)
    else:
        ids = np.array([f"R-{k:05d}" for k in rng.permutation(shape.n_cases) + 1], dtype=object)
    # Skewed activity choice so that variants repeat.
    p = rng.dirichlet(np.full(shape.n_activities, 0.7))
    acts = np.array(STEPS[: shape.n_activities], dtype=object)
    case_col, act_col, time_col = [], [], []
    ticks_per_s = SECOND // shape.tick_ns
    for cid, n in zip(ids, lengths, strict=True):
        start = rng.integers(0, 30 * 24 * 3600 * ticks_per_s)
        gaps = rng.integers(1, shape.max_gap_s * ticks_per_s + 1, n)
        gaps[0] = 0
        gaps[rng.random(n) < shape.tie_share] = 0
        t = BASE + (start + np.cumsum(gaps)) * shape.tick_ns
        case_col.extend([cid] * n)
        act_col.extend(rng.choice(acts, size=n, p=p))
        time_col.extend(t)
    n_ev = len(case_col)
    frame = pd.DataFrame({
        "case": np.array(case_col, dtype=ids.dtype),
        "activity": np.array(act_col, dtype=object),
        "timestamp": np.array(time_col, dtype=np.int64).view("datetime64[ns]"),
    })
    res = rng.choice(np.array(MECHANICS, dtype=object), size=n_ev)
    res[rng.random(n_ev) < shape.resource_nulls] = None
    frame["resource"] = res
    cost = np.round(rng.gamma(2.0, 20.0, n_ev), 2)
    cost[rng.random(n_ev) < 0.1] = np.nan
    frame["cost"] = cost
    frame["parts"] = rng.integers(0, 5, n_ev)
    per_case_warranty = dict(zip(ids.tolist(), rng.random(shape.n_cases) < 0.3, strict=True))
    per_case_bike = dict(zip(ids.tolist(), rng.choice(["city", "road", "cargo", "kids"],
                                                     shape.n_cases), strict=True))
    frame["warranty"] = frame["case"].map(per_case_warranty).astype(bool)
    frame["bike"] = frame["case"].map(per_case_bike).astype(object)
    if shape.shuffle:
        frame = frame.iloc[rng.permutation(n_ev)]
    else:
        # As exported by a system: ordered by time across cases (ties keep generation order).
        frame = frame.sort_values("timestamp", kind="stable")
    return frame.reset_index(drop=True)


@pytest.fixture(params=SHAPES, ids=[s.name for s in SHAPES])
def shape(request: pytest.FixtureRequest) -> Shape:
    return request.param


@pytest.fixture
def event_frame(shape: Shape) -> pd.DataFrame:
    return random_event_frame(shape)


@functools.cache
def _cached_log(shape: Shape) -> tm.EventLog:
    return build(_cached_frame(shape))


@pytest.fixture
def event_log(shape: Shape) -> tm.EventLog:
    """The log of :func:`event_frame` (built once per shape; logs are immutable)."""
    return _cached_log(shape)


SPEC = {"case": "case", "activity": "activity", "timestamp": "timestamp"}


def build(frame: Any, **kw: Any) -> tm.EventLog:
    """``EventLog.from_frame`` with the standard column names, accepting its data-quality
    warnings (unsorted rows and duplicates are expected in random logs)."""
    spec = {**SPEC, **kw}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", tm.DataQualityWarning)
        return tm.EventLog.from_frame(frame, **spec)


def to_ns(values: Any) -> np.ndarray:
    """Datetimes or durations (pandas, polars, pyarrow or numpy) as int64 ns; NaT -> min int."""
    mod = type(values).__module__.split(".")[0]
    if mod == "polars":
        import polars as pl

        dt = values.dtype
        if isinstance(dt, pl.Datetime):
            if dt.time_zone is not None:
                values = values.dt.convert_time_zone("UTC")
            values = values.dt.cast_time_unit("ns")
        elif isinstance(dt, pl.Duration):
            values = values.dt.cast_time_unit("ns")
        return values.to_physical().fill_null(np.iinfo(np.int64).min).to_numpy()
    if mod == "pyarrow":
        values = values.to_pandas()
    s = pd.Series(values)
    if isinstance(s.dtype, pd.DatetimeTZDtype):
        s = s.dt.tz_convert("UTC").dt.tz_localize(None)
    if s.dtype.kind == "M":
        s = s.astype("datetime64[ns]")
    elif s.dtype.kind == "m":
        s = s.astype("timedelta64[ns]")
    return s.to_numpy().view(np.int64)


def values_of(frame: Any) -> dict[str, list[object]]:
    """Column values of a pandas or polars frame as Python lists: any kind of null (None, NaN,
    NA, NaT) as None, datetimes as int ns UTC, durations as int ns."""
    out: dict[str, list[object]] = {}
    if type(frame).__module__.split(".")[0] == "polars":
        import polars as pl

        for c in frame.columns:
            s = frame[c]
            nulls = s.is_null().to_list()
            if isinstance(s.dtype, (pl.Datetime, pl.Duration)):
                vals = to_ns(s).tolist()
            elif s.dtype.is_float():
                nulls = (s.is_null() | s.is_nan()).to_list()
                vals = s.to_list()
            else:
                vals = s.to_list()
            out[c] = [None if m else v for v, m in zip(vals, nulls, strict=True)]
        return out
    for c in frame.columns:
        s = frame[c]
        if s.dtype.kind in "Mm" or isinstance(s.dtype, pd.DatetimeTZDtype):
            vals = to_ns(s).tolist()
        else:
            vals = s.tolist()
        out[str(c)] = [None if m else v for v, m in zip(vals, s.isna().tolist(), strict=True)]
    return out
