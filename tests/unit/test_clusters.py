"""Synchronization clusters (syncstats.clusters): decomposition, splitting, seeds and batches, the analyze hook."""
import warnings

import numpy as np
import pandas as pd
import pytest

import syncstats
from syncstats._errors import SyncstatsInputError, SyncstatsWarning
from syncstats.clusters import (
    COMPONENT_COLUMNS,
    ORDER_COLUMNS,
    PARTICIPATION_COLUMNS,
    cluster_decomposition,
    group_clusters,
    plv_matrix,
    rotated_participation,
)
from syncstats.simulate import phase_oscillators

#: measurement noise rising inside each cluster: participation must fall in that order
NOISE = [0.2, 0.8, 1.5, 0.2, 0.8, 1.5]


def two_clusters(seed=5, duration=120.0, coupled=True):
    """Six phase oscillators: units 0-2 near 1.0 Hz and 3-5 near 1.3 Hz, all-to-all coupled
    inside each cluster (3 rad/s), none across."""
    c = np.zeros((6, 6))
    if coupled:
        c[:3, :3] = c[3:, 3:] = 3.0
        np.fill_diagonal(c, 0)
    sim = phase_oscillators(6, duration, 20.0, freqs=[1.0, 1.02, 0.98, 1.31, 1.29, 1.33], coupling=c, noise=0.6,
                            measurement_noise=NOISE, rng=seed)
    return {f"r{i}": sim.signals[i] for i in range(6)}


def test_two_built_clusters_are_split_with_participation_in_built_order():
    res = group_clusters(two_clusters(), fs=20, surrogate="time_shift", n_surrogates=39, rng=1)
    assert sorted(sorted(m) for m in res.clusters) == [["r0", "r1", "r2"], ["r3", "r4", "r5"]]
    for members in res.clusters:  # members are listed most involved first
        assert members in (["r0", "r1", "r2"], ["r3", "r4", "r5"])
    part = res.participation
    assert list(part.columns) == list(PARTICIPATION_COLUMNS)
    assert list(res.components.columns) == list(COMPONENT_COLUMNS)
    assert list(res.order.columns) == list(ORDER_COLUMNS)
    mine = part[part["assigned"]]
    assert mine["signal"].tolist() == [f"r{i}" for i in range(6)]
    assert (mine["participation"] > 0.8).all()
    np.testing.assert_allclose(part.groupby("signal")["participation"].sum(), 1.0, atol=1e-9)
    comp = res.components
    assert comp["significant"].sum() == 2
    assert (comp.loc[comp["significant"], "p_value"] <= 1 / 40 + 1e-12).all()


def test_independent_rhythms_form_no_cluster_here():
    res = group_clusters(two_clusters(coupled=False), fs=20, surrogate="time_shift", n_surrogates=39, rng=1)
    assert res.clusters == []
    assert not res.participation["assigned"].any()


def test_results_do_not_depend_on_the_batch_size_and_inputs_stay_unchanged():
    sig = two_clusters(duration=60.0)
    before = {k: v.copy() for k, v in sig.items()}
    for v in sig.values():
        v.flags.writeable = False
    a = group_clusters(sig, fs=20, surrogate="iaaft", n_surrogates=11, rng=3, batch_size=4)
    b = group_clusters(sig, fs=20, surrogate="iaaft", n_surrogates=11, rng=3, batch_size=11)
    pd.testing.assert_frame_equal(a.components, b.components)
    pd.testing.assert_frame_equal(a.order, b.order)
    for k in sig:
        np.testing.assert_array_equal(sig[k], before[k])


def test_plv_matrix_and_rotation_properties():
    rng = np.random.default_rng(0)
    ph = np.cumsum(rng.normal(0.3, 0.5, (4, 500)), axis=-1)
    r = plv_matrix(ph)
    np.testing.assert_allclose(np.diag(r), 1.0)
    np.testing.assert_allclose(r, r.T)
    np.testing.assert_allclose(r[0, 1], np.abs(np.mean(np.exp(1j * (ph[0] - ph[1])))))
    lam, vec, part = cluster_decomposition(r)
    rot = rotated_participation(lam, vec, 2)
    np.testing.assert_allclose(rot.sum(axis=1), 1.0, atol=1e-9)  # rotation keeps each rhythm's total
    np.testing.assert_allclose(rot[:, :2].sum(), lam[:2].sum(), atol=1e-9)  # and the total strength
    with pytest.raises(SyncstatsInputError, match="symmetric"):
        cluster_decomposition(np.array([[1.0, 0.2], [0.3, 1.0]]))


def test_too_few_rhythms_are_refused():
    sig = {k: v for k, v in list(two_clusters(duration=30.0).items())[:2]}
    with pytest.raises(SyncstatsInputError, match="at least 3 rhythms"):
        group_clusters(sig, fs=20, n_surrogates=0)


def test_analyze_attaches_the_clusters_and_save_writes_them(tmp_path):
    sig = two_clusters(duration=60.0)
    with warnings.catch_warnings():  # the time-shift resolution warning of the pair rows is expected here
        warnings.simplefilter("ignore", SyncstatsWarning)
        res = syncstats.analyze(sig, fs=20, surrogate="time_shift", n_surrogates=19, n_bootstrap=0, rng=2,
                                clusters=True)
    direct = group_clusters(sig, fs=20, surrogate="time_shift", n_surrogates=19, rng=2)
    pd.testing.assert_frame_equal(res.clusters.components, direct.components)
    out = res.save(tmp_path / "out")
    for name in ("clusters.csv", "cluster_components.csv", "order_parameter.csv"):
        assert (out / name).is_file()
    assert len(pd.read_csv(out / "clusters.csv")) == 36
    assert "Synchronization clusters" in (out / "report.html").read_text()
    assert "varimax" in (out / "methods.md").read_text()


def test_example_script_runs(tmp_path, monkeypatch):
    import importlib.util
    from pathlib import Path

    monkeypatch.setenv("SYNCSTATS_EXAMPLE_SURROGATES", "39")  # 19 cannot reach p < 0.05
    path = Path(__file__).resolve().parents[2] / "examples" / "clusters.py"
    spec = importlib.util.spec_from_file_location("clusters_example", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SyncstatsWarning)
        res = mod.main(str(tmp_path))
    found = res.clusters.clusters
    assert sorted(sorted(m) for m in found) == [["unit_1", "unit_2", "unit_3"], ["unit_4", "unit_5", "unit_6"]]
    assert (tmp_path / "report" / "clusters.csv").is_file()


def test_combining_recordings_names_whose_clusters_are_kept():
    """combine_results keeps one cluster analysis (the longest recording's) and says so in
    the notes instead of dropping the others unannounced."""
    from syncstats.api import combine_results

    runs = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SyncstatsWarning)
        for name, dur in (("short", 40.0), ("long", 60.0)):
            runs.append(syncstats.analyze(two_clusters(duration=dur), fs=20, n_surrogates=0, n_bootstrap=0,
                                          clusters=True, recording=name))
    res = combine_results(runs)
    assert res.clusters is runs[1].clusters
    assert any("clusters: shown and saved for 'long' only" in n for n in res.notes), res.notes
    assert not any("trial locking" in n for n in res.notes)


def test_phase_randomising_nulls_are_replaced_by_the_time_shift_in_the_cluster_test():
    # With iaaft the cluster test rejected independent rhythms too often (0.157 at alpha 0.05,
    # R = 300; DEVELOPERS.md), so the cluster test runs fourier / aaft / iaaft as time_shift
    # and says so; the pair rows of analyze keep the run's surrogate.
    sig = two_clusters(duration=60.0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SyncstatsWarning)
        asked = group_clusters(sig, fs=20, surrogate="iaaft", n_surrogates=19, rng=4)
        shift = group_clusters(sig, fs=20, surrogate="time_shift", n_surrogates=19, rng=4)
        res = syncstats.analyze(sig, fs=20, pairs=[("r0", "r1")], surrogate="iaaft", n_surrogates=19, n_bootstrap=0,
                                rng=4, clusters=True)
    pd.testing.assert_frame_equal(asked.components, shift.components)
    assert set(asked.components["surrogate"]) == {"time_shift"}
    assert "instead of iaaft" in asked.notes[0]
    assert not any("instead of" in n for n in shift.notes)
    pd.testing.assert_frame_equal(res.clusters.components, shift.components)
    assert "instead of iaaft" in res.clusters.notes[0]
    assert set(res.table["surrogate"]) == {"iaaft"}
    # a null with another hypothesis (linear dependence kept) is run as asked, with its caution
    mv = group_clusters(sig, fs=20, surrogate="multivariate_fourier", n_surrogates=19, rng=4)
    assert set(mv.components["surrogate"]) == {"multivariate_fourier"}
    assert any("not calibrated" in n for n in mv.notes)
