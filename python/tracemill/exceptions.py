"""Exceptions and warnings raised by tracemill.

Every error derives from :class:`TracemillError`, itself a :class:`ValueError`, so that
``except ValueError`` keeps working in pipelines that already catch bad input. Errors carry
structured fields where they apply: ``column`` and ``row`` (0-based input row) for schema and
timestamp problems, ``line`` (1-based) for file formats and timestamps read from files,
``parameter`` for bad parameters.

Examples
--------
>>> import pandas as pd, tracemill as tm
>>> frame = pd.DataFrame({"order": ["r1"], "step": ["Inspect"], "at": ["2025-01-06 09:00"]})
>>> try:
...     tm.EventLog.from_frame(frame, case="order", activity="stpe", timestamp="at")
... except tm.SchemaError as e:
...     print(e.column)
stpe
"""

from __future__ import annotations


def param_error(name: str, message: str) -> ParameterError:
    """A :class:`ParameterError` about parameter ``name`` (for raising)."""
    e = ParameterError(message)
    e.parameter = name
    return e


class TracemillError(ValueError):
    """Base class of all tracemill errors."""

    column: str | None = None
    row: int | None = None
    line: int | None = None
    parameter: str | None = None


class SchemaError(TracemillError):
    """A column is missing or misspelt, has the wrong type, or holds a forbidden value (e.g. a
    null case id)."""


class TimestampError(TracemillError):
    """A timestamp is null, unparseable, or naive and timezone-aware values are mixed.
    ``column`` and ``row`` name it; read from a file, ``line`` (1-based) too."""


class FormatError(TracemillError):
    """A file (XES, PNML, ...) is malformed, truncated, or uses a refused construct such as a
    DOCTYPE with entity definitions. ``line`` gives the 1-based line where known."""


class ParameterError(TracemillError):
    """A parameter is outside its allowed range; ``parameter`` names it."""


class DataError(TracemillError):
    """The data cannot be processed as asked (an empty log or selection, NaN features, ...)."""


class LimitError(TracemillError):
    """A result would exceed a memory or size budget; the message says how much was needed and
    which parameter to raise."""


class TracemillIOError(TracemillError):
    """A file could not be read or written."""


class InternalError(TracemillError):
    """A bug in tracemill (for example a caught panic in a native kernel). Please report it."""


class NotFittedError(TracemillError, AttributeError):
    """An estimator was used before ``fit``."""


class TracemillWarning(UserWarning):
    """Base class of tracemill warnings."""


class DataQualityWarning(TracemillWarning):
    """The input had something worth knowing that was repaired or kept, never dropped:
    duplicate events, unsorted rows, empty traces."""


__all__ = [
    "DataError",
    "DataQualityWarning",
    "FormatError",
    "InternalError",
    "LimitError",
    "NotFittedError",
    "ParameterError",
    "SchemaError",
    "TimestampError",
    "TracemillError",
    "TracemillIOError",
    "TracemillWarning",
]
