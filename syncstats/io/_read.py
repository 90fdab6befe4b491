"""Public readers: one entry point dispatching on the file suffix, and one per format."""
from __future__ import annotations

import os
from pathlib import Path
from typing import Sequence

from syncstats._checks import check_bool
from syncstats._errors import SyncstatsInputError

from ._common import (
    _as_path,
    _check_file,
    _check_fs,
    _check_name_list,
    _first_content_line,
    _is_plain_event_line,
    _read_text,
    _Source,
)
from ._edf import _load_edf
from ._events import _load_event_option, _read_event_file
from ._grid import _check_gap_options, _finish
from ._recording import Recording
from ._tabular import _load_delimited, _load_parquet
from ._wfdb import _load_wfdb

__all__ = [
    "ACCEPTED_SUFFIXES",
    "read_csv",
    "read_edf",
    "read_parquet",
    "read_recording",
    "read_segments",
    "read_wfdb",
]

#: File suffix -> format read by :func:`read_recording` (compared lower-cased).
ACCEPTED_SUFFIXES: dict[str, str] = {
    ".csv": "table",
    ".tsv": "table",
    ".txt": "table",
    ".parquet": "parquet",
    ".edf": "edf",
    ".bdf": "edf",
    ".hea": "wfdb",
    ".dat": "wfdb",
}
_FORMATS = ("table", "parquet", "edf", "wfdb")


def _resolve(path, fmt: str | None) -> tuple[Path, str]:
    """Existing path and its format (a WFDB record may be given without extension)."""
    p = _as_path(path)
    if fmt is not None:
        if fmt not in _FORMATS:
            raise SyncstatsInputError(
                f"The format option {fmt!r} is not supported; choose one of "
                f"{', '.join(map(repr, _FORMATS))}, or leave it out to go by the suffix."
            )
        if fmt == "wfdb":
            return p, fmt
        return _check_file(p), fmt
    suffix = p.suffix.lower()
    if suffix not in ACCEPTED_SUFFIXES:
        header = Path(str(p) + ".hea")
        if not p.exists() and header.is_file():
            return p, "wfdb"
        raise SyncstatsInputError(
            f"File '{p}' has the suffix {p.suffix or '(none)'!r}, which is not a format "
            f"syncstats reads; accepted suffixes are {', '.join(ACCEPTED_SUFFIXES)}; rename "
            "the file or name its format."
        )
    kind = ACCEPTED_SUFFIXES[suffix]
    if kind == "wfdb":
        if not p.exists():
            _check_file(p)
        return p, kind
    return _check_file(p), kind


def _reject(option: str, value, fmt: str, p: Path, hint: str) -> None:
    if value is not None:
        raise SyncstatsInputError(
            f"The {option} option does not apply to {fmt} file '{p}'; {hint}"
        )


def _load(p: Path, fmt: str, *, fs, signals, time_column, annotation,
          allow_truncated: bool = False) -> _Source:
    fs = _check_fs(fs, "fs")
    signals = _check_name_list(signals, "signals")
    annotation = _check_name_list(annotation, "annotation")
    if time_column is not None and not isinstance(time_column, str):
        raise SyncstatsInputError(
            f"The time column option {time_column!r} is not a column name; give the "
            "name of the column with the sample times."
        )
    if fmt in ("table", "parquet"):
        _reject("annotation", annotation, "a table", p,
                "give event lists as events instead.")
        if fmt == "parquet":
            return _load_parquet(p, fs=fs, time_column=time_column, signals=signals)
        if p.suffix.lower() == ".txt" and _is_event_list(p):
            if signals is not None or time_column is not None:
                raise SyncstatsInputError(
                    f"File '{p}' is a list of event times (one number per line), so it has "
                    "no signals or time column; leave out the signal and time-column choices."
                )
            times, notes = _read_event_file(p)
            return _Source(path=p, name=p.stem, kind="event list", signals={}, rates={},
                           events={p.stem: times},
                           notes=[f"read '{p.name}' as a list of event times (s)", *notes])
        return _load_delimited(p, fs=fs, time_column=time_column, signals=signals)
    hint = "the header gives the sampling rates (give a common rate to resample to instead)."
    _reject("sampling rate", fs, fmt.upper(), p, hint)
    _reject("time column", time_column, fmt.upper(), p, "its header defines the time axis.")
    if fmt == "edf":
        return _load_edf(p, signals=signals, annotation=annotation,
                         allow_truncated=allow_truncated)
    return _load_wfdb(p, signals=signals, annotation=annotation,
                      allow_truncated=allow_truncated)


def _is_event_list(p: Path) -> bool:
    return _is_plain_event_line(_first_content_line(_read_text(p, "file")))


def read_segments(
    path: str | os.PathLike,
    *,
    fs: float | None = None,
    signals: str | Sequence[str] | None = None,
    events=None,
    time_column: str | None = None,
    annotation: str | Sequence[str] | None = None,
    name: str | None = None,
    resample_to: float | None = None,
    gaps: str = "split",
    min_segment_s: float = 10.0,
    format: str | None = None,
    allow_truncated: bool = False,
) -> list[Recording]:
    """Read a recording file and return one Recording per gap-free segment.

    Parameters
    ----------
    path : str or path-like
        The file. Its suffix picks the reader: ``.csv .tsv .txt`` (delimited table,
        or for ``.txt`` a list of event times, one per line), ``.parquet``, ``.edf``,
        ``.bdf``, ``.hea``/``.dat`` (WFDB record; the path without extension works too).
    fs : float, optional
        Sampling rate in Hz of a table without a time column (checked against the
        time column when there is one). Tables only.
    signals : str or sequence of str, optional
        Signals (columns / channel labels) to read, in this order; default all.
    events : path or mapping, optional
        An event-time file (seconds; the event name is the file stem) or a mapping
        ``name -> path`` (a table column named ``name`` is used when present) or
        ``name -> sequence of seconds``. Times in files are read in the signal file's
        clock (a table's time column); arrays count from the first sample.
    time_column : str, optional
        Name of the time column of a table (default: a column named time, time_s,
        t, seconds, ...). Seconds, or ISO 8601 date-times.
    annotation : str or sequence of str, optional
        WFDB: annotation file extension(s), e.g. ``"atr"``; their beat annotations (or
        all annotations if none is a beat) become events named by the extension.
        EDF+: annotation text(s); their onsets become events named by the text.
    name : str, optional
        Recording name (default: the file stem; segments get ``"#1"``, ``"#2"``, ...).
    resample_to : float, optional
        Common rate in Hz for signals sampled at different rates (required then), or
        to change the rate of all signals. Uses :func:`scipy.signal.resample_poly`.
    gaps : {"split", "error"}
        "split": cut at every gap (NaN samples, missing rows of the time column,
        EDF+D record breaks); "error": raise at the first gap.
    min_segment_s : float
        Gap-free pieces shorter than this (seconds) are dropped, with a note.
    format : {"table", "parquet", "edf", "wfdb"}, optional
        Override the suffix.
    allow_truncated : bool
        EDF/BDF/WFDB: a file that holds fewer data than its header declares (cut off
        while copying or recording) is refused by default; when True, the complete
        records are analysed and a note in ``Recording.notes`` says what was cut.

    Returns
    -------
    list of Recording
        One Recording (with the plain name) when the file has no gap, else one per
        kept gap-free segment, named ``"<name>#k"``, each starting at time 0 with its
        events shifted and restricted to it.

    Raises
    ------
    SyncstatsInputError
        For every problem with the file or the options; the message names the file,
        the signal or column, what is wrong and what to do.

    Notes
    -----
    Nothing is ever interpolated. With several sampling rates the signals are cut on
    the grid of step 1/g, g = gcd of the rates, so that every segment starts at the
    same instant in every signal; resampling by the rational factor
    ``up/down = resample_to / rate`` follows.
    """
    min_seg = _check_gap_options(gaps, min_segment_s)
    resample = _check_fs(resample_to, "resample_to")
    allow_truncated = check_bool(allow_truncated, "allow_truncated")
    p, fmt = _resolve(path, format)
    src = _load(p, fmt, fs=fs, signals=signals, time_column=time_column,
                annotation=annotation, allow_truncated=allow_truncated)
    extra = _load_event_option(events, src.time_origin_s, src.notes)
    return _finish(src, name=name, resample_to=resample, gaps=gaps,
                   min_segment_s=min_seg, extra_events=extra)


def read_recording(
    path: str | os.PathLike,
    *,
    fs: float | None = None,
    signals: str | Sequence[str] | None = None,
    events=None,
    time_column: str | None = None,
    annotation: str | Sequence[str] | None = None,
    name: str | None = None,
    resample_to: float | None = None,
    format: str | None = None,
    allow_truncated: bool = False,
) -> Recording:
    """Read a recording file (any accepted format) into one gap-free Recording.

    Takes the same options as :func:`read_segments` (including ``allow_truncated``;
    without ``gaps`` and
    ``min_segment_s``) and raises :class:`~syncstats._errors.SyncstatsInputError` at the
    first gap, naming the file, the signal and the time in seconds; use
    ``read_segments(path, gaps="split")`` to analyse gap-free pieces instead.

    Returns
    -------
    Recording
        Signals on one grid (float64 copies), ``fs`` in Hz, units, start time, events
        (seconds from the first sample), source path and notes.

    Examples
    --------
    >>> import tempfile, pathlib, numpy as np, pandas as pd
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "demo.csv"
    >>> t = np.arange(500) / 50.0
    >>> pd.DataFrame({"time_s": t, "a": np.sin(t), "b": np.cos(t)}).to_csv(p, index=False)
    >>> rec = read_recording(p)
    >>> rec.fs, sorted(rec.signals), rec.duration_s
    (50.0, ['a', 'b'], 10.0)
    """
    return read_segments(path, fs=fs, signals=signals, events=events,
                         time_column=time_column, annotation=annotation, name=name,
                         resample_to=resample_to, gaps="error", format=format,
                         allow_truncated=allow_truncated)[0]


def read_csv(path: str | os.PathLike, *, fs: float | None = None,
             time_column: str | None = None, signals: str | Sequence[str] | None = None,
             events=None, name: str | None = None,
             resample_to: float | None = None) -> Recording:
    """Read a delimited text table (CSV, TSV, whitespace; delimiter sniffed).

    The header row is required; leading lines starting with ``#`` are skipped. Sample
    times come from the time column (seconds or ISO 8601) or from ``fs``. Empty cells
    are missing samples (gaps). See :func:`read_segments` for the options.
    """
    return read_segments(path, fs=fs, time_column=time_column, signals=signals,
                         events=events, name=name, resample_to=resample_to,
                         gaps="error", format="table")[0]


def read_parquet(path: str | os.PathLike, *, fs: float | None = None,
                 time_column: str | None = None, signals: str | Sequence[str] | None = None,
                 events=None, name: str | None = None,
                 resample_to: float | None = None) -> Recording:
    """Read a Parquet table (pandas + pyarrow); a named or date-time index is a column.

    Same rules as :func:`read_csv`; see :func:`read_segments` for the options.
    """
    return read_segments(path, fs=fs, time_column=time_column, signals=signals,
                         events=events, name=name, resample_to=resample_to,
                         gaps="error", format="parquet")[0]


def read_edf(path: str | os.PathLike, *, signals: str | Sequence[str] | None = None,
             annotation: str | Sequence[str] | None = None, events=None,
             name: str | None = None, resample_to: float | None = None,
             allow_truncated: bool = False) -> Recording:
    """Read an EDF, EDF+ or BDF/BDF+ file with ``edfio`` (EDF or BDF as its header says).

    Physical values in the header's units; ``annotation`` picks EDF+ annotation texts
    whose onsets become events. Signals at different rates need ``resample_to``. See
    :func:`read_segments` for the options.
    """
    return read_segments(path, signals=signals, annotation=annotation, events=events,
                         name=name, resample_to=resample_to, gaps="error",
                         format="edf", allow_truncated=allow_truncated)[0]


def read_wfdb(path: str | os.PathLike, *, signals: str | Sequence[str] | None = None,
              annotation: str | Sequence[str] | None = None, events=None,
              name: str | None = None, resample_to: float | None = None,
              allow_truncated: bool = False) -> Recording:
    """Read a WFDB record (``.hea`` + signal files, path with or without extension).

    ``annotation`` gives annotation file extension(s) (e.g. ``"atr"``) whose beats
    become events. Multi-frequency records need ``resample_to``. See
    :func:`read_segments` for the options.
    """
    return read_segments(path, signals=signals, annotation=annotation, events=events,
                         name=name, resample_to=resample_to, gaps="error",
                         format="wfdb", allow_truncated=allow_truncated)[0]

