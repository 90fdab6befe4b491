"""Pipeline-faithful null distributions.

A :class:`Pipeline` holds what turns inputs into phases on the analysed span: raw
continuous signals with their fixed :class:`~syncstats.phase.PhaseSpec` (band chosen
on the data), event times, or phases supplied by the user. A :class:`NullJob` makes
surrogates at the level the method works on and pushes them through the *same*
pipeline:

* signal level (``fourier``, ``aaft``, ``iaaft``, ``twin``, ``multivariate_fourier``):
  surrogates of the raw continuous signals -> detrend -> band-pass -> phase -> span;
* phase level (``time_shift``): each signal but the first is shifted against the
  others by a random lag of at least ``min_shift`` samples and at most half the span,
  forwards or backwards, and only the overlap is compared (samples without a partner
  are NaN and left out of every measure). A circular shift would join the end of the
  record to its start; for very regular rhythms that joint misaligns the two pieces
  and makes the null too low, so it is avoided;
* event level (``interval_shuffle``): shuffled inter-event intervals -> event phase;
* trial level (``trial_shuffle``): trial i of one signal paired with trial j != i.

Surrogate b of signal k draws only from child stream ``(k, b)`` of the run's seed, so
the result does not depend on the batch size or on the number of workers.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .. import nulls
from .._rng import child_generators
from ..phase import estimate_phase, event_phase
from ._family import Family

__all__ = ["Pipeline", "NullJob", "SIGNAL_LEVEL", "PHASE_LEVEL", "EVENT_LEVEL", "TRIAL_LEVEL"]

SIGNAL_LEVEL = ("fourier", "aaft", "iaaft", "twin", "multivariate_fourier")
PHASE_LEVEL = ("time_shift",)
EVENT_LEVEL = ("interval_shuffle",)
TRIAL_LEVEL = ("trial_shuffle",)


@dataclass
class Pipeline:
    """Inputs -> phases on the analysed span ``[i0, i1)`` of the common grid."""

    names: tuple[str, ...]
    kinds: dict  # name -> "signal" | "events" | "phase"
    fs: float
    t: np.ndarray  # (N,) seconds
    i0: int
    i1: int
    raw: dict = field(default_factory=dict)  # name -> (T, N) continuous signals
    specs: dict = field(default_factory=dict)  # name -> PhaseSpec
    events: dict = field(default_factory=dict)  # name -> (K,) event times
    user_phases: dict = field(default_factory=dict)  # name -> (T, N) unwrapped phases

    def phase_of(self, name: str, x=None, ev=None) -> np.ndarray:
        """Full-grid phase of one signal (..., T, N) from raw x / events ev / stored."""
        kind = self.kinds[name]
        if kind == "signal":
            ph, _ = estimate_phase(self.raw[name] if x is None else x, self.fs, self.specs[name])
            return ph
        if kind == "events":
            evs = [self.events[name]] if ev is None else ev
            return np.stack([event_phase(e, self.t) for e in evs])[:, None, :]
        return self.user_phases[name]

    def span(self, ph: np.ndarray) -> np.ndarray:
        return ph[..., self.i0 : self.i1]


@dataclass
class NullJob:
    """Everything one batch of surrogates needs (picklable, for process executors)."""

    pipeline: Pipeline
    family: Family
    method: str
    seed: np.random.SeedSequence
    observed_full: dict  # name -> full-grid phase (T, N) of the data
    options: dict = field(default_factory=dict)

    def __call__(self, bounds: tuple[int, int]) -> np.ndarray:
        start, stop = bounds
        return self.family.evaluate(self.phases(start, stop))

    def phases(self, start: int, stop: int) -> dict:
        """Surrogate phases on the span for surrogates start..stop-1: name -> (b, T, n)."""
        pl, b = self.pipeline, stop - start
        out = {}
        if self.method in SIGNAL_LEVEL:
            cont = [n for n in pl.names if pl.kinds[n] == "signal"]
            if self.method == "multivariate_fourier":
                x = np.concatenate([pl.raw[n] for n in cont], axis=0)  # (C*T, N)
                sur = nulls.multivariate_fourier(x, child_generators(self.seed, start, stop, stream=0))
                row = 0
                for n in cont:
                    tn = pl.raw[n].shape[0]
                    out[n] = pl.span(pl.phase_of(n, sur[:, row : row + tn]))
                    row += tn
            else:
                gen = getattr(nulls, self.method)
                kw = self.options.get("method_kwargs", {})
                for k, n in enumerate(pl.names):
                    if pl.kinds[n] != "signal":
                        continue
                    sur = gen(pl.raw[n], child_generators(self.seed, start, stop, stream=k), **kw)
                    out[n] = pl.span(pl.phase_of(n, sur))
        elif self.method == "time_shift":
            ms = self.options["min_shift"]
            for k, n in enumerate(pl.names):
                if k == 0:
                    continue  # the first signal stays; every other one is shifted
                ph = pl.span(self.observed_full[n])  # (T, n)
                n_samp = ph.shape[-1]
                rngs = child_generators(self.seed, start, stop, stream=k)
                shifts = np.array([g.integers(ms, n_samp - ms + 1) for g in rngs])
                src = np.arange(n_samp)[None, :] - shifts[:, None]  # (b, n); < 0: wrapped from the end
                rolled = ph[:, src % n_samp].transpose(1, 0, 2)  # (b, T, n)
                # phase-continuous joint: the part taken from the record's start continues
                # the end's phase (advance over the span plus one mean step)
                adv = ph[:, -1] - ph[:, 0] + (ph[:, -1] - ph[:, 0]) / (n_samp - 1)  # (T,)
                out[n] = rolled + (src >= 0)[:, None, :] * adv[None, :, None]
        elif self.method == "interval_shuffle":
            for k, n in enumerate(pl.names):
                if pl.kinds[n] != "events":
                    continue
                evs = nulls.interval_shuffle(pl.events[n], child_generators(self.seed, start, stop, stream=k))
                ph = np.stack([event_phase(e, pl.t) for e in evs])[:, None, :]
                out[n] = pl.span(ph)
        elif self.method == "trial_shuffle":
            for k, n in enumerate(pl.names):
                if k == 0:
                    continue
                ph = self.observed_full[n]
                perm = nulls.trial_shuffle(ph.shape[0], child_generators(self.seed, start, stop, stream=k))
                out[n] = pl.span(ph[np.asarray(perm)])
        else:  # pragma: no cover - validated upstream
            raise ValueError(self.method)
        for n in pl.names:
            if n not in out:
                out[n] = np.broadcast_to(pl.span(self.observed_full[n]), (b,) + pl.span(self.observed_full[n]).shape)
        return out
