"""Second-level numbers of syncstats.study against a published paired t-test example and
against pingouin / scipy / statsmodels called directly on the same per-recording table."""
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pingouin as pg
import pytest
from scipy import stats
from statsmodels.stats.multitest import multipletests

from syncstats.study import second_level_tests

REF = json.loads((Path(__file__).parents[2] / "reference_values" / "study_paired_ttest.json").read_text())


def _table(values, phases=None):
    rows = []
    for (subject, group, condition), vals in values.items():
        for k, v in enumerate(np.atleast_1d(vals)):
            rows.append(dict(recording=f"{subject}_{condition}_{k}", subject=subject, group=group,
                             condition=condition, signal_a="A", signal_b="B", ratio="1:1", p=1, q=1, window=1,
                             measure="plv", value=v, effect=v, z=v,
                             preferred_phase=np.nan if phases is None else phases[(subject, condition)][k]))
    return pd.DataFrame(rows)


def test_paired_t_test_matches_students_sleep_example():
    vals = {}
    for i, (a, b) in enumerate(zip(REF["drug_1"], REF["drug_2"])):
        vals[(f"p{i}", "all", "drug_1")] = a
        vals[(f"p{i}", "all", "drug_2")] = b
    sl, _, _ = second_level_tests(_table(vals), summary="value", n_bootstrap=0)
    row = sl[(sl["test"] == "paired") & (sl["approach"] == "parametric")].iloc[0]
    assert row["contrast"] == "drug_2 − drug_1"
    assert row["estimate"] == pytest.approx(REF["mean_difference"], abs=1e-12)
    assert row["statistic"] == pytest.approx(REF["t"], abs=5e-5)  # Student 1908 via R (recalled)
    assert row["df"] == REF["df"]
    assert row["p_value"] == pytest.approx(REF["p_value"], abs=5e-7)


@pytest.fixture(scope="module")
def study():
    rng = np.random.default_rng(42)
    vals, phases = {}, {}
    for s in range(14):
        g = ("ctrl", "trained")[s % 2]
        for c in ("rest", "paced"):
            n = 2 if s % 3 == 0 else 1  # some subjects have two recordings
            vals[(f"s{s}", g, c)] = rng.normal(0.1 * (c == "paced") + 0.05 * (g == "trained"), 0.1, n)
            phases[(f"s{s}", c)] = rng.vonmises(0.8, 2.0, n)
    tab = _table(vals, phases)
    sl, subj, _ = second_level_tests(tab, n_bootstrap=199, rng=5)
    return tab, sl, subj


def _subject_means(tab, group, cond):
    d = tab[(tab["condition"] == cond) & (tab["group"].isin(group))]
    return d.groupby("subject", sort=False)["effect"].mean()


def _row(sl, test, approach, group, condition):
    r = sl[(sl["test"] == test) & (sl["approach"] == approach) & (sl["group"] == group)
           & (sl["condition"] == condition)]
    assert len(r) == 1
    return r.iloc[0]


def test_one_sample_against_scipy_and_pingouin(study):
    tab, sl, _ = study
    y = _subject_means(tab, ["ctrl", "trained"], "paced").to_numpy()
    r = _row(sl, "one_sample", "parametric", "(all groups)", "paced")
    ref = stats.ttest_1samp(y, 0.0)
    assert r["statistic"] == pytest.approx(ref.statistic, rel=1e-12)
    assert r["p_value"] == pytest.approx(ref.pvalue, rel=1e-10)
    n = len(y)
    d = y.mean() / y.std(ddof=1)
    assert r["effect_size"] == pytest.approx(d * (1 - 3 / (4 * (n - 1) - 1)), rel=1e-10)  # Hedges 1981 J
    w = _row(sl, "one_sample", "rank", "(all groups)", "paced")
    refw = stats.wilcoxon(y)
    assert w["statistic"] == pytest.approx(refw.statistic)
    assert w["p_value"] == pytest.approx(refw.pvalue, rel=1e-10)
    assert w["effect_size"] == pytest.approx(float(pg.wilcoxon(y)["RBC"].iloc[0]), rel=1e-12)
    # bootstrap interval: scipy.stats.bootstrap on the same data; it must contain the mean
    assert r["ci_low"] < y.mean() < r["ci_high"]


def test_paired_and_between_against_scipy_and_pingouin(study):
    tab, sl, _ = study
    a = _subject_means(tab, ["ctrl", "trained"], "rest")
    b = _subject_means(tab, ["ctrl", "trained"], "paced")
    r = _row(sl, "paired", "parametric", "(all groups)", "paced vs rest")
    ref = stats.ttest_rel(b[a.index], a)
    assert r["statistic"] == pytest.approx(ref.statistic, rel=1e-12)
    assert r["p_value"] == pytest.approx(ref.pvalue, rel=1e-10)
    g = pg.compute_effsize(b[a.index].to_numpy(), a.to_numpy(), paired=True, eftype="hedges")
    assert r["effect_size"] == pytest.approx(g, rel=1e-12)
    w = _row(sl, "paired", "rank", "(all groups)", "paced vs rest")
    assert w["p_value"] == pytest.approx(stats.wilcoxon(b[a.index], a).pvalue, rel=1e-10)
    c = _subject_means(tab, ["ctrl"], "paced").to_numpy()
    t = _subject_means(tab, ["trained"], "paced").to_numpy()
    r = _row(sl, "between_groups", "parametric", "trained vs ctrl", "paced")
    ref = stats.ttest_ind(t, c, equal_var=False)
    assert r["statistic"] == pytest.approx(ref.statistic, rel=1e-12)
    assert r["p_value"] == pytest.approx(ref.pvalue, rel=1e-10)
    assert r["estimate"] == pytest.approx(t.mean() - c.mean(), rel=1e-12)
    u = _row(sl, "between_groups", "rank", "trained vs ctrl", "paced")
    refu = stats.mannwhitneyu(t, c, alternative="two-sided")
    assert u["statistic"] == pytest.approx(refu.statistic)
    assert u["p_value"] == pytest.approx(refu.pvalue, rel=1e-10)


def test_rayleigh_and_corrections_against_pingouin_and_statsmodels(study):
    tab, sl, subj = study
    ph = subj[(subj["condition"] == "paced")]["preferred_phase"].to_numpy()
    r = _row(sl, "phase_consistency", "circular", "(all groups)", "paced")
    z, p = pg.circ_rayleigh(ph)
    assert r["statistic"] == pytest.approx(z, rel=1e-12) and r["p_value"] == pytest.approx(p, rel=1e-12)
    # Zar's approximation (Biostatistical Analysis; formula in METHODS.md)
    n, rn = len(ph), abs(np.exp(1j * ph).sum())
    assert p == pytest.approx(np.exp(np.sqrt(1 + 4 * n + 4 * (n ** 2 - rn ** 2)) - (1 + 2 * n)), rel=1e-9)
    for appr, fam in sl.groupby("approach"):
        ok = fam["p_value"].notna()
        adj = multipletests(fam.loc[ok, "p_value"], alpha=0.05, method="fdr_bh")[1]
        np.testing.assert_allclose(fam.loc[ok, "p_adjusted"], adj, rtol=1e-12)


def test_mixed_model_against_statsmodels(study):
    import statsmodels.formula.api as smf

    tab, _, _ = study
    sl, _, _ = second_level_tests(tab, n_bootstrap=0, repeated_measures="mixed_model")
    r = _row(sl, "one_sample", "parametric", "(all groups)", "paced")
    d = tab[tab["condition"] == "paced"]
    fit = smf.mixedlm("effect ~ 1", d, groups=d["subject"]).fit(reml=True)
    assert r["estimate"] == pytest.approx(fit.fe_params.iloc[0], rel=1e-6)
    assert r["p_value"] == pytest.approx(fit.pvalues.iloc[0], rel=1e-5)
