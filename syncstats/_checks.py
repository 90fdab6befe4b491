"""Checks shared by every entry point (``analyze``, the readers, the command line, config
files): one sampling-rate check, one event-time check, one ratio parser, and plain
number/flag converters. Each raises :class:`SyncstatsInputError` with one sentence that
names the parameter, what is accepted, what was received and what to do.

This module imports nothing from syncstats except ``_errors``, so every layer may use it.
"""
from __future__ import annotations

import math
from numbers import Integral, Real

import numpy as np

from ._errors import SyncstatsInputError

__all__ = [
    "MAX_RATIO_TERM",
    "MIN_EVENTS",
    "check_fs",
    "check_event_times",
    "parse_ratio",
    "parse_ratios",
    "check_int",
    "check_float",
    "check_bool",
    "as_float_array",
]

#: largest p or q of a ratio p:q (a ratio beyond this is no physiological rhythm pair and
#: its phase difference q·phi_a − p·phi_b loses precision)
MAX_RATIO_TERM = 100

#: fewest events that define an event phase (two intervals)
MIN_EVENTS = 3


def check_fs(fs, *, where: str = "fs", hint: str = "pass fs=HZ") -> float:
    """A sampling rate: a finite positive number of Hz."""
    if fs is None:
        raise SyncstatsInputError(f"{where} (sampling rate in Hz) is missing; {hint}.")
    if isinstance(fs, bool):
        raise SyncstatsInputError(f"{where} must be a positive number of Hz, got {fs!r}; {hint}.")
    try:
        val = float(fs)
    except (TypeError, ValueError, OverflowError):
        raise SyncstatsInputError(f"{where} must be a positive number of Hz, got {fs!r}; {hint}.") from None
    if not math.isfinite(val) or val <= 0:
        raise SyncstatsInputError(f"{where} must be a positive number of Hz, got {fs!r}; {hint}.")
    return val


def check_event_times(times, name: str, *, where: str = "event list", min_count: int = MIN_EVENTS) -> np.ndarray:
    """Event times in seconds: a finite, strictly increasing 1-D float array (a copy)."""
    try:
        e = np.array(times, dtype=float)
    except (TypeError, ValueError, OverflowError):
        raise SyncstatsInputError(f"{where} '{name}' is not numeric; give event times in seconds.") from None
    if e.ndim != 1 or e.size < min_count:
        raise SyncstatsInputError(
            f"{where} '{name}' needs at least {min_count} event times in a 1-D list (seconds); got "
            f"{e.size if e.ndim == 1 else 'shape ' + str(e.shape)}."
        )
    bad = ~np.isfinite(e)
    if bad.any():
        raise SyncstatsInputError(
            f"{where} '{name}' contains NaN or infinite times (first at position {int(np.argmax(bad))}); remove them."
        )
    d = np.diff(e)
    if np.any(d == 0):
        raise SyncstatsInputError(
            f"{where} '{name}' has duplicate times (first at {e[1:][d == 0][0]:g} s); remove duplicates."
        )
    if np.any(d < 0):
        raise SyncstatsInputError(
            f"{where} '{name}' is not sorted (first at {e[1:][d < 0][0]:g} s); sort the event times."
        )
    return e


def _ratio_term(v, raw):
    if isinstance(v, bool):
        raise SyncstatsInputError(f"ratio {raw!r} must be two positive integers p:q, e.g. 4:1; got a boolean.")
    if isinstance(v, str):
        s = v.strip()
        if not s.isdigit():
            raise SyncstatsInputError(
                f"ratio {raw!r} must be two positive integers p:q (A makes p cycles while B makes q), e.g. 4:1."
            )
        if len(s) > 3:
            raise SyncstatsInputError(
                f"ratio {raw!r} has a term above {MAX_RATIO_TERM}; give p:q with 1 <= p, q <= {MAX_RATIO_TERM}."
            )
        return int(s)
    if isinstance(v, Integral):
        return int(v)
    if isinstance(v, Real) and math.isfinite(float(v)) and float(v).is_integer():
        return int(v)
    raise SyncstatsInputError(
        f"ratio {raw!r} must be two positive integers p:q (A makes p cycles while B makes q), e.g. 4:1."
    )


def parse_ratio(ratio) -> tuple[int, int]:
    """A ratio given as ``(p, q)`` or ``"p:q"`` -> ``(p, q)``, both in 1..MAX_RATIO_TERM.

    >>> parse_ratio("4:1"), parse_ratio((3, 2))
    ((4, 1), (3, 2))
    """
    raw = ratio
    if isinstance(ratio, str):
        parts = ratio.split(":")
        if len(parts) != 2:
            raise SyncstatsInputError(f"ratio {raw!r} must look like 'p:q' with positive integers, e.g. '4:1'.")
        ratio = parts
    try:
        p, q = ratio
    except (TypeError, ValueError):
        raise SyncstatsInputError(f"ratio {raw!r} must be a pair of positive integers (p, q), e.g. (4, 1).") from None
    p, q = _ratio_term(p, raw), _ratio_term(q, raw)
    if p < 1 or q < 1:
        raise SyncstatsInputError(
            f"ratio {raw!r} must be two positive integers p:q (A makes p cycles while B makes q), e.g. 4:1."
        )
    if p > MAX_RATIO_TERM or q > MAX_RATIO_TERM:
        raise SyncstatsInputError(
            f"ratio {raw!r} has a term above {MAX_RATIO_TERM}; give p:q with 1 <= p, q <= {MAX_RATIO_TERM}."
        )
    return p, q


def parse_ratios(spec) -> list[tuple[int, int]]:
    """A list of ratios from ``"4:1,5:1"``, ``["4:1", (5, 1)]``, ``(4, 1)`` or ``"4:1"``;
    duplicates dropped, order kept; ratios not in lowest terms are refused.

    >>> parse_ratios("4:1, 5:1,4:1")
    [(4, 1), (5, 1)]
    """
    if spec is None:
        return [(1, 1)]
    if isinstance(spec, str):
        items = [s for s in (x.strip() for x in spec.split(",")) if s]
    elif isinstance(spec, tuple) and len(spec) == 2 and not isinstance(spec[0], (tuple, list, str)):
        items = [spec]
    else:
        try:
            items = list(spec)
        except TypeError:
            raise SyncstatsInputError(f"ratios must be a list of p:q ratios such as [(4, 1), (5, 1)]; got {spec!r}.") from None
    if not items:
        raise SyncstatsInputError("ratios is empty; give at least one ratio p:q (e.g. 1:1), or 'auto'.")
    out = []
    for r in items:
        p, q = parse_ratio(r)
        g = math.gcd(p, q)
        if g != 1:
            raise SyncstatsInputError(
                f"ratio {p}:{q} is not in lowest terms; give {p // g}:{q // g} (psi at {p}:{q} is {g} times psi at "
                f"{p // g}:{q // g}; the {p // g}:{q // g} row warns when its psi has two preferred values half a "
                "turn apart)."
            )
        out.append((p, q))
    return list(dict.fromkeys(out))


def check_int(value, name: str, *, low: int | None = None, high: int | None = None, hint: str = "") -> int:
    """A whole number within [low, high] (booleans and fractions refused)."""
    rng = _range_words(low, high)
    if isinstance(value, bool) or value is None:
        raise SyncstatsInputError(f"{name} must be a whole number{rng}; got {value!r}{_hint(hint)}.")
    if isinstance(value, str):
        s = value.strip()
        if not s.lstrip("+-").isdigit() or len(s) > 18:
            raise SyncstatsInputError(f"{name} must be a whole number{rng}; got {value!r}{_hint(hint)}.")
        v = int(s)
    elif isinstance(value, Integral):
        v = int(value)
    elif isinstance(value, Real) and math.isfinite(float(value)) and float(value).is_integer():
        v = int(value)
    else:
        raise SyncstatsInputError(f"{name} must be a whole number{rng}; got {value!r}{_hint(hint)}.")
    if (low is not None and v < low) or (high is not None and v > high):
        raise SyncstatsInputError(f"{name} must be a whole number{rng}; got {v}{_hint(hint)}.")
    return v


def check_float(value, name: str, *, low: float | None = None, high: float | None = None,
                open_low: bool = False, open_high: bool = False, hint: str = "") -> float:
    """A finite number within the given bounds (booleans refused)."""
    rng = _range_words(low, high, open_low, open_high)
    if isinstance(value, bool) or value is None or isinstance(value, (list, tuple, dict)):
        raise SyncstatsInputError(f"{name} must be a number{rng}; got {value!r}{_hint(hint)}.")
    try:
        v = float(value) if not isinstance(value, str) else float(value.strip())
    except (TypeError, ValueError, OverflowError):
        raise SyncstatsInputError(f"{name} must be a number{rng}; got {value!r}{_hint(hint)}.") from None
    if not math.isfinite(v):
        raise SyncstatsInputError(f"{name} must be a finite number{rng}; got {value!r}{_hint(hint)}.")
    if low is not None and (v < low or (open_low and v == low)):
        raise SyncstatsInputError(f"{name} must be a number{rng}; got {value!r}{_hint(hint)}.")
    if high is not None and (v > high or (open_high and v == high)):
        raise SyncstatsInputError(f"{name} must be a number{rng}; got {value!r}{_hint(hint)}.")
    return v


def check_bool(value, name: str) -> bool:
    """A flag: True/False, or the words true/false (any case) from a config file."""
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, str) and value.strip().lower() in ("true", "false"):
        return value.strip().lower() == "true"
    raise SyncstatsInputError(f"{name} must be true or false; got {value!r}.")


def as_float_array(value, name: str, what: str = "signal") -> np.ndarray:
    """A float64 copy of numeric array data (complex values refused; inputs never modified)."""
    if np.iscomplexobj(value):
        raise SyncstatsInputError(f"{what} '{name}' is complex; give real values (e.g. the real part or the magnitude).")
    try:
        a = np.array(value, dtype=float)
    except (TypeError, ValueError, OverflowError):
        raise SyncstatsInputError(f"{what} '{name}' is not numeric; give an array of numbers.") from None
    return a


def _range_words(low, high, open_low=False, open_high=False) -> str:
    if low is not None and high is not None:
        return f" in {'(' if open_low else '['}{low:g}, {high:g}{')' if open_high else ']'}"
    if low is not None:
        return f" {'above' if open_low else 'of at least'} {low:g}"
    if high is not None:
        return f" {'below' if open_high else 'of at most'} {high:g}"
    return ""


def _hint(h: str) -> str:
    h = h.strip().rstrip(".")
    return f"; {h[:1].lower()}{h[1:]}" if h else ""
