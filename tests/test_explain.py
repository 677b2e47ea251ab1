"""Root-cause and decision-point analysis on a generated workshop log with a planted slow
segment (e-bikes under warranty wait for parts from the maker)."""

from __future__ import annotations

import numpy as np
import pytest
from _planted_logs import workshop_log

import tracemill as tm
from tracemill.explain import case_features, decision_points, demo_section, root_causes


@pytest.fixture(scope="module")
def planted():
    return workshop_log(1500, seed=3)


def test_planted_slow_segment_is_the_top_leaf(planted):
    log, truth = planted
    res = root_causes(log, "slow", percentile=80, behaviour=None)
    top = res.leaves.iloc[0]
    assert "bike" in top["rule"] and "e-bike" in top["rule"]
    assert "warranty" in top["rule"] and "yes" in top["rule"]
    assert top["lift"] > 3
    in_top = res.tree.apply(res.features) == top["leaf"]
    assert truth.segment[in_top].mean() > 0.95
    txt = res.to_text()
    assert "not causes" in txt


def test_root_cause_targets_and_prefix(planted):
    log, _ = planted
    f = case_features(log, before="Repair")
    assert "n_Order parts" in f.columns and f["n_Hand over"].sum() == 0
    r = root_causes(log, "rework")
    assert r.base_rate == pytest.approx(float(np.mean(log.handle.rework()[2] > 0)))
    flag = np.zeros(log.n_cases, dtype=bool)
    flag[::5] = True
    r = root_causes(log, flag, max_depth=2)
    assert len(r.leaves) >= 1
    with pytest.raises(tm.DataError, match="one class only"):
        root_causes(log, np.zeros(log.n_cases, dtype=bool))
    with pytest.raises(tm.DataError, match="one per case"):
        root_causes(log, flag[:10])


def test_decision_points(planted):
    log, _ = planted
    res = decision_points(log)
    s = res.summary.set_index("activity")
    # after 'Inspect' e-bikes under warranty always order parts: the tree beats the majority
    assert s.loc["Inspect", "cv_accuracy"] > s.loc["Inspect", "majority_share"] + 0.05
    assert "warranty" in " ".join(res.rules["Inspect"]["rule"])
    # 'Test ride' recurs in reworked cases: folds are grouped by case
    assert "group" in s.loc["Test ride", "cv"]
    hook = decision_points(log, choice_points={"Inspect": ["Order parts", "Repair"]})
    assert hook.summary["activity"].tolist() == ["Inspect"]
    assert "not causes" in res.to_text()


def test_demo_section(planted):
    log, truth = planted
    text = demo_section(log, truth)
    assert "e-bike" in text and "change point" in text
