"""Small bicycle-workshop logs with a planted slow segment and a planted drift, for the tree,
root-cause and drift tests (our own generator; the project simulator may replace it)."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pandas as pd

import tracemill as tm

HOUR = pd.Timedelta(hours=1)


def workshop_log(n_cases: int = 1500, seed: int = 1, change_at: float | None = 0.6):
    """A log and its truth. Segment 1 ('e-bike under warranty') waits for parts from the maker;
    from case ``change_at * n`` on (by start time) a 'Safety check' follows every repair and
    repairs take longer."""
    rng = np.random.default_rng(seed)
    bikes = np.array(["city", "e-bike", "road", "cargo"])
    rows = []
    segment = np.zeros(n_cases, dtype=np.int64)
    after = np.zeros(n_cases, dtype=bool)
    change_idx = None if change_at is None else int(change_at * n_cases)
    t0 = pd.Timestamp("2025-01-06 08:00")
    for c in range(n_cases):
        bike = bikes[rng.integers(0, 4)]
        warranty = "yes" if rng.random() < 0.4 else "no"
        customer = "business" if rng.random() < 0.3 else "private"
        slow = bike == "e-bike" and warranty == "yes"
        segment[c] = int(slow)
        drifted = change_idx is not None and c >= change_idx
        after[c] = drifted
        t = t0 + c * 2 * HOUR + rng.uniform(0, 1) * HOUR
        case = f"R{c:05d}"
        mech = f"mech{rng.integers(0, 4)}"

        def ev(a, t, res=mech, case=case, bike=bike, warranty=warranty, customer=customer):
            rows.append((case, a, t, res, bike, warranty, customer))

        ev("Receive bike", t, "desk")
        t += rng.exponential(2) * HOUR
        ev("Inspect", t)
        if slow:
            t += rng.exponential(1) * HOUR
            ev("Order parts", t, "desk")
            t += (48 + rng.exponential(24)) * HOUR
            ev("Receive parts", t, "desk")
        elif rng.random() < 0.15:
            t += rng.exponential(1) * HOUR
            ev("Order parts", t, "desk")
            t += rng.exponential(8) * HOUR
            ev("Receive parts", t, "desk")
        t += rng.exponential(4 * (1.5 if drifted else 1.0)) * HOUR
        ev("Repair", t)
        if drifted:
            t += rng.exponential(1) * HOUR
            ev("Safety check", t)
        t += rng.exponential(1) * HOUR
        ev("Test ride", t)
        if rng.random() < 0.1:
            t += rng.exponential(3) * HOUR
            ev("Repair", t)
            t += rng.exponential(1) * HOUR
            ev("Test ride", t)
        t += rng.exponential(3) * HOUR
        ev("Hand over", t, "desk")
    frame = pd.DataFrame(rows, columns=["case", "activity", "time", "resource", "bike",
                                        "warranty", "customer"])
    log = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time",
                                 resource="resource",
                                 case_attributes=["bike", "warranty", "customer"])
    change_time = None
    if change_idx is not None:
        starts = frame.groupby("case", sort=True)["time"].min()
        change_time = int(starts.iloc[change_idx].value)
    truth = SimpleNamespace(segment=segment, segment_names=["standard", "e-bike under warranty"],
                            deviation=np.zeros(n_cases, dtype=np.int64),
                            deviation_names=["none"], change_time=change_time,
                            after_change=after)
    return log, truth
