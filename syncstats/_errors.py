"""Project exceptions.

User errors raise :class:`SyncstatsInputError` (a ``ValueError``) with one sentence that
says what is wrong, where (file / signal / parameter), what is accepted and what to do.
"""
from __future__ import annotations

import contextvars
import warnings
from contextlib import contextmanager

__all__ = ["SyncstatsInputError", "SyncstatsWarning", "warn", "collect_warnings"]


class SyncstatsInputError(ValueError):
    """Bad input or usage: the message names the culprit and the fix (CLI exit status 2)."""


class SyncstatsWarning(UserWarning):
    """A diagnostic that does not stop the analysis (also written to the table)."""


#: the list that collects warnings in this context (thread), or None
_COLLECTOR: contextvars.ContextVar = contextvars.ContextVar("syncstats_warnings", default=None)


def warn(message: str, *, stacklevel: int = 2) -> None:
    """Issue a :class:`SyncstatsWarning`, or, inside :func:`collect_warnings` in the same
    thread, append its text to that collection instead."""
    box = _COLLECTOR.get()
    if box is not None:
        box.append(str(message))
        return
    warnings.warn(message, SyncstatsWarning, stacklevel=stacklevel + 1)


@contextmanager
def collect_warnings():
    """Collect the messages of :func:`warn` issued in this thread (a list) instead of
    issuing them. Unlike ``warnings.catch_warnings``, which swaps process-wide state,
    collections in concurrent threads stay apart (one per analysed recording)."""
    box: list = []
    token = _COLLECTOR.set(box)
    try:
        yield box
    finally:
        _COLLECTOR.reset(token)
