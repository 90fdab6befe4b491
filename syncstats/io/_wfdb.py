"""WFDB records (.hea header + signal files) and annotation files, through ``wfdb``.

A record may be multi-frequency (``samps_per_frame`` > 1 for some signals): each
signal then has its own rate, frame rate x samples per frame. Samples the format
marks as invalid arrive as NaN and count as gaps. Annotation files become events:
the beat annotations (when the file has any), else every annotation.
"""
from __future__ import annotations

from fractions import Fraction
from pathlib import Path

import numpy as np

from syncstats._errors import SyncstatsInputError

from ._common import (
    _library_warnings,
    _rate_fraction,
    _select,
    _short,
    _Source,
    _unique_labels,
)
from ._events import _validate_event_times

__all__: list[str] = []

#: Beat annotation symbols of the WFDB annotation-code table (as listed in the
#: ``wfdb.io.annotation`` documentation: normal, bundle-branch-block, aberrated,
#: premature, fusion, escape, paced, unclassifiable and R-on-T beats). Common practice.
BEAT_SYMBOLS = frozenset("NLRBaVFJASEj/Qenfr")

#: Bits per sample of the uncompressed WFDB signal formats (WFDB signal-file format
#: documentation, recalled from memory; 16 is confirmed by the tests with files wfdb
#: writes): 212 packs two 12-bit samples in 3 bytes, 310/311 three 10-bit samples in 4
#: bytes. Compressed formats are not checked here (the library checks them).
_FORMAT_BITS = {"8": 8, "16": 16, "24": 24, "32": 32, "61": 16, "80": 8, "160": 16,
                "212": 12, "310": Fraction(32, 3), "311": Fraction(32, 3)}


def _record_base(p: Path) -> Path:
    """Record path without extension; the header must exist beside it."""
    base = p.with_suffix("") if p.suffix.lower() in {".hea", ".dat"} else p
    header = base.with_suffix(".hea")
    if not header.is_file():
        raise SyncstatsInputError(
            f"WFDB record '{base}' has no header file '{header.name}' beside it; a WFDB "
            "record needs its .hea header (give the .hea path, or the record path without "
            "extension)."
        )
    return base


def _load_wfdb(p: Path, *, signals: list[str] | None,
               annotation: list[str] | None, allow_truncated: bool = False) -> _Source:
    import wfdb

    base = _record_base(p)
    notes: list[str] = []
    try:
        with _library_warnings(notes, "the WFDB reader (wfdb)"):
            header = wfdb.rdheader(str(base))
    except Exception as err:
        raise SyncstatsInputError(
            f"WFDB header '{base.with_suffix('.hea')}' could not be read "
            f"({type(err).__name__}: {_short(err)}); check that it is a WFDB header file."
        ) from err
    raw_names = list(header.sig_name or [])
    if not raw_names:
        raise SyncstatsInputError(
            f"WFDB record '{base}' lists no signals in its header; give a record with "
            "signals, or read its annotations as events."
        )
    labels, label_notes = _unique_labels(raw_names)
    notes += label_notes
    chosen = _select(labels, signals, p)
    index = [labels.index(c) for c in chosen]
    sampto = _frames_to_read(header, base, index, allow_truncated, notes)
    try:
        with _library_warnings(notes, "the WFDB reader (wfdb)"):
            rec = wfdb.rdrecord(str(base), channels=index, smooth_frames=False,
                                **({} if sampto is None else {"sampto": sampto}))
    except Exception as err:
        raise SyncstatsInputError(
            f"WFDB record '{base}' could not be read ({type(err).__name__}: {_short(err)}); "
            "check that its signal (.dat) files are present and complete."
        ) from err
    if not rec.fs or rec.fs <= 0:
        raise SyncstatsInputError(
            f"WFDB record '{base}' has no sampling frequency in its header; add it to the "
            "header's record line."
        )
    frame_rate = _rate_fraction(float(rec.fs))
    spf = list(rec.samps_per_frame or [1] * len(chosen))
    data: dict[str, np.ndarray] = {}
    rates: dict[str, Fraction] = {}
    units: dict[str, str] = {}
    rec_units = list(rec.units or [""] * len(chosen))
    for j, name in enumerate(chosen):
        data[name] = np.array(rec.e_p_signal[j], dtype=float)
        rates[name] = frame_rate * int(spf[j])
        units[name] = str(rec_units[j] or "")
    start_time = rec.base_datetime.isoformat() if rec.base_datetime is not None else None
    events: dict[str, np.ndarray] = {}
    for ext in annotation or []:
        events[ext] = _read_annotation(base, ext, float(rec.fs), notes)
    return _Source(
        path=p, name=base.name, kind="WFDB", signals=data, rates=rates, units=units,
        start_time=start_time, events=events, notes=notes,
    )


def _frames_to_read(header, base: Path, index: list[int], allow_truncated: bool,
                    notes: list[str]) -> int | None:
    """Frames to read (None: all the header declares), from the sizes of the signal files
    that hold the chosen signals; a file shorter than the header says is refused unless
    ``allow_truncated`` (then the complete frames are read, with a note)."""
    n = getattr(header, "sig_len", None)
    if not n or not getattr(header, "file_name", None):  # multi-segment: the library checks
        return None
    spf = list(header.samps_per_frame or [1] * header.n_sig)
    files: dict[str, list[int]] = {}
    for i, name in enumerate(header.file_name):
        files.setdefault(name, []).append(i)
    have = n
    short: list[str] = []
    for fname, members in files.items():
        if not set(members) & set(index):
            continue
        bits = [_FORMAT_BITS.get(str(header.fmt[i])) for i in members]
        if any(b is None for b in bits):
            continue  # compressed or unknown format: the library checks it
        path = base.with_name(fname)
        if not path.is_file():
            raise SyncstatsInputError(
                f"WFDB record '{base}' needs the signal file '{fname}', which is not beside "
                "its header; copy the signal file next to the header."
            )
        offset = int((header.byte_offset or [0] * header.n_sig)[members[0]] or 0)
        frame_bits = sum(Fraction(b) * int(spf[i] or 1) for b, i in zip(bits, members))
        frames = int(Fraction(max(path.stat().st_size - offset, 0) * 8) // frame_bits)
        if frames < n:
            short.append(f"'{path}' holds {frames} of the {n} samples per signal "
                         "(frames) the header declares")
            have = min(have, frames)
        elif frames > n:
            notes.append(f"WFDB signal file '{path.name}' holds {frames - n} frames after "
                         f"the {n} the header declares; they were ignored")
    if not short:
        return None
    what = f"WFDB signal file {'; '.join(short)}"
    if not allow_truncated or have == 0:
        raise SyncstatsInputError(
            f"{what}, so the file is cut off; copy it again, or allow truncated files to "
            "analyse the complete samples only." if have else
            f"{what}, so there is nothing to analyse; copy it again."
        )
    notes.append(f"cut-off file: {what}; only the first {have} frames were analysed and "
                 f"the last {n - have} declared frames are missing")
    return have


def _read_annotation(base: Path, ext: str, fs: float, notes: list[str]) -> np.ndarray:
    import wfdb

    path = base.with_name(f"{base.name}.{ext}")
    if not path.is_file():
        raise SyncstatsInputError(
            f"WFDB record '{base}' has no annotation file '{path.name}'; give the "
            "extension of an existing annotation file as the annotation (e.g. 'atr')."
        )
    try:
        with _library_warnings(notes, "the WFDB annotation reader (wfdb)"):
            ann = wfdb.rdann(str(base), ext)
    except Exception as err:
        raise SyncstatsInputError(
            f"WFDB annotation file '{path}' could not be read ({type(err).__name__}: "
            f"{_short(err)}); check that it is a WFDB annotation file."
        ) from err
    samples = np.asarray(ann.sample, dtype=float)
    symbols = list(ann.symbol or [])
    if samples.size == 0:
        raise SyncstatsInputError(
            f"WFDB annotation file '{path}' holds no annotations; give another annotation "
            "extension or leave the annotation out."
        )
    ann_fs = float(ann.fs) if getattr(ann, "fs", None) else fs
    beat = np.array([s in BEAT_SYMBOLS for s in symbols], dtype=bool)
    if beat.any():
        times = samples[beat] / ann_fs
        note = (f"events {ext!r}: {int(beat.sum())} beat annotations from '{path.name}'"
                + (f" ({int((~beat).sum())} non-beat annotations left out)" if (~beat).any() else ""))
    else:
        times = samples / ann_fs
        note = f"events {ext!r}: all {samples.size} annotations from '{path.name}' (none is a beat)"
    times = _validate_event_times(times, "WFDB annotation file", str(path))
    notes.append(note)
    return times
