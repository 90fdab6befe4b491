"""The in-memory model every reader returns."""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

__all__ = ["Recording"]


@dataclass(frozen=True)
class Recording:
    """Simultaneously recorded rhythms, as read from one source.

    Parameters
    ----------
    name : str
        Recording name (file stem by default; "" for an anonymous one).
    signals : mapping str -> ndarray, shape (N,)
        Continuous signals on one common sampling grid (float64, copies of the input).
    fs : float or None
        Common sampling rate of ``signals`` in Hz (None when there are only events).
    units : mapping str -> str
        Physical unit per signal ("" when unknown).
    start_time : str or None
        ISO 8601 start of the recording when the file says it.
    events : mapping str -> ndarray
        Event times in seconds from the start of the recording (sorted, unique).
    source : str
        Path of the file(s) read ("" for in-memory data).
    notes : tuple of str
        What the reader did that a user should know (resampling, gaps split, ...).
    offset_s : float
        Where the recording starts in its file, seconds (a gap-free segment of a longer
        file starts later than 0); sample i is at ``offset_s + i / fs`` in file time.
    """

    name: str
    signals: Mapping[str, np.ndarray]
    fs: float | None
    units: Mapping[str, str] = field(default_factory=dict)
    start_time: str | None = None
    events: Mapping[str, np.ndarray] = field(default_factory=dict)
    source: str = ""
    notes: tuple[str, ...] = ()
    offset_s: float = 0.0

    @property
    def duration_s(self) -> float:
        """Length of the continuous signals (or of the event span) in seconds."""
        if self.signals and self.fs:
            n = len(next(iter(self.signals.values())))
            return n / self.fs
        if self.events:
            return float(max(np.max(e) for e in self.events.values() if len(e)))
        return 0.0
