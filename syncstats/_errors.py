"""Project exceptions.

User errors raise :class:`SyncstatsInputError` (a ``ValueError``) with one sentence that
says what is wrong, where (file / signal / parameter), what is accepted and what to do.
"""
from __future__ import annotations

__all__ = ["SyncstatsInputError", "SyncstatsWarning"]


class SyncstatsInputError(ValueError):
    """Bad input or usage: the message names the culprit and the fix (CLI exit status 2)."""


class SyncstatsWarning(UserWarning):
    """A diagnostic that does not stop the analysis (also written to the table)."""
