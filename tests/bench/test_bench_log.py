"""Event-log core versus polars and pandas on the same 1 M-case simulated log.

Run with ``python -m pytest tests/bench/test_bench_log.py -m bench -s``. The log is simulated
once; each library then does the same work on the same data, and the ratio (peer time /
tracemill time) is printed. Sizes can be lowered with TRACEMILL_BENCH_CASES.
"""

from __future__ import annotations

import os
import tempfile

import numpy as np
import pytest

import tracemill as tm
from tracemill import _core

from ._timing import best_of, report, rss_mib

pytestmark = [pytest.mark.bench, pytest.mark.filterwarnings("ignore::tracemill.DataQualityWarning")]
N_CASES = int(os.environ.get("TRACEMILL_BENCH_CASES", "1000000"))


@pytest.fixture(scope="module")
def data():
    pl = pytest.importorskip("polars")
    log, _ = tm.workshop(N_CASES, random_state=1)
    frame = log.to_frame("polars").select("case", "activity", "timestamp")
    # Shuffle the rows so that ingest has to group and sort, as with a real export.
    perm = np.random.default_rng(0).permutation(frame.height)
    shuffled = frame[perm]
    return log, frame, shuffled, pl


def _fresh(log):
    """A copy of the log with empty caches (built outside the timed region)."""
    return log.select_cases(np.ones(log.n_cases, dtype=bool))


def test_ingest(data):
    log, _frame, shuffled, _pl = data
    pdf = shuffled.to_pandas()
    t_tm_pl = best_of(lambda: tm.EventLog.from_frame(shuffled, case="case", activity="activity",
                                                     timestamp="timestamp"), repeat=2)
    t_pl_sort = best_of(lambda: shuffled.sort(["case", "timestamp"]), repeat=2)
    t_tm_pd = best_of(lambda: tm.EventLog.from_frame(pdf, case="case", activity="activity",
                                                     timestamp="timestamp"), repeat=2)
    t_pd_sort = best_of(lambda: pdf.sort_values(["case", "timestamp"], kind="stable"), repeat=2)
    report(f"ingest, {log.n_events:,} events / {log.n_cases:,} cases (shuffled rows)", [
        ("EventLog.from_frame(polars)", t_tm_pl, "polars sort by case, time", t_pl_sort),
        ("EventLog.from_frame(pandas)", t_tm_pd, "pandas stable sort by case, time", t_pd_sort),
    ])


def test_views(data):
    log, frame, _shuffled, pl = data
    def ours_all(fresh):
        h = fresh.handle
        h.variants()
        h.case_stats()
        h.df_counts()

    # Every timed call runs on a fresh copy of the log (made untimed), so no cache helps.
    t_var = best_of(lambda f: f.handle.variants(), repeat=3, setup=lambda: _fresh(log))
    t_cs = best_of(lambda f: f.handle.case_stats(), repeat=3, setup=lambda: _fresh(log))
    t_df = best_of(lambda: log.handle.df_counts(), repeat=3)
    t_all = best_of(ours_all, repeat=3, setup=lambda: _fresh(log))

    codes = frame.with_columns(pl.col("activity").cast(pl.Categorical).to_physical())

    def pl_variants():
        return (codes.group_by("case", maintain_order=True).agg(pl.col("activity"))
                .group_by("activity").len())

    def pl_durations():
        return frame.group_by("case").agg(
            (pl.col("timestamp").max() - pl.col("timestamp").min()).alias("d"))

    def pl_df():
        return (codes.with_columns(nxt=pl.col("activity").shift(-1),
                                   same=pl.col("case") == pl.col("case").shift(-1))
                .filter(pl.col("same")).group_by(["activity", "nxt"]).len())

    tp_var = best_of(pl_variants, repeat=2)
    tp_dur = best_of(pl_durations, repeat=2)
    tp_df = best_of(pl_df, repeat=2)
    pdf = frame.to_pandas()

    def pd_durations():
        g = pdf.groupby("case", sort=False)["timestamp"]
        return g.max() - g.min()

    tpd_dur = best_of(pd_durations, repeat=2)
    arr = log.arrays()
    act = arr["activity"].astype(np.int64)
    na = len(log.activities)
    same = arr["case"][1:] == arr["case"][:-1]
    pair = (act[:-1] * na + act[1:])[same]
    t_np = best_of(lambda: np.bincount(pair, minlength=na * na), repeat=3)
    report(f"derived views, {log.n_events:,} events / {log.n_cases:,} cases", [
        ("variants", t_var, "polars group_by(list) + count", tp_var),
        ("case durations", t_cs, "polars group_by min/max", tp_dur),
        ("case durations", t_cs, "pandas groupby max - min", tpd_dur),
        ("directly-follows counts", t_df, "polars shift + group_by count", tp_df),
        ("directly-follows counts", t_df, "numpy bincount of precomputed pairs", t_np),
        ("all three views", t_all, "polars: the fastest three", tp_var + tp_dur + tp_df),
    ])


def test_xes_speed(data):
    log = data[0]
    sub = log.sample(min(100_000, log.n_cases), random_state=0)
    with tempfile.TemporaryDirectory() as d:
        path = os.path.join(d, "bench.xes")
        t_write = best_of(lambda: sub.to_xes(path), repeat=1)
        size = os.path.getsize(path)
        t_read = best_of(lambda: tm.EventLog.from_xes(path), repeat=2)
    mb = size / 1e6
    print(f"\n== XES: {sub.n_events:,} events, {mb:.1f} MB: read {mb / t_read:.0f} MB/s, "
          f"write {mb / t_write:.0f} MB/s")


def test_memory():
    before = rss_mib()
    handle, _, _, _ = _core.simulate(tm.simulation._workshop_text(), N_CASES, 5, None)
    after = rss_mib()
    # Size of every column the log holds (copies made after the RSS reading).
    arrays = list(handle.core_arrays())
    for t in [handle.resource(), handle.lifecycle(), *handle.event_attrs(), *handle.case_attrs()]:
        if t is not None:
            arrays += [a for a in (t[2], t[3]) if a is not None]
    cols = sum(a.nbytes for a in arrays) / 2**20
    print(f"\n== memory: log of {handle.n_events:,} events: RSS grew {after - before:.0f} MiB "
          f"(simulation and build included); its columns take {cols:.0f} MiB; ratio "
          f"{(after - before) / cols:.2f}")
