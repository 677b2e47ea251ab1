"""Metrics and splitters against scikit-learn (sklearn.metrics, sklearn.model_selection)."""

from __future__ import annotations

import numpy as np
import pytest
from sklearn import metrics as skm
from sklearn.model_selection import GroupKFold as SkGroupKFold
from sklearn.model_selection import KFold as SkKFold
from sklearn.model_selection import StratifiedKFold as SkStratifiedKFold
from sklearn.model_selection import TimeSeriesSplit
from sklearn.tree import DecisionTreeClassifier

import tracemill as tm
from tracemill import evaluate as ev


@pytest.mark.parametrize("seed", range(6))
def test_metrics_equal_sklearn_on_random_labels(seed):
    # sklearn.metrics on random label sets: every metric equal (to rounding, 1e-12).
    rng = np.random.default_rng(seed)
    k = int(rng.integers(2, 6))
    t = rng.integers(0, k, 200)
    p = np.where(rng.random(200) < 0.6, t, rng.integers(0, k, 200))
    s = ev.classification_scores(t, p)
    labels = np.unique(np.concatenate([t, p]))
    np.testing.assert_array_equal(s["confusion"], skm.confusion_matrix(t, p, labels=labels))
    assert s["accuracy"] == pytest.approx(skm.accuracy_score(t, p), abs=1e-12)
    assert s["error"] == pytest.approx(1 - skm.accuracy_score(t, p), abs=1e-12)
    for avg in ("macro", "micro", "weighted"):
        for name, fn in (("precision", skm.precision_score), ("recall", skm.recall_score),
                         ("f1", skm.f1_score)):
            want = fn(t, p, average=avg, labels=labels, zero_division=0)
            assert s[f"{name}_{avg}"] == pytest.approx(want, abs=1e-12)
    pr, rc, f, sup = skm.precision_recall_fscore_support(t, p, labels=labels, zero_division=0)
    np.testing.assert_allclose(s["precision"], pr, atol=1e-12)
    np.testing.assert_allclose(s["recall"], rc, atol=1e-12)
    np.testing.assert_allclose(s["f1"], f, atol=1e-12)
    np.testing.assert_allclose(s["support"], sup)
    assert s["mcc"] == pytest.approx(skm.matthews_corrcoef(t, p), abs=1e-12)
    assert s["kappa"] == pytest.approx(skm.cohen_kappa_score(t, p), abs=1e-12)
    assert s["balanced_accuracy"] == pytest.approx(skm.balanced_accuracy_score(t, p), abs=1e-12)


def test_binary_and_text_labels():
    t = ["slow"] * 4 + ["ok"] * 6
    p = ["slow"] * 3 + ["ok", "slow"] + ["ok"] * 5
    assert ev.precision(t, p, average="binary", pos_label="slow") == pytest.approx(
        skm.precision_score(t, p, pos_label="slow"))
    assert ev.f1(t, p, average=None).tolist() == pytest.approx(
        skm.f1_score(t, p, average=None).tolist())
    # REFERENCES.md F: MCC = kappa = 14/24 on this table
    assert ev.mcc(t, p) == pytest.approx(14 / 24, abs=1e-12)
    rep = ev.classification_report(t, p)
    assert "slow" in rep and "MCC" in rep
    with pytest.raises(tm.DataError, match="same length"):
        ev.accuracy([0, 1], [0])


def test_kfold_and_stratified_like_sklearn():
    X = np.zeros((23, 1))
    ours = [te.tolist() for _, te in ev.KFold(4).split(X)]
    theirs = [te.tolist() for _, te in SkKFold(4).split(X)]
    assert ours == theirs
    rng = np.random.default_rng(0)
    y = rng.choice(["a", "b", "c"], 97, p=[0.6, 0.3, 0.1])
    ours = [te.tolist() for _, te in ev.StratifiedKFold(5).split(np.zeros((97, 1)), y)]
    theirs = [te.tolist() for _, te in SkStratifiedKFold(5).split(np.zeros((97, 1)), y)]
    assert ours == theirs
    # shuffled folds: class proportions per fold match scikit-learn's (counts per class)
    for (_, a), (_, b) in zip(ev.StratifiedKFold(5, shuffle=True, random_state=1).split(
            np.zeros((97, 1)), y), SkStratifiedKFold(5, shuffle=True, random_state=1).split(
            np.zeros((97, 1)), y), strict=False):
        ua = np.unique(y[a], return_counts=True)
        ub = np.unique(y[b], return_counts=True)
        assert ua[0].tolist() == ub[0].tolist() and ua[1].tolist() == ub[1].tolist()
    with pytest.raises(tm.ParameterError, match="smallest class") as e:
        ev.StratifiedKFold(5).fold_ids(np.zeros((6, 1)), [0, 0, 0, 0, 1, 1])
    assert e.value.parameter == "n_splits"


def test_group_and_time_splits():
    rng = np.random.default_rng(2)
    groups = rng.integers(0, 30, 300)
    for tr, te in ev.GroupKFold(5).split(np.zeros((300, 1)), groups=groups):
        assert not set(groups[tr]) & set(groups[te])
    sizes = sorted(len(te) for _, te in ev.GroupKFold(5).split(np.zeros((300, 1)), groups=groups))
    sk = sorted(len(te) for _, te in SkGroupKFold(5).split(np.zeros((300, 1)), groups=groups))
    assert max(sizes) - min(sizes) <= max(sk) - min(sk) + max(np.bincount(groups))
    ours = [(a.tolist(), b.tolist()) for a, b in ev.TimeOrderedSplit(3).split(np.zeros((10, 1)))]
    theirs = [(a.tolist(), b.tolist()) for a, b in TimeSeriesSplit(3).split(np.zeros((10, 1)))]
    assert ours == theirs
    ours = [(a.tolist(), b.tolist()) for a, b in
            ev.TimeOrderedSplit(2, test_size=2, gap=1).split(np.zeros((6, 1)))]
    assert ours == [([0], [2, 3]), ([0, 1, 2], [4, 5])]
    start = np.array([5, 1, 3, 9, 7])
    end = np.array([6, 8, 4, 10, 8])
    tr, te, dropped = ev.time_ordered_split(start, end, test_size=0.4)
    assert te.tolist() == [3, 4] and tr.tolist() == [0, 2] and dropped == 1


def test_cross_validate_native_matches_sklearn_folds():
    from sklearn.datasets import load_breast_cancer

    X, y = load_breast_cancer(return_X_y=True)
    X = X.astype(np.float32).astype(np.float64)
    ours = ev.cross_validate(tm.TreeClassifier(max_depth=2), X, y, cv=5)
    # scikit-learn trees on the same folds (a depth-2 tree has no ties here)
    scores = []
    for tr, te in SkStratifiedKFold(5).split(X, y):
        m = DecisionTreeClassifier(max_depth=2, random_state=0).fit(X[tr], y[tr])
        scores.append(m.score(X[te], y[te]))
    np.testing.assert_allclose(ours["score"], scores, atol=1e-12)
    # any estimator with fit/predict, in threads
    other = ev.cross_validate(DecisionTreeClassifier(max_depth=2, random_state=0), X, y, cv=5,
                              n_jobs=2)
    np.testing.assert_allclose(other["score"], scores, atol=1e-12)
    groups = np.arange(len(y)) // 3
    g = ev.cross_validate(tm.TreeClassifier(max_depth=2), X, y, cv=4, groups=groups)
    assert len(g) == 4
