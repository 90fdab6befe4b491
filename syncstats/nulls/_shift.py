"""Time-shift surrogates and the locking value at every circular shift (one FFT)."""
from __future__ import annotations

import numpy as np
import scipy.fft as sfft

from .._errors import SyncstatsInputError
from ._validation import _as_channels, _check_int, _check_rngs

__all__ = ["time_shift", "shift_phase", "time_shift_plv_all"]


def time_shift(x, rngs, *, min_shift: int, return_shifts: bool = False):
    """Time-shift surrogates of one rhythm's unwrapped phase, with a phase-continuous joint.

    Parameters
    ----------
    x : array_like, shape (T, N) or (N,)
        Unwrapped phase(s) of one rhythm in radians, time on the last axis; the T rows
        (trials) are shifted together by the same lag.
    rngs : sequence of numpy.random.Generator, length B
        One generator per surrogate; surrogate ``b`` draws only from ``rngs[b]``.
    min_shift : int
        Smallest shift in samples, 1 <= min_shift <= N // 2. Shifts are drawn uniformly
        from the integers in [min_shift, N - min_shift] (one ``integers`` draw per
        surrogate), so that neither direction comes closer than ``min_shift`` samples to
        the original alignment. Choose several cycles of the slowest rhythm.
    return_shifts : bool, default False
        Also return the shifts, shape (B,).

    Returns
    -------
    surrogates : numpy.ndarray, shape (B, T, N) (or (B, N) for 1-D input), float64
    shifts : numpy.ndarray, shape (B,), int
        Only when ``return_shifts``.

    Notes
    -----
    With s the shift, S(t) = x((t - s) mod N) + A·[t >= s], where
    A = (x[N-1] - x[0]) · N / (N - 1) is the phase advance over the record plus one mean
    step. The piece taken from the record's start therefore continues the end's phase
    (a phase-continuous joint): a plain circular wrap leaves a fraction of a cycle at
    the joint, which misaligns very regular rhythms and pushes the null down. The pair
    is compared as ``(x_A, S_B)``, so each rhythm keeps its whole own dynamics while the
    alignment between them is destroyed. There are only N - 2 min_shift + 1 distinct
    surrogates, and for a very regular rhythm many shifts give almost the same
    alignment: the null is then weak. The locking value at every circular shift at once:
    :func:`time_shift_plv_all`.

    References
    ----------
    Hurtado JM, Rubchinsky LL, Sigvardt KA (2004). Statistical method for detection of
    phase-locking episodes in neural oscillations. J Neurophysiol 91:1883-1898.

    Examples
    --------
    >>> import numpy as np
    >>> ph = 2 * np.pi * np.arange(10) / 4          # a regular rhythm, 4 samples a cycle
    >>> s, sh = time_shift(ph, [np.random.default_rng(0)], min_shift=3, return_shifts=True)
    >>> bool(3 <= sh[0] <= 7), bool(np.allclose(np.diff(s[0]), np.pi / 2))  # no jump at the joint
    (True, True)
    """
    x2, one_d = _as_channels(x, "time_shift", min_samples=2)
    rngs = _check_rngs(rngs, "time_shift")
    n = x2.shape[-1]
    min_shift = _check_int(min_shift, "min_shift", "time_shift", low=1, high=n // 2)
    shifts = np.array([g.integers(min_shift, n - min_shift + 1) for g in rngs], dtype=np.int64)
    out = shift_phase(x2, shifts)
    if one_d:
        out = out[:, 0, :]
    return (out, shifts) if return_shifts else out


def shift_phase(ph: np.ndarray, shifts: np.ndarray) -> np.ndarray:
    """Apply given shifts with the phase-continuous joint of :func:`time_shift`.

    ``ph`` (T, N) unwrapped phases, ``shifts`` (B,) ints in [0, N) -> (B, T, N).
    """
    n = ph.shape[-1]
    src = np.arange(n)[None, :] - np.asarray(shifts)[:, None]  # (B, N); < 0: taken from the end
    rolled = ph[:, src % n].transpose(1, 0, 2)  # (B, T, N)
    adv = ph[:, -1] - ph[:, 0] + (ph[:, -1] - ph[:, 0]) / (n - 1)  # (T,)
    return rolled + (src >= 0)[:, None, :] * adv[None, :, None]


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
        ``out[..., 0]`` is the unshifted PLV. A circular roll of B by ``s`` samples
        (``numpy.roll(zb, s)``) corresponds to ``tau = (N - s) mod N``.

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


def shift_curve(phi_a, phi_b, p: int = 1, q: int = 1) -> np.ndarray:
    """PLV of ``psi = q·phi_a − p·S_s(phi_b)`` for every shift s = 0..N-1 of
    :func:`time_shift` (phase-continuous joint), by zero-padded FFT cross-correlation.

    Parameters
    ----------
    phi_a, phi_b : array_like, shape (T, N) or (N,)
        Unwrapped phases (radians) of the two rhythms on the analysed span; T trials
        share each shift and are pooled.
    p, q : int
        Ratio p:q.

    Returns
    -------
    numpy.ndarray, shape (N,)
        ``out[s]`` = PLV between A and B shifted by s samples; ``out[0]`` is the PLV of
        the data.

    Notes
    -----
    With za = exp(i q phi_a), zb = exp(i p phi_b) and the linear cross-correlation
    c[k] = Σ_t za[t] conj(zb[t − k]) (one FFT pair of length ≥ 2N), the shifted sum is
    exp(−i p A)·c[s] + c[s − N]: the samples t >= s see B advanced by the joint's phase
    A = (phi_b[N−1] − phi_b[0])·N/(N − 1), the samples t < s see B's end. O(N log N)
    for all N shifts instead of O(N) per shift (correlation theorem of the DFT).

    Examples
    --------
    >>> import numpy as np
    >>> ph = 2 * np.pi * np.arange(200) / 10
    >>> bool(np.allclose(shift_curve(ph, ph), 1.0))   # regular rhythms: locked at every shift
    True
    """
    a = np.atleast_2d(np.asarray(phi_a, dtype=float))
    b = np.atleast_2d(np.asarray(phi_b, dtype=float))
    if a.shape != b.shape or a.shape[-1] < 2:
        raise SyncstatsInputError(
            f"phi_a {a.shape} and phi_b {b.shape} in shift_curve() must be phases of equal shape with time last."
        )
    n = a.shape[-1]
    m = sfft.next_fast_len(2 * n)
    za, zb = np.exp(1j * q * a), np.exp(1j * p * b)
    c = sfft.ifft(sfft.fft(za, m, axis=-1) * np.conj(sfft.fft(zb, m, axis=-1)), axis=-1)  # c[k], c[m + k] for k < 0
    adv = (b[:, -1] - b[:, 0]) * n / (n - 1)
    s = np.arange(n)
    tot = np.exp(-1j * p * adv)[:, None] * c[:, s] + np.where(s > 0, c[:, (m + s - n) % m], 0.0)
    return np.abs(tot.sum(axis=0)) / (n * a.shape[0])


def curve_correlation_length(curve: np.ndarray, *, exclude: int = 0) -> int:
    """Lag (samples) at which the circular autocorrelation of a shift curve first drops
    below 1/e: how far apart two shifts must be to give nearly unrelated values.

    ``exclude`` samples on each side of shift 0 (the data's own alignment, which may
    hold the coupling) are left out by setting them to the curve's mean first.
    """
    x = np.asarray(curve, dtype=float).copy()
    n = x.size
    if exclude > 0:
        keep = np.ones(n, bool)
        keep[:exclude] = keep[n - exclude + 1:] = False
        x[~keep] = x[keep].mean()
    x -= x.mean()
    p = np.abs(sfft.fft(x)) ** 2
    ac = sfft.ifft(p).real
    if ac[0] <= 0:
        return 1
    ac /= ac[0]
    below = np.nonzero(ac[: n // 2] < np.exp(-1))[0]
    return int(below[0]) if below.size else n // 2
