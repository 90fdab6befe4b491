"""Input checks shared by the surrogate generators (one helper per kind of argument).

Each public generator calls these helpers first, so its body can assume clean data:
a float64 (C, N) array that is never written to, and a list of B numpy Generators.
"""
from __future__ import annotations

import numbers

import numpy as np

from .._errors import SyncstatsInputError

__all__: list[str] = []


def _as_channels(x, func: str, *, min_samples: int = 4) -> tuple[np.ndarray, bool]:
    """Return ``x`` as a read-only float64 (C, N) view/copy and whether it was 1-D."""
    try:
        arr = np.asarray(x)
    except Exception as exc:  # pragma: no cover - exotic objects
        raise SyncstatsInputError(
            f"x in {func}() could not be read as an array ({exc}); pass a numeric numpy array of shape (C, N) or (N,)."
        ) from None
    if arr.dtype.kind == "c":
        raise SyncstatsInputError(
            f"x in {func}() is complex; pass real-valued signals of shape (C, N) or (N,) (raw signals, not phasors)."
        )
    if arr.dtype.kind not in "biuf":
        raise SyncstatsInputError(
            f"x in {func}() has dtype {arr.dtype}, which is not numeric; pass a float array of shape (C, N) or (N,)."
        )
    if arr.ndim not in (1, 2):
        raise SyncstatsInputError(
            f"x in {func}() has {arr.ndim} dimensions (shape {arr.shape}); pass one signal of shape (N,) or "
            "several of shape (C, N) with time on the last axis."
        )
    was_1d = arr.ndim == 1
    arr = np.atleast_2d(arr).astype(np.float64, copy=False)
    if arr.shape[0] < 1 or arr.shape[-1] < min_samples:
        raise SyncstatsInputError(
            f"x in {func}() has shape {arr.shape}; at least 1 channel and {min_samples} samples are needed, "
            "pass a longer record."
        )
    if not np.all(np.isfinite(arr)):
        raise SyncstatsInputError(
            f"x in {func}() contains NaN or infinite values; fill or cut the gaps (prep layer) before making surrogates."
        )
    arr = arr.view()
    arr.flags.writeable = False
    return arr, was_1d


def _check_rngs(rngs, func: str) -> list[np.random.Generator]:
    """Check that ``rngs`` is a non-empty sequence of numpy Generators (one per surrogate)."""
    if isinstance(rngs, np.random.Generator):
        raise SyncstatsInputError(
            f"rngs in {func}() is a single Generator; pass a list with one numpy.random.Generator per surrogate, "
            "e.g. syncstats._rng.child_generators(seq, 0, B)."
        )
    try:
        out = list(rngs)
    except TypeError:
        raise SyncstatsInputError(
            f"rngs in {func}() is a {type(rngs).__name__}; pass a list with one numpy.random.Generator per surrogate."
        ) from None
    if len(out) == 0:
        raise SyncstatsInputError(
            f"rngs in {func}() is empty; pass a list with one numpy.random.Generator per surrogate (at least one)."
        )
    for i, r in enumerate(out):
        if not isinstance(r, np.random.Generator):
            raise SyncstatsInputError(
                f"rngs[{i}] in {func}() is a {type(r).__name__}, not a numpy.random.Generator; build the list with "
                "numpy.random.default_rng or syncstats._rng.child_generators."
            )
    return out


def _check_int(value, name: str, func: str, *, low: int, high: int | None = None) -> int:
    """An integer option in [low, high] (high=None: no upper bound)."""
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        raise SyncstatsInputError(
            f"{name} in {func}() must be an integer, got {value!r}; pass a whole number of samples."
        )
    value = int(value)
    if value < low or (high is not None and value > high):
        rng_txt = f">= {low}" if high is None else f"between {low} and {high}"
        raise SyncstatsInputError(f"{name} in {func}() is {value}; it must be {rng_txt} for this input.")
    return value


def _check_float(value, name: str, func: str, *, low: float, high: float, low_open: bool = True) -> float:
    """A real option in (low, high] (or [low, high] when ``low_open`` is False)."""
    if isinstance(value, bool) or not isinstance(value, numbers.Real) or not np.isfinite(value):
        raise SyncstatsInputError(f"{name} in {func}() must be a finite number, got {value!r}.")
    value = float(value)
    bad = (value <= low if low_open else value < low) or value > high
    if bad:
        left = "(" if low_open else "["
        raise SyncstatsInputError(f"{name} in {func}() is {value}; it must lie in {left}{low}, {high}].")
    return value

