"""Classical circular tests (for single angles per cycle or trial, and as a contrast)."""
from __future__ import annotations

import math

import numpy as np

__all__ = ["rayleigh_test", "critical_plv"]


def rayleigh_test(angles: np.ndarray, axis: int = -1):
    """Rayleigh test of uniformity with Zar's approximation.

    ``p ≈ exp(sqrt(1 + 4N + 4(N² − R_n²)) − (1 + 2N))`` with ``R_n = N·γ``.

    Valid only for independent angles. Applied to every sample of an autocorrelated
    phase difference it is the naive test whose false-positive rate is far above
    nominal (``docs/validation.md`` shows it as the contrast row).

    Returns
    -------
    z : ndarray
        ``R_n² / N``.
    p : ndarray
        Zar's approximation, clipped to [0, 1].

    References
    ----------
    Zar JH, Biostatistical Analysis (4th ed. 1999), Eq. 27.4.
    """
    a = np.asarray(angles, dtype=float)
    n = a.shape[axis]
    rn = np.abs(np.sum(np.exp(1j * a), axis=axis))
    z = rn**2 / n
    p = np.exp(np.sqrt(1 + 4 * n + 4 * (n**2 - rn**2)) - (1 + 2 * n))
    return z, np.clip(p, 0.0, 1.0)


def critical_plv(n, level):
    """Smallest PLV whose Rayleigh p-value (Zar's approximation) is at most ``level``.

    Inverts Zar's formula in closed form: with ``L = ln(level)``,
    ``R_n² = −L (4n + 2 + L) / 4`` and ``gamma = R_n / n``. Returns ``inf`` when even
    gamma = 1 cannot reach ``level`` with ``n`` angles.

    Examples
    --------
    >>> g = critical_plv(100, 0.05)
    >>> round(g, 4)
    0.1729
    """
    n = float(n)
    L = math.log(level)
    r2 = -L * (4.0 * n + 2.0 + L) / 4.0
    if L < -(1.0 + 2.0 * n) or r2 < 0:
        return math.inf
    g = math.sqrt(r2) / n
    return g if g <= 1.0 else math.inf
