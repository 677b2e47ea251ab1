"""Log statistics against pandas and polars group-by computations on the same frame.

Every statistic is computed twice outside tracemill, once with pandas and once with polars, from
the raw input rows, and compared with tracemill exactly (integers exactly; durations as int64
nanoseconds). The reference order of events is the one tracemill documents: cases by first
appearance of their id, events of a case by timestamp, ties by input row.

Gap statistics are computed on int64 nanosecond columns: pandas' group-by quantile on a
timedelta column truncates its float interpolation to whole nanoseconds, whereas tracemill rounds
to the nearest nanosecond, so the float result of the integer column is the like-for-like
reference (both are then rounded the same way, with ``numpy.round``).
"""

from __future__ import annotations

from collections import Counter

import numpy as np
import pandas as pd
import polars as pl
import pytest
from conftest import SHAPES, build, random_event_frame, to_ns, values_of

# --------------------------------------------------------------------------- references


def pandas_sorted(frame: pd.DataFrame) -> pd.DataFrame:
    """Rows in log order, with _row (input row), _first (first row of the case), _t (ns),
    _prev (previous activity in the case) and _gap (ns since the previous event)."""
    df = frame.assign(_row=np.arange(len(frame)))
    df["_first"] = df.groupby("case", sort=False)["_row"].transform("min")
    # nullable Int64, so that the group-wise shift below stays exact (a float64 shift would
    # round 2025-era nanosecond timestamps to multiples of 256 ns)
    df["_t"] = df["timestamp"].dt.as_unit("ns").astype("int64").astype("Int64")
    df = df.sort_values(["_first", "_t", "_row"]).reset_index(drop=True)
    g = df.groupby("_first", sort=True)
    df["_prev"] = g["activity"].shift()
    df["_gap"] = df["_t"] - g["_t"].shift()
    return df


def polars_sorted(frame: pd.DataFrame) -> pl.DataFrame:
    """The same as :func:`pandas_sorted`, computed with polars."""
    df = pl.from_pandas(frame).with_row_index("_row")
    df = df.with_columns(
        _first=pl.col("_row").min().over("case"),
        _t=pl.col("timestamp").dt.cast_time_unit("ns").to_physical(),
    ).sort(["_first", "_t", "_row"])
    return df.with_columns(
        _prev=pl.col("activity").shift().over("_first"),
        _gap=(pl.col("_t") - pl.col("_t").shift()).over("_first"),
    )


def rnd(x: object) -> int:
    """A float nanosecond value rounded as tracemill's result tables round it."""
    return int(np.round(float(x)))  # type: ignore[arg-type]


def variants_pandas(frame: pd.DataFrame) -> list[tuple[tuple[str, ...], int]]:
    df = pandas_sorted(frame)
    seq = df.groupby("_first", sort=True)["activity"].agg(tuple)  # one tuple per case
    counts = seq.to_frame("v").groupby("v", sort=False).size()  # first appearance order
    counts = counts.sort_values(ascending=False, kind="stable")  # ties keep that order
    return [(tuple(k), int(v)) for k, v in counts.items()]


def variants_polars(frame: pd.DataFrame) -> list[tuple[tuple[str, ...], int]]:
    df = polars_sorted(frame)
    seq = df.group_by("_first", maintain_order=True).agg(pl.col("activity"))
    counts = (seq.group_by("activity", maintain_order=True).agg(pl.len())
              .sort("len", descending=True, maintain_order=True))
    return [(tuple(r[0]), int(r[1])) for r in counts.iter_rows()]


# --------------------------------------------------------------------------- tests


def test_case_order_is_first_appearance(event_frame: pd.DataFrame, event_log) -> None:
    log = event_log
    # pandas: Series.unique keeps order of appearance
    assert log.case_ids.tolist() == event_frame["case"].unique().tolist()
    # polars: Series.unique(maintain_order=True)
    assert log.case_ids.tolist() == pl.from_pandas(event_frame)["case"].unique(
        maintain_order=True).to_list()


def test_events_in_log_order(event_frame: pd.DataFrame, event_log) -> None:
    log = event_log
    arr = log.arrays()
    ref = pandas_sorted(event_frame)  # pandas sort_values by (first row of case, time, row)
    assert arr["row"].tolist() == ref["_row"].tolist()
    assert arr["time"].tolist() == ref["_t"].tolist()
    names = np.asarray(log.activities, dtype=object)
    assert names[arr["activity"]].tolist() == ref["activity"].tolist()
    refp = polars_sorted(event_frame)  # polars sort by the same keys
    assert arr["row"].tolist() == refp["_row"].to_list()
    # offsets: cumulative case sizes in case order (pandas groupby size)
    sizes = ref.groupby("_first", sort=True).size().to_numpy()
    assert arr["offsets"].tolist() == [0, *np.cumsum(sizes).tolist()]
    assert np.array_equal(np.diff(arr["offsets"]), np.bincount(arr["case"]))


def test_variants(event_frame: pd.DataFrame, event_log) -> None:
    log = event_log
    v = log.variants()
    got = [(tuple(a), int(c)) for a, c in zip(v["activities"], v["count"], strict=True)]
    assert got == variants_pandas(event_frame)  # pandas groupby of per-case tuples
    assert got == variants_polars(event_frame)  # polars group_by of per-case lists
    assert v["variant"].tolist() == list(range(len(v)))
    assert v["length"].tolist() == [len(a) for a, _ in got]
    assert np.allclose(v["share"], v["count"] / log.n_cases)
    # variant_of_cases / variant_cases agree with the per-case tuples (pandas groupby agg)
    seq = pandas_sorted(event_frame).groupby("_first", sort=True)["activity"].agg(tuple)
    rank = {a: i for i, (a, _) in enumerate(got)}
    assert log.variant_of_cases().tolist() == [rank[s] for s in seq]
    ids = log.case_ids
    for k in range(min(len(got), 5)):
        assert log.variant_cases(k).tolist() == ids[np.asarray(
            [rank[s] == k for s in seq])].tolist()


def test_case_table(event_frame: pd.DataFrame, event_log) -> None:
    log = event_log
    ct = log.case_table()
    # pandas: groupby(case, sort=False) keeps first-appearance order
    g = event_frame.assign(_t=event_frame["timestamp"].dt.as_unit("ns").astype("int64")).groupby(
        "case", sort=False)
    ref = g.agg(start=("_t", "min"), end=("_t", "max"), n=("_t", "size"),
                distinct=("activity", "nunique"))
    assert ct["case"].tolist() == ref.index.tolist()
    assert to_ns(ct["start"]).tolist() == ref["start"].tolist()
    assert to_ns(ct["end"]).tolist() == ref["end"].tolist()
    assert to_ns(ct["duration"]).tolist() == (ref["end"] - ref["start"]).tolist()
    assert ct["n_events"].tolist() == ref["n"].tolist()
    assert ct["repeats"].tolist() == (ref["n"] - ref["distinct"]).tolist()
    # polars: group_by(maintain_order=True)
    refp = (pl.from_pandas(event_frame)
            .group_by("case", maintain_order=True)
            .agg(start=pl.col("timestamp").min(), end=pl.col("timestamp").max(), n=pl.len(),
                 distinct=pl.col("activity").n_unique()))
    ctp = log.case_table("polars")
    assert ctp["case"].to_list() == refp["case"].to_list()
    assert to_ns(ctp["start"]).tolist() == to_ns(refp["start"]).tolist()
    assert to_ns(ctp["end"]).tolist() == to_ns(refp["end"]).tolist()
    assert to_ns(ctp["duration"]).tolist() == to_ns(refp["end"] - refp["start"]).tolist()
    assert ctp["n_events"].to_list() == refp["n"].to_list()
    assert ctp["repeats"].to_list() == (refp["n"] - refp["distinct"]).to_list()


def _df_from_log(log) -> dict[tuple[str, str], tuple[int, int, int, int, int]]:
    d = log.directly_follows()
    return {
        (s, t): (int(c), int(k), int(m), int(md), int(p))
        for s, t, c, k, m, md, p in zip(
            d["source"], d["target"], d["count"], d["cases"], to_ns(d["mean_gap"]),
            to_ns(d["median_gap"]), to_ns(d["p90_gap"]), strict=True)
    }


def test_directly_follows_pandas(event_frame: pd.DataFrame, event_log) -> None:
    log = event_log
    df = pandas_sorted(event_frame).dropna(subset=["_prev"])
    df = df.assign(_gap=df["_gap"].astype("int64"))
    g = df.groupby(["_prev", "activity"])
    agg = g.agg(count=("_gap", "size"), cases=("case", "nunique"), total=("_gap", "sum"),
                mean=("_gap", "mean"))
    median = g["_gap"].median()  # pandas groupby median
    p90 = g["_gap"].quantile(0.9)  # pandas groupby quantile, default interpolation='linear'
    ref = {
        k: (int(r["count"]), int(r["cases"]),
            # exact integer sum from pandas, divided as float (as any mean of int64 is)
            rnd(np.float64(r["total"]) / np.float64(r["count"])),
            rnd(median[k]), rnd(p90[k]))
        for k, r in agg.iterrows()
    }
    got = _df_from_log(log)
    assert got == ref
    # pandas' own (compensated float) mean agrees to within a nanosecond
    for k, r in agg.iterrows():
        assert abs(got[k][2] - r["mean"]) <= 1.0


def test_directly_follows_polars(event_frame: pd.DataFrame, event_log) -> None:
    log = event_log
    df = polars_sorted(event_frame).filter(pl.col("_prev").is_not_null())
    agg = df.group_by(["_prev", "activity"]).agg(
        count=pl.len(),
        cases=pl.col("case").n_unique(),
        total=pl.col("_gap").sum(),
        median=pl.col("_gap").median(),
        p90=pl.col("_gap").quantile(0.9, interpolation="linear"),
    )
    ref = {
        (r["_prev"], r["activity"]): (
            r["count"], r["cases"],
            rnd(np.float64(r["total"]) / np.float64(r["count"])),
            rnd(r["median"]), rnd(r["p90"]))
        for r in agg.iter_rows(named=True)
    }
    assert _df_from_log(log) == ref
    # pairs come sorted by (source code, target code)
    d = log.directly_follows()
    code = {a: i for i, a in enumerate(log.activities)}
    keys = [(code[s], code[t]) for s, t in zip(d["source"], d["target"], strict=True)]
    assert keys == sorted(keys)


def test_directly_follows_hand_example() -> None:
    # Gaps a->b of 1, 3 and 10 s: median 3 s; p90 = 3 + 0.8 * (10 - 3) = 8.6 s by linear
    # interpolation (numpy.quantile / pandas Series.quantile default), mean 14/3 s.
    frame = pd.DataFrame({
        "case": ["1", "1", "1", "1", "2", "2"],
        "activity": ["a", "b", "a", "b", "a", "b"],
        "timestamp": pd.to_datetime([0, 1, 2, 5, 0, 10], unit="s"),
    })
    d = build(frame).directly_follows().set_index(["source", "target"])
    assert d.loc[("a", "b"), "count"] == 3
    assert d.loc[("a", "b"), "cases"] == 2
    s = pd.Series([1, 3, 10]) * 10**9
    assert d.loc[("a", "b"), "median_gap"] == pd.Timedelta(int(s.median()), "ns")
    assert d.loc[("a", "b"), "p90_gap"] == pd.Timedelta(round(s.quantile(0.9)), "ns")
    assert d.loc[("a", "b"), "p90_gap"] == pd.Timedelta(seconds=8.6)
    assert d.loc[("a", "b"), "mean_gap"] == pd.Timedelta(round(14e9 / 3), "ns")
    assert d.loc[("b", "a"), "count"] == 1


def test_activity_stats_pandas(event_frame: pd.DataFrame, event_log) -> None:
    log = event_log
    st = log.activity_stats().set_index("activity")
    df = pandas_sorted(event_frame)
    firsts = df.groupby("_first", sort=True)["activity"].first()
    lasts = df.groupby("_first", sort=True)["activity"].last()
    per = df.groupby(["_first", "activity"]).size()  # occurrences of an activity in a case
    over = (per - 1).groupby(level="activity")
    acts = st.index
    ref = pd.DataFrame({
        "events": df["activity"].value_counts(),
        "cases": df.groupby("activity")["case"].nunique(),
        "starts": firsts.value_counts(),
        "ends": lasts.value_counts(),
        "rework_cases": over.apply(lambda x: int((x > 0).sum())),
        "repeats": over.sum(),
    }).reindex(acts).fillna(0).astype("int64")
    for col in ref.columns:
        assert st[col].tolist() == ref[col].tolist(), col
    # waits without lifecycle: gap before each event, grouped by its activity
    w = df.dropna(subset=["_prev"]).astype({"_gap": "int64"}).groupby("activity")["_gap"]
    wsum, wcount, wmed = w.sum(), w.size(), w.median()
    for a in acts:
        if a in wcount.index:
            assert to_ns(st.loc[[a], "wait_total"])[0] == wsum[a]
            assert to_ns(st.loc[[a], "wait_mean"])[0] == rnd(np.float64(wsum[a]) / wcount[a])
            assert to_ns(st.loc[[a], "wait_median"])[0] == rnd(wmed[a])
        else:
            assert pd.isna(st.loc[a, "wait_mean"])
    assert st["service_mean"].isna().all()


def test_activity_stats_polars(event_frame: pd.DataFrame, event_log) -> None:
    log = event_log
    st = log.activity_stats("polars")
    df = polars_sorted(event_frame)
    per_case = df.group_by("_first").agg(first=pl.col("activity").first(),
                                         last=pl.col("activity").last())
    occ = df.group_by(["_first", "activity"]).agg(n=pl.len())
    ref = (
        df.group_by("activity").agg(events=pl.len(), cases=pl.col("case").n_unique())
        .join(per_case.group_by("first").agg(starts=pl.len()).rename({"first": "activity"}),
              on="activity", how="left")
        .join(per_case.group_by("last").agg(ends=pl.len()).rename({"last": "activity"}),
              on="activity", how="left")
        .join(occ.group_by("activity").agg(
            rework_cases=(pl.col("n") > 1).sum(), repeats=(pl.col("n") - 1).sum()),
            on="activity", how="left")
        .fill_null(0)
    )
    cols = ["events", "cases", "starts", "ends", "rework_cases", "repeats"]
    got = {r["activity"]: tuple(r[c] for c in cols) for r in st.iter_rows(named=True)}
    want = {r["activity"]: tuple(r[c] for c in cols) for r in ref.iter_rows(named=True)}
    assert got == want


def test_duplicate_and_reorder_counts_match_pandas(event_frame: pd.DataFrame) -> None:
    # The warnings' counts: pandas DataFrame.duplicated over (case, activity, timestamp,
    # resource) (NaN equal to NaN, as pandas treats them) and, per case in input order, rows
    # earlier than the row before them (pandas groupby diff).
    n_dup = int(event_frame.duplicated(["case", "activity", "timestamp", "resource"]).sum())
    n_back = int((event_frame.groupby("case")["timestamp"].diff() < pd.Timedelta(0)).sum())
    import warnings

    import tracemill as tm

    with warnings.catch_warnings(record=True) as rec:
        warnings.simplefilter("always")
        tm.EventLog.from_frame(event_frame, case="case", activity="activity",
                               timestamp="timestamp", resource="resource")
    msgs = [str(w.message) for w in rec if issubclass(w.category, tm.DataQualityWarning)]
    dup = [m for m in msgs if "duplicate" in m]
    back = [m for m in msgs if "out of time order" in m]
    assert (int(dup[0].split()[0]) if dup else 0) == n_dup
    assert (int(back[0].split()[0]) if back else 0) == n_back
    assert len(msgs) == bool(n_dup) + bool(n_back)


@pytest.mark.parametrize("seed", range(3))
def test_selected_log_statistics_match_recomputation(seed: int) -> None:
    # A sub-log's statistics equal those of the sub-frame (pandas boolean indexing + the same
    # pandas references), so selections share dictionaries without leaking other cases.
    from conftest import SHAPES

    frame = random_event_frame(SHAPES[seed + 1])
    log = build(frame)
    rng = np.random.default_rng(seed)
    keep = rng.random(log.n_cases) < 0.5
    keep[0] = True
    sub = log.select_cases(keep)
    sub_frame = frame[frame["case"].isin(log.case_ids[keep])].reset_index(drop=True)
    v = sub.variants()
    got = [(tuple(a), int(c)) for a, c in zip(v["activities"], v["count"], strict=True)]
    assert got == variants_pandas(sub_frame)
    want = Counter(zip(sub_frame["case"], sub_frame["activity"], strict=True))
    have = Counter(zip(sub.to_frame()["case"], sub.to_frame()["activity"], strict=True))
    assert have == want


def lifecycle_frame(seed: int) -> pd.DataFrame:
    """Cases of activity instances, each a start and a later complete event, one after another
    (the next start follows the previous complete); lifecycle values in mixed spellings."""
    rng = np.random.default_rng(seed)
    rows = []
    for c in range(40):
        t = int(rng.integers(0, 10**6))
        for _ in range(int(rng.integers(1, 5))):
            a = str(rng.choice(["Inspect", "Repair", "Test ride"]))
            wait = int(rng.integers(0, 600))
            service = int(rng.integers(0, 3600))
            rows.append((f"r{c}", a, t + wait, str(rng.choice(["start", "START", "Start"]))))
            rows.append((f"r{c}", a, t + wait + service,
                         str(rng.choice(["complete", "COMPLETE"]))))
            t += wait + service
    f = pd.DataFrame(rows, columns=["case", "activity", "timestamp", "lifecycle"])
    f["timestamp"] = pd.to_datetime(f["timestamp"], unit="s")
    return f


@pytest.mark.parametrize("seed", [0, 1])
def test_lifecycle_service_and_wait(seed: int) -> None:
    frame = lifecycle_frame(seed)
    st = build(frame, lifecycle="lifecycle").activity_stats().set_index("activity")
    # pandas: each start is followed by its complete (rows alternate), so pairs are rows 2k and
    # 2k+1; the wait before an instance is its start minus the previous complete of the case.
    t = frame["timestamp"].dt.as_unit("ns").astype("int64")
    starts, ends = frame.iloc[0::2].reset_index(drop=True), t.iloc[1::2].to_numpy()
    inst = starts.assign(start=t.iloc[0::2].to_numpy(), end=ends)
    inst["service"] = inst["end"] - inst["start"]
    inst["wait"] = inst["start"] - inst.groupby("case")["end"].shift()
    service = inst.groupby("activity")["service"]
    wait = inst.dropna(subset=["wait"]).groupby("activity")["wait"]
    for a in st.index:
        assert to_ns(st.loc[[a], "service_mean"])[0] == rnd(service.mean()[a])
        assert to_ns(st.loc[[a], "service_median"])[0] == rnd(service.median()[a])
        assert to_ns(st.loc[[a], "wait_total"])[0] == wait.sum()[a]
        assert to_ns(st.loc[[a], "wait_median"])[0] == rnd(wait.median()[a])
    assert st["events"].sum() == len(frame)


VIEWS = ["variants", "case_table", "directly_follows", "activity_stats"]


@pytest.mark.parametrize("view", VIEWS)
def test_result_tables_agree_across_kinds(view: str) -> None:
    # The polars and Arrow tables hold the pandas table's values (read back with polars'
    # converters); variant sequences are lists of strings there.
    frame = random_event_frame(SHAPES[4])
    log = build(frame, resource="resource", case_attributes=["bike"])
    want = values_of(getattr(log, view)("pandas"))
    if "activities" in want:
        want["activities"] = [list(t) for t in want["activities"]]
    q = getattr(log, view)("polars")
    assert isinstance(q, pl.DataFrame)
    assert values_of(q) == want
    a = getattr(log, view)("arrow")
    assert values_of(pl.from_arrow(a)) == want
    if view == "variants":
        assert q.schema["activities"] == pl.List(pl.String)
