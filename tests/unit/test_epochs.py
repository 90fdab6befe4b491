"""Synchronization epochs (syncstats.epochs): detection on hand-built phase differences with
known stretches, the batched statistics, bad options, and the round trip through the
Python API, the command line, the report and the saved files."""
import dataclasses
import hashlib
import json

import numpy as np
import pandas as pd
import pytest

import syncstats
from syncstats import SyncstatsInputError
from syncstats.cli import main
from syncstats.epochs import (EPOCH_COLUMNS, SUMMARY_COLUMNS, _batch_stats, check_epoch_options, combine_epochs,
                              detect_epochs, locked_runs, locking_epochs, locking_index)
from syncstats.simulate import beat_train, scenario

FS = 10.0
STRIDE = 10  # samples per cycle of B (1 Hz at 10 Hz)


def _hand_built():
    """1:1 phases, 100 cycles of B at 1 Hz: psi constant (0) for cycles 0-29, one full
    turn per cycle for cycles 30-59 (every cycle-mean phasor exactly 0), constant again
    (at 1 rad) for cycles 60-99."""
    n = 100 * STRIDE
    i = np.arange(n)
    phi_b = 2 * np.pi * i / STRIDE
    psi = np.zeros(n)
    rot = (i >= 300) & (i < 600)
    psi[rot] = 2 * np.pi * (i[rot] - 300) / STRIDE
    psi[i >= 600] = 2 * np.pi * 30 + 1.0  # continues upward: phase A never runs backwards
    return {"a": phi_b + psi, "b": phi_b}, psi


# a tolerance whose threshold is 0.7: a window of 5 cycles is steady with >= 4 constant cycles
TOL_07 = float(np.sqrt(-2 * np.log(0.7)))


def test_locking_index_on_hand_built_psi_is_the_share_of_constant_cycles():
    _, psi = _hand_built()
    r = locking_index(psi, STRIDE, 5)
    assert r.shape == (96,)
    np.testing.assert_allclose(r[:26], 1.0)  # windows 0..25 lie in the first plateau
    # window j = 26..29 holds 30 - j constant cycles of 5; the rotating cycles add nothing
    np.testing.assert_allclose(r[26:30], [0.8, 0.6, 0.4, 0.2], atol=1e-12)
    np.testing.assert_allclose(r[30:56], 0.0, atol=1e-12)
    np.testing.assert_allclose(r[56:60], [0.2, 0.4, 0.6, 0.8], atol=1e-12)
    np.testing.assert_allclose(r[60:], 1.0)


def test_detection_has_exact_boundaries_on_hand_built_psi():
    phases, _ = _hand_built()
    res = locking_epochs(phases=phases, fs=FS, n_surrogates=0, tolerance=TOL_07, window_cycles=5, min_cycles=0,
                         min_s=0, n_bootstrap=0)
    ep = res.epochs
    assert list(ep.columns) == list(EPOCH_COLUMNS)
    # a window with 4 of 5 constant cycles passes (0.8 >= 0.7), so each epoch reaches one
    # cycle into the rotating stretch: cycles [0, 31) and [59, 100)
    assert ep.start_s.tolist() == [0.0, 59.0] and ep.end_s.tolist() == [31.0, 100.0]
    assert ep.duration_s.tolist() == [31.0, 41.0]
    np.testing.assert_allclose(ep.n_cycles, [30.9, 40.9])  # phase of B over the samples of the epoch
    np.testing.assert_allclose(ep.mean_phase, [0.0, 1.0], atol=1e-9)
    np.testing.assert_allclose(ep["index"], [30 / 31, 40 / 41])
    sm = res.summary.iloc[0]
    assert sm.n_epochs == 2 and sm.total_locked_s == 72.0 and sm.longest_s == 41.0
    assert sm.span_s == 100.0 and sm.locked_share == 0.72
    assert pd.isna(sm.p_value) and pd.isna(sm.significant)


def test_minimum_duration_in_cycles_and_in_seconds_both_apply():
    phases, _ = _hand_built()
    kw = dict(phases=phases, fs=FS, n_surrogates=0, tolerance=TOL_07, window_cycles=5, n_bootstrap=0)
    assert locking_epochs(**kw, min_cycles=32, min_s=0).epochs.start_s.tolist() == [59.0]
    assert locking_epochs(**kw, min_cycles=0, min_s=32).epochs.start_s.tolist() == [59.0]
    assert locking_epochs(**kw, min_cycles=31, min_s=31).epochs.start_s.tolist() == [0.0, 59.0]
    assert locking_epochs(**kw, min_cycles=42, min_s=0).epochs.empty


def test_a_tighter_tolerance_keeps_only_the_steady_windows():
    phases, _ = _hand_built()
    res = locking_epochs(phases=phases, fs=FS, n_surrogates=0, tolerance=0.3, window_cycles=5, min_cycles=0,
                         min_s=0, n_bootstrap=0)
    # threshold exp(-0.045) = 0.956: only windows of 5 constant cycles
    assert res.epochs.start_s.tolist() == [0.0, 60.0] and res.epochs.end_s.tolist() == [30.0, 100.0]


def test_detect_epochs_and_runs_by_hand():
    idx = np.array([0.1, 0.9, 0.2, 0.2, 0.2, 0.95])
    lk = detect_epochs(idx, 0.8, 3)  # 8 cycles; steady windows start at 1 and 5
    assert lk.tolist() == [False, True, True, True, False, True, True, True]
    assert locked_runs(lk) == [(1, 4), (5, 8)]
    assert locked_runs(np.zeros(3, bool)) == []


def test_batched_statistics_match_a_loop_over_runs():
    rng = np.random.default_rng(3)
    lk = rng.random((50, 80)) < 0.8
    total, longest = _batch_stats(lk, 4, 2.5)
    for b in range(50):
        runs = [e - s for s, e in locked_runs(lk[b]) if e - s >= 4]
        assert total[b] == 2.5 * sum(runs)
        assert longest[b] == 2.5 * max(runs, default=0)


def _pair(seed=1, duration=240.0, coupling=0.5):
    sc = scenario("phase", coupled=coupling > 0, duration=duration, fs=FS, rng=seed,
                                     coupling=coupling if coupling > 0 else None)
    return sc.signals


def test_results_do_not_depend_on_batch_size_and_agree_with_analyze():
    sig = _pair()
    kw = dict(n_surrogates=9, rng=5, surrogate="time_shift", n_bootstrap=49, min_s=20)
    a = locking_epochs(sig, fs=FS, **kw)
    b = locking_epochs(sig, fs=FS, batch_size=2, **kw)
    pd.testing.assert_frame_equal(a.summary, b.summary)
    pd.testing.assert_frame_equal(a.epochs, b.epochs)
    res = syncstats.analyze(sig, fs=FS, n_surrogates=9, rng=5, surrogate="time_shift", n_bootstrap=49,
                            epochs={"min_s": 20})
    pd.testing.assert_frame_equal(res.epochs.summary, a.summary)
    assert list(a.summary.columns) == list(SUMMARY_COLUMNS)
    assert a.summary.family.iloc[0].startswith("1 tests of total locked time")
    assert np.all(a.curves[("A", "B", 1, 1)]["null_low"] <= a.curves[("A", "B", 1, 1)]["null_high"])


def _one_epoch(seed):
    """Heart beats (events) and breathing, 400 s: coupled 4:1 from 150 s to 300 s (heart
    1.1 Hz, breathing 0.27 Hz, inside the Adler range), free and faster (1.25 Hz) outside."""
    t = np.array([0.0, 149.0, 151.0, 299.0, 301.0, 400.0])
    sim = beat_train(400.0, FS, heart_freq=(t, np.array([1.25, 1.25, 1.1, 1.1, 1.25, 1.25])), breath_freq=0.27,
                     ratio=(4, 1), coupling=(t, np.array([0, 0, 0.5, 0.5, 0, 0])), ecg=False, rng=seed)
    return {"breath": sim.signals[1]}, {"heart": sim.events[0]}


def test_a_known_epoch_is_found_and_its_locked_time_is_significant():
    sig, ev = _one_epoch(4)
    res = locking_epochs(sig, fs=FS, events=ev, pairs=[("heart", "breath")], ratios=["4:1", "5:1"],
                         surrogate="time_shift", n_surrogates=39, rng=2, n_bootstrap=99, correction="none")
    ep = res.epochs
    assert len(ep) == 1 and ep.ratio.iloc[0] == "4:1"
    assert abs(ep.start_s.iloc[0] - 150) < 15 and abs(ep.end_s.iloc[0] - 300) < 15
    sm = res.summary.set_index("ratio")
    assert sm.loc["4:1", "p_value"] == 1 / 40 and sm.loc["5:1", "total_locked_s"] == 0
    nt = res.null[("heart", "breath", 4, 1)]["total_s"]
    assert nt.shape == (39,) and np.mean(nt) == pytest.approx(sm.loc["4:1", "null_mean_s"])
    assert np.all(nt < sm.loc["4:1", "total_locked_s"])
    assert sm.loc["4:1", "share_ci_low"] <= sm.loc["4:1", "locked_share"] <= sm.loc["4:1", "share_ci_high"]


def test_time_shifts_of_a_pair_locked_throughout_stay_locked_so_the_test_says_nothing():
    # coherent phase oscillators locked over the whole record: every shifted copy is
    # locked all the way too (time shift is weak for very coherent rhythms; Hurtado et al.
    # 2004), so the total locked time ties with every surrogate and p = 1
    res = locking_epochs(_pair(coupling=1.0), fs=FS, surrogate="time_shift", n_surrogates=19, rng=2,
                         n_bootstrap=0)
    sm = res.summary.iloc[0]
    assert sm.locked_share > 0.95 and sm.p_value == 1.0


def test_inputs_are_not_modified():
    sig = _pair()
    before = {k: hashlib.sha256(v.tobytes()).hexdigest() for k, v in sig.items()}
    locking_epochs(sig, fs=FS, n_surrogates=3, rng=1, n_bootstrap=0, min_s=20)
    assert before == {k: hashlib.sha256(v.tobytes()).hexdigest() for k, v in sig.items()}


@pytest.mark.parametrize("epochs, words", [
    ("yes", "epochs must be True, False or a mapping"),
    ({"tolerance": 0}, "epoch tolerance"),
    ({"tolerance": 4.0}, "epoch tolerance"),
    ({"window_cycles": 1}, "epoch window_cycles"),
    ({"window_cycles": 2.5}, "epoch window_cycles"),
    ({"min_s": -1}, "epoch min_s"),
    ({"min_cycles": "ten"}, "epoch min_cycles"),
    ({"width": 3}, "unknown setting(s) width"),
])
def test_bad_epoch_options_are_refused_with_the_setting_named(epochs, words):
    with pytest.raises(SyncstatsInputError, match=words.replace("(", r"\(").replace(")", r"\)")):
        check_epoch_options(epochs)


def test_epochs_refuse_trials_and_windows_longer_than_the_record():
    t = np.arange(0, 60, 0.1)
    trials = np.stack([np.sin(2 * np.pi * t + k) for k in range(3)])
    with pytest.raises(SyncstatsInputError, match="one continuous record"):
        syncstats.analyze({"a": trials, "b": trials}, fs=FS, n_surrogates=0, epochs=True)
    with pytest.raises(SyncstatsInputError, match="epoch window"):
        locking_epochs(_pair(duration=60.0), fs=FS, n_surrogates=0, window_cycles=500)
    sig = _pair(duration=60.0)
    with pytest.raises(SyncstatsInputError, match="no pair is tested"):
        syncstats.analyze({**sig, "C": sig["A"][::-1].copy()}, fs=FS, measures=("order_parameter",),
                          n_surrogates=0, epochs=True)


def test_save_writes_the_epoch_files_and_the_report_section(tmp_path):
    res = syncstats.analyze(_pair(), fs=FS, n_surrogates=9, rng=1, surrogate="time_shift", n_bootstrap=19,
                            epochs={"min_s": 20})
    out = res.save(tmp_path / "run")
    ep = pd.read_csv(out / "epochs.csv", keep_default_na=False, na_values=[""])
    sm = pd.read_csv(out / "epochs_summary.csv")
    assert list(ep.columns) == list(EPOCH_COLUMNS) and list(sm.columns) == list(SUMMARY_COLUMNS)
    np.testing.assert_array_equal(sm.total_locked_s, res.epochs.summary.total_locked_s)
    html = (out / "report.html").read_text(encoding="utf-8")
    assert 'id="epochs"' in html and "locking index over time with epochs" in html
    assert "Synchronization epochs were sought" in (out / "methods.md").read_text(encoding="utf-8")
    prov = json.loads((out / "provenance.json").read_text(encoding="utf-8"))
    assert "epochs.csv" in json.dumps(prov) and prov["parameters"]["epochs"]["min_s"] == 20
    # without epochs nothing changes
    plain = dataclasses.replace(res, epochs=None).save(tmp_path / "plain")
    assert not (plain / "epochs.csv").exists()
    assert 'id="epochs"' not in (plain / "report.html").read_text(encoding="utf-8")


def _csv(tmp_path, sig):
    path = tmp_path / "pair.csv"
    pd.DataFrame({"time": np.arange(len(sig["A"])) / FS, **sig}).to_csv(path, index=False)
    return path


def test_command_line_epochs(tmp_path, capsys):
    path = _csv(tmp_path, _pair())
    rc = main(["analyze", str(path), "--epochs", "--epoch-min-s", "20", "--n-surrogates", "9", "--surrogate",
               "time_shift", "--n-bootstrap", "0", "--seed", "3", "--quiet", "--out", str(tmp_path / "o")])
    assert rc == 0 and (tmp_path / "o" / "epochs_summary.csv").is_file()
    sm = pd.read_csv(tmp_path / "o" / "epochs_summary.csv")
    assert sm.min_s.iloc[0] == 20 and sm.n_surrogates.iloc[0] == 9
    # a setting alone implies --epochs
    rc = main(["analyze", str(path), "--epoch-window", "8", "--epoch-min-s", "20", "--n-surrogates", "0",
               "--quiet", "--out", str(tmp_path / "o2")])
    assert rc == 0 and pd.read_csv(tmp_path / "o2" / "epochs_summary.csv").window_cycles.iloc[0] == 8


@pytest.mark.parametrize("args, flag", [
    (["--epoch-tolerance", "4"], "--epoch-tolerance"),
    (["--epoch-window", "1"], "--epoch-window"),
    (["--epoch-min-s", "-2"], "--epoch-min-s"),
])
def test_command_line_bad_epoch_options_name_the_flag(tmp_path, capsys, args, flag):
    path = _csv(tmp_path, _pair(duration=60.0))
    rc = main(["analyze", str(path), *args, "--n-surrogates", "0", "--out", str(tmp_path / "o")])
    err = capsys.readouterr().err
    assert rc == 2 and flag in err and "Traceback" not in err
    assert not (tmp_path / "o").exists()


def test_study_with_epochs(tmp_path):
    man = syncstats.make_demo_study(tmp_path / "demo", n_subjects=2, duration=60.0)
    rc = main(["study", str(man), "--epochs", "--epoch-min-s", "15", "--n-surrogates", "9", "--n-bootstrap", "0",
               "--seed", "1", "--quiet", "--no-cache", "--out", str(tmp_path / "st")])
    assert rc == 0
    sm = pd.read_csv(tmp_path / "st" / "epochs_summary.csv", keep_default_na=False)
    assert sorted(sm.recording) == sorted(pd.read_csv(man).recording)


def test_each_epoch_is_set_against_the_longest_epoch_under_the_null():
    sig, ev = _one_epoch(4)
    res = locking_epochs(sig, fs=FS, events=ev, pairs=[("heart", "breath")], ratios=["4:1"],
                         surrogate="time_shift", n_surrogates=39, rng=2, n_bootstrap=0)
    e = res.epochs.iloc[0]
    assert e.p_duration == 1 / 40 and bool(e.beyond_chance)
    phases, _ = _hand_built()
    none = locking_epochs(phases=phases, fs=FS, n_surrogates=0, window_cycles=5, min_s=0, n_bootstrap=0).epochs
    assert none.p_duration.isna().all() and none.beyond_chance.isna().all()


def test_results_of_several_recordings_are_stacked_and_keep_their_families():
    phases, _ = _hand_built()
    kw = dict(phases=phases, fs=FS, window_cycles=5, min_s=0, n_bootstrap=0, n_surrogates=0)
    a, b = locking_epochs(recording="r1", **kw), locking_epochs(recording="r2", **kw)
    both = combine_epochs([a, None, b])
    assert both.summary.recording.tolist() == ["r1", "r2"] and len(both.epochs) == 2 * len(a.epochs)
    assert any("corrected within that recording" in n for n in both.notes)
    assert combine_epochs([None]) is None and combine_epochs([a]) is a


def test_phase_randomising_nulls_are_replaced_by_the_time_shift_for_epochs():
    # With iaaft the total-locked-time test rejected an uncoupled pair near 4:1 at 0.135
    # (R = 400; tests/validation/test_epochs_calibration.py), so epochs run fourier / aaft /
    # iaaft as time_shift and say so; the main rows keep the run's surrogate.
    import warnings

    sig = _pair()
    kw = dict(n_surrogates=19, rng=5, n_bootstrap=0, min_s=20)
    asked = locking_epochs(sig, fs=FS, surrogate="iaaft", **kw)
    shift = locking_epochs(sig, fs=FS, surrogate="time_shift", **kw)
    pd.testing.assert_frame_equal(asked.summary, shift.summary)
    assert set(asked.summary.surrogate) == {"time_shift"}
    assert "epochs: tested with time_shift surrogates instead of iaaft" in asked.notes[0]
    assert not any("instead of" in n for n in shift.notes)
    assert locking_epochs(sig, fs=FS, **kw).summary.equals(shift.summary)  # the default
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", syncstats.SyncstatsWarning)
        res = syncstats.analyze(sig, fs=FS, n_surrogates=19, rng=5, n_bootstrap=0, epochs=dict(min_s=20))
    assert set(res.table.surrogate) == {"iaaft"} and set(res.epochs.summary.surrogate) == {"time_shift"}
    assert any("instead of iaaft" in n for n in res.notes)
