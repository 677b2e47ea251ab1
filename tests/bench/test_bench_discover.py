"""Discovery and conformance at scale (absolute targets; there is no general-purpose peer).

Run with ``python -m pytest tests/bench/test_bench_discover.py -m bench -s`` after a release
build. The log is generated here from a random block-structured model over 30 activities
(seeded), 4000 distinct traces drawn with Zipf weights; about 10 M events
(TRACEMILL_BENCH_EVENTS) with 2 % noisy variants. Targets:

* directly-follows graph within 3x one numpy bincount over the same event pairs;
* inductive discovery with noise filtering under 2 s;
* token replay at least 2 M events/s;
* alignments of 1 M cases against a fitting model under 30 s.
"""

from __future__ import annotations

import os
import random
import time

import numpy as np
import pandas as pd
import pytest

import tracemill as tm

pytestmark = pytest.mark.bench
N_EVENTS = int(os.environ.get("TRACEMILL_BENCH_EVENTS", "10000000"))
N_ALIGN_CASES = int(os.environ.get("TRACEMILL_BENCH_ALIGN_CASES", "1000000"))
ACTS = [f"step {i:02d}" for i in range(30)]


def _tree(rng: random.Random, acts: list[str]):
    if len(acts) == 1:
        return acts[0]
    op = rng.choice(["sequence", "sequence", "choice", "parallel", "loop"])
    k = 2 if op == "loop" else rng.randint(2, min(4, len(acts)))
    cuts = sorted(rng.sample(range(1, len(acts)), k - 1))
    parts = [acts[i:j] for i, j in zip([0, *cuts], [*cuts, len(acts)], strict=True)]
    return (op, *[_tree(rng, p) for p in parts])


def _sample(rng: random.Random, t) -> list[str]:
    if isinstance(t, str):
        return [t]
    op, *kids = t
    if op == "sequence":
        return [a for k in kids for a in _sample(rng, k)]
    if op == "choice":
        return _sample(rng, rng.choice(kids))
    if op == "loop":
        out = _sample(rng, kids[0])
        while rng.random() < 0.3:
            out += _sample(rng, kids[1]) + _sample(rng, kids[0])
        return out
    parts = [_sample(rng, k) for k in kids]
    out = []
    while any(parts):
        p = rng.choice([q for q in parts if q])
        out.append(p.pop(0))
    return out


def _make(n_events: int, noise: float, seed: int, n_cases: int | None = None):
    rng = random.Random(seed)
    tree = _tree(rng, ACTS)
    variants = [_sample(rng, tree) for _ in range(4000)]
    for v in variants[: int(noise * len(variants))]:
        if len(v) > 2:
            i = rng.randrange(len(v) - 1)
            v[i], v[i + 1] = v[i + 1], v[i]
    npr = np.random.default_rng(seed)
    w = 1.0 / np.arange(1, len(variants) + 1) ** 0.8
    w /= w.sum()
    lens = np.array([len(v) for v in variants])
    if n_cases is None:
        n_cases = max(1, int(n_events / float((w * lens).sum())))
    pick = npr.choice(len(variants), size=n_cases, p=w)
    code = {a: i for i, a in enumerate(ACTS)}
    vcodes = [np.array([code[a] for a in v], dtype=np.int64) for v in variants]
    flat = np.concatenate(vcodes)
    voff = np.concatenate([[0], np.cumsum(lens)])
    clen = lens[pick]
    starts = voff[pick]
    case = np.repeat(np.arange(n_cases), clen)
    pos = np.arange(clen.sum()) - np.repeat(np.cumsum(clen) - clen, clen)
    act = flat[np.repeat(starts, clen) + pos]
    t = (np.datetime64("2025-01-06", "ns") + (case * 3600 + pos * 60).astype("timedelta64[s]"))
    frame = pd.DataFrame({"case": case, "activity": pd.Categorical.from_codes(act, ACTS),
                          "time": t})
    log = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time")
    return log, tm.ProcessTree.from_nested(tree), case, act


@pytest.fixture(scope="module")
def big():
    return _make(N_EVENTS, 0.02, 1)


def _best(fn, repeat=3):
    best = float("inf")
    out = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def test_dfg_vs_bincount(big):
    log, _, case, act = big
    same = case[1:] == case[:-1]
    pairs = (act[:-1] * 30 + act[1:])[same]
    t_np, _ = _best(lambda: np.bincount(pairs, minlength=900))
    fresh = lambda: log.select_cases(np.ones(log.n_cases, dtype=bool))  # noqa: E731
    t_freq, _ = _best(lambda: tm.DirectlyFollowsDiscovery(performance=False).fit(log))
    logs = [fresh() for _ in range(3)]
    it = iter(logs)
    t_perf, _ = _best(lambda: tm.DirectlyFollowsDiscovery().fit(next(it)))
    print(f"\n== directly-follows graph, {log.n_events:,} events, {log.n_cases:,} cases")
    print(f"  numpy bincount over the pairs          {t_np:8.3f} s")
    print(f"  tracemill DFG, counts + cases          {t_freq:8.3f} s  ({t_freq / t_np:.2f}x)")
    print(f"  tracemill DFG, + gap mean/median/p90   {t_perf:8.3f} s  ({t_perf / t_np:.2f}x)")


def test_inductive_noise(big):
    log = big[0]
    log.variants()  # the variant view is cached by the log; time discovery itself
    t, m = _best(lambda: tm.InductiveDiscovery(noise_threshold=0.2).fit(log))
    fresh = log.select_cases(np.ones(log.n_cases, dtype=bool))
    t0 = time.perf_counter()
    tm.InductiveDiscovery(noise_threshold=0.2).fit(fresh)
    t_cold = time.perf_counter() - t0
    print(f"\n== inductive discovery (IMf 0.2), {log.n_events:,} events")
    print(f"  variants cached {t:.3f} s; including variant computation {t_cold:.3f} s")
    print(f"  tree: {str(m.tree_)[:160]}")


def test_token_replay_rate(big):
    log, tree, *_ = big
    net = tree.to_petri_net()
    t, r = _best(lambda: tm.token_replay(net, log), repeat=2)
    print(f"\n== token replay, {log.n_events:,} events: {t:.3f} s = "
          f"{log.n_events / t / 1e6:.1f} M events/s (fitness {r.fitness:.4f})")


def test_alignments_1m_cases():
    log, tree, *_ = _make(0, 0.0, 2, n_cases=N_ALIGN_CASES)
    net = tree.to_petri_net()
    t0 = time.perf_counter()
    res = tm.align(net, log)
    t = time.perf_counter() - t0
    print(f"\n== alignments, {log.n_cases:,} cases, {log.n_events:,} events, fitting model: "
          f"{t:.2f} s (fitness {res.fitness:.4f}, gave up {res.n_gave_up_cases})")
