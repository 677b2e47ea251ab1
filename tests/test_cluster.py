"""Clustering checked against outside references.

Sources named beside each check: scikit-learn (KMeans, DBSCAN, metrics, shipped iris and wine
data: Fisher 1936; UCI wine), scipy (hierarchy.linkage, fcluster, cophenet), the `kmedoids`
package (FasterPAM by its authors; GPL, used here only as a test oracle), and the worked values
of the reference notes (section A/B: X6, P5, toy log T).
"""

from __future__ import annotations

import os
import pickle
import sys
from pathlib import Path

import numpy as np
import pytest
import scipy.cluster.hierarchy as sch
from scipy.spatial.distance import pdist, squareform
from sklearn import datasets, metrics
from sklearn.base import clone
from sklearn.cluster import DBSCAN as SkDBSCAN
from sklearn.cluster import KMeans as SkKMeans
from sklearn.cluster import kmeans_plusplus

import tracemill as tm
from tracemill.cluster import (
    DBSCAN,
    Agglomerative,
    KMeans,
    KMedoids,
    adjusted_rand_index,
    calinski_harabasz_score,
    davies_bouldin_score,
    describe_clusters,
    edit_distances,
    pairwise_distances,
    silhouette_samples,
    silhouette_score,
    sweep_k,
)

sys.path.insert(0, str(Path(__file__).parent))
from _planted import planted_log

X6 = np.array([[1, 2], [1, 4], [1, 0], [10, 2], [10, 4], [10, 0]], dtype=float)
P5 = np.array([[0, 0], [0, 1], [4, 0], [4, 2], [10, 0]], dtype=float)
METHODS = ["single", "complete", "average", "weighted", "ward", "centroid", "median"]


def _datasets():
    return {"iris": datasets.load_iris().data, "wine": datasets.load_wine().data}


# ---------------------------------------------------------------------------- k-means
@pytest.mark.parametrize("name", ["iris", "wine"])
@pytest.mark.parametrize("k", [3, 5])
def test_kmeans_same_init_matches_sklearn(name, k):
    # scikit-learn KMeans (lloyd and elkan) on its shipped iris / wine data, same centres.
    X = _datasets()[name]
    init, _ = kmeans_plusplus(X, k, random_state=1)
    ours = KMeans(k, init=init, max_iter=300, tol=1e-4).fit(X)
    for algo in ("lloyd", "elkan"):
        sk = SkKMeans(k, init=init, n_init=1, max_iter=300, tol=1e-4, algorithm=algo).fit(X)
        assert metrics.adjusted_rand_score(sk.labels_, ours.labels_) == 1.0
        np.testing.assert_array_equal(sk.labels_, ours.labels_)
        assert ours.inertia_ == pytest.approx(sk.inertia_, rel=1e-9)
        np.testing.assert_allclose(ours.cluster_centers_, sk.cluster_centers_, rtol=1e-9,
                                   atol=1e-12)
        assert ours.n_iter_ == sk.n_iter_


@pytest.mark.parametrize("name", ["iris", "wine"])
def test_kmeans_restarts_not_worse_than_sklearn(name):
    # scikit-learn KMeans with the same n_init (k-means++): our best inertia is not worse.
    X = _datasets()[name]
    for k in (3, 4):
        sk = SkKMeans(k, n_init=10, random_state=0).fit(X)
        ours = KMeans(k, n_init=10, random_state=0).fit(X)
        assert ours.inertia_ <= sk.inertia_ * (1 + 1e-9)


def test_kmeans_toy_data_and_predict():
    # X6: scikit-learn KMeans documentation toy data; inertia 16, centres (1,2) and (10,2).
    km = KMeans(2, n_init=4, random_state=0).fit(X6)
    assert km.inertia_ == pytest.approx(16.0)
    assert sorted(km.cluster_centers_.tolist()) == [[1.0, 2.0], [10.0, 2.0]]
    assert km.predict([[0, 0], [12, 3]]).tolist() == [km.labels_[0], km.labels_[3]]
    assert km.score(X6) == pytest.approx(-16.0)


def test_kmeans_sparse_and_weights():
    import scipy.sparse as sp

    X = _datasets()["iris"]
    init = X[[0, 60, 120]]
    dense = KMeans(3, init=init).fit(X)
    sparse = KMeans(3, init=init).fit(sp.csr_matrix(X))
    np.testing.assert_array_equal(dense.labels_, sparse.labels_)
    assert sparse.inertia_ == pytest.approx(dense.inertia_, rel=1e-9)
    # weights: scikit-learn's sample_weight with the same initial centres
    w = np.random.default_rng(0).integers(1, 5, len(X)).astype(float)
    ours = KMeans(3, init=init).fit(X, sample_weight=w)
    sk = SkKMeans(3, init=init, n_init=1).fit(X, sample_weight=w)
    np.testing.assert_array_equal(ours.labels_, sk.labels_)
    assert ours.inertia_ == pytest.approx(sk.inertia_, rel=1e-9)


def test_kmeans_same_result_on_one_and_many_threads():
    # Sums are reduced per fixed chunk in chunk order: one thread gives the same bits.
    import subprocess

    code = (
        "import numpy as np, tracemill as tm\n"
        "X = np.random.default_rng(3).normal(size=(20000, 6))\n"
        "km = tm.cluster.KMeans(6, n_init=2, random_state=5, tol=0).fit(X)\n"
        "print(km.inertia_.hex(), km.cluster_centers_.tobytes().hex()[:400], km.n_iter_)\n"
    )
    out = {t: subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                             env={**os.environ, "RAYON_NUM_THREADS": t}, check=True).stdout
           for t in ("1", "2", "3")}
    assert out["1"] == out["2"] == out["3"]


def test_kmeans_empty_cluster_relocated_as_sklearn():
    # A start centre far from every point gets no point in the first assignment and takes
    # the point farthest from its centre, as in scikit-learn (lloyd); both then agree.
    X = _datasets()["iris"]
    init = np.vstack([X[[0, 60]], np.full((1, 4), 100.0)])
    ours = KMeans(3, init=init, max_iter=300, tol=0).fit(X)
    sk = SkKMeans(3, init=init, n_init=1, max_iter=300, tol=0, algorithm="lloyd").fit(X)
    np.testing.assert_array_equal(ours.labels_, sk.labels_)
    assert ours.inertia_ == pytest.approx(sk.inertia_, rel=1e-9)
    assert ours.n_iter_ == sk.n_iter_


def test_kmeans_long_run_matches_sklearn_lloyd():
    # Many iterations over overlapping groups: the bounds skip most points and the sums are
    # only corrected for points that move, yet every step equals scikit-learn's lloyd.
    rng = np.random.default_rng(11)
    X = rng.uniform(size=(20000, 4))
    w = rng.uniform(0.5, 2.0, len(X))
    init = X[rng.choice(len(X), 12, replace=False)]
    ours = KMeans(12, init=init, max_iter=300, tol=0).fit(X, sample_weight=w)
    sk = SkKMeans(12, init=init, n_init=1, max_iter=300, tol=0, algorithm="lloyd").fit(
        X, sample_weight=w)
    assert ours.n_iter_ == sk.n_iter_ > 20
    np.testing.assert_array_equal(ours.labels_, sk.labels_)
    assert ours.inertia_ == pytest.approx(sk.inertia_, rel=1e-9)
    np.testing.assert_allclose(ours.cluster_centers_, sk.cluster_centers_, rtol=1e-9,
                               atol=1e-12)


# ---------------------------------------------------------------------------- hierarchical
def _check_against_scipy(Z, Zs, n, cond):
    np.testing.assert_allclose(np.sort(Z[:, 2]), np.sort(Zs[:, 2]), rtol=1e-9, atol=1e-12)
    np.testing.assert_array_equal(np.sort(Z[:, 3]), np.sort(Zs[:, 3]))
    monotone = bool(np.all(np.diff(Zs[:, 2]) >= 0))
    for k in range(1, n + 1):
        if monotone:
            a = sch.fcluster(Z, k, "maxclust")
            b = sch.fcluster(Zs, k, "maxclust")
        else:
            # With inversions (centroid, median) fcluster's height cuts are ambiguous; compare
            # the partitions after the first n - k merges instead (no ties in random data).
            a = tm._core.cut_linkage(np.ascontiguousarray(Z).ravel(), n, k, None)
            b = tm._core.cut_linkage(np.ascontiguousarray(Zs, dtype=float).ravel(), n, k, None)
        assert metrics.adjusted_rand_score(a, b) == 1.0, k
    np.testing.assert_allclose(sch.cophenet(Z), sch.cophenet(Zs), rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize("method", METHODS)
def test_linkage_matches_scipy(method):
    # scipy.cluster.hierarchy.linkage: merge heights (1e-9), fcluster partitions at every
    # level and cophenetic distances; tied merges may be ordered differently.
    rng = np.random.default_rng(4)
    X = rng.normal(size=(80, 3))
    cond = pdist(X)
    Zs = sch.linkage(X, method)
    agg = Agglomerative(n_clusters=3, linkage=method).fit(X)
    Z = agg.linkage_matrix_
    assert sch.is_valid_linkage(Z)
    _check_against_scipy(Z, Zs, len(X), cond)
    # the same from a precomputed condensed vector and square matrix
    Zc = Agglomerative(n_clusters=3, linkage=method, metric="precomputed").fit(cond)
    _check_against_scipy(Zc.linkage_matrix_, Zs, len(X), cond)
    Zq = Agglomerative(n_clusters=3, linkage=method, metric="precomputed").fit(squareform(cond))
    _check_against_scipy(Zq.linkage_matrix_, Zs, len(X), cond)
    if method not in ("centroid", "median"):  # scipy fcluster is defined for monotone trees
        np.testing.assert_array_equal(
            metrics.adjusted_rand_score(agg.labels_, sch.fcluster(Zs, 3, "maxclust")), 1.0)


@pytest.mark.parametrize("method", ["single", "complete", "average", "weighted"])
def test_linkage_other_metrics_match_scipy(method):
    # scipy linkage on pdist(X, 'cityblock') / 'cosine'
    X = np.random.default_rng(5).random((50, 4))
    for ours, theirs in (("manhattan", "cityblock"), ("cosine", "cosine")):
        Z = Agglomerative(n_clusters=2, linkage=method, metric=ours).fit(X).linkage_matrix_
        Zs = sch.linkage(pdist(X, theirs), method)
        _check_against_scipy(Z, Zs, len(X), None)


def test_p5_linkage_values_and_cuts():
    # Reference notes, section B (P5, scipy [calc]): ward heights and fcluster(maxclust=2).
    agg = Agglomerative(n_clusters=2, linkage="ward").fit(P5)
    np.testing.assert_allclose(agg.linkage_matrix_[:, 2], [1, 2, 5.700877, 10.163661],
                               atol=1e-6)
    assert agg.labels_.tolist() == [0, 0, 0, 0, 1]
    assert agg.cut(distance_threshold=2.5).tolist() == [0, 0, 1, 1, 2]
    # scipy dendrogram accepts the matrix
    d = sch.dendrogram(agg.linkage_matrix_, no_plot=True)
    assert sorted(d["leaves"]) == [0, 1, 2, 3, 4]


def test_toy_log_average_linkage():
    # Toy log T with Levenshtein distances: scipy average linkage heights 1,1,1,2,2.5,5
    # (reference notes, section A [calc]).
    log = tm.EventLog.from_frame(_toy_frame(), case="case", activity="activity",
                                 timestamp="time")
    d = edit_distances(log, by_variant=False)
    Z = Agglomerative(n_clusters=2, linkage="average", metric="precomputed").fit(d)
    np.testing.assert_allclose(Z.linkage_matrix_[:, 2], [1, 1, 1, 2, 2.5, 5])


# ---------------------------------------------------------------------------- DBSCAN
@pytest.mark.parametrize("seed", [0, 1])
def test_dbscan_matches_sklearn(seed):
    # sklearn.cluster.DBSCAN: identical core points, noise and labels (same numbering, since
    # both grow clusters in input order).
    X, _ = datasets.make_blobs(1500, n_features=4, centers=5, cluster_std=1.5,
                               random_state=seed)
    X = np.vstack([X, np.random.default_rng(seed).uniform(-15, 15, size=(200, 4))])
    for eps, ms in ((0.8, 5), (1.2, 10), (2.0, 30)):
        sk = SkDBSCAN(eps=eps, min_samples=ms).fit(X)
        ours = DBSCAN(eps=eps, min_samples=ms).fit(X)
        np.testing.assert_array_equal(ours.core_sample_indices_, sk.core_sample_indices_)
        np.testing.assert_array_equal(ours.labels_, sk.labels_)
        # manhattan and precomputed go through other paths
    sk = SkDBSCAN(eps=1.5, min_samples=5, metric="manhattan").fit(X)
    ours = DBSCAN(eps=1.5, min_samples=5, metric="manhattan").fit(X)
    np.testing.assert_array_equal(ours.labels_, sk.labels_)
    D = squareform(pdist(X[:500]))
    sk = SkDBSCAN(eps=1.0, min_samples=5, metric="precomputed").fit(D)
    ours = DBSCAN(eps=1.0, min_samples=5, metric="precomputed").fit(D)
    np.testing.assert_array_equal(ours.labels_, sk.labels_)


def test_dbscan_border_rule_and_masks():
    # Reference notes, section B: x = 1.3 is a border point of A and B; scikit-learn gives it to
    # whichever cluster comes first in the input.
    A, B = [0.0, 0.1, 0.2, 0.3], [2.3, 2.4, 2.5, 2.6]
    for first, second in ((A, B), (B, A)):
        X = np.array([*first, 1.3, *second])[:, None]
        ours = DBSCAN(eps=1.0, min_samples=4).fit(X)
        sk = SkDBSCAN(eps=1.0, min_samples=4).fit(X)
        np.testing.assert_array_equal(ours.labels_, sk.labels_)
        assert ours.labels_[4] == ours.labels_[0]
        assert ours.border_mask_[4] and not ours.core_mask_[4]
    X = np.array([[1, 2], [2, 2], [2, 3], [8, 7], [8, 8], [25, 80]])
    f = DBSCAN(eps=3, min_samples=2).fit(X)
    assert f.noise_mask_.tolist() == [False] * 5 + [True]


def test_dbscan_weights_match_sklearn():
    X, _ = datasets.make_blobs(400, n_features=2, centers=3, random_state=2)
    w = np.random.default_rng(2).integers(1, 4, len(X)).astype(float)
    sk = SkDBSCAN(eps=0.5, min_samples=8).fit(X, sample_weight=w)
    ours = DBSCAN(eps=0.5, min_samples=8).fit(X, sample_weight=w)
    np.testing.assert_array_equal(ours.labels_, sk.labels_)


# ---------------------------------------------------------------------------- quality
def test_quality_indices_match_sklearn():
    # sklearn.metrics silhouette_score / silhouette_samples / davies_bouldin_score /
    # calinski_harabasz_score, to 1e-9.
    X = _datasets()["wine"]
    labels = SkKMeans(4, n_init=3, random_state=0).fit(X).labels_
    assert silhouette_score(X, labels) == pytest.approx(metrics.silhouette_score(X, labels),
                                                        rel=1e-9)
    np.testing.assert_allclose(silhouette_samples(X, labels),
                               metrics.silhouette_samples(X, labels), rtol=1e-9, atol=1e-12)
    for ours, theirs in (("manhattan", "manhattan"), ("cosine", "cosine")):
        assert silhouette_score(X, labels, metric=ours) == pytest.approx(
            metrics.silhouette_score(X, labels, metric=theirs), rel=1e-9)
    D = squareform(pdist(X))
    assert silhouette_score(D, labels, metric="precomputed") == pytest.approx(
        metrics.silhouette_score(D, labels, metric="precomputed"), rel=1e-9)
    assert davies_bouldin_score(X, labels) == pytest.approx(
        metrics.davies_bouldin_score(X, labels), rel=1e-9)
    assert calinski_harabasz_score(X, labels) == pytest.approx(
        metrics.calinski_harabasz_score(X, labels), rel=1e-9)
    # sampled silhouette equals scikit-learn's on the same rows
    s = silhouette_score(X, labels, sample_size=100, random_state=3)
    assert -1 <= s <= 1


def test_quality_reference_values():
    # Reference notes, section A (X6 and toy log T, [calc]).
    good, poor = [0, 0, 0, 1, 1, 1], [0, 0, 1, 1, 1, 1]
    assert silhouette_score(X6, good) == pytest.approx(0.713348, abs=1e-6)
    assert davies_bouldin_score(X6, poor) == pytest.approx(0.697327, abs=1e-6)
    assert calinski_harabasz_score(X6, poor) == pytest.approx(3.457627, abs=1e-6)
    log = tm.EventLog.from_frame(_toy_frame(), case="case", activity="activity",
                                 timestamp="time")
    D = edit_distances(log, by_variant=False, form="square")
    s = silhouette_samples(D, [0, 0, 0, 0, 1, 1, 1], metric="precomputed")
    np.testing.assert_allclose(s, [0.6, 0.6, 0.6, 0.6, 0.7, 0.7, 0.6])
    # adjusted Rand index: reference notes (ARI 0.242424 [calc]) and scikit-learn
    assert adjusted_rand_index([0, 0, 0, 1, 1, 1], [0, 0, 1, 1, 2, 2]) == pytest.approx(
        0.242424, abs=1e-6)
    rng = np.random.default_rng(0)
    a, b = rng.integers(0, 4, 300), rng.integers(0, 5, 300)
    assert adjusted_rand_index(a, b) == pytest.approx(metrics.adjusted_rand_score(a, b),
                                                      rel=1e-9, abs=1e-12)


def test_sweep_k_table():
    X = _datasets()["iris"]
    t = sweep_k(X, [2, 3, 4], random_state=0)
    assert t["k"].tolist() == [2, 3, 4]
    assert np.all(np.diff(t["inertia"]) < 0)
    assert t["calinski_harabasz"][1] == pytest.approx(
        metrics.calinski_harabasz_score(X, KMeans(3, n_init=3, random_state=0).fit(X).labels_))


# ---------------------------------------------------------------------------- k-medoids
def test_fasterpam_matches_kmedoids_package():
    # The `kmedoids` package's FasterPAM (Schubert and Rousseeuw 2021): same loss from the same
    # initial medoids on the same matrix. GPL: test-time oracle only.
    kmedoids = pytest.importorskip("kmedoids")
    rng = np.random.default_rng(8)
    X = np.vstack([rng.normal(c, 1.0, size=(100, 3)) for c in (0, 4, 8, 12)])
    D = squareform(pdist(X))
    for k, _seed in ((4, 0), (6, 1), (9, 2)):
        init = rng.choice(len(X), size=k, replace=False)
        ref = kmedoids.fasterpam(D, init.copy(), max_iter=100, init="random")
        ours = KMedoids(k, metric="precomputed", init=init).fit(D)
        assert ours.inertia_ == pytest.approx(float(ref.loss), rel=1e-9)
        assert sorted(ours.medoid_indices_.tolist()) == sorted(np.asarray(ref.medoids).tolist())
    # with BUILD initialisation: no worse than the package's BUILD + FasterPAM
    ref = kmedoids.fasterpam(D, 4, init="build")
    ours = KMedoids(4, metric="precomputed").fit(D)
    assert ours.inertia_ <= float(ref.loss) * (1 + 1e-9)


def test_kmedoids_on_a_log_returns_case_ids():
    log, _seg = planted_log(300, seed=3)
    km = KMedoids(3, metric="levenshtein").fit(log)
    assert km.labels_.shape == (log.n_cases,)
    assert set(km.medoid_cases_) <= set(log.case_ids)
    # every medoid case belongs to its own cluster
    pos = {c: i for i, c in enumerate(log.case_ids)}
    for j, c in enumerate(km.medoid_cases_):
        assert km.labels_[pos[c]] == j


# ---------------------------------------------------------------------------- distances
def test_pairwise_matches_scipy():
    X = np.random.default_rng(1).random((40, 5))
    for ours, theirs in (("euclidean", "euclidean"), ("sqeuclidean", "sqeuclidean"),
                         ("manhattan", "cityblock"), ("cosine", "cosine")):
        np.testing.assert_allclose(pairwise_distances(X, ours), pdist(X, theirs), rtol=1e-12,
                                   atol=1e-14)
    B = X > 0.5
    np.testing.assert_allclose(pairwise_distances(B, "jaccard"), pdist(B, "jaccard"))
    np.testing.assert_allclose(pairwise_distances(X, form="square"), squareform(pdist(X)))


def _dp(a, b):
    # plain dynamic programme from the definition (Levenshtein 1966)
    d = np.zeros((len(a) + 1, len(b) + 1))
    d[:, 0] = np.arange(len(a) + 1)
    d[0, :] = np.arange(len(b) + 1)
    for i in range(1, len(a) + 1):
        for j in range(1, len(b) + 1):
            sub = d[i - 1, j - 1] + (a[i - 1] != b[j - 1])
            d[i, j] = min(d[i - 1, j] + 1, d[i, j - 1] + 1, sub)
    return d[-1, -1]


def _toy_frame():
    import pandas as pd

    traces = ["abcdf", "acbdf", "abcef", "acbef", "xyz", "xyzz", "xzy"]
    rows = [(f"c{i}", a, j) for i, t in enumerate(traces) for j, a in enumerate(t)]
    f = pd.DataFrame(rows, columns=["case", "activity", "time"])
    f["time"] = pd.Timestamp("2025-01-06") + pd.to_timedelta(f["time"], unit="h")
    return f


def test_levenshtein_kitten_and_random_sequences():
    import pandas as pd

    # "kitten" -> "sitting" = 3 (Levenshtein 1966; common textbook example, from memory)
    rows = [("k", ch, i) for i, ch in enumerate("kitten")] + \
           [("s", ch, i) for i, ch in enumerate("sitting")]
    f = pd.DataFrame(rows, columns=["case", "activity", "time"])
    f["time"] = pd.Timestamp("2025-01-06") + pd.to_timedelta(f["time"], unit="h")
    log = tm.EventLog.from_frame(f, case="case", activity="activity", timestamp="time")
    assert edit_distances(log, by_variant=False).tolist() == [3.0]
    # agreement with the plain dynamic programme on random sequences
    rng = np.random.default_rng(2)
    seqs = ["".join(rng.choice(list("abcde"), size=rng.integers(1, 12))) for _ in range(30)]
    rows = [(f"c{i:02d}", ch, j) for i, s in enumerate(seqs) for j, ch in enumerate(s)]
    f = pd.DataFrame(rows, columns=["case", "activity", "time"])
    f["time"] = pd.Timestamp("2025-01-06") + pd.to_timedelta(f["time"], unit="h")
    log = tm.EventLog.from_frame(f, case="case", activity="activity", timestamp="time")
    names = list(log.activities)
    ids = list(log.case_ids)
    tr = [seqs[int(c[1:])] for c in ids]
    want = [_dp(tr[i], tr[j]) for i in range(30) for j in range(i + 1, 30)]
    np.testing.assert_array_equal(edit_distances(log, by_variant=False), want)
    nd = edit_distances(log, by_variant=False, normalised=True)
    lens = [len(t) for t in tr]
    np.testing.assert_allclose(nd, [w / max(lens[i], lens[j]) for (i, j), w in zip(
        [(i, j) for i in range(30) for j in range(i + 1, 30)], want, strict=False)])
    # substitution costs of 2 make a substitution cost as much as delete + insert
    cost = np.full((len(names), len(names)), 2.0)
    np.fill_diagonal(cost, 0.0)
    d2 = edit_distances(log, by_variant=False, substitution_cost=cost)
    assert np.all(d2 >= np.asarray(want))


def test_edit_distances_per_variant():
    log, _ = planted_log(200, seed=1)
    vd = edit_distances(log)
    assert vd.counts.sum() == log.n_cases
    full = squareform(edit_distances(log, by_variant=False))
    sq = squareform(vd.distances)
    np.testing.assert_array_equal(full, sq[np.ix_(vd.case_variant, vd.case_variant)])


# ---------------------------------------------------------------------------- planted segments
@pytest.mark.parametrize("how", ["activity", "transition", "kmedoids", "agglomerative", "dbscan"])
def test_planted_segments_are_recovered(how):
    # Adjusted Rand index (scikit-learn) >= 0.9 against the segments planted in a generated log.
    log, seg = planted_log(600, seed=7)
    if how == "activity":
        X = tm.encode.ActivityProfile().fit_transform(log)
        labels = KMeans(3, n_init=5, random_state=0).fit_predict(X)
    elif how == "transition":
        X = tm.encode.TransitionProfile(weighting="tfidf", norm="l2").fit_transform(log)
        labels = KMeans(3, n_init=5, random_state=0).fit_predict(X)
    elif how == "kmedoids":
        labels = KMedoids(3, metric="levenshtein", random_state=0).fit_predict(log)
    elif how == "agglomerative":
        X = tm.encode.ActivityProfile(sparse=False).fit_transform(log)
        labels = Agglomerative(3, linkage="ward").fit_predict(X)
    else:
        labels = DBSCAN(eps=2, min_samples=5, metric="levenshtein").fit_predict(log)
    assert metrics.adjusted_rand_score(seg, labels) >= 0.9


def test_describe_and_split():
    log, _seg = planted_log(300, seed=2)
    enc = tm.encode.ActivityProfile()
    X = enc.fit_transform(log)
    labels = KMeans(3, n_init=3, random_state=0).fit_predict(X)
    d = describe_clusters(log, labels, X, enc.feature_names_)
    assert d["size"].sum() == log.n_cases
    assert d["share"].sum() == pytest.approx(1.0)
    assert all(isinstance(s, str) and s for s in d["top_features"])
    parts = log.split(labels)
    assert sum(p.n_cases for p in parts.values()) == log.n_cases
    pl = describe_clusters(log, labels, kind="polars")
    assert pl.height == 3


def test_demo_section_reports_agreement():
    from types import SimpleNamespace

    log, seg = planted_log(300, seed=4)
    truth = SimpleNamespace(segment=seg, segment_names=["puncture", "drivetrain", "service"],
                            deviation=np.zeros(len(seg), int), deviation_names=["none"],
                            change_time=None, after_change=np.zeros(len(seg), bool))
    text = tm.cluster.demo_section(log, truth)
    assert "adjusted Rand index 1.000" in text
    assert "group 2" in text


# ---------------------------------------------------------------------------- bad input
def test_bad_input_errors():
    # k larger than the number of distinct points
    with pytest.raises(tm.ParameterError, match="distinct points \\(2\\)") as e:
        KMeans(3).fit([[0, 0], [0, 0], [1, 1]])
    assert e.value.parameter == "n_clusters"
    with pytest.raises(tm.ParameterError, match="all cases are identical"):
        KMeans(2).fit([[1.0, 2.0]] * 5)
    with pytest.raises(tm.ParameterError, match="identical"):
        KMedoids(2, metric="precomputed").fit(np.zeros((4, 4)))
    # NaN / inf features name the column
    import pandas as pd

    frame = pd.DataFrame({"duration": [1.0, 2.0], "steps": [3.0, np.inf]})
    with pytest.raises(tm.DataError, match=r"'steps'.*row 1"):
        KMeans(1).fit(frame)
    with pytest.raises(tm.DataError, match="column '1'"):
        DBSCAN().fit([[0.0, np.nan]])
    # precomputed matrices: not square, not symmetric, negative
    with pytest.raises(tm.DataError, match="square"):
        DBSCAN(metric="precomputed").fit(np.zeros((2, 3)))
    with pytest.raises(tm.DataError, match="not symmetric"):
        KMedoids(1, metric="precomputed").fit([[0, 1], [2, 0]])
    with pytest.raises(tm.DataError, match="negative"):
        Agglomerative(metric="precomputed", linkage="average").fit([[0, -1], [-1, 0]])
    # memory budget
    with pytest.raises(tm.LimitError, match=r"needs .* above the memory budget"):
        pairwise_distances(np.zeros((2000, 2)), max_memory=1e6)
    with pytest.raises(tm.LimitError, match="needs"):
        KMedoids(2, max_memory=1e3).fit(np.random.default_rng(0).random((100, 2)))
    # parameters (scikit-learn's message shape)
    with pytest.raises(tm.ParameterError, match="'n_clusters' parameter of KMeans must be an int"):
        KMeans(0).fit(X6)
    with pytest.raises(tm.ParameterError, match="'eps' parameter of DBSCAN"):
        DBSCAN(eps=-1).fit(X6)
    with pytest.raises(tm.ParameterError, match="ward"):
        Agglomerative(linkage="ward", metric="manhattan").fit(X6)
    with pytest.raises(tm.ParameterError, match="needs an EventLog"):
        KMedoids(2, metric="levenshtein").fit(X6)
    with pytest.raises(tm.NotFittedError):
        KMeans().predict(X6)
    with pytest.raises(tm.DataError, match="no rows"):
        KMeans(1).fit(np.zeros((0, 3)))
    with pytest.raises(tm.ParameterError, match="2 <= number of clusters"):
        silhouette_score(X6, [0] * 6)


@pytest.mark.parametrize("fit", [
    lambda D: KMedoids(2, metric="precomputed").fit(D),
    lambda D: DBSCAN(metric="precomputed").fit(D),
    lambda D: Agglomerative(2, metric="precomputed", linkage="average").fit(D),
    lambda D: silhouette_score(D, np.arange(len(D)) % 2, metric="precomputed"),
], ids=["kmedoids", "dbscan", "agglomerative", "silhouette"])
def test_bad_precomputed_matrix_names_the_cell(fit):
    # 150 points: the cells below lie in different 64 x 64 tiles of the check.
    X = np.random.default_rng(4).normal(size=(150, 3))
    good = squareform(pdist(X))
    cases = [((3, 140), 9.0, r"not symmetric: \[3, 140\]"),
             ((120, 7), -1.0, r"row 120, column 7 is negative"),
             ((70, 71), np.nan, r"row 70, column 71 is not finite"),
             ((99, 99), 0.5, r"diagonal at row 99")]
    for (i, j), v, msg in cases:
        D = good.copy()
        D[i, j] = v
        with pytest.raises(tm.DataError, match=msg):
            fit(D)
    fit(good)  # and the good matrix passes


def test_progress_and_interrupt_hooks():
    seen = []
    X = np.random.default_rng(0).random((3000, 3))
    KMeans(3, n_init=2, random_state=0, progress=lambda d, t: seen.append((d, t))).fit(X)
    with pytest.raises(tm.ParameterError, match="progress"):
        KMeans(3, progress="yes").fit(X)


def test_clone_and_pickle():
    km = KMeans(3, n_init=2, random_state=4)
    c = clone(km)
    assert c.get_params() == km.get_params()
    fitted = km.fit(_datasets()["iris"])
    back = pickle.loads(pickle.dumps(fitted))
    np.testing.assert_array_equal(back.labels_, fitted.labels_)
    agg = clone(Agglomerative(4, linkage="average"))
    assert agg.get_params()["linkage"] == "average"
    assert "KMeans(n_clusters=3" in repr(km)


def test_describe_shows_shares_for_counts_and_means_for_scaled_numbers():
    # A count feature some cases lack is described by the share of cases having it; a scaled
    # number (negative values, every case has one) by its means.
    log, _seg = planted_log(300, seed=2)
    acts = tm.encode.ActivityProfile().fit(log)
    X = acts.transform(log).toarray()
    rng = np.random.default_rng(0)
    labels = KMeans(3, n_init=3, random_state=0).fit_predict(X)
    scaled = (labels == 0) * 3.0 + rng.normal(size=len(labels))
    X2 = np.column_stack([X, scaled])
    names = [*acts.feature_names_, "price (scaled)"]
    d = describe_clusters(log, labels, X2, names, top=len(names))
    text = d.loc[d["cluster"] == 0, "top_features"].item()
    part = next(t for t in text.split("; ") if "price (scaled)" in t)
    inside, outside = scaled[labels == 0].mean(), scaled[labels != 0].mean()
    assert part == f"+price (scaled) (mean {inside:.3g} vs {outside:.3g})"
    rare = [t for t in text.split("; ") if "% vs " in t]
    assert rare and all(t.endswith("of cases)") for t in rare)
