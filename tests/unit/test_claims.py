"""syncstats.claims: checks from reported numbers, re-tests on data, bad input."""
import importlib.util
import os
import warnings
from pathlib import Path

import numpy as np
import pytest

import syncstats
from syncstats._errors import SyncstatsInputError
from syncstats.claims import check_claim, critical_plv, rayleigh_log_p, retest
from syncstats.inference import rayleigh_test
from syncstats.simulate import scenario

EX = Path(__file__).resolve().parents[2] / "examples"
BASE = dict(value=0.31, duration_s=300.0, freq_a=1.0, freq_b=0.25, fs=250.0, ratio="4:1")


def test_log_p_equals_package_rayleigh_test():
    ang = np.random.default_rng(1).vonmises(0.3, 1.0, size=40)
    _, p = rayleigh_test(ang)
    assert np.exp(rayleigh_log_p(40, np.abs(np.mean(np.exp(1j * ang))))) == pytest.approx(float(p), rel=1e-12)


@pytest.mark.parametrize("n,level", [(8, 0.05), (75, 0.001), (1000, 1e-6)])
def test_critical_plv_inverts_zar(n, level):
    assert np.exp(rayleigh_log_p(n, critical_plv(n, level))) == pytest.approx(level, rel=1e-9)


def test_critical_unattainable_is_inf():
    assert critical_plv(3, 1e-9) == np.inf


def test_search_correction_and_sidak():
    one = check_claim(**BASE)
    four = check_claim(**BASE, n_ratios=2, n_pairs=2)
    sid = check_claim(**BASE, n_ratios=4, correction="sidak")
    assert four.value("p_cycles_corrected") == pytest.approx(min(1, 4 * one.value("p_cycles")))
    assert sid.value("p_cycles_corrected") == pytest.approx(1 - (1 - one.value("p_cycles")) ** 4)
    assert four.value("critical_index_searched") > one.value("critical_index_searched")


def test_every_sample_p_flagged():
    # 300 s at 2 Hz = 600 samples: p = 1e-25 is what an every-sample test gives, not a cycle-level one
    chk = check_claim(**dict(BASE, fs=2.0), p_claimed=1e-25, test="rayleigh")
    assert "every_sample_rayleigh" in chk.flags
    assert chk.value("log10_distance_samples") < chk.value("log10_distance_cycles")


def test_p_below_surrogate_floor():
    chk = check_claim(**BASE, p_claimed=0.001, p_is_bound=True, test="surrogate", n_surrogates=999)
    assert "p_below_surrogate_floor" in chk.flags
    ok = check_claim(**BASE, p_claimed=0.001, test="surrogate", n_surrogates=999)
    assert "p_below_surrogate_floor" not in ok.flags


def test_below_chance_called_significant():
    chk = check_claim(value=0.08, n_cycles=75, p_claimed=0.01, test="rayleigh_samples")
    assert "below_chance_called_significant" in chk.flags and not chk.significant


def test_precision_and_ci():
    chk = check_claim(value="0.3124", n_cycles=75, ci=(0.30, 0.32))
    assert chk.value("decimals_reported") == 4
    assert {"precision_beyond_cycles", "ci_narrower_than_cycles_allow"} <= set(chk.flags)
    fine = check_claim(value="0.31", n_cycles=75, ci=(0.17, 0.45))
    assert not fine.flags


def test_ratio_mismatch_and_ppc():
    chk = check_claim(**dict(BASE, freq_a=1.1))
    assert "ratio_mismatch" in chk.flags
    ppc = check_claim(index="ppc", value=0.05, n_cycles=100)
    # PPC 0.05 over 100 cycles <-> PLV^2 = (0.05*99 + 1)/100
    assert ppc.value("plv_equivalent") == pytest.approx(np.sqrt(0.0595))
    assert ppc.value("chance_mean") == 0


def test_result_is_frozen_and_readable():
    chk = check_claim(**BASE)
    with pytest.raises(AttributeError):
        chk.significant = False
    assert "not a medical device" in str(chk) and list(chk.table.columns) == ["name", "value", "meaning"]
    with pytest.raises(SyncstatsInputError):
        chk.value("nope")


BAD = [
    dict(index="coherence", value=0.3, n_cycles=50),
    dict(value=1.3, n_cycles=50),
    dict(value=0.3),
    dict(value=0.3, n_cycles=1),
    dict(value=0.3, n_cycles=50, test="t-test"),
    dict(value=0.3, n_cycles=50, p_claimed=0),
    dict(value=0.3, n_cycles=50, n_ratios=0),
    dict(value=0.3, n_cycles=50, ratio="4-1"),
    dict(value=0.3, n_cycles=50, correction="fdr"),
    dict(value=0.3, n_cycles=50, ci=(0.4, 0.2)),
    dict(value=0.3, n_cycles=50, fs=-1),
    dict(value=0.3, n_cycles=50, alpha=1.5),
]


@pytest.mark.parametrize("kw", BAD)
def test_bad_input_one_sentence(kw):
    with pytest.raises(SyncstatsInputError) as e:
        check_claim(**kw)
    msg = str(e.value)
    assert "\n" not in msg and msg.endswith(".") and len(msg) < 300


def test_retest_naive_versus_calibrated():
    sc = scenario("phase", coupled=False, duration=120.0, fs=10.0, rng=3, detuning=0.1)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = retest(sc.signals, sc.fs, pair=("A", "B"), ratio=(1, 1), claimed_test="rayleigh_samples",
                   surrogate="time_shift", n_surrogates=39, rng=4)
        r2 = retest(sc.signals, sc.fs, pair=("A", "B"), ratio=(1, 1), claimed_test="rayleigh_samples",
                    surrogate="time_shift", n_surrogates=39, rng=4)
    assert list(r.table.role) == ["claimed", "calibrated"] and len(r.sentences) == 3
    assert r.table.equals(r2.table)  # seeded
    c, k = r.table.iloc[0], r.table.iloc[1]
    assert c.n > 10 * r.analysis.table.n_cycles.iloc[0] and c.n_kind == "samples" and k.n == 39
    assert isinstance(r.analysis, syncstats.AnalysisResult)


def test_retest_surrogate_claim_and_bad_input():
    sc = scenario("phase", coupled=True, duration=60.0, fs=10.0, rng=5)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = retest(sc.signals, sc.fs, pair=("A", "B"), ratio="1:1", claimed_test="surrogate",
                   claimed_surrogate="time_shift", claimed_n_surrogates=19, surrogate="fourier", n_surrogates=19,
                   window=(5, 55), rng=1)
    assert r.table.test.tolist() == ["surrogate_time_shift", "surrogate_fourier"]
    for kw in (dict(claimed_test="rayleigh"), dict(claimed_test="surrogate", window=(10, 5)),
               dict(claimed_test="surrogate", options={"ratios": [(2, 1)]})):
        with pytest.raises(SyncstatsInputError):
            retest(sc.signals, sc.fs, pair=("A", "B"), ratio="1:1", **kw)


def _agreement(n_runs, seed0):
    out = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for i in range(n_runs):
            sc = scenario("phase", coupled=i % 2 == 0, duration=120.0, fs=10.0, detuning=0.1, rng=seed0 + i)
            row = syncstats.analyze(sc.signals, sc.fs, surrogate="time_shift", n_surrogates=39, correction="none",
                                    n_bootstrap=0, rng=i).table.iloc[0]
            chk = check_claim(value=float(row.value), n_cycles=float(row.n_cycles))
            out.append((row.p_value <= 0.05) == chk.significant)
    return float(np.mean(out))


@pytest.mark.slow
def test_check_claim_agrees_with_surrogate_test():
    # half coupled (locked, Adler nu = 0.5), half independent; 10 % detuning;
    # reduced size by default, SYNCSTATS_FULL=1 for 40 runs
    n = 40 if os.environ.get("SYNCSTATS_FULL") else 10
    assert _agreement(n, 200) >= 0.9


def _load(name):
    spec = importlib.util.spec_from_file_location(name, EX / f"{name}.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_reviewer_claim_example(monkeypatch, capsys):
    monkeypatch.setenv("SYNCSTATS_EXAMPLE_SURROGATES", "19")
    stated, scanned, re = _load("reviewer_claim").main()
    assert "ratio_mismatch" in stated.flags and scanned.value("search_size") == 4
    assert re.table.significant.tolist()[0]
    assert "not a medical device" in capsys.readouterr().out
