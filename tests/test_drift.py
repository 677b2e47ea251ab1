"""Statistical tests against scipy.stats and the planted drift of a generated log."""

from __future__ import annotations

import numpy as np
import pytest
from _planted_logs import workshop_log
from scipy import stats

import tracemill as tm
from tracemill.drift import chi2_sf, detect_drift, ks_test, table_test


@pytest.mark.parametrize("seed", range(5))
def test_table_tests_equal_scipy(seed):
    rng = np.random.default_rng(seed)
    t = rng.integers(0, 40, (2, int(rng.integers(2, 9)))) + 1
    chi, p, dof, _ = stats.chi2_contingency(t, correction=False)
    r = table_test(t)
    assert r["statistic"] == pytest.approx(chi, abs=1e-9)
    assert r["p_value"] == pytest.approx(p, abs=1e-9)
    assert r["dof"] == dof
    g, pg, _, _ = stats.chi2_contingency(t, correction=False, lambda_="log-likelihood")
    r = table_test(t, test="g")
    assert r["statistic"] == pytest.approx(g, abs=1e-9)
    assert r["p_value"] == pytest.approx(pg, abs=1e-9)


def test_chi2_tail_equals_scipy():
    for dof in (1, 2, 3, 7.5, 40, 300):
        for x in (0.01, 0.5, 3, 10, 55, 400):
            assert chi2_sf(x, dof) == pytest.approx(stats.chi2.sf(x, dof), abs=1e-12, rel=1e-9)


@pytest.mark.parametrize("m,n", [(10, 10), (30, 47), (120, 80), (5, 200)])
def test_ks_equals_scipy_exact(m, n):
    rng = np.random.default_rng(m * n)
    a = rng.normal(size=m)
    b = rng.normal(0.4, 1.2, size=n)
    r = ks_test(a, b, method="exact")
    s = stats.ks_2samp(a, b, method="exact")
    assert r["statistic"] == pytest.approx(s.statistic, abs=1e-12)
    assert r["p_value"] == pytest.approx(s.pvalue, abs=1e-9)


def test_reference_values():
    # REFERENCES.md F: ref (30,20,0) vs det (10,20,20): X² 30.0, p 3.059e-07; G 38.1909;
    # KS [1..10] vs [6..15]: D 0.5, p 0.167821.
    r = table_test([[30, 20, 0], [10, 20, 20]])
    assert r["statistic"] == pytest.approx(30.0) and r["p_value"] == pytest.approx(3.059e-7,
                                                                                    rel=1e-3)
    assert table_test([[30, 20, 0], [10, 20, 20]], test="g")["statistic"] == pytest.approx(
        38.1909, abs=1e-4)
    k = ks_test(np.arange(1, 11), np.arange(6, 16))
    assert k["p_value"] == pytest.approx(0.167821, abs=1e-6)


def test_planted_drift_found_within_5_percent():
    log, truth = workshop_log(1500, seed=4)
    res = detect_drift(log)
    assert len(res.changes) >= 1
    start = log.handle.case_stats()[0]
    planted = int(np.sum(start < truth.change_time))
    got = res.changes["position"].to_numpy()
    assert np.min(np.abs(got - planted)) <= 0.05 * log.n_cases
    assert "Safety check" in " ".join(res.changes["what_changed"])
    assert "change point" in res.to_text()
    import matplotlib

    matplotlib.use("Agg")
    assert res.plot() is not None


def test_no_drift_no_change():
    log, _ = workshop_log(1200, seed=5, change_at=None)
    res = detect_drift(log)
    assert len(res.changes) == 0


def test_bad_window():
    log, _ = workshop_log(100, seed=1)
    with pytest.raises(tm.ParameterError, match="larger than the log") as e:
        detect_drift(log, window=80)
    assert e.value.parameter == "window"
