"""Event-time lists: one time per line, or one column of a table."""
from __future__ import annotations

import os
from collections.abc import Mapping
from pathlib import Path

import numpy as np

from syncstats._checks import check_event_times
from syncstats._errors import SyncstatsInputError

from ._common import _check_file, _first_content_line, _is_plain_event_line, _read_text
from ._tabular import _read_delimited_frame, _read_parquet_frame

__all__ = ["read_events"]

#: Largest magnitude of an event time (s), about 31,700 years: beyond it the intervals
#: between events can no longer be resolved (and their differences may overflow).
_MAX_EVENT_TIME_S = 1e12


def read_events(path: str | os.PathLike, *, column: str | None = None) -> np.ndarray:
    """Read event times (seconds) from a text list or from one column of a table.

    Parameters
    ----------
    path : str or path-like
        Either a plain text file with one time in seconds per line (blank lines and
        lines starting with ``#`` are skipped), or a CSV/TSV file with a header row,
        or a Parquet file.
    column : str, optional
        Column holding the times in a table. May be omitted when the table has a
        single column.

    Returns
    -------
    ndarray, shape (K,)
        Event times in seconds, float64, strictly increasing.

    Raises
    ------
    SyncstatsInputError
        Missing or empty file, a value that is not a number, times that are not
        finite, not sorted or repeated, or an ambiguous/missing column.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "beats.txt"
    >>> _ = p.write_text("0.81\\n1.62\\n2.40\\n")
    >>> read_events(p).tolist()
    [0.81, 1.62, 2.4]
    """
    return _read_event_file(path, column)[0]


def _read_event_file(path, column: str | None = None) -> tuple[np.ndarray, list[str]]:
    """Checked event times of a file, and the notes of the library that read it."""
    p = _check_file(path, "event file")
    times, lines, notes = _read_event_values(p, column)
    where = "event file" if column is None else f"column {column!r} of event file"
    return _validate_event_times(times, where, str(p), lines), [
        f"event file '{p.name}': {n}" for n in notes]


def _read_event_values(p: Path, column: str | None
                       ) -> tuple[np.ndarray, np.ndarray | None, list[str]]:
    """Raw values, the file line number of each value where known, and reader notes."""
    suffix = p.suffix.lower()
    if suffix == ".parquet":
        frame = _read_parquet_frame(p)
        return (*_column_values(frame, p, column, line_offset=None), frame.attrs["notes"])
    text = _read_text(p, "event file")
    first = _first_content_line(text)
    if first is None:
        raise SyncstatsInputError(
            f"Event file '{p}' has no event times (only blank or '#' lines); write one "
            "time in seconds per line."
        )
    if column is None and _is_plain_event_line(first):
        return (*_plain_list(text, p), [])
    frame = _read_delimited_frame(p, text)
    return (*_column_values(frame, p, column, line_offset=2), frame.attrs["notes"])


def _plain_list(text: str, p: Path) -> tuple[np.ndarray, np.ndarray]:
    values: list[float] = []
    lines: list[int] = []
    for i, line in enumerate(text.splitlines(), start=1):
        s = line.strip()
        if not s or s.startswith("#"):
            continue
        try:
            values.append(float(s))
        except ValueError as err:
            raise SyncstatsInputError(
                f"Event file '{p}', line {i}: {s[:40]!r} is not a time in seconds; write "
                "one number per line (lines starting with '#' are comments)."
            ) from err
        lines.append(i)
    return np.asarray(values, dtype=float), np.asarray(lines)


def _column_values(frame, p: Path, column: str | None,
                   line_offset: int | None) -> tuple[np.ndarray, np.ndarray | None]:
    import pandas as pd

    cols = [str(c) for c in frame.columns]
    if column is None:
        if len(cols) != 1:
            raise SyncstatsInputError(
                f"Event file '{p}' has {len(cols)} columns ({', '.join(map(repr, cols))}); "
                "name the column that holds the times (an event name equal to a column name "
                "picks that column)."
            )
        column = cols[0]
    if column not in cols:
        raise SyncstatsInputError(
            f"Event file '{p}' has no column {column!r}; its columns are "
            f"{', '.join(map(repr, cols))}, pick one of those."
        )
    raw = frame.iloc[:, cols.index(column)]
    if len(raw) == 0:
        raise SyncstatsInputError(
            f"Event file '{p}' has a header but no rows; write at least one event time."
        )
    values = pd.to_numeric(raw, errors="coerce").to_numpy(dtype=float)
    bad = np.flatnonzero(np.isnan(values))
    if bad.size:
        i = int(bad[0])
        where = f"line {i + line_offset}" if line_offset is not None else f"row {i}"
        raise SyncstatsInputError(
            f"Event file '{p}', column {column!r}, {where}: {raw.iloc[i]!r} is not a time "
            "in seconds; remove empty or non-numeric cells from the event column."
        )
    lines = np.arange(len(values)) + line_offset if line_offset is not None else None
    return values, lines


def _validate_event_times(times, where: str, name: str,
                         lines: np.ndarray | None = None) -> np.ndarray:
    """The shared event-time check (:func:`syncstats._checks.check_event_times`), with
    the file line of the first bad time when the times come from a text file."""
    with np.errstate(over="ignore", invalid="ignore"):  # huge times: refused below
        if lines is not None:
            _locate_bad_time(np.asarray(times, dtype=float), f"{where} '{name}'", lines)
        t = check_event_times(times, name, where=where)
    far = np.flatnonzero(np.abs(t) > _MAX_EVENT_TIME_S)
    if far.size:
        i = int(far[0])
        at = f"line {int(lines[i])}" if lines is not None else f"position {i}"
        raise SyncstatsInputError(
            f"{where} '{name}', {at}: the event time {t[i]:.6g} s lies beyond "
            f"{_MAX_EVENT_TIME_S:.0e} s (about 31,700 years); give event times in seconds "
            "from the start of the recording."
        )
    return t


def _locate_bad_time(t: np.ndarray, where: str, lines: np.ndarray) -> None:
    """Name the file line of the first non-finite, out-of-order or repeated time."""
    nonfinite = np.flatnonzero(~np.isfinite(t))
    if nonfinite.size:
        i = int(nonfinite[0])
        raise SyncstatsInputError(
            f"{where}, line {int(lines[i])}: event time {t[i]} is not finite; remove it or "
            "give a time in seconds."
        )
    d = np.diff(t)
    bad = np.flatnonzero(d <= 0)
    if bad.size:
        i = int(bad[0]) + 1
        if d[i - 1] == 0:
            raise SyncstatsInputError(
                f"{where}, line {int(lines[i])}: event time {t[i]:g} s occurs twice; remove "
                "the duplicate (each event time must be unique)."
            )
        raise SyncstatsInputError(
            f"{where}, line {int(lines[i])}: event time {t[i]:g} s is earlier than the one "
            f"before it ({t[i - 1]:g} s), so the times are not sorted; sort them in "
            "increasing order."
        )


def _load_event_option(events, origin_s: float, notes: list[str]) -> dict[str, np.ndarray]:
    """Read the ``events=`` option: a path, or a mapping name -> path or array.

    Times from files are taken in the clock of the signal file and shifted by
    ``origin_s`` (the time of its first sample); arrays are taken as given (seconds
    from the first sample). Reader notes are appended to ``notes``.
    """
    if events is None:
        return {}
    out: dict[str, np.ndarray] = {}
    if isinstance(events, (str, os.PathLike)):
        p = _check_file(events, "event file")
        times, file_notes = _read_event_file(p)
        out[p.stem] = times - origin_s
        notes += file_notes
        return out
    if not isinstance(events, Mapping):
        raise SyncstatsInputError(
            f"The events option {events!r} is neither a file path nor a list of named "
            "event sources; give an event file, or name each event list with its file or times."
        )
    for key, value in events.items():
        name = str(key)
        if isinstance(value, (str, os.PathLike)):
            p = _check_file(value, "event file")
            times, file_notes = _read_event_file(p, _pick_event_column(p, name))
            out[name] = times - origin_s
            notes += file_notes
        else:
            out[name] = _validate_event_times(value, "event list", name)
    return out


def _pick_event_column(p: Path, name: str) -> str | None:
    """In a table with several columns, the column named like the event key is used."""
    if p.suffix.lower() not in {".csv", ".tsv", ".txt", ".parquet"}:
        return None
    if p.suffix.lower() == ".parquet":
        cols = [str(c) for c in _read_parquet_frame(p).columns]
    else:
        text = _read_text(p, "event file")
        first = _first_content_line(text)
        if first is None or _is_plain_event_line(first):
            return None
        cols = [str(c) for c in _read_delimited_frame(p, text, nrows=1).columns]
    if name in cols:
        return name
    return None
