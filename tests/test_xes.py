"""IEEE 1849 XES: reading hand-written documents, the shape of written files, round trips and
refused input.

What the checks are held against, outside tracemill:

* **IEEE 1849-2016** (element and attribute definitions, as summarised in the project's
  reference notes): a ``log`` holds ``extension``, ``global`` and ``classifier`` declarations,
  log attributes and ``trace`` elements; a trace holds attributes and ``event`` elements; the
  attribute types are ``string``, ``date``, ``int``, ``float``, ``boolean``, ``id`` and ``list``
  (items inside ``values``), any attribute may carry nested meta-attributes, and keys are
  qualified by extension prefixes (``concept:name``, ``time:timestamp``, ``org:resource``,
  ``lifecycle:transition``). The default namespace ``http://www.xes-standard.org/``, the
  ``values`` wrapper and the lifecycle model's transition names are from memory.
* **W3C XML Schema Part 2** for the lexical forms of the attribute values (``xs:dateTime``,
  ``xs:double`` with ``NaN``/``INF``, ``xs:long``, ``xs:boolean`` = true/false/1/0); the
  regular expressions below are written from memory of that standard.
* **W3C XML 1.0** section 2.2 for the characters a document can carry, section 3.3.3 for
  attribute-value normalisation and section 4.6 for the predefined entities.
* Python's ``xml.etree.ElementTree`` and ``gzip`` read what tracemill writes; pandas'
  ``Timestamp`` parses the ISO 8601 instants that the reader must agree with.

The older (pre-IEEE) ``container`` type and ``xes.version`` values ``1.0``/``2.0`` are read too.
"""

from __future__ import annotations

import gzip
import http.server
import io
import math
import os
import re
import resource
import tempfile
import threading
import time
import warnings
import xml.etree.ElementTree as ET
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
from conftest import build, values_of
from hypothesis import given
from strategies import event_frames

import tracemill as tm
from tracemill.xes import read_xes, write_xes, xes_info

DATA = Path(__file__).parent / "data" / "xes"
NS = "http://www.xes-standard.org/"
Q = f"{{{NS}}}"  # ElementTree's spelling of the namespace
ATTR_TYPES = {"string", "date", "int", "float", "boolean", "id", "list", "container"}

# XML Schema Part 2 lexical spaces (from memory): xs:dateTime (3.2.7) and xs:double (3.2.5).
XS_DATETIME = re.compile(
    r"-?([1-9][0-9]{3,}|0[0-9]{3})-(0[1-9]|1[0-2])-(0[1-9]|[12][0-9]|3[01])"
    r"T(([01][0-9]|2[0-3]):[0-5][0-9]:[0-5][0-9](\.[0-9]+)?|24:00:00(\.0+)?)"
    r"(Z|[+-]((0[0-9]|1[0-3]):[0-5][0-9]|14:00))?")
XS_DOUBLE = re.compile(r"[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)([Ee][+-]?[0-9]+)?|-?INF|NaN")
# The standard lifecycle model's transitions (IEEE 1849 lifecycle extension, from memory).
LIFECYCLE = {"schedule", "assign", "withdraw", "reassign", "start", "suspend", "resume",
             "pi_abort", "ate_abort", "complete", "autoskip", "manualskip", "unknown"}


def xml_char_ok(c: str) -> bool:
    """XML 1.0 section 2.2, production [2] Char."""
    o = ord(c)
    return (o in (0x9, 0xA, 0xD) or 0x20 <= o <= 0xD7FF or 0xE000 <= o <= 0xFFFD
            or 0x10000 <= o <= 0x10FFFF)


# --------------------------------------------------------------------------- document builders

def xes(body: str, *, version: str | None = "1849-2016", head: str = "") -> str:
    """A complete XES document around ``body`` (traces), with ``head`` (declarations)."""
    ver = f' xes.version="{version}"' if version is not None else ""
    return ('<?xml version="1.0" encoding="UTF-8"?>\n'
            f'<log{ver} xes.features="nested-attributes" xmlns="{NS}">\n{head}{body}</log>\n')


def event(activity: str = "inspect frame", when: str = "2024-03-04T09:00:00Z",
          extra: str = "") -> str:
    return ("<event>\n"
            f'<string key="concept:name" value="{activity}"/>\n'
            f'<date key="time:timestamp" value="{when}"/>\n'
            f"{extra}</event>\n")


def trace(name: str | None, *events: str, attrs: str = "") -> str:
    label = f'<string key="concept:name" value="{name}"/>\n' if name is not None else ""
    return f"<trace>\n{label}{attrs}{''.join(events)}</trace>\n"


def one_event(extra: str = "", **kw: Any) -> str:
    return xes(trace("bike-17", event(extra=extra, **kw)))


SOURCES = ["path", "gzip path", "binary file", "bytes io", "gzip bytes io", "text io"]


def read(doc: str | bytes, how: str = "bytes io", tmp_path: Path | None = None) -> tm.EventLog:
    """Read ``doc`` from one kind of source (files in ``tmp_path``)."""
    data = doc.encode("utf-8") if isinstance(doc, str) else doc
    if how in ("path", "gzip path", "binary file"):
        assert tmp_path is not None
        p = tmp_path / ("log.xes.gz" if how == "gzip path" else "log.xes")
        p.write_bytes(gzip.compress(data) if how == "gzip path" else data)
        if how == "binary file":
            with open(p, "rb") as fh:
                return tm.EventLog.from_xes(fh)
        return tm.EventLog.from_xes(p if how == "path" else str(p))
    if how == "text io":
        return tm.EventLog.from_xes(io.StringIO(data.decode("utf-8")))
    if how == "gzip bytes io":
        return read_xes(io.BytesIO(gzip.compress(data)))
    return tm.EventLog.from_xes(io.BytesIO(data))


def row0(doc: str) -> dict[str, Any]:
    """The first event of ``doc`` as a dict of ``to_frame`` values."""
    return read(doc).to_frame().to_dict("records")[0]


def ns(text: str) -> int:
    """An ISO 8601 instant as int ns UTC, parsed by pandas (no offset read as UTC)."""
    t = pd.Timestamp(text)
    return (t.tz_localize("UTC") if t.tzinfo is None else t).value


# =========================================================================== 1. reading

@pytest.mark.parametrize("how", SOURCES)
def test_ieee_1849_2016_minimal_document_from_every_source(how: str, tmp_path: Path) -> None:
    doc = xes(trace("bike-17",
                    event("register bike", "2024-05-02T09:30:00+02:00"),
                    event("inspect frame", "2024-05-02T09:45:00.5+02:00")))
    log = read(doc, how, tmp_path)
    f = log.to_frame()
    assert f["case"].tolist() == ["bike-17", "bike-17"]
    assert f["activity"].tolist() == ["register bike", "inspect frame"]
    assert log.arrays()["time"].tolist() == [ns("2024-05-02T07:30:00Z"),
                                             ns("2024-05-02T07:45:00.5Z")]
    assert str(f["timestamp"].dt.tz) == "UTC"


def test_gzip_is_detected_by_content_not_name(tmp_path: Path) -> None:
    p = tmp_path / "plain-name.xes"
    p.write_bytes(gzip.compress(one_event().encode()))
    assert tm.EventLog.from_xes(p).n_events == 1
    q = tmp_path / "named.xes.gz"
    q.write_text(one_event(), encoding="utf-8")  # not compressed despite the name
    assert tm.EventLog.from_xes(q).n_events == 1


# IEEE 1849-2016 date: xs:dateTime with fractions and offsets; each compared with pandas.
@pytest.mark.parametrize("text", [
    "2016-02-29T13:45:00.123+01:00",  # leap day, milliseconds, positive offset
    "2024-03-04T09:30:00.25+01:00",
    "2024-03-04T12:15:00.123456789Z",  # all nine nanosecond digits
    "2024-03-04T12:15:00.100000000000Z",  # trailing zeros beyond ns change nothing
    "2024-03-04T11:00:00-08:00",  # negative offset crosses the date
    "2024-03-04T05:30:00.5+05:30",  # half-hour offset
    "1999-12-31T23:59:59.999999999-00:00",
    "1970-01-01T00:00:00Z",
    "1969-07-20T20:17:40Z",  # before the epoch
    "2024-03-04T11:00:00",  # no offset: tracemill reads UTC (its documented choice)
])
def test_ieee_1849_2016_date_offsets_and_fractions(text: str) -> None:
    r = row0(one_event(when=text, extra=f'<date key="promised" value="{text}"/>\n'))
    assert r["timestamp"].value == ns(text)
    assert r["promised"].value == ns(text)


def test_date_end_of_day_24_00_is_the_next_midnight() -> None:
    # XML Schema Part 2 allows 24:00:00, the end of the day (from memory).
    r = row0(one_event(when="2024-02-28T24:00:00Z"))
    assert r["timestamp"].value == ns("2024-02-29T00:00:00Z")


def test_ieee_1849_2016_every_simple_type_on_events() -> None:
    extra = """<string key="note" value="spoke&#9;tension &lt;ok&gt; &amp; &#x41;&apos;&quot;"/>
<int key="min" value="-9223372036854775808"/>
<int key="max" value="9223372036854775807"/>
<int key="plus" value="+17"/>
<float key="nan" value="NaN"/>
<float key="inf" value="INF"/>
<float key="-inf" value="-INF"/>
<float key="exp" value="1.5E1"/>
<float key="neg zero" value="-0"/>
<float key="small" value="2.5e-6"/>
<boolean key="t" value="true"/>
<boolean key="f" value="false"/>
<boolean key="one" value="1"/>
<boolean key="zero" value="0"/>
<id key="identity:id" value="8f2b1c7e-0d4a-4c55-9a7b-2e6f3d1a9b10"/>
<string key="empty" value=""/>
<string key="spaces" value="  two  spaces "/>
"""
    r = row0(one_event(extra=extra))
    # XML 1.0 4.6 predefined entities and character references; &#9; survives normalisation.
    assert r["note"] == "spoke\ttension <ok> & A'\""
    assert (r["min"], r["max"], r["plus"]) == (-(2**63), 2**63 - 1, 17)
    assert math.isnan(r["nan"])
    assert (r["inf"], r["-inf"], r["exp"], r["small"]) == (math.inf, -math.inf, 15.0, 2.5e-6)
    assert r["neg zero"] == 0.0 and math.copysign(1.0, r["neg zero"]) == -1.0
    assert (r["t"], r["f"], r["one"], r["zero"]) == (True, False, True, False)
    assert r["identity:id"] == "8f2b1c7e-0d4a-4c55-9a7b-2e6f3d1a9b10"
    assert r["empty"] == ""
    assert r["spaces"] == "  two  spaces "


def test_attribute_value_normalisation_of_literal_whitespace() -> None:
    # XML 1.0 3.3.3: a literal tab or line break in an attribute value is read as a space.
    r = row0(one_event(extra='<string key="s" value="line\nbreak\ttab"/>\n'))
    assert r["s"] == "line break tab"


@pytest.mark.parametrize(("xml", "key", "raw"), [
    ('<int key="n" value="9223372036854775808"/>', "n", "9223372036854775808"),  # > xs:long
    ('<int key="n" value="1.5"/>', "n", "1.5"),
    ('<boolean key="b" value="yes"/>', "b", "yes"),
    ('<date key="d" value="2024-02-30T10:00:00Z"/>', "d", "2024-02-30T10:00:00Z"),
    ('<date key="d" value="2024-03-04T10:00:00.1234567891Z"/>', "d",
     "2024-03-04T10:00:00.1234567891Z"),  # below a nanosecond: not rounded silently
])
def test_unparseable_typed_value_is_kept_as_text_with_a_warning(xml: str, key: str,
                                                                raw: str) -> None:
    with pytest.warns(tm.DataQualityWarning, match=f"type conflict.*'{key}'.*line 8"):
        r = row0(one_event(extra=xml + "\n"))
    assert r[key] == raw


def test_same_key_with_two_types_becomes_text() -> None:
    doc = xes(trace("c", event(extra='<int key="size" value="56"/>\n'),
                    event(when="2024-03-04T10:00:00Z", extra='<string key="size" value="L"/>\n')))
    with pytest.warns(tm.DataQualityWarning, match="type conflict.*'size'"):
        log = read(doc)
    assert log.to_frame()["size"].tolist() == ["56", "L"]


def test_ieee_1849_2016_list_and_nested_meta_attributes_become_dotted_keys() -> None:
    extra = """<list key="parts">
  <values>
    <string key="part" value="chain"/>
    <string key="part" value="master link"/>
  </values>
</list>
<list key="bare"><int key="x" value="1"/><int key="x" value="2"/></list>
<list key="empty"><values/></list>
<list key="grid"><values>
  <list key="row"><values><int key="c" value="7"/></values></list>
</values></list>
<float key="cost" value="3.5">
  <string key="currency" value="EUR"/>
  <string key="source" value="quote"><date key="at" value="2024-03-01T08:00:00Z"/></string>
</float>
"""
    r = row0(one_event(extra=extra))
    assert (r["parts.0"], r["parts.1"]) == ("chain", "master link")
    assert (r["bare.0"], r["bare.1"]) == (1, 2)  # items directly inside the list (1.0 form)
    assert r["grid.0.0"] == 7
    assert r["cost"] == 3.5 and r["cost.currency"] == "EUR" and r["cost.source"] == "quote"
    assert r["cost.source.at"].value == ns("2024-03-01T08:00:00Z")
    # A list has no value of its own, and an empty list leaves no column.
    assert not {"parts", "bare", "grid", "grid.0"} & set(r)
    assert not [k for k in r if k.startswith("empty")]


def test_trace_attributes_are_case_table_columns() -> None:
    attrs = """<string key="bike model" value="cargo"/>
<int key="frame size" value="56"/>
<boolean key="warranty" value="true"/>
<date key="promised" value="2024-03-05T17:00:00+01:00"/>
<list key="owners"><values><string key="o" value="Ana"/></values></list>
"""
    doc = xes(trace("r-1", event(), attrs=attrs) + trace("r-2", event()))
    ct = read(doc).case_table()
    assert ct["case"].tolist() == ["r-1", "r-2"]
    r1 = ct.iloc[0]
    assert (r1["bike model"], r1["frame size"], r1["warranty"]) == ("cargo", 56, True)
    assert r1["promised"].value == ns("2024-03-05T16:00:00Z")
    assert r1["owners.0"] == "Ana"
    assert ct.iloc[1][["bike model", "frame size", "warranty", "owners.0"]].isna().all()


def test_ieee_1849_2016_resource_and_lifecycle_extensions() -> None:
    doc = xes(trace("r-1",
                    event("replace chain", "2024-03-04T09:00:00Z",
                          '<string key="org:resource" value="Bo"/>\n'
                          '<string key="lifecycle:transition" value="start"/>\n'),
                    event("replace chain", "2024-03-04T09:30:00Z",
                          '<string key="org:resource" value="Bo"/>\n'
                          '<string key="lifecycle:transition" value="complete"/>\n'),
                    event("invoice", "2024-03-04T10:00:00Z",
                          '<string key="lifecycle:transition" value="complete"/>\n')))
    f = read(doc).to_frame()
    assert f["resource"].tolist()[:2] == ["Bo", "Bo"] and pd.isna(f["resource"].iloc[2])
    assert f["lifecycle"].tolist() == ["start", "complete", "complete"]
    assert "org:resource" not in f and "lifecycle:transition" not in f


def test_ieee_1849_2016_workshop_fixture() -> None:
    """The hand-written fixture: declarations, log attributes and every attribute type."""
    with pytest.warns(tm.DataQualityWarning) as rec:
        log = tm.EventLog.from_xes(DATA / "workshop_2016.xes")
    msgs = [str(w.message) for w in rec]
    assert any("1 traces without events were skipped" in m for m in msgs)
    # The same key on a trace and on its events: both kept (see the clash test below).
    assert any("'cost:total' is kept as column 'cost:total#2'" in m for m in msgs)
    assert log.case_ids.tolist() == ["repair-001", "repair-002"]
    f = log.to_frame()
    assert f["activity"].tolist() == ["register bike", "replace chain", "replace chain",
                                      "register bike", "true wheel"]
    assert [t.value for t in f["timestamp"]] == [
        ns(s) for s in ["2024-03-04T09:00:00.000+01:00", "2024-03-04T09:30:00.25+01:00",
                        "2024-03-04T10:05:00+01:00", "2024-03-04T11:00:00Z",
                        "2024-03-04T12:15:00.123456789Z"]]
    assert f["lifecycle"].tolist() == ["complete", "start", "complete", "complete", "complete"]
    assert f["resource"].tolist()[:4] == ["Ana", "Bo", "Bo", "Ana"]
    assert pd.isna(f["resource"].iloc[4])
    assert f["queue length"].tolist()[::3] == [3, -1]
    assert f["cost:total#2"].tolist()[1] == 19.99 and f["cost:total#2"].tolist()[4] == 15.0
    assert f["parts.0"].iloc[1] == "chain" and f["parts.1"].iloc[1] == "master link"
    assert f["test ride"].tolist()[2] is False
    assert f["promised"].iloc[2].value == ns("2024-03-05T17:00:00Z")
    assert f["note"].iloc[4] == "spoke\ttension <ok>"
    ct = log.case_table()
    assert ct["bike model"].tolist() == ["city & trekking", "cargo"]
    assert ct["warranty"].tolist() == [True, False]  # "0" is false in xs:boolean
    assert ct["cost:total"].iloc[0] == 49.5 and ct["cost:total.cost:currency"].iloc[0] == "EUR"
    assert ct["identity:id"].iloc[0] == "8f2b1c7e-0d4a-4c55-9a7b-2e6f3d1a9b10"
    assert pd.isna(ct["frame size"].iloc[1])

    info = xes_info(log)
    assert info is not None
    meta, report = info.meta, info.report
    assert meta["version"] == "1849-2016" and meta["features"] == ["nested-attributes"]
    assert ("xmlns", NS) in meta["xml_attributes"]
    assert [e[1] for e in meta["extensions"]] == ["concept", "time", "lifecycle", "org", "cost"]
    assert ("Lifecycle", "lifecycle", "http://www.xes-standard.org/lifecycle.xesext") in \
        meta["extensions"]
    assert meta["globals"] == [
        ("trace", "concept:name", "string", "UNKNOWN"),
        ("event", "concept:name", "string", "UNKNOWN"),
        ("event", "time:timestamp", "date", 0),
        ("event", "lifecycle:transition", "string", "complete"),
    ]
    assert meta["classifiers"] == [
        ("activity", ["concept:name"], None),
        ("activity and step", ["concept:name", "lifecycle:transition"], None),
        ("model and activity", ["bike model", "concept:name"], None),  # 'quoted key'
    ]
    assert meta["attributes"] == [("concept:name", "string", "workshop March"),
                                  ("lifecycle:model", "string", "standard")]
    assert (report["n_traces"], report["n_events"], report["n_empty_traces"]) == (3, 5, 1)


def test_pre_ieee_container_fixture() -> None:
    """The older ``container`` type (XES 1.0, before IEEE 1849) as dotted keys."""
    log = tm.EventLog.from_xes(DATA / "pre_ieee_container.xes")
    ct = log.case_table()
    assert ct[["customer.name", "customer.visits", "customer.address.city"]].iloc[0].tolist() \
        == ["Dana", 4, "Ghent"]
    r = log.to_frame().iloc[0]
    assert (r["tools.0"], r["tools.1"]) == ("hex key", "cable cutter")
    assert r["outcome"] == "ok" and r["outcome.checked"]
    assert r["timestamp"].value == ns("2011-05-06T08:00:00Z")
    meta = xes_info(log).meta
    assert meta["version"] == "1.0"
    assert meta["globals"] == [("event", "concept:name", "string", "none")]


@pytest.mark.parametrize("version", ["1.0", "2.0", "1849-2016", None])
def test_xes_version_values(version: str | None) -> None:
    log = read(xes(trace("c", event()), version=version))
    assert xes_info(log).meta["version"] == version


def test_log_level_declarations_and_attributes_in_meta() -> None:
    head = """<extension name="Concept" prefix="concept" uri="http://www.xes-standard.org/concept.xesext"/>
<extension name="Cost" prefix="cost" uri="http://www.xes-standard.org/cost.xesext"></extension>
<global scope="trace"><string key="concept:name" value="?"/></global>
<global><int key="queue" value="0"/>
  <float key="cost" value="1.5"><string key="u" value="EUR"/></float></global>
<classifier name="both" keys="concept:name lifecycle:transition"/>
<classifier name="spaced" keys="'bike model'   concept:name" scope="event"/>
<string key="concept:name" value="workshop"/>
<date key="exported" value="2024-03-31T22:00:00+02:00"/>
<int key="n" value="3"/>
<float key="share" value="0.25"/>
<boolean key="final" value="true"/>
<id key="identity:id" value="0d4a"/>
<list key="sites"><values><string key="s" value="Ghent"/></values></list>
"""
    meta = xes_info(read(xes(trace("c", event()), head=head))).meta
    assert meta["extensions"] == [
        ("Concept", "concept", "http://www.xes-standard.org/concept.xesext"),
        ("Cost", "cost", "http://www.xes-standard.org/cost.xesext")]
    # The default scope of a global is "event" (from memory).
    assert meta["globals"] == [("trace", "concept:name", "string", "?"),
                               ("event", "queue", "int", 0),
                               ("event", "cost", "float", 1.5),
                               ("event", "cost.u", "string", "EUR")]
    assert meta["classifiers"] == [("both", ["concept:name", "lifecycle:transition"], None),
                                   ("spaced", ["bike model", "concept:name"], "event")]
    assert meta["attributes"] == [
        ("concept:name", "string", "workshop"),
        ("exported", "date", ns("2024-03-31T20:00:00Z")),
        ("n", "int", 3), ("share", "float", 0.25), ("final", "boolean", True),
        ("identity:id", "id", "0d4a"), ("sites.0", "string", "Ghent")]


def test_xes_info_stays_with_each_log() -> None:
    a = read(one_event())
    assert xes_info(a) is not None
    b = read(one_event())
    assert xes_info(b) is not None and xes_info(a) is not None
    assert xes_info(a) is not xes_info(b)
    assert xes_info(tm.workshop(5, random_state=1)[0]) is None
    assert xes_info(a.sample(1, random_state=0)) is None


def test_missing_trace_label_is_generated_and_repeated_labels_kept() -> None:
    doc = xes(trace(None, event()) + trace("same", event()) + trace("same", event()))
    with pytest.warns(tm.DataQualityWarning) as rec:
        log = read(doc)
    msgs = " | ".join(str(w.message) for w in rec)
    assert "1 traces had no concept:name and were labelled trace-<n>" in msgs
    assert "1 traces repeat the label of an earlier trace" in msgs
    assert log.n_cases == 3
    assert log.case_ids.tolist() == ["trace-0", "same", "same"]


def test_repeated_key_in_one_event_is_kept_under_a_suffix() -> None:
    extra = '<string key="s" value="a"/>\n<string key="s" value="b"/>\n'
    with pytest.warns(tm.DataQualityWarning) as rec:
        r = row0(one_event(extra=extra))
    msgs = [str(w.message) for w in rec]
    assert msgs == ["1 attributes repeat a key within one element and were kept as key#2, "
                    "key#3, ...", "XES: line 9: the key 's' repeats within one element; later "
                    "values are stored under 's#2', '#3', ..."]
    assert (r["s"], r["s#2"]) == ("a", "b")


def test_keys_that_clash_with_table_columns_are_renamed_not_lost() -> None:
    """A trace or event key equal to a standard column of ``to_frame``/``case_table``, or the
    same key on traces and events, must not replace the other column (nothing lost)."""
    attrs = '<string key="n_events" value="x"/>\n<string key="activity" value="T"/>\n'
    extra = ('<string key="activity" value="other"/>\n<string key="case" value="k"/>\n'
             '<string key="lifecycle" value="v"/>\n')
    doc = xes(trace("c1", event("a", extra=extra), attrs=attrs))
    with pytest.warns(tm.DataQualityWarning, match="is kept as column") as rec:
        log = read(doc)
    assert len([w for w in rec if "is kept as column" in str(w.message)]) == 4
    r = log.to_frame().to_dict("records")[0]
    assert (r["case"], r["activity"]) == ("c1", "a")
    assert r["lifecycle"] == "v"  # no lifecycle column in this log: no clash
    assert {r["activity#2"], r["activity#3"]} == {"T", "other"}
    assert (r["case#2"], r["n_events#2"]) == ("k", "x")
    assert log.case_table()["n_events"].tolist() == [1]


# =========================================================================== 2. written files

def children(el: ET.Element) -> list[str]:
    return [c.tag.removeprefix(Q) for c in el]


def check_attribute(el: ET.Element) -> None:
    """IEEE 1849-2016 attribute element: a type tag, a key, a value of that type's lexical
    space (XML Schema Part 2) unless a list; nested elements are attributes (or ``values``)."""
    tag = el.tag.removeprefix(Q)
    assert tag in ATTR_TYPES, tag
    assert el.get("key") is not None
    v = el.get("value")
    if tag in ("list", "container"):
        assert v is None
    else:
        assert v is not None, ET.tostring(el)
    if tag == "date":
        assert XS_DATETIME.fullmatch(v), v
    elif tag == "int":
        assert re.fullmatch(r"[+-]?[0-9]+", v) and -(2**63) <= int(v) < 2**63, v
    elif tag == "float":
        assert XS_DOUBLE.fullmatch(v), v
    elif tag == "boolean":
        assert v in ("true", "false", "1", "0"), v
    for c in el:
        if c.tag == Q + "values":
            for item in c:
                check_attribute(item)
        else:
            check_attribute(c)


def check_document(root: ET.Element, log: tm.EventLog) -> None:
    """The structure IEEE 1849-2016 defines, and the values of ``log``."""
    assert root.tag == Q + "log"
    assert root.get("xes.version") in ("1.0", "2.0", "1849-2016")
    # log: extension*, global*, classifier*, attributes, trace* (in this order)
    rank = {"extension": 0, "global": 1, "classifier": 2, "trace": 4}
    kinds = [rank.get(t, 3) for t in children(root)]
    assert kinds == sorted(kinds)
    prefixes = set()
    for ext in root.findall(Q + "extension"):
        assert ext.get("name") and ext.get("prefix") and ext.get("uri"), ext.attrib
        prefixes.add(ext.get("prefix"))
    assert {"concept", "time", "lifecycle", "org"} <= prefixes
    for gl in root.findall(Q + "global"):
        assert gl.get("scope", "event") in ("trace", "event")
        for a in gl:
            check_attribute(a)
    for cl in root.findall(Q + "classifier"):
        assert cl.get("name") and cl.get("keys")
        assert set(cl.get("keys").split()) <= {"concept:name", "lifecycle:transition"}
    for a in root:
        if a.tag.removeprefix(Q) in ATTR_TYPES:
            check_attribute(a)

    times = iter(log.arrays()["time"].tolist())
    traces = root.findall(Q + "trace")
    assert len(traces) == log.n_cases
    labels = []
    for tr in traces:
        kinds = [t == "event" for t in children(tr)]
        assert kinds == sorted(kinds)  # attributes, then events
        names = [c for c in tr if c.get("key") == "concept:name"]
        assert len(names) == 1 and names[0].tag == Q + "string"
        labels.append(names[0].get("value"))
        for a in tr:
            if a.tag != Q + "event":
                check_attribute(a)
        for ev in tr.findall(Q + "event"):
            keys = [c.get("key") for c in ev]
            assert keys.count("concept:name") == 1 and keys.count("time:timestamp") == 1
            assert ev.find(f"{Q}string[@key='concept:name']") is not None
            stamp = ev.find(f"{Q}date[@key='time:timestamp']")
            assert stamp is not None
            assert pd.Timestamp(stamp.get("value")).value == next(times)  # exact ns
            lc = ev.find(f"{Q}string[@key='lifecycle:transition']")
            assert lc is None or lc.get("value") in LIFECYCLE
            for a in ev:
                check_attribute(a)
    assert labels == [str(c) for c in log.case_ids]
    assert next(times, None) is None


@pytest.fixture(scope="module")
def workshop_log() -> tm.EventLog:
    return tm.workshop(300, random_state=11)[0]


@pytest.mark.parametrize("name", ["workshop.xes", "workshop.xes.gz"])
def test_ieee_1849_2016_written_document_structure(workshop_log: tm.EventLog, tmp_path: Path,
                                                   name: str) -> None:
    p = tmp_path / name
    workshop_log.to_xes(p)
    raw = p.read_bytes()
    if name.endswith(".gz"):
        assert raw[:2] == b"\x1f\x8b"  # gzip magic (RFC 1952)
        raw = gzip.decompress(raw)
        plain = tmp_path / "plain.xes"
        workshop_log.to_xes(plain)
        assert raw == plain.read_bytes()  # the same document, compressed
    else:
        assert raw[:2] != b"\x1f\x8b"
    assert raw.startswith(b'<?xml version="1.0" encoding="UTF-8"?>')
    raw.decode("utf-8")  # UTF-8 throughout
    assert b"<!DOCTYPE" not in raw
    root = ET.fromstring(raw)  # well-formed XML
    check_document(root, workshop_log)


def test_written_log_name_and_odd_text(tmp_path: Path) -> None:
    odd = ["a & b", "<tag>", "\"quoted\" 'single'", "tab\there", "cr\rlf\n", "🚲 日本", "é",
           "  spaced  ", "", "\u200b", "]]>", "&amp;"]
    frame = pd.DataFrame({
        "case": [f"c{k % 3}{odd[k]}" for k in range(len(odd))],
        "activity": odd,
        "timestamp": pd.to_datetime(np.arange(len(odd)), unit="s"),
        "resource": odd[::-1],
    })
    log = build(frame, resource="resource")
    p = tmp_path / "odd.xes"
    write_xes(log, p, name="workshop <March> & \"more\"")
    root = ET.parse(p).getroot()
    check_document(root, log)
    name = root.find(f"{Q}string[@key='concept:name']")
    assert name is not None and name.get("value") == "workshop <March> & \"more\""
    # Python's XML parser reads back every string exactly (tab, CR, LF as references).
    acts = [e.find(f"{Q}string[@key='concept:name']").get("value")
            for e in root.iter(Q + "event")]
    assert acts == log.to_frame()["activity"].tolist()
    assert sorted(acts) == sorted(odd)
    assert xes_info(tm.EventLog.from_xes(p)).meta["attributes"] == [
        ("concept:name", "string", "workshop <March> & \"more\"")]


# =========================================================================== 3. round trips

def frame_values(frame: pd.DataFrame) -> dict[str, list[object]]:
    out = values_of(frame)
    out["case"] = [str(c) for c in out["case"]]  # XES labels are text
    return out


def assert_round_trip(log: tm.EventLog, back: tm.EventLog) -> None:
    """``back`` holds everything ``log`` held: case ids as text, activities, exact ns
    timestamps (ties in order), resources, lifecycle, typed attributes and nulls. A column
    that is null everywhere cannot be written in XES (an absent attribute is a null) and is
    the only thing allowed to be missing."""
    fa, fb = log.to_frame(), back.to_frame()
    a, b = frame_values(fa), frame_values(fb)
    all_null = {c for c, v in a.items() if all(x is None for x in v)}
    assert set(a) - set(b) == all_null and set(b) <= set(a)
    for c in b:
        assert b[c] == a[c], c
        # The types survive too (text as text, int as int, ...).
        assert c == "case" or fa[c].dtype.kind == fb[c].dtype.kind or (
            pd.api.types.is_string_dtype(fa[c]) and pd.api.types.is_string_dtype(fb[c])), c
    assert np.array_equal(log.arrays()["time"], back.arrays()["time"])
    assert np.array_equal(log.arrays()["offsets"], back.arrays()["offsets"])
    assert sorted(log.activities) == sorted(back.activities)
    ca, cb = frame_values(log.case_table()), frame_values(back.case_table())
    assert {k: v for k, v in ca.items() if k not in all_null} == cb
    pd.testing.assert_frame_equal(log.variants(), back.variants())


@pytest.mark.parametrize("name", ["w.xes", "w.xes.gz"])
def test_workshop_round_trip(workshop_log: tm.EventLog, tmp_path: Path, name: str) -> None:
    p = tmp_path / name
    workshop_log.to_xes(p)
    back = tm.EventLog.from_xes(p)  # a written log reads back without warnings
    assert_round_trip(workshop_log, back)
    f = back.to_frame()
    assert {"resource", "lifecycle"} <= set(f.columns)
    assert f["resource"].isna().any() and f["cost_eur"].isna().any()  # nulls kept as nulls
    # Writing what was read gives the same document again.
    q = tmp_path / ("again-" + name)
    back.to_xes(q)
    unzip = gzip.decompress if name.endswith(".gz") else (lambda b: b)
    assert unzip(q.read_bytes()) == unzip(p.read_bytes())


def test_equal_timestamps_keep_their_order(tmp_path: Path) -> None:
    acts = ["Receive bike", "Inspect", "Clean", "Inspect", "Hand over"]
    frame = pd.DataFrame({"case": ["r1"] * 5 + ["r2"] * 5, "activity": acts + acts[::-1],
                          "timestamp": pd.to_datetime(["2025-03-03T08:00:00.000000001"] * 10)})
    log = build(frame)
    log.to_xes(tmp_path / "ties.xes")
    # "Inspect" twice at one instant in each case: duplicates, reported and kept.
    with pytest.warns(tm.DataQualityWarning, match="2 duplicate events"):
        back = tm.EventLog.from_xes(tmp_path / "ties.xes")
    assert_round_trip(log, back)
    assert back.to_frame()["activity"].tolist() == acts + acts[::-1]


def bad_chars(log: tm.EventLog) -> set[str]:
    """The characters XML 1.0 cannot carry in the texts the writer would write."""
    f = log.to_frame()
    return {ch for c in f.columns if pd.api.types.is_string_dtype(f[c]) or f[c].dtype == object
            for v in f[c].dropna() if isinstance(v, str) for ch in v if not xml_char_ok(ch)}


def clean_text(v: Any) -> Any:
    """Spell characters XML cannot carry as visible text (distinct inputs stay distinct)."""
    if not isinstance(v, str):
        return v
    return "".join(ch if xml_char_ok(ch) else f"<U+{ord(ch):04X}>" for ch in v)


@given(event_frames())
def test_round_trip_property(drawn: tuple[pd.DataFrame, dict[str, Any]]) -> None:
    frame, spec = drawn
    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / "log.xes"
        log = build(frame, **spec)
        bad = bad_chars(log)
        if bad:
            # XML 1.0 cannot carry them: a clear error naming one, and no file.
            with pytest.raises(tm.DataError, match=r"XML 1\.0 cannot represent") as ei:
                log.to_xes(p)
            named = re.search(r"the character U\+([0-9A-F]{4,6})", str(ei.value))
            assert named and chr(int(named.group(1), 16)) in bad, str(ei.value)
            assert not p.exists()
            frame = frame.copy()
            for c in ("case", "activity", "resource", "note", "bike"):
                if pd.api.types.is_string_dtype(frame[c]) or frame[c].dtype == object:
                    frame[c] = frame[c].map(clean_text)
            log = build(frame, **spec)
            assert not bad_chars(log)
        log.to_xes(p)
        with warnings.catch_warnings(record=True) as rec:
            warnings.simplefilter("always")
            back = tm.EventLog.from_xes(p)
        # Duplicate events are reported again (kept, not dropped); nothing else is.
        assert all(issubclass(w.category, tm.DataQualityWarning)
                   and "duplicate events" in str(w.message) for w in rec), \
            [str(w.message) for w in rec]
        assert_round_trip(log, back)


def test_unwritable_characters_are_clear_errors(tmp_path: Path) -> None:
    """Characters outside XML 1.0's Char production cannot be written in any form (not even as
    character references): the writer names the case and the attribute instead."""
    base = {"case": ["r1", "r1"], "activity": ["Inspect", "Clean"],
            "timestamp": pd.to_datetime([0, 1], unit="s"), "resource": ["Ana", "Bo"],
            "note": ["ok", None], "bike": ["city", None]}
    p = tmp_path / "x.xes"
    for column, value, what in [("activity", "bell\x07", "an activity name"),
                                ("case", "r\x00", "the label"),
                                ("resource", "esc\x1b", "org:resource"),
                                ("note", "\ufffe", "event attribute 'note'"),
                                ("bike", "\uffff", "case attribute 'bike'")]:
        frame = pd.DataFrame(base)
        frame[column] = [value, value] if column in ("case", "activity") else \
            [value, frame[column][1]]
        log = build(frame, resource="resource", event_attributes=["note"],
                    case_attributes=["bike"])
        with pytest.raises(tm.DataError) as ei:
            log.to_xes(p)
        msg = str(ei.value)
        assert f"U+{ord(value[-1]):04X}" in msg and what in msg and "XML 1.0" in msg, msg
        assert not p.exists()  # no partial document left behind
    # An attribute name XML cannot carry is a schema error naming the column.
    frame = pd.DataFrame(base).rename(columns={"note": "no\x01te"})
    with pytest.raises(tm.SchemaError) as ei:
        build(frame, event_attributes=["no\x01te"]).to_xes(p)
    assert ei.value.column == "no\x01te"


def test_reserved_attribute_names_are_refused_by_the_writer(tmp_path: Path) -> None:
    frame = pd.DataFrame({"case": ["r1"], "activity": ["Inspect"],
                          "timestamp": pd.to_datetime([0]), "time:timestamp": ["x"]})
    log = build(frame, event_attributes=["time:timestamp"])
    with pytest.raises(tm.SchemaError, match="rename the column"):
        log.to_xes(tmp_path / "x.xes")


# =========================================================================== 4. refused input

def max_rss_mib() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # KiB on Linux


@pytest.mark.parametrize("compress", [False, True])
def test_billion_laughs_is_refused_quickly_with_bounded_memory(compress: bool) -> None:
    data = (DATA / "billion_laughs_refused.xes").read_bytes()
    data = gzip.compress(data) if compress else data
    rss0 = max_rss_mib()
    t0 = time.perf_counter()
    with pytest.raises(tm.FormatError, match="DOCTYPE") as ei:
        tm.EventLog.from_xes(io.BytesIO(data))
    assert time.perf_counter() - t0 < 1.0
    assert max_rss_mib() - rss0 < 64  # expanded, the entities would need gigabytes
    assert ei.value.line == 2
    assert isinstance(ei.value, ValueError)


def test_external_entities_are_refused_and_never_fetched(tmp_path: Path) -> None:
    # A file: the DOCTYPE naming /etc/passwd is refused; nothing of the file shows.
    doc = ('<?xml version="1.0"?>\n<!DOCTYPE log SYSTEM "file:///etc/passwd">\n'
           + one_event().split("\n", 1)[1])
    with pytest.raises(tm.FormatError, match="DOCTYPE") as ei:
        read(doc)
    assert ei.value.line == 2 and "root:" not in str(ei.value)

    # An entity on a named pipe: opening it for reading would block until a writer comes, so a
    # read that returns proves the pipe was never opened.
    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    # A loopback HTTP server counts requests for an entity given by URL.
    hits: list[str] = []

    class Handler(http.server.BaseHTTPRequestHandler):
        def do_GET(self) -> None:
            hits.append(self.path)
            self.send_response(200)
            self.end_headers()
            self.wfile.write(b"fetched")

        def log_message(self, *args: Any) -> None:
            pass

    server = http.server.HTTPServer(("127.0.0.1", 0), Handler)
    serving = threading.Thread(target=server.serve_forever, daemon=True)
    serving.start()
    try:
        url = f"http://127.0.0.1:{server.server_address[1]}/x"
        for system in (f"file://{fifo}", url):
            doc = ('<?xml version="1.0"?>\n'
                   f'<!DOCTYPE log [<!ENTITY x SYSTEM "{system}">]>\n'
                   + xes(trace("&x;", event())).split("\n", 1)[1])
            result: list[Exception] = []

            def attempt(d: str = doc, result: list[Exception] = result) -> None:
                try:
                    read(d)
                except Exception as e:
                    result.append(e)

            th = threading.Thread(target=attempt, daemon=True)
            th.start()
            th.join(5.0)
            if th.is_alive():  # the reader opened the pipe: unblock it, then fail
                with open(fifo, "wb"):
                    pass
                pytest.fail(f"the reader opened the external entity {system}")
            assert len(result) == 1 and isinstance(result[0], tm.FormatError), result
            assert result[0].line == 2
        time.sleep(0.05)
        assert hits == []
    finally:
        server.shutdown()
        server.server_close()


GOOD = xes(trace("c1", event("a", "2024-03-04T11:00:00Z")))


@pytest.mark.parametrize(("doc", "line", "fragment"), [
    (GOOD.replace("</event>", "</evnt>"), 8, "</evnt>"),  # mismatched end tag
    (GOOD.replace('key="concept:name" value="a"', "key=concept:name value=a"), 6, ""),
    (GOOD.replace("<log ", '<log a="1" a="2" '), 2, ""),  # repeated XML attribute
    (GOOD.replace('value="a"', 'value="&lol;"'), 6, "&lol;"),  # undeclared entity
    (GOOD.replace('value="a"', 'value="&#0;"'), 6, ""),  # a reference to a non-character
    (GOOD.replace("<trace>", "<event>", 1).replace("</trace>", "</event>"), 3, "<event>"),
    (GOOD.replace("<trace>\n", "<trace>\n<trace>\n", 1), 4, "<trace>"),
    (GOOD + "<log/>", 11, "<log>"),  # a second root element
    (GOOD.replace("<log ", "<notxes ").replace("</log>", "</notxes>"), 2, "notxes"),
    ("junk" + GOOD, 1, "text before"),
    ("", 1, ""),
    (GOOD.replace('<string key="concept:name" value="a"/>',
                  '<string key="concept:name"/>'), 6, "'value'"),
    (GOOD.replace('<string key="concept:name" value="a"/>',
                  '<string value="a"/>'), 6, "key"),
    (GOOD.replace("<event>", "<event>" + '<list key="l">' * 70 + "</list>" * 70), 5,
     "nested"),
])
def test_malformed_xml_is_a_format_error_with_its_line(doc: str, line: int,
                                                       fragment: str) -> None:
    with pytest.raises(tm.FormatError) as ei:
        read(doc)
    assert ei.value.line == line, str(ei.value)
    assert str(ei.value).startswith(f"line {line}:")
    assert fragment in str(ei.value)


def test_truncated_xml_at_every_byte_names_the_last_line() -> None:
    doc = GOOD.rstrip("\n")
    assert read(doc).n_events == 1
    for cut in range(len(doc)):
        with pytest.raises(tm.FormatError) as ei:
            read(doc[:cut])
        assert ei.value.line == doc[:cut].count("\n") + 1, (cut, str(ei.value))


def test_truncated_or_corrupt_gzip_is_a_format_error(tmp_path: Path) -> None:
    gz = gzip.compress(xes(trace("c1", *[event(f"a{k}") for k in range(40)])).encode())
    for cut in (len(gz) - 1, len(gz) - 8, len(gz) // 2, 12):
        with pytest.raises(tm.FormatError, match="gzip stream is truncated or corrupt"):
            read(gz[:cut])
    p = tmp_path / "cut.xes.gz"
    p.write_bytes(gz[: len(gz) // 2])
    with pytest.raises(tm.FormatError, match="gzip") as ei:
        tm.EventLog.from_xes(p)
    assert ei.value.line is not None
    bad_crc = bytearray(gz)
    bad_crc[-8] ^= 0xFF  # the CRC-32 of the trailer (RFC 1952)
    with pytest.raises(tm.FormatError, match="gzip"):
        read(bytes(bad_crc))


@pytest.mark.parametrize(("data", "line"), [
    (GOOD.replace('value="a"', 'value="café"').encode("latin-1"), 6),
    (GOOD.replace('value="c1"', 'value="\udcc0\udcaf"').encode("utf-8", "surrogateescape"),
     4),  # an overlong encoding of '/'
    (GOOD.encode("utf-16"), 1),
])
def test_non_utf8_is_a_format_error(data: bytes, line: int) -> None:
    with pytest.raises(tm.FormatError, match="UTF-8") as ei:
        read(data)
    assert ei.value.line == line


def test_event_without_concept_name_is_a_format_error() -> None:
    doc = GOOD.replace('<string key="concept:name" value="a"/>\n', "")
    with pytest.raises(tm.FormatError, match="no concept:name") as ei:
        read(doc)
    assert ei.value.line == 5


@pytest.mark.parametrize(("when", "why"), [
    (None, "no time:timestamp"),
    ("2024-13-04T11:00:00Z", "month"),
    ("2024-02-30T11:00:00Z", "day"),
    ("2023-02-29T11:00:00Z", "day"),
    ("2024-03-04T10:00:60Z", "leap second"),
    ("2024-03-04T10:00:00.1234567891Z", "9 significant"),
    ("2024-03-04", "too short"),
    ("tomorrow", "too short"),
    ("2024-03-04T10:00:00+25:00", "offset"),
])
def test_missing_or_unparseable_timestamp_is_a_timestamp_error(when: str | None,
                                                               why: str) -> None:
    doc = GOOD.replace('value="2024-03-04T11:00:00Z"', f'value="{when}"')
    if when is None:
        doc = GOOD.replace('<date key="time:timestamp" value="2024-03-04T11:00:00Z"/>\n', "")
    with pytest.raises(tm.TimestampError, match=why) as ei:
        read(doc)
    e = ei.value
    assert isinstance(e, ValueError)
    assert e.column == "time:timestamp" and e.row == 0
    assert e.line == (5 if when is None else 7)
    assert str(e).startswith(f"line {e.line}:"), str(e)


def test_empty_traces_are_skipped_with_a_warning() -> None:
    doc = xes(trace("walk-in") + trace("r1", event()) + "<trace/>\n")
    with pytest.warns(tm.DataQualityWarning, match="2 traces without events were skipped"):
        log = read(doc)
    assert log.case_ids.tolist() == ["r1"]
    assert xes_info(log).report["n_empty_traces"] == 2
    # A log with no event at all is not a log.
    with pytest.raises(tm.DataError, match="empty"):
        read(xes(trace("walk-in")))


def test_unknown_elements_and_text_are_warnings_not_errors() -> None:
    doc = xes(trace("r1", event(extra='<gadget a="1"><event/><int key="n" value="x"/></gadget>\n'
                                      '<string key="s" value="v"><extra/></string>\n'),
                    attrs="stray text\n"),
              head="<toolspecific>anything <b>at all</b></toolspecific>\n")
    with pytest.warns(tm.DataQualityWarning) as rec:
        log = read(doc)
    msgs = " | ".join(str(w.message) for w in rec)
    assert "unknown element <toolspecific> inside <log>" in msgs
    assert "unknown element <gadget> inside <event>" in msgs
    assert "unknown element <extra> inside <attribute>" in msgs
    assert "text content ignored" in msgs
    assert re.search(r"line \d+: unknown element <gadget>", msgs)
    r = log.to_frame().to_dict("records")[0]
    assert r["s"] == "v" and "n" not in r  # the content of an unknown element is skipped


def test_nonexistent_path_and_directory_are_io_errors(tmp_path: Path) -> None:
    missing = tmp_path / "no-such-log.xes"
    with pytest.raises(tm.TracemillIOError, match=re.escape("no-such-log.xes")) as ei:
        tm.EventLog.from_xes(missing)
    assert isinstance(ei.value, tm.TracemillError) and isinstance(ei.value, ValueError)
    with pytest.raises(tm.TracemillIOError, match=re.escape(str(tmp_path))):
        tm.EventLog.from_xes(tmp_path)
    with pytest.raises(tm.TracemillIOError, match="no-such-dir"):
        tm.workshop(3, random_state=0)[0].to_xes(tmp_path / "no-such-dir" / "x.xes")
