"""Shared pieces of the readers: the intermediate source, path checks, option checks.

Every reader turns its file into a :class:`_Source` (signals at their native rates,
plus where the data are continuous); :mod:`syncstats.io._grid` then brings a source to
one sampling grid and cuts it at gaps.
"""
from __future__ import annotations

import contextlib
import math
import os
import warnings
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Iterable, Sequence

import numpy as np

from syncstats._checks import check_fs
from syncstats._errors import SyncstatsInputError

__all__: list[str] = []

#: Largest denominator used when a floating-point sampling rate is turned into a
#: fraction for the common-grid arithmetic (rates are exact to 1e-6 Hz or better).
_RATE_DENOMINATOR = 1_000_000


@dataclass(frozen=True)
class _Block:
    """A run of data that is continuous in time.

    ``data_start`` / ``data_stop`` are positions in the concatenated data, in seconds
    (exact fractions, so that every signal's sample index is ``data_time * rate``);
    ``onset_s`` is the real time of the first sample of the run, in seconds from the
    recording's time origin.
    """

    data_start: Fraction
    data_stop: Fraction
    onset_s: float


@dataclass
class _Source:
    """What a format loader hands to the common grid step (mutable, private)."""

    path: Path
    name: str
    kind: str
    signals: dict[str, np.ndarray]
    rates: dict[str, Fraction]
    units: dict[str, str] = field(default_factory=dict)
    start_time: str | None = None
    events: dict[str, np.ndarray] = field(default_factory=dict)
    blocks: list[_Block] | None = None
    notes: list[str] = field(default_factory=list)
    #: Real time (s) of the first sample in the file's own clock; external event
    #: files are read in that clock and shifted by it.
    time_origin_s: float = 0.0
    #: Word for where the continuity breaks come from, used in gap messages.
    break_source: str = "data"


def _library_notes(caught, who: str) -> list[str]:
    """Warnings a file library raised while reading, as notes (its deprecations left out)."""
    skip = (DeprecationWarning, PendingDeprecationWarning, FutureWarning)
    out = []
    for w in caught:
        if issubclass(w.category, skip):
            continue
        text = " ".join(str(w.message).split())
        note = f"{who} said: {text}"
        if note not in out:
            out.append(note)
    return out


@contextlib.contextmanager
def _library_warnings(notes: list[str], who: str):
    """Record the warnings a file library raises inside the block as ``notes``."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        yield
    for note in _library_notes(caught, who):
        if note not in notes:
            notes.append(note)


def _short(err: BaseException) -> str:
    """A library error message on one line, at most 160 characters."""
    msg = " ".join(str(err).split())
    return (msg[:160] + "...") if len(msg) > 160 else (msg or type(err).__name__)


def _is_number(s: str) -> bool:
    try:
        float(s)
    except ValueError:
        return False
    return True


def _rate_fraction(rate: float | Fraction) -> Fraction:
    """Exact (or 1e-6-close) fraction for a sampling rate in Hz."""
    if isinstance(rate, Fraction):
        return rate
    return Fraction(rate).limit_denominator(_RATE_DENOMINATOR)


def _fmt_hz(rate: float | Fraction) -> str:
    return f"{float(rate):g} Hz"


def _as_path(path) -> Path:
    try:
        return Path(os.fspath(path)).expanduser()
    except TypeError as err:
        raise SyncstatsInputError(
            f"The input {path!r} is not a file path; give the path of a file as text."
        ) from err


def _check_file(path: str | os.PathLike, what: str = "file") -> Path:
    """Resolve ``path`` and check that it is an existing, non-empty, readable regular file."""
    p = _as_path(path)
    if not p.exists():
        raise SyncstatsInputError(
            f"The {what} '{p}' does not exist; check the path and the working directory."
        )
    if not p.is_file():
        raise SyncstatsInputError(
            f"The {what} '{p}' is not a regular file (is it a folder?); give the path "
            "of the file itself."
        )
    if p.stat().st_size == 0:
        raise SyncstatsInputError(
            f"The {what} '{p}' is empty (0 bytes); check that it was written completely."
        )
    try:
        with open(p, "rb") as fh:
            fh.read(1)
    except OSError as err:
        raise SyncstatsInputError(
            f"The {what} '{p}' cannot be opened for reading ({err.strerror or _short(err)}); "
            "check its permissions, or copy it to a readable place."
        ) from err
    return p


def _read_text(p: Path, what: str = "file") -> str:
    """The whole file as text (UTF-8, optional byte-order mark); binary or blank is refused."""
    try:
        text = p.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError as err:
        raise SyncstatsInputError(
            f"The {what} '{p}' is not UTF-8 text (byte {err.start}); save it as a UTF-8 "
            "text file or give a file in one of the binary formats."
        ) from err
    except OSError as err:
        raise SyncstatsInputError(
            f"The {what} '{p}' cannot be read ({err.strerror or _short(err)}); check its "
            "permissions, or copy it to a readable place."
        ) from err
    if "\x00" in text:
        raise SyncstatsInputError(
            f"The {what} '{p}' holds binary data (a NUL byte at character "
            f"{text.index(chr(0))}), not text; give a text table, or the file in its binary "
            "format with the matching suffix."
        )
    if not text.strip():
        raise SyncstatsInputError(
            f"The {what} '{p}' contains only blank space; check that it was written completely."
        )
    return text


def _first_content_line(text: str) -> str | None:
    """First line that is neither blank nor a '#' comment (stripped), or None."""
    for line in text.splitlines():
        s = line.strip()
        if s and not s.startswith("#"):
            return s
    return None


def _is_plain_event_line(line: str | None) -> bool:
    """A first content line holding one number and nothing else (a plain event list)."""
    return line is not None and len(line.split()) == 1 and "," not in line and _is_number(line)


def _check_fs(fs: float | None, param: str = "fs") -> float | None:
    """A rate option: None, or a finite number of Hz > 0 (the shared check)."""
    if fs is None:
        return None
    return check_fs(fs, where=param, hint="give the rate in Hz as a positive number")


def _check_name_list(values: str | Sequence[str] | None, param: str) -> list[str] | None:
    """Accept None, one name or a sequence of names (no duplicates)."""
    if values is None:
        return None
    if isinstance(values, str):
        values = [values]
    try:
        names = [str(v) for v in values]
    except TypeError as err:
        raise SyncstatsInputError(
            f"The {param} option {values!r} is not a name or a list of names; give "
            "one signal name or several, e.g. ecg and resp."
        ) from err
    if not names:
        raise SyncstatsInputError(
            f"The {param} option is an empty list; give at least one name, or leave the option out."
        )
    dupes = sorted({n for n in names if names.count(n) > 1})
    if dupes:
        raise SyncstatsInputError(
            f"The {param} option names {', '.join(map(repr, dupes))} more than once; list "
            "each name once."
        )
    return names


def _select(available: Sequence[str], wanted: Sequence[str] | None, path: Path,
            what: str = "signal") -> list[str]:
    """Pick ``wanted`` names (in the user's order) from ``available``, or all of them."""
    if wanted is None:
        return list(available)
    missing = [w for w in wanted if w not in available]
    if missing:
        raise SyncstatsInputError(
            f"File '{path}' has no {what} named {', '.join(map(repr, missing))}; the "
            f"available {what}s are {', '.join(map(repr, available)) or '(none)'}; choose "
            "signals from those."
        )
    return list(wanted)


def _unique_labels(labels: Iterable[str | None]) -> tuple[list[str], list[str]]:
    """Usable signal labels and notes on what was changed.

    A missing or blank label (a WFDB signal without description, a blank EDF label)
    becomes ``"signal k"`` (k = position from 1); a repeated label gets " (2)", " (3)", ...
    """
    out: list[str] = []
    notes: list[str] = []
    seen: dict[str, int] = {}
    unnamed: list[str] = []
    for k, raw in enumerate(labels, start=1):
        label = "" if raw is None else str(raw).strip()
        blank = not label
        if blank:
            label = f"signal {k}"
        if label in seen:
            seen[label] += 1
            new = f"{label} ({seen[label]})"
            while new in seen:
                seen[label] += 1
                new = f"{label} ({seen[label]})"
            notes.append(f"signal label {label!r} occurs more than once; renamed a copy to {new!r}")
            seen[new] = 1
            label = new
        else:
            seen[label] = 1
        out.append(label)
        if blank:
            unnamed.append(label)
    if unnamed:
        notes.insert(0, f"{len(unnamed)} signal(s) have no label in the file; named by "
                        f"position: {', '.join(map(repr, unnamed))}")
    return out, notes


def _fraction_gcd(values: Iterable[Fraction]) -> Fraction:
    """Greatest common divisor of positive rationals (largest g with v/g integer for all v)."""
    vals = list(values)
    den = 1
    for v in vals:
        den = math.lcm(den, v.denominator)
    num = 0
    for v in vals:
        num = math.gcd(num, int(v * den))
    return Fraction(num, den)
