"""Unit tests of syncstats.io: readers, grid (rates, gaps), event lists and writers.

Round trips are checked against files written by each format's own library (pandas,
pyedflib / edfio, wfdb) and, where the library has a reader too, against that reader's
values. Signals are invented demo waveforms (sines) whose closed form is known.
"""
from __future__ import annotations

import ast
import datetime
import hashlib
import os
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from syncstats._errors import SyncstatsInputError
from syncstats.io import (
    ACCEPTED_SUFFIXES,
    Recording,
    read_csv,
    read_edf,
    read_events,
    read_parquet,
    read_recording,
    read_segments,
    read_wfdb,
    write_events,
    write_recording_csv,
)

edfio = pytest.importorskip("edfio")
pyedflib = pytest.importorskip("pyedflib")
wfdb = pytest.importorskip("wfdb")

FS = 100.0
N = 3000  # 30 s at 100 Hz


# ----------------------------------------------------------------------------- helpers

def _tree_hash(folder: Path) -> dict[str, str]:
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.iterdir()) if p.is_file()}


def _waves(n: int = N, fs: float = FS, seed: int = 7) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(seed)
    t = np.arange(n) / fs
    return {
        "heart": np.sin(2 * np.pi * 1.1 * t) + 0.05 * rng.standard_normal(n),
        "breath": np.cos(2 * np.pi * 0.25 * t) + 0.05 * rng.standard_normal(n),
    }


def _csv(tmp_path: Path, name: str = "rec.csv", n: int = N, fs: float = FS, **extra) -> Path:
    w = _waves(n, fs)
    frame = pd.DataFrame({"time_s": np.arange(n) / fs, **w, **extra})
    path = tmp_path / name
    frame.to_csv(path, index=False)
    return path


def _edf_pyedflib(path: Path, signals: dict[str, np.ndarray], fs: float, *,
                  bdf: bool = False, annotations=(), start=None, units=None) -> None:
    ftype = pyedflib.FILETYPE_BDFPLUS if bdf else pyedflib.FILETYPE_EDFPLUS
    dmax = 8388607 if bdf else 32767
    writer = pyedflib.EdfWriter(str(path), len(signals), file_type=ftype)
    writer.setSignalHeaders([
        dict(label=name, dimension=(units or {}).get(name, ""), sample_frequency=fs,
             physical_max=2.0, physical_min=-2.0, digital_max=dmax, digital_min=-dmax - 1)
        for name in signals
    ])
    if start is not None:
        writer.setStartdatetime(start)
    writer.writeSamples([np.asarray(x) for x in signals.values()])
    for onset, text in annotations:
        writer.writeAnnotation(onset, -1, text)
    writer.close()


def _edfio_mixed(path: Path) -> tuple[np.ndarray, np.ndarray]:
    """EDF with a 1.2 Hz sine at 256 Hz and a 0.3 Hz cosine at 100 Hz (10 s), via edfio."""
    a = np.sin(2 * np.pi * 1.2 * np.arange(2560) / 256)
    b = np.cos(2 * np.pi * 0.3 * np.arange(1000) / 100)
    edf = edfio.Edf([
        edfio.EdfSignal(a, 256, label="fast", physical_dimension="mV", physical_range=(-2, 2)),
        edfio.EdfSignal(b, 100, label="slow", physical_range=(-2, 2)),
    ])
    edf.write(path)
    return a, b


def _one_sentence(msg: str) -> None:
    assert "\n" not in msg and len(msg) < 600, msg


# ----------------------------------------------------------------------------- tables

def test_csv_round_trip_against_pandas(tmp_path):
    path = _csv(tmp_path)
    ref = pd.read_csv(path)  # pandas' own reader of the file pandas wrote
    rec = read_recording(path)
    assert isinstance(rec, Recording)
    assert rec.fs == FS and rec.name == "rec" and rec.source == str(path)
    assert list(rec.signals) == ["heart", "breath"]
    for name in ("heart", "breath"):
        assert rec.signals[name].dtype == np.float64
        np.testing.assert_array_equal(rec.signals[name], ref[name].to_numpy())
    assert rec.duration_s == pytest.approx(30.0)
    assert rec.events == {} and rec.start_time is None


@pytest.mark.parametrize("sep, suffix", [("\t", ".tsv"), (";", ".csv"), ("|", ".txt"),
                                         (" ", ".txt"), ("\t", ".txt")])
def test_delimiters_are_sniffed(tmp_path, sep, suffix):
    w = _waves(500)
    frame = pd.DataFrame({"t": np.arange(500) / FS, **w})
    path = tmp_path / f"x{suffix}"
    frame.to_csv(path, sep=sep, index=False)
    rec = read_recording(path)
    assert rec.fs == FS
    np.testing.assert_array_equal(rec.signals["breath"], w["breath"])


def test_fs_without_time_column_and_signal_subset(tmp_path):
    w = _waves(400)
    path = tmp_path / "nf.csv"
    pd.DataFrame(w).to_csv(path, index=False)
    rec = read_csv(path, fs=200.0, signals=["breath"])
    assert rec.fs == 200.0 and list(rec.signals) == ["breath"]
    np.testing.assert_array_equal(rec.signals["breath"], w["breath"])
    assert rec.duration_s == pytest.approx(2.0)


def test_pandas_index_column_is_dropped_with_note(tmp_path):
    w = _waves(300)
    path = tmp_path / "idx.csv"
    pd.DataFrame(w).to_csv(path)  # default index=True: unnamed first column 0..n-1
    rec = read_recording(path, fs=FS)
    assert list(rec.signals) == ["heart", "breath"]
    assert any("row index" in n for n in rec.notes)


def test_parquet_round_trip(tmp_path):
    w = _waves(1000)
    frame = pd.DataFrame({"time": np.arange(1000) / FS, "heart": w["heart"].astype(np.float32),
                          "breath": w["breath"]})
    path = tmp_path / "rec.parquet"
    frame.to_parquet(path)
    ref = pd.read_parquet(path)
    rec = read_parquet(path)
    assert rec.fs == FS
    np.testing.assert_array_equal(rec.signals["heart"], ref["heart"].to_numpy(dtype=float))
    np.testing.assert_array_equal(rec.signals["breath"], w["breath"])


def test_parquet_datetime_index_gives_start_time(tmp_path):
    w = _waves(600, fs=50.0)
    index = pd.date_range("2024-05-06 07:08:09", periods=600, freq="20ms", name="time")
    path = tmp_path / "dt.parquet"
    pd.DataFrame(w, index=index).to_parquet(path)
    rec = read_recording(path)
    assert rec.fs == 50.0
    assert rec.start_time == "2024-05-06T07:08:09"
    np.testing.assert_array_equal(rec.signals["heart"], w["heart"])


def test_csv_iso_time_column(tmp_path):
    stamps = pd.date_range("2023-01-02 03:04:05", periods=400, freq="10ms")
    path = tmp_path / "iso.csv"
    pd.DataFrame({"timestamp": stamps.strftime("%Y-%m-%dT%H:%M:%S.%f"),
                  "x": np.arange(400.0)}).to_csv(path, index=False)
    rec = read_recording(path)
    assert rec.fs == 100.0 and rec.start_time == "2023-01-02T03:04:05"


def test_rounded_time_column_is_regular(tmp_path):
    # 256 Hz written with 3 decimals: steps of 3 or 4 ms are rounding, not irregularity
    n = 2560
    path = tmp_path / "rounded.csv"
    with open(path, "w") as fh:
        fh.write("time,x\n")
        for k in range(n):
            fh.write(f"{k / 256:.3f},{np.sin(k / 20):.6f}\n")
    rec = read_recording(path)
    assert rec.fs == 256.0  # snapped: 2559 intervals over 9.996 s is 256 within rounding


def test_time_column_offset_shifts_event_files(tmp_path):
    n = 2000
    path = tmp_path / "off.csv"
    pd.DataFrame({"time_s": 100.0 + np.arange(n) / FS, "x": np.sin(np.arange(n) / 9)}
                 ).to_csv(path, index=False)
    ev = tmp_path / "beats.txt"
    ev.write_text("100.5\n101.25\n102\n")
    rec = read_recording(path, events=ev)
    np.testing.assert_allclose(rec.events["beats"], [0.5, 1.25, 2.0], atol=1e-12)
    assert any("starts at 100" in n for n in rec.notes)


def test_trailing_delimiter_and_ms_time_column(tmp_path):
    path = tmp_path / "ms.csv"
    path.write_text("time_ms,x,\n" + "".join(f"{4 * k},{k % 7},\n" for k in range(500)))
    rec = read_recording(path)
    assert rec.fs == 250.0 and list(rec.signals) == ["x"]
    assert any("milliseconds" in n for n in rec.notes)


def test_comment_lines_before_header(tmp_path):
    path = tmp_path / "c.csv"
    path.write_text("# device: demo\n# rate 10 Hz\nt,x\n" + "".join(
        f"{k / 10},{k}\n" for k in range(50)))
    rec = read_recording(path)
    assert rec.fs == 10.0
    np.testing.assert_array_equal(rec.signals["x"], np.arange(50.0))


# ----------------------------------------------------------------------------- EDF / BDF

def test_edf_duplicate_labels_are_renamed(tmp_path):
    path = tmp_path / "dup.edf"
    x = np.sin(np.arange(500) / 10)
    edfio.Edf([edfio.EdfSignal(x, 50, label="chan", physical_range=(-2, 2)),
               edfio.EdfSignal(-x, 50, label="chan", physical_range=(-2, 2))]).write(path)
    rec = read_recording(path)
    assert list(rec.signals) == ["chan", "chan (2)"]
    np.testing.assert_allclose(rec.signals["chan (2)"], -x, atol=1e-4)
    assert any("renamed" in n for n in rec.notes)


def test_edf_round_trip_against_pyedflib(tmp_path):
    w = _waves()
    w = {k: np.clip(v, -1.9, 1.9) for k, v in w.items()}
    path = tmp_path / "rec.edf"
    start = datetime.datetime(2024, 3, 1, 8, 30, 0)
    _edf_pyedflib(path, w, FS, annotations=[(1.5, "R"), (2.25, "R"), (3.0, "apnea"), (3.1, "R")],
                  start=start, units={"heart": "mV"})
    reader = pyedflib.EdfReader(str(path))  # the writing library's own reader
    try:
        ref = {reader.getLabel(i): reader.readSignal(i) for i in range(reader.signals_in_file)}
    finally:
        reader.close()
    rec = read_edf(path, annotation="R")
    assert rec.fs == FS and list(rec.signals) == ["heart", "breath"]
    assert rec.units == {"heart": "mV", "breath": ""}
    assert rec.start_time == start.isoformat()
    for name in w:
        np.testing.assert_allclose(rec.signals[name], ref[name], rtol=0, atol=1e-12)
        # 16-bit quantisation: within one digital step of a 4-unit range (EDF
        # specification; pyedflib's writer may truncate rather than round)
        assert np.max(np.abs(rec.signals[name] - w[name])) <= 4.0 / 65535 + 1e-12
    np.testing.assert_allclose(rec.events["R"], [1.5, 2.25, 3.1])
    assert "apnea" not in rec.events


def test_bdf_round_trip_against_pyedflib(tmp_path):
    w = {k: np.clip(v, -1.9, 1.9) for k, v in _waves(1000).items()}
    path = tmp_path / "rec.bdf"
    _edf_pyedflib(path, w, FS, bdf=True)
    reader = pyedflib.EdfReader(str(path))
    try:
        ref = reader.readSignal(0)
    finally:
        reader.close()
    rec = read_recording(path)  # edfio.read_bdf underneath
    np.testing.assert_allclose(rec.signals["heart"], ref, rtol=0, atol=1e-12)
    assert np.max(np.abs(rec.signals["heart"] - w["heart"])) <= 4.0 / 16777215 + 1e-12


def test_edf_annotation_missing_lists_texts(tmp_path):
    path = tmp_path / "ann.edf"
    _edf_pyedflib(path, _waves(500), FS, annotations=[(1.0, "R"), (2.0, "apnea")])
    with pytest.raises(SyncstatsInputError, match=r"no annotation with text 'Q'.*'R'") as e:
        read_recording(path, annotation="Q")
    assert "ann.edf" in str(e.value)


def test_mixed_rates_error_names_signals_and_rates(tmp_path):
    path = tmp_path / "mixed.edf"
    _edfio_mixed(path)
    with pytest.raises(SyncstatsInputError) as e:
        read_recording(path)
    msg = str(e.value)
    _one_sentence(msg)
    for part in ("mixed.edf", "'fast' 256 Hz", "'slow' 100 Hz", "give a common rate",
                 "choose signals"):
        assert part in msg
    # one rate selected: no resampling needed
    assert read_recording(path, signals=["slow"]).fs == 100.0


def test_mixed_rates_resampled_to_common_grid(tmp_path):
    path = tmp_path / "mixed.edf"
    _edfio_mixed(path)
    rec = read_recording(path, resample_to=128)
    assert rec.fs == 128.0
    assert {k: v.shape for k, v in rec.signals.items()} == {"fast": (1280,), "slow": (1280,)}
    assert any("resample_poly" in n and "128 Hz" in n for n in rec.notes)
    t = np.arange(1280) / 128
    inner = slice(64, -64)  # away from the ends, where padding matters
    # closed form: the resampled waves are the same sines on the new grid, with no delay
    np.testing.assert_allclose(rec.signals["fast"][inner], np.sin(2 * np.pi * 1.2 * t)[inner],
                               atol=2e-3)
    np.testing.assert_allclose(rec.signals["slow"][inner], np.cos(2 * np.pi * 0.3 * t)[inner],
                               atol=2e-3)


def _edf_discontinuous(tmp_path: Path) -> tuple[Path, np.ndarray]:
    """EDF+D with records 0-14 s, then 20-34 s (edfio writes EDF+C; time stamps patched)."""
    x = np.sin(2 * np.pi * np.arange(3000) / 100)
    cont = tmp_path / "cont.edf"
    edfio.Edf([edfio.EdfSignal(x, 100, label="a", physical_range=(-2, 2))],
              data_record_duration=1, annotations=[]).write(cont)
    raw = bytearray(cont.read_bytes())
    for k in range(29, 14, -1):  # TAL "+k\x14\x14" opens record k (EDF+ specification)
        old, new = b"+%d\x14\x14" % k, b"+%d\x14\x14" % (k + 5)
        i = raw.find(old)
        assert i > 0
        raw[i:i + len(old)] = new
    assert raw[192:197] == b"EDF+C"
    raw[192:197] = b"EDF+D"
    path = tmp_path / "disc.edf"
    path.write_bytes(bytes(raw))
    cont.unlink()
    return path, x


def test_edf_plus_d_gap_error_and_split(tmp_path):
    path, x = _edf_discontinuous(tmp_path)
    with pytest.raises(SyncstatsInputError, match=r"between 15 s and 20 s.*split the record at gaps"):
        read_recording(path)
    segs = read_segments(path)
    assert [s.name for s in segs] == ["disc#1", "disc#2"]
    assert all(s.duration_s == pytest.approx(15.0) for s in segs)
    np.testing.assert_allclose(segs[1].signals["a"], x[1500:], atol=1e-4)
    assert "20-35 s" in segs[1].notes[-1]


def test_corrupt_edf_wrapped_with_file_name(tmp_path):
    path = tmp_path / "junk.edf"
    path.write_bytes(b"this is not an EDF header " * 20)
    with pytest.raises(SyncstatsInputError, match=r"junk\.edf' is neither EDF nor BDF") as e:
        read_recording(path)
    _one_sentence(str(e.value))


# ----------------------------------------------------------------------------- WFDB

def _wfdb_record(tmp_path: Path, name: str = "rec", x=None, base=None) -> dict[str, np.ndarray]:
    w = _waves() if x is None else x
    wfdb.wrsamp(name, fs=FS, units=["mV", "au"], sig_name=list(w),
                p_signal=np.column_stack(list(w.values())), fmt=["16", "16"],
                base_datetime=base, write_dir=str(tmp_path))
    return w


def test_wfdb_round_trip_against_wfdb_reader(tmp_path):
    base = datetime.datetime(2024, 3, 1, 8, 30)
    w = _wfdb_record(tmp_path, base=base)
    ref = wfdb.rdrecord(str(tmp_path / "rec")).p_signal
    for path in (tmp_path / "rec.hea", tmp_path / "rec.dat", tmp_path / "rec"):
        rec = read_recording(path)
        assert rec.fs == FS and rec.name == "rec"
        np.testing.assert_array_equal(rec.signals["heart"], ref[:, 0])
        np.testing.assert_array_equal(rec.signals["breath"], ref[:, 1])
    assert rec.units == {"heart": "mV", "breath": "au"}
    assert rec.start_time == base.isoformat()
    # wfdb chooses the gain; values agree with the written ones to the digital step
    assert np.max(np.abs(rec.signals["heart"] - w["heart"])) < 1e-3


def test_wfdb_signals_without_description_are_named_by_position(tmp_path):
    # The description at the end of a WFDB signal line is optional (wfdb reads it as
    # None); found by tests/unit/test_io_fuzz.py, where it raised AttributeError.
    _wfdb_record(tmp_path)
    header = tmp_path / "rec.hea"
    lines = header.read_text().splitlines()
    header.write_text("\n".join([lines[0]] + [ln.rsplit(" ", 1)[0] for ln in lines[1:]]) + "\n")
    assert wfdb.rdheader(str(tmp_path / "rec")).sig_name == [None, None]
    ref = wfdb.rdrecord(str(tmp_path / "rec")).p_signal
    rec = read_recording(header)
    assert list(rec.signals) == ["signal 1", "signal 2"]
    np.testing.assert_array_equal(rec.signals["signal 2"], ref[:, 1])
    assert any("no label" in n and "'signal 1', 'signal 2'" in n for n in rec.notes)
    assert list(read_recording(header, signals="signal 2").signals) == ["signal 2"]


def test_wfdb_annotations_become_beat_events(tmp_path):
    _wfdb_record(tmp_path)
    wfdb.wrann("rec", "atr", np.array([50, 130, 130, 210, 290]),
               symbol=["N", "+", "N", "N", "V"], write_dir=str(tmp_path))
    rec = read_wfdb(tmp_path / "rec", annotation="atr", signals="breath")
    assert list(rec.signals) == ["breath"]
    np.testing.assert_allclose(rec.events["atr"], [0.5, 1.3, 2.1, 2.9])
    assert any("1 non-beat" in n for n in rec.notes)


def test_wfdb_multifrequency_error_and_resample(tmp_path):
    n = 2000
    fast = np.sin(2 * np.pi * 1.0 * np.arange(2 * n) / 200)
    slow = np.cos(2 * np.pi * 0.25 * np.arange(n) / 100)
    wfdb.wrsamp("mf", fs=100, units=["mV", "au"], sig_name=["fast", "slow"],
                e_p_signal=[fast, slow], samps_per_frame=[2, 1], fmt=["16", "16"],
                write_dir=str(tmp_path))
    with pytest.raises(SyncstatsInputError, match=r"'fast' 200 Hz, 'slow' 100 Hz"):
        read_recording(tmp_path / "mf.hea")
    rec = read_recording(tmp_path / "mf.hea", resample_to=100)
    assert rec.fs == 100 and rec.signals["fast"].shape == (n,)
    t = np.arange(n) / 100
    np.testing.assert_allclose(rec.signals["fast"][100:-100], np.sin(2 * np.pi * t)[100:-100],
                               atol=2e-3)
    np.testing.assert_array_equal(rec.signals["slow"],
                                  wfdb.rdrecord(str(tmp_path / "mf"), smooth_frames=False,
                                                channels=[1]).e_p_signal[0])


def test_multirate_gap_split_keeps_signals_aligned(tmp_path):
    n = 3000
    fast = np.sin(2 * np.pi * 1.0 * np.arange(2 * n) / 200)
    slow = np.cos(2 * np.pi * 0.25 * np.arange(n) / 100)
    fast[2401:2403] = np.nan  # 12.005-12.010 s: the 10 ms cells 12.00 and 12.01 s are lost
    wfdb.wrsamp("mfg", fs=100, units=["mV", "au"], sig_name=["fast", "slow"],
                e_p_signal=[fast, slow], samps_per_frame=[2, 1], fmt=["16", "16"],
                write_dir=str(tmp_path))
    with pytest.raises(SyncstatsInputError, match=r"signal 'fast'.*12\.005 s"):
        read_recording(tmp_path / "mfg.hea", resample_to=50)
    first, second = read_segments(tmp_path / "mfg.hea", resample_to=50)
    assert first.duration_s == pytest.approx(12.0) and "12.02-30 s" in second.notes[-1]
    t = 12.02 + np.arange(len(second.signals["fast"])) / 50
    inner = slice(50, -50)
    # closed form: both waves continue in phase after the cut (no shift between signals)
    np.testing.assert_allclose(second.signals["fast"][inner], np.sin(2 * np.pi * t)[inner],
                               atol=2e-3)
    np.testing.assert_allclose(second.signals["slow"][inner],
                               np.cos(2 * np.pi * 0.25 * t)[inner], atol=2e-3)


def test_wfdb_invalid_samples_are_gaps(tmp_path):
    w = _waves()
    w["heart"][1200:1300] = np.nan  # wfdb writes the format's invalid-sample code
    _wfdb_record(tmp_path, "gap", x=w)
    with pytest.raises(SyncstatsInputError, match=r"signal 'heart'.*12 s.*split the record at gaps"):
        read_recording(tmp_path / "gap.hea")
    segs = read_segments(tmp_path / "gap.hea")
    assert [s.duration_s for s in segs] == [pytest.approx(12.0), pytest.approx(17.0)]


# ----------------------------------------------------------------------------- gaps

def test_nan_gap_error_message(tmp_path):
    w = _waves()
    w["breath"][1250:1260] = np.nan
    path = tmp_path / "g.csv"
    pd.DataFrame({"time_s": np.arange(N) / FS, **w}).to_csv(path, index=False)
    with pytest.raises(SyncstatsInputError) as e:
        read_recording(path)
    msg = str(e.value)
    _one_sentence(msg)
    for part in ("g.csv", "'breath'", "12.5 s", "split the record at gaps"):
        assert part in msg


def test_nan_gap_split_segments(tmp_path):
    w = _waves()
    w["breath"][1250:1260] = np.nan
    path = tmp_path / "g.csv"
    pd.DataFrame({"time_s": np.arange(N) / FS, **w}).to_csv(path, index=False)
    events = np.array([1.0, 12.55, 13.0, 20.0])  # 12.55 s lies in the gap
    segs = read_segments(path, events={"beats": events}, name="sub")
    assert [s.name for s in segs] == ["sub#1", "sub#2"]
    np.testing.assert_array_equal(segs[0].signals["breath"], w["breath"][:1250])
    np.testing.assert_array_equal(segs[1].signals["heart"], w["heart"][1260:])
    np.testing.assert_allclose(segs[0].events["beats"], [1.0])
    np.testing.assert_allclose(segs[1].events["beats"], [13.0 - 12.6, 20.0 - 12.6])
    assert all(np.isfinite(v).all() for s in segs for v in s.signals.values())


def test_missing_rows_are_gaps(tmp_path):
    w = _waves()
    keep = np.r_[0:1000, 1500:N]
    path = tmp_path / "rows.csv"
    pd.DataFrame({"time_s": (np.arange(N) / FS)[keep], **{k: v[keep] for k, v in w.items()}}
                 ).to_csv(path, index=False)
    with pytest.raises(SyncstatsInputError, match=r"no samples between 10 s and 15 s"):
        read_recording(path)
    segs = read_segments(path)
    assert [s.duration_s for s in segs] == [pytest.approx(10.0), pytest.approx(15.0)]
    np.testing.assert_array_equal(segs[1].signals["heart"], w["heart"][1500:])


def test_short_segments_dropped_with_note(tmp_path):
    w = _waves()
    w["heart"][500] = np.nan  # pieces of 5 s and 24.99 s
    path = tmp_path / "short.csv"
    pd.DataFrame({"time_s": np.arange(N) / FS, **w}).to_csv(path, index=False)
    segs = read_segments(path)
    assert len(segs) == 1 and segs[0].name == "short#1"
    assert any("dropped 1 gap-free piece" in n for n in segs[0].notes)
    assert len(read_segments(path, min_segment_s=0)) == 2
    with pytest.raises(SyncstatsInputError, match="minimum segment length of 100 s"):
        read_segments(path, min_segment_s=100)


def test_gap_free_file_gives_single_plain_segment(tmp_path):
    segs = read_segments(_csv(tmp_path))
    assert len(segs) == 1 and segs[0].name == "rec" and segs[0].fs == FS


def test_irregular_time_column_is_an_error(tmp_path):
    rng = np.random.default_rng(3)
    t = np.cumsum(np.full(500, 0.01) * (1 + 0.05 * rng.uniform(-1, 1, 500)))
    path = tmp_path / "irr.csv"
    pd.DataFrame({"time_s": t, "x": np.sin(t)}).to_csv(path, index=False)
    with pytest.raises(SyncstatsInputError, match=r"irr\.csv.*'time_s'.*not regularly sampled"):
        read_recording(path)


# ----------------------------------------------------------------------------- events

def test_event_list_file_and_csv_column(tmp_path):
    times = np.array([0.5, 1.31, 2.07, 2.9])
    txt = tmp_path / "beats.txt"
    txt.write_text("# R peaks\n" + "\n".join(map(str, times)) + "\n\n")
    np.testing.assert_array_equal(read_events(txt), times)
    table = tmp_path / "marks.csv"
    pd.DataFrame({"beat": times, "breath": times * 4}).to_csv(table, index=False)
    np.testing.assert_array_equal(read_events(table, column="breath"), times * 4)
    rec = read_recording(_csv(tmp_path), events={"beat": table, "other": txt})
    np.testing.assert_array_equal(rec.events["beat"], times)
    np.testing.assert_array_equal(rec.events["other"], times)


def test_txt_event_list_reads_as_event_recording(tmp_path):
    path = tmp_path / "rpeaks.txt"
    path.write_text("0.8\n1.6\n2.45\n")
    rec = read_recording(path)
    assert rec.signals == {} and rec.fs is None
    np.testing.assert_array_equal(rec.events["rpeaks"], [0.8, 1.6, 2.45])
    assert rec.duration_s == pytest.approx(2.45)


def test_write_events_round_trip_exact(tmp_path):
    times = np.sort(np.random.default_rng(11).uniform(0, 100, 50))
    path = write_events(times, tmp_path / "ev.txt")
    np.testing.assert_array_equal(read_events(path), times)


# ----------------------------------------------------------------------------- writers

def test_write_recording_csv_round_trip_and_atomic(tmp_path):
    w = _waves(700)
    rec = Recording(name="sim", signals=w, fs=250.0)
    path = write_recording_csv(rec, tmp_path / "sim.csv")
    back = read_recording(path)
    assert back.fs == 250.0
    for k in w:
        np.testing.assert_array_equal(back.signals[k], w[k])
    assert sorted(p.name for p in tmp_path.iterdir()) == ["sim.csv"]  # no temp left


def test_failed_write_leaves_old_file_and_no_temp(tmp_path, monkeypatch):
    path = tmp_path / "keep.csv"
    path.write_text("old\n")

    def boom(*args, **kwargs):
        raise OSError("disk full")

    monkeypatch.setattr(pd.DataFrame, "to_csv", boom)
    with pytest.raises(OSError, match="disk full"):
        write_recording_csv(Recording(name="x", signals=_waves(10), fs=10.0), path)
    assert path.read_text() == "old\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.csv"]


@pytest.mark.parametrize("signals, pattern", [
    ({"time_s": [1.0, 2.0]}, r"'time_s' is one the reader takes for a time column"),
    ({"a": [1.0, 2.0], "Time": [3.0, 4.0]}, r"'Time' is one the reader takes for a time column"),
    ({"ms": [1.0, 2.0]}, r"'ms' is one the reader takes for a time column"),
    ({"": [1.0, 2.0]}, r"'' reads back as a column without a name"),
    ({"Unnamed: 1": [1.0, 2.0]}, r"'Unnamed: 1' reads back as a column without a name"),
    ({" ecg": [1.0, 2.0]}, r"' ecg' starts or ends with blank space"),
    ({"ecg\nII": [1.0, 2.0]}, r"'ecg\\nII' contains a line break"),
    ({"ecg": [1.0]}, r"has 1 sample\(s\), too few"),
])
def test_write_recording_csv_refuses_what_would_not_read_back(tmp_path, signals, pattern):
    # all but 'time_s' were written before, then failed to read back or came back renamed
    rec = Recording(name="sim", signals={k: np.array(v) for k, v in signals.items()}, fs=10.0)
    with pytest.raises(SyncstatsInputError, match=pattern) as e:
        write_recording_csv(rec, tmp_path / "x.csv")
    _one_sentence(str(e.value))
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("bad", [[1.0, 0.5], [0.5, 0.5], [0.1, np.nan]])
def test_write_events_rejects_bad_times(tmp_path, bad):
    with pytest.raises(SyncstatsInputError):
        write_events(bad, tmp_path / "e.txt")
    assert list(tmp_path.iterdir()) == []


# ----------------------------------------------------------------------------- inputs untouched

def _make_all(tmp_path: Path) -> dict[str, tuple[Path, dict]]:
    _csv(tmp_path, "a.csv")
    pd.DataFrame(_waves(500)).to_parquet(tmp_path / "a.parquet")
    _edf_pyedflib(tmp_path / "a.edf", {k: np.clip(v, -1.9, 1.9) for k, v in _waves(500).items()}, FS)
    _edf_pyedflib(tmp_path / "a.bdf", {k: np.clip(v, -1.9, 1.9) for k, v in _waves(500).items()},
                  FS, bdf=True)
    _wfdb_record(tmp_path, "w")
    wfdb.wrann("w", "atr", np.array([10, 200, 290]), symbol=["N", "N", "N"],
               write_dir=str(tmp_path))
    (tmp_path / "ev.txt").write_text("0.5\n1.5\n2.5\n")
    return {
        "csv": (tmp_path / "a.csv", {"events": tmp_path / "ev.txt"}),
        "parquet": (tmp_path / "a.parquet", {"fs": FS}),
        "edf": (tmp_path / "a.edf", {}),
        "bdf": (tmp_path / "a.bdf", {}),
        "wfdb": (tmp_path / "w.hea", {"annotation": "atr"}),
        "events": (tmp_path / "ev.txt", {}),
    }


def test_readers_do_not_modify_inputs(tmp_path):
    files = _make_all(tmp_path)
    before = _tree_hash(tmp_path)
    mtimes = {p.name: p.stat().st_mtime_ns for p in tmp_path.iterdir()}
    for path, opts in files.values():
        read_recording(path, **opts)
        read_segments(path, **opts)
    assert _tree_hash(tmp_path) == before
    assert {p.name: p.stat().st_mtime_ns for p in tmp_path.iterdir()} == mtimes


# ----------------------------------------------------------------------------- bad input

def _write(path: Path, text: str) -> Path:
    path.write_text(text)
    return path


BAD_FILES = [
    # (id, file name, content, options, message pattern)
    ("empty", "e.csv", "", {}, r"is empty"),
    ("blank", "b.csv", "\n  \n", {}, r"only blank space"),
    ("no-header", "nh.csv", "0,1,2\n0.01,2,3\n", {}, r"no header row"),
    ("header-only", "ho.csv", "time_s,x\n", {}, r"no data rows"),
    ("non-numeric", "nn.csv", "time_s,x\n0,1\n0.01,abc\n0.02,3\n", {},
     r"column 'x', line 3: 'abc' is not a number"),
    ("no-time-no-fs", "nt.csv", "a,b\n1,2\n3,4\n", {}, r"no time column.*give the sampling rate"),
    ("duplicate-time", "dt.csv", "t,x\n0,1\n0.01,2\n0.01,3\n", {}, r"line 4: the time repeats"),
    ("unsorted-time", "ut.csv", "t,x\n0,1\n0.02,2\n0.01,3\n", {}, r"line 4: the time goes back"),
    ("inf-value", "inf.csv", "t,x\n0,1\n0.01,inf\n0.02,3\n", {}, r"column 'x', line 3.*infinite"),
    ("dup-columns", "dc.csv", "t,x,x\n0,1,1\n0.01,2,2\n", {}, r"'x' more than once"),
    ("missing-signal", "ms.csv", "t,x,y\n0,1,1\n0.01,2,2\n", {"signals": ["z"]},
     r"no column named 'z'.*'x', 'y'"),
    ("missing-time-col", "mt.csv", "t,x\n0,1\n0.01,2\n", {"time_column": "clock"},
     r"no column 'clock'"),
    ("fs-vs-time", "fv.csv", "t,x\n0,1\n0.01,2\n0.02,3\n", {"fs": 50}, r"disagrees"),
    ("only-time", "ot.csv", "time\n0.5\n1.2\n", {}, r"no signal columns.*give it as an event list"),
    ("unknown-suffix", "x.mat", "abc", {}, r"'.mat'.*\.csv, \.tsv, \.txt, \.parquet, \.edf"),
    ("event-unsorted", "ev1.txt", "1.0\n0.5\n", {}, r"line 2: event time 0.5 s is earlier than the one before it \(1 s\)"),
    ("event-duplicate", "ev2.txt", "0.5\n1.0\n1.0\n", {}, r"line 3: event time 1 s occurs twice"),
    ("event-bad-line", "ev3.txt", "0.5\n1.0\nfoo bar\n", {}, r"line 3: 'foo bar' is not a time"),
    ("corrupt-parquet", "c.parquet", "not parquet", {}, r"could not be read as Parquet"),
    ("damaged-edf-header", "t.edf", "0       " + "X" * 300, {},
     r"header field 'number of bytes in header record' holds 'XXXXXXXX'"),
    ("ragged-row", "rr.csv", "t,x\n0,1\n0.01,2,7\n0.02,3\n", {}, r"could not be parsed.*line 3"),
    ("extra-fields", "ef.csv", "t,x\n0,1,5\n0.01,2,7\n", {}, r"line 2 has 3 fields"),
    ("decimal-comma", "dc2.csv", "t;x\n0;1,5\n0.01;2,5\n", {}, r"decimal comma"),
    ("all-missing", "am.csv", "t,x,y\n0,,1\n0.01,,2\n", {}, r"'x' have no valid sample"),
    ("annotation-on-csv", "an.csv", "t,x\n0,1\n0.01,2\n", {"annotation": "atr"},
     r"annotation option does not apply"),
]


@pytest.mark.parametrize("fname, content, opts, pattern",
                         [b[1:] for b in BAD_FILES], ids=[b[0] for b in BAD_FILES])
def test_bad_files(tmp_path, fname, content, opts, pattern):
    path = _write(tmp_path / fname, content)
    with pytest.raises(SyncstatsInputError, match=pattern) as e:
        read_recording(path, **opts)
    msg = str(e.value)
    _one_sentence(msg)
    assert fname in msg or " option " in msg


@pytest.mark.parametrize("fs", [0, -5.0, float("nan"), float("inf"), "fast"])
def test_bad_fs(tmp_path, fs):
    with pytest.raises(SyncstatsInputError, match=r"^fs must be a positive number of Hz"):
        read_recording(_write(tmp_path / "x.csv", "a\n1\n2\n"), fs=fs)


@pytest.mark.parametrize("opts, pattern", [
    ({"resample_to": 0}, r"resample_to must be a positive number of Hz, got 0"),
    ({"gaps": "fill"}, r"gaps option 'fill'.*'error', 'split'"),
    ({"min_segment_s": -1}, r"^min_segment_s \(minimum segment length, s\) must be .*got -1"),
    ({"signals": []}, r"signals option is an empty list"),
    ({"signals": ["a", "a"]}, r"more than once"),
    ({"format": "hdf5"}, r"format option 'hdf5'"),
    ({"allow_truncated": "maybe"}, r"allow_truncated must be true or false"),
    ({"events": 3.5}, r"events option 3.5 is neither a file path"),
    ({"events": {"b": [2.0, 1.0, 3.0]}}, r"event list 'b' is not sorted \(first at 1 s\)"),
    ({"events": {"b": [1.0, 2.0]}}, r"event list 'b' needs at least 3 event times"),
])
def test_bad_options(tmp_path, opts, pattern):
    path = _csv(tmp_path, n=200)
    with pytest.raises(SyncstatsInputError, match=pattern):
        read_segments(path, **opts)


def test_missing_files(tmp_path):
    with pytest.raises(SyncstatsInputError, match=r"nope\.csv' does not exist"):
        read_recording(tmp_path / "nope.csv")
    with pytest.raises(SyncstatsInputError, match=r"does not exist"):
        read_recording(tmp_path / "nope.edf")
    with pytest.raises(SyncstatsInputError, match=r"no header file 'lone\.hea'"):
        read_recording(_write(tmp_path / "lone.dat", "xx"))
    _wfdb_record(tmp_path)
    with pytest.raises(SyncstatsInputError, match=r"no annotation file 'rec\.qrs'"):
        read_recording(tmp_path / "rec.hea", annotation="qrs")
    with pytest.raises(SyncstatsInputError, match=r"event file .*gone\.txt' does not exist"):
        read_recording(tmp_path / "rec.hea", events=tmp_path / "gone.txt")
    with pytest.raises(SyncstatsInputError, match=r"sampling rate option does not apply"):
        read_recording(tmp_path / "rec.hea", fs=100)


def test_event_name_clash(tmp_path):
    _wfdb_record(tmp_path)
    wfdb.wrann("rec", "atr", np.array([10, 200, 290]), symbol=["N", "N", "N"],
               write_dir=str(tmp_path))
    with pytest.raises(SyncstatsInputError, match=r"'atr' is given as an event list and also comes from file"):
        read_recording(tmp_path / "rec.hea", annotation="atr", events={"atr": [1.0, 2.0, 3.0]})


def test_accepted_suffixes_listed():
    assert set(ACCEPTED_SUFFIXES) == {".csv", ".tsv", ".txt", ".parquet", ".edf", ".bdf",
                                      ".hea", ".dat"}


# ----------------------------------------------------------------------------- layering

def test_io_imports_no_other_syncstats_layer():
    folder = Path(__file__).resolve().parents[2] / "syncstats" / "io"
    for path in folder.glob("*.py"):
        tree = ast.parse(path.read_text())
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
                mod = node.module
                if mod.startswith("syncstats"):
                    assert mod in ("syncstats._errors", "syncstats._checks") or \
                        mod.startswith("syncstats.io"), \
                        f"{path.name} imports {mod}"
            if isinstance(node, ast.ImportFrom) and node.level == 2:
                assert node.module in ("_errors", "_checks"), f"{path.name} imports ..{node.module}"
            if isinstance(node, ast.Import):
                for alias in node.names:
                    assert not alias.name.startswith("syncstats") or \
                        alias.name.startswith("syncstats.io"), f"{path.name} imports {alias.name}"
    assert os.path.isdir(folder)


def test_io_modules_import_each_other_without_cycles():
    folder = Path(__file__).resolve().parents[2] / "syncstats" / "io"
    deps = {}
    for path in folder.glob("*.py"):
        deps[path.stem] = {node.module for node in ast.walk(ast.parse(path.read_text()))
                           if isinstance(node, ast.ImportFrom) and node.level == 1 and node.module}
    done: set[str] = set()

    def visit(mod, stack):
        assert mod not in stack, f"import cycle: {' -> '.join([*stack, mod])}"
        if mod not in done:
            for dep in deps.get(mod, ()):
                visit(dep, [*stack, mod])
            done.add(mod)

    for mod in deps:
        visit(mod, [])
