"""What the analysis hands the report about each rhythm, beyond the table.

Two things, both computed at the analysis stage (the report computes nothing):

* :func:`rhythm_diagnostics` -- two more per-signal diagnostics that say which null's
  assumptions fit the data (read by :mod:`syncstats.compare`):

  - ``amplitude_cv``: coefficient of variation (SD / mean) of the analytic amplitude on
    the analysed span. A narrow-band linear Gaussian process has a Rayleigh-distributed
    amplitude, CV = sqrt(4/pi - 1) = 0.523 (closed form); a self-sustained rhythm keeps
    a steady amplitude (CV about 0.03-0.07 on the simulated limit cycles, 0.25 on
    phase-coherent chaos, 0.43-0.65 on noise-driven damped oscillators, 60 s records).
  - ``rate_drift``: range of the mean frequency over the span's four quarters, relative
    to the mean frequency over the whole span (0 = the same rate throughout), and
    ``rate_change_p``: one-way ANOVA p-value of "every quarter has the same rate" on the
    rates of 32 equal blocks (:func:`rate_change`).

* :func:`rhythm_views` -- small, thinned arrays for the report's signal figure: each
  continuous signal's power spectrum (Welch) with its pass band, and a short stretch of
  the raw and band-passed signal with its phase (event rhythms: event times and phase).
"""
from __future__ import annotations

import numpy as np
from scipy import signal as _sig

from .prep import bandpass, detrend

__all__ = ["rate_change", "rhythm_diagnostics", "rhythm_views", "TRACE_CYCLES", "MAX_POINTS"]

#: cycles of each rhythm in its trace stretch
TRACE_CYCLES = 8
#: at most this many points per drawn curve
MAX_POINTS = 800


def rate_change(ph: np.ndarray, fs: float, *, blocks: int = 32) -> tuple[float, float]:
    """(relative range of the quarter rates, p-value that the rate is the same in every quarter).

    The span is cut into ``blocks`` equal blocks (8 per quarter); the mean rate of each
    block is one observation and a one-way ANOVA (``scipy.stats.f_oneway``) asks whether
    the quarters share one mean rate. Block rates of a stationary rhythm whose phase
    diffuses are independent (increments of the phase), so the F-test holds its level
    there; a rhythm whose rate steps or drifts between epochs gives a small p.
    """
    from scipy import stats

    ph = ph[np.isfinite(ph)]
    if ph.size < 4 * blocks:
        return float("nan"), float("nan")
    edges = np.linspace(0, ph.size - 1, blocks + 1).astype(int)
    r = np.array([(ph[b] - ph[a]) / (2 * np.pi) / ((b - a) / fs) for a, b in zip(edges[:-1], edges[1:])])
    whole = (ph[-1] - ph[0]) / (2 * np.pi) / ((ph.size - 1) / fs)
    groups = r.reshape(4, -1)
    q = groups.mean(axis=1)
    rel = float((q.max() - q.min()) / abs(whole)) if whole else float("nan")
    if np.ptp(r) == 0:
        return rel, 1.0
    return rel, float(stats.f_oneway(*groups).pvalue)


def rhythm_diagnostics(pipe) -> dict:
    """name -> {"amplitude_cv", "rate_drift", "rate_change_p"} on the analysed span."""
    fs = pipe.inputs.fs
    out = {}
    for n in pipe.names:
        amp = pipe.amplitude.get(n)
        cv = float("nan")
        if amp is not None and np.size(amp) > 1 and np.mean(amp) > 0:
            cv = float(np.std(amp) / np.mean(amp))
        drift, p = rate_change(np.asarray(pipe.data[n][0], dtype=float), fs)
        out[n] = {"amplitude_cv": cv, "rate_drift": drift, "rate_change_p": p}
    return out


def _thin(*arrays, limit=MAX_POINTS):
    step = max(1, int(np.ceil(arrays[0].size / limit)))
    return tuple(np.ascontiguousarray(a[::step]) for a in arrays)


def _spectrum(x: np.ndarray, fs: float, band, f0: float):
    """Welch power spectrum of one detrended signal, cut to what the figure shows."""
    n = x.size
    nper = int(min(n, max(256, n // 4)))
    f, pxx = _sig.welch(detrend(x), fs=fs, nperseg=nper)
    top = max(3.0 * (band[1] if band is not None else f0 if np.isfinite(f0) else fs / 6), 2 * f[1])
    keep = (f > 0) & (f <= min(top, fs / 2))
    f, pxx = f[keep], pxx[keep]
    if f.size > MAX_POINTS:  # average neighbouring bins (coarser, never a lost peak's power)
        k = int(np.ceil(f.size / MAX_POINTS))
        m = f.size // k * k
        f, pxx = f[:m].reshape(-1, k).mean(1), pxx[:m].reshape(-1, k).mean(1)
    return f, pxx


def rhythm_views(pipe, diagnostics=None) -> dict:
    """name -> small arrays for the report's signal figure (see the module docstring).

    Keys: ``kind``; ``freq_hz``, ``power``, ``band`` (continuous signals); ``t``,
    ``raw``, ``filtered``, ``phase`` (wrapped to (-pi, pi]) over the first
    ``TRACE_CYCLES`` cycles of that rhythm on the span; ``events`` (event
    rhythms: the event times inside the stretch).
    """
    inp, fs = pipe.inputs, pipe.inputs.fs
    t = pipe.time_s
    f0s = {}
    if diagnostics is not None and len(diagnostics):
        f0s = dict(zip(diagnostics["signal"], diagnostics["dominant_freq_hz"].astype(float)))
    out = {}
    for n in pipe.names:
        kind = inp.kinds[n]
        whole = np.asarray(pipe.data[n][0], dtype=float)
        ok = whole[np.isfinite(whole)]
        rate = abs(ok[-1] - ok[0]) / (2 * np.pi) / ((ok.size - 1) / fs) if ok.size > 1 else 0.0
        length = int(min(t.size, max(16, round(TRACE_CYCLES / rate * fs) if rate > 0 else t.size)))
        sl = slice(pipe.i0, pipe.i0 + length)
        ph = np.angle(np.exp(1j * np.asarray(pipe.data[n][0][:length], dtype=float)))
        v = {"kind": kind}
        if kind == "signal":
            spec = pipe.specs[n]
            x = np.asarray(inp.raw[n][0], dtype=float)
            band = None if spec.band is None else (float(spec.band[0]), float(spec.band[1]))
            v["freq_hz"], v["power"] = _spectrum(x, fs, band, f0s.get(n, float("nan")))
            v["band"] = band
            if band is not None and spec.method == "hilbert":
                filt = bandpass(detrend(x), fs, band)[sl]
            else:  # the real part of the analytic (or wavelet) signal the phase came from
                amp = np.asarray(pipe.amplitude[n][:length], dtype=float)
                filt = amp * np.cos(np.asarray(pipe.data[n][0][:length], dtype=float))
            v["t"], v["raw"], v["filtered"], v["phase"] = _thin(t[:length], x[sl], filt, ph)
        else:
            v["t"], v["phase"] = _thin(t[:length], ph)
            if kind == "events":
                ev = np.asarray(inp.events[n], dtype=float)
                v["events"] = ev[(ev >= t[0]) & (ev <= t[length - 1])]
        out[n] = v
    return out
