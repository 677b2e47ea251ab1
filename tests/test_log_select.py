"""Selections against pandas computations on the input frame.

Every selection is a set of cases in log order; the reference set is computed with pandas from
the raw rows (group-by on the case id, ``Series.unique`` for first-appearance order).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from conftest import SHAPES, build, random_event_frame
from scipy import stats

import tracemill as tm

SEL_SHAPES = [s for s in SHAPES if s.name in ("equal_times", "unsorted_int_ids")]


@pytest.fixture(scope="module", params=SEL_SHAPES, ids=[s.name for s in SEL_SHAPES])
def data(request: pytest.FixtureRequest) -> tuple[pd.DataFrame, tm.EventLog]:
    frame = random_event_frame(request.param)
    return frame, build(frame)


def in_log_order(frame: pd.DataFrame, keep: pd.Series) -> list[object]:
    """Case ids where ``keep`` (indexed by case id) is true, in first-appearance order."""
    order = frame["case"].unique()  # pandas: order of appearance
    return [c for c in order if keep[c]]


def per_case(frame: pd.DataFrame) -> pd.DataFrame:
    g = frame.groupby("case", sort=False)["timestamp"]
    return pd.DataFrame({"start": g.min(), "end": g.max(), "n": g.size()})


WINDOW_RULES = {
    # rule: (per-case stats, window) -> keep, written from the documented definitions with
    # pandas comparisons; the window is half-open [lo, hi).
    "contained": lambda pc, ev, lo, hi: (pc["start"] >= lo) & (pc["end"] < hi),
    "intersecting": lambda pc, ev, lo, hi: ev.assign(
        inside=(ev["timestamp"] >= lo) & (ev["timestamp"] < hi)).groupby(
        "case", sort=False)["inside"].any(),
    "started": lambda pc, ev, lo, hi: (pc["start"] >= lo) & (pc["start"] < hi),
    "completed": lambda pc, ev, lo, hi: (pc["end"] >= lo) & (pc["end"] < hi),
}


@pytest.mark.parametrize("rule", list(WINDOW_RULES))
def test_within(data, rule: str) -> None:
    frame, log = data
    pc = per_case(frame)
    times = np.sort(frame["timestamp"].unique())
    rng = np.random.default_rng(11)
    # windows whose bounds are event times (to exercise the half-open ends) or in between
    windows = [(times[0], times[-1]), (times[0], times[-1] + pd.Timedelta(1, "ns"))]
    for _ in range(2):
        a, b = np.sort(rng.choice(len(times), 2, replace=False))
        windows.append((times[a], times[b]))
        windows.append((times[a] - pd.Timedelta(1, "s"), times[b] + pd.Timedelta(1, "s")))
    for k, (lo, hi) in enumerate(windows):
        lo, hi = pd.Timestamp(lo), pd.Timestamp(hi)
        keep = WINDOW_RULES[rule](pc, frame, lo, hi)
        want = in_log_order(frame, keep)
        if not want:
            with pytest.raises(tm.DataError):
                log.within(lo, hi, rule=rule)  # type: ignore[arg-type]
            continue
        got = log.within(lo, hi, rule=rule)  # type: ignore[arg-type]
        assert got.case_ids.tolist() == want, (rule, lo, hi)
        # bounds as ISO text or as int ns select the same cases
        bounds = (lo.isoformat(), hi.isoformat()) if k % 2 else (lo.value, hi.value)
        assert log.within(*bounds, rule=rule).case_ids.tolist() == want  # type: ignore[arg-type]


def test_within_aware_bounds() -> None:
    frame = random_event_frame(SHAPES[1])
    aware = frame.assign(timestamp=frame["timestamp"].dt.tz_localize("UTC").dt.tz_convert(
        "Asia/Kolkata"))
    log = build(aware)
    lo = pd.Timestamp("2025-03-10 12:00", tz="Asia/Kolkata")
    hi = pd.Timestamp("2025-03-20 00:00", tz="Asia/Kolkata")
    pc = per_case(aware)
    want = in_log_order(aware, (pc["start"] >= lo) & (pc["end"] < hi))  # pandas, zone-aware
    assert log.within(lo, hi).case_ids.tolist() == want
    # the same instants given in another zone's offset notation
    assert log.within("2025-03-10T06:30:00Z", "2025-03-19T18:30:00+00:00").case_ids.tolist() \
        == want
    assert log.within(lo.tz_convert("America/New_York"), hi.to_pydatetime()).case_ids.tolist() \
        == want


@pytest.mark.parametrize("share", [0.05, 0.5, 0.9, 1.0])
def test_top_variants(data, share: float) -> None:
    frame, log = data
    sub = log.top_variants(share)
    # pandas: per-case activity tuples in log order (stable sort by time within the case;
    # groupby(sort=False) keeps first appearance), variant counts (count descending, ties by
    # first appearance) and their coverage
    seq = frame.sort_values("timestamp", kind="stable").groupby(
        "case", sort=False)["activity"].agg(tuple).reindex(frame["case"].unique())
    counts = seq.to_frame("v").groupby("v", sort=False).size().sort_values(
        ascending=False, kind="stable")
    coverage = counts.cumsum() / log.n_cases
    k = int(np.argmax(coverage.to_numpy() >= share)) + 1  # fewest variants reaching share
    keep_variants = set(counts.index[:k])
    want = [c for c, s in seq.items() if s in keep_variants]
    assert sub.case_ids.tolist() == want
    assert sub.n_cases / log.n_cases >= share
    assert sub.variants()["count"].tolist() == counts.iloc[:k].tolist()


def test_top_variants_exact_share() -> None:
    # 25 cases, variant counts 7, 6, 5, 4, 3: 28 % (7 of 25) is covered by the first variant
    # alone, although 0.28 * 25 is 7.000000000000001 in floating point (IEEE 754 double).
    assert 0.28 * 25 > 7 and 7 / 25 == 0.28
    rows = []
    for k, (seq, n) in enumerate([("ab", 7), ("ac", 6), ("ad", 5), ("ae", 4), ("af", 3)]):
        for j in range(n):
            rows += [(f"c{k}{j}", a, i) for i, a in enumerate(seq)]
    frame = pd.DataFrame(rows, columns=["case", "activity", "timestamp"])
    frame["timestamp"] = pd.to_datetime(frame["timestamp"], unit="h")
    log = build(frame)
    assert log.top_variants(0.28).n_cases == 7
    assert log.top_variants(0.56).n_cases == 18  # 13 of 25 fall short of 0.56
    assert log.top_variants(0.52).n_cases == 13
    assert log.top_variants(0.53).n_cases == 18


@pytest.mark.parametrize(("lo", "hi"), [(1, 1), (2, 3), (1, None), (4, None), (0, 2)])
def test_with_length(data, lo: int, hi: int | None) -> None:
    frame, log = data
    n = frame.groupby("case", sort=False).size()  # pandas group sizes
    keep = (n >= lo) & (n <= (hi if hi is not None else np.inf))
    want = in_log_order(frame, keep)
    if not want:
        with pytest.raises(tm.DataError):
            log.with_length(lo, hi)
        return
    sub = log.with_length(lo, hi)
    assert sub.case_ids.tolist() == want
    assert sub.n_events == int(n[keep].sum())


def test_sample_is_deterministic_and_uniform(data) -> None:
    _frame, log = data
    a = log.sample(10, random_state=3)
    b = log.sample(10, random_state=3)
    c = log.sample(10, random_state=4)
    assert a.case_ids.tolist() == b.case_ids.tolist()
    assert a.case_ids.tolist() != c.case_ids.tolist()
    ids = log.case_ids.tolist()
    pos = [ids.index(x) for x in a.case_ids.tolist()]
    assert pos == sorted(set(pos))  # distinct cases, in log order
    assert log.sample(frac=0.25, random_state=1).n_cases == round(0.25 * log.n_cases)
    assert log.sample(frac=1e-9).n_cases == 1
    # Uniform without replacement: each case is drawn with probability n / N. Chi-square
    # goodness of fit of the draw counts (scipy.stats.chisquare), 400 seeds.
    h = log.handle
    small_n = min(log.n_cases, 20)
    counts = np.zeros(log.n_cases)
    for seed in range(400):
        counts[h.sample_cases(small_n // 2, seed)] += 1
    assert stats.chisquare(counts).pvalue > 1e-4


def test_split_partitions_the_cases(data) -> None:
    _frame, log = data
    rng = np.random.default_rng(5)
    for labels in (rng.integers(-2, 3, log.n_cases),
                   rng.choice(np.array(["slow", "fast"]), log.n_cases)):
        parts = log.split(labels)
        assert list(parts) == sorted(set(labels.tolist()))  # keys: sorted distinct labels
        seen: list[object] = []
        for key, sub in parts.items():
            mask = labels == key
            ref = log.select_cases(mask)
            assert sub.case_ids.tolist() == log.case_ids[mask].tolist()
            for k, v in ref.arrays().items():
                assert np.array_equal(v, sub.arrays()[k]), k
            pd.testing.assert_frame_equal(sub.to_frame(), ref.to_frame())
            seen += sub.case_ids.tolist()
        assert sorted(map(str, seen)) == sorted(map(str, log.case_ids.tolist()))
        assert sum(p.n_events for p in parts.values()) == log.n_events


def test_select_by_ids_and_mask_and_where(data) -> None:
    frame, log = data
    ids = log.case_ids
    chosen = ids[::3][::-1]  # any order in, log order out
    sub = log.select_cases(chosen)
    assert sub.case_ids.tolist() == ids[::3].tolist()
    # pandas isin on the input rows gives the same events
    rows = frame[frame["case"].isin(chosen)]
    assert sub.n_events == len(rows)
    assert sorted(sub.arrays()["row"].tolist()) == rows.index.tolist()
    mask = np.zeros(log.n_cases, dtype=bool)
    mask[::3] = True
    assert log.select_cases(mask).case_ids.tolist() == ids[::3].tolist()
    n = frame.groupby("case", sort=False).size()
    long = log.where(lambda t: t["n_events"] >= 3)
    assert long.case_ids.tolist() == in_log_order(frame, n >= 3)
    # selections of selections keep the dictionaries and the original rows
    sub2 = sub.select_cases(sub.case_ids[:2])
    assert sub2.activities == log.activities
    assert set(sub2.arrays()["row"].tolist()) <= set(sub.arrays()["row"].tolist())
