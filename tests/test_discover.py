"""Discovery and conformance checked against outside references.

Sources named beside each check. Numbers on the running example L come from
the definitions collected in the project references (section G): they are computed by us from each
paper's definition, not printed in the papers.
"""

from __future__ import annotations

import random
import xml.etree.ElementTree as ET

import networkx as nx
import numpy as np
import pandas as pd
import pytest

import tracemill as tm

L = [("abcdf", 4), ("acbdf", 3), ("abcef", 2), ("acbef", 1)]


def make_log(variants, names=None):
    rows = []
    c = 0
    for trace, n in variants:
        for _ in range(n):
            seq = list(trace)
            for a in seq:
                rows.append((f"c{c}", names[a] if names else a))
            c += 1
    f = pd.DataFrame(rows, columns=["case", "act"])
    f["t"] = pd.Timestamp("2025-01-06") + pd.to_timedelta(np.arange(len(f)), unit="min")
    return tm.EventLog.from_frame(f, case="case", activity="act", timestamp="t")


# --------------------------------------------------------------------- reference helpers
def reachability_graph(net: tm.PetriNet, limit: int = 50_000) -> tuple[nx.MultiDiGraph, tuple]:
    """Reachability graph computed here from the firing rule (Murata 1989)."""
    pre = [[] for _ in net.transitions]
    post = [[] for _ in net.transitions]
    pix = {p: i for i, p in enumerate(net.places)}
    tix = {t: i for i, t in enumerate(net.transitions)}
    for s, t, w in net.arcs:
        if s in pix:
            pre[tix[t]].append((pix[s], w))
        else:
            post[tix[s]].append((pix[t], w))
    m0 = tuple(int(x) for x in net.initial_marking)
    g = nx.MultiDiGraph()
    g.add_node(m0)
    todo = [m0]
    while todo:
        m = todo.pop()
        for t in range(len(net.transitions)):
            if all(m[p] >= w for p, w in pre[t]):
                x = list(m)
                for p, w in pre[t]:
                    x[p] -= w
                for p, w in post[t]:
                    x[p] += w
                x = tuple(x)
                if x not in g:
                    g.add_node(x)
                    todo.append(x)
                    assert len(g) < limit
                g.add_edge(m, x, transition=t)
    return g, m0


def assert_sound(net: tm.PetriNet) -> None:
    """Soundness (van der Aalst 1997): option to complete, proper completion, no dead
    transitions, checked on the reachability graph with networkx."""
    g, _m0 = reachability_graph(net)
    final = tuple(int(x) for x in net.final_marking)
    assert final in g
    can_finish = nx.ancestors(g, final) | {final}
    assert set(g.nodes) <= can_finish, "some reachable marking cannot complete"
    for m in g.nodes:
        if all(a >= b for a, b in zip(m, final, strict=False)):
            assert m == final, "proper completion violated"
    fired = {d["transition"] for _, _, d in g.edges(data=True)}
    assert fired == set(range(len(net.transitions))), "dead transitions"


def net_language(net: tm.PetriNet, max_len: int = 12) -> set[tuple[str, ...]]:
    """Visible traces of complete runs, by exploring the reachability graph."""
    g, m0 = reachability_graph(net)
    final = tuple(int(x) for x in net.final_marking)
    out = set()
    seen = set()
    stack = [(m0, ())]
    while stack:
        m, tr = stack.pop()
        if (m, tr) in seen or len(tr) > max_len:
            continue
        seen.add((m, tr))
        if m == final:
            out.add(tr)
        for _, x, d in g.out_edges(m, data=True):
            lab = net.labels[d["transition"]]
            stack.append((x, tr + ((lab,) if lab is not None else ())))
    return out


def exhaustive_alignment_cost(net: tm.PetriNet, trace: list[str]) -> int:
    """Cheapest path in the synchronous product (networkx Dijkstra), built here from the
    definition of Adriansyah et al. 2011: log/visible model moves 1, sync/silent 0."""
    g, m0 = reachability_graph(net)
    final = tuple(int(x) for x in net.final_marking)
    prod = nx.DiGraph()

    def add(u, v, w):
        if not prod.has_edge(u, v) or prod[u][v]["weight"] > w:
            prod.add_edge(u, v, weight=w)

    for m in g.nodes:
        for i in range(len(trace) + 1):
            if i < len(trace):
                add((m, i), (m, i + 1), 1)
            for _, x, d in g.out_edges(m, data=True):
                lab = net.labels[d["transition"]]
                add((m, i), (x, i), 0 if lab is None else 1)
                if lab is not None and i < len(trace) and lab == trace[i]:
                    add((m, i), (x, i + 1), 0)
    return int(nx.dijkstra_path_length(prod, (m0, 0), (final, len(trace))))


# ---------------------------------------------------------------------- directly-follows
def test_dfg_counts_match_pandas():
    # Oracle: pandas shift + value_counts on the same rows.
    log = make_log(L)
    f = log.to_frame()
    case_col, act_col = f.columns[0], f.columns[1]
    nxt = f.groupby(case_col)[act_col].shift(-1)
    ref = pd.DataFrame({"s": f[act_col], "t": nxt}).dropna().value_counts()
    g = tm.DirectlyFollowsDiscovery().fit(log).graph_
    e = g.edges(include_ends=False)
    got = {(s, t): n for s, t, n in zip(e.source, e.target, e["count"], strict=False)}
    assert got == {k: int(v) for k, v in ref.items()}
    # REFERENCES G counts [calc]
    assert got[("a", "b")] == 6 and got[("d", "f")] == 7 and len(got) == 10
    ng = g.to_networkx()
    assert ng.has_edge("[start]", "a") and ng.has_edge("f", "[end]")
    assert nx.has_path(ng, "[start]", "[end]")


def test_dfg_filters_and_params():
    log = make_log(L)
    g = tm.DirectlyFollowsDiscovery(min_edge_count=4).fit(log).graph_
    assert (g.count >= 4).all()
    g = tm.DirectlyFollowsDiscovery(path_coverage=0.4).fit(log).graph_
    assert g.n_cases == 4
    with pytest.raises(tm.ParameterError) as ei:
        tm.DirectlyFollowsDiscovery(path_coverage=0).fit(log)
    assert ei.value.parameter == "path_coverage"
    assert "Got 0 instead" in str(ei.value)
    assert "digraph" in g.to_dot()


def test_dependency_measures():
    # Weijters & Ribeiro 2011 definitions on L (our numbers, REFERENCES G).
    g = tm.DependencyDiscovery().fit(make_log(L)).graph_
    ix = {a: i for i, a in enumerate(g.activities)}
    assert g.dependency[ix["a"], ix["b"]] == pytest.approx(6 / 7)
    assert g.dependency[ix["b"], ix["c"]] == pytest.approx(2 / 11)
    assert g.dependency[ix["b"], ix["d"]] == pytest.approx(0.75)
    assert g.and_measure("a", "b", "c") == pytest.approx(10 / 11)
    m = g.measures()
    assert set(m.columns) >= {"source", "target", "dependency", "selected"}


# ------------------------------------------------------------------------------- alpha
def test_alpha_footprint_places_and_workflow_net():
    # van der Aalst, Weijters & Maruster 2004: Y_L of L has 5 pairs -> 7 places (REFERENCES G).
    net = tm.AlphaDiscovery().fit(make_log(L)).net_
    assert sorted(net.places) == sorted(["source", "sink", "({a},{b})", "({a},{c})",
                                         "({b},{d,e})", "({c},{d,e})", "({d,e},{f})"])
    g = net.to_networkx()
    src = [n for n in g if g.in_degree(n) == 0]
    snk = [n for n in g if g.out_degree(n) == 0]
    assert src == [("place", "source")] and snk == [("place", "sink")]
    assert all(nx.has_path(g, src[0], n) and nx.has_path(g, n, snk[0]) for n in g)
    assert net.workflow_ends == ("source", "sink")
    assert_sound(net)
    assert net_language(net) == {tuple(t) for t, _ in L}


def test_alpha_hand_made_logs():
    # Footprint semantics by hand: a->b, a->c, b#c gives a choice place ({a},{b,c}); a
    # parallel pair (b||c) gives two places after a.
    net = tm.AlphaDiscovery().fit(make_log([("abd", 1), ("acd", 1)])).net_
    assert "({a},{b,c})" in net.places and "({b,c},{d})" in net.places
    net = tm.AlphaDiscovery().fit(make_log([("abcd", 1), ("acbd", 1)])).net_
    assert {"({a},{b})", "({a},{c})", "({b},{d})", "({c},{d})"} <= set(net.places)


# ------------------------------------------------------------------------- token replay
@pytest.mark.parametrize("trace,counts,fit", [
    ("abcdf", (7, 7, 0, 0), 1.0),
    ("abdf", (6, 6, 1, 1), 0.833333),
    ("acbdef", (8, 9, 2, 1), 0.826389),
    ("abcf", (6, 5, 1, 2), 0.733333),
    ("af", (4, 3, 1, 2), 0.583333),
])
def test_token_replay_counts_by_hand(trace, counts, fit):
    # Rozinat & van der Aalst 2008 counters on the alpha net of L, worked by hand: e.g. for
    # "abdf": p counts the initial token (1) + 5 produced; c includes the final token; d fires
    # without the token from c -> m = 1; the token left in ({b},...)'s sibling -> r = 1.
    net = tm.AlphaDiscovery().fit(make_log(L)).net_
    r = tm.token_replay(net, make_log([(trace, 1)]))
    row = r.cases().iloc[0]
    assert (row.produced, row.consumed, row.missing, row.remaining) == counts
    assert row.fitness == pytest.approx(fit, abs=1e-6)


def test_token_replay_log_level_and_diagnostics():
    net = tm.AlphaDiscovery().fit(make_log(L)).net_
    r = tm.token_replay(net, make_log([("abcdf", 8), ("abdf", 2)]))
    # (1 - 2/66)/2 + (1 - 2/66)/2 = 0.970588 (REFERENCES G).
    assert r.fitness == pytest.approx(0.970588, abs=1e-6)
    lack = r.lacking()
    assert lack.transition.tolist() == ["d"] and lack.cases.tolist() == [2]


# --------------------------------------------------------------------------- alignments
def test_alignment_costs_equal_exhaustive_search():
    net = tm.AlphaDiscovery().fit(make_log(L)).net_
    traces = ["abdf", "acbdef", "abcf", "af", "xabcdf", "fdcba", "abcdf", ""]
    log = make_log([(t, 1) for t in traces if t] + [("abcdf", 1)])
    res = tm.align(net, log)
    costs = res.cases()
    for i, t in enumerate([t for t in traces if t]):
        assert costs.cost[i] == exhaustive_alignment_cost(net, list(t)), t
    # REFERENCES G: shortest model run 5; <af> cost 3 -> 1 - 3/7.
    assert res.model_run_cost == 5
    assert costs.fitness[3] == pytest.approx(0.571429, abs=1e-6)
    mv = res.moves(4)
    assert mv.move.tolist()[0] == "log" and mv.activity.tolist()[0] == "x"


def test_alignment_on_tree_with_silent_steps_matches_exhaustive():
    tree = tm.ProcessTree.from_nested(("sequence", "a", ("loop", "b", None),
                                       ("parallel", "c", ("choice", "d", None))))
    net = tree.to_petri_net()
    for t in ["abbc", "acd", "adc", "abdcb", "cd", "bbbb"]:
        res = tm.align(net, make_log([(t, 1)]))
        assert int(res.cases().cost[0]) == exhaustive_alignment_cost(net, list(t)), t


def test_alignment_gives_up_and_reports():
    net = tm.AlphaDiscovery().fit(make_log(L)).net_
    res = tm.align(net, make_log([("fedcbaf", 1), ("abcdf", 3)]), max_states=3)
    assert res.n_gave_up_cases >= 1
    assert 0 in res.gave_up_cases.tolist()
    assert pd.isna(res.cases().cost[0])


# ----------------------------------------------------------------------------- inductive
def test_inductive_running_example():
    # Tree derived from the cut definitions of Leemans et al. 2013 (REFERENCES G).
    m = tm.InductiveDiscovery().fit(make_log(L))
    assert str(m.tree_) == "sequence('a', parallel('b', 'c'), choice('d', 'e'), 'f')"
    assert_sound(m.net_)


def _random_tree(rng: random.Random, acts: list[str], depth: int = 0):
    if len(acts) == 1:
        return acts[0]
    ops = ["sequence", "choice", "parallel"]
    op = rng.choice(ops)
    k = rng.randint(2, min(3, len(acts)))
    cuts = sorted(rng.sample(range(1, len(acts)), k - 1))
    parts = [acts[i:j] for i, j in zip([0, *cuts], [*cuts, len(acts)], strict=False)]
    kids = []
    for p in parts:
        c = _random_tree(rng, p, depth + 1)
        # normal form: no operator directly under the same operator
        if isinstance(c, tuple) and c[0] == op:
            kids.extend(c[1:])
        else:
            kids.append(c)
    return (op, *kids)


@pytest.mark.parametrize("seed", range(12))
def test_inductive_rediscovers_block_structured_language(seed):
    # Leemans et al. 2013: from a directly-follows complete log of a tree without duplicate
    # labels the discovered model has the same language. Logs: every trace of the tree's
    # language (computed here from the reachability graph of the tree's own net).
    rng = random.Random(seed)
    acts = list("abcdef")[: rng.randint(3, 6)]
    rng.shuffle(acts)
    truth = tm.ProcessTree.from_nested(_random_tree(rng, acts))
    lang = net_language(truth.to_petri_net())
    log = make_log([(list(t), 1) for t in sorted(lang)])
    found = tm.InductiveDiscovery().fit(log)
    assert net_language(found.net_) == lang, (str(truth), str(found.tree_))
    assert_sound(found.net_)


@pytest.mark.parametrize("variants", [
    [("abcbd", 3), ("abd", 2), ("ad", 1)],
    [("abab", 1), ("ba", 2), ("aaa", 1)],
    [("xyz", 2), ("zyx", 1), ("yy", 1), ("xzzx", 1)],
    [*L, ("af", 1), ("fa", 1)],
])
def test_inductive_fits_its_log_and_is_sound(variants):
    # Leemans et al. 2013: sound workflow net, alignment fitness 1 on the input log.
    log = make_log(variants)
    m = tm.InductiveDiscovery().fit(log)
    assert_sound(m.net_)
    res = tm.align(m.net_, log)
    assert res.fitness == 1.0 and res.n_gave_up_cases == 0
    assert tm.token_replay(m.net_, log).fitness == pytest.approx(1.0)


def test_inductive_noise_threshold():
    log = make_log([("abc", 100), ("ac", 2)])
    assert str(tm.InductiveDiscovery(0.0).fit(log).tree_) == \
        "sequence('a', choice(tau, 'b'), 'c')"
    assert str(tm.InductiveDiscovery(0.2).fit(log).tree_) == "sequence('a', 'b', 'c')"
    for bad in (-0.1, 1.5, float("nan"), "x"):
        with pytest.raises(tm.ParameterError) as ei:
            tm.InductiveDiscovery(noise_threshold=bad).fit(log)
        assert ei.value.parameter == "noise_threshold"


def test_estimator_params_roundtrip():
    sk = pytest.importorskip("sklearn.base")
    est = tm.InductiveDiscovery(noise_threshold=0.3)
    assert sk.clone(est).get_params() == {"noise_threshold": 0.3}
    with pytest.raises(tm.NotFittedError):
        tm.InductiveDiscovery()._check_fitted("tree_")


# ------------------------------------------------------------------------------ precision
def test_etc_precision_values():
    # Muñoz-Gama & Carmona 2010 definition on L (REFERENCES G, our numbers).
    net = tm.AlphaDiscovery().fit(make_log(L)).net_
    assert tm.precision(net, make_log(L)) == pytest.approx(1.0)
    assert tm.precision(net, make_log([("abcdf", 4), ("acbef", 1)])) == \
        pytest.approx(1 - 5 / 35)
    flower = tm.ProcessTree.from_nested(("loop", None, *"abcdef")).to_petri_net()
    assert tm.precision(flower, make_log(L)) < 0.5
    q = tm.quality_table({"alpha": net, "flower": flower}, make_log(L))
    assert q.model.tolist() == ["alpha", "flower"]
    assert q.alignment_fitness.tolist() == [1.0, 1.0]
    assert q.simplicity[0] > 0


# ------------------------------------------------------------------------------ bad input
def _tiny_net(initial=True, final=True):
    return tm.PetriNet(["i", "o"], ["a"], [("i", "a"), ("a", "o")],
                       initial_marking={"i": 1} if initial else None,
                       final_marking={"o": 1} if final else None)


def test_bad_nets_and_logs():
    log = make_log([("a", 1)])
    with pytest.raises(tm.DataError, match="no initial marking"):
        tm.token_replay(_tiny_net(initial=False), log)
    with pytest.raises(tm.DataError, match="no final marking"):
        tm.align(_tiny_net(final=False), log)
    with pytest.raises(tm.DataError, match="arc 0"):
        tm.PetriNet(["i"], ["a"], [("i", "zz")])
    # unbounded: a silent transition that refills its input and adds to another place
    pump = tm.PetriNet(["i", "o", "pile"], ["a", "pump"],
                       [("i", "a"), ("a", "o"), ("i", "pump"), ("pump", "i"), ("pump", "pile")],
                       initial_marking={"i": 1}, final_marking={"o": 1}, labels=["a", None])
    with pytest.raises(tm.DataError, match=r"unbounded.*pile"):
        tm.token_replay(pump, log)
    # an activity no transition carries: a log move, not a crash
    log2 = make_log([("aq", 1)])
    assert int(tm.align(_tiny_net(), log2).cases().cost[0]) == 1
    assert int(tm.token_replay(_tiny_net(), log2).cases().unmatched[0]) == 1
    with pytest.raises(tm.DataError, match="empty"):
        log.select_cases(np.zeros(1, dtype=bool))


# ----------------------------------------------------------------------------------- files
PNML_NS = "{http://www.pnml.org/version-2009/grammar/pnml}"


def test_pnml_structure_and_round_trip(tmp_path):
    # ISO/IEC 15909-2 structure: pnml > net[type] > page > place/transition/arc;
    # initialMarking/text on the source place.
    net = tm.InductiveDiscovery().fit(make_log(L)).net_
    path = tmp_path / "m.pnml"
    net.to_pnml(path)
    root = ET.parse(path).getroot()
    assert root.tag == PNML_NS + "pnml"
    n = root.find(PNML_NS + "net")
    assert n.get("type") == "http://www.pnml.org/version-2009/grammar/ptnet"
    page = n.find(PNML_NS + "page")
    places = page.findall(PNML_NS + "place")
    trans = page.findall(PNML_NS + "transition")
    arcs = page.findall(PNML_NS + "arc")
    assert (len(places), len(trans), len(arcs)) == (len(net.places), len(net.transitions),
                                                    net.n_arcs)
    marked = [p for p in places if p.find(PNML_NS + "initialMarking") is not None]
    assert len(marked) == 1
    assert marked[0].find(f"{PNML_NS}initialMarking/{PNML_NS}text").text == "1"
    ids = {e.get("id") for e in places + trans}
    assert all(a.get("source") in ids and a.get("target") in ids for a in arcs)
    back = tm.PetriNet.from_pnml(path)
    assert back == net


@pytest.mark.parametrize("text,needle", [
    ('<?xml version="1.0"?>\n<!DOCTYPE x [<!ENTITY e "x">]><pnml/>', "DOCTYPE"),
    ('<pnml><net id="n" type="http://www.pnml.org/version-2009/grammar/symmetricnet">'
     '<page id="p"/></net></pnml>', "symmetricnet"),
    ('<pnml><net id="n"><page id="g"><place id="p"></page></net></pnml>', "malformed"),
    ('<pnml><net id="n"><page id="g"><place id="p"/><arc id="a" target="p"/></page></net>'
     '</pnml>', "<arc>"),
    ("<petri/>", "<pnml>"),
])
def test_pnml_bad_input(text, needle):
    with pytest.raises(tm.FormatError, match=needle):
        tm.PetriNet.from_pnml(text)


def test_pnml_with_several_nets_needs_a_choice():
    # Two nets in one document (PNML, ISO/IEC 15909-2, allows several <net> elements).
    def one(i):
        return (f'<net id="n{i}" type="http://www.pnml.org/version-2009/grammar/ptnet">'
                f'<page id="g"><place id="p{i}"/></page></net>')

    text = f"<pnml>{one(1)}{one(2)}</pnml>"
    with pytest.raises(tm.FormatError, match=r"2 nets \('n1', 'n2'\)"):
        tm.PetriNet.from_pnml(text)
    assert tm.PetriNet.from_pnml(text, net="n2").places == ["p2"]
    with pytest.raises(tm.FormatError, match="no net with id 'n3'"):
        tm.PetriNet.from_pnml(text, net="n3")


def test_bpmn_export_structure():
    # BPMN 2.0 (OMG): definitions > process with start/end events, tasks, gateways and
    # sequence flows whose sourceRef/targetRef name existing elements.
    tree = tm.InductiveDiscovery().fit(make_log(L)).tree_
    root = ET.fromstring(tree.to_bpmn())
    ns = "{http://www.omg.org/spec/BPMN/20100524/MODEL}"
    proc = root.find(ns + "process")
    ids = {e.get("id") for e in proc if e.tag != ns + "sequenceFlow"}
    flows = proc.findall(ns + "sequenceFlow")
    assert all(f.get("sourceRef") in ids and f.get("targetRef") in ids for f in flows)
    assert len(proc.findall(ns + "task")) == 6
    assert len(proc.findall(ns + "parallelGateway")) == 2
    g = nx.DiGraph([(f.get("sourceRef"), f.get("targetRef")) for f in flows])
    assert nx.has_path(g, "start", "end")


def test_models_convert_and_draw(tmp_path):
    m = tm.InductiveDiscovery().fit(make_log(L))
    for obj in (m.tree_, m.net_, tm.DirectlyFollowsDiscovery().fit(make_log(L)).graph_,
                tm.DependencyDiscovery().fit(make_log(L)).graph_):
        dot = obj.to_dot()
        assert dot.startswith("digraph") and dot.rstrip().endswith("}")
        assert obj.to_networkx().number_of_nodes() > 0
        assert len(obj.edges()) > 0
    assert nx.is_tree(m.tree_.to_networkx())
    assert tm.ProcessTree.from_nested(m.tree_.to_nested()) == m.tree_
    pytest.importorskip("graphviz")
    try:
        out = m.net_.render(tmp_path / "net.svg")
    except Exception as e:  # the Python package without the Graphviz programs
        pytest.skip(f"graphviz programs unavailable: {e}")
    assert open(out).read().lstrip().startswith("<")


# ------------------------------------------------------------------------------ comparison
def test_compare_directly_follows_matches_scipy():
    # Oracle: scipy's chi-square test of independence without continuity correction equals
    # the squared pooled two-proportion z statistic.
    stats = pytest.importorskip("scipy.stats")
    a = make_log([("abd", 40), ("acd", 10)])
    b = make_log([("abd", 15), ("acd", 45)])
    cmp = tm.compare_directly_follows(a, b, names=("x", "y"))
    row = cmp[(cmp.source == "a") & (cmp.target == "c")].iloc[0]
    table = [[row.cases_x, 50 - row.cases_x], [row.cases_y, 60 - row.cases_y]]
    chi2, p, *_ = stats.chi2_contingency(table, correction=False)
    assert row.z ** 2 == pytest.approx(chi2)
    assert row.p_value == pytest.approx(p)
    assert bool(row.significant)
    same = cmp[(cmp.source == "[start]")].iloc[0]
    assert not bool(same.significant)
    # Benjamini-Hochberg against scipy
    if hasattr(stats, "false_discovery_control"):
        assert np.allclose(np.sort(cmp.p_adjusted),
                           np.sort(stats.false_discovery_control(cmp.p_value)))


def test_demo_section_runs(tmp_path):
    from tracemill.discover import demo_section

    class Truth:
        def __init__(self) -> None:
            self.segment = np.array([0] * 10 + [1] * 6)
            self.segment_names = ["quick fix", "full service"]

    log = make_log([("abcdf", 5), ("acbdf", 5), ("abcef", 3), ("abef", 3)])
    text = demo_section(log, Truth(), out_dir=tmp_path)
    assert "quick fix" in text and "Fitness" in text
    assert any(p.suffix == ".dot" for p in tmp_path.iterdir())


