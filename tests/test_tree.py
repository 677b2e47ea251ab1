"""Trees against outside references: Mitchell (1997) PlayTennis, scikit-learn's
DecisionTreeClassifier/Regressor on its shipped data sets, and bad input."""

from __future__ import annotations

import pickle

import numpy as np
import pandas as pd
import pytest
from sklearn import datasets
from sklearn.tree import DecisionTreeClassifier, DecisionTreeRegressor

import tracemill as tm
from tracemill.tree import split_scores

# Mitchell, Machine Learning (1997), Table 3.2.
TENNIS = pd.DataFrame(
    [r.split() for r in """
    Sunny Hot High Weak No
    Sunny Hot High Strong No
    Overcast Hot High Weak Yes
    Rain Mild High Weak Yes
    Rain Cool Normal Weak Yes
    Rain Cool Normal Strong No
    Overcast Cool Normal Strong Yes
    Sunny Mild High Weak No
    Sunny Cool Normal Weak Yes
    Rain Mild Normal Weak Yes
    Sunny Mild Normal Strong Yes
    Overcast Mild High Strong Yes
    Overcast Hot Normal Weak Yes
    Rain Mild High Strong No
    """.strip().splitlines()],
    columns=["Outlook", "Temperature", "Humidity", "Wind", "Play"],
)


def tennis():
    return TENNIS.drop(columns="Play"), TENNIS["Play"].to_numpy()


def test_mitchell_entropy_and_gains():
    # Mitchell 1997 ch. 3: H(S) = 0.940; gains 0.246, 0.151, 0.048, 0.029 printed from rounded
    # intermediates; exact values 0.246750, 0.151836, 0.048127, 0.029223 (REFERENCES.md E).
    X, y = tennis()
    s = split_scores(X, y, criterion="entropy", categorical_split="multiway")
    gains = dict(zip(s["feature"], s["gain"], strict=False))
    assert gains["Outlook"] == pytest.approx(0.246750, abs=1e-6)
    assert gains["Humidity"] == pytest.approx(0.151836, abs=1e-6)
    assert gains["Wind"] == pytest.approx(0.048127, abs=1e-6)
    assert gains["Temperature"] == pytest.approx(0.029223, abs=1e-6)
    # gain ratios (C4.5), recomputed from Quinlan 1993's definition (REFERENCES.md E)
    s = split_scores(X, y, criterion="gain_ratio", categorical_split="multiway")
    ratio = dict(zip(s["feature"], s["score"], strict=False))
    assert ratio["Outlook"] == pytest.approx(0.156428, abs=1e-6)
    assert ratio["Temperature"] == pytest.approx(0.018773, abs=1e-6)
    # Gini gains (REFERENCES.md E)
    s = split_scores(X, y, criterion="gini", categorical_split="multiway")
    gini = dict(zip(s["feature"], s["gain"], strict=True))
    assert gini["Outlook"] == pytest.approx(0.116327, abs=1e-6)


def test_mitchell_id3_tree():
    # Mitchell 1997, Figure 3.1: Outlook at the root; Overcast -> Yes; Sunny -> Humidity;
    # Rain -> Wind; five leaves.
    X, y = tennis()
    clf = tm.TreeClassifier(criterion="entropy", categorical_split="multiway").fit(X, y)
    assert clf.tree_.arrays()["impurity"][0] == pytest.approx(0.940286, abs=1e-6)
    assert clf.n_leaves_ == 5 and clf.depth_ == 2
    rules = set(zip(clf.rules()["rule"], clf.rules()["prediction"], strict=False))
    assert rules == {
        ("Outlook = Overcast", "Yes"),
        ("Outlook = Sunny and Humidity = High", "No"),
        ("Outlook = Sunny and Humidity = Normal", "Yes"),
        ("Outlook = Rain and Wind = Strong", "No"),
        ("Outlook = Rain and Wind = Weak", "Yes"),
    }
    assert (clf.predict(X) == y).all()
    dot = clf.to_dot()
    assert dot.startswith("digraph") and "Outlook" in dot


@pytest.mark.parametrize("name", ["iris", "wine", "breast_cancer"])
@pytest.mark.parametrize("criterion", ["gini", "entropy"])
def test_same_tree_as_sklearn_depth_3(name, criterion):
    # scikit-learn DecisionTreeClassifier on its shipped data. scikit-learn visits features in
    # a random order and keeps the first of tied splits; we keep the lowest feature index. We
    # search a random_state whose tie-breaking equals ours, then compare every node.
    X, y = getattr(datasets, f"load_{name}")(return_X_y=True)
    X = X.astype(np.float32).astype(np.float64)  # scikit-learn splits float32 values
    ours = tm.TreeClassifier(criterion=criterion, max_depth=3).fit(X, y)
    a = ours.tree_.arrays()
    for rs in range(200):
        sk = DecisionTreeClassifier(criterion=criterion, max_depth=3, random_state=rs).fit(X, y)
        t = sk.tree_
        if t.node_count == len(a["feature"]) and np.array_equal(
                a["feature"], np.where(t.feature < 0, -1, t.feature)):
            break
    else:
        pytest.fail("no scikit-learn tie-breaking reproduces our tree")
    inner = t.feature >= 0
    np.testing.assert_allclose(a["threshold"][inner], t.threshold[inner], rtol=0, atol=1e-12)
    np.testing.assert_allclose(a["impurity"], t.impurity, rtol=0, atol=1e-12)
    np.testing.assert_array_equal(a["n_samples"], t.n_node_samples)
    assert ours.score(X, y) == sk.score(X, y)
    np.testing.assert_allclose(ours.predict_proba(X), sk.predict_proba(X), atol=1e-12)
    np.testing.assert_allclose(ours.feature_importances_, sk.feature_importances_, atol=1e-12)


@pytest.mark.parametrize("name", ["iris", "wine", "breast_cancer"])
def test_full_tree_root_and_accuracy_like_sklearn(name):
    X, y = getattr(datasets, f"load_{name}")(return_X_y=True)
    X = X.astype(np.float32).astype(np.float64)
    ours = tm.TreeClassifier().fit(X, y)
    sk = DecisionTreeClassifier(random_state=0).fit(X, y)
    a = ours.tree_.arrays()
    assert a["impurity"][0] == pytest.approx(sk.tree_.impurity[0], abs=1e-12)
    # the root split's impurity decrease is the best one in both (iris ties petal length and
    # petal width; the lowest index wins here)
    def root_gain(imp, nn, left, right):
        return imp[0] - (nn[left] * imp[left] + nn[right] * imp[right]) / nn[0]
    t = sk.tree_
    sk_gain = root_gain(t.impurity, t.n_node_samples, t.children_left[0], t.children_right[0])
    kids = a["child_ids"][a["child_ptr"][0]:a["child_ptr"][1]]
    our_gain = root_gain(a["impurity"], a["n_samples"], kids[0], kids[1])
    assert our_gain == pytest.approx(sk_gain, abs=1e-12)
    if name != "iris":
        assert a["feature"][0] == t.feature[0]
        assert a["threshold"][0] == pytest.approx(t.threshold[0], abs=1e-12)
    assert ours.score(X, y) == sk.score(X, y) == 1.0


def test_pruning_path_like_sklearn():
    # cost_complexity_pruning_path of scikit-learn on the same (tie-free at depth 3) tree.
    X, y = datasets.load_wine(return_X_y=True)
    X = X.astype(np.float32).astype(np.float64)
    ours = tm.TreeClassifier(max_depth=3).cost_complexity_pruning_path(X, y)
    sk = DecisionTreeClassifier(max_depth=3, random_state=0).cost_complexity_pruning_path(X, y)
    np.testing.assert_allclose(ours["ccp_alphas"], sk.ccp_alphas, atol=1e-12)
    np.testing.assert_allclose(ours["impurities"], sk.impurities, atol=1e-12)
    alpha = float(sk.ccp_alphas[-2])
    a = tm.TreeClassifier(max_depth=3, ccp_alpha=alpha).fit(X, y)
    b = DecisionTreeClassifier(max_depth=3, ccp_alpha=alpha, random_state=0).fit(X, y)
    assert a.n_leaves_ == b.get_n_leaves()
    assert tm.TreeClassifier(max_depth=3).fit(X, y).pruned(alpha).n_leaves_ == a.n_leaves_


def test_regression_tree_like_sklearn():
    X, y = datasets.load_diabetes(return_X_y=True)
    X = X.astype(np.float32).astype(np.float64)
    ours = tm.TreeRegressor(max_depth=2).fit(X, y)
    sk = DecisionTreeRegressor(max_depth=2, random_state=0).fit(X, y)
    a = ours.tree_.arrays()
    t = sk.tree_
    np.testing.assert_array_equal(a["feature"], np.where(t.feature < 0, -1, t.feature))
    np.testing.assert_allclose(a["impurity"], t.impurity, rtol=1e-9)
    np.testing.assert_allclose(ours.predict(X), sk.predict(X), rtol=1e-12)


def test_weights_class_weights_and_missing():
    X, y = datasets.load_breast_cancer(return_X_y=True)
    X = X.astype(np.float32).astype(np.float64)
    w = np.random.default_rng(0).uniform(0.5, 2, len(y))
    ours = tm.TreeClassifier(max_depth=2, class_weight="balanced").fit(X, y, sample_weight=w)
    for rs in range(50):
        sk = DecisionTreeClassifier(max_depth=2, class_weight="balanced", random_state=rs)
        sk.fit(X, y, sample_weight=w)
        if np.array_equal(ours.tree_.arrays()["feature"],
                          np.where(sk.tree_.feature < 0, -1, sk.tree_.feature)):
            break
    np.testing.assert_allclose(ours.tree_.arrays()["impurity"], sk.tree_.impurity, atol=1e-12)
    # missing values: routed when asked, an error otherwise
    Xm = X.copy()
    Xm[::7, 0] = np.nan
    with pytest.raises(tm.DataError, match=r"missing value .* row 0"):
        tm.TreeClassifier().fit(Xm, y)
    m = tm.TreeClassifier(max_depth=4, missing_values="route").fit(Xm, y)
    assert m.score(Xm, y) > 0.9


def test_categorical_native_and_unseen():
    rng = np.random.default_rng(3)
    color = rng.choice(["red", "green", "blue", "black"], 400)
    size = rng.normal(size=400)
    y = np.isin(color, ["red", "black"]).astype(int)
    X = pd.DataFrame({"color": color, "size": size})
    clf = tm.TreeClassifier(max_depth=1).fit(X, y)
    assert sorted(clf.rules()["rule"]) == ["color in {black, red}", "color in {blue, green}"]
    assert (clf.predict(X) == y).all()
    new = pd.DataFrame({"color": ["purple", "red"], "size": [0.0, 0.0]})
    with pytest.warns(UserWarning, match="not seen in training"):
        clf.predict(new)
    assert clf.n_unseen_ == 1
    strict = tm.TreeClassifier(max_depth=1, unseen_categories="error").fit(X, y)
    with pytest.raises(tm.DataError, match=r"'color' .* row 0 .* not seen in training"):
        strict.predict(new)


def test_bad_input():
    X = np.zeros((4, 2))
    with pytest.raises(tm.DataError, match="one class only"):
        tm.TreeClassifier().fit(X, [1, 1, 1, 1])
    with pytest.raises(tm.DataError, match="same length"):
        tm.TreeClassifier().fit(X, [0, 1, 0])
    with pytest.raises(tm.ParameterError, match="min_samples_leaf") as e:
        tm.TreeClassifier(min_samples_leaf=0).fit(X, [0, 1, 0, 1])
    assert e.value.parameter == "min_samples_leaf"
    with pytest.raises(tm.ParameterError, match="criterion"):
        tm.TreeClassifier(criterion="squared_error").fit(X, [0, 1, 0, 1])
    with pytest.raises(tm.NotFittedError):
        tm.TreeClassifier().predict(X)
    clf = tm.TreeClassifier().fit(X, [0, 1, 0, 1])
    with pytest.raises(tm.DataError, match="3 features"):
        clf.predict(np.zeros((2, 3)))


def test_pickle_params_and_plot():
    X, y = tennis()
    clf = tm.TreeClassifier(criterion="entropy", categorical_split="multiway").fit(X, y)
    back = pickle.loads(pickle.dumps(clf))
    assert (back.predict(X) == clf.predict(X)).all()
    assert back.rules().equals(clf.rules())
    assert clf.get_params()["criterion"] == "entropy"
    assert repr(clf) == "TreeClassifier(criterion='entropy', categorical_split='multiway')"
    import matplotlib

    matplotlib.use("Agg")
    ax = clf.plot()
    assert ax is not None
