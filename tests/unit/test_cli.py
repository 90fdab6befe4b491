"""The command line end to end on files written by the simulators; exit codes; errors."""
import json
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest

from syncstats.cli import main
from syncstats.results import COLUMNS


@pytest.fixture(scope="module")
def sim_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("sim") / "locked"
    assert main(["simulate", "--kind", "stuart_landau", "--coupled", "--duration", "300", "--fs", "20",
                 "--seed", "3", "--out", str(out)]) == 0
    return out


def test_simulate_writes_recording_and_truth(sim_dir):
    assert (sim_dir / "recording.csv").is_file()
    truth = json.loads((sim_dir / "truth.json").read_text())
    assert truth["truth"]["locked"] is True
    df = pd.read_csv(sim_dir / "recording.csv")
    assert df.columns[0] == "time_s" and df.shape[1] == 3


def test_analyze_end_to_end(sim_dir, tmp_path, capsys):
    out = tmp_path / "res"
    src = sim_dir / "recording.csv"
    before = src.read_bytes()
    rc = main(["analyze", str(src), "--surrogate", "fourier", "--n-surrogates", "39", "--seed", "1",
               "--measures", "plv,ppc", "--ratios", "1:1,2:1", "--correction", "max_stat", "--out", str(out), "--quiet"])
    assert rc == 0
    assert sorted(p.name for p in out.iterdir()) == ["methods.md", "provenance.json", "report.html", "results.csv"]
    tab = pd.read_csv(out / "results.csv")
    assert list(tab.columns[: len(COLUMNS)]) == list(COLUMNS)
    assert len(tab) == 4
    locked = tab[(tab.ratio == "1:1") & (tab.measure == "plv")].iloc[0]
    assert locked.significant and locked.p_value == pytest.approx(1 / 40)
    prov = json.loads((out / "provenance.json").read_text())
    assert src.read_bytes() == before  # input untouched
    assert json.dumps(prov).count("sha256") >= 1


def test_config_file_and_unknown_key(sim_dir, tmp_path, capsys):
    cfg = tmp_path / "study.toml"
    cfg.write_text('surrogate = "time_shift"\nn_surrogates = 19\nseed = 4\nn_bootstrap = 0\n')
    out = tmp_path / "res"
    assert main(["analyze", str(sim_dir / "recording.csv"), "--config", str(cfg), "--out", str(out), "--quiet"]) == 0
    assert (pd.read_csv(out / "results.csv").surrogate == "time_shift").all()
    bad = tmp_path / "bad.toml"
    bad.write_text('surogate = "iaaft"\n')
    assert main(["analyze", str(sim_dir / "recording.csv"), "--config", str(bad), "--out", str(tmp_path / "x")]) == 2
    err = capsys.readouterr().err
    assert "unknown key" in err and "surogate" in err and "Traceback" not in err
    assert not (tmp_path / "x").exists()


@pytest.mark.parametrize(
    "args, words",
    [
        (["analyze", "missing.csv", "--out", "OUT"], ["missing.csv"]),
        (["analyze", "REC", "--surrogate", "nope", "--n-surrogates", "5", "--out", "OUT"], ["surrogate", "iaaft"]),
        (["analyze", "REC", "--ratios", "4-1", "--out", "OUT"], ["ratio"]),
        (["analyze", "REC", "--signals", "x,y", "--out", "OUT"], ["x"]),
        (["analyze", "REC"], ["--out"]),
        (["analyze", "REC", "--events", "beats", "--out", "OUT"], ["NAME=FILE"]),
        (["frobnicate"], ["invalid choice"]),
    ],
)
def test_bad_usage_exits_2_with_one_sentence(sim_dir, tmp_path, capsys, args, words):
    args = [str(sim_dir / "recording.csv") if a == "REC" else str(tmp_path / "out") if a == "OUT" else a for a in args]
    assert main(args) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("syncstats: error:") and "\n" not in err and "Traceback" not in err
    for w in words:
        assert w in err
    assert not (tmp_path / "out").exists()


def test_existing_output_folder_is_refused(sim_dir, tmp_path, capsys):
    out = tmp_path / "full"
    out.mkdir()
    (out / "keep.txt").write_text("mine")
    assert main(["analyze", str(sim_dir / "recording.csv"), "--n-surrogates", "0", "--out", str(out)]) == 2
    assert (out / "keep.txt").read_text() == "mine"


def test_help_shows_examples_and_console_script_runs(tmp_path):
    r = subprocess.run([sys.executable, "-m", "syncstats.cli", "analyze", "--help"], capture_output=True, text=True)
    assert r.returncode == 0 and "examples:" in r.stdout and "--ratios auto" in r.stdout


def test_debug_shows_traceback(tmp_path):
    r = subprocess.run([sys.executable, "-m", "syncstats.cli", "analyze", str(tmp_path / "nofile.csv"), "--out",
                        str(tmp_path / "o"), "--debug"], capture_output=True, text=True)
    assert r.returncode != 0 and "Traceback" in r.stderr


def test_demo_writes_all_four_files(tmp_path):
    out = tmp_path / "demo"
    assert main(["demo", "--out", str(out), "--n-surrogates", "39", "--quiet"]) == 0
    assert sorted(p.name for p in out.iterdir()) == ["methods.md", "provenance.json", "report.html", "results.csv"]
    tab = pd.read_csv(out / "results.csv")
    hb = tab[(tab.signal_a == "heart") & (tab.signal_b == "breath")]
    # the invented study locks heart to breath at 4:1 early and at 3:1 later (demo_truth.json)
    first = hb[(hb.window_start_s >= 15) & (hb.window_end_s <= 150) & (hb.ratio == "4:1")]
    later = hb[(hb.window_start_s >= 315) & (hb.window_end_s <= 450) & (hb.ratio == "3:1")]
    assert len(first) == 1 and len(later) == 1
    assert first.value.iloc[0] > 0.7 and later.value.iloc[0] > 0.7
    page = (out / "report.html").read_text()
    assert "research software" in page.lower()
    # the headline states the truth in plain words: 4:1 early, 3:1 later, never both at once
    import html
    import re

    text = html.unescape(re.sub(r"<[^>]+>", "", page))
    found = re.search(r"heart and breath: .*?phase-locked at a ratio that changes over time — 4:1 during "
                      r"(\d+)–(\d+) s; 3:1 during (\d+)–(\d+) s", text)
    assert found, "demo headline does not name 4:1 early and 3:1 later"
    a0, a1, b0, b1 = map(int, found.groups())
    assert a0 <= 15 + 60 and a1 >= 150 - 60 and b0 <= 315 + 60 and b1 >= 450 - 60 and a1 <= b0


def test_gaps_are_refused_or_split_into_recordings(sim_dir, tmp_path, capsys):
    df = pd.read_csv(sim_dir / "recording.csv")
    df.loc[3000:3050, "A"] = np.nan  # a 2.5 s gap at 150 s
    src = tmp_path / "gappy.csv"
    df.to_csv(src, index=False)
    assert main(["analyze", str(src), "--n-surrogates", "0", "--out", str(tmp_path / "a")]) == 2
    err = capsys.readouterr().err
    assert "gappy.csv" in err and "gaps" in err
    out = tmp_path / "b"
    assert main(["analyze", str(src), "--gaps", "split", "--surrogate", "fourier", "--n-surrogates", "19", "--seed", "2",
                 "--n-bootstrap", "0", "--out", str(out), "--quiet"]) == 0
    tab = pd.read_csv(out / "results.csv")
    assert sorted(tab.recording.unique()) == ["gappy#1", "gappy#2"]
    # one correction family spans both segments, and times are file times
    assert (tab.family == "2 tests of plv across 2 recordings").all()
    second = tab[tab.recording == "gappy#2"].iloc[0]
    assert second.window_start_s > 150 and tab[tab.recording == "gappy#1"].iloc[0].window_start_s < 5


def test_analyze_an_edf_recording_with_beat_annotations(tmp_path):
    # an EDF+ file written by pyedflib (the format's own library): a breathing-like trace
    # and R-peak annotations of a simulated beat train locked 4:1 to it
    pyedflib = pytest.importorskip("pyedflib")
    from syncstats.simulate import scenario

    sc = scenario("beats", coupled=True, duration=200.0, fs=20.0, rng=4)
    breath = sc.signals["breath"] / np.max(np.abs(sc.signals["breath"]))
    path = tmp_path / "night.edf"
    w = pyedflib.EdfWriter(str(path), 1, file_type=pyedflib.FILETYPE_EDFPLUS)
    w.setSignalHeaders([dict(label="resp", dimension="au", sample_frequency=20.0, physical_max=1.5,
                             physical_min=-1.5, digital_max=32767, digital_min=-32768)])
    w.writeSamples([breath])
    for t in sc.events["heart"]:
        w.writeAnnotation(float(t), -1, "R")
    w.close()
    out = tmp_path / "res"
    # the pair is named so that 4:1 reads "R makes 4 beats while resp makes 1 cycle"
    assert main(["analyze", str(path), "--annotation", "R", "--pair", "R", "resp", "--ratios", "4:1,5:1",
                 "--surrogate", "iaaft",
                 "--n-surrogates", "39", "--seed", "1", "--n-bootstrap", "0", "--out", str(out), "--quiet"]) == 0
    tab = pd.read_csv(out / "results.csv")
    assert set(tab.signal_a) == {"R"} and set(tab.signal_b) == {"resp"}
    four = tab[tab.ratio == "4:1"].iloc[0]
    assert four.value > 0.8 and four.significant


def test_json_summary_on_stdout(sim_dir, tmp_path, capsys):
    out = tmp_path / "js"
    assert main(["analyze", str(sim_dir / "recording.csv"), "--surrogate", "fourier", "--n-surrogates", "39",
                 "--ratios", "1:1,2:1", "--correction", "max_stat", "--n-bootstrap", "0", "--seed", "1",
                 "--out", str(out), "--json",
                 "--quiet"]) == 0
    got = json.loads(capsys.readouterr().out)
    tab = pd.read_csv(out / "results.csv")
    assert got["rows"] == len(tab) and got["tested"] is True
    assert got["significant"] == int(tab.significant.sum())
    assert [r["ratio"] for r in got["locked"]] == list(tab.ratio[tab.locked == True])  # noqa: E712
    assert got["locked"] and got["locked"][0]["ratio"] == "1:1"  # the simulated pair locks 1:1
