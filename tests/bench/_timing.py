"""Timing helpers for the side-by-side benchmarks."""

from __future__ import annotations

import os
import time
from collections.abc import Callable
from typing import Any


def best_of(
    fn: Callable[..., Any], repeat: int = 3, setup: Callable[[], Any] | None = None
) -> float:
    """The best wall time of ``repeat`` runs (``setup`` runs untimed before each)."""
    best = float("inf")
    for _ in range(repeat):
        arg = setup() if setup else None
        t0 = time.perf_counter()
        fn() if setup is None else fn(arg)  # type: ignore[call-arg]
        best = min(best, time.perf_counter() - t0)
    return best


def rss_mib() -> float:
    """Resident set size of this process (MiB), from /proc."""
    try:
        with open(f"/proc/{os.getpid()}/status") as f:
            for line in f:
                if line.startswith("VmRSS:"):
                    return int(line.split()[1]) / 1024
    except OSError:  # pragma: no cover
        pass
    return float("nan")


def report(title: str, rows: list[tuple[str, float, str, float]]) -> str:
    """Rows of (tracemill label, seconds, peer label, seconds) with the ratio peer / tracemill."""
    out = [f"\n== {title}"]
    for ours, t_ours, peer, t_peer in rows:
        out.append(f"  {ours:<44} {t_ours:8.3f} s | {peer:<40} {t_peer:8.3f} s | "
                   f"ratio {t_peer / t_ours:6.2f}x")
    text = "\n".join(out)
    print(text)
    return text
