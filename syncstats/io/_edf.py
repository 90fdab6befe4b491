"""EDF, EDF+ and BDF (BDF+) files through the ``edfio`` package.

Signals keep their own sampling rates (samples per data record / record duration);
EDF+ annotations become events when asked for by their text; an EDF+D
(discontinuous) file is continuous only within runs of adjoining data records.
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass
from decimal import Decimal
from fractions import Fraction
from pathlib import Path

import numpy as np

from syncstats._errors import SyncstatsInputError

from ._common import _Block, _library_warnings, _select, _short, _Source, _unique_labels
from ._events import _validate_event_times

__all__: list[str] = []

#: First 8 bytes of the header: the version field. EDF: "0" padded with spaces (EDF
#: specification, header field 1); BDF: byte 255 then "BIOSEMI" (BioSemi BDF format).
_EDF_MAGIC = b"0       "
_BDF_MAGIC = b"\xffBIOSEMI"
#: Bytes per sample: EDF 16-bit, BDF 24-bit (two's complement, little-endian).
_SAMPLE_BYTES = {"EDF": 2, "BDF": 3}
#: Widths of the per-signal header fields that come before "samples per data record"
#: (label, transducer, physical dimension, physical min/max, digital min/max,
#: prefiltering; EDF specification).
_SIGNAL_FIELDS_BEFORE_SAMPLES = 16 + 80 + 8 + 8 + 8 + 8 + 8 + 80


@dataclass(frozen=True)
class _Layout:
    """What the fixed header says about the data, and how much of it the file holds."""

    kind: str
    header_bytes: int
    declared: int          # data records the header declares (-1: unknown)
    complete: int          # complete data records present in the file
    record_bytes: int
    extra_bytes: int       # bytes after the last record used (partial record or surplus)


def _header_int(raw: bytes, start: int, width: int, field_name: str, p: Path, kind: str) -> int:
    text = raw[start:start + width].decode("ascii", errors="replace").strip()
    try:
        return int(text)
    except ValueError:
        raise SyncstatsInputError(
            f"{kind} file '{p}': the header field '{field_name}' holds {text!r}, not a whole "
            f"number; the header is damaged, so repair or re-export the file."
        ) from None


def _layout(p: Path) -> _Layout:
    """Format from the header's version field, and the data-record count checked
    against the file size."""
    size = p.stat().st_size
    with open(p, "rb") as fh:
        head = fh.read(256)
        if head[:8] == _EDF_MAGIC:
            kind = "EDF"
        elif head[:8] == _BDF_MAGIC:
            kind = "BDF"
        else:
            raise SyncstatsInputError(
                f"File '{p}' is neither EDF nor BDF: its first 8 bytes are {head[:8]!r}, "
                "where an EDF file starts with '0' and 7 spaces and a BDF file with byte 255 "
                "and 'BIOSEMI'; check that it is an EDF or BDF recording."
            )
        if len(head) < 256:
            raise SyncstatsInputError(
                f"{kind} file '{p}' is {size} bytes long, shorter than the 256-byte fixed "
                "header; the file is cut off, so copy or export it again."
            )
        header_bytes = _header_int(head, 184, 8, "number of bytes in header record", p, kind)
        declared = _header_int(head, 236, 8, "number of data records", p, kind)
        ns = _header_int(head, 252, 4, "number of signals", p, kind)
        if ns < 1 or header_bytes != 256 * (ns + 1):
            raise SyncstatsInputError(
                f"{kind} file '{p}': the header declares {ns} signal(s) and a header of "
                f"{header_bytes} bytes, which do not fit (a header holds 256 bytes plus 256 "
                "per signal); the header is damaged, so repair or re-export the file."
            )
        sig = fh.read(256 * ns)
    if len(sig) < 256 * ns:
        raise SyncstatsInputError(
            f"{kind} file '{p}' ends inside its header ({size} of {header_bytes} header "
            "bytes); the file is cut off, so copy or export it again."
        )
    base = _SIGNAL_FIELDS_BEFORE_SAMPLES * ns
    samples = [_header_int(sig, base + 8 * i, 8, f"samples per data record of signal {i + 1}",
                           p, kind) for i in range(ns)]
    if min(samples) < 0 or sum(samples) == 0:
        raise SyncstatsInputError(
            f"{kind} file '{p}': the header gives {samples} samples per data record, so a "
            "record holds no data; the header is damaged, so repair or re-export the file."
        )
    record_bytes = sum(samples) * _SAMPLE_BYTES[kind]
    data_bytes = size - header_bytes
    complete = data_bytes // record_bytes
    used = complete if declared < 0 else min(complete, declared)
    return _Layout(kind, header_bytes, declared, complete, record_bytes,
                   data_bytes - used * record_bytes)


def _records_to_read(layout: _Layout, p: Path, allow_truncated: bool,
                     notes: list[str]) -> int | None:
    """Data records to read (None: the file is whole), refusing a cut-off file unless
    ``allow_truncated``; every cut is written to ``notes``."""
    k = layout.kind
    have, want = layout.complete, layout.declared
    if want >= 0 and have >= want:
        if layout.extra_bytes == 0:
            return None
        notes.append(
            f"{k} file: {layout.extra_bytes} bytes after the {want} data records the header "
            "declares were ignored"
        )
        return want
    partial = layout.extra_bytes % layout.record_bytes if want < 0 else layout.extra_bytes
    if want < 0:
        if have == 0:
            raise SyncstatsInputError(
                f"{k} file '{p}' holds no complete data record (its header leaves the record "
                "count open, -1); the recording is empty or cut off, so copy or export it again."
            )
        notes.append(
            f"{k} file: the header leaves the number of data records open (-1); the "
            f"{have} complete records the file holds were read"
            + (f" and an incomplete last record ({partial} bytes) was left out" if partial else "")
        )
        return have
    what = (f"{k} file '{p}' holds {have} of the {want} data records the header declares"
            + (f" (plus {partial} bytes of an incomplete record)" if partial else ""))
    if not allow_truncated or have == 0:
        raise SyncstatsInputError(
            f"{what}, so the file is cut off; copy or export it again, or allow truncated "
            "files to analyse the complete records only." if have else
            f"{what}, so it holds no data to analyse; copy or export it again."
        )
    notes.append(
        f"cut-off file: {what}; only the first {have} records were analysed and the last "
        f"{want - have} declared records are missing"
    )
    return have


def _open(p: Path, layout: _Layout, n_records: int | None):
    """The edfio recording; a cut-off or overlong file is read from an in-memory copy
    whose header declares ``n_records`` (the file itself is never changed)."""
    import edfio

    reader = edfio.read_bdf if layout.kind == "BDF" else edfio.read_edf
    if n_records is None:
        return reader(p)
    raw = bytearray(p.read_bytes()[:layout.header_bytes + n_records * layout.record_bytes])
    raw[236:244] = f"{n_records:<8d}".encode("ascii")
    return reader(bytes(raw))


def _load_edf(p: Path, *, signals: list[str] | None, annotation: list[str] | None,
              allow_truncated: bool = False) -> _Source:
    layout = _layout(p)
    kind = layout.kind
    notes: list[str] = []
    n_records = _records_to_read(layout, p, allow_truncated, notes)
    try:
        return _from_edfio(p, kind, layout, n_records, notes, signals=signals,
                           annotation=annotation)
    except SyncstatsInputError:
        raise
    except Exception as err:  # edfio raises ValueError, IndexError, UnicodeError, ...
        raise SyncstatsInputError(
            f"File '{p}' could not be read as {kind} ({type(err).__name__}: {_short(err)}); "
            f"check that it is a complete, undamaged {kind} file."
        ) from err


def _from_edfio(p: Path, kind: str, layout: _Layout, n_records: int | None,
                notes: list[str], *, signals, annotation) -> _Source:
    who = f"the {kind} reader (edfio)"
    with _library_warnings(notes, who):
        rec = _open(p, layout, n_records)
        raw_labels = list(rec.labels)
    labels, label_notes = _unique_labels(raw_labels)
    notes += label_notes
    if not labels:
        raise SyncstatsInputError(
            f"File '{p}' holds no signals (only annotations); read its annotations as "
            "events, or give a file with signals."
        )
    chosen = _select(labels, signals, p)
    by_label = dict(zip(labels, rec.signals))
    duration = Fraction(Decimal(str(rec.data_record_duration)))
    if duration <= 0:
        raise SyncstatsInputError(
            f"{kind} file '{p}' gives a data record duration of {float(duration):g} s in its "
            "header, so its sampling rates are unknown; repair or re-export the file."
        )
    data: dict[str, np.ndarray] = {}
    rates: dict[str, Fraction] = {}
    units: dict[str, str] = {}
    for name in chosen:
        sig = by_label[name]
        with _library_warnings(notes, who):
            x = np.array(sig.data, dtype=float)
        if not np.isfinite(x).all():
            raise SyncstatsInputError(
                f"{kind} file '{p}', signal {name!r}: the header's physical and digital "
                "ranges turn the samples into non-finite values; repair the signal header "
                "or leave this signal out."
            )
        rates[name] = Fraction(sig.samples_per_data_record) / duration
        if rates[name] <= 0:
            raise SyncstatsInputError(
                f"File '{p}', signal {name!r} has a sampling rate of 0 Hz in its header; "
                "leave this signal out."
            )
        data[name] = x
        units[name] = sig.physical_dimension.strip()
    start_time = None
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            start_time = rec.startdatetime.isoformat()
    except Exception as err:  # anonymised ("X") start date: unknown; malformed: note it
        if type(err).__name__ != "AnonymizedDateError":
            notes.append(f"the start date/time in the {kind} header could not be read "
                         f"({_short(err)}); the start time is left unknown")
    events: dict[str, np.ndarray] = {}
    if annotation:
        with _library_warnings(notes, who):
            anns = rec.annotations
        texts = sorted({a.text for a in anns})
        for text in annotation:
            if text not in texts:
                shown = ", ".join(map(repr, texts[:20])) + (", ..." if len(texts) > 20 else "")
                raise SyncstatsInputError(
                    f"File '{p}' has no annotation with text {text!r}; the annotation texts "
                    f"are {shown or '(none)'}, choose one of those."
                )
            onsets = [a.onset for a in anns if a.text == text]
            events[text] = _validate_event_times(onsets, f"annotation {text!r} of file", str(p))
    blocks = None
    if not rec.is_continuous:
        blocks = _record_blocks(rec, p, duration)
    return _Source(
        path=p, name=p.stem, kind=kind, signals=data, rates=rates, units=units,
        start_time=start_time, events=events, blocks=blocks, notes=notes,
        break_source="EDF+D data records",
    )


def _record_blocks(rec, p: Path, duration: Fraction) -> list[_Block]:
    """Runs of adjoining data records of an EDF+D file, from the time-keeping annotations.

    edfio exposes only ``is_continuous`` publicly, so the record onsets are read with its
    private helpers (checked here; a clear error if a newer edfio changes them).
    """
    try:
        from edfio.edf_annotations import _get_data_record_onset

        tk = rec._timekeeping_signal
        records = tk.digital.reshape((-1, tk._bytes_per_data_record))
        onsets = [Fraction(_get_data_record_onset(r)) for r in records]
    except Exception as err:
        raise SyncstatsInputError(
            f"File '{p}' is a discontinuous EDF+D file whose record start times could not "
            f"be read ({_short(err)}); export it as continuous EDF+C, or cut it yourself."
        ) from err
    blocks: list[_Block] = []
    first = onsets[0]
    start = 0
    for k in range(1, len(onsets)):
        if onsets[k] < onsets[k - 1] + duration:
            raise SyncstatsInputError(
                f"File '{p}': data record {k + 1} starts at {float(onsets[k] - first):.6g} s, "
                "before the previous record ends (records overlap or are out of order); "
                "repair the file's record start times."
            )
    for k in range(1, len(onsets) + 1):
        if k == len(onsets) or onsets[k] != onsets[k - 1] + duration:
            blocks.append(_Block(start * duration, k * duration, float(onsets[start] - first)))
            start = k
    return blocks
