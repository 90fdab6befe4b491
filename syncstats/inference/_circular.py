"""Classical circular tests (for single angles per cycle or trial, and as a contrast)."""
from __future__ import annotations

import numpy as np

__all__ = ["rayleigh_test"]


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
