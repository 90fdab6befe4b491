"""One pipeline from inputs to phases, for the data and for every surrogate.

:class:`Inputs` holds what the user gave, on one time grid: raw continuous signals
(T trials x N samples), event times, and phases computed elsewhere.
:meth:`Pipeline.fix` fixes everything that is chosen on the data — each signal's
:class:`~syncstats.phase.PhaseSpec` (band around the dominant spectral peak unless
given), the analysed span (finite everywhere, minus one period of the lowest band edge
at each end) — and computes the data's phases. :meth:`Pipeline.phases` then turns any
replacement inputs (surrogate raw signals, surrogate event lists, surrogate phases on
the span) into phases through exactly the same steps:

* signal: detrend -> zero-phase band-pass -> Hilbert (or Morlet) phase -> optional
  protophase correction -> span;
* events: linear event phase on the grid -> optional protophase correction -> span;
* phases given by the user: taken as given -> span.

Two options make the same steps cheaper (both fixed on the data, used for data and
surrogates alike; see docs/performance.md):

* ``decimate``: every continuous signal is low-passed (zero-phase polyphase FIR) and
  kept at one common integer factor q, so that the analysis rate ``fs / q`` stays at
  least :data:`syncstats.prep.RATE_PER_TOP_FREQ` times the highest frequency any rhythm
  needs (upper band edge; wavelet frequency x 1.5; event or phase rate). Event phases
  are evaluated on the coarser grid, user phases are subsampled. Surrogates are then
  made from the decimated signals.
* ``spectral_filter``: the Hilbert path runs in the frequency domain (detrend,
  band-pass gain |H|^2, analytic signal; one inverse FFT), and phase-randomised
  surrogates never leave it (:meth:`Pipeline.phases` with ``spectra=``).

Phase-level surrogates (time shifts, trial re-pairing) are made from the span phases and
handed back as such.
"""
from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace

import numpy as np
from scipy import fft as spfft

from ._errors import SyncstatsInputError
from .phase import PhaseSpec, diagnose, estimate_phase, event_phase, phase_from_spectrum, protophase_to_phase
from .prep import RATE_PER_TOP_FREQ, _check_band, auto_band, decimate, decimation_factor, spectral_peak

__all__ = ["Inputs", "Pipeline"]


@dataclass(frozen=True)
class Inputs:
    """Checked inputs on one grid (see ``syncstats.api``)."""

    names: tuple[str, ...]  # rhythms in input order: signals, then events, then phases
    kinds: Mapping[str, str]  # name -> "signal" | "events" | "phase"
    fs: float
    t: np.ndarray  # (N,) seconds of the grid
    n_trials: int
    raw: Mapping[str, np.ndarray] = field(default_factory=dict)  # (T, N) continuous signals
    events: Mapping[str, np.ndarray] = field(default_factory=dict)  # (K,) event times, s
    user_phases: Mapping[str, np.ndarray] = field(default_factory=dict)  # (T, N) unwrapped
    recording: str = ""
    sources: tuple[str, ...] = ()


def _fix_spec(name, x, fs, method, band, protophase, spectral=False):
    if method not in ("hilbert", "wavelet"):
        raise SyncstatsInputError(f"phase_method for '{name}' must be 'hilbert' or 'wavelet', got {method!r}.")
    x0 = x.mean(axis=0)
    given = band is not None and not (isinstance(band, str) and band == "auto")
    if isinstance(band, str) and band == "auto":
        try:
            band = auto_band(x0, fs)
        except SyncstatsInputError:
            raise SyncstatsInputError(
                f"signal '{name}': no spectral peak to centre a band on; give a pass band for '{name}' (low and high, Hz)."
            ) from None
    elif band is not None:
        band = _check_band(band, fs, where=f"band of signal '{name}'")
    freq = None
    if method == "wavelet":
        freq = float(np.sqrt(band[0] * band[1])) if band is not None else spectral_peak(x0, fs)[0]
        band = None
    return PhaseSpec(method=method, band=band, freq=freq, protophase_correction=bool(protophase),
                     spectral=bool(spectral) and method == "hilbert", band_given=given)


def _top_freq(inputs, specs) -> float:
    """Highest frequency (Hz) any rhythm of the analysis needs; inf when one is unbounded
    (a Hilbert phase without a band keeps the whole spectrum)."""
    top = 0.0
    for sp in specs.values():
        if sp.method == "wavelet":
            top = max(top, 1.5 * sp.freq)  # the Morlet (omega0 = 6) response is negligible beyond
        elif sp.band is not None:
            top = max(top, sp.band[1])
        else:
            return float("inf")
    for ev in inputs.events.values():
        ev = np.asarray(ev, dtype=float)
        if ev.size > 1:
            top = max(top, 2.0 * (ev.size - 1) / (ev[-1] - ev[0]))  # twice the mean rate: rate changes
    for ph in inputs.user_phases.values():
        d = np.diff(ph, axis=-1)
        d = d[np.isfinite(d)]
        if d.size:
            top = max(top, 2.0 * float(np.mean(np.abs(d))) * inputs.fs / (2 * np.pi))
    return top


def _decimated(inputs, q: int):
    """The same inputs on the grid t[::q] (signals anti-alias filtered, phases subsampled),
    cut at the end to the longest length whose FFT is fast (``scipy.fft.prev_fast_len``:
    a length with a large prime factor makes every FFT of every surrogate several times
    slower; the cut is a few samples, under 1 % of the record beyond a few hundred)."""
    m = inputs.t[::q].size
    m = max(spfft.prev_fast_len(m, real=True), 1)
    return replace(
        inputs,
        fs=inputs.fs / q,
        t=inputs.t[::q][:m].copy(),
        raw={n: np.ascontiguousarray(decimate(x, q)[..., :m]) for n, x in inputs.raw.items()},
        user_phases={n: np.ascontiguousarray(p[..., ::q][..., :m]) for n, p in inputs.user_phases.items()},
    )


@dataclass(frozen=True)
class Pipeline:
    """Inputs -> phases on the analysed span ``[i0, i1)`` of the grid, fixed on the data.

    ``data`` holds the data's phases on the span (name -> (T, n)); ``amplitude`` the
    first trial's analytic amplitude on the span for continuous signals (diagnostics).
    """

    inputs: Inputs
    specs: Mapping[str, PhaseSpec]
    protophase_correction: bool
    i0: int
    i1: int
    edge_s: float
    data: Mapping[str, np.ndarray]
    amplitude: Mapping[str, np.ndarray]
    decimation: int = 1  # the grid is the recorded one taken every `decimation` samples
    recorded_fs: float | None = None  # rate of the inputs as given
    notes: tuple[str, ...] = ()

    # ------------------------------------------------------------------ construction
    @classmethod
    def fix(cls, inputs: Inputs, *, bands="auto", phase_method="hilbert", protophase_correction=False,
            edge_s=None, decimate=False, spectral_filter=False) -> "Pipeline":
        """Fix phase specs and the span on the data and compute the data's phases.

        ``decimate`` (bool, or an int factor to force one) moves every rhythm to the
        common grid ``t[::q]`` first; ``spectral_filter`` runs the Hilbert path in the
        frequency domain. Both change numbers only within the tolerances shown in
        tests/unit/test_speed_paths.py.
        """
        fs = inputs.fs
        unknown = sorted(set(bands) - set(inputs.raw)) if isinstance(bands, Mapping) else []
        if unknown:
            raise SyncstatsInputError(
                f"a band is given for '{unknown[0]}', which is not a continuous signal "
                f"({', '.join(inputs.raw) or 'none'}); fix the name."
            )
        specs = {}
        for n, x in inputs.raw.items():
            method = phase_method.get(n, "hilbert") if isinstance(phase_method, Mapping) else phase_method
            band = bands.get(n, "auto") if isinstance(bands, Mapping) else bands
            specs[n] = _fix_spec(n, x, fs, method, band, protophase_correction, spectral_filter)
        recorded_fs, q, notes = fs, 1, []
        if decimate is not False and decimate is not None and inputs.raw:
            if decimate is True:
                q = decimation_factor(fs, _top_freq(inputs, specs))
            else:
                q = int(decimate)
                if q < 1 or q != decimate:
                    raise SyncstatsInputError(f"decimate must be True, False or a positive integer factor, got {decimate!r}.")
            if q > 1:
                n_before = inputs.t.size
                inputs = _decimated(inputs, q)
                fs = inputs.fs
                cut = (n_before - 1) // q + 1 - inputs.t.size
                notes.append(f"analysed at {fs:.6g} Hz (recorded {recorded_fs:.6g} Hz, every {q}th sample after a "
                             f"zero-phase anti-alias filter; at least {RATE_PER_TOP_FREQ:g} x the highest frequency "
                             "of interest)" + (f"; the last {cut / fs:.3g} s were left out so that the FFT length "
                                               "is fast" if cut else ""))
        proto = bool(protophase_correction)
        full, amp_full = {}, {}
        for n in inputs.names:
            if inputs.kinds[n] == "signal":
                full[n], amp = estimate_phase(inputs.raw[n], fs, specs[n])
                amp_full[n] = amp[0]
            elif inputs.kinds[n] == "events":
                full[n] = _event_phases([inputs.events[n]], inputs.t, proto)[0]
            else:
                full[n] = inputs.user_phases[n]
        finite = np.all(np.stack([np.all(np.isfinite(full[n]), axis=0) for n in inputs.names]), axis=0)
        if not finite.any():
            raise SyncstatsInputError("the rhythms share no time span; check event times and the sampling grid.")
        i0, i1 = int(np.argmax(finite)), int(len(finite) - np.argmax(finite[::-1]))
        n_samp = inputs.t.size
        if edge_s is None:
            edge = 0.0
            for sp in specs.values():
                if sp.band is not None:
                    edge = max(edge, 1.0 / sp.band[0])
                elif sp.freq is not None:
                    edge = max(edge, 1.5 / sp.freq)
            edge = min(edge, 0.1 * n_samp / fs)
        else:
            edge = float(edge_s)
            if edge < 0 or 2 * edge * fs >= (i1 - i0):
                raise SyncstatsInputError(
                    f"edge_s={edge_s!r} must be >= 0 and leave part of the record; use a smaller value."
                )
        e_samp = int(round(edge * fs))
        if inputs.raw:
            i0, i1 = max(i0, e_samp), min(i1, n_samp - e_samp)
        data = {n: full[n][..., i0:i1] for n in inputs.names}
        amplitude = {n: a[i0:i1] for n, a in amp_full.items()}
        return cls(inputs, specs, proto, i0, i1, edge, data, amplitude, q, recorded_fs, tuple(notes))

    # ------------------------------------------------------------------ the one path
    @property
    def names(self) -> tuple[str, ...]:
        return self.inputs.names

    @property
    def span_n(self) -> int:
        return self.i1 - self.i0

    @property
    def time_s(self) -> np.ndarray:
        return self.inputs.t[self.i0:self.i1]

    def span(self, ph: np.ndarray) -> np.ndarray:
        return ph[..., self.i0:self.i1]

    def phases(self, *, raw=None, events=None, phases=None, spectra=None, batch: int | None = None) -> dict:
        """Phases on the span for replaced inputs; every other rhythm keeps the data's.

        Parameters
        ----------
        raw : mapping name -> (B, T, N) raw continuous surrogates
        spectra : mapping name -> (B, T, N // 2 + 1) rfft spectra of raw continuous
            surrogates (signals whose spec is ``spectral`` only)
        events : mapping name -> list of B event-time arrays
        phases : mapping name -> (B, T, n) phases already on the span
        batch : int, optional
            B, when nothing is replaced (the data broadcast to a batch).

        Returns
        -------
        dict name -> (B, T, n) (or (T, n) with nothing replaced and no ``batch``)
        """
        raw, events, phases, spectra = raw or {}, events or {}, phases or {}, spectra or {}
        out = {}
        n_grid = self.inputs.t.size
        for n, sp in spectra.items():
            out[n] = self.span(phase_from_spectrum(sp, n_grid, self.inputs.fs, self.specs[n]))
        for n, x in raw.items():
            if self.specs[n].spectral:  # no amplitude needed: skip it
                out[n] = self.span(phase_from_spectrum(spfft.rfft(x, axis=-1), x.shape[-1], self.inputs.fs,
                                                       self.specs[n]))
            else:
                out[n] = self.span(estimate_phase(x, self.inputs.fs, self.specs[n])[0])
        for n, evs in events.items():
            out[n] = self.span(_event_phases(evs, self.inputs.t, self.protophase_correction))
        out.update(phases)
        sizes = {v.shape[0] for v in out.values()}
        b = sizes.pop() if sizes else batch
        for n in self.names:
            if n not in out:
                out[n] = self.data[n] if b is None else np.broadcast_to(self.data[n], (b,) + self.data[n].shape)
        return out

    def diagnostics(self):
        """:class:`~syncstats.phase.SignalDiagnostics` per rhythm, on the span."""
        out = []
        for n in self.names:
            x = self.inputs.raw[n][0, self.i0:self.i1] if n in self.inputs.raw else None
            kind = self.inputs.kinds[n]
            out.append(diagnose(n, x, self.inputs.fs, self.data[n][0], self.amplitude.get(n),
                                spec=self.specs.get(n), kind=kind))
        return out


def _event_phases(event_lists, t, protophase: bool) -> np.ndarray:
    """Event phases on the grid, one row per event list: (B, 1, N) with the optional
    protophase correction applied to the finite part of each."""
    out = np.stack([event_phase(e, t) for e in event_lists])[:, None, :]
    if protophase:
        for ph in out[:, 0]:
            ok = np.isfinite(ph)
            ph[ok] = protophase_to_phase(ph[ok])
    return out
