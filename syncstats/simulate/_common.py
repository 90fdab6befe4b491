"""Shared pieces of the simulators: input checks, random streams, the result class.

Everything here is private to :mod:`syncstats.simulate`.  Public functions validate their
arguments with the ``check_*`` helpers below so that the model code can assume clean
input; every user error raises :class:`syncstats._errors.SyncstatsInputError` with one
sentence naming the parameter, what is accepted and what to do.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from .._errors import SyncstatsInputError
from .._rng import as_seed_sequence

__all__ = ["Simulation"]

# Beyond this many samples per unit and replica we refuse (8 bytes * 1e8 = 800 MB).
_MAX_SAMPLES = 100_000_000


# --------------------------------------------------------------------------- results
@dataclass(frozen=True)
class Simulation:
    """Output of one simulator call.

    Attributes
    ----------
    signals : ndarray, shape (n_units, n_samples) or (n_replicas, n_units, n_samples)
        Observed signals, measurement noise included. Time is on the last axis; the
        first sample is at t = 0 s.
    fs : float
        Sampling rate of ``signals`` in Hz.
    phases : ndarray, same shape as ``signals``
        Unwrapped model phase of every unit in radians (the true phase for the phase
        models; for limit-cycle models a monotone geometric angle of the state, i.e. a
        protophase -- see each simulator's Notes). Free of measurement noise.
    events : tuple or None
        Event times in seconds. With ``n_replicas=None``: a tuple with one 1-D array per
        unit (an empty array for units without events). With replicas: a tuple (one per
        replica) of such tuples. ``None`` for models without events.
    model : str
        Name of the simulator.
    params : mapping
        Every parameter actually used, including the internal step ``dt_s`` and the
        integrator.
    """

    signals: np.ndarray
    fs: float
    phases: np.ndarray
    events: tuple | None
    model: str
    params: MappingProxyType = field(default_factory=lambda: MappingProxyType({}))

    @property
    def time(self) -> np.ndarray:
        """Sample times in seconds, shape (n_samples,)."""
        return np.arange(self.signals.shape[-1]) / self.fs

    @property
    def n_samples(self) -> int:
        return int(self.signals.shape[-1])


# --------------------------------------------------------------------------- checks
def _fail(msg: str) -> None:
    raise SyncstatsInputError(msg)


def check_real(value: Any, name: str, func: str, *, low=None, low_open=False, high=None,
               integer=False) -> float:
    """A finite real scalar within bounds; returns a Python float (or int)."""
    if isinstance(value, (bool, np.bool_)) or not np.isscalar(value) and np.ndim(value) != 0:
        _fail(f"{func}: parameter {name} must be a single number, got {value!r}; pass a "
              f"scalar.")
    try:
        v = float(value)
    except (TypeError, ValueError):
        _fail(f"{func}: parameter {name} must be a number, got {value!r}; pass a number.")
    if not math.isfinite(v):
        _fail(f"{func}: parameter {name} must be finite, got {value!r}; pass a finite "
              f"number.")
    if integer:
        if v != int(v):
            _fail(f"{func}: parameter {name} must be a whole number, got {value!r}; pass an "
                  f"integer.")
        v = int(v)
    if low is not None and (v < low or (low_open and v == low)):
        rel = ">" if low_open else ">="
        _fail(f"{func}: parameter {name} must be {rel} {low}, got {value!r}; pass a value "
              f"{rel} {low}.")
    if high is not None and v > high:
        _fail(f"{func}: parameter {name} must be <= {high}, got {value!r}; pass a smaller "
              f"value.")
    return v


def check_time_grid(duration, fs, func: str) -> int:
    """Validate ``duration`` (s) and ``fs`` (Hz); return the number of samples."""
    duration = check_real(duration, "duration", func, low=0, low_open=True)
    fs = check_real(fs, "fs", func, low=0, low_open=True)
    n = int(round(duration * fs))
    if n < 2:
        _fail(f"{func}: duration * fs gives {n} samples; pass a longer duration or a higher "
              f"fs so that there are at least 2 samples.")
    if n > _MAX_SAMPLES:
        _fail(f"{func}: duration * fs gives {n} samples per signal, more than the "
              f"{_MAX_SAMPLES} allowed; shorten the duration or lower fs.")
    return n


def check_vector(value, n: int, name: str, func: str, *, positive=False, nonneg=False,
                 allow_none=False) -> np.ndarray | None:
    """A scalar or a length-``n`` sequence of finite reals, returned as a new (n,) array."""
    if value is None and allow_none:
        return None
    try:
        arr = np.array(value, dtype=float)  # always a copy: inputs are never modified
    except (TypeError, ValueError):
        _fail(f"{func}: parameter {name} must be a number or a sequence of {n} numbers, got "
              f"{value!r}; pass numbers.")
    if arr.ndim == 0:
        arr = np.full(n, float(arr))
    if arr.shape != (n,):
        _fail(f"{func}: parameter {name} must be a number or have one value per unit "
              f"({n}), got shape {arr.shape}; pass {n} values.")
    if not np.all(np.isfinite(arr)):
        _fail(f"{func}: parameter {name} contains non-finite values; pass finite numbers.")
    if positive and np.any(arr <= 0):
        _fail(f"{func}: parameter {name} must be > 0 for every unit, got {arr.tolist()}; "
              f"pass positive values.")
    if nonneg and np.any(arr < 0):
        _fail(f"{func}: parameter {name} must be >= 0 for every unit, got {arr.tolist()}; "
              f"pass non-negative values.")
    return arr


def check_n_units(n_units, func: str, *, minimum=1) -> int:
    return check_real(n_units, "n_units", func, low=minimum, integer=True)


def check_n_replicas(n_replicas, func: str) -> int | None:
    if n_replicas is None:
        return None
    return check_real(n_replicas, "n_replicas", func, low=1, integer=True)


DENSE_MAX_UNITS = 64  # unit-by-unit models are limited to this many units


def check_coupling(coupling, n: int, n_rep: int, func: str, *, dense=True):
    """Normalise ``coupling``.

    Accepted: a scalar K (global all-to-all coupling K/n between every pair, Kuramoto's
    normalisation), a length-``n_replicas`` vector (one global K per replica), an (n, n)
    matrix with ``coupling[i, j]`` = strength of the influence of unit j on unit i, or an
    (n_replicas, n, n) stack. The diagonal must be zero.

    Returns ``(C, k_global)``: C is the dense (R, n, n) array (R = 1 or n_rep; None for
    a global coupling when ``dense`` is False and n > DENSE_MAX_UNITS), k_global the
    (R,) global strengths or None.
    """
    try:
        c = np.array(coupling, dtype=float)
    except (TypeError, ValueError):
        _fail(f"{func}: parameter coupling must be a number or an (n_units, n_units) "
              f"matrix, got {coupling!r}; pass numbers.")
    if not np.all(np.isfinite(c)):
        _fail(f"{func}: parameter coupling contains non-finite values; pass finite numbers.")
    if c.ndim <= 1:
        c = c.reshape(-1)
        if c.shape[0] not in (1, n_rep):
            _fail(f"{func}: a 1-D coupling gives one global strength per replica, so it "
                  f"needs {n_rep} values, got {c.shape[0]}; pass a scalar, {n_rep} values "
                  f"or an (n_units, n_units) matrix.")
        if not dense and n > DENSE_MAX_UNITS:
            return None, c.copy()
        mat = np.repeat(c[:, None, None] / n, n, axis=1).repeat(n, axis=2)
        idx = np.arange(n)
        mat[:, idx, idx] = 0.0
        return mat, c.copy()
    if c.ndim == 2:
        c = c[None]
    if c.ndim != 3 or c.shape[1:] != (n, n) or c.shape[0] not in (1, n_rep):
        _fail(f"{func}: parameter coupling must be a scalar, an ({n}, {n}) matrix or an "
              f"({n_rep}, {n}, {n}) stack, got shape {np.shape(coupling)}; pass "
              f"coupling[i, j] = strength of unit j acting on unit i.")
    idx = np.arange(n)
    if np.any(c[:, idx, idx] != 0):
        _fail(f"{func}: the diagonal of coupling must be zero (a unit does not couple to "
              f"itself), got {c[:, idx, idx].tolist()}; set coupling[i, i] = 0.")
    return c.copy(), None


def coupling_summary(C, k_global):
    """A JSON-friendly record of the coupling for ``Simulation.params``."""
    if k_global is not None:
        return {"global_K": k_global.tolist()}
    if C.shape[1] <= 16:
        return C[0].tolist() if C.shape[0] == 1 else C.tolist()
    return f"explicit matrix of shape {C.shape}"


def check_ratio(ratio, n: int, func: str) -> np.ndarray:
    """Cycle numbers per unit: ``ratio=(p, q)`` means unit 0 completes p cycles while
    unit 1 completes q. ``None`` means all 1 (1:1)."""
    if ratio is None:
        return np.ones(n, dtype=int)
    try:
        arr = np.array(ratio)
    except (TypeError, ValueError):
        arr = np.array([np.nan])
    ok = arr.shape == (n,) and np.all(np.isfinite(arr.astype(float, copy=False))
                                      if arr.dtype.kind in "fiu" else False)
    if ok:
        ok = bool(np.all(arr == np.round(arr)) and np.all(arr >= 1))
    if not ok:
        _fail(f"{func}: parameter ratio must be {n} positive integers (cycles completed by "
              f"each unit in the same time, e.g. (4, 1) = unit 0 makes 4 cycles while "
              f"unit 1 makes 1), got {ratio!r}; pass e.g. ratio=(1, 1).")
    return arr.astype(int)


def check_choice(value, name: str, choices, func: str):
    if value not in choices:
        _fail(f"{func}: parameter {name} must be one of {', '.join(map(repr, choices))}, "
              f"got {value!r}; pick one of those.")
    return value


def pair_ratio(m_i: int, m_j: int) -> tuple[int, int]:
    """Reduced (p, q) for unit i relative to unit j given cycle numbers m_i, m_j."""
    g = math.gcd(int(m_i), int(m_j))
    return int(m_i) // g, int(m_j) // g


# --------------------------------------------------------------------------- random streams
def replica_streams(rng, n_rep: int, *, stream: int = 0, func: str = "syncstats.simulate"):
    """Three generators per replica: (initial conditions, intrinsic noise, measurement).

    Replica ``i`` uses the seed sequence with spawn key ``root.spawn_key + (stream, i)``,
    so replica i is the same whether 1 or 1000 replicas are requested, and different
    ``stream`` numbers give independent components of a composite simulation.
    """
    try:
        root = as_seed_sequence(rng)
    except SyncstatsInputError as exc:
        raise SyncstatsInputError(f"{func}: parameter {exc}") from None
    out = []
    for i in range(n_rep):
        seq = np.random.SeedSequence(root.entropy, spawn_key=tuple(root.spawn_key) + (stream, i))
        out.append(tuple(np.random.default_rng(s) for s in seq.spawn(3)))
    return out


def add_measurement_noise(clean: np.ndarray, level: np.ndarray, gens) -> np.ndarray:
    """Add white Gaussian noise with SD = level[unit] * SD(clean signal of that unit).

    ``clean`` has shape (R, N, T); ``gens`` one generator per replica.
    """
    if not np.any(level > 0):
        return clean
    sd = clean.std(axis=-1, keepdims=True) * level[None, :, None]
    noise = np.stack([g.standard_normal(clean.shape[1:]) for g in gens])
    return clean + sd * noise


def frozen(d: dict) -> MappingProxyType:
    return MappingProxyType(dict(d))
