"""A small generated workshop log with planted segments (until the simulator is available).

Each segment has its own route through the workshop; cases take optional steps and a small
share of steps is swapped or dropped, so segments overlap a little but stay recoverable.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

import tracemill as tm

ROUTES = {
    "puncture": ["Receive bike", "Inspect", "Remove wheel", "Patch tube", "Refit wheel",
                 "Test ride", "Hand over"],
    "drivetrain": ["Receive bike", "Inspect", "Order parts", "Parts arrive", "Replace chain",
                   "Adjust gears", "Test ride", "Invoice", "Hand over"],
    "service": ["Receive bike", "Clean", "Lubricate", "Adjust brakes", "Adjust gears",
                "Invoice", "Hand over"],
}
OPTIONAL = ["Call customer", "Quality check"]


def planted_log(n_cases: int = 600, seed: int = 0,
                noise: float = 0.05) -> tuple[tm.EventLog, np.ndarray]:
    """A log with ``n_cases`` cases and the planted segment of each case (in log order)."""
    rng = np.random.default_rng(seed)
    names = list(ROUTES)
    seg = rng.integers(0, len(names), size=n_cases)
    rows = []
    t0 = np.datetime64("2025-01-06T08:00")
    for c in range(n_cases):
        route = list(ROUTES[names[seg[c]]])
        if rng.random() < 0.3:
            route.insert(int(rng.integers(1, len(route))), OPTIONAL[int(rng.integers(0, 2))])
        if rng.random() < noise and len(route) > 3:
            i = int(rng.integers(1, len(route) - 2))
            route[i], route[i + 1] = route[i + 1], route[i]
        t = t0 + np.timedelta64(int(rng.integers(0, 60 * 24 * 30)), "m")
        for a in route:
            t = t + np.timedelta64(int(rng.exponential(90)) + 1, "m")
            rows.append((f"o{c:05d}", a, t, names[seg[c]]))
    frame = pd.DataFrame(rows, columns=["order", "step", "at", "segment"])
    log = tm.EventLog.from_frame(frame, case="order", activity="step", timestamp="at",
                                 case_attributes=["segment"])
    # map the planted segment to log case order
    truth = dict(zip(frame["order"], frame["segment"], strict=False))
    seg_log = np.array([names.index(truth[c]) for c in log.case_ids])
    return log, seg_log
