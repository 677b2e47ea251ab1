"""Trace encodings checked against scikit-learn's CountVectorizer / TfidfTransformer and pandas
(general-purpose reference libraries) on the same token lists."""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import scipy.sparse as sp
from sklearn.feature_extraction.text import CountVectorizer, TfidfTransformer

import tracemill as tm
from tracemill.encode import (
    ActivityProfile,
    AttributeProfile,
    NgramProfile,
    PerformanceProfile,
    ProfileUnion,
    TransitionProfile,
)

sys.path.insert(0, str(Path(__file__).parent))
import itertools

from _planted import planted_log


def _traces(log):
    off, _k, acts, _t, _r = log.handle.core_arrays()
    names = np.asarray(log.activities, dtype=object)
    return [list(names[acts[off[i]:off[i + 1]]]) for i in range(log.n_cases)]


def _sk_counts(traces, n_min, n_max, vocab):
    """CountVectorizer over token lists with our vocabulary (names joined by '>')."""
    def analyzer(toks):
        out = []
        for n in range(n_min, n_max + 1):
            out += [">".join(toks[i:i + n]) for i in range(len(toks) - n + 1)]
        return out

    cv = CountVectorizer(analyzer=analyzer, vocabulary=vocab)
    return cv.transform(traces).toarray().astype(float)


@pytest.fixture(scope="module")
def log():
    return planted_log(400, seed=5)[0]


def test_activity_profile_matches_countvectorizer(log):
    # scikit-learn CountVectorizer(analyzer=...) on the activity lists; also binary and tf-idf.
    p = ActivityProfile()
    x = p.fit_transform(log)
    assert sp.isspmatrix_csr(x) or sp.issparse(x)
    tr = _traces(log)
    np.testing.assert_array_equal(x.toarray(), _sk_counts(tr, 1, 1, p.feature_names_))
    b = ActivityProfile(weighting="binary", sparse=False).fit_transform(log)
    np.testing.assert_array_equal(b, (x.toarray() > 0).astype(float))
    t = ActivityProfile(weighting="tfidf", norm="l2", sparse=False).fit_transform(log)
    ref = TfidfTransformer(norm="l2", smooth_idf=True).fit_transform(x).toarray()
    np.testing.assert_allclose(t, ref, rtol=1e-12, atol=1e-15)


def test_transition_and_ngram_profiles_match_countvectorizer(log):
    tr = _traces(log)
    p = TransitionProfile()
    x = p.fit_transform(log).toarray()
    np.testing.assert_array_equal(x, _sk_counts(tr, 2, 2, p.feature_names_))
    # the vocabulary is exactly the set of pairs seen (pandas shift over the events)
    pairs = {f"{a}>{b}" for t in tr for a, b in itertools.pairwise(t)}
    assert set(p.feature_names_) == pairs
    q = NgramProfile(n=3, n_min=1)
    y = q.fit_transform(log).toarray()
    np.testing.assert_array_equal(y, _sk_counts(tr, 1, 3, q.feature_names_))
    # max_features keeps the most frequent n-grams (CountVectorizer's max_features rule)
    r = NgramProfile(n=3, max_features=10).fit(log)
    totals = y.sum(axis=0)
    kept = {q.feature_names_[j] for j in np.argsort(-totals, kind="stable")[:10]}
    assert len(r.feature_names_) == 10
    assert min(totals[q.feature_names_.index(f)] for f in r.feature_names_) >= \
        max(totals[q.feature_names_.index(f)] for f in set(q.feature_names_) - kept) - 0


def test_fit_on_one_log_apply_to_another_warns_unseen():
    a = planted_log(100, seed=1)[0]
    frame = pd.DataFrame({"case": ["z1", "z1", "z1"],
                          "activity": ["Receive bike", "Paint frame", "Hand over"],
                          "time": pd.date_range("2025-01-06", periods=3, freq="h")})
    b = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time")
    p = ActivityProfile(sparse=False).fit(a)
    with pytest.warns(tm.DataQualityWarning, match="1 events of activities not seen"):
        x = p.transform(b)
    assert x.shape == (1, len(a.activities))
    assert x.sum() == 2
    assert p.n_unseen_events_ == 1
    u = ProfileUnion([("a", ActivityProfile()), ("t", TransitionProfile())]).fit(a)
    with pytest.warns(tm.DataQualityWarning):
        y = u.transform(b)
    assert y.shape[1] == len(u.feature_names_)


def test_performance_profile_matches_pandas(log):
    # pandas groupby: duration, length, mean and max gap per case (hours).
    x = PerformanceProfile().fit_transform(log)
    f = log.to_frame()
    f["gap"] = f.groupby("case")["timestamp"].diff().dt.total_seconds() / 3600
    g = f.groupby("case", sort=False)
    ref = pd.DataFrame({
        "dur": (g["timestamp"].max() - g["timestamp"].min()).dt.total_seconds() / 3600,
        "n": g.size(), "mx": g["gap"].max().fillna(0)})
    ref = ref.loc[list(log.case_ids)]
    np.testing.assert_allclose(x[:, 0], ref["dur"])
    np.testing.assert_array_equal(x[:, 1], ref["n"])
    np.testing.assert_allclose(x[:, 3], ref["mx"])
    np.testing.assert_allclose(x[:, 2], ref["dur"] / (ref["n"] - 1))
    # per-activity time sums to the duration
    np.testing.assert_allclose(x[:, 4:].sum(axis=1), x[:, 0])


def test_attribute_profile():
    frame = pd.DataFrame({"case": ["a", "b", "c", "d"], "activity": ["Receive bike"] * 4,
                          "time": pd.date_range("2025-01-06", periods=4, freq="h"),
                          "bike": ["city", "road", None, "city"],
                          "price": [100.0, 300.0, None, 200.0]})
    log = tm.EventLog.from_frame(frame, case="case", activity="activity", timestamp="time",
                                 case_attributes=["bike", "price"])
    p = AttributeProfile()
    x = p.fit_transform(log)
    assert p.feature_names_ == ["bike=city", "bike=road", "bike=null", "price", "price=null"]
    np.testing.assert_allclose(x[:, 3], [-1.224745, 1.224745, 0.0, 0.0], atol=1e-6)
    assert x[2].tolist()[:3] == [0, 0, 1]
    with pytest.raises(tm.ParameterError, match="no case attribute 'colour'"):
        AttributeProfile(attributes=["colour"]).fit(log)


def test_bad_parameters_and_not_fitted(log):
    with pytest.raises(tm.ParameterError, match="'weighting' parameter"):
        ActivityProfile(weighting="log").fit(log)
    with pytest.raises(tm.ParameterError, match="'norm' parameter"):
        TransitionProfile(norm="max").fit(log)
    with pytest.raises(tm.ParameterError, match="'n' parameter"):
        NgramProfile(n=0).fit(log)
    with pytest.raises(tm.NotFittedError):
        ActivityProfile().transform(log)
    with pytest.raises(tm.ParameterError, match="EventLog"):
        ActivityProfile().fit([[1, 2]])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        ActivityProfile().fit_transform(log)


def test_profile_union_equals_scipy_hstack(log):
    # scipy.sparse.hstack of the weighted parts, one of them dense.
    parts = [("a", ActivityProfile(), 1.0), ("t", TransitionProfile(), 2.5),
             ("p", PerformanceProfile(), 0.5), ("g", NgramProfile(3, n_min=2), 1.0)]
    u = ProfileUnion(parts).fit(log)
    x = u.transform(log)
    ref = sp.hstack([sp.csr_matrix(p.transform(log)) * w for _n, p, w in parts], format="csr")
    assert x.shape == ref.shape == (log.n_cases, len(u.feature_names_))
    assert (x != ref).nnz == 0
    np.testing.assert_array_equal(x.indptr, ref.indptr)
    dense = ProfileUnion(parts, sparse=False).fit_transform(log)
    np.testing.assert_array_equal(dense, ref.toarray())


def test_profile_union_refuses_a_part_with_other_rows(log):
    class Short:
        feature_names_ = ("x",)

        def fit(self, log, y=None):
            return self

        def transform(self, log):
            return np.ones((3, 1))

    u = ProfileUnion([("a", ActivityProfile()), ("s", Short())]).fit(log)
    with pytest.raises(tm.ParameterError, match=r"part 1 .* 400 rows"):
        u.transform(log)
