"""Sequential patterns and episodes: Pei et al.'s example, the `prefixspan` package, brute-force
enumerators written from the published definitions, bad input."""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest

import tracemill as tm

PEI = [
    [["a"], ["a", "b", "c"], ["a", "c"], ["d"], ["c", "f"]],
    [["a", "d"], ["c"], ["b", "c"], ["a", "e"]],
    [["e", "f"], ["a", "b"], ["d", "f"], ["c"], ["b"]],
    [["e"], ["g"], ["a", "f"], ["c"], ["b"], ["c"]],
]


def test_pei_2001_example_database():
    # Pei et al. 2001 (ICDE), PrefixSpan's example at min_sup 2: 53 patterns, 6 / 22 / 21 / 4
    # of lengths 1-4; <a>-projected length-2 counts aa:2, ab:4, (ab):2, ac:4, ad:2, af:2
    # (REFERENCES.md section D).
    sp = tm.SequentialPatterns(min_support=2).fit(PEI)
    f = sp.patterns_
    assert len(f) == 53
    assert f.groupby("length").size().to_dict() == {1: 6, 2: 22, 3: 21, 4: 4}
    got = dict(zip(f["pattern"], f["count"], strict=False))
    want = {(("a",), ("a",)): 2, (("a",), ("b",)): 4, (("a", "b"),): 2, (("a",), ("c",)): 4,
            (("a",), ("d",)): 2, (("a",), ("f",)): 2}
    for k, v in want.items():
        assert got[k] == v
    four = set(f[f["length"] == 4]["pattern"])
    assert four == {(("a", "b"), ("d",), ("c",)), (("a",), ("b", "c"), ("a",)),
                    (("e",), ("a",), ("c",), ("b",)), (("e",), ("f",), ("c",), ("b",))}
    assert set(f[f["pattern"] == (("a",), ("b",))]["cases"].iloc[0].tolist()) == {0, 1, 2, 3}


def test_prefixspan_readme_database_and_closed():
    # prefixspan package README database (values recomputed, REFERENCES.md D): 14 patterns at
    # 2, 6 closed.
    db = [[0, 1, 2, 3, 4], [1, 1, 1, 3, 4], [2, 1, 2, 2, 0], [1, 1, 1, 2, 2]]
    assert len(tm.frequent_sequences(db, 2)) == 14
    closed = tm.frequent_sequences(db, 2, closed=True)
    assert dict(zip(closed["pattern"], closed["count"], strict=False)) == {
        (0,): 2, (1, 1, 1): 2, (1, 2, 2): 2, (1, 3, 4): 2, (1, 2): 3, (1,): 4}


def test_zaki_meira_string_database():
    # Zaki & Meira style string database (ours, REFERENCES.md D): 11 patterns at minsup 3.
    f = tm.frequent_sequences([list("CAGAAGT"), list("TGACAG"), list("GAAGT")], 3)
    assert {"".join(p) for p in f["pattern"]} == {"A", "AA", "AAG", "AG", "G", "GA", "GAA",
                                                   "GAAG", "GAG", "GG", "T"}


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_agrees_with_prefixspan_package(seed):
    # Oracle: the `prefixspan` package (item sequences), all and closed patterns.
    ps = pytest.importorskip("prefixspan")
    rng = np.random.default_rng(seed)
    db = [rng.integers(0, 6, size=int(rng.integers(1, 12))).tolist() for _ in range(60)]
    for minsup in (3, 8):
        want = {tuple(p): s for s, p in ps.PrefixSpan(db).frequent(minsup)}
        f = tm.frequent_sequences(db, minsup)
        assert dict(zip(f["pattern"], f["count"], strict=False)) == want
        # Closed by definition (no super-pattern with the same support), from the package's
        # full output. The package's own closed=True output is a superset here: it keeps
        # patterns such as (0, 5, 0, 3) whose super-pattern (0, 5, 5, 0, 3) has the same
        # support (an item inserted in the middle), so we check inclusion only.
        def sub(a, b):
            it = iter(b)
            return all(any(x == y for y in it) for x in a)

        want_c = {p: s for p, s in want.items() if not any(
            len(q) == len(p) + 1 and t == s and sub(p, q) for q, t in want.items())}
        fc = tm.frequent_sequences(db, minsup, closed=True)
        got_c = dict(zip(fc["pattern"], fc["count"], strict=False))
        assert got_c == want_c
        pkg_c = {tuple(p): s for s, p in ps.PrefixSpan(db).frequent(minsup, closed=True)}
        assert got_c.items() <= pkg_c.items()
        lim = ps.PrefixSpan(db)
        lim.maxlen = 3
        want3 = {tuple(p): s for s, p in lim.frequent(minsup)}
        f3 = tm.frequent_sequences(db, minsup, max_len=3)
        assert dict(zip(f3["pattern"], f3["count"], strict=False)) == want3


def _contains(seq, times, pat, gap, gap_t, min_sp, max_sp):
    n = len(seq)
    for pos in itertools.combinations(range(n), len(pat)):
        if any(seq[p] != x for p, x in zip(pos, pat, strict=False)):
            continue
        if gap is not None and any(b - a > gap for a, b in itertools.pairwise(pos)):
            continue
        if gap_t is not None and any(times[b] - times[a] > gap_t
                                     for a, b in itertools.pairwise(pos)):
            continue
        span = times[pos[-1]] - times[pos[0]]
        if (min_sp is not None and span < min_sp) or (max_sp is not None and span > max_sp):
            continue
        return True
    return False


def test_gap_and_span_constraints_on_a_log_brute_force():
    # Brute force written from the definitions (gaps between consecutive matched events, span
    # from first to last) on a small random log.
    rng = np.random.default_rng(4)
    rows = []
    for c in range(25):
        t = pd.Timestamp("2025-03-01") + pd.Timedelta(days=c)
        for _ in range(int(rng.integers(1, 8))):
            t += pd.Timedelta(hours=int(rng.integers(1, 5)))
            rows.append((f"c{c}", "PQR"[int(rng.integers(0, 3))], t))
    frame = pd.DataFrame(rows, columns=["case", "act", "at"])
    log = tm.EventLog.from_frame(frame, case="case", activity="act", timestamp="at")
    seqs = [g["act"].tolist() for _, g in frame.groupby("case", sort=False)]
    times = [((g["at"] - g["at"].iloc[0]) // pd.Timedelta(hours=1)).tolist()
             for _, g in frame.groupby("case", sort=False)]
    for gap, gap_t, min_sp, max_sp in [(1, None, None, None), (2, "3h", None, "8h"),
                                       (None, None, "4h", None)]:
        sp = tm.SequentialPatterns(min_support=3, max_len=3, max_gap_events=gap,
                                   max_gap_time=gap_t, min_span=min_sp, max_span=max_sp)
        got = dict(zip(sp.fit(log).patterns_["pattern"], sp.patterns_["count"], strict=False))
        def h(x):
            return (None if x is None else pd.Timedelta(x) // pd.Timedelta(hours=1))
        want = {}
        for L in (1, 2, 3):
            for pat in itertools.product("PQR", repeat=L):
                n = sum(_contains(s, t, pat, gap, h(gap_t), h(min_sp), h(max_sp))
                        for s, t in zip(seqs, times, strict=False))
                if n >= 3:
                    want[pat] = n
        assert got == want, (gap, gap_t, min_sp, max_sp)


def test_sequence_bad_input():
    db = [["a", "b"], ["a"]]
    with pytest.raises(tm.ParameterError) as e:
        tm.frequent_sequences(db, 1.5)
    assert e.value.parameter == "min_support"
    with pytest.raises(tm.ParameterError, match="above the number"):
        tm.frequent_sequences(db, 3)
    with pytest.raises(tm.ParameterError):
        tm.frequent_sequences(db, 1, max_gap_events=0)
    with pytest.raises(tm.ParameterError, match="closed"):
        tm.frequent_sequences(db, 1, closed=True, max_gap_events=2)
    with pytest.raises(tm.ParameterError, match="time"):
        tm.frequent_sequences(db, 1, max_span=5)
    with pytest.raises(tm.LimitError, match="max_patterns"):
        tm.frequent_sequences([list("abcdefgh")] * 3, 1, max_patterns=10)
    with pytest.raises(tm.NotFittedError):
        tm.SequentialPatterns().to_frame()
    sp = tm.SequentialPatterns(min_support=2, max_len=3)
    assert sp.get_params()["max_len"] == 3
    assert sp.set_params(max_len=2).max_len == 2


# ---------------------------------------------------------------- episodes
def _brute_episodes(streams, win, kind, size):
    """Every episode of up to `size` types: (windows containing it, minimal occurrences)."""
    types = sorted({e for s in streams for e, _ in s})
    out = {}
    eps = []
    for L in range(1, size + 1):
        if kind == "serial":
            eps += list(itertools.product(types, repeat=L))
        else:
            eps += list(itertools.combinations_with_replacement(types, L))

    def occurs(evs, ep):
        if kind == "serial":
            it = iter(e for e, _ in evs)
            return all(any(x == y for y in it) for x in ep)
        have = [e for e, _ in evs]
        return all(have.count(x) >= ep.count(x) for x in set(ep))

    for ep in eps:
        w = mo = 0
        for s in streams:
            if not s:
                continue
            ts, te = s[0][1], s[-1][1] + 1
            for t in range(ts - win + 1, te):
                w += occurs([x for x in s if t <= x[1] < t + win], ep)
            for a in range(ts, te):
                for b in range(a, min(a + win, te)):
                    def inside(lo, hi, s=s):
                        return [x for x in s if lo <= x[1] <= hi]
                    if occurs(inside(a, b), ep) and not occurs(inside(a + 1, b), ep) \
                            and not occurs(inside(a, b - 1), ep):
                        mo += 1
        out[ep] = (w, mo)
    total = sum(s[-1][1] + 1 - s[0][1] + win - 1 for s in streams if s)
    return out, total


@pytest.mark.parametrize("seed", [0, 1, 2, 3])
def test_episodes_match_brute_force_window_enumerator(seed):
    # Brute force from Mannila, Toivonen & Verkamo's definitions: every window is visited.
    rng = np.random.default_rng(seed)
    streams = []
    for _ in range(3):
        t = int(rng.integers(0, 4))
        s = []
        for _ in range(int(rng.integers(0, 9))):
            t += int(rng.integers(0, 3))
            s.append(("ABC"[int(rng.integers(0, 3))], t))
        streams.append(s)
    for kind in ("serial", "parallel"):
        for win in (2, 4):
            bf, total = _brute_episodes(streams, win, kind, 3)
            ep = tm.frequent_episodes(streams, win, kind=kind, min_frequency=0.15, max_size=3)
            got = {e: (w, m) for e, w, m in
                   ep.to_frame()[["episode", "windows", "minimal_occurrences"]].itertuples(
                       index=False)}
            want = {e: v for e, v in bf.items() if total and v[0] / total >= 0.15}
            assert got == want, (kind, win)
            assert ep.n_windows == total
            mi = tm.frequent_episodes(streams, win, kind=kind, measure="minepi",
                                      min_frequency=2, max_size=3)
            mf = mi.to_frame()
            got_m = dict(zip(mf["episode"], mf["minimal_occurrences"], strict=True))
            # Level-wise: frequent, and every sub-episode (one type less) frequent too.
            want_m: dict = {}
            for e in sorted(bf, key=len):
                subs = {e[:k] + e[k + 1:] for k in range(len(e))} if len(e) > 1 else set()
                if bf[e][1] >= 2 and all(x in want_m for x in subs):
                    want_m[e] = bf[e][1]
            assert got_m == want_m, (kind, win)


def test_worked_episode_example_and_rules():
    # Values computed from the definitions (REFERENCES.md D): win 3 -> 8 windows; A->B in 3,
    # {A,B} in 4, A->C->B in 1.
    s = [[("A", 1), ("B", 2), ("A", 4), ("C", 5), ("B", 6)]]
    ser = tm.frequent_episodes(s, 3, min_frequency=0.1, max_size=3).to_frame()
    d = dict(zip(ser["episode"], ser["windows"], strict=False))
    assert d[("A", "B")] == 3 and d[("A", "C", "B")] == 1
    par = tm.frequent_episodes(s, 3, kind="parallel", min_frequency=0.1).to_frame()
    assert dict(zip(par["episode"], par["windows"], strict=False))[("A", "B")] == 4
    r = tm.frequent_episodes(s, 3, min_frequency=0.1, max_size=3).rules(0.0)
    row = r[(r["antecedent"] == ("A",)) & (r["episode"] == ("A", "B"))]
    assert row["confidence"].iloc[0] == pytest.approx(3 / 6)


def test_episodes_on_a_log_by_case_and_resource():
    frame = pd.DataFrame({
        "case": ["r1", "r1", "r2", "r2", "r2"],
        "act": ["Inspect", "Repair", "Inspect", "Wash", "Repair"],
        "at": pd.to_datetime(["2025-01-01 09:00", "2025-01-01 09:20", "2025-01-01 09:10",
                              "2025-01-01 09:30", "2025-01-01 11:00"]),
        "who": ["Ana", "Ana", "Ben", "Ana", "Ben"],
    })
    log = tm.EventLog.from_frame(frame, case="case", activity="act", timestamp="at",
                                 resource="who")
    by_case = tm.frequent_episodes(log, "30min", min_frequency=0.01).to_frame()
    assert ("Inspect", "Repair") in set(by_case["episode"])
    by_res = tm.frequent_episodes(log, "30min", by="resource", min_frequency=0.01).to_frame()
    assert ("Repair", "Wash") in set(by_res["episode"])  # Ana: Repair 09:20, Wash 09:30


def test_episode_bad_input():
    s = [[("A", 1), ("B", 2)]]
    for w in (0, -5):
        with pytest.raises(tm.ParameterError) as e:
            tm.frequent_episodes(s, w)
        assert e.value.parameter == "window"
    with pytest.raises(tm.ParameterError):
        tm.frequent_episodes(s, 3, kind="general")
    with pytest.raises(tm.ParameterError):
        tm.frequent_episodes(s, 3, min_frequency=1.5)
    with pytest.raises(tm.ParameterError):
        tm.frequent_episodes(s, 3, measure="minepi", min_frequency=0.5)
    frame = pd.DataFrame({"case": ["a"], "act": ["x"], "at": pd.to_datetime(["2025-01-01"])})
    log = tm.EventLog.from_frame(frame, case="case", activity="act", timestamp="at")
    with pytest.raises(tm.ParameterError, match="resource"):
        tm.frequent_episodes(log, "1h", by="resource")
    with pytest.raises(tm.ParameterError, match="window"):
        tm.frequent_episodes(log, "-1h")
