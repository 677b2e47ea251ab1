"""Side-by-side: tracemill's tree against scikit-learn's DecisionTreeClassifier on the same
data in one run (300 000 x 32, 3 classes, depth 12), and 10-fold cross-validation against
``cross_val_score(n_jobs=2)``. Run with ``python -m pytest tests/bench -m bench -s``."""

from __future__ import annotations

import os
import time

import numpy as np
import pytest

import tracemill as tm

pytestmark = pytest.mark.bench

N, F, K, DEPTH = 300_000, 32, 3, 12


def _data():
    from sklearn.datasets import make_classification

    X, y = make_classification(n_samples=N, n_features=F, n_informative=12, n_redundant=4,
                               n_classes=K, n_clusters_per_class=2, flip_y=0.05, random_state=0)
    # scikit-learn trains on float32; give both the same values
    return X.astype(np.float32).astype(np.float64), y


@pytest.fixture(scope="module")
def data():
    return _data()


@pytest.mark.parametrize("criterion", ["gini", "entropy"])
def test_tree_fit_vs_sklearn(data, criterion):
    from sklearn.tree import DecisionTreeClassifier
    from threadpoolctl import threadpool_limits

    X, y = data
    os.environ.setdefault("RAYON_NUM_THREADS", "2")
    with threadpool_limits(2):
        t0 = time.perf_counter()
        sk = DecisionTreeClassifier(criterion=criterion, max_depth=DEPTH, random_state=0).fit(X, y)
        t_sk = time.perf_counter() - t0
    t0 = time.perf_counter()
    ours = tm.TreeClassifier(criterion=criterion, max_depth=DEPTH).fit(X, y)
    t_tm = time.perf_counter() - t0
    acc_sk, acc_tm = sk.score(X, y), ours.score(X, y)
    print(f"\n[tree {N}x{F} k={K} depth={DEPTH} {criterion}] scikit-learn {t_sk:.2f} s "
          f"(acc {acc_sk:.4f}) | tracemill {t_tm:.2f} s (acc {acc_tm:.4f}) | "
          f"ratio {t_sk / t_tm:.1f}x")
    assert abs(acc_sk - acc_tm) <= 0.005
    assert t_sk / t_tm >= 3.0


def test_cross_validation_vs_sklearn(data):
    from sklearn.model_selection import StratifiedKFold, cross_val_score
    from sklearn.tree import DecisionTreeClassifier

    X, y = data
    t0 = time.perf_counter()
    s_sk = cross_val_score(DecisionTreeClassifier(max_depth=DEPTH, random_state=0), X, y,
                           cv=StratifiedKFold(10), n_jobs=2)
    t_sk = time.perf_counter() - t0
    t0 = time.perf_counter()
    s_tm = tm.evaluate.cross_validate(tm.TreeClassifier(max_depth=DEPTH), X, y, cv=10)["score"]
    t_tm = time.perf_counter() - t0
    print(f"\n[10-fold CV {N}x{F} depth={DEPTH}] scikit-learn n_jobs=2 {t_sk:.2f} s "
          f"(mean {np.mean(s_sk):.4f}) | tracemill {t_tm:.2f} s (mean {np.mean(s_tm):.4f}) | "
          f"ratio {t_sk / t_tm:.1f}x")
    assert abs(np.mean(s_sk) - np.mean(s_tm)) <= 0.01
    assert t_sk / t_tm >= 2.0
