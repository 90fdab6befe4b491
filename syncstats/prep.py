"""Preprocessing: detrend, zero-phase band-pass, spectral peak (pure functions).

Time is the last axis; every function broadcasts over leading axes, so a batch of
surrogates of shape ``(B, N)`` is one call.
"""
from __future__ import annotations

import numpy as np
from scipy import signal as sps

from ._errors import SyncstatsInputError

__all__ = ["detrend", "bandpass", "bandpass_gain", "decimation_factor", "decimate", "spectral_peak", "auto_band"]


def detrend(x: np.ndarray) -> np.ndarray:
    """Remove a least-squares line along the last axis (returns a new array).

    Closed form (slope = cov(t, x)/var(t)); equals ``scipy.signal.detrend(x, type="linear")``
    to rounding, without a least-squares solve per row.
    """
    x = np.asarray(x, dtype=float)
    n = x.shape[-1]
    t = np.arange(n, dtype=float) - (n - 1) / 2.0
    mean = x.mean(axis=-1, keepdims=True)
    denom = float(np.dot(t, t)) or 1.0
    slope = (x @ t)[..., None] / denom
    return x - mean - slope * t


def _check_band(band, fs: float, where: str = "band") -> tuple[float, float]:
    try:
        lo, hi = (float(b) for b in band)
    except (TypeError, ValueError):
        raise SyncstatsInputError(
            f"{where} must be a pair (low_hz, high_hz), got {band!r}; pass e.g. (0.1, 0.5)."
        ) from None
    nyq = fs / 2.0
    if not (0.0 < lo < hi < nyq):
        raise SyncstatsInputError(
            f"{where} ({lo:g}, {hi:g}) Hz must satisfy 0 < low < high < fs/2 = {nyq:g} Hz; "
            "choose a band inside the recorded frequency range."
        )
    return lo, hi


def bandpass(x: np.ndarray, fs: float, band, *, order: int = 4) -> np.ndarray:
    """Zero-phase Butterworth band-pass in second-order sections.

    Parameters
    ----------
    x : ndarray, shape (..., N)
    fs : float
        Sampling rate in Hz.
    band : (float, float)
        Pass band edges in Hz, ``0 < low < high < fs/2``.
    order : int, default 4
        Order of the Butterworth prototype; ``sosfiltfilt`` doubles the effective order
        and cancels the phase shift.

    Returns
    -------
    ndarray, shape (..., N)
    """
    lo, hi = _check_band(band, fs)
    sos = sps.butter(order, [lo, hi], btype="bandpass", fs=fs, output="sos")
    return sps.sosfiltfilt(sos, np.asarray(x, dtype=float), axis=-1)


def bandpass_gain(freqs: np.ndarray, fs: float, band, *, order: int = 4) -> np.ndarray:
    """Power gain ``|H(f)|^2`` of the zero-phase band-pass of :func:`bandpass` at ``freqs`` (Hz).

    ``sosfiltfilt`` runs the same SOS filter forward and backward, so away from the
    record's ends its response is ``H(f)·conj(H(f)) = |H(f)|^2``, real and without phase
    shift. Multiplying a spectrum by this gain is the frequency-domain (circular) form of
    the same filter; it differs from ``sosfiltfilt`` only within the filter's memory of
    the record's ends (padding there differs), which the pipeline drops.
    """
    lo, hi = _check_band(band, fs)
    sos = sps.butter(order, [lo, hi], btype="bandpass", fs=fs, output="sos")
    _, h = sps.sosfreqz(sos, worN=np.asarray(freqs, dtype=float), fs=fs)
    return (h.real * h.real + h.imag * h.imag).astype(float)


#: an analysis rate at least this many times a rhythm's highest frequency of interest
RATE_PER_TOP_FREQ = 10.0


def decimation_factor(fs: float, top_freq_hz: float, *, per_top: float = RATE_PER_TOP_FREQ) -> int:
    """Largest integer q with ``fs / q >= per_top * top_freq_hz`` (at least 1).

    ``top_freq_hz`` is the highest frequency any rhythm of the analysis needs (upper pass
    band edge, wavelet frequency band, event rate); ``per_top`` = 10 keeps the pass band
    below a fifth of the new Nyquist frequency, far from the anti-alias filter's edge.
    """
    if not np.isfinite(top_freq_hz) or top_freq_hz <= 0:
        return 1
    return max(1, int(np.floor(fs / (per_top * top_freq_hz) + 1e-9)))


def decimate(x: np.ndarray, q: int) -> np.ndarray:
    """Anti-alias filter and keep every ``q``-th sample (last axis), zero phase.

    ``scipy.signal.resample_poly(x, 1, q, padtype="line")``: a linear-phase Kaiser FIR
    low-pass at the new Nyquist frequency applied symmetrically (no delay), polyphase,
    with the record extended by its least-squares line at both ends so that a trend or
    offset makes no edge transient. Output sample j sits at input sample j·q, so the new
    grid is ``t[::q]``.
    """
    x = np.asarray(x, dtype=float)
    if q == 1:
        return x.copy()
    return sps.resample_poly(x, 1, int(q), axis=-1, padtype="line")


def spectral_peak(x: np.ndarray, fs: float, *, fmin: float | None = None,
                  band: tuple[float, float] | None = None) -> tuple[float, float]:
    """Dominant frequency and peak sharpness of a 1-D signal (Welch periodogram).

    Returns
    -------
    f0 : float
        Frequency (Hz) of the largest Welch-spectrum peak above ``fmin``
        (default: 2 / record length, so that trends do not count).
    sharpness : float
        Share of the spectral power (above ``fmin``) within ``f0 ± 20 %``, in excess of
        the share a flat spectrum would put there, rescaled to [0, 1]:
        ``(share − width)/(1 − width)`` with ``width`` the fraction of the frequency axis
        inside ``f0 ± 20 %``. Near 1 for a narrow-band rhythm, near 0 for white noise.

    With ``band`` = (low, high) Hz only that band counts (the peak and the power shares
    are taken inside it): is there a rhythm in the band the user chose?
    """
    x = np.asarray(x, dtype=float)
    n = x.shape[-1]
    nper = int(min(n, max(256, 2 ** np.floor(np.log2(n / 4)))))
    f, pxx = sps.welch(x - x.mean(), fs=fs, nperseg=nper, detrend="linear")
    fmin = 2.0 * fs / n if fmin is None else fmin
    keep = f > max(fmin, f[1] if len(f) > 1 else 0)
    if band is not None:
        keep &= (f >= band[0]) & (f <= band[1])
    if not np.any(keep) or not np.any(pxx[keep] > 0):
        return float("nan"), 0.0
    fk, pk = f[keep], pxx[keep]
    f0 = float(fk[np.argmax(pk)])
    near = (fk >= 0.8 * f0) & (fk <= 1.2 * f0)
    share = pk[near].sum() / pk.sum()
    width = near.mean()
    return f0, float(max(0.0, (share - width) / (1.0 - width))) if width < 1 else 0.0


def auto_band(x: np.ndarray, fs: float, *, rel_width: float = 0.5) -> tuple[float, float]:
    """Pass band ``(f0·(1 − w), f0·(1 + w))`` around the dominant spectral peak ``f0``.

    ``rel_width`` 0.5 keeps the rhythm's own frequency variation (heart and breathing
    rates vary by tens of per cent) while excluding the second harmonic; narrower bands
    manufacture apparent locking out of noise, which the surrogates then share.
    """
    f0, _ = spectral_peak(x, fs)
    if not np.isfinite(f0):
        raise SyncstatsInputError("cannot find a spectral peak to choose a band automatically; give the band explicitly.")
    lo = f0 * (1.0 - rel_width)
    hi = min(f0 * (1.0 + rel_width), 0.95 * fs / 2.0)
    return lo, hi
