"""IEEE 1849 XES (eXtensible Event Stream) files: read and write event logs.

The reader streams the XML (plain or gzip, detected from the first bytes) in native code. What
each construct becomes:

* every ``trace`` is a case labelled by its ``concept:name`` (a missing label becomes
  ``trace-<n>``, counted in a warning); trace attributes are case attributes;
* an event's ``concept:name`` is its activity, ``time:timestamp`` its timestamp (both
  required), ``org:resource`` its resource and ``lifecycle:transition`` its lifecycle
  transition; other event attributes become typed columns (string/id -> text, int, float,
  boolean, date -> timestamp);
* nested attributes (meta-attributes, ``list`` items, the pre-IEEE ``container`` type) are
  flattened to dotted keys: ``parent.child``, list items ``parent.0``, ``parent.1``, ...;
* an attribute key that would hide another column of :meth:`EventLog.to_frame` or
  :meth:`EventLog.case_table` (an event key ``case``, ``activity``, ``timestamp``, ``resource``
  or ``lifecycle``; a trace key ``n_events``, ``start``, ...; the same key on traces and on
  events) is kept as ``key#2`` with a :class:`DataQualityWarning`, the rule for a key met twice;
* ``extension``, ``global`` and ``classifier`` declarations and log attributes are kept in
  :attr:`XesInfo.meta` (globals are reported, not filled into events);
* unknown elements and empty traces are reported as :class:`DataQualityWarning`, not errors;
* a ``DOCTYPE`` (entity definitions, external entities) is refused at once: entities are never
  expanded or fetched.

The writer produces XES 2016-compatible files (``xes.version="1849-2016"``) with the concept,
time, lifecycle and organizational extensions; reading them back gives the same log.

References
----------
IEEE Std 1849-2016, IEEE Standard for eXtensible Event Stream (XES) for Achieving
Interoperability in Event Logs and Event Streams; revised as IEEE Std 1849-2023.
"""

from __future__ import annotations

import os
import warnings
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from . import _core
from .exceptions import DataQualityWarning
from .log import EventLog, _warn_report


@dataclass(frozen=True)
class XesInfo:
    """What an XES file declared (``meta``) and what the reader noticed (``report``)."""

    meta: dict[str, Any] = field(default_factory=dict)
    report: dict[str, Any] = field(default_factory=dict)


def read_xes(source: str | os.PathLike[str] | Any, *, progress: Any = None) -> EventLog:
    """Read an XES log from a path or a binary file-like object (plain or gzip).

    Examples
    --------
    >>> import os, tempfile, tracemill as tm
    >>> log, _ = tm.workshop(50, random_state=2)
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = os.path.join(d, "workshop.xes.gz")
    ...     log.to_xes(path)
    ...     again = tm.EventLog.from_xes(path)
    >>> again.n_events == log.n_events
    True
    """
    if isinstance(source, (str, os.PathLike)):
        handle, n_dup, n_reo, meta, report = _core.read_xes_file(os.fspath(source), progress)
    else:
        data = source.read()
        if isinstance(data, str):
            data = data.encode("utf-8")
        handle, n_dup, n_reo, meta, report = _core.read_xes_data(bytes(data))
    _warn_report(n_dup, n_reo, report.get("n_empty_traces", 0))
    for key, what in (("n_generated_labels", "traces had no concept:name and were labelled "
                       "trace-<n>"),
                      ("n_duplicate_labels", "traces repeat the label of an earlier trace and "
                       "are kept as separate cases"),
                      ("n_repeated_keys", "attributes repeat a key within one element and were "
                       "kept as key#2, key#3, ...")):
        if report.get(key):
            warnings.warn(f"{report[key]} {what}", DataQualityWarning, stacklevel=3)
    for conflict in report.get("type_conflicts", []):
        warnings.warn(f"XES type conflict, kept as text: {conflict}", DataQualityWarning,
                      stacklevel=3)
    for w in report.get("warnings", []):
        warnings.warn(f"XES: {w}", DataQualityWarning, stacklevel=3)
    log = EventLog(handle, np.asarray(handle.case_names, dtype=object), "UTC",
                   {t[0]: "UTC" for t in [*handle.event_attrs(), *handle.case_attrs()]
                    if t[1] == "time"})
    log._source_info = XesInfo(meta, report)
    return log


def xes_info(log: EventLog) -> XesInfo | None:
    """The declarations and reader report of a log read from XES (None for other logs,
    including selections made from it)."""
    info = log._source_info
    return info if isinstance(info, XesInfo) else None


def write_xes(log: EventLog, path: str | os.PathLike[str], *, name: str | None = None) -> None:
    """Write ``log`` as an XES 2016-compatible file; gzip when the path ends in ``.gz``.

    Case ids are written as text (``concept:name`` of each trace) and timestamps in UTC with
    all nanosecond digits. A text holding a character XML 1.0 cannot carry (most C0 controls,
    U+FFFE, U+FFFF) raises :class:`DataError` naming the case and the attribute, and the
    partly written file is removed.
    """
    _core.write_xes_file(log.handle, os.fspath(path), name)


__all__ = ["XesInfo", "read_xes", "write_xes", "xes_info"]
