"""Building result tables (pandas by default; polars or pyarrow on request) from numpy arrays."""

from __future__ import annotations

import importlib
from typing import Any, Literal

import numpy as np

from .exceptions import DataError, ParameterError

FrameKind = Literal["pandas", "polars", "arrow"]
NS_PER_HOUR = 3_600_000_000_000


def fmt_hours(ns: float) -> str:
    """A duration in ns as hours, or days from 48 h on (for reports)."""
    h = ns / NS_PER_HOUR
    return f"{h / 24:.1f} d" if abs(h) >= 48 else f"{h:.1f} h"


def check_kind(kind: str) -> None:
    if kind not in ("pandas", "polars", "arrow"):
        e = ParameterError(f"kind must be 'pandas', 'polars' or 'arrow'; got {kind!r}")
        e.parameter = "kind"
        raise e


def _load(kind: str) -> Any:
    name = {"pandas": "pandas", "polars": "polars", "arrow": "pyarrow"}[kind]
    try:
        return importlib.import_module(name)
    except ImportError as e:  # pragma: no cover - depends on the environment
        raise ImportError(
            f"kind={kind!r} needs the optional package '{name}': pip install 'tracemill[{kind}]'"
        ) from e


class Col:
    """A result column: values plus how to present them."""

    def __init__(self, values: Any, *, kind: str = "plain", valid: np.ndarray | None = None,
                 names: list[str] | np.ndarray | None = None, tz: str | None = None) -> None:
        self.values = values
        # plain | text (codes + names) | time (int64 ns) | duration (ns) | seq (tuples of text)
        self.kind = kind
        self.valid = valid
        self.names = names
        self.tz = tz


def _text_values(c: Col) -> np.ndarray:
    names = np.asarray(c.names, dtype=object) if not isinstance(c.names, np.ndarray) else c.names
    codes = np.asarray(c.values)
    if len(names) == 0:
        out = np.full(len(codes), None, dtype=object)
    else:
        safe = np.where(codes < len(names), codes, 0)
        out = names[safe]
    if c.valid is not None:
        out = out.astype(object) if out.dtype != object else out.copy()
        out[~c.valid] = None
    return out


def make_frame(cols: dict[str, Col], kind: str) -> Any:
    """A dataframe of the given kind from result columns."""
    check_kind(kind)
    lib = _load(kind)
    if kind == "pandas":
        data = {}
        for k, c in cols.items():
            if c.kind == "text":
                data[k] = _text_values(c)
            elif c.kind == "time":
                s = lib.to_datetime(np.asarray(c.values, dtype=np.int64), unit="ns",
                                    utc=c.tz is not None)
                if c.tz is not None:
                    s = s.tz_convert(c.tz)
                s = lib.Series(s)
                if c.valid is not None:
                    s[~c.valid] = lib.NaT
                data[k] = s.to_numpy() if c.tz is None else s.array
            elif c.kind == "duration":
                v = np.asarray(c.values)
                if v.dtype.kind == "f":
                    v = np.where(np.isnan(v), np.iinfo(np.int64).min, np.round(v)).astype(np.int64)
                data[k] = v.view("timedelta64[ns]")
            else:
                v = c.values
                if c.valid is not None:
                    v = lib.array(v, dtype=_pd_nullable(np.asarray(v).dtype))
                    v[~c.valid] = lib.NA
                data[k] = v
        return lib.DataFrame(data)
    if kind == "polars":
        series = []
        for k, c in cols.items():
            if c.kind == "text":
                names = lib.Series(k, list(c.names) if not isinstance(c.names, list) else c.names,
                                   dtype=lib.String)
                if not _is_all_text(c):
                    names = lib.Series(k, [str(x) for x in c.names], dtype=lib.String)
                codes = lib.Series(np.asarray(c.values, dtype=np.uint32))
                s = names.gather(codes.clip(0, max(len(names) - 1, 0))) if len(names) else \
                    lib.Series(k, [None] * len(codes), dtype=lib.String)
                s = s.alias(k)
            elif c.kind == "time":
                s = lib.Series(k, np.asarray(c.values, dtype=np.int64)).cast(
                    lib.Datetime("ns", "UTC" if c.tz else None))
                if c.tz:
                    try:
                        s = s.dt.convert_time_zone(c.tz)
                    except lib.exceptions.PolarsError as e:
                        raise DataError(
                            f"column '{k}': polars has no time zone for '{c.tz}' (it takes IANA "
                            "zones and whole-hour offsets); use kind='pandas' or 'arrow'"
                        ) from e
            elif c.kind == "seq":
                s = lib.Series(k, [list(x) for x in c.values], dtype=lib.List(lib.String))
            elif c.kind == "duration":
                v = np.asarray(c.values)
                if v.dtype.kind == "f":
                    s = lib.Series(k, np.round(v)).fill_nan(None).cast(lib.Int64)
                else:
                    s = lib.Series(k, v.astype(np.int64))
                s = s.cast(lib.Duration("ns"))
            else:
                s = lib.Series(k, c.values)
            if c.valid is not None:
                s = lib.select(lib.when(lib.Series(c.valid)).then(s)).to_series().alias(k)
            series.append(s)
        return lib.DataFrame(series)
    # arrow: via polars when present, else (or for a zone that polars lacks) via pandas
    try:
        return make_frame(cols, "polars").to_arrow()
    except (ImportError, DataError):
        return lib.Table.from_pandas(make_frame(cols, "pandas"), preserve_index=False)


def _is_all_text(c: Col) -> bool:
    names = c.names
    return all(isinstance(x, str) for x in (names if names is not None else []))


def _pd_nullable(dt: np.dtype) -> str:
    return {"b": "boolean", "i": "Int64", "u": "UInt64", "f": "Float64"}.get(dt.kind, "object")
