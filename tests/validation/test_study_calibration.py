"""Calibration and power of the study second level (syncstats.study).

Machinery check: per-recording effects are drawn directly as independent null draws
(N(0, 0.1), no subject coupled) so that many studies are cheap; the false-positive rate of
every second-level test at alpha = 0.05 (uncorrected p, one test per replica) must lie in
the binomial 99 % band at the replica count. Power: half of the subjects carry a true
effect of 0.3. Plus a small end-to-end run through ``analyze_study`` with simulated
independent rhythms. Reduced size by default (R = 80 null, 60 power, 10 end-to-end); SYNCSTATS_FULL=1 runs
R = 400 (40 end-to-end).
"""
import os

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from syncstats.study import analyze_study, make_demo_study, second_level_tests

FULL = os.environ.get("SYNCSTATS_FULL") == "1"
ALPHA = 0.05


def band99(n, p=ALPHA):
    """Binomial 99 % acceptance band for the number of rejections out of n."""
    return stats.binom.ppf(0.005, n, p), stats.binom.ppf(0.995, n, p)


def null_units(rng, n_rep, n_subjects=12, delta=0.0, coupled_share=0.0):
    """One table holding n_rep independent replica studies as separate units (measure r<k>)."""
    rows = []
    for k in range(n_rep):
        coupled = rng.permutation(n_subjects) < int(round(coupled_share * n_subjects))
        for s in range(n_subjects):
            for c in ("rest", "paced"):
                shift = delta if (coupled[s] and c == "paced") else 0.0
                rows.append(dict(recording=f"r{k}s{s}{c}", subject=f"s{s}", group=("g1", "g2")[s % 2],
                                 condition=c, signal_a="A", signal_b="B", ratio="1:1", p=1, q=1, window=1,
                                 measure=f"r{k}", effect=rng.normal(shift, 0.1),
                                 preferred_phase=(rng.vonmises(0.5, 4.0) if shift else rng.uniform(-np.pi, np.pi))))
    return pd.DataFrame(rows)


def rejection_rates(sl):
    sl = sl[sl["group"].isin(["(all groups)", "g2 vs g1"])]
    return sl.groupby(["test", "approach", "condition"])["p_value"].apply(lambda p: (p < ALPHA).sum()).to_dict(), \
        sl.groupby(["test", "approach", "condition"]).size().to_dict()


@pytest.mark.slow
def test_second_level_false_positive_rate_under_the_null():
    n_rep = 400 if FULL else 80
    sl, _, _ = second_level_tests(null_units(np.random.default_rng(11), n_rep), n_bootstrap=0)
    hits, counts = rejection_rates(sl)
    lo, hi = band99(n_rep)
    assert len(hits) == 2 * 2 + 2 + 2 * 2 + 2  # one-sample x2 approaches x2 conditions, paired x2, between x2 x2, phase x2
    for key, k in hits.items():
        assert counts[key] == n_rep
        assert lo <= k <= hi, f"{key}: {k}/{n_rep} rejections outside the 99 % band [{lo:g}, {hi:g}]"


@pytest.mark.slow
def test_second_level_power_when_half_the_subjects_are_coupled():
    n_rep = 400 if FULL else 60
    sl, _, _ = second_level_tests(null_units(np.random.default_rng(12), n_rep, delta=0.3, coupled_share=0.5),
                                  n_bootstrap=0)
    hits, counts = rejection_rates(sl)
    # effect 0.3 in half of 12 subjects, SD 0.1: noncentral t gives power about 0.9 for the
    # one-sample t-test (mean 0.15, SD about 0.18); the rank tests and the paired test are
    # slightly less powerful; rest stays at the nominal level
    power = {k: hits[k] / counts[k] for k in hits}
    print("power:", {k: round(v, 3) for k, v in power.items()})
    assert power[("one_sample", "parametric", "paced")] >= 0.75
    assert power[("one_sample", "rank", "paced")] >= 0.5
    assert power[("paired", "parametric", "paced vs rest")] >= 0.5
    assert power[("paired", "rank", "paced vs rest")] >= 0.5
    # half the subjects at a von Mises(0.5, kappa 4) phase, half uniform: resultant length
    # about 0.44, Rayleigh z = n R^2 about 2.3 on 12 subjects: modest power
    assert power[("phase_consistency", "circular", "paced")] >= 0.25
    lo, hi = band99(n_rep)
    assert lo <= hits[("one_sample", "parametric", "rest")] <= hi


@pytest.mark.slow
def test_end_to_end_null_studies_keep_the_level(tmp_path):
    """Independent rhythms in every recording: the one-sample test of the debiased effect
    rejects at about alpha (small run: R studies of 6 subjects, one condition)."""
    n_rep = 40 if FULL else 10
    rej = 0
    for k in range(n_rep):
        m = make_demo_study(tmp_path / f"s{k}", n_subjects=6, duration=40.0, rng=100 + k)
        rest = pd.read_csv(m)
        rest = rest[rest["condition"] == "rest"]
        res = analyze_study(rest, base_dir=m.parent, surrogate="time_shift", n_surrogates=19, n_bootstrap=0,
                            n_bootstrap_second_level=0, rng=k)
        row = res.second_level[(res.second_level["test"] == "one_sample")
                               & (res.second_level["approach"] == "parametric")
                               & (res.second_level["group"] == "(all groups)")]
        rej += int(row["p_value"].iloc[0] < ALPHA)
    lo, hi = band99(n_rep)
    assert lo <= rej <= hi, f"{rej}/{n_rep} null studies rejected"
