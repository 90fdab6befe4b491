"""Readers: recording files (CSV/TSV, Parquet, EDF/BDF, WFDB, event lists) -> Recording.

The lowest layer of syncstats; it imports nothing from the other layers except
:mod:`syncstats._errors` and the shared input checks :mod:`syncstats._checks`. Every reader returns :class:`Recording` objects whose signals
share one sampling grid and contain no gaps: several rates are resampled only when
``resample_to`` is given, and gaps are never filled (:func:`read_segments` cuts at them).
"""
from ._events import read_events
from ._read import (
    ACCEPTED_SUFFIXES,
    read_csv,
    read_edf,
    read_parquet,
    read_recording,
    read_segments,
    read_wfdb,
)
from ._recording import Recording
from ._write import write_events, write_recording_csv

__all__ = [
    "ACCEPTED_SUFFIXES",
    "Recording",
    "read_csv",
    "read_edf",
    "read_events",
    "read_parquet",
    "read_recording",
    "read_segments",
    "read_wfdb",
    "write_events",
    "write_recording_csv",
]
