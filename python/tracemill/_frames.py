"""Adapters between dataframes (pandas, polars, pyarrow) and the native log's columns.

Each column crosses into Rust as a numpy array: dictionary codes (``uint32``) for text, ``int64``
nanoseconds (UTC) for timestamps, plain numeric arrays otherwise, with a boolean validity mask
where nulls exist. Text is encoded by tracemill's native factoriser straight from Arrow buffers
when the column is Arrow-backed (polars, pyarrow, pandas' Arrow-backed strings), and by
``pandas.factorize`` otherwise; no Python loop runs over the rows.

Timestamps: timezone-aware values are converted to UTC; naive values are taken as UTC and the
log remembers that they were naive, so that ``to_frame`` gives them back naive. Mixing naive and
aware values in one column is an error, as is a null or unparseable timestamp.
"""

from __future__ import annotations

import difflib
import importlib
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from . import _core
from .exceptions import SchemaError, TimestampError

NULL_CODE = np.uint32(0xFFFFFFFF)
_AWARE = r"(?:[zZ]|[+-]\d{2}:?\d{2})\s*$"
_ISO = r"^\s*\d{4}-\d{2}-\d{2}"


def optional_import(name: str, extra: str | None = None) -> Any:
    """Import an optional dependency or raise an ImportError that says how to install it."""
    try:
        return importlib.import_module(name)
    except ImportError as e:  # pragma: no cover - depends on the environment
        hint = f"pip install 'tracemill[{extra}]'" if extra else f"pip install {name}"
        raise ImportError(f"this feature needs the optional package '{name}': {hint}") from e


def frame_kind(frame: Any) -> str:
    """'pandas', 'polars' or 'arrow', from the frame's type (without importing libraries)."""
    mod = type(frame).__module__.split(".")[0]
    if mod == "pandas" and type(frame).__name__ == "DataFrame":
        return "pandas"
    if mod == "polars" and type(frame).__name__ == "DataFrame":
        return "polars"
    if mod == "pyarrow" and type(frame).__name__ in ("Table", "RecordBatch"):
        return "arrow"
    raise SchemaError(
        "from_frame takes a pandas DataFrame, a polars DataFrame or a pyarrow Table; "
        f"got {type(frame).__module__}.{type(frame).__name__}"
    )


def column_names(frame: Any, kind: str) -> list[str]:
    if kind == "pandas":
        return [str(c) for c in frame.columns]
    if kind == "polars":
        return list(frame.columns)
    return list(frame.column_names)


def get_column(frame: Any, kind: str, name: str, role: str) -> Any:
    names = column_names(frame, kind)
    if name not in names:
        close = difflib.get_close_matches(name, names, n=1, cutoff=0.6)
        hint = f"; did you mean '{close[0]}'?" if close else f"; the columns are {names}"
        err = SchemaError(f"the {role} column '{name}' is not in the frame{hint}")
        err.column = name
        raise err
    if kind == "pandas":
        return frame[name]
    if kind == "polars":
        return frame.get_column(name)
    col = frame.column(name)
    return col


def _schema(column: str, row: int | None, msg: str) -> SchemaError:
    e = SchemaError(msg)
    e.column, e.row = column, row
    return e


def _tserr(column: str, row: int | None, msg: str) -> TimestampError:
    e = TimestampError(msg)
    e.column, e.row = column, row
    return e


# --------------------------------------------------------------------------- arrow helpers


def _arrow_text(arr: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray | None] | None:
    """Offsets (int64), data (uint8) and validity of an Arrow text array, or None."""
    pa = importlib.import_module("pyarrow")
    if hasattr(arr, "combine_chunks"):
        arr = arr.combine_chunks()
    t = arr.type
    if pa.types.is_dictionary(t):
        arr = arr.dictionary_decode()
        t = arr.type
    if not (pa.types.is_string(t) or pa.types.is_large_string(t) or pa.types.is_string_view(t)):
        return None
    if not pa.types.is_large_string(t):
        arr = arr.cast(pa.large_string())
    bufs = arr.buffers()
    n = len(arr)
    offsets = np.frombuffer(bufs[1], dtype=np.int64)[arr.offset : arr.offset + n + 1]
    data = np.frombuffer(bufs[2], dtype=np.uint8) if bufs[2] is not None else np.zeros(0, np.uint8)
    valid = None
    if arr.null_count:
        valid = arr.is_valid().to_numpy(zero_copy_only=False)
    return np.ascontiguousarray(offsets), data, valid


def _encode_arrow_text(arr: Any, column: str) -> tuple[np.ndarray, list[str], np.ndarray | None]:
    parts = _arrow_text(arr)
    if parts is None:
        raise TypeError("not text")
    offsets, data, valid = parts
    codes, names = _core.factorize_utf8(offsets, data, valid, column)
    return codes, names, valid


# --------------------------------------------------------------------------- labels


@dataclass
class Labels:
    """A dictionary-encoded column: codes, the distinct values as text and as originals."""

    codes: np.ndarray  # uint32, NULL_CODE where null
    names: list[str]
    originals: np.ndarray
    valid: np.ndarray | None = None


def _labels_from_ints(values: np.ndarray, valid: np.ndarray | None, name: str) -> Labels:
    if values.dtype == np.uint64 and len(values):
        # int64 codes would wrap 2**63 and above around to negative ids
        _check_u64(values[valid].max() if valid is not None and valid.any() else values.max(),
                   name)
    codes, uniq = _core.factorize_i64(np.ascontiguousarray(values, dtype=np.int64), valid)
    return Labels(codes, uniq.astype(str).tolist(), uniq, valid)


def encode_labels(col: Any, kind: str, name: str) -> Labels:
    """Dictionary-encode a column of labels (text, integers or categories) of any frame kind."""
    if kind == "pandas":
        pd = importlib.import_module("pandas")
        dt = col.dtype
        if isinstance(dt, pd.CategoricalDtype):
            # Category codes follow the category order and may name unused categories: re-encode
            # them by first appearance, as every other input is, keeping only used categories.
            codes = col.cat.codes.to_numpy().astype(np.int64)
            valid = codes >= 0 if (codes < 0).any() else None
            c, used = _core.factorize_i64(codes, valid)
            cats = np.asarray(col.cat.categories, dtype=object)[used]
            return Labels(c, [str(x) for x in cats], cats, valid)
        if dt.kind in "iu" and not isinstance(dt, pd.api.extensions.ExtensionDtype):
            return _labels_from_ints(col.to_numpy(), None, name)
        if isinstance(dt, pd.api.extensions.ExtensionDtype) and dt.kind in "iu":
            valid = ~col.isna().to_numpy()
            vals = col.to_numpy(dtype=np.uint64 if dt.kind == "u" else np.int64, na_value=0)
            return _labels_from_ints(vals, None if valid.all() else valid, name)
        try:
            pa = importlib.import_module("pyarrow")
            if getattr(dt, "storage", None) == "pyarrow" or isinstance(dt, pd.ArrowDtype):
                codes, names, valid = _encode_arrow_text(pa.array(col), name)
                return Labels(codes, names, np.asarray(names, dtype=object), valid)
        except (ImportError, TypeError):
            pass
        codes, uniq = pd.factorize(col, use_na_sentinel=True)
        valid = codes >= 0
        c = np.where(valid, codes, NULL_CODE).astype(np.uint32)
        originals = np.asarray(uniq, dtype=object if uniq.dtype.kind not in "iufb" else None)
        return Labels(c, [str(x) for x in uniq], originals, None if valid.all() else valid)
    if kind == "polars":
        pl = importlib.import_module("polars")
        dt = col.dtype
        if dt.is_integer():
            valid = None if col.null_count() == 0 else col.is_not_null().to_numpy()
            _check_u64(col.max() if len(col) else 0, name)
            vals = col.fill_null(0).cast(pl.Int64).to_numpy()
            return _labels_from_ints(vals, valid, name)
        try:
            codes, names, valid = _encode_arrow_text(col.cast(pl.String).to_arrow(), name)
            return Labels(codes, names, np.asarray(names, dtype=object), valid)
        except ImportError:  # pragma: no cover - polars without pyarrow
            s = col.cast(pl.String)
            uniq = s.drop_nulls().unique(maintain_order=True)
            idx = s.replace_strict(uniq, pl.arange(0, len(uniq), eager=True, dtype=pl.UInt32),
                                   default=None)
            valid = None if s.null_count() == 0 else s.is_not_null().to_numpy()
            codes = idx.fill_null(int(NULL_CODE)).cast(pl.UInt32).to_numpy()
            names = uniq.to_list()
            return Labels(codes, names, np.asarray(names, dtype=object), valid)
    # arrow
    pa = importlib.import_module("pyarrow")
    arr = col.combine_chunks() if hasattr(col, "combine_chunks") else col
    t = arr.type
    if pa.types.is_integer(t):
        valid = None if arr.null_count == 0 else arr.is_valid().to_numpy(zero_copy_only=False)
        if pa.types.is_uint64(t):
            _check_u64(importlib.import_module("pyarrow.compute").max(arr).as_py(), name)
        vals = arr.fill_null(0).cast(pa.int64()).to_numpy(zero_copy_only=False)
        return _labels_from_ints(vals, valid, name)
    try:
        codes, names, valid = _encode_arrow_text(arr, name)
    except TypeError:
        codes, names, valid = _encode_arrow_text(arr.cast(pa.large_string()), name)
    return Labels(codes, names, np.asarray(names, dtype=object), valid)


def first_null_row(valid: np.ndarray | None) -> int | None:
    if valid is None:
        return None
    bad = np.flatnonzero(~valid)
    return int(bad[0]) if len(bad) else None


# --------------------------------------------------------------------------- timestamps


@dataclass
class Times:
    ns: np.ndarray  # int64, UTC
    valid: np.ndarray | None
    tz: str | None  # None = the input was naive


def _check_mixed(aware: np.ndarray, valid: np.ndarray, name: str, show: Any) -> bool:
    """True when all present values are aware, False when all are naive; error when mixed."""
    present = np.flatnonzero(valid)
    if len(present) == 0:
        return False
    first = bool(aware[present[0]])
    diff = present[aware[present] != first]
    if len(diff):
        r = int(diff[0])
        raise _tserr(
            name,
            r,
            f"column '{name}' mixes timezone-aware and naive timestamps: row {int(present[0])} is "
            f"{'aware' if first else 'naive'} but row {r} ({show(r)!r}) is not; "
            "localise or strip the zone consistently first",
        )
    return first


def encode_times(col: Any, kind: str, name: str, fmt: str | None, *, allow_null: bool) -> Times:
    """Timestamps as int64 ns UTC (see the module notes on naive values)."""
    if kind == "arrow":
        pa = importlib.import_module("pyarrow")
        arr = col.combine_chunks() if hasattr(col, "combine_chunks") else col
        if pa.types.is_timestamp(arr.type) or pa.types.is_date(arr.type):
            tz = getattr(arr.type, "tz", None)
            vals = _ns_of_datetimes(arr.to_numpy(zero_copy_only=False), name)  # UTC values
            valid = None if arr.null_count == 0 else arr.is_valid().to_numpy(zero_copy_only=False)
            return _finish_times(vals, valid, tz, name, allow_null)
        try:
            pl = importlib.import_module("polars")
            return encode_times(pl.from_arrow(arr), "polars", name, fmt, allow_null=allow_null)
        except ImportError:  # pragma: no cover
            return encode_times(arr.to_pandas(), "pandas", name, fmt, allow_null=allow_null)
    if kind == "polars":
        pl = importlib.import_module("polars")
        dt = col.dtype
        if dt == pl.Date or isinstance(dt, pl.Datetime):
            tz = dt.time_zone if isinstance(dt, pl.Datetime) else None
            vals = _ns_of_datetimes(col.to_numpy(), name)  # UTC values, any unit
            valid = None if col.null_count() == 0 else col.is_not_null().to_numpy()
            return _finish_times(vals, valid, tz, name, allow_null)
        if dt in (pl.String, pl.Categorical) or isinstance(dt, pl.Enum):
            s = col.cast(pl.String)
            present = s.is_not_null().to_numpy()
            aware = s.str.contains(_AWARE).fill_null(False).to_numpy()
            if fmt is not None:
                is_aware = "%z" in fmt or "%Z" in fmt
            else:
                # Without a format only ISO 8601 is accepted, as for pandas input: polars would
                # otherwise guess a layout such as day/month/year for ambiguous dates.
                iso = s.str.contains(_ISO).fill_null(True).to_numpy()
                bad = np.flatnonzero(present & ~iso)
                if len(bad):
                    r = int(bad[0])
                    raise _tserr(name, r, f"column '{name}', row {r}: {s[r]!r} is not an ISO 8601 "
                                 "timestamp; pass timestamp_format= (a strptime format) to parse "
                                 "other layouts")
                is_aware = _check_mixed(aware, present, name, lambda r: s[r])
            try:
                # Microseconds first: parsing straight to ns wraps years beyond 1677-2262
                # around silently; _ns_of_datetimes refuses them. Then ns, for the digits.
                parse = {"format": fmt, "strict": False, "time_zone": "UTC" if is_aware else None}
                parsed = s.str.to_datetime(time_unit="us", **parse)
            except Exception as e:  # polars raises for an unusable format
                raise _tserr(name, None, f"column '{name}': cannot parse timestamps: {e}") from e
            bad = np.flatnonzero(present & ~parsed.is_not_null().to_numpy())
            if len(bad):
                r = int(bad[0])
                raise _tserr(name, r, f"column '{name}', row {r}: cannot parse {s[r]!r} as a "
                             f"timestamp{' with format ' + repr(fmt) if fmt else ''}")
            _ns_of_datetimes(parsed.to_numpy(), name)
            vals = _ns_of_datetimes(s.str.to_datetime(time_unit="ns", **parse).to_numpy(), name)
            valid = None if present.all() else present
            return _finish_times(vals, valid, "UTC" if is_aware else None, name, allow_null)
        raise _tserr(name, None, f"column '{name}' has type {dt}; expected datetimes or text")
    pd = importlib.import_module("pandas")
    dt = col.dtype
    if isinstance(dt, pd.DatetimeTZDtype):
        tz = zone_name(dt.tz)
        s = col.dt.tz_convert("UTC").dt.tz_localize(None)
        return _pandas_naive_ns(s, tz, name, allow_null)
    if dt.kind == "M":
        return _pandas_naive_ns(col, None, name, allow_null)
    if dt.kind in "OSU" or pd.api.types.is_string_dtype(dt):
        present = ~col.isna().to_numpy()
        vals = col.to_numpy(dtype=object)
        first = np.flatnonzero(present)
        if len(first) and isinstance(vals[first[0]], str):  # text (else datetime objects)
            strs = col.astype("string")
            aware = strs.str.contains(_AWARE, regex=True).fillna(False).to_numpy(dtype=bool)
            is_aware = ("%z" in fmt or "%Z" in fmt) if fmt else _check_mixed(
                aware, present, name, lambda r: vals[r])
            parsed = pd.to_datetime(col, format=fmt or "ISO8601", errors="coerce", utc=is_aware)
        else:  # python datetime objects
            aware = np.array([getattr(v, "tzinfo", None) is not None for v in vals])
            is_aware = _check_mixed(aware, present, name, lambda r: vals[r])
            parsed = pd.to_datetime(col, errors="coerce", utc=is_aware)
        bad = np.flatnonzero(present & parsed.isna().to_numpy())
        if len(bad):
            r = int(bad[0])
            raise _tserr(name, r, f"column '{name}', row {r}: cannot parse {vals[r]!r} as a "
                         f"timestamp{' with format ' + repr(fmt) if fmt else ''}")
        if is_aware:
            parsed = parsed.dt.tz_convert("UTC").dt.tz_localize(None)
        return _pandas_naive_ns(parsed, "UTC" if is_aware else None, name, allow_null)
    raise _tserr(name, None, f"column '{name}' has dtype {dt}; expected datetimes or text")


def zone_name(tz: Any) -> str:
    """A name for a time zone that pandas, pyarrow and (for whole hours) polars accept: the IANA
    key of a named zone, ``+HH:MM`` for a fixed offset (``str`` would give ``UTC+01:00``)."""
    key = getattr(tz, "key", None) or getattr(tz, "zone", None)  # zoneinfo / pytz
    if isinstance(key, str):
        return key
    try:
        off = tz.utcoffset(None)
    except (TypeError, ValueError, AttributeError):  # pragma: no cover - unusual tzinfo
        off = None
    if off is None:
        return str(tz)
    minutes = int(off.total_seconds()) // 60
    if minutes == 0:
        return "UTC"
    h, m = divmod(abs(minutes), 60)
    return f"{'+' if minutes > 0 else '-'}{h:02d}:{m:02d}"


def _pandas_naive_ns(s: Any, tz: str | None, name: str, allow_null: bool) -> Times:
    valid = ~s.isna().to_numpy()
    vals = _ns_of_datetimes(s.to_numpy(), name)
    return _finish_times(vals, None if valid.all() else valid, tz, name, allow_null)


_NS_MAX = np.iinfo(np.int64).max


def _ns_of_datetimes(vals: np.ndarray, name: str) -> np.ndarray:
    """``datetime64`` values of any unit as int64 ns (0 under NaT), refusing values that do not
    fit int64 nanoseconds (before 1677-09-21 or after 2262-04-11) instead of wrapping them."""
    vals = np.asarray(vals)
    if vals.dtype.kind != "M":  # pragma: no cover - callers pass datetimes
        raise _tserr(name, None, f"column '{name}' has dtype {vals.dtype}; expected datetimes")
    raw = vals.view(np.int64)
    nat = np.isnat(vals)
    unit, count = np.datetime_data(vals.dtype)
    factor = int(np.timedelta64(count, unit) // np.timedelta64(1, "ns")) if unit != "ns" else 1
    if factor > 1:
        lim = _NS_MAX // factor
        bad = np.flatnonzero(~nat & ((raw > lim) | (raw < -lim)))
        if len(bad):
            r = int(bad[0])
            raise _tserr(name, r, f"column '{name}', row {r}: {vals[r]} is outside the range of "
                         "nanosecond timestamps (1677-09-21 to 2262-04-11)")
    out = raw * factor if factor > 1 else raw.copy()
    out[nat] = 0
    return out


def _finish_times(vals: np.ndarray, valid: np.ndarray | None, tz: str | None, name: str,
                  allow_null: bool) -> Times:
    if valid is not None and not allow_null:
        r = first_null_row(valid)
        raise _tserr(name, r, f"column '{name}', row {r}: the timestamp is null; every event "
                     "needs a timestamp")
    return Times(np.ascontiguousarray(vals, dtype=np.int64), valid, tz)


# --------------------------------------------------------------------------- typed attributes


@dataclass
class Prepared:
    """Arguments for the native builder plus what to_frame needs to give values back."""

    kwargs: dict[str, Any]
    case_originals: np.ndarray
    time_zone: str | None
    column_tz: dict[str, str | None] = field(default_factory=dict)


def encode_attribute(col: Any, kind: str, name: str) -> tuple[tuple, str | None]:
    """`(name, kind, values, valid, dict)` for the native builder, and the timezone of a
    timestamp column (None otherwise or when naive)."""
    if kind == "polars":
        pl = importlib.import_module("polars")
        dt = col.dtype
        valid = None if col.null_count() == 0 else col.is_not_null().to_numpy()
        if dt == pl.Boolean:
            return (name, "bool", col.fill_null(False).to_numpy().astype(bool), valid, None), None
        if dt.is_integer():
            _check_u64(col.max() if len(col) else 0, name)
            return (name, "int", col.fill_null(0).cast(pl.Int64).to_numpy(), valid, None), None
        if dt.is_float():
            return (name, "float", col.cast(pl.Float64).fill_null(0.0).to_numpy(), valid,
                    None), None
        if isinstance(dt, pl.Datetime) or dt == pl.Date:
            t = encode_times(col, kind, name, None, allow_null=True)
            return (name, "time", t.ns, t.valid, None), t.tz
    elif kind == "pandas":
        pd = importlib.import_module("pandas")
        dt = col.dtype
        isna = col.isna().to_numpy()
        valid = None if not isna.any() else ~isna
        if dt.kind == "b":
            vals = col.to_numpy(dtype=bool, na_value=False)
            return (name, "bool", vals, valid, None), None
        if dt.kind in "iu":
            if dt.kind == "u" and len(col):
                _check_u64(col.max(), name)
            return (name, "int", col.to_numpy(dtype=np.int64, na_value=0), valid, None), None
        if dt.kind == "f":
            return (name, "float", col.to_numpy(dtype=np.float64, na_value=0.0), valid, None), None
        if dt.kind == "M" or isinstance(dt, pd.DatetimeTZDtype):
            t = encode_times(col, kind, name, None, allow_null=True)
            return (name, "time", t.ns, t.valid, None), t.tz
    else:
        pa = importlib.import_module("pyarrow")
        arr = col.combine_chunks() if hasattr(col, "combine_chunks") else col
        t = arr.type
        valid = None if arr.null_count == 0 else arr.is_valid().to_numpy(zero_copy_only=False)
        if pa.types.is_boolean(t):
            return (name, "bool", arr.fill_null(False).to_numpy(zero_copy_only=False), valid,
                    None), None
        if pa.types.is_integer(t):
            return (name, "int", arr.fill_null(0).cast(pa.int64()).to_numpy(zero_copy_only=False),
                    valid, None), None
        if pa.types.is_floating(t):
            return (name, "float",
                    arr.fill_null(0.0).cast(pa.float64()).to_numpy(zero_copy_only=False), valid,
                    None), None
        if pa.types.is_timestamp(t) or pa.types.is_date(t):
            tt = encode_times(arr, kind, name, None, allow_null=True)
            return (name, "time", tt.ns, tt.valid, None), tt.tz
    lab = encode_labels(col, kind, name)
    return (name, "str", lab.codes, lab.valid, lab.names), None


def _check_u64(mx: Any, name: str) -> None:
    if mx is not None and int(mx) > np.iinfo(np.int64).max:
        raise _schema(name, None, f"column '{name}' holds unsigned values above 2**63-1, which "
                      "do not fit a 64-bit signed integer")


def prepare(frame: Any, *, case: str, activity: str, timestamp: str, resource: str | None,
            lifecycle: str | None, case_attributes: list[str] | None,
            event_attributes: list[str] | None, timestamp_format: str | None) -> Prepared:
    """Turn a frame into the arguments of the native builder. See the module notes."""
    kind = frame_kind(frame)
    n = frame.height if kind == "polars" else (len(frame) if kind == "pandas" else frame.num_rows)
    roles = {"case": case, "activity": activity, "timestamp": timestamp}
    if resource is not None:
        roles["resource"] = resource
    if lifecycle is not None:
        roles["lifecycle"] = lifecycle
    cols = {role: get_column(frame, kind, name, role) for role, name in roles.items()}
    case_attributes = list(case_attributes or [])
    event_attributes = list(event_attributes or [])
    seen: dict[str, str] = {}
    for role, name in [*roles.items(), *[("case attribute", c) for c in case_attributes],
                       *[("event attribute", c) for c in event_attributes]]:
        if name in seen:
            raise _schema(name, None, f"column '{name}' is given twice (as {seen[name]} and as "
                          f"{role})")
        seen[name] = role
    # Attributes keep their names in to_frame and case_table, beside the standard columns: a
    # clash would silently replace one column by the other.
    taken = {*_core.EVENT_TABLE_COLUMNS,
             *(r for r in ("resource", "lifecycle") if r in roles)}
    table = set(_core.CASE_TABLE_COLUMNS)
    for role, names, reserved in [("event attribute", event_attributes, taken),
                                  ("case attribute", case_attributes, taken | table)]:
        for name in names:
            if name in reserved:
                raise _schema(name, None, f"the {role} '{name}' has the name of a standard column "
                              "of the log's tables "
                              f"({', '.join(sorted(reserved))}); rename it first")
    if n == 0:
        raise _schema(case, None, "the frame has no rows: an event log needs at least one event")
    case_l = encode_labels(cols["case"], kind, case)
    r = first_null_row(case_l.valid)
    if r is not None:
        raise _schema(case, r, f"column '{case}', row {r}: the case id is null; every event "
                      "needs a case")
    act_l = encode_labels(cols["activity"], kind, activity)
    r = first_null_row(act_l.valid)
    if r is not None:
        raise _schema(activity, r, f"column '{activity}', row {r}: the activity is null; every "
                      "event needs an activity")
    times = encode_times(cols["timestamp"], kind, timestamp, timestamp_format, allow_null=False)
    kwargs: dict[str, Any] = {
        "case": case_l.codes, "case_names": case_l.names,
        "activity": act_l.codes, "activity_names": act_l.names, "time": times.ns,
    }
    for role in ("resource", "lifecycle"):
        if role in cols:
            lab = encode_labels(cols[role], kind, roles[role])
            kwargs[role] = (roles[role], "str", lab.codes, lab.valid, lab.names)
    column_tz: dict[str, str | None] = {}
    ev = []
    for name in event_attributes:
        t, tz = encode_attribute(get_column(frame, kind, name, "event attribute"), kind, name)
        ev.append(t)
        column_tz[name] = tz
    ca = []
    for name in case_attributes:
        t, tz = encode_attribute(get_column(frame, kind, name, "case attribute"), kind, name)
        ca.append(t)
        column_tz[name] = tz
    kwargs["event_attrs"] = ev
    kwargs["case_attrs"] = ca
    return Prepared(kwargs, case_l.originals, times.tz, column_tz)
