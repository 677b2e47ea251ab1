"""The demo: simulate the built-in bicycle-repair workshop and analyse it.

Every section of the demo prints plain text, so the whole run reads as a report.
"""

from __future__ import annotations

import time
from typing import Any

import numpy as np

from ._output import fmt_hours as _hours
from .log import EventLog


def _table(rows: list[list[str]], header: list[str]) -> str:
    widths = [max(len(str(r[i])) for r in [header, *rows]) for i in range(len(header))]
    line = "  ".join(h.ljust(w) for h, w in zip(header, widths, strict=False))
    out = [line, "  ".join("-" * w for w in widths)]
    out += ["  ".join(str(c).ljust(w) for c, w in zip(r, widths, strict=False)) for r in rows]
    return "\n".join("  " + x for x in out)


def _clip(text: str, width: int = 110) -> str:
    return text if len(text) <= width else text[: width - 3] + "..."


def summarise(log: EventLog, top: int = 5) -> str:
    """A readable summary of a log: size, top variants, durations, busiest transitions, and
    where waiting time piles up."""
    parts: list[str] = []
    full = log
    if log.handle.lifecycle() is not None:
        # One event per activity instance for variants and transitions; waits use all events.
        log = log.with_lifecycle("complete")
    ct = log.case_table()
    parts.append(
        f"{log.n_cases:,} cases, {log.n_events:,} events, {len(log.activities)} activities, "
        f"from {ct['start'].min():%Y-%m-%d} to {ct['end'].max():%Y-%m-%d}"
    )
    v = log.variants()
    rows = [[f"{r.count:,}", f"{r.share:.1%}", _clip(" > ".join(r.activities))]
            for r in v.head(top).itertuples()]
    parts.append(f"\nTop variants ({len(v):,} distinct):\n" + _table(rows, ["cases", "share",
                                                                           "activities"]))
    dur = ct["duration"].to_numpy().astype(np.int64)
    qs = np.percentile(dur, [10, 25, 50, 75, 90, 99])
    parts.append("\nCase duration percentiles: " + ", ".join(
        f"p{p} {_hours(q)}" for p, q in zip([10, 25, 50, 75, 90, 99], qs, strict=False)))
    df = log.directly_follows().sort_values("count", ascending=False).head(top)
    rows = [[f"{r.source} > {r.target}", f"{r.count:,}",
             _hours(r.median_gap.value), _hours(r.p90_gap.value)] for r in df.itertuples()]
    parts.append("\nBusiest transitions:\n" + _table(rows, ["transition", "count", "median gap",
                                                           "p90 gap"]))
    st = full.activity_stats()
    st = st[st["wait_total"].notna()].sort_values("wait_total", ascending=False).head(top)
    total = float(st["wait_total"].astype("int64").sum()) or 1.0
    rows = [[r.activity, _hours(r.wait_median.value), _hours(r.wait_mean.value),
             f"{r.wait_total.value / total:.0%}"] for r in st.itertuples()]
    parts.append("\nWhere waiting time piles up (wait before the activity starts):\n" + _table(
        rows, ["activity", "median wait", "mean wait", "share of top waits"]))
    return "\n".join(parts)


def _sections() -> list[tuple[str, Any]]:
    """The demo sections contributed by the capability modules, in reading order."""
    from types import SimpleNamespace

    from . import cluster, discover, explain, rules

    labels: list[Any] = []

    def per_group(log: EventLog, truth: Any, out: Any) -> str:
        # Models per cluster found in section 2 (per planted segment if clustering failed).
        if labels:
            k = int(labels[0].max()) + 1
            truth = SimpleNamespace(segment=labels[0],
                                    segment_names=[f"group {g}" for g in range(k)])
        return discover.demo_section(log, truth, out_dir=out)

    return [
        ("2. Groups of cases that behave alike (clustering) against the planted segments",
         lambda log, truth, out: cluster.demo_section(log, truth, labels_out=labels)),
        ("3. Process models per group of cases, checked against the log", per_group),
        ("4. Why slow cases are slow, and when the process changed",
         lambda log, truth, out: explain.demo_section(log, truth)),
        ("5. What goes together in cases: itemsets, rules and recurring orderings",
         lambda log, truth, out: rules.demo_section(log, truth)),
    ]


def run_demo(n_cases: int = 20_000, seed: int = 7, out: str | None = None) -> str:
    """Run every demo section and return the report text."""
    from .simulation import workshop

    t0 = time.perf_counter()
    log, truth = workshop(n_cases=n_cases, random_state=seed)
    t_sim = time.perf_counter() - t0
    sections: list[str] = [
        "tracemill demo: a simulated bicycle-repair workshop (invented data, for the demo only)",
        "=" * 78,
        f"Simulated {log.n_cases:,} repair orders in {t_sim:.2f} s "
        f"(segments planted: {', '.join(truth.segment_names)}).",
        "",
        "1. The log at a glance",
        "-" * 22,
        summarise(log),
    ]
    events = log.with_lifecycle("complete") if log.handle.lifecycle() is not None else log
    for title, section in _sections():
        sections += ["", title, "-" * len(title)]
        t1 = time.perf_counter()
        try:
            text = section(events, truth, out)
        except Exception as e:  # a failing section must not hide the others
            text = f"  (this section failed: {type(e).__name__}: {e})"
        sections.append(text)
        sections.append(f"  [{time.perf_counter() - t1:.2f} s]")
    sections.append(
        "\nCaution: event logs hold personal data in real use; follow your data-protection "
        "rules. Statistics show associations, not causes."
    )
    return "\n".join(sections)


