"""Hypothesis strategies for event logs as pandas frames.

``event_frames()`` draws a pandas DataFrame of events together with the keyword arguments for
``EventLog.from_frame``: odd text (any Unicode but lone surrogates, quotes, markup characters, the
empty string, NUL), many equal timestamps, unsorted rows, nulls in the resource and in typed
attributes, and case attributes that are constant within a case apart from nulls.

Hypothesis draws the sizes and small pools of values (so that failures shrink to short, simple
values); a numpy generator seeded by a drawn integer picks each row's values from the pools, which
keeps drawing fast.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
from hypothesis import strategies as st

ODD = ["", " ", "<&>", "\"quoted\"", "it's", "a,b;c", "tab\there", "line\nbreak", "é", "ß",
       "🚲", "日本", "\u200b", "nul\x00byte", "\\", "null", "NaN", "None"]

texts = st.one_of(
    st.sampled_from(ODD),
    st.text(st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=6),
)

# 1970 .. ~2100 in ns
NS_MAX = 4_102_444_800 * 10**9
NAT = np.iinfo(np.int64).min


def pool(elements: st.SearchStrategy[Any], max_size: int = 4) -> st.SearchStrategy[list[Any]]:
    return st.lists(elements, min_size=1, max_size=max_size)


@st.composite
def event_frames(draw: st.DrawFn, *, max_cases: int = 6, max_len: int = 6,
                 tz: str | None = None) -> tuple[pd.DataFrame, dict[str, Any]]:
    """A frame of events and the ``from_frame`` keyword arguments for it."""
    n_cases = draw(st.integers(1, max_cases))
    if draw(st.booleans()):
        ids: list[Any] = draw(st.lists(st.integers(-(2**63), 2**63 - 1), min_size=n_cases,
                                       max_size=n_cases, unique=True))
        id_dtype: Any = np.int64
    else:
        ids = draw(st.lists(texts, min_size=n_cases, max_size=n_cases, unique=True))
        id_dtype = object
    activities = draw(pool(texts, 5))
    times = draw(pool(st.integers(0, NS_MAX)))  # few distinct values: many ties
    resources = draw(pool(st.one_of(st.none(), texts)))
    notes = draw(pool(st.one_of(st.none(), texts)))
    costs = draw(pool(st.one_of(st.just(float("nan")),
                                st.floats(allow_nan=False, allow_infinity=True))))
    parts = draw(pool(st.one_of(st.none(), st.integers(-(2**63), 2**63 - 1))))
    flags = draw(pool(st.one_of(st.none(), st.booleans()), 3))
    stamps = draw(pool(st.one_of(st.none(), st.integers(-NS_MAX, NS_MAX))))
    bikes = draw(st.lists(st.one_of(st.none(), texts), min_size=n_cases, max_size=n_cases))
    sizes = draw(st.lists(st.one_of(st.none(), st.integers(0, 9)), min_size=n_cases,
                          max_size=n_cases))
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))

    lengths = rng.integers(1, max_len + 1, n_cases)
    n = int(lengths.sum())
    case_idx = np.repeat(np.arange(n_cases), lengths)

    def pick(values: list[Any], dtype: Any = object) -> np.ndarray:
        arr = np.empty(len(values), dtype=dtype)
        arr[:] = values
        return arr[rng.integers(0, len(values), n)]

    perm = rng.permutation(n)  # unsorted rows
    case_idx = case_idx[perm]
    ts = pd.DatetimeIndex(pick(times, np.int64).view("datetime64[ns]"))
    if tz is not None:
        ts = ts.tz_localize("UTC").tz_convert(tz)
    # Case attributes: one value per case, some rows blanked (nulls are ignored).
    blank = rng.random(n) < 0.3
    bike = np.asarray([*bikes, None], dtype=object)
    frame = pd.DataFrame({
        "case": np.asarray(ids, dtype=id_dtype)[case_idx],
        "activity": pick(activities),
        "timestamp": ts,
        "resource": pick(resources),
        "note": pick(notes),
        "cost": pick(costs, np.float64),
        "parts": pd.array(pick(parts).tolist(), dtype="Int64"),
        "urgent": pd.array(pick(flags).tolist(), dtype="boolean"),
        "checked": pick([NAT if v is None else v for v in stamps], np.int64).view(
            "datetime64[ns]"),
        "bike": bike[np.where(blank, n_cases, case_idx)],
        "wheel_size": pd.array([sizes[c] for c in case_idx], dtype="Int64"),
    })
    spec = {
        "case": "case", "activity": "activity", "timestamp": "timestamp",
        "resource": "resource",
        "event_attributes": ["note", "cost", "parts", "urgent", "checked"],
        "case_attributes": ["bike", "wheel_size"],
    }
    return frame, spec
