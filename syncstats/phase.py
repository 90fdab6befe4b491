"""Instantaneous phase and per-signal diagnostics (pure functions).

Phases are returned *unwrapped* (radians, increasing by 2π a cycle) so that n:m
differences ``q·phi_a − p·phi_b`` and the stroboscopic index can be formed directly.
Time is the last axis; functions broadcast over leading axes (surrogate batches).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np
from scipy import fft as spfft
from scipy import signal as sps

from ._errors import SyncstatsInputError
from .prep import bandpass, bandpass_gain, detrend, spectral_peak

__all__ = [
    "PhaseSpec",
    "SignalDiagnostics",
    "analytic_phase",
    "analytic_from_spectrum",
    "phase_from_spectrum",
    "wavelet_phase",
    "event_phase",
    "protophase_to_phase",
    "estimate_phase",
    "diagnose",
]

PHASE_METHODS = ("hilbert", "wavelet")


def analytic_phase(x: np.ndarray, fs: float, band=None, *, remove_trend: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """Unwrapped phase and amplitude of the analytic signal.

    The signal is detrended and, when ``band`` is given, band-passed with a zero-phase
    SOS Butterworth filter; then ``z = s + i·H[s]`` (``scipy.signal.hilbert``).

    Parameters
    ----------
    x : ndarray, shape (..., N)
    fs : float
        Sampling rate, Hz.
    band : (float, float) or None
        Pass band in Hz; None skips filtering (only for signals already narrow-band).
    remove_trend : bool, default True
        Subtract a least-squares line first.

    Returns
    -------
    phase : ndarray, shape (..., N), unwrapped radians
    amplitude : ndarray, shape (..., N)

    References
    ----------
    Chavez M, Besserve M, Adam C, Martinerie J (2006) J Neurosci Methods 154:149–160.
    """
    s = detrend(x) if remove_trend else np.asarray(x, dtype=float)
    if band is not None:
        s = bandpass(s, fs, band)
    z = sps.hilbert(s, axis=-1)
    return np.unwrap(np.angle(z), axis=-1), np.abs(z)


@lru_cache(maxsize=32)
def _spectral_kernel(n: int, fs: float, band):
    """(slope projector, gain, ramp spectrum x gain, first and end live bin) for
    :func:`analytic_from_spectrum`.

    ``slope = Re(X · proj)`` is the least-squares slope of the signal whose rfft is X
    (Parseval: sum_t x_t c_t = (1/n) sum_k w_k Re(X_k conj(C_k)), w = 1 at DC and at the
    Nyquist bin of an even n, 2 elsewhere; c = centred time); ``gain`` combines the
    band-pass power gain |H|^2 with the analytic-signal weights of
    ``scipy.signal.hilbert`` (1 at DC and Nyquist, 2 for 0 < k < n/2, 0 for negative
    frequencies), and ``ramp`` is the rfft of c times ``gain``.
    """
    k = n // 2 + 1
    tc = np.arange(n, dtype=float) - (n - 1) / 2.0
    ramp = spfft.rfft(tc)
    w = np.full(k, 2.0)
    w[0] = 1.0
    if n % 2 == 0:
        w[-1] = 1.0
    denom = float(tc @ tc) or 1.0
    proj = w * np.conj(ramp) / (n * denom)
    gain = w.copy()  # the analytic-signal weights happen to equal the Parseval weights
    if band is not None:
        gain *= bandpass_gain(spfft.rfftfreq(n, d=1.0 / fs), fs, band)
    gain[0] = 0.0  # the mean is removed with the trend
    # bins where the gain is below 1e-12 of its peak are treated as zero (a band-pass
    # keeps a small part of the axis: only those bins are touched per surrogate)
    live = np.flatnonzero(gain > 1e-12 * gain.max()) if gain.max() > 0 else np.arange(0)
    lo, hi = (int(live[0]), int(live[-1]) + 1) if live.size else (0, 0)
    ramp_g = (ramp * gain)[lo:hi]
    gain = gain[lo:hi]
    for a in (proj, gain, ramp_g):
        a.setflags(write=False)
    return proj, gain, ramp_g, lo, hi


def analytic_from_spectrum(spec: np.ndarray, n: int, fs: float, band=None, *, remove_trend: bool = True) -> np.ndarray:
    """Analytic signal of the detrended, zero-phase band-passed signal, from its rfft.

    The frequency-domain form of :func:`analytic_phase`: the least-squares line is removed
    from the spectrum (its slope is a linear functional of the spectrum), the band-pass is
    the power gain ``|H(f)|^2`` of the same Butterworth SOS filter that ``sosfiltfilt``
    applies forward and backward (:func:`syncstats.prep.bandpass_gain`), and the analytic
    signal keeps twice the positive frequencies, as ``scipy.signal.hilbert`` does; one
    inverse complex FFT of length n follows. The filter is circular here: near the
    record's ends the result differs from the padded ``sosfiltfilt`` (tolerances in
    tests/unit/test_speed_paths.py), elsewhere it agrees closely.

    Parameters
    ----------
    spec : ndarray, shape (..., n // 2 + 1), complex
        ``scipy.fft.rfft(x)`` of the raw signal x of length n.
    n : int
        Length of x.
    fs : float
        Sampling rate, Hz.
    band : (float, float) or None
        Pass band in Hz (None: no band-pass).
    remove_trend : bool, default True

    Returns
    -------
    ndarray, shape (..., n), complex128
    """
    proj, gain, ramp_g, lo, hi = _spectral_kernel(int(n), float(fs),
                                                  None if band is None else tuple(map(float, band)))
    z = np.zeros(spec.shape[:-1] + (n,), dtype=np.complex128)
    np.multiply(spec[..., lo:hi], gain, out=z[..., lo:hi])
    if remove_trend:
        slope = (spec @ proj).real
        z[..., lo:hi] -= slope[..., None] * ramp_g
    elif band is None:
        z[..., 0] = spec[..., 0]  # hilbert keeps the mean
    return spfft.ifft(z, axis=-1, overwrite_x=True)


def phase_from_spectrum(spec: np.ndarray, n: int, fs: float, spec_phase: "PhaseSpec") -> np.ndarray:
    """Unwrapped phase of a signal given as its rfft, through a spectral Hilbert :class:`PhaseSpec`
    (what the pipeline does to phase-randomised surrogates without leaving the frequency domain)."""
    z = analytic_from_spectrum(spec, n, fs, spec_phase.band)
    ph = np.unwrap(np.angle(z), axis=-1)
    if spec_phase.protophase_correction:
        ph = protophase_to_phase(ph, spec_phase.n_harmonics)
    return ph


def wavelet_phase(x: np.ndarray, fs: float, freq: float, *, omega0: float = 6.0):
    """Unwrapped phase and amplitude of the complex Morlet transform at one frequency.

    The scale is chosen so that the wavelet's Fourier period equals ``1/freq``:
    ``s = (omega0 + sqrt(2 + omega0**2)) / (4 π freq)`` (Torrence & Compo 1998, Table 1).
    The transform is computed in the frequency domain with the analytic Morlet
    ``Ψ̂(s·ω) = π^{-1/4} exp(−(s·ω − omega0)²/2)`` for ω > 0.

    References
    ----------
    Torrence C, Compo GP (1998) Bull Am Meteorol Soc 79:61–78.
    """
    if not (0 < freq < fs / 2):
        raise SyncstatsInputError(
            f"wavelet frequency {freq:g} Hz must lie in (0, fs/2 = {fs / 2:g}) Hz; pass the rhythm's frequency."
        )
    s = detrend(x)
    n = s.shape[-1]
    nfft = spfft.next_fast_len(2 * n)
    omega = 2 * np.pi * spfft.fftfreq(nfft, d=1.0 / fs)
    scale = (omega0 + np.sqrt(2.0 + omega0**2)) / (4 * np.pi * freq)
    psi_hat = np.where(omega > 0, np.pi**-0.25 * np.exp(-0.5 * (scale * omega - omega0) ** 2), 0.0)
    w = spfft.ifft(spfft.fft(s, n=nfft, axis=-1) * psi_hat, axis=-1)[..., :n]
    return np.unwrap(np.angle(w), axis=-1), np.abs(w)


def event_phase(events: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Phase from event times by linear interpolation between events.

    ``phi(t) = 2πk + 2π (t − t_k)/(t_{k+1} − t_k)`` for ``t_k <= t < t_{k+1}``; NaN
    outside the span of the events. Monotone by construction.

    Parameters
    ----------
    events : ndarray, shape (K,)
        Strictly increasing event times, seconds.
    t : ndarray, shape (N,)
        Times (seconds) at which to evaluate the phase.
    """
    ev = np.asarray(events, dtype=float)
    ph = np.interp(t, ev, 2 * np.pi * np.arange(ev.size), left=np.nan, right=np.nan)
    return ph


def protophase_to_phase(theta: np.ndarray, n_harmonics: int = 10) -> np.ndarray:
    """Map a protophase to a phase that grows uniformly in time (Kralemann et al.).

    ``phi = theta + Σ_{0<|k|<=K} S_k (exp(i k theta) − 1)/(i k)`` with
    ``S_k = mean_j exp(−i k theta_j)``, which makes the density of ``phi`` uniform.

    Parameters
    ----------
    theta : ndarray, shape (..., N)
        Unwrapped protophase.
    n_harmonics : int, default 10
        K; 10–20 is usual (Kralemann et al. 2008) (the selection criterion of the papers is not
        implemented: K is fixed by the caller).

    References
    ----------
    Kralemann B et al. (2007) Phys Rev E 76:055201(R); (2008) Phys Rev E 77:066205.
    """
    theta = np.asarray(theta, dtype=float)
    k = np.arange(1, int(n_harmonics) + 1)
    e = np.exp(1j * theta[..., None, :] * k[:, None])  # (..., K, N)
    s_k = np.conj(e.mean(axis=-1))  # S_k = mean exp(-ik theta)
    corr = (s_k[..., None] * (e - 1.0) / (1j * k[:, None])).sum(axis=-2)
    return theta + 2.0 * corr.real  # the -k terms are the complex conjugates


@dataclass(frozen=True)
class PhaseSpec:
    """How one continuous signal is turned into a phase (fixed on the data, reused for
    every surrogate so that surrogates pass the same pipeline)."""

    method: str = "hilbert"
    band: tuple[float, float] | None = None
    freq: float | None = None
    protophase_correction: bool = False
    n_harmonics: int = 10
    #: Hilbert only: band-pass and analytic signal in the frequency domain (circular
    #: filter with sosfiltfilt's gain |H|^2; see :func:`analytic_from_spectrum`)
    spectral: bool = False
    #: the band was given by the user (diagnostics then look for the rhythm inside it)
    band_given: bool = False


def estimate_phase(x: np.ndarray, fs: float, spec: PhaseSpec) -> tuple[np.ndarray, np.ndarray]:
    """Apply a :class:`PhaseSpec` to ``x`` of shape (..., N) -> (phase, amplitude)."""
    if spec.method == "hilbert" and spec.spectral:
        x = np.asarray(x, dtype=float)
        z = analytic_from_spectrum(spfft.rfft(x, axis=-1), x.shape[-1], fs, spec.band)
        ph, amp = np.unwrap(np.angle(z), axis=-1), np.abs(z)
    elif spec.method == "hilbert":
        ph, amp = analytic_phase(x, fs, spec.band)
    elif spec.method == "wavelet":
        ph, amp = wavelet_phase(x, fs, spec.freq)
    else:
        raise SyncstatsInputError(
            f"phase_method must be one of {PHASE_METHODS}, got {spec.method!r}."
        )
    if spec.protophase_correction:
        ph = protophase_to_phase(ph, spec.n_harmonics)
    return ph, amp


@dataclass(frozen=True)
class SignalDiagnostics:
    """What says whether a phase is meaningful for one signal."""

    signal: str
    dominant_freq_hz: float
    peak_sharpness: float
    near_zero_amplitude_share: float
    backward_step_share: float
    n_cycles: float
    method: str
    band: tuple[float, float] | None
    warnings: tuple[str, ...] = field(default=())


#: thresholds behind the diagnostic warnings (documented in DEVELOPERS.md)
THRESHOLDS = {
    "peak_sharpness": 0.3,  # share of power within f0 ± 20 %
    "near_zero_amplitude_share": 0.05,  # share of samples with amplitude < 10 % of median
    "backward_step_share": 0.01,
    "min_cycles": 10.0,
}


def diagnose(name: str, x, fs: float, phase: np.ndarray, amplitude, *, spec: PhaseSpec | None, kind="signal"):
    """Diagnostics and warning strings for one signal's phase (1-D arrays)."""
    if kind == "events" or x is None:
        f0, sharp = float("nan"), float("nan")
    else:
        given = spec is not None and spec.band is not None and spec.band_given
        f0, sharp = spectral_peak(x, fs, band=spec.band if given else None)
    ph = phase[np.isfinite(phase)]
    steps = np.diff(ph)
    back = float(np.mean(steps < 0)) if steps.size else 0.0
    if amplitude is not None:
        med = np.median(amplitude)
        near0 = float(np.mean(amplitude < 0.1 * med)) if med > 0 else 1.0
    else:
        near0 = 0.0
    cycles = float((ph[-1] - ph[0]) / (2 * np.pi)) if ph.size > 1 else 0.0
    if kind == "events" and ph.size > 1:
        f0 = cycles / (ph.size / fs)
    w = []
    if np.isfinite(sharp) and sharp < THRESHOLDS["peak_sharpness"]:
        w.append(f"{name}: broad spectrum (peak share {sharp:.2f}), so the phase may not be meaningful")
    if near0 > THRESHOLDS["near_zero_amplitude_share"]:
        w.append(f"{name}: amplitude near zero in {100 * near0:.1f}% of samples, so phase slips are likely")
    if back > THRESHOLDS["backward_step_share"]:
        w.append(f"{name}: phase runs backwards in {100 * back:.1f}% of steps")
    if cycles < THRESHOLDS["min_cycles"]:
        w.append(f"{name}: only {cycles:.1f} cycles in the analysed span")
    return SignalDiagnostics(
        signal=name,
        dominant_freq_hz=float(f0),
        peak_sharpness=float(sharp),
        near_zero_amplitude_share=near0,
        backward_step_share=back,
        n_cycles=cycles,
        method=spec.method if spec is not None else kind,
        band=spec.band if spec is not None else None,
        warnings=tuple(w),
    )
