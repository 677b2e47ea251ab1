"""Ingest: pandas, polars and pyarrow inputs, column dtypes, time zones, attributes.

The same events given as a pandas DataFrame, a polars DataFrame or a pyarrow Table must make the
same log (same core arrays, same case ids, same frame back). Conversions between the three use the
libraries' own converters (``polars.from_pandas``, ``pyarrow.Table.from_pandas``), and expected
values are computed with pandas and zoneinfo (Python's IANA time-zone database).
"""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd
import polars as pl
import pyarrow as pa
import pytest
from conftest import SHAPES, build, random_event_frame, to_ns, values_of

import tracemill as tm

SHAPES_BY_NAME = {s.name: s for s in SHAPES}

EV = ["cost", "parts"]
CA = ["warranty", "bike"]


def assert_same_log(a: tm.EventLog, b: tm.EventLog) -> None:
    aa, bb = a.arrays(), b.arrays()
    assert aa.keys() == bb.keys()
    for k in aa:
        assert np.array_equal(aa[k], bb[k]), k
    assert a.case_ids.tolist() == b.case_ids.tolist()
    assert a.activities == b.activities
    pd.testing.assert_frame_equal(a.to_frame(), b.to_frame())


def three_kinds(frame: pd.DataFrame) -> dict[str, object]:
    return {
        "pandas": frame,
        "polars": pl.from_pandas(frame),
        "arrow": pa.Table.from_pandas(frame, preserve_index=False),
    }


# --------------------------------------------------------------------------- frame kinds


def test_pandas_polars_arrow_give_the_same_log(event_frame: pd.DataFrame) -> None:
    logs = {k: build(f, resource="resource", event_attributes=EV, case_attributes=CA)
            for k, f in three_kinds(event_frame).items()}
    assert_same_log(logs["pandas"], logs["polars"])
    assert_same_log(logs["pandas"], logs["arrow"])
    # The core arrays against pandas itself: every input row is kept exactly once.
    log = logs["pandas"]
    assert sorted(log.arrays()["row"].tolist()) == list(range(len(event_frame)))
    assert log.n_events == len(event_frame)
    assert log.n_cases == event_frame["case"].nunique()  # pandas nunique


def test_to_frame_kinds_agree(event_frame: pd.DataFrame) -> None:
    log = build(event_frame, resource="resource", event_attributes=EV, case_attributes=CA)
    p = log.to_frame("pandas")
    q = log.to_frame("polars")
    a = log.to_frame("arrow")
    assert isinstance(q, pl.DataFrame) and isinstance(a, pa.Table)
    # polars' and pyarrow's own converters to pandas give the same values (nulls as None)
    assert values_of(p) == values_of(q.to_pandas()) == values_of(a.to_pandas())


def test_arrow_chunked_sliced_and_record_batch() -> None:
    frame = random_event_frame(SHAPES_BY_NAME["many_short"])
    ref = build(frame)
    t = pa.Table.from_pandas(frame, preserve_index=False)
    chunked = pa.concat_tables([t.slice(0, 100), t.slice(100, 400), t.slice(500)])
    assert chunked.column("case").num_chunks == 3
    assert_same_log(ref, build(chunked))
    batch = pa.RecordBatch.from_pandas(frame, preserve_index=False)
    assert_same_log(ref, build(batch))
    # a slice with a non-zero offset in the Arrow buffers
    sub = frame.iloc[17:].reset_index(drop=True)
    assert_same_log(build(sub), build(t.slice(17)))
    assert_same_log(build(sub), build(pl.from_pandas(frame).slice(17)))
    # a pandas frame with a non-default index
    assert_same_log(build(sub), build(frame.iloc[17:]))




# --------------------------------------------------------------------------- label dtypes

LABEL_DTYPES = {
    "str": lambda s: s.astype("str"),  # pandas 3 default string dtype
    "object": lambda s: s.astype(object),
    "string[python]": lambda s: s.astype("string[python]"),
    "string[pyarrow]": lambda s: s.astype("string[pyarrow]"),
    "category": lambda s: s.astype("category"),
    # categories in reverse order, plus an unused one (as left behind by filtering a frame)
    "category_unused": lambda s: s.astype(pd.CategoricalDtype(
        ["zz-unused", *sorted(s.unique(), reverse=True)])),
    "arrow_dictionary": lambda s: s.astype(pd.ArrowDtype(pa.dictionary(pa.int32(), pa.string()))),
    "arrow_large_string": lambda s: s.astype(pd.ArrowDtype(pa.large_string())),
}


@pytest.mark.parametrize("column", ["case", "activity", "resource"])
@pytest.mark.parametrize("dtype", list(LABEL_DTYPES))
def test_pandas_text_dtypes(dtype: str, column: str) -> None:
    frame = random_event_frame(SHAPES_BY_NAME["equal_times"])
    ref = build(frame, resource="resource")
    other = frame.assign(**{column: LABEL_DTYPES[dtype](frame[column])})
    assert_same_log(ref, build(other, resource="resource"))


def test_categorical_case_order_is_first_appearance() -> None:
    # pandas Series.unique keeps order of appearance: the case order of the log follows it, not
    # the (sorted) category order; unused categories do not become empty cases.
    frame = pd.DataFrame({
        "case": pd.Categorical(["r2", "r2", "r1", "r3"], categories=["r0", "r1", "r2", "r3"]),
        "activity": pd.Categorical(["Inspect", "Hand over", "Inspect", "Clean"],
                                   categories=["Clean", "Hand over", "Inspect", "Unused"]),
        "timestamp": pd.date_range("2025-01-01", periods=4, freq="h"),
    })
    log = build(frame)
    assert log.case_ids.tolist() == frame["case"].unique().tolist() == ["r2", "r1", "r3"]
    assert log.activities == frame["activity"].unique().tolist()
    assert log.activity_stats()["events"].tolist() == [2, 1, 1]


@pytest.mark.parametrize("kind", ["polars_categorical", "polars_enum", "arrow_dictionary"])
def test_polars_and_arrow_categoricals(kind: str) -> None:
    frame = random_event_frame(SHAPES_BY_NAME["many_short"])
    ref = build(frame)
    if kind == "arrow_dictionary":
        t = pa.Table.from_pandas(frame, preserve_index=False)
        for c in ("case", "activity"):
            t = t.set_column(t.column_names.index(c), c, t.column(c).dictionary_encode())
        other = t
    else:
        cats = sorted(set(frame["case"]) | {"unused"}, reverse=True)
        dtype = pl.Categorical if kind == "polars_categorical" else pl.Enum(cats)
        acts = pl.Categorical if kind == "polars_categorical" else pl.Enum(
            sorted(set(frame["activity"])))
        other = pl.from_pandas(frame).with_columns(pl.col("case").cast(dtype),
                                                   pl.col("activity").cast(acts))
    assert_same_log(ref, build(other))


@pytest.mark.parametrize("dtype", ["int64", "int32", "uint16", "Int64", "UInt32",
                                   "int64[pyarrow]"])
def test_integer_case_ids(dtype: str) -> None:
    frame = random_event_frame(SHAPES_BY_NAME["int_ids"])
    frame["case"] = frame["case"] % 60000  # fits every dtype above
    ref = build(frame)
    other = frame.astype({"case": dtype})
    log = build(other)
    assert_same_log(ref, log)
    assert log.case_ids.tolist() == other["case"].unique().tolist()  # pandas unique
    assert log.case_ids.dtype.kind in "iu"
    assert_same_log(ref, build(pl.from_pandas(other)))
    assert_same_log(ref, build(pa.Table.from_pandas(other, preserve_index=False)))


def test_string_and_integer_ids_with_same_digits_differ_only_in_type() -> None:
    frame = random_event_frame(SHAPES_BY_NAME["int_ids"])
    a = build(frame)
    b = build(frame.assign(case=frame["case"].astype(str)))
    assert a.case_ids.tolist() == [int(x) for x in b.case_ids]
    assert np.array_equal(a.arrays()["offsets"], b.arrays()["offsets"])


# --------------------------------------------------------------------------- timestamps

ZONES = ["UTC", "Europe/Berlin", "America/New_York", "Asia/Kolkata", "Pacific/Chatham",
         "Australia/Lord_Howe"]


@pytest.mark.parametrize("zone", ZONES)
def test_aware_timestamps_are_converted_to_utc(zone: str) -> None:
    frame = random_event_frame(SHAPES_BY_NAME["equal_times"])
    naive = build(frame)
    # The naive values read as UTC instants, shown in `zone` (pandas tz_localize/tz_convert).
    aware = frame.assign(timestamp=frame["timestamp"].dt.tz_localize("UTC").dt.tz_convert(zone))
    for f in three_kinds(aware).values():
        log = build(f)
        assert np.array_equal(log.arrays()["time"], naive.arrays()["time"])
        out = log.to_frame()["timestamp"]
        assert str(out.dt.tz) == zone  # given back in its zone
        assert to_ns(out).tolist() == to_ns(log.to_frame("polars")["timestamp"]).tolist()
        assert out.tolist() == aware.loc[log.arrays()["row"], "timestamp"].tolist()
        pq = log.to_frame("polars")["timestamp"]
        assert pq.dtype == pl.Datetime("ns", zone)


def test_wall_clock_times_across_a_dst_change() -> None:
    # 2025-03-30 in Berlin: 02:00 CET jumps to 03:00 CEST. 01:30 and 03:30 local are 1 h apart
    # (zoneinfo arithmetic on UTC instants).
    berlin = ZoneInfo("Europe/Berlin")
    t0 = dt.datetime(2025, 3, 30, 1, 30, tzinfo=berlin)
    t1 = dt.datetime(2025, 3, 30, 3, 30, tzinfo=berlin)
    assert (t1.astimezone(dt.timezone.utc) - t0.astimezone(dt.timezone.utc)) == dt.timedelta(
        hours=1)
    frame = pd.DataFrame({"case": ["r1", "r1"], "activity": ["Inspect", "Test ride"],
                          "timestamp": pd.to_datetime([t0, t1])})
    log = build(frame)
    assert log.case_table()["duration"].iloc[0] == pd.Timedelta(hours=1)
    assert str(log.to_frame()["timestamp"].dt.tz) == "Europe/Berlin"


def test_text_timestamps_with_offsets_are_converted_to_utc() -> None:
    texts = ["2025-01-06T09:00:00+01:00", "2025-01-06T08:30:00-05:00", "2025-01-06 12:00Z",
             "2025-01-06T10:00:00.250+05:30"]
    frame = pd.DataFrame({"case": ["r1", "r1", "r2", "r2"],
                          "activity": ["a", "b", "a", "b"], "timestamp": texts})
    want = [int(pd.Timestamp(t).tz_convert("UTC").as_unit("ns").value) for t in texts]  # pandas
    for f in three_kinds(frame).values():
        log = build(f)
        assert sorted(log.arrays()["time"].tolist()) == sorted(want)
        assert str(log.to_frame()["timestamp"].dt.tz) == "UTC"


def test_naive_timestamps_stay_naive() -> None:
    frame = random_event_frame(SHAPES_BY_NAME["few_long"])
    for f in three_kinds(frame).values():
        log = build(f)
        out = log.to_frame()["timestamp"]
        assert out.dt.tz is None
        assert to_ns(out).tolist() == log.arrays()["time"].tolist()
        assert log.to_frame("polars")["timestamp"].dtype == pl.Datetime("ns", None)


@pytest.mark.parametrize("unit", ["s", "ms", "us", "ns"])
def test_timestamp_units(unit: str) -> None:
    frame = random_event_frame(SHAPES_BY_NAME["equal_times"])  # whole seconds
    ref = build(frame)
    other = frame.assign(timestamp=frame["timestamp"].dt.as_unit(unit))
    for f in three_kinds(other).values():
        assert np.array_equal(build(f).arrays()["time"], ref.arrays()["time"])


def test_date_columns() -> None:
    days = [dt.date(2025, 1, 6), dt.date(2025, 1, 7), dt.date(2025, 1, 6)]
    pdf = pd.DataFrame({"case": ["a", "a", "b"], "activity": ["x", "y", "x"], "timestamp": days})
    want = [int(pd.Timestamp(d).as_unit("ns").value) for d in days]
    for f in (pdf, pl.from_pandas(pdf), pa.Table.from_pandas(pdf, preserve_index=False)):
        assert sorted(build(f).arrays()["time"].tolist()) == sorted(want)


@pytest.mark.parametrize("text_dtype", ["str", "object", "string[python]", "category"])
def test_text_timestamps(text_dtype: str) -> None:
    frame = random_event_frame(SHAPES_BY_NAME["int_ids"])  # millisecond ticks
    ref = build(frame)
    text = frame["timestamp"].dt.strftime("%Y-%m-%dT%H:%M:%S.%f").astype(text_dtype)
    other = frame.assign(timestamp=text)
    for f in three_kinds(other).values():
        assert np.array_equal(build(f).arrays()["time"], ref.arrays()["time"])


@pytest.mark.parametrize("fmt", ["%d/%m/%Y %H:%M:%S", "%m/%d/%Y %I:%M:%S %p", "%Y%m%d%H%M%S"])
def test_timestamp_format(fmt: str) -> None:
    frame = random_event_frame(SHAPES_BY_NAME["equal_times"])
    ref = build(frame)
    other = frame.assign(timestamp=frame["timestamp"].dt.strftime(fmt))  # pandas strftime
    for f in three_kinds(other).values():
        log = build(f, timestamp_format=fmt)
        assert np.array_equal(log.arrays()["time"], ref.arrays()["time"])
        assert log.to_frame()["timestamp"].dt.tz is None


def test_timestamp_format_with_offset() -> None:
    texts = ["06.01.2025 09:00 +0100", "06.01.2025 09:00 -0230"]
    frame = pd.DataFrame({"case": ["a", "b"], "activity": ["x", "x"], "timestamp": texts})
    fmt = "%d.%m.%Y %H:%M %z"
    want = [int(dt.datetime.strptime(t, fmt).timestamp()) * 10**9 for t in texts]  # stdlib
    for f in three_kinds(frame).values():
        log = build(f, timestamp_format=fmt)
        assert log.arrays()["time"].tolist() == want
        assert str(log.to_frame()["timestamp"].dt.tz) == "UTC"


def test_ambiguous_text_dates_need_a_format() -> None:
    # '01/02/2025' is 1 February or 2 January depending on convention: without a format every
    # frame kind refuses it (only ISO 8601 is read without one) and names the row.
    frame = pd.DataFrame({"case": ["a", "a"], "activity": ["x", "y"],
                          "timestamp": ["2025-02-01 10:00", "01/02/2025 11:00"]})
    for f in three_kinds(frame).values():
        with pytest.raises(tm.TimestampError) as e:
            build(f)
        assert e.value.row == 1 and e.value.column == "timestamp"
        assert "01/02/2025 11:00" in str(e.value)


# --------------------------------------------------------------------------- case attributes


def test_case_attributes_collapse_and_ignore_nulls() -> None:
    frame = random_event_frame(SHAPES_BY_NAME["unsorted"])
    # Blank out some per-case values: nulls are ignored when collapsing.
    rng = np.random.default_rng(7)
    holes = rng.random(len(frame)) < 0.3
    frame["bike"] = frame["bike"].where(~holes, None)
    frame["warranty"] = frame["warranty"].astype("boolean").where(~holes, pd.NA)
    # pandas: the first non-null value of each case, cases in first-appearance order
    ref = frame.groupby("case", sort=False)[CA].first()
    for f in three_kinds(frame).values():
        log = build(f, case_attributes=CA)
        ct = log.case_table()
        assert ct["case"].tolist() == ref.index.tolist()
        for c in CA:
            assert ct[c].isna().tolist() == ref[c].isna().tolist()
            assert ct[c].dropna().tolist() == ref[c].dropna().tolist()
        out = log.to_frame()
        per_event = ref.loc[out["case"]]
        assert out["bike"].fillna("-").tolist() == per_event["bike"].fillna("-").tolist()


@pytest.mark.parametrize("kind", ["pandas", "polars", "arrow"])
def test_conflicting_case_attribute_names_case_and_rows(kind: str) -> None:
    frame = pd.DataFrame({
        "case": ["r1", "r2", "r1", "r2", "r2"],
        "activity": ["a", "a", "b", "b", "c"],
        "timestamp": pd.date_range("2025-01-01", periods=5, freq="h"),
        "bike": ["city", "road", None, "road", "cargo"],
    })
    with pytest.raises(tm.SchemaError) as e:
        build(three_kinds(frame)[kind], case_attributes=["bike"])
    msg = str(e.value)
    assert "case 'r2'" in msg and "'road' (row 1)" in msg and "'cargo' (row 4)" in msg, msg
    assert e.value.column == "bike" and e.value.row == 4
    assert isinstance(e.value, ValueError)


def test_case_attribute_all_null_for_a_case() -> None:
    frame = pd.DataFrame({"case": ["a", "a", "b"], "activity": ["x", "y", "x"],
                          "timestamp": pd.date_range("2025-01-01", periods=3, freq="h"),
                          "size": pd.array([None, None, 3], dtype="Int64")})
    ct = build(frame, case_attributes=["size"]).case_table()
    assert ct["size"].isna().tolist() == [True, False]
    assert ct["size"].iloc[1] == 3


# --------------------------------------------------------------------------- event attributes


def typed_frame() -> pd.DataFrame:
    return pd.DataFrame({
        "case": ["b", "b", "a", "c", "a"],
        "activity": ["x", "y", "x", "z", "y"],
        "timestamp": pd.date_range("2025-01-01", periods=5, freq="h"),
        "cost": [1.5, np.nan, 2.0, -0.0, 1e300],
        "parts": np.array([1, 2, -3, 2**62, 0], dtype=np.int64),
        "ok": [True, False, True, False, True],
        "note": ["a", None, "", "<&> \"q\" 'é' 🚲", "a"],
        "seen": pd.to_datetime(["2025-01-01", None, "2025-01-03", "2025-01-04", "1970-01-01"]),
        "seen_tz": pd.to_datetime(["2025-01-01", None, "2025-01-03", "2025-01-04",
                                   "2025-06-01"]).tz_localize("America/New_York"),
        "n_parts": pd.array([1, None, 3, 4, 5], dtype="Int64"),
        "paid": pd.array([True, None, False, True, False], dtype="boolean"),
        "f_cost": pd.array([1.0, None, 3.0, 4.0, 5.0], dtype="Float64"),
    })


ATTRS = ["cost", "parts", "ok", "note", "seen", "seen_tz", "n_parts", "paid", "f_cost"]


@pytest.mark.parametrize("kind", ["pandas", "polars", "arrow"])
def test_typed_event_attributes_survive_to_frame(kind: str) -> None:
    frame = typed_frame()
    log = build(three_kinds(frame)[kind], event_attributes=ATTRS)
    out = log.to_frame()
    src = frame.loc[log.arrays()["row"]].reset_index(drop=True)
    for c in ATTRS:
        got, want = out[c], src[c]
        assert got.isna().tolist() == want.isna().tolist(), c
        if want.dtype.kind in "Mm" or isinstance(want.dtype, pd.DatetimeTZDtype):
            assert to_ns(got[got.notna()]).tolist() == to_ns(want[want.notna()]).tolist(), c
        else:
            assert got.dropna().tolist() == want.dropna().tolist(), c
    # Documented dtype mapping of pandas output: floats and ints with nulls become the nullable
    # Float64/Int64 (NaN read as null), booleans with nulls 'boolean', text 'str', times
    # datetime64[ns] in the column's zone.
    assert out["cost"].dtype == "Float64"
    assert out["parts"].dtype == np.int64
    assert out["ok"].dtype == bool
    assert out["n_parts"].dtype == "Int64"
    assert out["paid"].dtype == "boolean"
    assert out["seen"].dtype == "datetime64[ns]"
    assert out["seen_tz"].dtype == pd.DatetimeTZDtype("ns", "America/New_York")
    assert pd.api.types.is_string_dtype(out["note"].dtype)
    assert out["cost"].iloc[list(src["cost"]).index(-0.0)] == 0.0


def test_polars_nan_and_null_stay_apart() -> None:
    # polars keeps NaN (a float value) apart from null (missing); so does the log.
    f = pl.DataFrame({"case": ["a", "a", "a"], "activity": ["x", "y", "z"],
                      "timestamp": [dt.datetime(2025, 1, 1, h) for h in (1, 2, 3)],
                      "cost": [1.0, float("nan"), None]})
    out = build(f, event_attributes=["cost"]).to_frame("polars")["cost"]
    assert out.is_null().to_list() == [False, False, True]
    assert out.is_nan().to_list() == [False, True, None]


def test_event_attribute_dtypes_in_polars_output() -> None:
    log = build(typed_frame(), event_attributes=ATTRS)
    out = log.to_frame("polars")
    assert out.schema["cost"] == pl.Float64
    assert out.schema["parts"] == pl.Int64
    assert out.schema["ok"] == pl.Boolean
    assert out.schema["note"] == pl.String
    assert out.schema["seen"] == pl.Datetime("ns")
    assert out.schema["seen_tz"] == pl.Datetime("ns", "America/New_York")
    notes = out["note"].to_list()
    src = typed_frame()["note"]
    assert notes.count(None) == src.isna().sum()
    assert sorted(x for x in notes if x is not None) == sorted(src.dropna())


# --------------------------------------------------------------------------- fixed offsets

OFFSETS = [dt.timezone(dt.timedelta(hours=1)), dt.timezone(dt.timedelta(hours=-3, minutes=-30)),
           dt.timezone(dt.timedelta(hours=5, minutes=45))]


@pytest.mark.parametrize("tz", OFFSETS, ids=str)
def test_fixed_offset_zones(tz: dt.timezone) -> None:
    # pandas.to_datetime gives such columns for text with one constant offset.
    frame = random_event_frame(SHAPES_BY_NAME["equal_times"])
    ref = build(frame)
    aware = frame.assign(timestamp=frame["timestamp"].dt.tz_localize("UTC").dt.tz_convert(tz))
    for f in (aware, pa.Table.from_pandas(aware, preserve_index=False)):
        log = build(f)
        assert np.array_equal(log.arrays()["time"], ref.arrays()["time"])
        out = log.to_frame()["timestamp"]
        # the same instants and the same offset (stdlib datetime.utcoffset)
        assert to_ns(out).tolist() == ref.arrays()["time"].tolist()
        assert {t.utcoffset() for t in out} == {tz.utcoffset(None)}
        arrow = log.to_frame("arrow")["timestamp"]
        assert to_ns(arrow).tolist() == ref.arrays()["time"].tolist()
        whole_hours = tz.utcoffset(None) % dt.timedelta(hours=1) == dt.timedelta(0)
        if whole_hours:  # polars takes whole-hour offsets (as Etc/GMT zones)
            pq = log.to_frame("polars")["timestamp"]
            assert to_ns(pq).tolist() == ref.arrays()["time"].tolist()
            assert {t.utcoffset() for t in pq.to_list()} == {tz.utcoffset(None)}
        else:
            with pytest.raises(tm.DataError, match="polars has no time zone"):
                log.to_frame("polars")


def test_text_with_one_offset_parsed_by_pandas() -> None:
    texts = ["2025-01-06T09:00:00+01:00", "2025-01-06T10:30:00+01:00"]
    frame = pd.DataFrame({"case": ["r1", "r1"], "activity": ["a", "b"],
                          "timestamp": pd.to_datetime(texts)})  # dtype with tz UTC+01:00
    log = build(frame)
    assert log.to_frame()["timestamp"].tolist() == frame["timestamp"].tolist()
    assert log.to_frame("polars")["timestamp"].to_list()[0].utcoffset() == dt.timedelta(hours=1)


def test_text_timestamps_keep_nanoseconds() -> None:
    texts = ["2025-01-01T10:00:00.123456789", "2025-01-01T10:00:00.123456790",
             "2262-04-11T23:47:16.854775807"]  # the last instant int64 nanoseconds hold
    frame = pd.DataFrame({"case": ["a", "a", "a"], "activity": ["x", "y", "z"],
                          "timestamp": texts})
    want = [pd.Timestamp(t).value for t in texts]  # pandas' ns parser
    assert want[-1] == np.iinfo(np.int64).max
    for f in three_kinds(frame).values():
        assert build(f).arrays()["time"].tolist() == want
