"""Locking over trials (syncstats.trial_locking): values, seeds and batches, errors, the analyze hook."""
import numpy as np
import pandas as pd
import pytest

import syncstats
from syncstats._errors import SyncstatsInputError
from syncstats.simulate import stimulus_locked_trials
from syncstats.trial_locking import (
    CURVE_COLUMNS,
    STRETCH_COLUMNS,
    across_trial_plv,
    across_trial_ppc,
    cut_trials,
    locking_over_trials,
)

FS = 200.0


def _trials(lock=True, n=24, seed=3, coupling=6.0):
    sim = stimulus_locked_trials(n, 3.0, FS, coupling=coupling, lock_start_s=1.5 if lock else None,
                                 lock_end_s=2.1, rng=seed)
    return {"a": sim.signals[:, 0], "b": sim.signals[:, 1]}


def test_curves_match_the_definition_on_the_pipeline_phases():
    sig = _trials(n=8)
    res = locking_over_trials(sig, fs=FS, stimulus_s=1.0, n_surrogates=0, bands=(5, 15), decimate=False)
    from syncstats._inputs import collect_inputs
    from syncstats.pipeline import Pipeline

    pipe = Pipeline.fix(collect_inputs(sig, FS, None, None, None), bands=(5, 15))
    psi = pipe.data["a"] - pipe.data["b"]  # (trials, n)
    want = np.abs(np.exp(1j * psi).mean(axis=0))
    got = res.curves.loc[res.curves["measure"] == "plv", "value"].to_numpy()
    np.testing.assert_allclose(got, want, atol=1e-12)
    k = psi.shape[0]
    np.testing.assert_allclose(res.curves.loc[res.curves["measure"] == "ppc", "value"].to_numpy(),
                               (k * want**2 - 1) / (k - 1), atol=1e-12)
    t = res.curves.loc[res.curves["measure"] == "plv", "time_s"].to_numpy()
    np.testing.assert_allclose(t, pipe.time_s - 1.0)
    assert list(res.curves.columns) == list(CURVE_COLUMNS)
    assert res.curves["significant"].isna().all()


def test_small_examples():
    psi = np.array([[0.0, 0.3], [0.0, 0.3 + np.pi]])
    np.testing.assert_allclose(across_trial_plv(psi), [1.0, 0.0], atol=1e-12)
    np.testing.assert_allclose(across_trial_ppc(psi), [1.0, -1.0], atol=1e-12)


@pytest.mark.parametrize("correction", ["cluster", "max_stat"])
def test_a_locked_stretch_is_found_at_its_latency(correction):
    res = locking_over_trials(_trials(), fs=FS, stimulus_s=1.0, n_surrogates=39, correction=correction, rng=1)
    st = res.stretches
    assert list(st.columns) == list(STRETCH_COLUMNS)
    sig = st[st["significant"]]
    assert set(sig["measure"]) == {"plv", "ppc"}
    # built locked from 0.5 to 1.1 s after the stimulus (with 0.1 s ramps)
    for _, s in sig.iterrows():
        assert 0.3 <= s["start_s"] <= 0.6 and 1.0 <= s["end_s"] <= 1.25
    c = res.curves
    inside = c["time_s"].between(0.6, 1.0)
    assert c.loc[inside, "significant"].all()
    assert not c.loc[c["time_s"] < 0.2, "significant"].any()
    if correction == "max_stat":  # significant exactly where the curve exceeds the critical value
        assert (c["significant"].astype(bool) == (c["value"] > c["threshold"])).all()


def test_results_do_not_depend_on_the_batch_size():
    sig = _trials(n=12, seed=5)
    a = locking_over_trials(sig, fs=FS, stimulus_s=1.0, n_surrogates=23, rng=4, batch_size=5)
    b = locking_over_trials(sig, fs=FS, stimulus_s=1.0, n_surrogates=23, rng=4, batch_size=23)
    pd.testing.assert_frame_equal(a.curves, b.curves)
    pd.testing.assert_frame_equal(a.stretches, b.stretches)
    c = locking_over_trials(sig, fs=FS, stimulus_s=1.0, n_surrogates=23, rng=5)
    assert not np.allclose(a.curves["null_mean"], c.curves["null_mean"])


def test_inputs_are_not_modified():
    sig = _trials(n=6)
    before = {k: v.copy() for k, v in sig.items()}
    for v in sig.values():
        v.flags.writeable = False
    locking_over_trials(sig, fs=FS, stimulus_s=1.0, n_surrogates=9, rng=1)
    for k in sig:
        np.testing.assert_array_equal(sig[k], before[k])


@pytest.mark.parametrize("kw, words", [
    (dict(stimulus_s=5.0), "outside the trials"),
    (dict(correction="fdr"), "--trial-correction"),
    (dict(measures=("entropy_index",)), "cannot be followed over trials"),
    (dict(threshold=1.5), "--trial-threshold"),
])
def test_bad_options_are_refused_with_a_sentence(kw, words):
    with pytest.raises(SyncstatsInputError, match=words):
        locking_over_trials(_trials(n=6), fs=FS, n_surrogates=9, **kw)


def test_too_few_trials_are_refused():
    sig = {k: v[:3] for k, v in _trials(n=6).items()}
    with pytest.raises(SyncstatsInputError, match="at least 4 trials"):
        locking_over_trials(sig, fs=FS, n_surrogates=9)


def test_cut_trials():
    x = np.arange(1000.0)
    trials, stim_s, dropped = cut_trials({"x": x, "y": -x}, 100.0, [0.2, 2.0, 4.0, 6.0, 8.0, 9.9], (-0.5, 1.0))
    assert trials["x"].shape == (4, 150) and dropped == 2 and stim_s == 0.5
    np.testing.assert_array_equal(trials["x"][0], x[150:300])
    np.testing.assert_array_equal(trials["y"], -trials["x"])
    with pytest.raises(SyncstatsInputError, match="END after START"):
        cut_trials({"x": x}, 100.0, [2.0], (1.0, -1.0))
    with pytest.raises(SyncstatsInputError, match="at least 4"):
        cut_trials({"x": x}, 100.0, [2.0, 4.0], (-0.5, 1.0))


def test_analyze_attaches_the_trial_result_and_save_writes_it(tmp_path):
    sig = _trials(n=12)
    res = syncstats.analyze(sig, fs=FS, surrogate="trial_shuffle", n_surrogates=19, n_bootstrap=0, rng=2,
                            trial_locking=True, stimulus_s=1.0, trial_correction="max_stat")
    direct = locking_over_trials(sig, fs=FS, stimulus_s=1.0, n_surrogates=19, correction="max_stat", rng=2)
    pd.testing.assert_frame_equal(res.trial_locking.curves, direct.curves)
    assert res.params["trial_locking"]["correction"] == "max_stat"
    out = res.save(tmp_path / "out")
    back = pd.read_csv(out / "trial_stretches.csv")
    assert len(back) == len(res.trial_locking.stretches)
    assert len(pd.read_csv(out / "trial_locking.csv")) == len(res.trial_locking.curves)
    html = (out / "report.html").read_text()
    assert "Locking over trials" in html
    assert "trial-shuffled surrogates" in (out / "methods.md").read_text()
    plain = syncstats.analyze(sig, fs=FS, n_surrogates=0, n_bootstrap=0)
    assert plain.trial_locking is None and plain.clusters is None
    out2 = plain.save(tmp_path / "plain")
    assert not (out2 / "trial_locking.csv").exists()


def test_example_script_runs(tmp_path, monkeypatch):
    import importlib.util
    from pathlib import Path

    monkeypatch.setenv("SYNCSTATS_EXAMPLE_SURROGATES", "39")  # 19 cannot reach p < 0.05
    path = Path(__file__).resolve().parents[2] / "examples" / "trial_locking.py"
    spec = importlib.util.spec_from_file_location("trial_locking_example", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    res = mod.main(str(tmp_path))
    st = res.trial_locking.stretches
    assert st["significant"].any() and (tmp_path / "report" / "trial_stretches.csv").is_file()


@pytest.fixture
def stim_files(tmp_path):
    """A continuous record of 12 back-to-back 3 s trials (stimulus 1 s into each) and its stimulus list."""
    sig = _trials(n=12)
    a, b = sig["a"].ravel(), sig["b"].ravel()
    pd.DataFrame({"time": np.arange(a.size) / FS, "a": a, "b": b}).to_csv(tmp_path / "rec.csv", index=False)
    np.savetxt(tmp_path / "stim.txt", np.arange(12) * 3.0 + 1.0)
    return tmp_path


def test_command_line_cuts_trials_and_writes_the_tables(stim_files, capsys):
    from syncstats.cli import main

    out = stim_files / "out"
    rc = main(["analyze", str(stim_files / "rec.csv"), "--stimuli", str(stim_files / "stim.txt"),
               "--trial-window=-0.9,2.0", "--surrogate", "trial_shuffle", "--n-surrogates", "39", "--n-bootstrap", "0",
               "--trial-correction", "max_stat", "--seed", "1", "--out", str(out), "--quiet"])
    assert rc == 0
    st = pd.read_csv(out / "trial_stretches.csv")
    assert st["significant"].any() and set(st["correction"]) == {"max_stat"}
    assert (pd.read_csv(out / "trial_locking.csv")["time_s"].min() < 0)


@pytest.mark.parametrize("extra, words", [
    ([], "--trial-window"),
    (["--trial-window=2,1"], "END after START"),
    (["--trial-window=-0.9,500"], "inside the record"),
    (["--trial-window=-0.9,2", "--trial-correction", "bonferroni"], "--trial-correction"),
])
def test_command_line_errors_name_the_option(stim_files, capsys, extra, words):
    from syncstats.cli import main

    rc = main(["analyze", str(stim_files / "rec.csv"), "--stimuli", str(stim_files / "stim.txt"), *extra,
               "--n-surrogates", "9", "--n-bootstrap", "0", "--out", str(stim_files / "bad")])
    err = capsys.readouterr().err
    assert rc == 2 and words in err and "Traceback" not in err
    assert not (stim_files / "bad").exists()
    rc = main(["analyze", str(stim_files / "rec.csv"), "--trial-window=-1,2", "--out", str(stim_files / "bad2")])
    assert rc == 2 and "--stimuli" in capsys.readouterr().err
