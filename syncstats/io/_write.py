"""Writers for simulated or cut recordings: CSV signals and event lists, written atomically.

Each writer writes a temporary file in the target folder and moves it into place with
:func:`os.replace`, so a reader never sees a half-written file and a failed write
leaves nothing behind. The files read back with :func:`syncstats.io.read_recording`
and :func:`syncstats.io.read_events` to the same float64 values (shortest round-trip
decimal representation).
"""
from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path
from typing import Iterator

import numpy as np

from syncstats._errors import SyncstatsInputError

from ._events import _validate_event_times
from ._recording import Recording
from ._tabular import TIME_COLUMN_NAMES, TIME_COLUMN_NAMES_MS

__all__ = ["write_events", "write_recording_csv"]

#: Name of the time column written by :func:`write_recording_csv`.
TIME_COLUMN = "time_s"


def _default_mode(target: Path) -> int:
    """Permission bits for the new file: those of the file replaced, else 0o666 - umask."""
    if target.exists():
        return target.stat().st_mode & 0o777
    mask = os.umask(0o022)
    os.umask(mask)
    return 0o666 & ~mask


@contextlib.contextmanager
def _atomic_text(path: str | os.PathLike) -> Iterator:
    """Open a temporary text file beside ``path``; on success move it onto ``path``."""
    target = Path(os.fspath(path)).expanduser()
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise SyncstatsInputError(
            f"Cannot write '{target}': the folder '{folder}' does not exist; create it first."
        )
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        os.chmod(tmp, _default_mode(target))
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise


def write_recording_csv(recording: Recording, path: str | os.PathLike) -> Path:
    """Write a Recording's signals to a CSV file with a ``time_s`` column (atomic).

    Parameters
    ----------
    recording : Recording
        Needs at least one signal, ``fs`` and two samples; all signals of equal length.
        Signal names must read back from a CSV header unchanged: no time-column name
        (``time``, ``t``, ``ms``, ...), no blank name, no leading or trailing blank
        space, no line break.
    path : str or path-like
        Target file; its folder must exist. Replaced atomically if present.

    Returns
    -------
    pathlib.Path
        The written path.

    Notes
    -----
    Column ``time_s`` holds ``k / fs`` for sample k; NaN samples are written as empty
    cells (read back as gaps). Events are not written: use :func:`write_events`.
    """
    import pandas as pd

    if not isinstance(recording, Recording):
        raise SyncstatsInputError(
            f"write_recording_csv needs a Recording, got {type(recording).__name__}; read "
            "or build one with syncstats.io first."
        )
    if not recording.signals or not recording.fs:
        raise SyncstatsInputError(
            f"Recording {recording.name!r} has no signals or no sampling rate, so there is "
            "nothing to write as CSV; write its events with write_events instead."
        )
    lengths = {n: len(x) for n, x in recording.signals.items()}
    if len(set(lengths.values())) != 1:
        raise SyncstatsInputError(
            f"Recording {recording.name!r} has signals of different lengths ({lengths}); "
            "cut them to one length before writing."
        )
    for name in recording.signals:
        problem = _unreadable_column_name(str(name))
        if problem:
            raise SyncstatsInputError(
                f"Recording {recording.name!r}: the signal name {name!r} {problem}, so the "
                "CSV file would not read back; rename that signal."
            )
    n = next(iter(lengths.values()))
    if n < 2:
        raise SyncstatsInputError(
            f"Recording {recording.name!r} has {n} sample(s), too few for the time column "
            "of a CSV file to give the sampling rate; write at least two samples."
        )
    columns = {TIME_COLUMN: np.arange(n) / float(recording.fs)}
    columns.update({name: np.asarray(x, dtype=float) for name, x in recording.signals.items()})
    frame = pd.DataFrame(columns)
    target = Path(os.fspath(path)).expanduser()
    with _atomic_text(target) as fh:
        frame.to_csv(fh, index=False, lineterminator="\n")
    return target


def _unreadable_column_name(name: str) -> str | None:
    """Why a signal name would not read back from a CSV header unchanged, or None."""
    if name.strip().lower() in TIME_COLUMN_NAMES + TIME_COLUMN_NAMES_MS:
        return "is one the reader takes for a time column"
    if not name.strip() or name.startswith("Unnamed: "):
        return "reads back as a column without a name"
    if name != name.strip():
        return "starts or ends with blank space, which the reader strips"
    if "\n" in name or "\r" in name:
        return "contains a line break"
    return None


def write_events(times, path: str | os.PathLike) -> Path:
    """Write event times (seconds) as a text list, one time per line (atomic).

    Parameters
    ----------
    times : sequence of float, shape (K,)
        Finite, strictly increasing times in seconds.
    path : str or path-like
        Target file (``.txt`` is conventional); its folder must exist.

    Returns
    -------
    pathlib.Path
        The written path.
    """
    t = _validate_event_times(times, "event list", "to write")
    target = Path(os.fspath(path)).expanduser()
    with _atomic_text(target) as fh:
        fh.write("".join(f"{v!r}\n" for v in t.tolist()))
    return target
