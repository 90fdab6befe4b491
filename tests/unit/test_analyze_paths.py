"""analyze paths beyond the defaults: trials, wavelet, protophase, twin, multivariate
Fourier, user phases, executors, per-pair ratios, windows in the family."""
import warnings
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pandas as pd
import pytest

import syncstats
from syncstats import SyncstatsWarning

from ..conftest import diffusing_pair


def _trials(n_trials=12, n=1000, fs=50.0, locked=True, seed=0):
    rng = np.random.default_rng(seed)
    t = np.arange(n) / fs
    pa = 2 * np.pi * t[None, :] + rng.uniform(0, 2 * np.pi, (n_trials, 1)) + np.cumsum(
        rng.normal(0, 0.05, (n_trials, n)), axis=1)
    pb = pa + 0.5 + rng.normal(0, 0.4, (n_trials, n)) if locked else 2 * np.pi * t[None, :] + rng.uniform(
        0, 2 * np.pi, (n_trials, 1))
    return {"a": np.cos(pa), "b": np.cos(pb)}


def test_trial_shuffle_detects_trial_locked_coupling_and_not_its_absence():
    res = syncstats.analyze(_trials(locked=True), fs=50.0, surrogate="trial_shuffle", n_surrogates=99, rng=1)
    row = res.table.iloc[0]
    assert row.significant and row.n_cycles > 100 and row.null_mean < 0.4
    res0 = syncstats.analyze(_trials(locked=False, seed=3), fs=50.0, surrogate="trial_shuffle", n_surrogates=99, rng=1)
    assert not res0.table.iloc[0].significant


def test_wavelet_and_protophase_paths():
    sig = diffusing_pair(seed=2)
    w = syncstats.analyze(sig, fs=50.0, phase_method="wavelet", n_surrogates=0, n_bootstrap=0)
    h = syncstats.analyze(sig, fs=50.0, n_surrogates=0, n_bootstrap=0)
    assert w.table.value.iloc[0] == pytest.approx(h.table.value.iloc[0], abs=0.05)
    assert w.params["phase_method"]["a"] == "wavelet" and w.params["wavelet_freqs"]["a"] > 0
    pc = syncstats.analyze(sig, fs=50.0, protophase_correction=True, n_surrogates=0, n_bootstrap=0)
    assert pc.table.value.iloc[0] > 0.8


def test_twin_surrogates_through_analyze():
    res = syncstats.analyze(diffusing_pair(seed=4), fs=50.0, surrogate="twin", n_surrogates=19, n_bootstrap=0, rng=2)
    assert res.table.iloc[0].null_level == "signal" and np.isfinite(res.table.iloc[0].p_value)


def test_multivariate_fourier_keeps_linear_dependence():
    # Prichard & Theiler 1994: linearly coupled Gaussian rhythms keep their coherence in
    # multivariate surrogates, so the test does not reject; independent surrogates do.
    from syncstats.simulate import scenario

    sc = scenario("damped_noise", coupled=True, duration=400.0, fs=10.0, coupling=0.6, rng=5)
    kw = dict(fs=10.0, n_surrogates=99, n_bootstrap=0, rng=3)
    mv = syncstats.analyze(sc.signals, surrogate="multivariate_fourier", **kw).table.iloc[0]
    uv = syncstats.analyze(sc.signals, surrogate="fourier", **kw).table.iloc[0]
    assert uv.significant
    assert not mv.significant and mv.null_mean > uv.null_mean


def test_user_phases_take_phase_level_nulls_only():
    rng = np.random.default_rng(0)
    pa = np.cumsum(rng.normal(2 * np.pi / 50, 0.05, 10000))
    pb = pa + rng.normal(0, 0.5, 10000)
    res = syncstats.analyze(None, fs=50.0, phases={"a": pa, "b": pb}, surrogate="time_shift", n_surrogates=39, rng=0)
    assert res.table.iloc[0].significant and res.table.iloc[0].null_level == "phase"
    with pytest.raises(syncstats.SyncstatsInputError, match="time_shift"):
        syncstats.analyze(None, fs=50.0, phases={"a": pa, "b": pb}, surrogate="iaaft", n_surrogates=9)


def test_submit_style_executor_gives_identical_results():
    sig = diffusing_pair(duration=60, seed=5)
    kw = dict(fs=50.0, surrogate="fourier", n_surrogates=12, n_bootstrap=0, rng=5, batch_size=5)
    with ThreadPoolExecutor(2) as ex:
        t2 = syncstats.analyze(sig, executor=ex, **kw).table
    pd.testing.assert_frame_equal(syncstats.analyze(sig, **kw).table, t2)


def test_per_pair_ratios_and_windows_count_in_the_family():
    sig = diffusing_pair(duration=200, seed=6)
    sig["c"] = sig["b"][::-1].copy()
    res = syncstats.analyze(sig, fs=50.0, ratios={("a", "b"): [(1, 1), (2, 1)], ("a", "c"): "auto"}, windows=50.0,
                            surrogate="time_shift", n_surrogates=39, correction="max_stat", rng=1, n_bootstrap=0)
    tab = res.table
    assert set(map(tuple, tab[["signal_a", "signal_b"]].drop_duplicates().values)) == {("a", "b"), ("a", "c")}
    n_ac = len(tab[(tab.signal_b == "c")].ratio.unique())
    n_win = tab.window_start_s.nunique()
    assert n_win == 3
    assert tab.family.iloc[0].startswith(f"{(2 + n_ac) * n_win} tests of plv")


def test_bootstrap_ci_methods_and_preferred_phase_interval():
    sig = diffusing_pair(duration=200, seed=7)
    for method in ("percentile", "bca", "basic"):
        r = syncstats.analyze(sig, fs=50.0, n_surrogates=0, n_bootstrap=299, ci_method=method, rng=1).table.iloc[0]
        assert r.ci_low <= r.value <= r.ci_high and method in r.ci_method
    lo, hi = r.preferred_phase_ci_low, r.preferred_phase_ci_high
    d = np.angle(np.exp(1j * (r.preferred_phase - lo))), np.angle(np.exp(1j * (hi - r.preferred_phase)))
    assert d[0] >= 0 and d[1] >= 0 and d[0] + d[1] < 1.0  # a tight interval around the mean angle


def test_far_ratio_warning_uses_each_windows_own_frequency_ratio():
    # a lock that changes ratio (4:1 for 100 s, then 3:1): over the span the ratio is 3.5,
    # within 20 % of both, but in each window one of the two ratios rotates; the warning
    # must name the window's ratio, never the locked one (closed form: ideal phases)
    fs = 10.0
    t = np.arange(0, 200, 1 / fs)
    b = 2 * np.pi * 0.25 * t
    a = np.where(t < 100, 4 * b, 3 * b + 2 * np.pi * 0.25 * 100)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SyncstatsWarning)
        tab = syncstats.analyze(None, fs=fs, phases={"a": a, "b": b}, ratios=[(4, 1), (3, 1)],
                                windows=[(0, 100), (100, 200)], n_surrogates=0, n_bootstrap=0).table
    far = {(r.ratio, r.window_start_s): r.warnings for r in tab.itertuples()}
    assert far[("4:1", 0.0)] == far[("3:1", 100.0)] == ""
    assert far[("4:1", 100.0)].startswith("ratio 4:1 is far from the measured frequency ratio 3 in this window")
    assert far[("3:1", 0.0)].startswith("ratio 3:1 is far from the measured frequency ratio 4 in this window")
    assert np.allclose(tab.loc[tab.warnings == "", "value"], 1.0)
