"""WFDB records (.hea header + signal files) and annotation files, through ``wfdb``.

A record may be multi-frequency (``samps_per_frame`` > 1 for some signals): each
signal then has its own rate, frame rate x samples per frame. Samples the format
marks as invalid arrive as NaN and count as gaps. Annotation files become events:
the beat annotations (when the file has any), else every annotation.
"""
from __future__ import annotations

import warnings
from fractions import Fraction
from pathlib import Path

import numpy as np

from syncstats._errors import SyncstatsInputError

from ._common import _library_notes, _rate_fraction, _select, _Source, _unique_labels
from ._events import _validate_event_times

__all__: list[str] = []

#: Beat annotation symbols of the WFDB annotation-code table (as listed in the
#: ``wfdb.io.annotation`` documentation: normal, bundle-branch-block, aberrated,
#: premature, fusion, escape, paced, unclassifiable and R-on-T beats). Common practice.
BEAT_SYMBOLS = frozenset("NLRBaVFJASEj/Qenfr")


def _short(err: BaseException) -> str:
    msg = " ".join(str(err).split())
    return (msg[:160] + "...") if len(msg) > 160 else (msg or type(err).__name__)


def _record_base(p: Path) -> Path:
    """Record path without extension; the header must exist beside it."""
    base = p.with_suffix("") if p.suffix.lower() in {".hea", ".dat"} else p
    header = base.with_suffix(".hea")
    if not header.is_file():
        raise SyncstatsInputError(
            f"WFDB record '{base}' has no header file '{header.name}' beside it; a WFDB "
            "record needs its .hea header (pass the .hea path, or the record path without "
            "extension)."
        )
    return base


def _load_wfdb(p: Path, *, signals: list[str] | None,
               annotation: list[str] | None) -> _Source:
    import wfdb

    base = _record_base(p)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            header = wfdb.rdheader(str(base))
    except Exception as err:
        raise SyncstatsInputError(
            f"WFDB header '{base.with_suffix('.hea')}' could not be read "
            f"({type(err).__name__}: {_short(err)}); check that it is a WFDB header file."
        ) from err
    raw_names = list(header.sig_name or [])
    if not raw_names:
        raise SyncstatsInputError(
            f"WFDB record '{base}' lists no signals in its header; pass a record with "
            "signals, or read its annotations with read_events."
        )
    labels, notes = _unique_labels(raw_names)
    chosen = _select(labels, signals, p)
    index = [labels.index(c) for c in chosen]
    caught: list[warnings.WarningMessage] = []
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            rec = wfdb.rdrecord(str(base), channels=index, smooth_frames=False)
    except Exception as err:
        raise SyncstatsInputError(
            f"WFDB record '{base}' could not be read ({type(err).__name__}: {_short(err)}); "
            "check that its signal (.dat) files are present and complete."
        ) from err
    notes += _library_notes(caught, "the WFDB reader (wfdb)")
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
        events[ext], note = _read_annotation(base, ext, float(rec.fs))
        notes.append(note)
    return _Source(
        path=p, name=base.name, kind="WFDB", signals=data, rates=rates, units=units,
        start_time=start_time, events=events, notes=notes,
    )


def _read_annotation(base: Path, ext: str, fs: float) -> tuple[np.ndarray, str]:
    import wfdb

    path = base.with_name(f"{base.name}.{ext}")
    if not path.is_file():
        raise SyncstatsInputError(
            f"WFDB record '{base}' has no annotation file '{path.name}'; pass the "
            "extension of an existing annotation file to annotation= (e.g. 'atr')."
        )
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
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
            f"WFDB annotation file '{path}' holds no annotations; pass another annotation "
            "extension or leave annotation= out."
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
    return _validate_event_times(times, f"WFDB annotation file '{path}'"), note
