"""Calibration of the believed null (syncstats.compare_nulls): the null chosen from the
diagnostics holds its level under independence and detects coupling.

Independent pairs from two families, so that both branches of the choice are exercised:
60 s of Stuart-Landau limit cycles (time_shift has few independent shifts there, so iaaft is
believed) and 60 s of noise-driven damped oscillators (time_shift has power and is believed).
Under coupling: Stuart-Landau pairs locked 1:1 (200 s at 10 Hz). The false-positive rate of the believed null's p-value must sit under the upper end of the
binomial 99 % band (``fpr_upper``, common practice); S + 1 = 20 is a multiple of 1/alpha, so
the discrete test has size exactly alpha. Reduced size by default, full with SYNCSTATS_FULL=1.
"""
import warnings

import numpy as np
import pytest

import syncstats
from syncstats.simulate import scenario

from ..conftest import FULL
from .study import ALPHA, fpr_upper

pytestmark = pytest.mark.slow

R = 100 if FULL else 16  # replicas per family under independence
R_COUPLED = 40 if FULL else 6
S = 19


def _believed(kind, coupled, seed, duration=60.0, fs=50.0):
    sc = scenario(kind, coupled=coupled, duration=duration, fs=fs, rng=seed)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        res = syncstats.compare_nulls(sc.signals, fs=sc.fs, surrogates="iaaft,time_shift", n_surrogates=S,
                                      n_bootstrap=0, rng=seed)
    comp = res.null_comparison
    best = comp[comp["recommended"]]
    if best.empty:
        return None, None
    return str(best["surrogate"].iloc[0]), float(best["p_value"].iloc[0])


def test_believed_null_holds_its_level_under_independence():
    picks, p = [], []
    for kind in ("stuart_landau", "damped_noise"):
        for i in range(R):
            m, pv = _believed(kind, False, 1000 + i)
            if m is not None:
                picks.append(m)
                p.append(pv)
    p = np.array(p)
    assert len(p) >= 0.9 * 2 * R  # a null fits nearly every stationary pair
    assert {"iaaft", "time_shift"} <= set(picks)  # both branches of the choice were taken
    fpr = float(np.mean(p <= ALPHA))
    print(f"believed null: FPR {fpr:.3f} over {len(p)} pairs (upper end {fpr_upper(len(p)):.3f}); "
          f"iaaft {picks.count('iaaft')}, time_shift {picks.count('time_shift')}")
    assert fpr <= fpr_upper(len(p)), (fpr, len(p))


def test_believed_null_detects_coupling():
    # 200 s at 10 Hz (the validation study's setting): at 60 s independent limit cycles with the
    # default small detuning already reach a PLV of about 0.9, and no null can tell them apart
    p = [_believed("stuart_landau", True, 2000 + i, duration=200.0, fs=10.0)[1] for i in range(R_COUPLED)]
    p = np.array([x for x in p if x is not None])
    assert len(p) == R_COUPLED
    print(f"believed null: power {np.mean(p <= ALPHA):.3f} over {len(p)} coupled pairs")
    assert np.mean(p <= ALPHA) >= 0.8
