"""Bad input gives the right tracemill exception (a ValueError) with its structured fields.

Table tests: each case lists the input and either the expected result or an :class:`Err` with the
exception class, a piece of the message and the expected ``column``/``row``/``parameter``.
"""

from __future__ import annotations

import _thread
import signal
import threading
import time
import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd
import polars as pl
import pyarrow as pa
import pytest
from conftest import SHAPES, build, random_event_frame

import tracemill as tm
import tracemill.exceptions as tme
from tracemill import _core


@dataclass
class Err:
    """An expected failure."""

    cls: type[Exception]
    match: str
    column: str | None = None
    row: int | None = None
    parameter: str | None = None


def check_err(exc: BaseException, err: Err) -> None:
    assert type(exc) is err.cls, f"{type(exc).__name__}: {exc}"
    assert isinstance(exc, tm.TracemillError) and isinstance(exc, ValueError)
    assert err.match in str(exc), str(exc)
    assert exc.column == err.column  # type: ignore[attr-defined]
    assert exc.row == err.row  # type: ignore[attr-defined]
    assert exc.parameter == err.parameter  # type: ignore[attr-defined]


def small() -> pd.DataFrame:
    return pd.DataFrame({
        "case": ["r2", "r2", "r1", "r3"],
        "activity": ["Inspect", "Test ride", "Inspect", "Clean"],
        "timestamp": pd.to_datetime(["2025-01-06 09:00", "2025-01-06 10:00", "2025-01-06 11:00",
                                     "2025-01-07 08:00"]),
        "mechanic": ["Ana", "Bruno", "Ana", None],
    })


def with_value(col: str, row: int, value: Any) -> pd.DataFrame:
    f = small()
    f[col] = f[col].astype(object)
    f.loc[row, col] = value
    return f


KINDS = {
    "pandas": lambda f: f,
    "polars": pl.from_pandas,
    "arrow": lambda f: pa.Table.from_pandas(f, preserve_index=False),
}

FRAME_CASES = {
    "misspelt activity": (
        small(), {"activity": "activty"},
        Err(tm.SchemaError, "did you mean 'activity'?", column="activty")),
    "misspelt case": (
        small(), {"case": "Case"},
        Err(tm.SchemaError, "did you mean 'case'?", column="Case")),
    "missing resource": (
        small(), {"resource": "worker"},
        Err(tm.SchemaError, "the columns are ['case', 'activity', 'timestamp', 'mechanic']",
            column="worker")),
    "misspelt attribute": (
        small(), {"event_attributes": ["mechnic"]},
        Err(tm.SchemaError, "did you mean 'mechanic'?", column="mechnic")),
    "null case id": (
        with_value("case", 2, None), {},
        Err(tm.SchemaError, "row 2: the case id is null", column="case", row=2)),
    "null activity": (
        with_value("activity", 3, None), {},
        Err(tm.SchemaError, "row 3: the activity is null", column="activity", row=3)),
    "null timestamp": (
        small().assign(timestamp=lambda f: f["timestamp"].where(f.index != 1)), {},
        Err(tm.TimestampError, "row 1: the timestamp is null", column="timestamp", row=1)),
    "null text timestamp": (
        small().assign(timestamp=["2025-01-06 09:00", "2025-01-06 09:30", None, "2025-01-06"]),
        {}, Err(tm.TimestampError, "row 2: the timestamp is null", column="timestamp", row=2)),
    "unparseable timestamp": (
        small().assign(timestamp=["2025-01-06 09:00", "2025-01-06 09:30", "tomorrow",
                                  "2025-01-06"]), {},
        Err(tm.TimestampError, "row 2:", column="timestamp", row=2)),
    "unparseable with format": (
        small().assign(timestamp=["06.01.2025", "07.01.2025", "2025-01-08", "09.01.2025"]),
        {"timestamp_format": "%d.%m.%Y"},
        Err(tm.TimestampError, "row 2: cannot parse '2025-01-08'", column="timestamp", row=2)),
    "mixed naive and aware text": (
        small().assign(timestamp=["2025-01-06 09:00", "2025-01-06 09:30",
                                  "2025-01-06 10:00+01:00", "2025-01-06 11:00"]), {},
        Err(tm.TimestampError, "mixes timezone-aware and naive", column="timestamp", row=2)),
    "timestamp beyond 2262": (
        small().assign(timestamp=np.array(["2025-01-06", "2025-01-07", "2025-01-08",
                                           "2500-01-01"], dtype="datetime64[s]")), {},
        Err(tm.TimestampError, "row 3: 2500-01-01T00:00:00", column="timestamp", row=3)),
    "text timestamp before 1677": (
        small().assign(timestamp=["2025-01-06", "1500-06-01", "2025-01-08", "2025-01-09"]), {},
        Err(tm.TimestampError, "outside the range of nanosecond timestamps",
            column="timestamp", row=1)),
    "attribute timestamp beyond 2262": (
        small().assign(due=np.array(["2025-01-06", "9999-12-31", "NaT", "2025-01-09"],
                                    dtype="datetime64[ms]")), {"event_attributes": ["due"]},
        Err(tm.TimestampError, "outside the range of nanosecond timestamps", column="due",
            row=1)),
    "unsigned case ids beyond int64": (
        small().assign(case=np.array([2**64 - 1, 2**64 - 1, 5, 6], dtype=np.uint64)), {},
        Err(tm.SchemaError, "unsigned values above 2**63-1", column="case")),
    "numbers as timestamps": (
        small().assign(timestamp=[1, 2, 3, 4]), {},
        Err(tm.TimestampError, "expected datetimes or text", column="timestamp")),
    "empty frame": (
        small().iloc[:0], {},
        Err(tm.SchemaError, "the frame has no rows", column="case")),
    "column given twice": (
        small(), {"resource": "activity"},
        Err(tm.SchemaError, "column 'activity' is given twice (as activity and as resource)",
            column="activity")),
    "attribute given twice": (
        small(), {"event_attributes": ["mechanic"], "case_attributes": ["mechanic"]},
        Err(tm.SchemaError, "given twice", column="mechanic")),
    "event attribute named like a standard column": (
        small().rename(columns={"case": "order"}).assign(case=list("wxyz")),
        {"case": "order", "event_attributes": ["case"]},
        Err(tm.SchemaError, "the event attribute 'case' has the name of a standard column",
            column="case")),
    "case attribute named like a case-table column": (
        small().assign(start=["a", "a", "b", "c"]), {"case_attributes": ["start"]},
        Err(tm.SchemaError, "the case attribute 'start' has the name of a standard column",
            column="start")),
    "role column as attribute": (
        small(), {"event_attributes": ["timestamp"]},
        Err(tm.SchemaError, "given twice", column="timestamp")),
}


@pytest.mark.parametrize("kind", list(KINDS))
@pytest.mark.parametrize("name", list(FRAME_CASES))
def test_bad_frames(name: str, kind: str) -> None:
    frame, kw, err = FRAME_CASES[name]
    with pytest.raises(tm.TracemillError) as e:
        build(KINDS[kind](frame.copy()), **kw)
    check_err(e.value, err)


def test_mixed_naive_and_aware_objects() -> None:
    f = small()
    f["timestamp"] = [pd.Timestamp("2025-01-06 09:00"), pd.Timestamp("2025-01-06 10:00"),
                      pd.Timestamp("2025-01-06 11:00", tz="Europe/Berlin"),
                      pd.Timestamp("2025-01-06 12:00")]
    assert f["timestamp"].dtype == object
    with pytest.raises(tm.TimestampError) as e:
        build(f)
    check_err(e.value, Err(tm.TimestampError, "mixes timezone-aware and naive",
                           column="timestamp", row=2))


@pytest.mark.parametrize("obj", [{"case": ["a"]}, [1, 2], None, small()["case"],
                                 pl.from_pandas(small()).lazy(), np.zeros(3)],
                         ids=["dict", "list", "None", "Series", "LazyFrame", "ndarray"])
def test_non_frame_input(obj: Any) -> None:
    with pytest.raises(tm.SchemaError) as e:
        build(obj)
    assert "from_frame takes a pandas DataFrame, a polars DataFrame or a pyarrow Table" in str(
        e.value)
    assert isinstance(e.value, ValueError)


@pytest.mark.parametrize("kind", list(KINDS))
def test_one_event_log(kind: str) -> None:
    log = build(KINDS[kind](small().iloc[:1]))
    assert (log.n_cases, log.n_events) == (1, 1)
    assert log.variants()["activities"].tolist() == [("Inspect",)]
    assert len(log.directly_follows()) == 0
    assert log.case_table()["duration"].tolist() == [pd.Timedelta(0)]
    assert log.to_frame()["activity"].tolist() == ["Inspect"]
    assert log.activity_stats()["wait_mean"].isna().all()


# --------------------------------------------------------------------------- warnings


def test_duplicates_are_kept_with_a_warning() -> None:
    # the last event of r2 twice and of r3 once more: repeated at the end, still in time order
    f = pd.concat([small(), small().iloc[[1, 1, 3]]], ignore_index=True)
    # pandas DataFrame.duplicated: 3 rows repeat an earlier one in every column
    assert f.duplicated(["case", "activity", "timestamp", "mechanic"]).sum() == 3
    with pytest.warns(tm.DataQualityWarning, match=r"^3 duplicate events .* were kept"):
        log = tm.EventLog.from_frame(f, case="case", activity="activity", timestamp="timestamp",
                                     resource="mechanic")
    assert log.n_events == len(f)
    # A different resource makes the event distinct: no warning then.
    g = pd.concat([small(), small().iloc[[1]].assign(mechanic="Dev")], ignore_index=True)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert tm.EventLog.from_frame(g, case="case", activity="activity", timestamp="timestamp",
                                      resource="mechanic").n_events == 5


def test_unsorted_rows_are_sorted_never_dropped() -> None:
    f = small().iloc[[1, 3, 0, 2]].reset_index(drop=True)  # r2's rows swapped
    with pytest.warns(tm.DataQualityWarning, match=r"^1 events were out of time order .* none "
                      "was dropped"):
        log = tm.EventLog.from_frame(f, case="case", activity="activity", timestamp="timestamp")
    assert log.n_events == 4
    assert log.case_ids.tolist() == ["r2", "r3", "r1"]
    assert log.variants()["activities"].tolist()[0] == ("Inspect", "Test ride")
    assert log.arrays()["row"].tolist() == [2, 0, 1, 3]


def test_random_unsorted_log_keeps_every_row() -> None:
    frame = random_event_frame(SHAPES[4])  # shuffled rows
    with pytest.warns(tm.DataQualityWarning) as rec:
        log = tm.EventLog.from_frame(frame, case="case", activity="activity",
                                     timestamp="timestamp")
    assert any("out of time order" in str(w.message) for w in rec)
    assert sorted(log.arrays()["row"].tolist()) == list(range(len(frame)))


# --------------------------------------------------------------------------- selections


@pytest.fixture(scope="module")
def log() -> tm.EventLog:
    return build(small())


SELECTION_CASES = {
    "share 0": (lambda g: g.top_variants(0), Err(tm.ParameterError, "(0, 1]", parameter="share")),
    "share > 1": (lambda g: g.top_variants(1.01),
                  Err(tm.ParameterError, "(0, 1]", parameter="share")),
    "share NaN": (lambda g: g.top_variants(float("nan")),
                  Err(tm.ParameterError, "(0, 1]", parameter="share")),
    "frac 2": (lambda g: g.sample(frac=2), Err(tm.ParameterError, "(0, 1]", parameter="frac")),
    "frac 0": (lambda g: g.sample(frac=0), Err(tm.ParameterError, "(0, 1]", parameter="frac")),
    "n > n_cases": (lambda g: g.sample(4),
                    Err(tm.ParameterError, "number of cases (3); got 4", parameter="n")),
    "n 0": (lambda g: g.sample(0), Err(tm.ParameterError, "got 0", parameter="n")),
    "n and frac": (lambda g: g.sample(1, frac=0.5),
                   Err(tm.ParameterError, "exactly one of n and frac", parameter="n")),
    "negative random_state": (lambda g: g.sample(1, random_state=-1),
                              Err(tm.ParameterError, "random_state", parameter="random_state")),
    "unknown case id": (lambda g: g.select_cases(["r1", "r9"]),
                        Err(tm.ParameterError, "unknown case ids: ['r9']", parameter="which")),
    "mask of wrong length": (lambda g: g.select_cases(np.array([True, False])),
                             Err(tm.ParameterError, "expected (3,)", parameter="which")),
    "window end before start": (
        lambda g: g.within("2025-01-07", "2025-01-06"),
        Err(tm.ParameterError, "end must be after its start", parameter="end")),
    "empty window": (
        lambda g: g.within("2025-01-06", "2025-01-06"),
        Err(tm.ParameterError, "end must be after its start", parameter="end")),
    "unparseable window": (
        lambda g: g.within("next week", "2025-01-06"),
        Err(tm.ParameterError, "start must be a timestamp", parameter="start")),
    "window rule": (
        lambda g: g.within("2025-01-06", "2025-01-08", rule="overlapping"),  # type: ignore
        Err(tm.ParameterError, "one of 'contained', 'intersecting'", parameter="rule")),
    "length min < 0": (lambda g: g.with_length(-1),
                       Err(tm.ParameterError, "min_events", parameter="min_events")),
    "length max < min": (lambda g: g.with_length(3, 2),
                         Err(tm.ParameterError, "got 3 and 2", parameter="max_events")),
    "split labels": (lambda g: g.split([0, 1]),
                     Err(tm.ParameterError, "one label per case", parameter="labels")),
    "variant rank": (lambda g: g.variant_cases(3),
                     Err(tm.ParameterError, "[0, 3)", parameter="variant")),
    "frame kind": (lambda g: g.to_frame("csv"), Err(tm.ParameterError, "'csv'", parameter="kind")),
    "nothing selected": (lambda g: g.select_cases(np.zeros(3, dtype=bool)),
                         Err(tm.DataError, "the selection is empty")),
    "window without cases": (lambda g: g.within("2030-01-01", "2030-02-01"),
                             Err(tm.DataError, "the selection is empty")),
}


@pytest.mark.parametrize("name", list(SELECTION_CASES))
def test_bad_selections(log: tm.EventLog, name: str) -> None:
    fn, err = SELECTION_CASES[name]
    with pytest.raises(tm.TracemillError) as e:
        fn(log)
    check_err(e.value, err)


def test_repeated_case_ids_select_a_case_once(log: tm.EventLog) -> None:
    sub = log.select_cases(["r3", "r2", "r3"])
    assert sub.case_ids.tolist() == ["r2", "r3"]  # log order, once each
    assert sub.n_events == 3


# --------------------------------------------------------------------------- native errors


def test_native_schema_error_names_row() -> None:
    # Codes outside the dictionary reach the Rust builder's own check.
    with pytest.raises(tm.SchemaError) as e:
        _core.build_log(case=np.array([0, 1], dtype=np.uint32), case_names=["a"],
                        activity=np.array([0, 0], dtype=np.uint32), activity_names=["x"],
                        time=np.array([1, 2], dtype=np.int64))
    check_err(e.value, Err(tm.SchemaError, "outside the dictionary", column="case", row=1))


def test_native_wrong_dtype_is_a_schema_error() -> None:
    with pytest.raises(tm.SchemaError, match="expected a 1-D numpy array"):
        _core.build_log(case=np.array([0, 0], dtype=np.int64), case_names=["a"],
                        activity=np.array([0, 0], dtype=np.uint32), activity_names=["x"],
                        time=np.array([1, 2], dtype=np.int64))


def test_panic_is_internal_error() -> None:
    with pytest.raises(tm.InternalError, match=r"deliberate test panic.*please report") as e:
        _core._panic_for_test()
    assert isinstance(e.value, tm.TracemillError) and isinstance(e.value, ValueError)
    assert isinstance(e.value, Exception)  # caught by `except Exception`, unlike a bare panic


def test_progress_callback_exception_stops_the_kernel() -> None:
    calls: list[tuple[int, int]] = []

    class Stop(Exception):
        pass

    def cb(done: int, total: int) -> None:
        calls.append((done, total))
        if len(calls) >= 2:
            raise Stop("enough")

    t0 = time.monotonic()
    with pytest.raises(Stop, match="enough"):
        _core._sleep_for_test(5.0, progress=cb)
    elapsed = time.monotonic() - t0
    assert elapsed < 2.0, elapsed
    assert len(calls) >= 2
    assert all(total == 500 for _, total in calls)  # 100 steps per second
    assert 0 < calls[0][0] <= calls[1][0] < 500


def test_progress_callback_is_not_called_after_it_raised() -> None:
    calls: list[int] = []

    def cb(done: int, total: int) -> None:
        calls.append(done)
        raise RuntimeError("stop")

    with pytest.raises(RuntimeError, match="stop"):
        _core._sleep_for_test(2.0, progress=cb)
    assert len(calls) == 1


def test_progress_callback_sees_the_whole_run() -> None:
    calls: list[tuple[int, int]] = []
    assert _core._sleep_for_test(0.4, progress=lambda d, t: calls.append((d, t))) == 40
    assert calls and all(t == 40 for _, t in calls)
    done = [d for d, _ in calls]
    assert done == sorted(done)


def test_ctrl_c_via_interrupt_main() -> None:
    timer = threading.Timer(0.3, _thread.interrupt_main)
    timer.start()
    t0 = time.monotonic()
    try:
        with pytest.raises(KeyboardInterrupt):
            _core._sleep_for_test(5.0)
    finally:
        timer.cancel()
    assert time.monotonic() - t0 < 2.0


@pytest.mark.skipif(not hasattr(signal, "setitimer"), reason="needs POSIX interval timers")
def test_ctrl_c_via_signal_handler() -> None:
    def on_alarm(signum: int, frame: Any) -> None:
        raise KeyboardInterrupt

    # pytest-timeout may own SIGALRM: save and restore its handler and timer.
    old_handler = signal.signal(signal.SIGALRM, on_alarm)
    old_timer = signal.setitimer(signal.ITIMER_REAL, 0.3)
    t0 = time.monotonic()
    try:
        with pytest.raises(KeyboardInterrupt):
            _core._sleep_for_test(5.0)
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old_handler)
        if old_timer[0] > 0:
            signal.setitimer(signal.ITIMER_REAL, *old_timer)
    assert time.monotonic() - t0 < 2.0


# --------------------------------------------------------------------------- the class tree


ERROR_CLASSES = ["SchemaError", "TimestampError", "FormatError", "ParameterError", "DataError",
                 "LimitError", "TracemillIOError", "InternalError", "NotFittedError"]


@pytest.mark.parametrize("name", ERROR_CLASSES)
def test_error_classes(name: str) -> None:
    cls = getattr(tme, name)
    assert getattr(tm, name) is cls  # re-exported at the top level
    assert issubclass(cls, tm.TracemillError) and issubclass(cls, ValueError)
    assert cls.__doc__
    e = cls("x")
    assert (e.column, e.row, e.line, e.parameter) == (None, None, None, None)
    # distinct: no error class is a subclass of another (besides the common base)
    for other in ERROR_CLASSES:
        if other != name:
            assert not issubclass(cls, getattr(tme, other))


def test_every_exported_name_is_classified() -> None:
    assert set(tme.__all__) == {*ERROR_CLASSES, "TracemillError", "TracemillWarning",
                                "DataQualityWarning"}
    assert issubclass(tm.DataQualityWarning, tm.TracemillWarning)
    assert issubclass(tm.TracemillWarning, UserWarning)
    assert issubclass(tm.NotFittedError, AttributeError)  # as scikit-learn's NotFittedError


def test_native_errors_map_to_distinct_classes() -> None:
    # Each native error kind that the log kernels can raise arrives as its own class.
    raised: dict[str, type] = {}
    log = build(small())
    for kind, fn in {
        "Schema": lambda: _core.build_log(
            case=np.array([1], dtype=np.uint32), case_names=["a"],
            activity=np.array([0], dtype=np.uint32), activity_names=["x"],
            time=np.array([0], dtype=np.int64)),
        "Parameter": lambda: log.handle.sample_cases(9, 0),
        "Data": lambda: log.handle.select_mask(np.zeros(3, dtype=bool)),
        "Internal": _core._panic_for_test,
    }.items():
        with pytest.raises(tm.TracemillError) as e:
            fn()
        raised[kind] = type(e.value)
    assert raised == {"Schema": tm.SchemaError, "Parameter": tm.ParameterError,
                      "Data": tm.DataError, "Internal": tm.InternalError}


def test_reserved_names_are_the_tables_columns():
    # The names refused for attributes (one list, exported by the core) are exactly the
    # standard columns that to_frame and case_table produce.
    from tracemill import _core

    frame = pd.DataFrame({"case": ["a", "a"], "activity": ["x", "y"],
                          "time": pd.date_range("2025-01-06", periods=2, freq="h")})
    log = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time")
    assert list(log.to_frame().columns) == list(_core.EVENT_TABLE_COLUMNS)
    assert list(log.case_table().columns) == ["case", *_core.CASE_TABLE_COLUMNS]
