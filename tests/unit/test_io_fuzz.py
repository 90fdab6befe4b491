"""Property-based tests of syncstats.io (hypothesis, derandomized so every run is the same).

What must hold for any input:

* the common-grid step (``_grid._finish``) returns gap-free Recordings whose signals start
  and end at the same instant, are pieces of the input (never interpolated), cover every
  complete time step of the input once, never cross a break in the data, and are at least
  ``min_segment_s`` long when the file was split;
* a table with missing rows or empty cells splits into exactly the runs of complete rows;
* a Recording that ``write_recording_csv`` accepts reads back with the same names, values
  and rate (whatever the signal names), and a refused one leaves no file behind;
* any text or damaged binary file either reads into well-formed Recordings or raises
  ``SyncstatsInputError`` with one sentence naming the file, and is never modified.

Inputs are invented (random numbers); the expected segments are worked out here from
the definition in DEVELOPERS.md (cells of width 1/g, g = gcd of the rates), not from the
code under test.
"""
from __future__ import annotations

import math
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from syncstats._errors import SyncstatsInputError
from syncstats.io import (Recording, read_events, read_recording, read_segments,
                          write_recording_csv)
from syncstats.io._common import _Block, _Source
from syncstats.io._grid import _finish

FUZZ = settings(derandomize=True, database=None, deadline=None, max_examples=100,
                suppress_health_check=[HealthCheck.too_slow])
#: tests that write and read a file per example (about 30 ms each)
FILE_FUZZ = settings(FUZZ, max_examples=50)


# ----------------------------------------------------------------------------- common grid

@st.composite
def sources(draw):
    """A loaded source: 1-3 signals at rates g*m_i, NaN runs, optional breaks and events.

    Signal lengths may end inside a grid cell (a format loader that does not cut records
    to a common end could hand over such data).
    """
    g = Fraction(draw(st.sampled_from([1, 2, 5, 10, 25])), draw(st.sampled_from([1, 2, 3])))
    per_cell = draw(st.lists(st.sampled_from([1, 2, 3, 4, 10]), min_size=1, max_size=3))
    n_cells = draw(st.integers(1, 40))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    signals, rates = {}, {}
    for j, m in enumerate(per_cell):
        x = rng.standard_normal(n_cells * m - draw(st.integers(0, m - 1)))
        for _ in range(draw(st.integers(0, 2))):
            a = draw(st.integers(0, len(x) - 1))
            x[a:a + draw(st.integers(1, 3))] = np.nan
        signals[f"s{j}"], rates[f"s{j}"] = x, g * m
    blocks = None
    if n_cells > 1 and draw(st.booleans()):
        cuts = draw(st.lists(st.integers(1, n_cells - 1), min_size=1, max_size=3, unique=True))
        edges = [0, *sorted(cuts), n_cells]
        onset, blocks = 0.0, []
        for a, b in zip(edges[:-1], edges[1:]):
            blocks.append(_Block(Fraction(a) / g, Fraction(b) / g, onset))
            onset += float(Fraction(b - a) / g) + draw(st.sampled_from([0.5, 3.0]))
    events = {}
    if draw(st.booleans()):
        events["beats"] = np.unique(rng.uniform(0, 2 * n_cells / float(g), draw(st.integers(1, 8))))
    return _Source(path=Path("/data/rec.edf"), name="rec", kind="EDF", signals=signals,
                   rates=rates, events=events, blocks=blocks)


def _expected_cells(src):
    """Good cells by the definition: every sample of every signal in the cell is finite;
    only cells that every signal fills completely; runs do not cross a block break."""
    den = math.lcm(*(r.denominator for r in src.rates.values()))
    g = Fraction(math.gcd(*(int(r * den) for r in src.rates.values())), den)
    per_cell = {n: int(r / g) for n, r in src.rates.items()}
    n_cells = min(len(x) // per_cell[n] for n, x in src.signals.items())
    good = [all(np.isfinite(x[c * per_cell[n]:(c + 1) * per_cell[n]]).all()
                for n, x in src.signals.items()) for c in range(n_cells)]
    breaks = {0, n_cells}
    for b in src.blocks or []:
        breaks.add(min(int(b.data_start * g), n_cells))
    runs, start = [], None
    for c in range(n_cells + 1):
        inside = c < n_cells and good[c] and not (c in breaks and start is not None)
        if start is not None and not inside:
            runs.append((start, c))
            start = None
        if c < n_cells and good[c] and start is None:
            start = c
    return g, per_cell, runs


@FUZZ
@given(src=sources(), min_segment_s=st.sampled_from([0.0, 0.4, 2.0]))
@example(  # a signal ending inside the last cell once gave a segment shorter than min_segment_s
    src=_Source(path=Path("/data/rec.edf"), name="rec", kind="EDF",
                signals={"a": np.arange(21.0), "b": np.r_[0.0, 1.0, np.nan, np.arange(9.0)]},
                rates={"a": Fraction(2), "b": Fraction(1)}),
    min_segment_s=7.5,
)
def test_grid_segments_are_the_complete_good_cells(src, min_segment_s):
    g, per_cell, runs = _expected_cells(src)
    kept = [r for r in runs if float(Fraction(r[1] - r[0]) / g) >= min_segment_s]
    whole = runs == [(0, min(len(x) // per_cell[n] for n, x in src.signals.items()))]
    target = None if len(set(src.rates.values())) == 1 else float(g)
    try:
        recs = _finish(src, name=None, resample_to=target, gaps="split",
                       min_segment_s=min_segment_s, extra_events={})
    except SyncstatsInputError as err:
        assert not (kept or whole), err
        assert "rec.edf" in str(err) and "\n" not in str(err)
        return
    expected = runs if whole else kept
    assert len(recs) == len(expected)
    for rec, (a, b) in zip(recs, expected):
        assert rec.name == ("rec" if whole else f"rec#{expected.index((a, b)) + 1}")
        for n, x in src.signals.items():
            m = per_cell[n]
            y = rec.signals[n]
            if target is None:  # one rate: the samples themselves, in place
                np.testing.assert_array_equal(y, x[a * m:b * m])
            assert len(y) == (b - a) * (m if target is None else 1)
            assert np.isfinite(y).all()
        dur = len(next(iter(rec.signals.values()))) / rec.fs
        assert dur == pytest.approx(float(Fraction(b - a) / g))
        if not whole:
            assert dur >= min_segment_s - 1e-12
            for et in rec.events.values():
                assert np.all((et >= 0) & (et < dur))


# ----------------------------------------------------------------------------- tables with gaps

@st.composite
def gappy_tables(draw):
    """A regular table (time_s + 1-3 columns) with up to two runs of missing rows and up
    to three runs of empty cells; at least 20 rows, so most steps are regular."""
    fs = draw(st.sampled_from([0.5, 1.0, 4.0, 7.5, 100.0, 250.0, 1000.0]))
    n = draw(st.integers(20, 120))
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    data = rng.standard_normal((draw(st.integers(1, 3)), n))
    keep = np.ones(n, dtype=bool)
    for _ in range(draw(st.integers(0, 2))):
        a = draw(st.integers(0, n - 1))
        keep[a:a + draw(st.integers(1, 4))] = False
    for _ in range(draw(st.integers(0, 3))):
        a = draw(st.integers(0, n - 1))
        data[draw(st.integers(0, len(data) - 1)), a:a + draw(st.integers(1, 4))] = np.nan
    t0 = draw(st.sampled_from([0.0, 12.5, 3600.0]))
    return fs, t0, data, keep


@FILE_FUZZ
@given(table=gappy_tables())
def test_table_segments_are_the_runs_of_complete_rows(tmp_path_factory, table):
    import pandas as pd

    fs, t0, data, keep = table
    path = tmp_path_factory.mktemp("gappy") / "g.csv"
    frame = pd.DataFrame({"time_s": t0 + np.arange(keep.size)[keep] / fs,
                          **{f"x{j}": row[keep] for j, row in enumerate(data)}})
    frame.to_csv(path, index=False)  # pandas writes floats that read back exactly
    good = keep & np.isfinite(data).all(axis=0)
    edges = np.flatnonzero(np.diff(np.r_[0, good.astype(np.int8), 0]))
    runs = list(zip(edges[0::2].tolist(), edges[1::2].tolist()))
    if not np.isfinite(data[:, keep]).any(axis=1).all():  # a column with no value at all
        with pytest.raises(SyncstatsInputError, match=r"g\.csv.*no valid sample"):
            read_segments(path, gaps="split", min_segment_s=0)
        return
    recs = read_segments(path, gaps="split", min_segment_s=0)
    whole = len(runs) == 1 and good.sum() == keep.sum()
    assert len(recs) == len(runs)
    for rec, (a, b) in zip(recs, runs):
        assert rec.fs == pytest.approx(fs, rel=1e-9)
        assert rec.name == ("g" if whole else f"g#{runs.index((a, b)) + 1}")
        for j, row in enumerate(data):
            np.testing.assert_array_equal(rec.signals[f"x{j}"], row[a:b])


# ----------------------------------------------------------------------------- CSV writer

@FILE_FUZZ
@given(names=st.lists(st.text(st.characters(exclude_categories=("Cs",)), max_size=6),
                      min_size=1, max_size=3, unique=True),
       n=st.integers(1, 5), fs=st.sampled_from([1 / 3, 1.0, 7.5, 250.0, 1e6]), data=st.data())
def test_written_csv_reads_back_exactly_or_is_refused(tmp_path_factory, names, n, fs, data):
    # magnitudes the readers accept (they refuse values of 1e100 and more: overflow in filtering)
    values = st.lists(st.floats(min_value=-1e99, max_value=1e99, allow_nan=False), min_size=n, max_size=n)
    signals = {k: np.array(data.draw(values, label=f"signal {k!r}")) for k in names}
    folder = tmp_path_factory.mktemp("written")
    try:
        path = write_recording_csv(Recording(name="sim", signals=signals, fs=fs), folder / "w.csv")
    except SyncstatsInputError as err:
        assert "\n" not in str(err) and list(folder.iterdir()) == []
        return
    back = read_recording(path)
    assert list(back.signals) == names
    for k in names:
        np.testing.assert_array_equal(back.signals[k], signals[k])
    assert back.fs == pytest.approx(fs, rel=1e-12)


# ----------------------------------------------------------------------------- any file

def _check_outcome(read, path: Path) -> None:
    """``read()`` gives well-formed Recordings / event times, or a one-sentence
    SyncstatsInputError naming the file; the files in the folder are not modified."""
    folder = path.parent
    before = {p.name: p.read_bytes() for p in folder.iterdir()}
    try:
        out = read()
    except SyncstatsInputError as err:
        msg = str(err)
        assert "\n" not in msg and len(msg) < 600, msg
        assert str(folder) in msg, msg
    else:
        if isinstance(out, np.ndarray):  # read_events
            assert out.ndim == 1 and out.size and np.isfinite(out).all()
            assert np.all(np.diff(out) > 0)
        for rec in out if isinstance(out, list) else []:
            assert rec.signals or rec.events
            if rec.signals:
                assert rec.fs > 0 and np.isfinite(rec.fs)
                assert len({len(x) for x in rec.signals.values()}) == 1
            for x in rec.signals.values():
                assert x.dtype == np.float64 and x.size and np.isfinite(x).all()
    assert {p.name: p.read_bytes() for p in folder.iterdir()} == before


_TOKENS = ["time_s", "t", "time_ms", "x", "y", "Unnamed: 0", "", " ", "0", "0.01", "0.02",
           "0.5", "1", "-1", "1e308", "1e-320", "nan", "inf", "-0", "abc", "1,5", '"', "#",
           "2024-01-01T00:00:00", "2024-01-01T00:00:00.01", "True", "0x10", "é", "\x00"]


@st.composite
def text_tables(draw):
    sep = draw(st.sampled_from([",", ";", "\t", "|", " "]))
    width = draw(st.integers(1, 4))
    rows = draw(st.lists(st.lists(st.sampled_from(_TOKENS), min_size=width,
                                  max_size=width + 1), max_size=8))
    ending = draw(st.sampled_from(["", "\n", "\r\n"]))
    return "\n".join(sep.join(r) for r in rows) + ending


@FILE_FUZZ
@given(text=text_tables(), suffix=st.sampled_from([".csv", ".tsv", ".txt"]),
       fs=st.sampled_from([None, 2.0]))
def test_any_text_file_reads_or_gives_one_sentence(tmp_path_factory, text, suffix, fs):
    path = tmp_path_factory.mktemp("text") / f"f{suffix}"
    path.write_text(text, encoding="utf-8")
    _check_outcome(lambda: read_segments(path, fs=fs, gaps="split", min_segment_s=0), path)
    _check_outcome(lambda: read_events(path), path)


@pytest.fixture(scope="module")
def intact_files(tmp_path_factory):
    """One small valid file per binary format, written by the format's own library."""
    edfio = pytest.importorskip("edfio")
    wfdb = pytest.importorskip("wfdb")
    import pandas as pd

    folder = tmp_path_factory.mktemp("intact")
    t = np.arange(300) / 100.0
    a, b = np.sin(2 * np.pi * t), np.cos(2 * np.pi * 0.3 * t)
    edfio.Edf([edfio.EdfSignal(a, 100, label="a", physical_range=(-2, 2)),
               edfio.EdfSignal(b[::2], 50, label="b", physical_range=(-2, 2))]).write(folder / "r.edf")
    pd.DataFrame({"time_s": t, "a": a}).to_parquet(folder / "r.parquet")
    wfdb.wrsamp("r", fs=100, units=["mV", "mV"], sig_name=["a", "b"], p_signal=np.c_[a, b],
                fmt=["16", "16"], write_dir=str(folder))
    return {name: (folder / name).read_bytes() for name in ("r.edf", "r.parquet", "r.hea", "r.dat")}


@FILE_FUZZ
@given(data=st.data())
def test_damaged_binary_file_reads_or_gives_one_sentence(tmp_path_factory, intact_files, data):
    name = data.draw(st.sampled_from(sorted(intact_files)), label="file")
    raw = bytearray(intact_files[name])
    head = min(len(raw), 1024)  # headers sit at the start: damage them more often
    for _ in range(data.draw(st.integers(1, 6), label="bytes changed")):
        i = data.draw(st.one_of(st.integers(0, head - 1), st.integers(0, len(raw) - 1)))
        raw[i] = data.draw(st.integers(0, 255))
    if data.draw(st.booleans(), label="truncate"):
        raw = raw[:data.draw(st.integers(1, len(raw)))]
    folder = tmp_path_factory.mktemp("damaged")
    if name in ("r.hea", "r.dat"):  # a WFDB record: header and signal file, one damaged
        for part in ("r.hea", "r.dat"):
            (folder / part).write_bytes(intact_files[part])
    (folder / name).write_bytes(bytes(raw))
    path = folder / ("r.hea" if name == "r.dat" else name)
    _check_outcome(lambda: read_segments(path, resample_to=100.0, gaps="split",
                                         min_segment_s=0), path)


def test_edited_wfdb_header_reads_or_gives_one_sentence(tmp_path, intact_files):
    """A WFDB header is text: drop or replace each field of each line in turn (exhaustive)."""
    lines = intact_files["r.hea"].decode().splitlines()
    for k, line in enumerate(lines):
        fields = line.split(" ")
        for j in range(len(fields)):
            for new in ([], ["0"], ["-1"], ["x"]):
                edited = list(lines)
                edited[k] = " ".join(fields[:j] + new + fields[j + 1:])
                folder = tmp_path / f"{k}-{j}-{'_'.join(new)}"
                folder.mkdir()
                (folder / "r.hea").write_text("\n".join(edited) + "\n")
                (folder / "r.dat").write_bytes(intact_files["r.dat"])
                _check_outcome(lambda: read_segments(folder / "r.hea", gaps="split",
                                                     min_segment_s=0), folder / "r.hea")


def _edf_header_fields(raw: bytes) -> list[tuple[str, int, int]]:
    """(name, offset, width) of every EDF header field: 256 bytes of record fields, then
    256 bytes per signal, each field stored for all signals in turn (layout of the EDF
    specification, Kemp et al. 1992, recalled from memory and checked in the test below
    against the fields edfio wrote)."""
    ns = int(raw[252:256])
    record = [("version", 8), ("patient", 80), ("recording", 80), ("start date", 8),
              ("start time", 8), ("header bytes", 8), ("reserved", 44), ("records", 8),
              ("record duration", 8), ("signals", 4)]
    signal = [("label", 16), ("transducer", 80), ("dimension", 8), ("physical min", 8),
              ("physical max", 8), ("digital min", 8), ("digital max", 8), ("prefilter", 80),
              ("samples per record", 8), ("reserved", 32)]
    out, pos = [], 0
    for name, width in record:
        out.append((name, pos, width))
        pos += width
    for name, width in signal:
        for i in range(ns):
            out.append((f"{name} {i + 1}", pos, width))
            pos += width
    return out


def test_edited_edf_header_reads_or_gives_one_sentence(tmp_path, intact_files):
    """Set each EDF header field in turn to blank, 0, -1 or text (exhaustive)."""
    raw = intact_files["r.edf"]
    fields = {name: raw[pos:pos + width].strip() for name, pos, width in _edf_header_fields(raw)}
    assert (fields["label 1"], fields["label 2"]) == (b"a", b"b")
    assert (fields["samples per record 1"], fields["samples per record 2"]) == (b"100", b"50")
    assert fields["signals"] == b"2" and int(fields["header bytes"]) == 256 * 3
    for k, (name, pos, width) in enumerate(_edf_header_fields(raw)):
        for new in ("", "0", "-1", "x"):
            edited = bytearray(raw)
            edited[pos:pos + width] = new.encode().ljust(width)
            folder = tmp_path / f"{k}-{new}"
            folder.mkdir()
            (folder / "r.edf").write_bytes(bytes(edited))
            _check_outcome(lambda: read_segments(folder / "r.edf", resample_to=100.0,
                                                 gaps="split", min_segment_s=0),
                           folder / "r.edf")
