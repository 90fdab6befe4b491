"""Nothing lost, nothing silent: output folders, interrupts, spreadsheet-safe cells, privacy.

Check values from outside the project: POSIX ``rename`` replaces an empty directory and
fails on a non-empty one (POSIX.1-2017, rename()); POSIX record locks (``lockf``) are
dropped when their process ends; the shell convention that a run ended by an interrupt
exits 128 + 2 = 130 (common practice); spreadsheets run a cell starting with ``=``,
``+``, ``-``, ``@``, tab or carriage return as a formula, and a leading single quote
makes them show it as text (common practice, the OWASP-style rule against CSV formula
injection). Data come from the project's simulators; every run is seeded.
"""
import dataclasses
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import syncstats
from syncstats._atomic import OutputFolder, write_folder_atomically
from syncstats._errors import SyncstatsInputError, SyncstatsWarning
from syncstats.cli import main
from syncstats.report import read_results_csv, save_result, write_results_csv
from syncstats.report._methods import methods_text
from syncstats.run import map_batches

LINUX = sys.platform.startswith("linux") and Path("/proc/self/stat").exists()
#: generous bound for honouring a stop on a loaded 2-core machine (the issue: "a few seconds")
STOP_BOUND_S = 20.0


@pytest.fixture(scope="module")
def rec(tmp_path_factory):
    d = tmp_path_factory.mktemp("safety_in") / "sim"
    assert main(["simulate", "--kind", "phase", "--duration", "120", "--fs", "10", "--seed", "5", "--out", str(d)]) == 0
    return d / "recording.csv"


@pytest.fixture(scope="module")
def small_result():
    rng = np.random.default_rng(8)
    t = np.arange(0, 60, 0.1)
    sig = {"a": np.sin(2 * np.pi * 0.5 * t) + 0.1 * rng.standard_normal(t.size),
           "b": np.sin(2 * np.pi * 0.5 * t + 1) + 0.1 * rng.standard_normal(t.size)}
    return syncstats.analyze(sig, fs=10.0, n_surrogates=0, n_bootstrap=0, rng=8)


def _listing(folder: Path) -> list:
    return sorted(p.name for p in folder.iterdir())


def _build(files=("a.txt",)):
    def build(tmp):
        for f in files:
            (tmp / f).write_text("x")
    return build


# --------------------------------------------------------------------------- publication


def test_reservation_creates_then_publishes_and_leaves_nothing_else(tmp_path):
    with OutputFolder(tmp_path / "new" / "run") as res:
        assert (tmp_path / "new" / "run").is_dir()  # claimed at once
        assert (tmp_path / "new" / ".run.syncstats-lock").exists()
        res.publish(_build())
    assert _listing(tmp_path / "new") == ["run"]
    assert _listing(tmp_path / "new" / "run") == ["a.txt"]


def test_released_reservation_removes_only_what_it_made(tmp_path):
    res = OutputFolder(tmp_path / "p" / "q" / "run")
    res.release()
    assert _listing(tmp_path) == []


def test_second_claim_on_one_target_is_refused(tmp_path):
    with OutputFolder(tmp_path / "run"):
        with pytest.raises(SyncstatsInputError, match="another syncstats run"):
            OutputFolder(tmp_path / "run")
    assert _listing(tmp_path) == []


@pytest.mark.parametrize("meddle", ["file-inside", "own-folder", "own-empty-folder"])
def test_a_folder_appearing_at_out_during_a_run_is_never_lost(rec, tmp_path, monkeypatch, capsys, meddle):
    """Someone writes at --out while the analysis runs (here: from inside the writer)."""
    import syncstats.report._save as save_mod

    out = tmp_path / "res"
    real = save_mod._table.write_results_csv

    def meddling_writer(result, path):
        if meddle == "file-inside":
            (out / "theirs.txt").write_text("theirs")
        else:
            os.rmdir(out)
            out.mkdir()
            if meddle == "own-folder":
                (out / "theirs.txt").write_text("theirs")
        return real(result, path)

    monkeypatch.setattr(save_mod._table, "write_results_csv", meddling_writer)
    rc = main(["analyze", str(rec), "--n-surrogates", "0", "--n-bootstrap", "0", "--quiet", "--out", str(out)])
    err = capsys.readouterr().err
    assert rc == 2 and err.startswith("syncstats: error: --out") and err.count("\n") == 1, err
    assert _listing(tmp_path) == ["res"]  # no partial folder, no lock
    assert _listing(out) == ([] if meddle == "own-empty-folder" else ["theirs.txt"])


def test_two_runs_to_one_target_exactly_one_wins(rec, tmp_path):
    out = tmp_path / "res"
    cmd = [sys.executable, "-m", "syncstats", "analyze", str(rec), "--surrogate", "fourier", "--n-surrogates", "199",
           "--n-bootstrap", "0", "--seed", "1", "--quiet", "--out", str(out)]
    procs = [subprocess.Popen(cmd, stderr=subprocess.PIPE, text=True) for _ in range(2)]
    results = [(p.wait(timeout=600), p.stderr.read()) for p in procs]
    codes = sorted(rc for rc, _ in results)
    assert codes == [0, 2], results
    loser = next(err for rc, err in results if rc == 2)
    # the loser either met the lock or, if it came late, the finished folder
    assert ("another syncstats run" in loser or "--overwrite" in loser) and "Traceback" not in loser
    assert _listing(tmp_path) == ["res"]
    assert _listing(out) == ["methods.md", "provenance.json", "report.html", "results.csv"]


def test_overwrite_replaces_only_after_the_new_folder_is_complete(tmp_path):
    out = tmp_path / "run"
    out.mkdir()
    (out / "old.txt").write_text("old")
    seen = []

    def build(tmp):
        seen.append(_listing(out))  # the old folder is still in place while building
        (tmp / "new.txt").write_text("new")

    write_folder_atomically(out, build, overwrite=True)
    assert seen == [["old.txt"]] and _listing(out) == ["new.txt"] and _listing(tmp_path) == ["run"]


def test_overwrite_onto_a_symlink_is_refused_and_leaves_no_link(tmp_path):
    real = tmp_path / "real"
    real.mkdir()
    (real / "keep.txt").write_text("keep")
    (tmp_path / "link").symlink_to(real)
    with pytest.raises(SyncstatsInputError, match="symbolic link"):
        write_folder_atomically(tmp_path / "link", _build(), overwrite=True)
    assert _listing(tmp_path) == ["link", "real"] and _listing(real) == ["keep.txt"]


def test_stale_partial_of_a_killed_run_is_removed_and_old_is_named(tmp_path):
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    pid = int(dead.stdout)  # a process that has ended
    stale = tmp_path / f".run.partial-{pid}-abcd1234"
    stale.mkdir()
    (stale / "results.csv").write_text("half")
    old = tmp_path / f".run.old-{pid}-abcd1234"
    old.mkdir()
    (old / "earlier.csv").write_text("only copy")
    with pytest.warns(SyncstatsWarning, match=r"\.run\.old-"):
        write_folder_atomically(tmp_path / "run", _build())
    assert _listing(tmp_path) == [old.name, "run"]  # the partial went, the earlier results stayed
    assert (old / "earlier.csv").read_text() == "only copy"


def test_python_wording_for_a_non_empty_folder(small_result, tmp_path):
    out = tmp_path / "run"
    out.mkdir()
    (out / "x").write_text("x")
    with pytest.raises(SyncstatsInputError, match=r"overwrite=True") as ei:
        small_result.save(out)
    assert "--" not in str(ei.value)


# --------------------------------------------------------------------------- interrupts


def _children(pid: int) -> set:
    kids = set()
    for d in Path("/proc").iterdir():
        if d.name.isdigit():
            try:
                fields = (d / "stat").read_text().rsplit(")", 1)[1].split()
            except OSError:
                continue
            if int(fields[1]) == pid:
                kids.add(int(d.name))
    return kids


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state not in ("Z", "X")


@pytest.mark.skipif(not LINUX, reason="reads worker processes from /proc")
@pytest.mark.parametrize("signals", [("SIGINT",), ("SIGTERM",), ("SIGINT", "SIGINT")],
                         ids=["ctrl-c", "sigterm", "ctrl-c-twice"])
def test_stop_signal_to_the_process_group_ends_run_and_workers(rec, tmp_path, signals):
    out = tmp_path / "res"
    p = subprocess.Popen([sys.executable, "-m", "syncstats", "analyze", str(rec), "--jobs", "2", "--n-surrogates",
                          "5000", "--seed", "2", "--quiet", "--out", str(out)],
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, start_new_session=True)
    try:
        workers = set()
        deadline = time.monotonic() + 300
        while len(workers) < 2 and p.poll() is None and time.monotonic() < deadline:
            workers = _children(p.pid)  # workers start with the first batch: computing has begun
            time.sleep(0.2)
        assert p.poll() is None and len(workers) >= 2, "the run never started its workers"
        time.sleep(0.5)
        t0 = time.monotonic()
        for name in signals:
            os.killpg(p.pid, getattr(signal, name))
            time.sleep(0.2)
        _, err = p.communicate(timeout=STOP_BOUND_S)
        took = time.monotonic() - t0
    finally:
        if p.poll() is None:
            os.killpg(p.pid, signal.SIGKILL)
            p.wait()
    assert p.returncode == 130, err
    assert took <= STOP_BOUND_S
    assert "Traceback" not in err, err
    assert "nothing was written" in err or "exiting now" in err, err
    assert _listing(tmp_path) == []  # no output folder, no partial folder, no lock
    time.sleep(0.5)
    assert not [w for w in workers if _alive(w)]


def test_sigterm_while_writing_leaves_nothing(rec, tmp_path, monkeypatch, capsys):
    import syncstats.report._save as save_mod

    real = save_mod._methods.write_methods_md

    def writer_then_stop(result, path):
        real(result, path)
        os.kill(os.getpid(), signal.SIGTERM)  # arrives half-way through the output files
        time.sleep(5)  # the handler interrupts this sleep
        raise AssertionError("the stop was not honoured")

    monkeypatch.setattr(save_mod._methods, "write_methods_md", writer_then_stop)
    before = signal.getsignal(signal.SIGTERM)
    rc = main(["analyze", str(rec), "--n-surrogates", "0", "--n-bootstrap", "0", "--quiet", "--out",
               str(tmp_path / "res")])
    err = capsys.readouterr().err
    assert rc == 130 and err == "syncstats: stopped by SIGTERM; nothing was written.\n"
    assert _listing(tmp_path) == []
    assert signal.getsignal(signal.SIGTERM) is before  # the caller's handler is back


def _slow_or_fail(b):
    if b[0] == 0:
        raise RuntimeError("batch failed on purpose")
    time.sleep(60)
    return b


@pytest.mark.skipif(not LINUX, reason="reads worker processes from /proc")
def test_a_failed_batch_ends_the_workers_at_once():
    t0 = time.monotonic()
    with pytest.raises(RuntimeError, match="on purpose"):
        map_batches(_slow_or_fail, [(i, i + 1) for i in range(6)], executor="processes", n_jobs=2)
    assert time.monotonic() - t0 <= STOP_BOUND_S  # not after the 60 s batches
    time.sleep(0.5)
    assert not [w for w in _children(os.getpid()) if _alive(w)]


# --------------------------------------------------------------------------- cells, text, privacy

HOSTILE = ["=HYPERLINK(\"http://x\")", "+1+1", "-2", "@SUM(A1)", "\tlead-tab", "\rlead-cr", "'quoted", "plain",
           "x=1"]


def test_text_cells_cannot_run_as_formulas_and_read_back_exactly(small_result, tmp_path):
    tab = small_result.table
    rows = [tab.iloc[[0]].assign(signal_a=h, signal_b=h, recording=h) for h in HOSTILE]
    big = pd.concat(rows, ignore_index=True)
    r = dataclasses.replace(small_result, table=big)
    path = write_results_csv(r, tmp_path / "results.csv")
    raw = pd.read_csv(path, dtype=str, keep_default_na=False)
    for col in ("signal_a", "recording"):
        for cell in raw[col]:
            assert not cell.startswith(("=", "+", "-", "@", "\t", "\r")), repr(cell)
    assert list(raw["signal_a"][:4]) == ["'" + h for h in HOSTILE[:4]]
    assert raw["signal_a"][7] == "plain" and raw["signal_a"][8] == "x=1"
    back = read_results_csv(path)
    assert list(back["signal_a"]) == HOSTILE and list(back["recording"]) == HOSTILE
    assert (back["value"].to_numpy() == big["value"].to_numpy()).all()  # numbers are never quoted


def test_methods_text_escapes_labels(small_result):
    tab = small_result.table.assign(signal_a="<b>*x*</b>", signal_b="a_[b](c)")
    txt = methods_text(dataclasses.replace(small_result, table=tab))
    assert "<b>" not in txt and "&lt;b&gt;" in txt
    assert r"\*x\*" in txt and r"a\_\[b\](c)" in txt


def test_provenance_keeps_paths_as_given_unless_asked(small_result, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "in.csv").write_text("t,a\n0,1\n")
    r = dataclasses.replace(small_result, inputs=("in.csv",))
    plain = json.loads((save_result(r, "o1") / "provenance.json").read_text())
    assert plain["inputs"][0]["path"] == "in.csv" and "absolute_path" not in plain["inputs"][0]
    assert "executable" not in plain["python"] and str(tmp_path) not in json.dumps(plain)
    full = json.loads((save_result(r, "o2", record_paths=True) / "provenance.json").read_text())
    assert full["inputs"][0]["absolute_path"] == str(tmp_path / "in.csv")
    assert full["python"]["executable"] == sys.executable
    assert plain["inputs"][0]["sha256"] == full["inputs"][0]["sha256"]
