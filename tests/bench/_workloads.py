"""Benchmark workloads for itemsets, rules and sequential patterns, run one per fresh process
so that each reports its own peak memory (ru_maxrss). Usage:
``python tests/bench/_workloads.py TASK SUPPORT`` prints a JSON line."""

from __future__ import annotations

import json
import resource
import sys
import time

import numpy as np

N_BASKETS, N_ITEMS, SEED = 100_000, 1_000, 42
N_SEQ, N_ACT = 20_000, 30


def baskets() -> list[list[int]]:
    """100 000 baskets over 1 000 items, mean size about 10, Zipf-like item popularity and
    40 planted patterns of 3-6 items, each planted in 1.5 % of the baskets."""
    rng = np.random.default_rng(SEED)
    pop = 1.0 / np.arange(1, N_ITEMS + 1) ** 0.8
    pop /= pop.sum()
    sizes = np.maximum(rng.poisson(8, N_BASKETS), 1)
    flat = rng.choice(N_ITEMS, size=int(sizes.sum()), p=pop)
    out = np.split(flat, np.cumsum(sizes)[:-1])
    lists = [set(x.tolist()) for x in out]
    for _ in range(40):
        pat = rng.choice(N_ITEMS, size=int(rng.integers(3, 7)), replace=False).tolist()
        for b in rng.choice(N_BASKETS, size=int(0.015 * N_BASKETS), replace=False).tolist():
            lists[b].update(pat)
    return [sorted(b) for b in lists]


def sequences() -> list[list[int]]:
    """20 000 sequences of length 5-40 over 30 activities: a random walk with a preferred
    successor per activity, plus a planted motif."""
    rng = np.random.default_rng(SEED)
    nxt = rng.integers(0, N_ACT, size=N_ACT)
    out = []
    for _ in range(N_SEQ):
        n = int(rng.integers(5, 41))
        s = [int(rng.integers(0, N_ACT))]
        for _ in range(n - 1):
            s.append(int(nxt[s[-1]]) if rng.random() < 0.4 else int(rng.integers(0, N_ACT)))
        out.append(s)
    return out


def main(task: str, support: float) -> None:
    """Run the task up to three times on the same data; report the best time (timeit's
    practice, which damps the noise of a shared machine) and the process's peak memory."""
    best = None
    for _ in range(3):
        r = once(task, support)
        if best is None or r["seconds"] < best["seconds"]:
            best = r
        if r["seconds"] > 5:  # long runs are stable enough; one is plenty
            break
    print(json.dumps(best))


def once(task: str, support: float) -> dict:
    if task.startswith("seq"):
        data = sequences()
    else:
        data = baskets()
    # Library imports are not part of the work being timed.
    import pandas as pd

    if task.startswith("tracemill") or task.startswith("seq_tracemill"):
        import tracemill  # noqa: F401
    elif task.startswith("pyfim"):
        import fim
    elif task.startswith("mlxtend"):
        import mlxtend.frequent_patterns  # noqa: F401
    elif task.startswith("seq_prefixspan"):
        import prefixspan  # noqa: F401
    n_out = 0
    t0 = time.perf_counter()
    if task == "mlxtend_itemsets" or task == "mlxtend_rules":
        import pandas as pd
        from mlxtend.frequent_patterns import association_rules, fpgrowth

        rows = np.repeat(np.arange(len(data)), [len(b) for b in data])
        cols = np.concatenate([np.asarray(b) for b in data])
        mat = np.zeros((len(data), N_ITEMS), dtype=bool)
        mat[rows, cols] = True
        df = pd.DataFrame(mat)
        t0 = time.perf_counter()  # mlxtend is timed on its prepared one-hot frame
        fi = fpgrowth(df, min_support=support, use_colnames=True)
        n_out = len(fi)
        if task == "mlxtend_rules":
            r = association_rules(fi, num_itemsets=len(data), metric="confidence",
                                  min_threshold=0.5)
            n_out = len(r)
    elif task in ("pyfim_itemsets", "pyfim_rules"):
        import fim

        if task == "pyfim_itemsets":
            n_out = len(fim.fpgrowth(data, target="s", supp=support * 100, report="a"))
        else:
            n_out = len(fim.fpgrowth(data, target="r", supp=support * 100, conf=50,
                                     mode="o", report="aXC"))
    elif task in ("tracemill_itemsets", "tracemill_rules"):
        import tracemill as tm

        t = tm.Transactions.from_lists(data)
        fi = tm.frequent_itemsets(t, support)
        n_out = len(fi)
        if task == "tracemill_rules":
            r = tm.association_rules(fi, min_confidence=0.5)
            n_out = len(r.to_frame())
        else:
            fi.to_frame()
    elif task.startswith("seq_prefixspan"):
        from prefixspan import PrefixSpan

        ps = PrefixSpan(data)
        if task.endswith("3"):
            ps.maxlen = 3
        n_out = len(ps.frequent(int(support * len(data))))
    elif task.startswith("seq_tracemill"):
        import tracemill as tm

        max_len = 3 if task.endswith("3") else None
        sp = tm.SequentialPatterns(support, max_len=max_len,
                                   return_cases="cases" in task).fit(data)
        n_out = len(sp.patterns_)
    else:
        raise SystemExit(f"unknown task {task}")
    secs = time.perf_counter() - t0
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    return {"task": task, "support": support, "seconds": secs, "peak_mb": peak, "n": n_out}


if __name__ == "__main__":
    main(sys.argv[1], float(sys.argv[2]))
