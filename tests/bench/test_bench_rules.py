"""Side-by-side benchmarks: tracemill against mlxtend and pyfim (itemsets, rules) and the
`prefixspan` package (sequential patterns), on the same data in one run. Each workload runs
in a fresh process so its peak memory (ru_maxrss) can be reported beside its time.

Run with ``python -m pytest tests/bench -m bench -s`` after a release build."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest

HERE = os.path.dirname(__file__)


def run(task: str, support: float) -> dict:
    out = subprocess.run([sys.executable, os.path.join(HERE, "_workloads.py"), task,
                          str(support)], capture_output=True, text=True, check=True,
                         timeout=1800)
    return json.loads(out.stdout.strip().splitlines()[-1])


def show(title: str, rows: list[dict], ours: str) -> None:
    base = next(r for r in rows if r["task"] == ours)
    print(f"\n{title}")
    for r in rows:
        ratio = r["seconds"] / base["seconds"]
        print(f"  {r['task']:<24} {r['seconds']:8.3f} s  peak {r['peak_mb']:7.0f} MB  "
              f"n={r['n']:<8} {'' if r is base else f'{ratio:6.1f}x tracemill time'}")


@pytest.mark.bench
@pytest.mark.parametrize("support", [0.01, 0.005])
def test_itemsets_and_rules_100k_baskets(support):
    pytest.importorskip("mlxtend")
    pytest.importorskip("fim")
    its = [run(t, support) for t in ("tracemill_itemsets", "pyfim_itemsets",
                                     "mlxtend_itemsets")]
    show(f"itemsets, 100k baskets x 1000 items, support {support} (seed 42)", its,
         "tracemill_itemsets")
    assert its[0]["n"] == its[2]["n"]
    rules = [run(t, support) for t in ("tracemill_rules", "pyfim_rules", "mlxtend_rules")]
    show(f"rules (confidence >= 0.5), support {support}", rules, "tracemill_rules")
    assert rules[0]["n"] == rules[2]["n"]


@pytest.mark.bench
def test_prefixspan_20k_sequences():
    pytest.importorskip("prefixspan")
    tasks = ["seq_tracemill3", "seq_prefixspan3", "seq_tracemill", "seq_tracemill_cases"]
    if os.environ.get("TRACEMILL_BENCH_LONG"):  # the unbounded peer run takes minutes
        tasks.append("seq_prefixspan")
    rows = [run(t, 0.05) for t in tasks]
    show("PrefixSpan, 20k sequences of length 5-40 over 30 activities, support 5% (seed 42)",
         rows, "seq_tracemill3")
    assert rows[0]["n"] == rows[1]["n"]
