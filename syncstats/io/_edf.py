"""EDF, EDF+ and BDF (BDF+) files through the ``edfio`` package.

Signals keep their own sampling rates (samples per data record / record duration);
EDF+ annotations become events when asked for by their text; an EDF+D
(discontinuous) file is continuous only within runs of adjoining data records.
"""
from __future__ import annotations

import warnings
from decimal import Decimal
from fractions import Fraction
from pathlib import Path

import numpy as np

from syncstats._errors import SyncstatsInputError

from ._common import _Block, _library_notes, _select, _Source, _unique_labels
from ._events import _validate_event_times

__all__: list[str] = []


def _short(err: BaseException) -> str:
    msg = " ".join(str(err).split())
    return (msg[:160] + "...") if len(msg) > 160 else (msg or type(err).__name__)


def _load_edf(p: Path, *, signals: list[str] | None,
              annotation: list[str] | None) -> _Source:
    import edfio

    bdf = p.suffix.lower() == ".bdf"
    kind = "BDF" if bdf else "EDF"
    caught: list[warnings.WarningMessage] = []
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            rec = edfio.read_bdf(p) if bdf else edfio.read_edf(p)
            raw_labels = list(rec.labels)
    except Exception as err:  # edfio raises ValueError, IndexError, UnicodeError, ...
        raise SyncstatsInputError(
            f"File '{p}' could not be read as {kind} ({type(err).__name__}: {_short(err)}); "
            f"check that it is a complete {kind} file (a .bdf suffix means 24-bit BDF, "
            ".edf 16-bit EDF)."
        ) from err
    notes = _library_notes(caught, f"the {kind} reader (edfio)")
    labels, label_notes = _unique_labels(raw_labels)
    notes += label_notes
    if not labels:
        raise SyncstatsInputError(
            f"File '{p}' holds no signals (only annotations); read its annotations as "
            "events, or pass a file with signals."
        )
    chosen = _select(labels, signals, p)
    by_label = dict(zip(labels, rec.signals))
    duration = Fraction(Decimal(str(rec.data_record_duration)))
    data: dict[str, np.ndarray] = {}
    rates: dict[str, Fraction] = {}
    units: dict[str, str] = {}
    for name in chosen:
        sig = by_label[name]
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                x = np.array(sig.data, dtype=float)
        except Exception as err:
            raise SyncstatsInputError(
                f"File '{p}', signal {name!r}: the samples could not be read "
                f"({type(err).__name__}: {_short(err)}); check that the file is complete."
            ) from err
        if duration > 0:
            rates[name] = Fraction(sig.samples_per_data_record) / duration
        else:
            rates[name] = Fraction(sig.sampling_frequency).limit_denominator(1_000_000)
        if rates[name] <= 0:
            raise SyncstatsInputError(
                f"File '{p}', signal {name!r} has a sampling rate of 0 Hz in its header; "
                "leave it out with signals=[...]."
            )
        data[name] = x
        units[name] = sig.physical_dimension.strip()
    start_time = None
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            start_time = rec.startdatetime.isoformat()
    except Exception:  # anonymised ("X") or malformed start date: leave unknown
        start_time = None
    events: dict[str, np.ndarray] = {}
    if annotation:
        try:
            anns = rec.annotations
        except Exception as err:
            raise SyncstatsInputError(
                f"File '{p}': the EDF+ annotations could not be read ({_short(err)}); "
                "leave out annotation= or repair the file."
            ) from err
        texts = sorted({a.text for a in anns})
        for text in annotation:
            if text not in texts:
                shown = ", ".join(map(repr, texts[:20])) + (", ..." if len(texts) > 20 else "")
                raise SyncstatsInputError(
                    f"File '{p}' has no annotation with text {text!r}; the annotation texts "
                    f"are {shown or '(none)'}, pass one of those to annotation=."
                )
            onsets = [a.onset for a in anns if a.text == text]
            events[text] = _validate_event_times(
                onsets, f"File '{p}', annotation {text!r}")
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
