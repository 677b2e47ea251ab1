"""Property tests: frame -> log -> frame loses nothing; pickling gives the same log back.

The expected frame is the input re-ordered as the log documents it (cases by first appearance,
events by timestamp, ties by input row; computed with pandas ``sort_values``), with each case
attribute broadcast from the case's first non-null value (pandas ``GroupBy.first``, which skips
nulls). Values are compared, not dtypes; the dtype changes that tracemill documents are checked
in ``test_output_dtypes``:

* pandas output: floats come back as nullable ``Float64`` (an input NaN is read as null), integer
  and boolean columns with nulls as ``Int64``/``boolean``, text as the default string dtype,
  times as ``datetime64[ns]`` (naive, or in the input's zone).
* polars output: ``String`` for text, ``Datetime("ns", zone)`` for times.

Run more examples with ``TRACEMILL_HYPOTHESIS_PROFILE=slow``.
"""

from __future__ import annotations

import pickle
import warnings

import numpy as np
import pandas as pd
import polars as pl
import pyarrow as pa
import pytest
from conftest import SHAPES, build, random_event_frame, values_of
from hypothesis import given
from hypothesis import strategies as st
from strategies import event_frames

import tracemill as tm


def expected(frame: pd.DataFrame, spec: dict) -> dict[str, list[object]]:
    """The input's values in log order (plain Python: sorted by first row of the case, time,
    input row), case attributes broadcast from their first non-null value in that order."""
    vals = values_of(frame)
    first: dict[object, int] = {}
    for i, c in enumerate(vals["case"]):
        first.setdefault(c, i)
    order = sorted(range(len(frame)),
                   key=lambda i: (first[vals["case"][i]], vals["timestamp"][i], i))
    out = {k: [v[i] for i in order] for k, v in vals.items()}
    for c in spec["case_attributes"]:
        per_case: dict[object, object] = {}
        for k, v in zip(out["case"], out[c], strict=True):
            if per_case.get(k) is None:
                per_case[k] = v
        out[c] = [per_case[k] for k in out["case"]]
    cols = ["case", "activity", "timestamp", "resource", *spec["event_attributes"],
            *spec["case_attributes"]]
    return {c: out[c] for c in cols}


def quiet_build(frame, spec: dict) -> tm.EventLog:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", tm.DataQualityWarning)
        return tm.EventLog.from_frame(frame, **spec)


KINDS = {
    "pandas": lambda f: f,
    "polars": pl.from_pandas,  # polars' converter: NaN -> null
    "arrow": lambda f: pa.Table.from_pandas(f, preserve_index=False),
}


@given(st.sampled_from(list(KINDS)), st.sampled_from(["pandas", "polars", "arrow"]),
       st.sampled_from([None, "UTC", "America/St_Johns"]).flatmap(
           lambda tz: event_frames(tz=tz)))
def test_frame_round_trip(kind: str, out_kind: str, drawn) -> None:
    frame, spec = drawn
    log = quiet_build(KINDS[kind](frame), spec)
    out = log.to_frame(out_kind)
    if out_kind == "arrow":
        out = pl.from_arrow(out)
    assert values_of(out) == expected(frame, spec)
    tz = frame["timestamp"].dt.tz
    assert out["timestamp"].dtype == pl.Datetime("ns", None if tz is None else str(tz)) \
        if out_kind != "pandas" else str(out["timestamp"].dt.tz) == str(tz)
    # every input row once
    assert sorted(log.arrays()["row"].tolist()) == list(range(len(frame)))


def assert_same(a: tm.EventLog, b: tm.EventLog, *, views: bool = True) -> None:
    aa, bb = a.arrays(), b.arrays()
    for k, v in aa.items():
        assert np.array_equal(v, bb[k]), k
    assert a.case_ids.tolist() == b.case_ids.tolist()
    assert a.activities == b.activities
    pd.testing.assert_frame_equal(a.to_frame(), b.to_frame())
    if views:
        pd.testing.assert_frame_equal(a.variants(), b.variants())
        pd.testing.assert_frame_equal(a.case_table(), b.case_table())


@given(event_frames())
def test_pickle_round_trip(drawn) -> None:
    frame, spec = drawn
    log = quiet_build(frame, spec)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no version-mismatch warning within one version
        back = pickle.loads(pickle.dumps(log))
    assert isinstance(back, tm.EventLog)
    # The views derive from the arrays; they are compared in the example-based test below.
    assert_same(log, back, views=False)


@pytest.mark.parametrize("zone", [None, "Europe/Berlin"])
def test_pickle_keeps_zone_rows_and_dictionary(zone: str | None) -> None:
    frame = random_event_frame(SHAPES[4])  # shuffled rows: input rows differ from log order
    if zone:
        frame["timestamp"] = frame["timestamp"].dt.tz_localize("UTC").dt.tz_convert(zone)
    log = build(frame, resource="resource", event_attributes=["cost", "parts"],
                case_attributes=["warranty", "bike"])
    sub = log.select_cases(log.case_ids[::7])  # shares the parent's activity dictionary
    for one in (log, sub):
        back = pickle.loads(pickle.dumps(one, protocol=pickle.HIGHEST_PROTOCOL))
        assert_same(one, back)
        assert str(back.to_frame()["timestamp"].dt.tz) == str(zone)
    # the row numbers still point into the original frame (pandas positional indexing)
    back = pickle.loads(pickle.dumps(sub))
    rows = back.arrays()["row"]
    assert frame["case"].iloc[rows].tolist() == back.to_frame()["case"].tolist()


def test_output_dtypes() -> None:
    f = random_event_frame(SHAPES[0])
    f["parts"] = f["parts"].astype("Int64").where(f.index % 5 != 0)
    f["warranty"] = f["warranty"].astype("boolean")
    f.loc[f["case"] == f["case"].iloc[0], "warranty"] = pd.NA  # a case without the attribute
    log = build(f.assign(timestamp=f["timestamp"].dt.as_unit("us")), resource="resource",
                event_attributes=["cost", "parts"], case_attributes=["warranty", "bike"])
    out = log.to_frame()
    assert out["cost"].dtype == "Float64"  # float64 with NaN in, nullable Float64 out
    assert out["parts"].dtype == "Int64"
    assert out["warranty"].dtype == "boolean"
    assert out["timestamp"].dtype == "datetime64[ns]"  # us in, ns out
    assert pd.api.types.is_string_dtype(out["bike"].dtype)
    assert pd.api.types.is_string_dtype(out["activity"].dtype)
    q = log.to_frame("polars")
    assert q.schema["timestamp"] == pl.Datetime("ns")
    assert q.schema["activity"] == pl.String
    assert q.schema["parts"] == pl.Int64


def test_html_repr_escapes_names() -> None:
    # Python's html.parser reads the markup back: the text holds every activity name of the
    # shown variants verbatim, and no element beyond the table's own.
    from html.parser import HTMLParser

    from strategies import ODD

    n = len(ODD)
    frame = pd.DataFrame({"case": [f"c{k % 4}" for k in range(n)], "activity": ODD,
                          "timestamp": pd.to_datetime(np.arange(n), unit="s")})
    log = build(frame)

    class Reader(HTMLParser):
        def __init__(self) -> None:
            super().__init__(convert_charrefs=True)
            self.tags: set[str] = set()
            self.text: list[str] = []

        def handle_starttag(self, tag: str, attrs: list) -> None:
            self.tags.add(tag)

        def handle_data(self, data: str) -> None:
            self.text.append(data)

    r = Reader()
    r.feed(log._repr_html_())
    r.close()
    assert r.tags <= {"b", "table", "tr", "th", "td"}
    cells = "".join(r.text)
    for seq in log.variants()["activities"].head(5):
        assert " → ".join(seq) in cells
