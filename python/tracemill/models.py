"""Process models as plain objects: :class:`PetriNet`, :class:`ProcessTree`,
:class:`DirectlyFollowsGraph` and :class:`DependencyGraph`.

Each converts to a networkx graph (``to_networkx``, needs the optional ``networkx`` package),
to a table of edges (``edges(kind=...)``) and to DOT text (``to_dot``), which ``render`` turns
into SVG or PNG through the optional ``graphviz`` package. Petri nets read and write PNML
(ISO/IEC 15909-2); process trees export BPMN 2.0 XML.

The drawing style is tracemill's own: Petri-net places are cream circles (amber when they hold
initial tokens, sage with a double ring in the final marking), transitions are slate boxes and
silent steps small grey diamonds marked ``τ``; directly-follows nodes shade from sand to copper
with their frequency.
"""

from __future__ import annotations

import os
from collections.abc import Iterable, Mapping, Sequence
from typing import Any

import numpy as np

from . import _core
from ._output import Col, make_frame
from .exceptions import DataError, ParameterError

NS_PER_HOUR = 3_600_000_000_000

#: Operator names of process trees, by kind code.
TREE_KINDS = ("activity", "silent", "sequence", "choice", "parallel", "loop")
_TREE_SYMBOL = {"sequence": "→ sequence", "choice": "× choice", "parallel": "∧ parallel",
                "loop": "⟲ loop"}

_PALETTE = {
    "place": "#f5efe0", "place_line": "#6b5b45", "initial": "#f2c14e", "final": "#a9c5a0",
    "transition": "#3d5a73", "transition_text": "#ffffff", "silent": "#b8b8b8",
    "edge": "#5c5c5c", "start": "#4f7942", "end": "#8b2e2e", "sand": (0xF3, 0xE3, 0xC3),
    "copper": (0xB0, 0x5A, 0x1E), "operator": "#e6eef5",
}


def _q(s: str) -> str:
    """A DOT double-quoted string."""
    return '"' + str(s).replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n") + '"'


def _shade(x: float) -> str:
    a, b = _PALETTE["sand"], _PALETTE["copper"]
    x = min(max(x, 0.0), 1.0)
    return "#" + "".join(f"{round(p + (q - p) * x):02x}" for p, q in zip(a, b, strict=False))


def _hours(ns: float) -> str:
    if not np.isfinite(ns):
        return ""
    h = ns / NS_PER_HOUR
    if h >= 48:
        return f"{h / 24:.1f} d"
    if h >= 1:
        return f"{h:.1f} h"
    return f"{h * 60:.0f} min"


def _need_networkx() -> Any:
    try:
        import networkx as nx
    except ImportError as e:  # pragma: no cover - depends on the environment
        raise ImportError("to_networkx needs the optional package 'networkx': "
                          "pip install networkx") from e
    return nx


def render_dot(dot: str, path: str | os.PathLike[str], format: str | None = None) -> str:
    """Render DOT text to a file (SVG, PNG, PDF, ...) with the optional ``graphviz`` package.

    The format defaults to the file's suffix. Returns the path written.
    """
    try:
        import graphviz
    except ImportError as e:
        raise ImportError("rendering needs the optional package 'graphviz' (and the Graphviz "
                          "programs): pip install graphviz; or write the DOT text with "
                          "to_dot() and render it elsewhere") from e
    p = os.fspath(path)
    stem, ext = os.path.splitext(p)
    fmt = format or (ext[1:] if ext else "svg")
    src = graphviz.Source(dot)
    return str(src.render(outfile=p if ext else f"{stem}.{fmt}", format=fmt, cleanup=True))


class _Drawable:
    def to_dot(self) -> str:  # pragma: no cover - overridden
        raise NotImplementedError

    def render(self, path: str | os.PathLike[str], format: str | None = None) -> str:
        """Render the diagram to ``path`` (format from the suffix: .svg, .png, .pdf) through
        the optional ``graphviz`` package; returns the path written."""
        return render_dot(self.to_dot(), path, format)

    def write_dot(self, path: str | os.PathLike[str]) -> None:
        """Write the DOT text to ``path``."""
        with open(path, "w", encoding="utf-8") as f:
            f.write(self.to_dot())


# --------------------------------------------------------------------------------- Petri nets
class PetriNet(_Drawable):
    """A labelled place/transition net with an initial and a final marking.

    Parameters
    ----------
    places : sequence of str
        Unique place names.
    transitions : sequence of str
        Unique transition names.
    arcs : iterable of tuples
        ``(source, target)`` or ``(source, target, weight)`` by name; one end must be a place
        and the other a transition.
    initial_marking, final_marking : mapping of place name to int, optional
        Tokens per place. Replay and alignments need both.
    labels : sequence of (str or None), optional
        The activity each transition records; ``None`` makes it silent. Defaults to the
        transition names.

    Examples
    --------
    >>> import tracemill as tm
    >>> net = tm.PetriNet(["start", "done"], ["Fix"], [("start", "Fix"), ("Fix", "done")],
    ...                   initial_marking={"start": 1}, final_marking={"done": 1})
    >>> net
    PetriNet(places=2, transitions=1 (0 silent), arcs=2)
    >>> net.workflow_ends
    ('start', 'done')
    """

    def __init__(self, places: Sequence[str], transitions: Sequence[str],
                 arcs: Iterable[tuple[Any, ...]], *,
                 initial_marking: Mapping[str, int] | None = None,
                 final_marking: Mapping[str, int] | None = None,
                 labels: Sequence[str | None] | None = None) -> None:
        self.places = [str(p) for p in places]
        self.transitions = [str(t) for t in transitions]
        self.labels = list(self.transitions) if labels is None else list(labels)
        if len(self.labels) != len(self.transitions):
            raise DataError(f"labels has {len(self.labels)} entries for "
                            f"{len(self.transitions)} transitions")
        pix = {p: i for i, p in enumerate(self.places)}
        tix = {t: i for i, t in enumerate(self.transitions)}
        ap, at, ai, aw = [], [], [], []
        for k, arc in enumerate(arcs):
            if len(arc) not in (2, 3):
                raise DataError(f"arc {k} must be (source, target) or (source, target, "
                                f"weight); got {arc!r}")
            s, t = arc[0], arc[1]
            w = int(arc[2]) if len(arc) == 3 else 1
            if s in pix and t in tix:
                ap.append(pix[s]), at.append(tix[t]), ai.append(True)
            elif s in tix and t in pix:
                ap.append(pix[t]), at.append(tix[s]), ai.append(False)
            else:
                raise DataError(f"arc {k} ({s!r} -> {t!r}) must join a known place and a "
                                "known transition")
            aw.append(w)
        self._arc_place = np.asarray(ap, dtype=np.int64)
        self._arc_transition = np.asarray(at, dtype=np.int64)
        self._arc_into = np.asarray(ai, dtype=bool)
        self._arc_weight = np.asarray(aw, dtype=np.int64)
        self.initial_marking = self._marking(initial_marking, "initial_marking")
        self.final_marking = self._marking(final_marking, "final_marking")
        _core.net_check(self._spec())

    def _marking(self, m: Mapping[str, int] | None, what: str) -> np.ndarray:
        out = np.zeros(len(self.places), dtype=np.int64)
        pix = {p: i for i, p in enumerate(self.places)}
        for p, k in (m or {}).items():
            if p not in pix:
                raise DataError(f"{what} names unknown place {p!r}")
            out[pix[p]] = int(k)
        return out

    @classmethod
    def _from_spec(cls, spec: tuple) -> PetriNet:
        places, names, labels, ap, at, ai, aw, init, fin = spec
        net = cls.__new__(cls)
        net.places, net.transitions, net.labels = list(places), list(names), list(labels)
        net._arc_place = np.asarray(ap, dtype=np.int64)
        net._arc_transition = np.asarray(at, dtype=np.int64)
        net._arc_into = np.asarray(ai, dtype=bool)
        net._arc_weight = np.asarray(aw, dtype=np.int64)
        net.initial_marking = np.asarray(init, dtype=np.int64)
        net.final_marking = np.asarray(fin, dtype=np.int64)
        return net

    def _spec(self) -> tuple:
        return (self.places, self.transitions, self.labels, self._arc_place.tolist(),
                self._arc_transition.tolist(), self._arc_into.tolist(),
                self._arc_weight.tolist(), self.initial_marking.tolist(),
                self.final_marking.tolist())

    # ---------------------------------------------------------------- facts
    @property
    def n_arcs(self) -> int:
        """Number of arcs."""
        return len(self._arc_place)

    @property
    def arcs(self) -> list[tuple[str, str, int]]:
        """Arcs as ``(source, target, weight)`` by name."""
        out = []
        for p, t, into, w in zip(self._arc_place, self._arc_transition, self._arc_into,
                                 self._arc_weight, strict=False):
            pn, tn = self.places[p], self.transitions[t]
            out.append((pn, tn, int(w)) if into else (tn, pn, int(w)))
        return out

    @property
    def silent(self) -> np.ndarray:
        """Boolean mask of silent transitions."""
        return np.array([lab is None for lab in self.labels], dtype=bool)

    @property
    def workflow_ends(self) -> tuple[str, str] | None:
        """``(source, sink)`` place names if the net is a workflow net, else ``None``."""
        s, t = _core.net_check(self._spec())
        return None if s < 0 else (self.places[s], self.places[t])

    def __repr__(self) -> str:
        return (f"PetriNet(places={len(self.places)}, transitions={len(self.transitions)} "
                f"({int(self.silent.sum())} silent), arcs={self.n_arcs})")

    def __eq__(self, other: object) -> bool:
        return isinstance(other, PetriNet) and self._spec() == other._spec()

    __hash__ = None  # type: ignore[assignment]

    # ---------------------------------------------------------------- conversions
    def edges(self, kind: str = "pandas") -> Any:
        """Arcs as a table: ``source``, ``target``, ``direction`` ('place->transition' or
        'transition->place'), ``weight``."""
        src = [a[0] for a in self.arcs]
        dst = [a[1] for a in self.arcs]
        dirs = np.where(self._arc_into, 0, 1).astype(np.uint32)
        cols = {
            "source": Col(np.arange(len(src), dtype=np.uint32), kind="text", names=src),
            "target": Col(np.arange(len(dst), dtype=np.uint32), kind="text", names=dst),
            "direction": Col(dirs, kind="text",
                             names=["place->transition", "transition->place"]),
            "weight": Col(self._arc_weight.copy()),
        }
        return make_frame(cols, kind)

    def to_networkx(self) -> Any:
        """A ``networkx.DiGraph``: nodes ``('place', name)`` and ``('transition', name)`` with
        attributes ``kind``, ``label`` and (places) ``initial``/``final`` tokens; arcs carry
        ``weight``."""
        nx = _need_networkx()
        g = nx.DiGraph()
        for i, p in enumerate(self.places):
            g.add_node(("place", p), kind="place", label=p,
                       initial=int(self.initial_marking[i]), final=int(self.final_marking[i]))
        for t, lab in zip(self.transitions, self.labels, strict=False):
            g.add_node(("transition", t), kind="transition", label=lab)
        for p, t, into, w in zip(self._arc_place, self._arc_transition, self._arc_into,
                                 self._arc_weight, strict=False):
            a, b = ("place", self.places[p]), ("transition", self.transitions[t])
            if into:
                g.add_edge(a, b, weight=int(w))
            else:
                g.add_edge(b, a, weight=int(w))
        return g

    def to_dot(self, *, name: str = "net") -> str:
        """DOT text in tracemill's style (left to right)."""
        c = _PALETTE
        lines = [f"digraph {_q(name)} {{", "  rankdir=LR; nodesep=0.35; ranksep=0.45;",
                 '  node [fontname="Helvetica", fontsize=11];',
                 f'  edge [color="{c["edge"]}", arrowsize=0.7];']
        for i, p in enumerate(self.places):
            tok = int(self.initial_marking[i])
            fill = c["initial"] if tok else (c["final"] if self.final_marking[i] else c["place"])
            shape = "doublecircle" if self.final_marking[i] else "circle"
            label = ("●" if tok == 1 else str(tok)) if tok else ""
            lines.append(f"  p{i} [shape={shape}, style=filled, fillcolor=\"{fill}\", "
                         f"color=\"{c['place_line']}\", width=0.3, fixedsize=true, "
                         f"label={_q(label)}, tooltip={_q(p)}];")
        for j, (t, lab) in enumerate(zip(self.transitions, self.labels, strict=False)):
            if lab is None:
                lines.append(f"  t{j} [shape=diamond, style=\"filled,dashed\", fillcolor="
                             f"\"{c['silent']}\", width=0.3, height=0.3, fixedsize=true, "
                             f"label=\"τ\", tooltip={_q(t)}];")
            else:
                lines.append(f"  t{j} [shape=box, style=\"rounded,filled\", fillcolor="
                             f"\"{c['transition']}\", fontcolor=\"{c['transition_text']}\", "
                             f"label={_q(lab)}, tooltip={_q(t)}];")
        for p, t, into, w in zip(self._arc_place, self._arc_transition, self._arc_into,
                                 self._arc_weight, strict=False):
            lab = f" [label={_q(str(w))}]" if w > 1 else ""
            lines.append(f"  p{p} -> t{t}{lab};" if into else f"  t{t} -> p{p}{lab};")
        lines.append("}")
        return "\n".join(lines)

    def to_pnml(self, path: str | os.PathLike[str] | None = None, *, name: str = "net") -> str:
        """PNML text of the net (written to ``path`` when given). Final markings and silent
        transitions go into a ``toolspecific`` block of tool ``tracemill``."""
        text = str(_core.pnml_write(self._spec(), name))
        if path is not None:
            with open(path, "w", encoding="utf-8") as f:
                f.write(text)
        return text

    @classmethod
    def from_pnml(cls, source: str | os.PathLike[str], *, net: str | None = None) -> PetriNet:
        """Read a place/transition net from a PNML file (or PNML text starting with ``<``).

        A document may hold several nets: ``net`` picks one by its id; without it a document
        with more than one net raises :class:`~tracemill.FormatError` listing their ids.
        Raises :class:`~tracemill.FormatError` naming the element and line for malformed
        files, DOCTYPE declarations and unsupported net types."""
        if isinstance(source, str) and source.lstrip().startswith("<"):
            text = source
        else:
            with open(source, encoding="utf-8") as f:
                text = f.read()
        return cls._from_spec(_core.pnml_read(text, net))


# ------------------------------------------------------------------------------ process trees
class ProcessTree(_Drawable):
    """A block-structured process model: activities and silent steps as leaves; sequence,
    (exclusive) choice, parallel and loop operators inside. A loop's first child is the body,
    the others are redo parts (one of them runs between two rounds of the body).

    Build one with :meth:`from_nested` or get one from
    :class:`~tracemill.discover.InductiveDiscovery`.

    Examples
    --------
    >>> import tracemill as tm
    >>> t = tm.ProcessTree.from_nested(("sequence", "Receive", ("choice", "Repair", None)))
    >>> print(t)
    sequence('Receive', choice('Repair', tau))
    >>> t.to_petri_net().workflow_ends
    ('source', 'sink')
    """

    def __init__(self, kind: Sequence[int], parent: Sequence[int],
                 label: Sequence[str]) -> None:
        if isinstance(kind, (bytes, bytearray)):
            kind = list(kind)
        self.kind = np.asarray(kind, dtype=np.uint8)
        self.parent = np.asarray(parent, dtype=np.int64)
        self.label = [str(x) for x in label]
        self._text = str(_core.tree_text(self._spec()))

    def _spec(self) -> tuple:
        return (self.kind.tolist(), self.parent.tolist(), self.label)

    @classmethod
    def from_nested(cls, nested: Any) -> ProcessTree:
        """Build from nested tuples ``(operator, child, ...)`` with operators 'sequence',
        'choice', 'parallel', 'loop'; a string is an activity and ``None`` a silent step."""
        kind: list[int] = []
        parent: list[int] = []
        label: list[str] = []

        def add(x: Any, p: int) -> None:
            me = len(kind)
            if x is None:
                kind.append(1), parent.append(p), label.append("")
            elif isinstance(x, str):
                kind.append(0), parent.append(p), label.append(x)
            elif isinstance(x, tuple) and x and x[0] in TREE_KINDS[2:]:
                kind.append(TREE_KINDS.index(x[0])), parent.append(p), label.append("")
                for c in x[1:]:
                    add(c, me)
            else:
                e = ParameterError(f"a tree node must be a str, None or (operator, children...) "
                                   f"with operator in {TREE_KINDS[2:]}; got {x!r}")
                e.parameter = "nested"
                raise e

        add(nested, -1)
        return cls(kind, parent, label)

    def children(self, node: int) -> list[int]:
        """Children of ``node`` in order."""
        return [int(i) for i in np.flatnonzero(self.parent == node)]

    @property
    def root(self) -> int:
        """Index of the root node."""
        return int(np.flatnonzero(self.parent < 0)[0])

    def operator(self, node: int) -> str:
        """'activity', 'silent', 'sequence', 'choice', 'parallel' or 'loop'."""
        return TREE_KINDS[int(self.kind[node])]

    def to_nested(self, node: int | None = None) -> Any:
        """The inverse of :meth:`from_nested`."""
        n = self.root if node is None else node
        op = self.operator(n)
        if op == "activity":
            return self.label[n]
        if op == "silent":
            return None
        return (op, *[self.to_nested(c) for c in self.children(n)])

    @property
    def activities(self) -> list[str]:
        """Activity labels of the leaves."""
        return [lab for k, lab in zip(self.kind, self.label, strict=False) if k == 0]

    def __str__(self) -> str:
        return self._text

    def __repr__(self) -> str:
        s = self._text
        return f"ProcessTree({s if len(s) <= 200 else s[:197] + '...'})"

    def __eq__(self, other: object) -> bool:
        return isinstance(other, ProcessTree) and str(self) == str(other)

    __hash__ = None  # type: ignore[assignment]

    def to_petri_net(self) -> PetriNet:
        """The sound workflow net of the tree (places ``source``/``sink`` hold the initial
        and final token)."""
        return PetriNet._from_spec(_core.tree_net(self._spec()))

    def to_bpmn(self, path: str | os.PathLike[str] | None = None, *,
                name: str = "process") -> str:
        """BPMN 2.0 XML (semantic model, no diagram layout); written to ``path`` if given."""
        text = str(_core.tree_bpmn(self._spec(), name))
        if path is not None:
            with open(path, "w", encoding="utf-8") as f:
                f.write(text)
        return text

    def edges(self, kind: str = "pandas") -> Any:
        """Parent-child links: ``parent``, ``child``, ``position``, ``parent_operator``,
        ``child_operator``, ``child_label``."""
        idx = np.flatnonzero(self.parent >= 0)
        pos = np.zeros(len(self.kind), dtype=np.int64)
        for n in range(len(self.kind)):
            for k, c in enumerate(self.children(n)):
                pos[c] = k
        cols = {
            "parent": Col(self.parent[idx].copy()),
            "child": Col(idx.astype(np.int64)),
            "position": Col(pos[idx]),
            "parent_operator": Col(self.kind[self.parent[idx]].astype(np.uint32), kind="text",
                                   names=list(TREE_KINDS)),
            "child_operator": Col(self.kind[idx].astype(np.uint32), kind="text",
                                  names=list(TREE_KINDS)),
            "child_label": Col(idx.astype(np.uint32), kind="text", names=self.label),
        }
        return make_frame(cols, kind)

    def to_networkx(self) -> Any:
        """A ``networkx.DiGraph`` (a tree) with node attributes ``operator``, ``label`` and
        edge attribute ``position``."""
        nx = _need_networkx()
        g = nx.DiGraph()
        for n in range(len(self.kind)):
            g.add_node(n, operator=self.operator(n), label=self.label[n])
        for n in range(len(self.kind)):
            for k, c in enumerate(self.children(n)):
                g.add_edge(n, c, position=k)
        return g

    def to_dot(self, *, name: str = "tree") -> str:
        """DOT text in tracemill's style (top to bottom)."""
        c = _PALETTE
        lines = [f"digraph {_q(name)} {{", "  rankdir=TB; nodesep=0.25; ranksep=0.4;",
                 '  node [fontname="Helvetica", fontsize=11];',
                 f'  edge [color="{c["edge"]}", arrowhead=none];']
        for n in range(len(self.kind)):
            op = self.operator(n)
            if op == "activity":
                lines.append(f"  n{n} [shape=box, style=\"rounded,filled\", fillcolor="
                             f"\"{c['transition']}\", fontcolor=\"white\", "
                             f"label={_q(self.label[n])}];")
            elif op == "silent":
                lines.append(f"  n{n} [shape=diamond, style=\"filled,dashed\", fillcolor="
                             f"\"{c['silent']}\", width=0.3, height=0.3, fixedsize=true, "
                             f"label=\"τ\"];")
            else:
                lines.append(f"  n{n} [shape=ellipse, style=filled, fillcolor="
                             f"\"{c['operator']}\", label={_q(_TREE_SYMBOL[op])}];")
        for n in range(len(self.kind)):
            for k, ch in enumerate(self.children(n)):
                extra = ""
                if self.operator(n) == "loop":
                    extra = ' [label="body"]' if k == 0 else ' [label="redo", style=dashed]'
                lines.append(f"  n{n} -> n{ch}{extra};")
        lines.append("}")
        return "\n".join(lines)


# ------------------------------------------------------------------ directly-follows graphs
START, END = "[start]", "[end]"


class DirectlyFollowsGraph(_Drawable):
    """A directly-follows graph with frequency and performance annotations.

    Made by :class:`~tracemill.discover.DirectlyFollowsDiscovery`. Nodes are the kept
    activities plus an artificial ``[start]`` and ``[end]``; ``edges()`` lists every edge with
    ``count`` (occurrences), ``cases`` (distinct cases) and the ``mean_gap``, ``median_gap`` and
    ``p90_gap`` between the two events (missing for the artificial edges and when performance
    was not computed).
    """

    def __init__(self, activities: list[str], kept: np.ndarray, activity_count: np.ndarray,
                 start: np.ndarray, end: np.ndarray, source: np.ndarray, target: np.ndarray,
                 count: np.ndarray, cases: np.ndarray, mean_gap: np.ndarray,
                 median_gap: np.ndarray, p90_gap: np.ndarray, n_cases: int) -> None:
        self.activities = list(activities)
        self.kept = np.asarray(kept, dtype=bool)
        self.activity_count = np.asarray(activity_count, dtype=np.int64)
        self.start = np.asarray(start, dtype=np.int64)
        self.end = np.asarray(end, dtype=np.int64)
        self.source = np.asarray(source, dtype=np.int64)
        self.target = np.asarray(target, dtype=np.int64)
        self.count = np.asarray(count, dtype=np.int64)
        self.cases = np.asarray(cases, dtype=np.int64)
        self.mean_gap = np.asarray(mean_gap, dtype=np.float64)
        self.median_gap = np.asarray(median_gap, dtype=np.float64)
        self.p90_gap = np.asarray(p90_gap, dtype=np.float64)
        self.n_cases = int(n_cases)

    def __repr__(self) -> str:
        return (f"DirectlyFollowsGraph(activities={int(self.kept.sum())}, "
                f"edges={len(self.source)}, cases={self.n_cases})")

    def nodes(self, kind: str = "pandas") -> Any:
        """Kept activities: ``activity``, ``events``, ``starts``, ``ends``."""
        k = np.flatnonzero(self.kept)
        cols = {
            "activity": Col(k.astype(np.uint32), kind="text", names=self.activities),
            "events": Col(self.activity_count[k]),
            "starts": Col(self.start[k]),
            "ends": Col(self.end[k]),
        }
        return make_frame(cols, kind)

    def edges(self, kind: str = "pandas", *, include_ends: bool = True) -> Any:
        """Edges: ``source``, ``target``, ``count``, ``cases``, ``mean_gap``, ``median_gap``,
        ``p90_gap``; with ``include_ends`` also the ``[start] -> a`` and ``a -> [end]`` edges
        (count = cases, no gaps)."""
        names = [*self.activities, START, END]
        s, t, n, c = [self.source], [self.target], [self.count], [self.cases]
        gaps = [[self.mean_gap], [self.median_gap], [self.p90_gap]]
        if include_ends:
            st = np.flatnonzero(self.start > 0)
            en = np.flatnonzero(self.end > 0)
            s += [np.full(len(st), len(self.activities)), en]
            t += [st, np.full(len(en), len(self.activities) + 1)]
            n += [self.start[st], self.end[en]]
            c += [self.start[st], self.end[en]]
            for g in gaps:
                g += [np.full(len(st), np.nan), np.full(len(en), np.nan)]
        cols = {
            "source": Col(np.concatenate(s).astype(np.uint32), kind="text", names=names),
            "target": Col(np.concatenate(t).astype(np.uint32), kind="text", names=names),
            "count": Col(np.concatenate(n).astype(np.int64)),
            "cases": Col(np.concatenate(c).astype(np.int64)),
            "mean_gap": Col(np.concatenate(gaps[0]), kind="duration"),
            "median_gap": Col(np.concatenate(gaps[1]), kind="duration"),
            "p90_gap": Col(np.concatenate(gaps[2]), kind="duration"),
        }
        return make_frame(cols, kind)

    def to_networkx(self) -> Any:
        """A ``networkx.DiGraph`` over activity names plus ``[start]``/``[end]``; edges carry
        ``count``, ``cases`` and gap statistics in ns; nodes carry ``events``."""
        nx = _need_networkx()
        g = nx.DiGraph()
        g.add_node(START, events=self.n_cases)
        g.add_node(END, events=self.n_cases)
        for i in np.flatnonzero(self.kept):
            g.add_node(self.activities[i], events=int(self.activity_count[i]))
        for k in range(len(self.source)):
            g.add_edge(self.activities[self.source[k]], self.activities[self.target[k]],
                       count=int(self.count[k]), cases=int(self.cases[k]),
                       mean_gap=float(self.mean_gap[k]), median_gap=float(self.median_gap[k]),
                       p90_gap=float(self.p90_gap[k]))
        for i in np.flatnonzero(self.start > 0):
            g.add_edge(START, self.activities[i], count=int(self.start[i]),
                       cases=int(self.start[i]))
        for i in np.flatnonzero(self.end > 0):
            g.add_edge(self.activities[i], END, count=int(self.end[i]), cases=int(self.end[i]))
        return g

    def to_dot(self, *, name: str = "dfg", annotate: str = "frequency") -> str:
        """DOT text; ``annotate`` is 'frequency' (edge counts) or 'performance' (median
        gaps)."""
        if annotate not in ("frequency", "performance"):
            e = ParameterError(f"annotate must be 'frequency' or 'performance'; got {annotate!r}")
            e.parameter = "annotate"
            raise e
        c = _PALETTE
        mx = max(int(self.activity_count[self.kept].max(initial=1)), 1)
        emx = max(int(self.count.max(initial=1)), 1)
        lines = [f"digraph {_q(name)} {{", "  rankdir=TB; nodesep=0.3; ranksep=0.4;",
                 '  node [fontname="Helvetica", fontsize=11];',
                 f'  edge [color="{c["edge"]}", fontname="Helvetica", fontsize=9];',
                 f'  s [shape=circle, style=filled, fillcolor="{c["start"]}", '
                 'fontcolor=white, label="start", width=0.5, fixedsize=true];',
                 f'  e [shape=circle, style=filled, fillcolor="{c["end"]}", '
                 'fontcolor=white, label="end", width=0.5, fixedsize=true];']
        for i in np.flatnonzero(self.kept):
            x = np.log1p(self.activity_count[i]) / np.log1p(mx)
            font = "white" if x > 0.6 else "black"
            text = f"{self.activities[i]}\n{self.activity_count[i]:,}"
            lines.append(f"  a{i} [shape=box, style=\"rounded,filled\", fillcolor="
                         f"\"{_shade(x)}\", fontcolor={font}, label={_q(text)}];")

        def width(n: int) -> str:
            return f"{0.6 + 3.4 * np.log1p(n) / np.log1p(emx):.2f}"

        for k in range(len(self.source)):
            lab = (f"{self.count[k]:,}" if annotate == "frequency"
                   else _hours(self.median_gap[k]))
            lines.append(f"  a{self.source[k]} -> a{self.target[k]} [label={_q(lab)}, "
                         f"penwidth={width(int(self.count[k]))}];")
        for i in np.flatnonzero(self.start > 0):
            lines.append(f"  s -> a{i} [style=dashed, label={_q(f'{self.start[i]:,}')}];")
        for i in np.flatnonzero(self.end > 0):
            lines.append(f"  a{i} -> e [style=dashed, label={_q(f'{self.end[i]:,}')}];")
        lines.append("}")
        return "\n".join(lines)


class DependencyGraph(_Drawable):
    """Dependency measures of a log and the edges they select (see
    :class:`~tracemill.discover.DependencyDiscovery`)."""

    def __init__(self, activities: list[str], follows: np.ndarray, dependency: np.ndarray,
                 loop2: np.ndarray, source: np.ndarray, target: np.ndarray,
                 activity_count: np.ndarray, start: np.ndarray, end: np.ndarray) -> None:
        na = len(activities)
        self.activities = list(activities)
        self.follows = np.asarray(follows, dtype=np.int64).reshape(na, na)
        self.dependency = np.asarray(dependency, dtype=np.float64).reshape(na, na)
        self.loop2 = np.asarray(loop2, dtype=np.float64).reshape(na, na)
        self.source = np.asarray(source, dtype=np.int64)
        self.target = np.asarray(target, dtype=np.int64)
        self.activity_count = np.asarray(activity_count, dtype=np.int64)
        self.start = np.asarray(start, dtype=np.int64)
        self.end = np.asarray(end, dtype=np.int64)

    def __repr__(self) -> str:
        return f"DependencyGraph(activities={len(self.activities)}, edges={len(self.source)})"

    def and_measure(self, a: str, b: str, c: str) -> float:
        """``a => (b ∧ c) = (|b>c| + |c>b|) / (|a>b| + |a>c| + 1)``."""
        ix = {n: i for i, n in enumerate(self.activities)}
        f = self.follows
        i, j, k = ix[a], ix[b], ix[c]
        return float((f[j, k] + f[k, j]) / (f[i, j] + f[i, k] + 1))

    def measures(self, kind: str = "pandas") -> Any:
        """Every observed pair: ``source``, ``target``, ``follows`` (|a>b|), ``dependency``
        (a => b; the length-one loop measure when source == target), ``loop2`` and
        ``selected``."""
        a, b = np.nonzero((self.follows > 0) | (self.follows.T > 0))
        sel = np.zeros(self.follows.shape, dtype=bool)
        sel[self.source, self.target] = True
        cols = {
            "source": Col(a.astype(np.uint32), kind="text", names=self.activities),
            "target": Col(b.astype(np.uint32), kind="text", names=self.activities),
            "follows": Col(self.follows[a, b]),
            "dependency": Col(self.dependency[a, b]),
            "loop2": Col(self.loop2[a, b]),
            "selected": Col(sel[a, b]),
        }
        return make_frame(cols, kind)

    def edges(self, kind: str = "pandas") -> Any:
        """Selected edges: ``source``, ``target``, ``follows``, ``dependency``."""
        cols = {
            "source": Col(self.source.astype(np.uint32), kind="text", names=self.activities),
            "target": Col(self.target.astype(np.uint32), kind="text", names=self.activities),
            "follows": Col(self.follows[self.source, self.target]),
            "dependency": Col(self.dependency[self.source, self.target]),
        }
        return make_frame(cols, kind)

    def to_networkx(self) -> Any:
        """A ``networkx.DiGraph`` of the selected edges (attributes ``follows``,
        ``dependency``)."""
        nx = _need_networkx()
        g = nx.DiGraph()
        for i in np.flatnonzero(self.activity_count > 0):
            g.add_node(self.activities[i], events=int(self.activity_count[i]))
        for a, b in zip(self.source, self.target, strict=False):
            g.add_edge(self.activities[a], self.activities[b], follows=int(self.follows[a, b]),
                       dependency=float(self.dependency[a, b]))
        return g

    def to_dot(self, *, name: str = "dependency") -> str:
        """DOT text: edges labelled with their dependency measure."""
        c = _PALETTE
        lines = [f"digraph {_q(name)} {{", "  rankdir=LR;",
                 '  node [fontname="Helvetica", fontsize=11];',
                 f'  edge [color="{c["edge"]}", fontname="Helvetica", fontsize=9];']
        for i in np.flatnonzero(self.activity_count > 0):
            lines.append(f"  a{i} [shape=box, style=\"rounded,filled\", fillcolor="
                         f"\"{_shade(0.25)}\", label={_q(self.activities[i])}];")
        for a, b in zip(self.source, self.target, strict=False):
            lines.append(f"  a{a} -> a{b} [label={_q(f'{self.dependency[a, b]:.2f}')}];")
        lines.append("}")
        return "\n".join(lines)
