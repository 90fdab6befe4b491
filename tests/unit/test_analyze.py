"""The analyze contract: table columns, n_surrogates=0, pairs and groups, determinism."""
import numpy as np
import pandas as pd
import pytest

import syncstats
from syncstats.results import COLUMNS

from ..conftest import diffusing_pair, sine_pair

CONTRACT = [
    "recording", "signal_a", "signal_b", "ratio", "p", "q", "window_start_s", "window_end_s",
    "measure", "value", "n_cycles", "preferred_phase", "surrogate", "n_surrogates", "null_mean",
    "null_sd", "effect", "z", "p_value", "p_adjusted", "correction", "family", "significant", "locked", "ratio_certainty",
    "ci_low", "ci_high", "ci_level", "ci_method", "warnings",
]


def test_contract_columns_are_complete_and_ordered():
    assert list(COLUMNS) == CONTRACT


def test_measures_only_pairs_and_group():
    sig = sine_pair(noise=0.2)
    sig["c"] = np.sin(2 * np.pi * 1.3 * np.arange(len(sig["a"])) / 50.0)
    res = syncstats.analyze(sig, fs=50.0, measures=("plv", "ppc", "entropy_index", "conditional_index", "order_parameter"),
                            n_surrogates=0, rng=0)
    tab = res.table
    assert list(tab.columns[: len(CONTRACT)]) == CONTRACT
    pairs = tab[tab.measure != "order_parameter"]
    assert len(pairs) == 3 * 4  # three pairs x four pair measures
    grp = tab[tab.measure == "order_parameter"]
    assert len(grp) == 1 and grp.signal_a.iloc[0] == "group" and grp.signal_b.iloc[0] == ""
    assert tab.p_value.isna().all() and tab.p_adjusted.isna().all() and tab.z.isna().all()
    assert (tab.surrogate == "").all() and (tab.n_surrogates == 0).all()
    assert tab.significant.isna().all()
    ab = tab[(tab.signal_a == "a") & (tab.signal_b == "b") & (tab.measure == "plv")].iloc[0]
    assert ab.value > 0.95 and ab.ratio == "1:1" and ab.p == 1 and ab.q == 1
    assert ab.preferred_phase == pytest.approx(-0.5, abs=0.05)  # psi = phi_a - phi_b = -0.5
    assert ab.ci_low <= ab.value <= ab.ci_high
    assert ab.n_cycles > 150


def test_ratio_convention_p_cycles_of_a_per_q_of_b():
    # A at 2 Hz, B at 0.5 Hz: A makes 4 cycles while B makes 1 -> ratio 4:1 locks
    fs = 50.0
    t = np.arange(0, 200, 1 / fs)
    sig = {"a": np.sin(2 * np.pi * 2.0 * t), "b": np.sin(2 * np.pi * 0.5 * t)}
    tab = syncstats.analyze(sig, fs=fs, ratios=["4:1", (1, 4), (1, 1)], n_surrogates=0, n_bootstrap=0).table
    v = dict(zip(tab.ratio, tab.value))
    assert v["4:1"] > 0.99 and v["1:4"] < 0.2 and v["1:1"] < 0.2


def test_auto_ratios_include_the_true_ratio():
    fs = 50.0
    t = np.arange(0, 200, 1 / fs)
    sig = {"heart": np.sin(2 * np.pi * 1.2 * t), "breath": np.sin(2 * np.pi * 0.3 * t)}
    tab = syncstats.analyze(sig, fs=fs, ratios="auto", n_surrogates=0, n_bootstrap=0).table
    assert "4:1" in set(tab.ratio)
    assert tab.loc[tab.value.idxmax(), "ratio"] == "4:1"


def test_dataframe_and_array_inputs_agree_and_time_index_sets_fs():
    sig = sine_pair(duration=100, noise=0.3, seed=3)
    df = pd.DataFrame(sig, index=pd.Index(np.arange(len(sig["a"])) / 50.0, name="time_s"))
    r1 = syncstats.analyze(df, n_surrogates=0, n_bootstrap=0).table
    r2 = syncstats.analyze(np.vstack([sig["a"], sig["b"]]), fs=50.0, n_surrogates=0, n_bootstrap=0).table
    assert r1.value.iloc[0] == pytest.approx(r2.value.iloc[0], abs=1e-12)
    assert list(r2[["signal_a", "signal_b"]].iloc[0]) == ["s1", "s2"]


@pytest.mark.parametrize("method", ["fourier", "iaaft", "time_shift", "aaft", "multivariate_fourier"])
def test_same_seed_same_table_whatever_the_batch_size(method):
    sig = sine_pair(duration=80, noise=0.5, fb=1.05, seed=2)
    kw = dict(fs=50.0, surrogate=method, n_surrogates=13, n_bootstrap=50, rng=42, measures=("plv", "entropy_index"))
    t1 = syncstats.analyze(sig, batch_size=13, **kw).table
    t2 = syncstats.analyze(sig, batch_size=4, **kw).table
    pd.testing.assert_frame_equal(t1, t2)
    t3 = syncstats.analyze(sig, batch_size=13, **(kw | {"rng": 43})).table
    assert not np.allclose(t1.null_mean, t3.null_mean)


def test_processes_executor_matches_serial():
    sig = sine_pair(duration=60, noise=0.5, seed=4)
    kw = dict(fs=50.0, surrogate="fourier", n_surrogates=8, n_bootstrap=0, rng=5, batch_size=3)
    t1 = syncstats.analyze(sig, **kw).table
    t2 = syncstats.analyze(sig, executor="processes", n_jobs=2, **kw).table
    pd.testing.assert_frame_equal(t1, t2)


def test_inference_columns_filled_and_consistent():
    sig = diffusing_pair(seed=6)
    res = syncstats.analyze(sig, fs=50.0, ratios=[(1, 1), (2, 1)], surrogate="iaaft", n_surrogates=39, rng=1,
                            correction="max_stat")
    tab = res.table
    assert tab.n_surrogates.eq(39).all() and tab.surrogate.eq("iaaft").all()
    k = np.array([np.sum(res.null_distribution[i] >= tab.value[i] - 1e-12) for i in tab.index])
    assert np.allclose(tab.p_value, (1 + k) / 40)
    assert np.allclose(tab.effect, tab.value - tab.null_mean)
    assert np.allclose(tab.z, tab.effect / tab.null_sd)
    assert (tab.p_adjusted >= tab.p_value - 1e-12).all()
    one = tab[tab.ratio == "1:1"].iloc[0]
    assert one.significant and one.p_value == pytest.approx(1 / 40)
    assert "2 tests of plv" in one.family
    assert tab.significant.dtype == "boolean"
    assert not tab[tab.ratio == "2:1"].iloc[0].significant


def test_strictly_periodic_equal_frequencies_are_not_called_locked():
    # Two perfect 1 Hz sines are indistinguishable from two independent perfect 1 Hz
    # oscillators: the IAAFT null (same spectrum) gives PLV ~ 1 too, so no detection.
    res = syncstats.analyze(sine_pair(duration=120, noise=0.3, seed=6), fs=50.0, n_surrogates=39, rng=1)
    row = res.table.iloc[0]
    assert row.value > 0.99 and row.null_mean > 0.99 and not row.significant


def test_inputs_are_not_modified():
    sig = sine_pair(duration=60, noise=0.5, seed=8)
    copy = {k: v.copy() for k, v in sig.items()}
    syncstats.analyze(sig, fs=50.0, n_surrogates=5, rng=0, n_bootstrap=10)
    for k in sig:
        assert np.array_equal(sig[k], copy[k])


def test_events_and_windows():
    fs = 20.0
    t = np.arange(0, 300, 1 / fs)
    breath = np.sin(2 * np.pi * 0.25 * t)
    beats = np.arange(0.1, 299, 1.0)  # 1 Hz beats: 4 per breath
    res = syncstats.analyze({"breath": breath}, fs=fs, events={"beats": beats}, pairs=[("beats", "breath")],
                            ratios=[(4, 1)], windows=60.0, n_surrogates=0, n_bootstrap=0)
    tab = res.table
    assert len(tab) >= 4 and (tab.value > 0.95).all()
    assert np.all(np.diff(tab.window_start_s) == pytest.approx(60.0))
    assert "beats" in res.events
