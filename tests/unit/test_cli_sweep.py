"""Refusals through the command line, in a subprocess and in-process, from one table.

Each case must end with exit status 2, exactly one line "syncstats: error: ..." on
stderr, no traceback, nothing left behind in the working folder, and the input file
byte-for-byte unchanged. Input data come from the project's own simulator.
"""
import hashlib
import os
import subprocess
import sys
from pathlib import Path

import pytest

from syncstats.cli import main

ROOT = os.geteuid() == 0 if hasattr(os, "geteuid") else False


@pytest.fixture(scope="module")
def rec(tmp_path_factory):
    d = tmp_path_factory.mktemp("sweep_in") / "sim"
    assert main(["simulate", "--kind", "phase", "--duration", "120", "--fs", "10", "--seed", "4", "--out", str(d)]) == 0
    return d / "recording.csv"


def _listing(folder: Path) -> list:
    return sorted(str(p.relative_to(folder)) + ("@" if p.is_symlink() else "") for p in folder.rglob("*"))


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _setup_under_file(w):
    (w / "afile").write_text("x")
    return ["--out", "afile/res"]


def _setup_readonly(w):
    (w / "ro").mkdir()
    os.chmod(w / "ro", 0o555)
    return ["--out", "ro/res"]


def _setup_symlink_empty(w):
    (w / "empty").mkdir()
    os.symlink(w / "empty", w / "link")
    return ["--out", "link"]


def _setup_dangling(w):
    os.symlink(w / "nowhere", w / "link")
    return ["--out", "link"]


def _setup_symlink_overwrite(w):
    (w / "old").mkdir()
    (w / "old" / "keep.txt").write_text("mine")
    os.symlink(w / "old", w / "link")
    return ["--out", "link", "--overwrite"]


def _setup_nonempty(w):
    (w / "res").mkdir()
    (w / "res" / "keep.txt").write_text("mine")
    return ["--out", "res"]


def _setup_file_as_out(w):
    (w / "res").write_text("a file")
    return ["--out", "res", "--overwrite"]


def _setup_input_inside(w):
    # --out is the folder holding the input itself
    return ["--out", "INPUTDIR", "--overwrite"]


def _cfg(text):
    def setup(w):
        (w / "c.toml").write_text(text)
        return ["--out", "res", "--config", "c.toml"]
    return setup


def _plain(*opts):
    return lambda w: ["--out", "res", *opts]


# (id, setup -> extra argv, words the one sentence must contain)
CASES = [
    ("out-under-file", _setup_under_file, ["afile", "file"]),
    ("out-read-only-parent", _setup_readonly, ["read-only"]),
    ("out-in-proc", lambda w: ["--out", "/proc/syncstats-sweep-out"], ["/proc"]),
    ("out-name-too-long", lambda w: ["--out", "x" * 300], ["too long"]),
    ("out-symlink-to-empty-folder", _setup_symlink_empty, ["symbolic link"]),
    ("out-dangling-symlink", _setup_dangling, ["symbolic link"]),
    ("out-symlink-with-overwrite", _setup_symlink_overwrite, ["symbolic link"]),
    ("out-not-empty", _setup_nonempty, ["--overwrite", "--out"]),
    ("out-is-a-file", _setup_file_as_out, ["is a file"]),
    ("out-holds-the-input", _setup_input_inside, ["input file"]),
    ("out-dot", lambda w: ["--out", "."], ["folder name"]),
    ("config-unknown-key", _cfg("nonsense = 1\n"), ["c.toml", "unknown"]),
    ("config-not-toml", _cfg("this is = = not toml\n"), ["c.toml", "TOML"]),
    ("config-bad-value", _cfg("n_surrogates = 'many'\n"), ["n_surrogates"]),
    ("config-missing", lambda w: ["--out", "res", "--config", "none.toml"], ["none.toml"]),
    ("ratios-empty", _plain("--ratios", ""), ["ratio"]),
    ("ratio-23-digits", _plain("--ratios", "12345678901234567890123:1"), ["ratio"]),
    ("windows-nan", _plain("--windows", "nan"), ["--windows"]),
    ("n-surrogates-negative", _plain("--n-surrogates", "-1"), ["--n-surrogates"]),
    ("events-without-name", _plain("--events", "=beats.txt"), ["--events"]),
    ("band-unknown-signal", _plain("--band", "unknown=1-2"), ["unknown"]),
    ("input-missing", lambda w: ["--out", "res", "INPUT=missing.csv"], ["missing.csv"]),
]


def _argv(rec, work, extra):
    inp = str(rec)
    args = []
    for a in extra:
        if a == "INPUTDIR":
            args.append(str(rec.parent))
        elif a.startswith("INPUT="):
            inp = a.split("=", 1)[1]
        else:
            args.append(a)
    return ["analyze", inp, "--n-surrogates", "0", "--n-bootstrap", "0", "--quiet", *args]


def _check(rc, err, words, work, before, rec, rec_sha, rec_listing):
    assert rc == 2, err
    assert "Traceback" not in err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    errors = [ln for ln in lines if ln.startswith("syncstats: error:")]
    assert len(errors) == 1 and len(lines) == 1, err
    line = errors[0]
    assert line.rstrip().endswith("."), line
    assert "overwrite=True" not in line and "pass " not in line  # command-line words only
    for w in words:
        assert w in line, line
    assert _listing(work) == before  # no folder, partial folder or lock left behind
    assert _sha(rec) == rec_sha and _listing(rec.parent) == rec_listing  # inputs untouched


def _prepare(request, rec, tmp_path, setup):
    name = request.node.callspec.id.split("-", 1)[-1]
    if "read-only" in name and ROOT:
        pytest.skip("root writes into read-only folders; the case needs an ordinary user")
    if "proc" in name and not Path("/proc").is_dir():
        pytest.skip("no /proc on this system")
    work = tmp_path / "work"
    work.mkdir()
    extra = setup(work)
    return work, _argv(rec, work, extra), _listing(work), _sha(rec), _listing(rec.parent)


@pytest.mark.parametrize("case_id,setup,words", CASES, ids=[f"inproc-{c[0]}" for c in CASES])
def test_refusal_in_process(request, rec, tmp_path, capsys, monkeypatch, case_id, setup, words):
    work, argv, before, sha, rec_listing = _prepare(request, rec, tmp_path, setup)
    monkeypatch.chdir(work)
    rc = main(argv)
    err = capsys.readouterr().err
    _check(rc, err, words, work, before, rec, sha, rec_listing)


#: a real process for every --out case and one of each other kind (each costs an interpreter start)
SUBPROCESS_CASES = [c for c in CASES if c[0].startswith("out-") or c[0] in ("config-not-toml", "windows-nan",
                                                                              "input-missing")]


@pytest.mark.parametrize("case_id,setup,words", SUBPROCESS_CASES, ids=[f"subproc-{c[0]}" for c in SUBPROCESS_CASES])
def test_refusal_in_subprocess(request, rec, tmp_path, case_id, setup, words):
    work, argv, before, sha, rec_listing = _prepare(request, rec, tmp_path, setup)
    r = subprocess.run([sys.executable, "-m", "syncstats", *argv], cwd=work, capture_output=True, text=True,
                       timeout=300)
    _check(r.returncode, r.stderr, words, work, before, rec, sha, rec_listing)
