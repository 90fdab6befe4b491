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

Phase-level surrogates (time shifts, trial re-pairing) are made from the span phases and
handed back as such.
"""
from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from ._errors import SyncstatsInputError
from .phase import PhaseSpec, diagnose, estimate_phase, event_phase, protophase_to_phase
from .prep import _check_band, auto_band, spectral_peak

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


def _fix_spec(name, x, fs, method, band, protophase):
    if method not in ("hilbert", "wavelet"):
        raise SyncstatsInputError(f"phase_method for '{name}' must be 'hilbert' or 'wavelet', got {method!r}.")
    x0 = x.mean(axis=0)
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
    return PhaseSpec(method=method, band=band, freq=freq, protophase_correction=bool(protophase))


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

    # ------------------------------------------------------------------ construction
    @classmethod
    def fix(cls, inputs: Inputs, *, bands="auto", phase_method="hilbert", protophase_correction=False,
            edge_s=None) -> "Pipeline":
        """Fix phase specs and the span on the data and compute the data's phases."""
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
            specs[n] = _fix_spec(n, x, fs, method, band, protophase_correction)
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
        return cls(inputs, specs, proto, i0, i1, edge, data, amplitude)

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

    def phases(self, *, raw=None, events=None, phases=None, batch: int | None = None) -> dict:
        """Phases on the span for replaced inputs; every other rhythm keeps the data's.

        Parameters
        ----------
        raw : mapping name -> (B, T, N) raw continuous surrogates
        events : mapping name -> list of B event-time arrays
        phases : mapping name -> (B, T, n) phases already on the span
        batch : int, optional
            B, when nothing is replaced (the data broadcast to a batch).

        Returns
        -------
        dict name -> (B, T, n) (or (T, n) with nothing replaced and no ``batch``)
        """
        raw, events, phases = raw or {}, events or {}, phases or {}
        out = {}
        for n, x in raw.items():
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
