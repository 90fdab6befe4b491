"""Several nulls on one record (syncstats.compare_nulls, --surrogate a,b): the primary null's
rows are exactly analyze's, each further null runs on the same data and seed, and the null to
believe follows the written rules (syncstats.compare) on simulated cases whose truth we know.
The calibration of the believed null is in tests/validation/test_compare_calibration.py.
"""
from __future__ import annotations

import warnings
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest

import syncstats
from syncstats import SyncstatsInputError
from syncstats.cli import main
from syncstats.compare import COMPARISON_COLUMNS, null_advice
from syncstats.simulate import phase_oscillators, scenario

KW = dict(n_surrogates=19, n_bootstrap=0)


def _quiet(fn, *a, **k):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return fn(*a, **k)


@pytest.fixture(scope="module")
def short_regular():
    """60 s of two independent limit cycles: steady amplitude, few independent shifts."""
    sc = scenario("stuart_landau", coupled=False, duration=60.0, fs=50.0, rng=0)
    res = _quiet(syncstats.compare_nulls, sc.signals, fs=sc.fs, surrogates="iaaft,time_shift", rng=3, **KW)
    return sc, res


def test_primary_rows_are_exactly_analyze_and_further_nulls_use_the_same_seed(short_regular):
    sc, res = short_regular
    alone = _quiet(syncstats.analyze, sc.signals, fs=sc.fs, surrogate="iaaft", rng=3, **KW)
    pd.testing.assert_frame_equal(res.table, alone.table)
    shift = _quiet(syncstats.analyze, sc.signals, fs=sc.fs, surrogate="time_shift", rng=3, **KW)
    comp = res.null_comparison
    assert list(comp.columns) == list(COMPARISON_COLUMNS)
    assert comp["surrogate"].tolist() == ["iaaft", "time_shift"]
    np.testing.assert_array_equal(comp["p_value"].to_numpy(float),
                                  [alone.table["p_value"].iloc[0], shift.table["p_value"].iloc[0]])
    assert res.params["surrogates_compared"] == ["iaaft", "time_shift"]


def test_short_regular_record_believes_the_weak_but_valid_time_shift(short_regular):
    # the case: a short record of two regular, independent rhythms, where IAAFT can
    # reject (13 of 100 such pairs at alpha = 0.05, see syncstats.compare) and time_shift
    # has little power
    res = short_regular[1]
    comp = res.null_comparison.set_index("surrogate")
    assert comp.loc["time_shift", "assessment"] == "weak" and comp.loc["time_shift", "recommended"]
    assert "little power" in comp.loc["time_shift", "reason"]
    assert comp.loc["iaaft", "assessment"] == "unfit" and "steady amplitude" in comp.loc["iaaft", "reason"]
    assert comp["recommended"].sum() == 1
    assert (res.diagnostics["amplitude_cv"] < 0.3).all()


def test_time_shift_is_believed_where_it_has_power():
    # noise-driven damped oscillators: broad peaks, the alignment decorrelates over shifts
    sc = scenario("damped_noise", coupled=False, duration=60.0, fs=50.0, rng=1)
    res = _quiet(syncstats.compare_nulls, sc.signals, fs=sc.fs, surrogates=["iaaft", "time_shift"], rng=1, **KW)
    comp = res.null_comparison.set_index("surrogate")
    assert (comp["assessment"] == "fits").all()
    assert comp.loc["time_shift", "recommended"] and not comp.loc["iaaft", "recommended"]
    d = res.diagnostics.set_index("signal")
    assert (d["amplitude_cv"] > 0.35).all()  # noise-like amplitude (Rayleigh: 0.523, closed form)


def test_a_rate_step_fits_no_stationary_null():
    # B runs at 1.0 Hz for 40 s, then at 1.25 Hz (two runs of our phase-oscillator simulator,
    # joined phase-continuously); A is steady
    a = phase_oscillators(1, 80.0, 50.0, freqs=[1.1], noise=0.2, rng=4)
    b1 = phase_oscillators(1, 40.0, 50.0, freqs=[1.0], noise=0.2, rng=5)
    b2 = phase_oscillators(1, 40.0, 50.0, freqs=[1.25], noise=0.2, rng=6)
    pb = np.concatenate([b1.phases[0], b2.phases[0] - b2.phases[0][0] + b1.phases[0][-1] + 2 * np.pi / 50])
    sig = {"A": np.cos(a.phases[0]), "B": np.cos(pb)}
    res = _quiet(syncstats.compare_nulls, sig, fs=50.0, surrogates="iaaft,time_shift", rng=2, **KW)
    d = res.diagnostics.set_index("signal")
    assert d.loc["B", "rate_drift"] > 0.1 and d.loc["B", "rate_change_p"] < 1e-6
    assert d.loc["A", "rate_change_p"] > 0.001
    comp = res.null_comparison
    assert (comp["assessment"] == "unfit").all() and not comp["recommended"].any()
    assert comp["reason"].str.contains("the rate of B changes").all()
    assert comp["reason"].str.contains("none is recommended").all()


def test_a_spiky_trace_rules_out_fourier():
    sc = scenario("beats", coupled=False, duration=120.0, fs=50.0, rng=0)
    sig = dict(sc.signals)  # an ECG-like trace (skewness ~3) and a breathing signal
    # decimate=False: the fourier warning reads the signal on the analysis grid, where the
    # anti-alias filter of the default decimation smooths the spikes away
    res = _quiet(syncstats.compare_nulls, sig, fs=sc.fs, ratios=[(4, 1)], surrogates="fourier,time_shift", rng=0,
                 decimate=False, **KW)
    comp = res.null_comparison.set_index("surrogate")
    assert comp.loc["fourier", "assessment"] == "unfit" and "spiky" in comp.loc["fourier", "reason"]
    assert comp.loc["time_shift", "recommended"]


def test_the_choice_never_looks_at_the_p_values(short_regular):
    sc, res = short_regular
    runs = [_quiet(syncstats.analyze, sc.signals, fs=sc.fs, surrogate=m, rng=3, **KW) for m in ("iaaft", "time_shift")]
    base = null_advice(runs, res.diagnostics)
    flipped = [replace(r, table=r.table.assign(p_value=1 - r.table["p_value"] + 0.01,
                                                p_adjusted=1 - r.table["p_adjusted"] + 0.01,
                                                significant=~r.table["significant"].astype(bool)))
               for r in runs]
    again = null_advice(flipped, res.diagnostics)
    for c in ("assessment", "recommended", "reason"):
        assert again[c].tolist() == base[c].tolist()


@pytest.mark.parametrize("kw, words", [
    (dict(surrogates="iaaft"), "at least two"),
    (dict(surrogates="iaaft,iaaft"), "twice"),
    (dict(surrogates="iaaft,shuffle_all"), "unknown surrogate 'shuffle_all'"),
    (dict(surrogates="", ), "names no surrogate"),
    (dict(surrogate="iaaft"), "surrogates="),
])
def test_bad_surrogate_lists_are_refused(kw, words):
    sig = {"a": np.sin(np.arange(3000) / 8.0), "b": np.cos(np.arange(3000) / 8.0)}
    with pytest.raises(SyncstatsInputError, match=words):
        syncstats.compare_nulls(sig, fs=50.0, **kw)


def test_report_states_assumptions_and_which_null_to_believe(short_regular, tmp_path):
    from syncstats.nulls import SURROGATE_METHODS

    out = short_regular[1].save(tmp_path / "r")
    page = (out / "report.html").read_text()
    assert "Which null to believe" in page
    for m in ("iaaft", "time_shift"):
        import html

        assert html.escape(SURROGATE_METHODS[m].null_hypothesis) in page
        assert html.escape(SURROGATE_METHODS[m].failure_cases) in page
    assert "Believe the time-shifted null" in page and "neither show nor exclude locking" in page
    assert "How the null to believe is chosen" in page
    # the verdicts (first null) point to the section where another null is believed
    findings = page[page.index('<section id="findings">'):page.index('<section id="nulls">')]
    assert "For 1 of 1 rows the signal checks point to another null" in findings and 'href="#nulls"' in findings
    comp = pd.read_csv(out / "null_comparison.csv")
    assert comp["surrogate"].tolist() == ["iaaft", "time_shift"]
    assert "null_comparison.csv" in (out / "methods.md").read_text()
    import json

    prov = json.loads((out / "provenance.json").read_text())
    assert "null_comparison.csv" in json.dumps(prov)


def test_command_line_runs_several_nulls(tmp_path, capsys):
    sim = tmp_path / "sim"
    assert main(["simulate", "--kind", "stuart_landau", "--duration", "60", "--fs", "50", "--seed", "3",
                 "--out", str(sim)]) == 0
    src = str(sim / "recording.csv")
    common = ["--n-surrogates", "19", "--n-bootstrap", "0", "--seed", "1", "--quiet"]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        assert main(["analyze", src, "--surrogate", "iaaft,time_shift", *common, "--out", str(tmp_path / "two")]) == 0
        assert main(["analyze", src, "--surrogate", "iaaft", *common, "--out", str(tmp_path / "one")]) == 0
    assert (tmp_path / "two" / "null_comparison.csv").is_file()
    assert not (tmp_path / "one" / "null_comparison.csv").exists()
    assert (tmp_path / "two" / "results.csv").read_bytes() == (tmp_path / "one" / "results.csv").read_bytes()
    capsys.readouterr()
    assert main(["analyze", src, "--surrogate", "iaaft,time_shiftt", *common, "--out", str(tmp_path / "bad")]) == 2
    err = capsys.readouterr().err
    assert "--surrogate" in err and "time_shiftt" in err and "Traceback" not in err
    assert not (tmp_path / "bad").exists()


def test_a_study_takes_one_null(tmp_path, capsys):
    assert main(["study", str(tmp_path / "manifest.csv"), "--surrogate", "iaaft,time_shift",
                 "--out", str(tmp_path / "s")]) == 2
    err = capsys.readouterr().err
    assert "--surrogate" in err and "'syncstats analyze' only" in err
    assert not (tmp_path / "s").exists()
