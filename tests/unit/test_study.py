"""syncstats.study: manifest checks, fault survival, resume from the cache, identical
results on every executor, the saved files."""
import json

import numpy as np
import pandas as pd
import pytest

from syncstats import SyncstatsInputError
from syncstats.study import (SECOND_LEVEL_COLUMNS, STUDY_OUTPUT_FILES, analyze_study, make_demo_study,
                             read_manifest)

OPTS = dict(surrogate="time_shift", all_shifts=False, n_surrogates=19, n_bootstrap=0, n_bootstrap_second_level=99, rng=3)


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    return make_demo_study(tmp_path_factory.mktemp("study") / "demo", n_subjects=4, duration=30.0, rng=1)


@pytest.fixture(scope="module")
def serial(demo):
    return analyze_study(demo, **OPTS)


def test_study_table_and_second_level_schema(serial):
    t = serial.table
    assert list(t.columns[:4]) == ["recording", "subject", "group", "condition"]
    assert len(t) == 8 and set(t["condition"]) == {"rest", "paced"}
    sl = serial.second_level
    assert list(sl.columns) == list(SECOND_LEVEL_COLUMNS)
    assert set(sl["test"]) == {"one_sample", "paired", "between_groups", "phase_consistency"}
    assert set(sl["family"].str.split(" ").str[1]) == {"parametric", "rank-based", "phase-consistency"}
    assert (sl["correction"] == "fdr_bh").all()
    assert serial.n_computed == 8 and serial.n_cached == 0 and serial.n_failed == 0


def test_identical_serial_processes_and_dask(demo, serial):
    distributed = pytest.importorskip("distributed")
    proc = analyze_study(demo, executor="processes", n_jobs=2, **OPTS)
    pd.testing.assert_frame_equal(proc.table, serial.table, check_exact=True)
    pd.testing.assert_frame_equal(proc.second_level, serial.second_level, check_exact=True)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster, distributed.Client(cluster) as client:
        dk = analyze_study(demo, executor=client, **OPTS)
    pd.testing.assert_frame_equal(dk.table, serial.table, check_exact=True)
    pd.testing.assert_frame_equal(dk.second_level, serial.second_level, check_exact=True)
    # each recording keeps its own notes, also when recordings run in threads of one process
    # (warnings.catch_warnings is process-wide: threads used to swap each other's notes)
    assert len({n for notes in serial.recording_notes.values() for n in notes}) > len(serial.recording_notes)
    assert proc.recording_notes == serial.recording_notes
    assert dk.recording_notes == serial.recording_notes


def test_recording_seed_depends_on_the_row_not_the_order(demo, serial):
    m = pd.read_csv(demo)
    one = analyze_study(m.iloc[[3]], base_dir=demo.parent, **OPTS)
    # row 3 of the sub-manifest is row 0 there: another seed, other surrogates
    assert not np.array_equal(one.table["null_mean"].to_numpy(),
                              serial.table[serial.table["recording"] == m.at[3, "recording"]]["null_mean"].to_numpy())
    same = analyze_study(m, base_dir=demo.parent, **OPTS)
    pd.testing.assert_frame_equal(same.table, serial.table, check_exact=True)


def test_corrupt_and_missing_files_become_failures(tmp_path, demo):
    m = pd.read_csv(demo)
    (tmp_path / "broken.csv").write_bytes(b"\x00\x01garbage\xff\n1,2\n")
    m.loc[1, "file"] = str(tmp_path / "broken.csv")
    m.loc[2, "file"] = "recordings/nothing_here.csv"
    res = analyze_study(m, base_dir=demo.parent, **OPTS)
    assert res.n_failed == 2 and len(set(res.table["recording"])) == 6
    fails = res.failures.set_index("recording")
    assert "does not exist" in fails.loc[m.at[2, "recording"], "reason"]
    assert fails.loc[m.at[1, "recording"], "reason"].strip()
    for reason in fails["reason"]:
        assert "\n" not in reason
    out = res.save(tmp_path / "out")
    html = (out / "report.html").read_text()
    assert m.at[1, "recording"] in html and "failed" in html


def test_nothing_could_run_is_an_input_error(tmp_path):
    m = pd.DataFrame({"recording": ["a", "b"], "file": ["x.csv", "y.csv"], "subject": ["s1", "s2"],
                      "group": ["g", "g"], "condition": ["c", "c"]})
    with pytest.raises(SyncstatsInputError, match="none of the 2 recordings"):
        analyze_study(m, base_dir=tmp_path, **OPTS)


def test_interrupted_study_resumes_from_the_cache(tmp_path, demo, serial):
    cache = tmp_path / "cache"
    seen = []

    def stop_after_three(name, status):
        seen.append(status)
        if len(seen) == 3:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        analyze_study(demo, cache_dir=cache, progress=stop_after_three, **OPTS)
    assert len(list(cache.glob("*.pkl"))) == 3
    assert not list(cache.glob(".*partial*"))
    res = analyze_study(demo, cache_dir=cache, **OPTS)
    assert (res.n_cached, res.n_computed) == (3, 5)
    pd.testing.assert_frame_equal(res.table, serial.table, check_exact=True)
    again = analyze_study(demo, cache_dir=cache, **OPTS)
    assert (again.n_cached, again.n_computed) == (8, 0)
    # other options: a different key, everything recomputed
    other = analyze_study(demo, cache_dir=cache, **{**OPTS, "rng": 4})
    assert (other.n_cached, other.n_computed) == (0, 8)


def test_changed_file_content_invalidates_its_cache_entry(tmp_path):
    m = make_demo_study(tmp_path / "d", n_subjects=2, duration=30.0, rng=5)
    cache = tmp_path / "cache"
    analyze_study(m, cache_dir=cache, **OPTS)
    f = tmp_path / "d" / pd.read_csv(m).at[0, "file"]
    d = pd.read_csv(f)
    d.loc[5, "A"] += 0.01
    d.to_csv(f, index=False)
    res = analyze_study(m, cache_dir=cache, **OPTS)
    assert (res.n_cached, res.n_computed) == (3, 1)


def test_save_writes_five_files_escaped_and_offline(tmp_path, serial):
    out = serial.save(tmp_path / "out")
    assert sorted(p.name for p in out.iterdir()) == sorted(STUDY_OUTPUT_FILES)
    html = (out / "report.html").read_text()
    assert "<script" not in html.lower() and "http://" not in html and "https://" not in html
    assert "not a medical device" in html
    back = pd.read_csv(out / "study_results.csv")
    assert list(back.columns) == list(SECOND_LEVEL_COLUMNS) and len(back) == len(serial.second_level)
    assert len(pd.read_csv(out / "results.csv")) == len(serial.table)
    prov = json.loads((out / "provenance.json").read_text())
    assert prov["parameters"]["seed_entropy"] == "3" and prov["inputs"]
    with pytest.raises(SyncstatsInputError, match="not empty"):
        serial.save(out)
    assert sorted(p.name for p in out.iterdir()) == sorted(STUDY_OUTPUT_FILES)


def test_user_strings_are_escaped(tmp_path):
    m = make_demo_study(tmp_path / "d", n_subjects=3, duration=30.0, rng=6)
    df = pd.read_csv(m)
    df["group"] = "<b>x</b>&"
    df.loc[0, "recording"] = "<script>alert(1)</script>"
    df.loc[0, "file"] = "missing.csv"  # named in the list of failures
    res = analyze_study(df, base_dir=m.parent, **OPTS)
    html = (res.save(tmp_path / "out") / "report.html").read_text()
    assert "<script>" not in html and "&lt;script&gt;" in html and "&lt;b&gt;x&lt;/b&gt;&amp;" in html


def test_failed_save_leaves_no_folder(tmp_path, serial, monkeypatch):
    from syncstats.report import _study

    def boom(study):
        raise RuntimeError("disk full")

    monkeypatch.setattr(_study, "study_methods_text", boom)
    with pytest.raises(RuntimeError):
        serial.save(tmp_path / "out")
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("change, match", [
    (lambda d: d.drop(columns=["subject"]), "lacks the column"),
    (lambda d: d.assign(recording="same"), "more than once"),
    (lambda d: d.assign(condition=[""] + ["c"] * (len(d) - 1)), "empty 'condition'"),
    (lambda d: d.assign(group=[f"g{i}" for i in range(len(d))], subject="s1"), "more than one group"),
    (lambda d: d.assign(events="beats"), "NAME=FILE"),
    (lambda d: d.assign(fs="fast"), "fs 'fast'"),
])
def test_bad_manifest(change, match):
    d = pd.DataFrame({"recording": ["a", "b"], "file": ["a.csv", "b.csv"], "subject": ["s1", "s2"],
                      "group": ["g", "g"], "condition": ["c", "c"]})
    with pytest.raises(SyncstatsInputError, match=match):
        read_manifest(change(d), base_dir=".")


@pytest.mark.parametrize("kw, match", [
    (dict(measure_summary="median"), "measure_summary"),
    (dict(second_level_correction="magic"), "second_level_correction"),
    (dict(recording="x"), "does not take"),
    (dict(executor="threads"), "executor must be"),
])
def test_bad_options(demo, kw, match):
    with pytest.raises(SyncstatsInputError, match=match):
        analyze_study(demo, **{**OPTS, **kw})


def test_missing_manifest_file(tmp_path):
    with pytest.raises(SyncstatsInputError, match="does not exist"):
        analyze_study(tmp_path / "nope.csv")


def test_mixed_model_for_repeated_recordings(tmp_path):
    m = make_demo_study(tmp_path / "d", n_subjects=3, duration=30.0, rng=7)
    df = pd.read_csv(m)
    df["condition"] = "all"  # two recordings per subject in one cell
    res = analyze_study(df, base_dir=m.parent, repeated_measures="mixed_model", **OPTS)
    row = res.second_level[(res.second_level["test"] == "one_sample")
                           & (res.second_level["approach"] == "parametric")
                           & (res.second_level["group"] == "(all groups)")].iloc[0]
    assert row["aggregation"].startswith("mixed model") and int(row["n_recordings"]) == 6
    mean = analyze_study(df, base_dir=m.parent, **OPTS)
    row2 = mean.second_level[(mean.second_level["test"] == "one_sample")
                             & (mean.second_level["approach"] == "parametric")
                             & (mean.second_level["group"] == "(all groups)")].iloc[0]
    assert row2["aggregation"] == "subject mean" and int(row2["n_subjects"]) == 3
