"""Time-shift surrogates and the locking value at every circular shift (one FFT)."""
from __future__ import annotations

import numpy as np
import scipy.fft as sfft

from .._errors import SyncstatsInputError
from ._validation import _as_channels, _check_int, _check_rngs

__all__ = ["time_shift", "time_shift_plv_all"]


def time_shift(x, rngs, *, min_shift: int, return_shifts: bool = False):
    """Time-shift surrogates: every channel but the first is rolled circularly by a random lag.

    Parameters
    ----------
    x : array_like, shape (C, N) or (N,)
        Signals (raw signals or unwrapped phases), time on the last axis.
    rngs : sequence of numpy.random.Generator, length B
        One generator per surrogate; surrogate ``b`` draws only from ``rngs[b]``.
    min_shift : int
        Smallest shift in samples, 1 <= min_shift <= N // 2. Shifts are drawn uniformly
        from the integers in [min_shift, N - min_shift], so that neither direction comes
        closer than ``min_shift`` samples to the original alignment. Choose several cycles
        of the slowest rhythm.
    return_shifts : bool, default False
        Also return the shifts, shape (B, C) (0 for channel 0 when C > 1).

    Returns
    -------
    surrogates : numpy.ndarray, shape (B, C, N), float64
        ``surrogates[b, c] = numpy.roll(x[c], shifts[b, c])``.
    shifts : numpy.ndarray, shape (B, C), int
        Only when ``return_shifts``.

    Notes
    -----
    S_c(t) = x_c((t - tau_c) mod N). With C >= 2 channel 0 is the fixed reference and
    channels 1..C-1 get independent shifts tau_c (one ``integers`` draw of size C - 1 per
    surrogate). With a single channel (1-D input or C = 1) that channel is shifted (one
    draw of size 1), the caller holding its partner fixed. Each series keeps its whole
    dynamics (only the wrap point is new); the alignment between channels is destroyed.
    There are only N - 2 min_shift + 1 distinct surrogates, and for a very regular rhythm
    many shifts give almost the same alignment: the null is then weak. For phases, unwrap
    after rolling (the wrap point makes a jump). Locking values at every shift at once:
    :func:`time_shift_plv_all`.

    References
    ----------
    Hurtado JM, Rubchinsky LL, Sigvardt KA (2004). Statistical method for detection of
    phase-locking episodes in neural oscillations. J Neurophysiol 91:1883-1898.

    Examples
    --------
    >>> import numpy as np
    >>> x = np.stack([np.arange(10.0), np.arange(10.0)])
    >>> s, sh = time_shift(x, [np.random.default_rng(0)], min_shift=3, return_shifts=True)
    >>> bool(np.array_equal(s[0, 1], np.roll(x[1], sh[0, 1]))), bool(3 <= sh[0, 1] <= 7)
    (True, True)
    """
    x2, _ = _as_channels(x, "time_shift", min_samples=2)
    rngs = _check_rngs(rngs, "time_shift")
    c, n = x2.shape
    min_shift = _check_int(min_shift, "min_shift", "time_shift", low=1, high=n // 2)
    n_shifted = max(c - 1, 1)
    drawn = np.stack([r.integers(min_shift, n - min_shift + 1, size=n_shifted) for r in rngs])
    shifts = np.zeros((len(rngs), c), dtype=np.int64)
    shifts[:, c - n_shifted :] = drawn
    idx = (np.arange(n)[None, None, :] - shifts[:, :, None]) % n  # (B, C, N)
    out = np.take_along_axis(np.broadcast_to(x2, idx.shape), idx, axis=-1)
    if return_shifts:
        return out, shifts
    return out


def time_shift_plv_all(za, zb) -> np.ndarray:
    """Locking value between ``za`` and ``zb`` for every circular shift of ``zb``, by one FFT.

    Parameters
    ----------
    za, zb : array_like, complex, shape (..., N)
        Unit phasors, e.g. ``exp(1j * q * phi_A)`` and ``exp(1j * p * phi_B)``; leading axes
        broadcast against each other. Any complex values are accepted (the formula does
        not need unit modulus).

    Returns
    -------
    numpy.ndarray, shape (broadcast(...), N), float64
        ``out[..., tau] = |mean_t za[t] * conj(zb[(t + tau) mod N])|`` for tau = 0..N-1.
        ``out[..., 0]`` is the unshifted PLV. A time-shift surrogate that rolls B by
        ``s`` samples (``numpy.roll(zb, s)``, as :func:`time_shift` does) corresponds to
        ``tau = (N - s) mod N``.

    Notes
    -----
    The circular cross-correlation theorem gives
    sum_t conj(za[t]) zb[t + tau] = IFFT(conj(FFT(za)) * FFT(zb))[tau], and the modulus of
    its conjugate is the same, so the whole lag profile costs O(N log N) instead of
    O(N^2). Unwrapping is not needed because phases enter only through phasors.

    References
    ----------
    Mormann F, Lehnertz K, David P, Elger CE (2000). Mean phase coherence as a measure
    for phase synchronization. Physica D 144:358-369 (the PLV). Convolution/correlation
    theorem of the DFT: closed-form identity.

    Examples
    --------
    >>> import numpy as np
    >>> phi = 2 * np.pi * np.arange(8) / 8
    >>> np.round(time_shift_plv_all(np.exp(1j * phi), np.exp(1j * phi)), 12)
    array([1., 1., 1., 1., 1., 1., 1., 1.])
    """
    a = np.asarray(za)
    b = np.asarray(zb)
    for name, arr in (("za", a), ("zb", b)):
        if arr.dtype.kind not in "biufc":
            raise SyncstatsInputError(
                f"{name} in time_shift_plv_all() has dtype {arr.dtype}; pass complex phasors exp(1j * phase)."
            )
        if arr.ndim < 1 or arr.shape[-1] < 1:
            raise SyncstatsInputError(
                f"{name} in time_shift_plv_all() has shape {arr.shape}; pass phasors with time on the last axis."
            )
        if not np.all(np.isfinite(arr)):
            raise SyncstatsInputError(
                f"{name} in time_shift_plv_all() contains NaN or infinite values; cut the gaps before computing PLVs."
            )
    if a.shape[-1] != b.shape[-1]:
        raise SyncstatsInputError(
            f"za and zb in time_shift_plv_all() have {a.shape[-1]} and {b.shape[-1]} samples; "
            "pass phasors on the same time grid."
        )
    try:
        np.broadcast_shapes(a.shape[:-1], b.shape[:-1])
    except ValueError:
        raise SyncstatsInputError(
            f"za {a.shape} and zb {b.shape} in time_shift_plv_all() do not broadcast over their leading axes; "
            "give them matching leading shapes."
        ) from None
    n = a.shape[-1]
    fa = sfft.fft(a, axis=-1, workers=-1)
    fb = sfft.fft(b, axis=-1, workers=-1)
    cc = sfft.ifft(np.conj(fa) * fb, axis=-1, workers=-1)
    return np.abs(cc) / n
