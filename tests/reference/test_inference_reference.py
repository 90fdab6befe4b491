"""Corrections and surrogate p-values against outside sources."""
import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.multitest import multipletests

from syncstats.inference import adjust, surrogate_pvalue

from ..conftest import load_ref

BH = load_ref("bh1995.json")


@pytest.mark.parametrize("method", ["fdr_bh", "fdr_by", "holm", "bonferroni"])
def test_benjamini_hochberg_1995_worked_example_rejections(method):
    # Benjamini & Hochberg 1995, JRSS B 57:289-300, section 4: 15 p-values; at q = 0.05
    # BH rejects the 4 smallest, Bonferroni, Holm and BY reject 3 (REFERENCES.md).
    p = np.array(BH["pvalues"])
    adj = adjust(p, method)
    assert int(np.sum(adj <= BH["q"])) == BH["rejections"][method]
    # reference library: statsmodels multipletests, same numbers
    assert np.allclose(adj, multipletests(p, method=method)[1], atol=1e-15)


def test_bh_and_by_adjusted_values():
    # adjusted values computed with statsmodels (REFERENCES.md); scipy's
    # false_discovery_control gives the same BH/BY values.
    p = np.array(BH["pvalues"])
    bh = adjust(p, "fdr_bh")
    assert np.allclose(bh[:10], BH["fdr_bh_first10"], atol=BH["tol"])
    by = adjust(p, "fdr_by")
    assert np.allclose(by[:4], BH["fdr_by_first4"], atol=BH["tol"])
    assert np.allclose(bh, stats.false_discovery_control(p, method="bh"), atol=1e-12)
    assert np.allclose(by, stats.false_discovery_control(p, method="by"), atol=1e-12)
    assert np.sum(1 / np.arange(1, 16)) == pytest.approx(BH["by_c15"], abs=1e-6)


def test_surrogate_pvalue_matches_phipson_smyth_and_scipy_monte_carlo():
    # Phipson & Smyth 2010 (SAGMB 9:39): p = (b + 1)/(m + 1). Reference library:
    # scipy.stats.monte_carlo_test uses the same (k + 1)/(n + 1) convention.
    rng = np.random.default_rng(0)
    x = rng.normal(0.4, 1, size=30)
    res = stats.monte_carlo_test(
        x, lambda size, **_: np.random.default_rng(1).normal(size=size), lambda v, axis: np.mean(v, axis=axis),
        n_resamples=999, alternative="greater", vectorized=True, batch=999,
    )
    null = res.null_distribution
    p = surrogate_pvalue(np.array([res.statistic]), null[:, None])[0]
    assert p == pytest.approx(res.pvalue, abs=1e-12)
    assert p == pytest.approx((1 + np.sum(null >= res.statistic)) / 1000)
    # never zero
    assert surrogate_pvalue(np.array([1e9]), null[:, None])[0] == pytest.approx(1 / 1000)


def test_ties_count_as_exceedances():
    null = np.array([[0.5], [0.5], [0.2]])
    assert surrogate_pvalue(np.array([0.5]), null)[0] == pytest.approx(3 / 4)
