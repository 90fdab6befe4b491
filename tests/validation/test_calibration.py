"""Calibration (false-positive rate under independence) and power (under coupling).

Reduced sizes run in the default suite; ``SYNCSTATS_FULL=1`` runs the full sizes (and
``python -m tests.validation.study`` rewrites docs/validation.md). Replicas come from
``syncstats.simulate`` with fixed seeds, so every run is deterministic.

Band: the binomial 99 % band of the rejection share at nominal alpha
(``scipy.stats.binom.ppf``; common practice for Monte-Carlo calibration checks).
"""
import warnings

import numpy as np
import pytest

import syncstats
from syncstats.simulate import scenario_batch

from ..conftest import FULL
from .study import ALPHA, DURATION, FAMILIES, FS, band, rejection_rate

pytestmark = pytest.mark.slow

FAM = {f.name: f for f in FAMILIES}
R = 300 if FULL else 100  # replicas for fast nulls
R_HEAVY = 150 if FULL else 30  # replicas for IAAFT
S = 99 if FULL else 39  # S + 1 a multiple of 1/alpha: the discrete test has size alpha


@pytest.mark.parametrize(
    "family",
    ["phase oscillators", "van der Pol relaxation", "heart beats + breathing, no RSA"],
)
def test_time_shift_is_calibrated_and_detects(family):
    fam = FAM[family]
    fpr, _ = rejection_rate(fam, "time_shift", coupled=False, replicas=R, n_surrogates=S, seed=101)
    lo, hi = band(R)
    assert lo <= fpr <= hi, f"FPR {fpr:.3f} outside the binomial 99% band [{lo:.3f}, {hi:.3f}]"
    power, _ = rejection_rate(fam, "time_shift", coupled=True, replicas=R // 2, n_surrogates=S, seed=102)
    assert power >= 0.8, f"power {power:.2f}"


@pytest.mark.parametrize("family", ["Stuart-Landau limit cycles", "Roessler phase-coherent chaos"])
def test_fourier_is_valid_on_self_sustained_rhythms(family):
    # Fourier surrogates assume a linear Gaussian process; for limit cycles they may be
    # conservative but must never exceed the nominal rate (upper end of the band).
    fam = FAM[family]
    fpr, _ = rejection_rate(fam, "fourier", coupled=False, replicas=R, n_surrogates=S, seed=103)
    assert fpr <= band(R)[1], f"FPR {fpr:.3f}"
    power, _ = rejection_rate(fam, "fourier", coupled=True, replicas=R // 2, n_surrogates=S, seed=104)
    assert power >= 0.7, f"power {power:.2f}"


def test_fourier_is_exact_for_linear_gaussian_rhythms():
    # noise-driven damped oscillators are linear Gaussian processes: the Fourier null is
    # exact for them (Theiler et al. 1992), so the FPR must sit inside the band.
    fpr, _ = rejection_rate(FAM["noise-driven damped oscillators"], "fourier", coupled=False, replicas=R,
                            n_surrogates=S, seed=105)
    lo, hi = band(R)
    assert lo <= fpr <= hi, f"FPR {fpr:.3f} outside [{lo:.3f}, {hi:.3f}]"


def test_iaaft_is_valid_and_detects_on_limit_cycles():
    fam = FAM["Stuart-Landau limit cycles"]
    fpr, _ = rejection_rate(fam, "iaaft", coupled=False, replicas=R_HEAVY, n_surrogates=S, seed=106)
    assert fpr <= band(R_HEAVY)[1], f"FPR {fpr:.3f}"
    power, _ = rejection_rate(fam, "iaaft", coupled=True, replicas=R_HEAVY, n_surrogates=S, seed=107)
    assert power >= 0.7, f"power {power:.2f}"


def test_interval_shuffle_on_independent_beats_and_the_rsa_warning():
    # Without respiratory heart-rate modulation the shuffled-interval null holds. With
    # it, intervals are serially correlated, which the shuffle destroys: analyze warns
    # (Ljung-Box test on the intervals, statsmodels) and recommends time_shift.
    fpr, _ = rejection_rate(FAM["heart beats + breathing, no RSA"], "interval_shuffle", coupled=False, replicas=R,
                            n_surrogates=S, seed=108)
    assert fpr <= band(R)[1], f"FPR {fpr:.3f}"
    sc = scenario_batch("beats", n_replicas=1, coupled=False, duration=DURATION, fs=FS, rng=109).replica(0)
    with pytest.warns(syncstats.SyncstatsWarning, match="serially correlated"):
        syncstats.analyze({"breath": sc.signals["breath"]}, fs=FS, events={"heart": sc.events["heart"]},
                          ratios=[(4, 1)], surrogate="interval_shuffle", n_surrogates=19, n_bootstrap=0, rng=1)


def test_naive_every_sample_rayleigh_test_is_far_above_nominal():
    # the contrast row: treating every sample of psi as independent (Zar's Rayleigh test)
    fpr, _ = rejection_rate(FAM["phase oscillators"], "rayleigh", coupled=False, replicas=R // 2, n_surrogates=0,
                            seed=110)
    assert fpr > 0.5, f"naive FPR {fpr:.2f}"


@pytest.mark.parametrize("correction", ["max_stat", "holm", "fdr_bh"])
def test_family_wise_error_over_a_ratio_scan(correction):
    # Independent rhythms, four ratios scanned: the chance that ANY ratio is called
    # significant must stay at alpha (FWER; for BH under the complete null FDR = FWER).
    reps = R
    batch = scenario_batch("phase", n_replicas=reps, coupled=False, duration=DURATION, fs=FS, rng=111)
    hits = 0
    n_sur = 99 if correction != "max_stat" else S  # Holm/BH need B >= m/alpha - 1 = 79
    for i in range(reps):
        sc = batch.replica(i)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            tab = syncstats.analyze(sc.signals, fs=FS, ratios=[(1, 1), (2, 1), (1, 2), (3, 2)], surrogate="time_shift",
                                    n_surrogates=n_sur, correction=correction, n_bootstrap=0, rng=i).table
        hits += bool((tab.p_adjusted <= ALPHA).any())
    lo, hi = band(reps)
    assert hits / reps <= hi, f"FWER {hits / reps:.3f} above {hi:.3f}"


def test_analyze_warns_when_a_null_is_known_to_fail():
    rng = np.random.default_rng(0)
    t = np.arange(0, 200, 0.1)
    spiky = np.exp(8 * np.cos(2 * np.pi * 1.0 * t + np.cumsum(rng.normal(0, 0.05, t.size)))) / np.exp(8)
    smooth = np.sin(2 * np.pi * 1.03 * t + np.cumsum(rng.normal(0, 0.05, t.size)))
    with pytest.warns(syncstats.SyncstatsWarning, match="spiky"):
        tab = syncstats.analyze({"a": spiky, "b": smooth}, fs=10.0, surrogate="fourier", n_surrogates=19,
                                n_bootstrap=0, rng=1).table
    assert "prefer iaaft" in tab.warnings.iloc[0]
    periodic = {"a": np.sin(2 * np.pi * t), "b": np.sin(2 * np.pi * 1.01 * t)}
    with pytest.warns(syncstats.SyncstatsWarning, match="little power"):
        syncstats.analyze(periodic, fs=10.0, surrogate="time_shift", n_surrogates=19, n_bootstrap=0, rng=1)
