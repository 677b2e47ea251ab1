"""Frequent itemsets and association rules: published worked examples, two reference
libraries (mlxtend, pyfim), bad input."""

from __future__ import annotations

import pickle
import warnings

import numpy as np
import pandas as pd
import pytest

import tracemill as tm

HKP = [["I1", "I2", "I5"], ["I2", "I4"], ["I2", "I3"], ["I1", "I2", "I4"], ["I1", "I3"],
       ["I2", "I3"], ["I1", "I3"], ["I1", "I2", "I3", "I5"], ["I1", "I2", "I3"]]
TSK = [["Bread", "Milk"], ["Bread", "Diapers", "Beer", "Eggs"],
       ["Milk", "Diapers", "Beer", "Cola"], ["Bread", "Milk", "Diapers", "Beer"],
       ["Bread", "Milk", "Diapers", "Cola"]]
HPY = [list("facdgimp"), list("abcflmo"), list("bfhjo"), list("bcksp"), list("afcelpmn")]
ZM = [list("ABDE"), list("BCE"), list("ABDE"), list("ABCE"), list("ABCDE"), list("BCD")]
ALGS = ["fpgrowth", "eclat", "apriori"]


def as_dict(fi: tm.FrequentItemsets) -> dict[frozenset, int]:
    f = fi.to_frame()
    return {frozenset(s): int(c) for s, c in zip(f["itemset"], f["count"], strict=False)}


# ---------------------------------------------------------------- published examples
@pytest.mark.parametrize("algorithm", ALGS)
def test_han_kamber_pei_table_6_1(algorithm):
    # Han, Kamber & Pei, Data Mining: Concepts and Techniques (3rd ed.), Table 6.1 at min
    # count 2 (transactions from memory; counts recomputed, REFERENCES.md C item 1).
    t = tm.Transactions.from_lists(HKP)
    got = as_dict(tm.frequent_itemsets(t, 2, algorithm=algorithm))
    want = {"I1": 6, "I2": 7, "I3": 6, "I4": 2, "I5": 2, "I1 I2": 4, "I1 I3": 4, "I1 I5": 2,
            "I2 I3": 4, "I2 I4": 2, "I2 I5": 2, "I1 I2 I3": 2, "I1 I2 I5": 2}
    assert got == {frozenset(k.split()): v for k, v in want.items()}
    closed = as_dict(tm.frequent_itemsets(t, 2, target="closed", algorithm=algorithm))
    assert len(closed) == 9
    assert frozenset({"I2", "I4"}) in closed and frozenset({"I4"}) not in closed
    maximal = as_dict(tm.frequent_itemsets(t, 2, target="maximal", algorithm=algorithm))
    assert set(maximal) == {frozenset({"I2", "I4"}), frozenset({"I1", "I2", "I3"}),
                            frozenset({"I1", "I2", "I5"})}


def test_han_kamber_pei_rules_of_i1_i2_i5():
    # Han, Kamber & Pei, Example 6.4: the six rules from {I1, I2, I5} and their confidences.
    fi = tm.frequent_itemsets(tm.Transactions.from_lists(HKP), 2)
    r = tm.association_rules(fi, min_confidence=0.0).to_frame()
    assert len(r) == 24
    key = {(frozenset(a), frozenset(c)): row for a, c, row in
           zip(r["antecedent"], r["consequent"], r.itertuples(), strict=False)}
    want = [("I1 I2", "I5", 0.5), ("I1 I5", "I2", 1.0), ("I2 I5", "I1", 1.0),
            ("I1", "I2 I5", 1 / 3), ("I2", "I1 I5", 2 / 7), ("I5", "I1 I2", 1.0)]
    for a, c, conf in want:
        row = key[(frozenset(a.split()), frozenset(c.split()))]
        assert row.confidence == pytest.approx(conf, abs=1e-12)
        assert row.n_xy == 2
    assert len(tm.association_rules(fi, min_confidence=0.7)) == 6


def test_tan_steinbach_kumar_basket():
    # Tan, Steinbach & Kumar, Introduction to Data Mining: {Milk, Diapers} -> {Beer} has
    # support 0.4, confidence 0.667, lift 1.111 (REFERENCES.md C item 2).
    t = tm.Transactions.from_lists(TSK)
    fi = tm.frequent_itemsets(t, 0.4)
    r = tm.association_rules(fi, min_confidence=0.0, consequent=["Beer"]).to_frame()
    row = r[r["antecedent"] == ("Diapers", "Milk")].iloc[0]
    assert row["support"] == pytest.approx(0.4)
    assert row["confidence"] == pytest.approx(2 / 3)
    assert row["lift"] == pytest.approx(10 / 9)
    assert row["leverage"] == pytest.approx(0.04)
    assert row["conviction"] == pytest.approx(1.2)
    assert row["jaccard"] == pytest.approx(0.5)
    assert (row["n_x"], row["n_y"], row["n_xy"], row["n"]) == (3, 3, 2, 5)
    assert len(tm.frequent_itemsets(t, 0.6)) == 8
    assert len(tm.frequent_itemsets(t, 1)) == 35


@pytest.mark.parametrize("algorithm", ALGS)
def test_han_pei_yin_2000_table_1(algorithm):
    # Han, Pei & Yin 2000 (SIGMOD), Table 1 at ξ = 3: 18 frequent itemsets, 5 closed, 3 maximal.
    t = tm.Transactions.from_lists(HPY)
    got = as_dict(tm.frequent_itemsets(t, 3, algorithm=algorithm))
    assert len(got) == 18
    assert got[frozenset("acfm")] == 3 and got[frozenset("f")] == 4
    assert len(tm.frequent_itemsets(t, 3, target="closed", algorithm=algorithm)) == 5
    assert set(as_dict(tm.frequent_itemsets(t, 3, target="maximal"))) == {
        frozenset("b"), frozenset("cp"), frozenset("acfm")}


@pytest.mark.parametrize("algorithm", ALGS)
def test_zaki_meira_chapter_8(algorithm):
    # Zaki & Meira, Data Mining and Analysis (2014), ch. 8 at minsup 3: 19 itemsets, 7 closed,
    # 2 maximal. B is in every transaction (the pyfim quirk: its apriori/eclat/fpgrowth give 18).
    t = tm.Transactions.from_lists(ZM)
    got = as_dict(tm.frequent_itemsets(t, 3, algorithm=algorithm))
    assert len(got) == 19 and got[frozenset("B")] == 6
    closed = as_dict(tm.frequent_itemsets(t, 3, target="closed", algorithm=algorithm))
    assert closed == {frozenset("B"): 6, frozenset("BE"): 5, frozenset("ABE"): 4,
                      frozenset("BC"): 4, frozenset("BD"): 4, frozenset("ABDE"): 3,
                      frozenset("BCE"): 3}
    assert set(as_dict(tm.frequent_itemsets(t, 3, target="maximal"))) == {
        frozenset("ABDE"), frozenset("BCE")}


# ---------------------------------------------------------------- reference libraries
def random_baskets(seed: int, n: int, m: int, skew: bool) -> list[list[int]]:
    rng = np.random.default_rng(seed)
    p = 1.0 / np.arange(1, m + 1) ** (1.2 if skew else 0.0)
    p /= p.sum()
    out = []
    for _ in range(n):
        k = int(rng.integers(0, 9))
        out.append(sorted(set(rng.choice(m, size=k, p=p).tolist())))
    out[0] = out[0] + [m]  # an item present in every transaction (pyfim quirk)
    for b in out:
        if m not in b:
            b.append(m)
    return out


def onehot(baskets: list[list[int]]) -> pd.DataFrame:
    items = sorted({i for b in baskets for i in b})
    return pd.DataFrame([[i in set(b) for i in items] for b in baskets], columns=items)


@pytest.mark.parametrize("seed,skew", [(0, False), (1, True), (2, True)])
def test_itemsets_match_mlxtend_and_pyfim(seed, skew):
    # Oracles: mlxtend.frequent_patterns.fpgrowth and pyfim's relim (both report the singleton
    # of an item present in every transaction, which pyfim's fpgrowth drops).
    fim = pytest.importorskip("fim")
    mlx = pytest.importorskip("mlxtend.frequent_patterns")
    baskets = random_baskets(seed, 300, 12, skew)
    t = tm.Transactions.from_lists(baskets)
    df = onehot(baskets)
    for supp in (0.02, 0.05, 0.1):
        want = mlx.fpgrowth(df, min_support=supp, use_colnames=True)
        want_d = {frozenset(s): round(v * len(baskets)) for s, v in
                  zip(want["itemsets"], want["support"], strict=False)}
        count = int(np.ceil(supp * len(baskets) - 1e-9))
        relim = {frozenset(s): c for s, c in fim.relim(baskets, target="s", supp=-count,
                                                       report="a")}
        assert relim == want_d
        for alg in ALGS:
            assert as_dict(tm.frequent_itemsets(t, supp, algorithm=alg)) == want_d
        fp = {frozenset(s): c for s, c in fim.fpgrowth(baskets, target="m", supp=-count,
                                                       report="a")}
        got_max = as_dict(tm.frequent_itemsets(t, count, target="maximal"))
        assert got_max == fp


def test_eclat_on_mixed_density_matches_mlxtend():
    # Oracle: mlxtend.frequent_patterns.fpgrowth. Items from rare (5 %) to common (90 %):
    # Eclat's classes of rare items keep tidsets, those of common items switch to diffsets.
    mlx = pytest.importorskip("mlxtend.frequent_patterns")
    rng = np.random.default_rng(7)
    present = rng.random((400, 16)) < np.linspace(0.05, 0.9, 16)
    baskets = [np.flatnonzero(r).tolist() or [0] for r in present]
    t = tm.Transactions.from_lists(baskets)
    df = onehot(baskets)
    for supp in (0.03, 0.2):
        want = mlx.fpgrowth(df, min_support=supp, use_colnames=True)
        want_d = {frozenset(s): round(v * len(baskets)) for s, v in
                  zip(want["itemsets"], want["support"], strict=False)}
        assert as_dict(tm.frequent_itemsets(t, supp, algorithm="eclat")) == want_d


def test_rules_match_mlxtend_measures():
    # Oracle: mlxtend.frequent_patterns.association_rules (its measure formulas; to 1e-12).
    mlx = pytest.importorskip("mlxtend.frequent_patterns")
    baskets = random_baskets(5, 250, 10, True)
    n = len(baskets)
    df = onehot(baskets)
    fi_m = mlx.fpgrowth(df, min_support=0.05, use_colnames=True)
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")  # mlxtend divides by zero for items in every basket
        want = mlx.association_rules(fi_m, num_itemsets=n, metric="confidence",
                                     min_threshold=0.3)
    fi = tm.frequent_itemsets(tm.Transactions.from_lists(baskets), 0.05)
    got = tm.association_rules(fi, min_confidence=0.3).to_frame()
    assert len(got) == len(want)
    g = {(frozenset(a), frozenset(c)): r for a, c, r in
         zip(got["antecedent"], got["consequent"], got.to_dict("records"), strict=False)}
    pairs = [("support", "support"), ("confidence", "confidence"), ("lift", "lift"),
             ("leverage", "leverage"), ("conviction", "conviction"), ("jaccard", "jaccard"),
             ("kulczynski", "kulczynski"), ("certainty", "certainty"),
             ("zhang", "zhangs_metric")]
    for w in want.to_dict("records"):
        r = g[(frozenset(w["antecedents"]), frozenset(w["consequents"]))]
        for ours, theirs in pairs:
            if np.isinf(w[theirs]):
                assert np.isinf(r[ours])
            else:
                assert r[ours] == pytest.approx(w[theirs], abs=1e-12), ours


def test_rules_count_matches_pyfim_arules():
    # Oracle: pyfim.arules with mode="o" (rule support = support of body and head, the
    # definition of Agrawal et al.; its default counts the body only).
    fim = pytest.importorskip("fim")
    baskets = random_baskets(7, 200, 9, True)
    fi = tm.frequent_itemsets(tm.Transactions.from_lists(baskets), 10)
    got = tm.association_rules(fi, min_confidence=0.4).to_frame()
    want = fim.arules(baskets, supp=-10, conf=40, zmin=2, report="ab", mode="o")
    # pyfim reports single-item consequents only; compare those.
    single = got[got["consequent"].map(len) == 1]
    want_d = {(frozenset(b), h): (a, s) for h, b, a, s in want}
    got_d = {(frozenset(a), c[0]): (nxy, nx) for a, c, nxy, nx in
             zip(single["antecedent"], single["consequent"], single["n_xy"], single["n_x"],
                 strict=True)}
    assert got_d == want_d


# ---------------------------------------------------------------- inputs and outputs
def test_from_frame_sparse_lists_agree():
    sp = pytest.importorskip("scipy.sparse")
    baskets = random_baskets(3, 60, 6, False)
    df = onehot(baskets)
    a = tm.Transactions.from_lists(baskets).to_lists()
    b = tm.Transactions.from_frame(df).to_lists()
    c = tm.Transactions.from_frame(df.astype(int)).to_lists()
    d = tm.Transactions.from_sparse(sp.csr_matrix(df.to_numpy().astype(float)),
                                    item_names=list(df.columns)).to_lists()
    assert a == b == c == d


def test_polars_frame_and_output_kinds():
    pl = pytest.importorskip("polars")
    df = pl.DataFrame({"a": [True, False, True], "b": [True, True, True]})
    t = tm.Transactions.from_frame(df)
    fi = tm.frequent_itemsets(t, 2)
    assert fi.to_frame("polars").shape == (3, 4)
    assert tm.association_rules(fi).to_frame("arrow").num_rows >= 1


def test_from_log_items_and_label():
    frame = pd.DataFrame({
        "case": ["r1", "r1", "r1", "r2", "r2", "r3", "r3"],
        "act": ["Inspect", "Repair", "Return", "Inspect", "Return", "Inspect", "Repair"],
        "at": pd.to_datetime(["2025-01-01 09:00", "2025-01-01 10:00", "2025-01-01 12:00",
                              "2025-01-02 09:00", "2025-01-02 09:30", "2025-01-03 08:00",
                              "2025-01-03 09:00"]),
        "who": ["Ana", "Ben", "Ana", "Ana", "Ana", "Ben", "Ben"],
        "bike": ["road", "road", "road", "city", "city", "road", "road"],
        "price": [10.0, 10.0, 10.0, 50.0, 50.0, 90.0, 90.0],
    })
    log = tm.EventLog.from_frame(frame, case="case", activity="act", timestamp="at",
                                 resource="who", case_attributes=["bike", "price"])
    t = tm.Transactions.from_log(log, directly_follows=True, resources=True,
                                 case_attributes=["bike", "price"],
                                 bin_edges={"price": [0, 40, 100]},
                                 label=["slow", "fast", "slow"], label_name="speed")
    lists = [set(x) for x in t.to_lists()]
    assert lists[0] == {"Inspect", "Repair", "Return", "Inspect->Repair", "Repair->Return",
                        "resource=Ana", "resource=Ben", "bike=road", "price=[0, 40)",
                        "speed=slow"}
    assert "price=[40, 100]" in lists[1]
    fi = tm.frequent_itemsets(t, 2)
    r = tm.association_rules(fi, min_confidence=0.9, consequent="speed=slow").to_frame()
    assert ("Repair",) in set(r["antecedent"])
    with pytest.raises(tm.ParameterError) as e:
        tm.Transactions.from_log(log, case_attributes=["bikes"])
    assert "bike" in str(e.value)


def test_pickle_round_trip():
    t = tm.Transactions.from_lists(HKP)
    u = pickle.loads(pickle.dumps(t))
    assert u.to_lists() == t.to_lists()
    assert u.item_names == t.item_names


def test_thread_count_does_not_change_results():
    baskets = random_baskets(11, 400, 15, True)
    t = tm.Transactions.from_lists(baskets)
    a = tm.frequent_itemsets(t, 3).arrays()
    b = tm.frequent_itemsets(t, 3, algorithm="eclat").arrays()
    for k in a:
        np.testing.assert_array_equal(a[k], b[k])


# ---------------------------------------------------------------- bad input
def test_bad_supports():
    t = tm.Transactions.from_lists(HKP)
    for bad in (0.0, 1.5, -0.1, 0, True, "5%"):
        with pytest.raises(tm.ParameterError) as e:
            tm.frequent_itemsets(t, bad)
        assert e.value.parameter == "min_support"
    with pytest.raises(tm.ParameterError, match="above the number of transactions"):
        tm.frequent_itemsets(t, 10)


def test_empty_transactions_are_counted():
    t = tm.Transactions.from_lists([["a"], [], ["a", "b"], []])
    assert t.n_empty == 2 and t.n_transactions == 4
    f = tm.frequent_itemsets(t, 0.5).to_frame()
    assert f["itemset"].tolist() == [("a",)] and f["support"].tolist() == [0.5]


def test_unknown_consequent_and_filtered_itemsets():
    fi = tm.frequent_itemsets(tm.Transactions.from_lists(TSK), 2)
    with pytest.raises(tm.ParameterError, match="unknown item") as e:
        tm.association_rules(fi, consequent=["Bier"])
    assert "Beer" in str(e.value)
    closed = tm.frequent_itemsets(tm.Transactions.from_lists(TSK), 2, target="closed")
    with pytest.raises(tm.DataError, match="every frequent itemset"):
        tm.association_rules(closed)
    with pytest.raises(tm.ParameterError):
        tm.association_rules(fi, sort_by="interest")
    with pytest.raises(tm.ParameterError):
        tm.association_rules(fi, min_confidence=2)


def test_itemset_bound_error_and_truncation():
    t = tm.Transactions.from_lists(random_baskets(1, 200, 14, False))
    with pytest.raises(tm.LimitError, match="max_itemsets=20") as e:
        tm.frequent_itemsets(t, 1, max_itemsets=20)
    assert "raise max_itemsets" in str(e.value)
    fi = tm.frequent_itemsets(t, 1, max_itemsets=20, on_limit="truncate")
    assert fi.truncated and len(fi) == 20
    with pytest.raises(tm.DataError):
        tm.association_rules(fi)
    with pytest.raises(tm.LimitError, match="max_rules"):
        tm.association_rules(tm.frequent_itemsets(t, 5), min_confidence=0, max_rules=3)


def test_bad_frames_and_lists():
    with pytest.raises(tm.ParameterError) as e:
        tm.Transactions.from_frame(pd.DataFrame({"a": [0, 2]}))
    assert e.value.column == "a" and e.value.row == 1
    with pytest.raises(tm.ParameterError):
        tm.Transactions.from_frame(pd.DataFrame({"a": ["x", "y"]}))
    with pytest.raises(tm.ParameterError, match="not a string"):
        tm.Transactions.from_lists(["abc"])
    sp = pytest.importorskip("scipy.sparse")
    with pytest.raises(tm.DataError, match="negative"):
        tm.Transactions.from_sparse(sp.csr_matrix(np.array([[1.0, -1.0]])))


def test_progress_and_interrupt():
    t = tm.Transactions.from_lists(random_baskets(2, 3000, 40, False))
    seen = []

    def cb(done, total):
        seen.append((done, total))
        raise KeyboardInterrupt

    try:
        tm.frequent_itemsets(t, 1, progress=cb, max_len=6)
    except KeyboardInterrupt:
        pass
    # Either it finished before the first report or the callback stopped it.
    assert all(d <= tot for d, tot in seen)


def test_text_rendering():
    fi = tm.frequent_itemsets(tm.Transactions.from_lists(TSK), 2)
    text = tm.association_rules(fi, consequent="Beer", min_confidence=0.5).describe(2)
    assert "-> {Beer}" in text and "not cause" in text


def test_demo_section_on_a_small_log():
    from types import SimpleNamespace

    from tracemill.rules import demo_section

    rng = np.random.default_rng(0)
    rows = []
    seg = []
    for c in range(200):
        s = int(rng.integers(0, 2))
        seg.append(s)
        t = pd.Timestamp("2025-01-01") + pd.Timedelta(hours=c)
        steps = ["Register", "Inspect"] + (["Order part", "Receive part"] if s else []) + \
            ["Repair", "Hand over"]
        for a in steps:
            t += pd.Timedelta(minutes=int(rng.integers(5, 50)) + (3000 if a == "Receive part"
                                                                 else 0))
            rows.append((f"c{c}", a, t))
    log = tm.EventLog.from_frame(pd.DataFrame(rows, columns=["case", "act", "at"]),
                                 case="case", activity="act", timestamp="at")
    truth = SimpleNamespace(segment=np.array(seg), segment_names=["plain", "spare part"],
                            deviation=np.zeros(200, int), deviation_names=["none"])
    text = demo_section(log, truth)
    assert "duration=slow" in text and "segment=spare part" in text
    assert "not cause" in text
    # Every case registers and is inspected 5-50 minutes later: 200 occurrences within an hour.
    assert "Register then Inspect: 200 times" in text
