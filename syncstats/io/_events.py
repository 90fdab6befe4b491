"""Event-time lists: one time per line, or one column of a table."""
from __future__ import annotations

import os
from collections.abc import Mapping
from pathlib import Path

import numpy as np

from syncstats._errors import SyncstatsInputError

from ._common import _check_file

__all__ = ["read_events"]


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
    p = _check_file(path, "event file")
    times, lines = _read_event_values(p, column)
    return _validate_event_times(times, f"Event file '{p}'" + (f", column {column!r}" if column else ""), lines)


def _read_event_values(p: Path, column: str | None) -> tuple[np.ndarray, np.ndarray | None]:
    """Return raw values and, where known, the file line number of each value."""
    suffix = p.suffix.lower()
    if suffix == ".parquet":
        from ._tabular import _read_parquet_frame

        frame = _read_parquet_frame(p)
        return _column_values(frame, p, column, line_offset=None)
    text = _read_text(p, "event file")
    first = _first_content_line(text)
    if first is None:
        raise SyncstatsInputError(
            f"Event file '{p}' has no event times (only blank or '#' lines); write one "
            "time in seconds per line."
        )
    if column is None and _is_number(first.strip()) and len(first.split()) == 1 and "," not in first:
        return _plain_list(text, p)
    from ._tabular import _read_delimited_frame

    frame = _read_delimited_frame(p, text)
    return _column_values(frame, p, column, line_offset=2)


def _read_text(p: Path, what: str) -> str:
    try:
        text = p.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError as err:
        raise SyncstatsInputError(
            f"The {what} '{p}' is not UTF-8 text (byte {err.start}); save it as a UTF-8 "
            "text file or pass a file in one of the binary formats."
        ) from err
    if not text.strip():
        raise SyncstatsInputError(
            f"The {what} '{p}' contains only blank space; check that it was written completely."
        )
    return text


def _first_content_line(text: str) -> str | None:
    for line in text.splitlines():
        s = line.strip()
        if s and not s.startswith("#"):
            return s
    return None


def _is_number(s: str) -> bool:
    try:
        float(s)
    except ValueError:
        return False
    return True


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
                "say which one holds the times, e.g. events={'beats': path} naming the "
                "column, or read_events(path, column=NAME)."
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


def _validate_event_times(times, where: str, lines: np.ndarray | None = None) -> np.ndarray:
    """Check event times: 1-D, finite, strictly increasing; return a float64 copy."""
    try:
        t = np.array(times, dtype=float)
    except (TypeError, ValueError) as err:
        raise SyncstatsInputError(
            f"{where}: the event times are not numbers; pass a 1-D sequence of seconds."
        ) from err
    if t.ndim != 1:
        raise SyncstatsInputError(
            f"{where}: event times must be a 1-D sequence of seconds, got shape {t.shape}; "
            "pass one flat list per event name."
        )
    if t.size == 0:
        raise SyncstatsInputError(
            f"{where}: there are no event times; give at least one time in seconds."
        )

    def loc(i: int) -> str:
        return f"line {int(lines[i])}" if lines is not None else f"position {i}"

    nonfinite = np.flatnonzero(~np.isfinite(t))
    if nonfinite.size:
        i = int(nonfinite[0])
        raise SyncstatsInputError(
            f"{where}, {loc(i)}: event time {t[i]} is not finite; remove it or give a "
            "time in seconds."
        )
    d = np.diff(t)
    dup = np.flatnonzero(d == 0)
    back = np.flatnonzero(d < 0)
    if back.size and (not dup.size or back[0] < dup[0]):
        i = int(back[0]) + 1
        raise SyncstatsInputError(
            f"{where}, {loc(i)}: event time {t[i]:g} s is earlier than the one before it "
            f"({t[i - 1]:g} s), so the times are not sorted; sort them in increasing order."
        )
    if dup.size:
        i = int(dup[0]) + 1
        raise SyncstatsInputError(
            f"{where}, {loc(i)}: event time {t[i]:g} s occurs twice; remove the duplicate "
            "(each event time must be unique)."
        )
    return t


def _load_event_option(events, origin_s: float = 0.0) -> dict[str, np.ndarray]:
    """Read the ``events=`` option: a path, or a mapping name -> path or array.

    Times from files are taken in the clock of the signal file and shifted by
    ``origin_s`` (the time of its first sample); arrays are taken as given (seconds
    from the first sample).
    """
    if events is None:
        return {}
    out: dict[str, np.ndarray] = {}
    if isinstance(events, (str, os.PathLike)):
        p = _check_file(events, "event file")
        out[p.stem] = read_events(p) - origin_s
        return out
    if not isinstance(events, Mapping):
        raise SyncstatsInputError(
            f"Parameter events={events!r} is neither a path nor a mapping; pass the path "
            "of an event list or a dict such as {'rpeaks': 'beats.txt'}."
        )
    for key, value in events.items():
        name = str(key)
        if isinstance(value, (str, os.PathLike)):
            p = _check_file(value, "event file")
            column = _pick_event_column(p, name)
            out[name] = read_events(p, column=column) - origin_s
        else:
            out[name] = _validate_event_times(value, f"Parameter events[{name!r}]")
    return out


def _pick_event_column(p: Path, name: str) -> str | None:
    """In a table with several columns, the column named like the event key is used."""
    if p.suffix.lower() not in {".csv", ".tsv", ".txt", ".parquet"}:
        return None
    if p.suffix.lower() == ".parquet":
        from ._tabular import _read_parquet_frame

        cols = [str(c) for c in _read_parquet_frame(p).columns]
    else:
        text = _read_text(p, "event file")
        first = _first_content_line(text)
        if first is None or (_is_number(first.strip()) and len(first.split()) == 1):
            return None
        from ._tabular import _read_delimited_frame

        cols = [str(c) for c in _read_delimited_frame(p, text, nrows=1).columns]
    if name in cols:
        return name
    return None
