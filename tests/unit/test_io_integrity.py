"""Unit tests of syncstats.io on damaged, cut-off and hostile files.

Every file is made by the test in ``tmp_path``: EDF/BDF files by edfio's writer (and
pyedflib's for the round trips), WFDB records by wfdb's writer, tables as text. Byte
positions in EDF/BDF headers are those of the EDF specification's fixed header (8-byte
version field at 0, "number of data records" at 236-243, "number of signals" at
252-255; BDF uses the same layout with 3-byte samples and the version field byte 255 +
"BIOSEMI"), recalled from memory and confirmed by the files edfio and pyedflib write
(the readers of those files agree with the values checked here).
"""
from __future__ import annotations

import hashlib
import warnings
from pathlib import Path

import numpy as np
import pytest

from syncstats._errors import SyncstatsInputError
from syncstats.io import read_edf, read_events, read_recording, read_segments, read_wfdb

edfio = pytest.importorskip("edfio")
pyedflib = pytest.importorskip("pyedflib")
wfdb = pytest.importorskip("wfdb")
hypothesis = pytest.importorskip("hypothesis")
from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

FS = 50  # Hz
RECORDS = 10  # data records of 1 s


def _hash(folder: Path) -> dict[str, str]:
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def _waves(n: int = RECORDS * FS) -> dict[str, np.ndarray]:
    t = np.arange(n) / FS
    return {"heart": np.sin(2 * np.pi * 1.1 * t), "breath": 0.5 * np.cos(2 * np.pi * 0.25 * t)}


def _edf(path: Path, bdf: bool = False) -> dict[str, np.ndarray]:
    """EDF (or BDF) with two signals, 10 data records of 1 s at 50 Hz, written by edfio."""
    w = _waves()
    cls, sig = (edfio.Bdf, edfio.BdfSignal) if bdf else (edfio.Edf, edfio.EdfSignal)
    cls([sig(x, FS, label=k, physical_range=(-2, 2)) for k, x in w.items()],
        data_record_duration=1).write(path)
    return w


def _record_bytes(bdf: bool = False) -> int:
    return 2 * FS * (3 if bdf else 2)  # two signals of 50 samples per record


def _cut(path: Path, n_bytes: int) -> Path:
    path.write_bytes(path.read_bytes()[:-n_bytes])
    return path


def _set_records(path: Path, n: int) -> Path:
    raw = bytearray(path.read_bytes())
    raw[236:244] = f"{n:<8d}".encode()  # "number of data records" (EDF specification)
    path.write_bytes(bytes(raw))
    return path


def _wfdb(folder: Path, name: str = "w") -> dict[str, np.ndarray]:
    w = _waves()
    wfdb.wrsamp(name, fs=FS, units=["mV", "au"], sig_name=list(w), fmt=["16", "16"],
                p_signal=np.column_stack(list(w.values())), write_dir=str(folder))
    return w


# ----------------------------------------------------------------------------- cut-off files

def test_truncated_edf_refused_then_read_with_note(tmp_path):
    path = tmp_path / "cut.edf"
    w = _edf(path)
    _cut(path, int(5.5 * _record_bytes()))  # 4.5 of 10 records remain
    before = _hash(tmp_path)
    with pytest.raises(SyncstatsInputError) as e:
        read_recording(path)
    msg = str(e.value)
    assert "cut.edf" in msg and "holds 4 of the 10 data records the header declares" in msg
    assert "bytes of an incomplete record" in msg and "\n" not in msg
    rec = read_edf(path, allow_truncated=True)
    assert rec.duration_s == pytest.approx(4.0)
    # edfio round trip: values within one 16-bit step of the 4-unit range (EDF spec)
    np.testing.assert_allclose(rec.signals["heart"], w["heart"][:200], atol=4 / 65535)
    cut = [n for n in rec.notes if "cut-off file" in n]
    assert len(cut) == 1 and "4 of the 10" in cut[0] and "last 6 declared records are missing" in cut[0]
    for seg in read_segments(path, allow_truncated=True):  # the note reaches every segment
        assert cut[0] in seg.notes
    assert _hash(tmp_path) == before


def test_absurd_record_count_refused(tmp_path):
    path = tmp_path / "big.edf"
    _edf(path)
    _set_records(path, 99_999_999)
    with pytest.raises(SyncstatsInputError, match=r"big\.edf' holds 10 of the 99999999 data "
                                                  r"records the header declares"):
        read_recording(path)
    rec = read_recording(path, allow_truncated=True)
    assert rec.duration_s == pytest.approx(10.0)
    assert any("last 99999989 declared records are missing" in n for n in rec.notes)


def test_surplus_bytes_noted(tmp_path):
    path = tmp_path / "long.edf"
    w = _edf(path)
    _set_records(path, 8)  # header declares 8 of the 10 records present
    rec = read_recording(path)
    assert rec.duration_s == pytest.approx(8.0)
    np.testing.assert_allclose(rec.signals["breath"], w["breath"][:400], atol=4 / 65535)
    assert any("bytes after the 8 data records" in n and "ignored" in n for n in rec.notes)


def test_bdf_missing_bytes_refused(tmp_path):
    path = tmp_path / "cut.bdf"
    w = _edf(path, bdf=True)
    _cut(path, 7)
    with pytest.raises(SyncstatsInputError, match=r"cut\.bdf' holds 9 of the 10 data records"):
        read_recording(path)
    rec = read_recording(path, allow_truncated=True)
    np.testing.assert_allclose(rec.signals["heart"], w["heart"][:450], atol=4 / 16777215)


def test_truncated_wfdb_refused_then_read_with_note(tmp_path):
    w = _wfdb(tmp_path)
    _cut(tmp_path / "w.dat", 4 * 120 + 1)  # 120 frames of 2 x 16 bit, and one byte more
    with pytest.raises(SyncstatsInputError) as e:
        read_recording(tmp_path / "w.hea")
    assert "w.dat' holds 379 of the 500 samples per signal" in str(e.value)
    rec = read_wfdb(tmp_path / "w.hea", allow_truncated=True)
    assert rec.signals["heart"].shape == (379,)
    # wfdb chooses the gain; values agree with the written ones to the digital step
    np.testing.assert_allclose(rec.signals["heart"], w["heart"][:379], atol=1e-3)
    assert any("cut-off file" in n and "121 declared frames are missing" in n for n in rec.notes)


# ----------------------------------------------------------------------------- format by header

@pytest.mark.parametrize("bdf, suffix", [(False, ".bdf"), (True, ".edf")])
def test_format_taken_from_header_not_suffix(tmp_path, bdf, suffix):
    w = {k: np.clip(v, -1.9, 1.9) for k, v in _waves().items()}
    path = tmp_path / f"renamed{suffix}"
    ftype = pyedflib.FILETYPE_BDFPLUS if bdf else pyedflib.FILETYPE_EDFPLUS
    dmax = 8388607 if bdf else 32767
    writer = pyedflib.EdfWriter(str(path), 2, file_type=ftype)
    writer.setSignalHeaders([dict(label=k, dimension="", sample_frequency=FS,
                                  physical_max=2.0, physical_min=-2.0, digital_max=dmax,
                                  digital_min=-dmax - 1) for k in w])
    writer.writeSamples(list(w.values()))
    writer.close()
    reader = pyedflib.EdfReader(str(path))  # the writing library's own reader
    try:
        ref = reader.readSignal(0)
    finally:
        reader.close()
    rec = read_recording(path)
    np.testing.assert_allclose(rec.signals["heart"], ref, rtol=0, atol=1e-12)
    step = 4.0 / (2 * dmax + 1)  # one digital step (pyedflib may truncate, not round)
    assert np.max(np.abs(rec.signals["heart"] - w["heart"])) <= step + 1e-12


# ----------------------------------------------------------------------------- notes

def test_library_warnings_become_notes(tmp_path, monkeypatch):
    path = tmp_path / "warn.edf"
    _edf(path)
    original = edfio.read_edf

    def chatty(*args, **kwargs):
        warnings.warn("odd header field", UserWarning)
        warnings.warn("old call", DeprecationWarning)  # deprecations are left out
        return original(*args, **kwargs)

    monkeypatch.setattr(edfio, "read_edf", chatty)
    notes = read_recording(path).notes
    assert "the EDF reader (edfio) said: odd header field" in notes
    assert not any("old call" in n for n in notes)


def test_events_outside_span_are_noted(tmp_path):
    path = tmp_path / "r.csv"
    t = np.arange(500) / FS
    path.write_text("time_s,x\n" + "".join(f"{a!r},{float(np.sin(a))!r}\n" for a in t.tolist()))
    rec = read_recording(path, events={"beats": [-1.0, 0.5, 1.5, 9.99, 10.0, 12.0]})
    np.testing.assert_allclose(rec.events["beats"], [0.5, 1.5, 9.99])
    assert "events 'beats': 3 of 6 event times lie outside the analysed signal span" in \
        " ".join(rec.notes)


# ----------------------------------------------------------------------------- bad files

def _big_header(p):
    p.write_text("t," + ",".join(f"c{i}" for i in range(150_000)) + "\n0,1\n")


def _big_cell(p):
    p.write_text("t,x\n0,1\n0.01," + "9" * (10 * 2 ** 20) + "\n0.02,3\n")


def _edf_neither(p):
    _edf(p)
    raw = bytearray(p.read_bytes())
    raw[0:8] = b"1       "
    p.write_bytes(bytes(raw))


def _wfdb_cut(p):
    _wfdb(p.parent, p.stem)
    _cut(p.with_suffix(".dat"), 3)


def _edf_then(change, bdf=False):
    def make(p):
        _edf(p, bdf=bdf)
        change(p)
    return make


BAD = [
    # (id, file name, maker, options, message part)
    ("edf-cut", "a.edf", _edf_then(lambda p: _cut(p, 100)), {}, "holds 9 of the 10"),
    ("edf-absurd-count", "b.edf", _edf_then(lambda p: _set_records(p, 99_999_999)), {},
     "of the 99999999 data records"),
    ("bdf-cut", "c.bdf", _edf_then(lambda p: _cut(p, 1), bdf=True), {}, "holds 9 of"),
    ("edf-header-only", "d.edf", _edf_then(lambda p: _cut(p, 10 * _record_bytes())), {},
     "holds 0 of the 10"),
    ("neither-edf-nor-bdf", "e.edf", _edf_neither, {}, "neither EDF nor BDF"),
    ("wfdb-cut", "f.hea", _wfdb_cut, {}, "holds 499 of the 500"),
    ("empty", "g.csv", lambda p: p.write_bytes(b""), {}, "is empty"),
    ("empty-edf", "g.edf", lambda p: p.write_bytes(b""), {}, "is empty"),
    ("binary-as-csv", "h.csv", lambda p: p.write_bytes(bytes(range(256)) * 8), {}, "not UTF-8"),
    ("nul-bytes-as-csv", "i.csv", lambda p: p.write_bytes(b"t,x\n0,1\x00\n"), {}, "binary data"),
    ("latin-1-text", "j.csv", lambda p: p.write_bytes("t,x°\n0,1\n".encode("latin-1")), {},
     "not UTF-8"),
    ("header-over-1MB", "k.csv", _big_header, {}, "accepted for a header row"),
    ("cell-over-csv-limit", "l.csv", _big_cell, {}, "cannot split"),
    ("values-near-1e308", "m.csv", lambda p: p.write_text(
        "t,x\n" + "".join(f"{k / 100},{(-1) ** k * 1.7e308}\n" for k in range(300))), {},
     "too large to process"),
    ("times-near-1e308", "n.csv", lambda p: p.write_text(
        "t,x\n" + "".join(f"{k * 1e305},{k}\n" for k in range(300))), {}, "lies beyond"),
    ("events-near-1e308", "o.txt", lambda p: p.write_text("-1e308\n0\n1e308\n"), {},
     "lies beyond"),
    ("two-events", "q.txt", lambda p: p.write_text("0.5\n1.5\n"), {}, "at least 3 event times"),
    ("folder-as-file", "r.csv", lambda p: p.mkdir(), {}, "not a regular file"),
]


@pytest.mark.parametrize("fname, make, opts, part", [b[1:] for b in BAD],
                         ids=[b[0] for b in BAD])
def test_bad_files_refused_and_untouched(tmp_path, fname, make, opts, part):
    path = tmp_path / fname
    make(path)
    before = _hash(tmp_path)
    named = path.with_suffix(".dat").name if path.suffix == ".hea" else fname  # the cut file
    for reader in (read_recording, read_segments):
        with pytest.raises(SyncstatsInputError) as e:
            reader(path, **opts)
        msg = str(e.value)
        assert part in msg and named in msg and "\n" not in msg, msg
    assert _hash(tmp_path) == before


def test_unreadable_file(tmp_path, monkeypatch):
    path = tmp_path / "locked.csv"
    path.write_text("t,x\n0,1\n")

    def denied(*args, **kwargs):
        raise PermissionError(13, "Permission denied")

    import syncstats.io._common as common

    monkeypatch.setattr(common, "open", denied, raising=False)  # also works as root
    with pytest.raises(SyncstatsInputError, match=r"locked\.csv' cannot be opened for reading "
                                                  r"\(Permission denied\)"):
        read_recording(path)
    with pytest.raises(SyncstatsInputError, match=r"locked\.csv' cannot be opened"):
        read_events(path)


# ----------------------------------------------------------------------------- fuzzing

def _valid_edf() -> bytes:
    import io

    buf = io.BytesIO()
    x = np.sin(np.arange(200) / 7)
    edfio.Edf([edfio.EdfSignal(x, 20, label="a", physical_range=(-2, 2)),
               edfio.EdfSignal(-x, 20, label="b", physical_range=(-2, 2))],
              data_record_duration=1).write(buf)
    return buf.getvalue()


_EDF = _valid_edf()
_CSV = ("time_s,a,b\n" + "".join(f"{k / 20},{np.sin(k / 7):.6f},{np.cos(k / 7):.6f}\n"
                                 for k in range(200))).encode()
#: Header fields worth editing: (start, width) of version, start date, start time,
#: header bytes, reserved, record count, record duration, signal count (EDF spec).
_FIELDS = [(0, 8), (168, 8), (176, 8), (184, 8), (192, 44), (236, 8), (244, 8), (252, 4),
           (256 + 2 * 16 + 2 * 80 + 2 * 8, 8), (256 + 2 * (16 + 80 + 8 + 8 + 8 + 8 + 8 + 80), 8)]

_edits = st.one_of(
    st.tuples(st.just("cut"), st.integers(1, 5000)),
    st.tuples(st.just("flip"), st.integers(0, 10 ** 6), st.integers(1, 255)),
    st.tuples(st.just("field"), st.integers(0, len(_FIELDS) - 1),
              st.text(alphabet="0123456789 -+.eEX:", max_size=10)),
)


def _apply(raw: bytes, edits) -> bytes:
    out = bytearray(raw)
    for edit in edits:
        if edit[0] == "cut" and len(out) > 1:
            del out[-min(edit[1], len(out) - 1):]
        elif edit[0] == "flip" and out:
            out[edit[1] % len(out)] ^= edit[2]
        elif edit[0] == "field":
            start, width = _FIELDS[edit[1]]
            if start + width <= len(out):
                out[start:start + width] = edit[2].encode()[:width].ljust(width)
    return bytes(out)


def _only_input_errors(path: Path, **opts) -> None:
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            read_segments(path, min_segment_s=0, **opts)
    except SyncstatsInputError as err:
        assert path.name in str(err), str(err)


@settings(max_examples=60, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(edits=st.lists(_edits, min_size=1, max_size=3), allow=st.booleans())
def test_fuzz_edf_only_input_errors(tmp_path, edits, allow):
    path = tmp_path / "fuzz.edf"
    path.write_bytes(_apply(_EDF, edits))
    _only_input_errors(path, allow_truncated=allow)


@settings(max_examples=60, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(edits=st.lists(st.one_of(_edits.filter(lambda e: e[0] != "field"),
                                st.tuples(st.just("insert"), st.integers(0, 10 ** 5),
                                          st.sampled_from([b",", b"\n", b";", b"x", b"\t",
                                                           b"1e308", b'"', b"\xff", b"#"]))),
                      min_size=1, max_size=3))
def test_fuzz_csv_only_input_errors(tmp_path, edits):
    raw = bytearray(_CSV)
    for edit in edits:
        if edit[0] == "insert":
            i = edit[1] % len(raw)
            raw[i:i] = edit[2]
        else:
            raw = bytearray(_apply(bytes(raw), [edit]))
    path = tmp_path / "fuzz.csv"
    path.write_bytes(bytes(raw))
    _only_input_errors(path)


def test_empty_extra_fields_are_noted(tmp_path):
    path = tmp_path / "trail.csv"
    path.write_text("t,x\n" + "".join(f"{k / 10},{k},,\n" for k in range(50)))  # 2 extra
    rec = read_recording(path)
    np.testing.assert_array_equal(rec.signals["x"], np.arange(50.0))
    assert any("extra fields are empty and were ignored" in n for n in rec.notes)
