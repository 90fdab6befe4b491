"""Pipeline-faithful null distributions.

A :class:`NullJob` makes surrogates at the level the method works on — raw continuous
signals, all signals jointly, one rhythm's phase on the span, or event lists (see
:data:`syncstats.nulls.SURROGATE_METHODS`, field ``acts_on``) — and pushes them through
the *same* :class:`~syncstats.pipeline.Pipeline` as the data. Surrogate b of rhythm k
(k = position in the input order) draws only from child stream ``(k, b)`` of the run's
seed, so the result does not depend on the batch size or on the number of workers.

Batches are sized from a memory budget (:func:`batch_for_budget`): the working memory of
one batch is O(batch x signals x samples) and never grows with the surrogate count.
Phase-randomised surrogates of signals whose phase spec is ``spectral`` are handed to the
pipeline as spectra (one inverse FFT each, no time-domain detour).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .._errors import SyncstatsInputError
from .._rng import child_generators
from ..nulls import SURROGATE_METHODS
from ..nulls._fourier import spectra as _fourier_spectra
from ..run import batch_bounds, map_batches
from ._family import Family

__all__ = ["NullJob", "null_distribution", "check_method", "method_options", "batch_for_budget",
           "DEFAULT_MEMORY_MB"]

#: default working-memory budget of one batch of surrogates, MB
DEFAULT_MEMORY_MB = 256.0
#: bytes of working memory per sample of one surrogate signal (float64 raw surrogate,
#: detrended and filtered copies, sosfiltfilt's padded buffers, the complex analytic
#: signal and its FFT buffer, the phase, and the measures' psi / phasor arrays; measured
#: with tracemalloc in benchmarks/run.py, rounded up)
BYTES_PER_SAMPLE = 160
#: methods whose surrogates can stay spectra all the way (name -> shared phases)
_SPECTRAL_METHODS = {"fourier": False, "multivariate_fourier": True}


def batch_for_budget(pipeline, memory_mb=DEFAULT_MEMORY_MB) -> int:
    """Surrogates per batch that keep one batch's working memory under ``memory_mb``.

    The estimate is ``BYTES_PER_SAMPLE`` x (trials x samples) summed over every rhythm on
    the grid; at least 1. Results never depend on it (child stream per surrogate).
    """
    inp = pipeline.inputs
    per = BYTES_PER_SAMPLE * len(inp.names) * inp.n_trials * inp.t.size
    return max(1, int(float(memory_mb) * 2**20 // max(per, 1)))

def check_method(method: str, inputs, pairs) -> str:
    """Refuse a surrogate method that cannot test these inputs; returns its level."""
    entry = SURROGATE_METHODS[method]
    kinds = inputs.kinds
    need = {"signal": "signal", "signals": "signal", "events": "events"}.get(entry.acts_on)
    if need is not None:
        what = "raw continuous signals" if need == "signal" else "event lists"
        if need not in set(kinds.values()):
            alt = "use 'time_shift' or 'interval_shuffle' (events)" if need == "signal" else (
                "use 'iaaft' or 'time_shift' for signals")
            raise SyncstatsInputError(f"surrogate '{method}' randomises {what}, but none were given; {alt}.")
        for a, b in pairs:
            if kinds[a] != need and kinds[b] != need:
                raise SyncstatsInputError(
                    f"surrogate '{method}' cannot randomise the pair ({a}, {b}): neither is one of the {what}; "
                    "use 'time_shift'."
                )
    entry.check(kinds, pairs, inputs.n_trials)
    return entry.level


def method_options(method: str, pipeline, design, n_surrogates: int, min_shift_s=None):
    """Options the method's generator needs, and notes about them."""
    entry = SURROGATE_METHODS[method]
    opts, notes = {}, []
    if "min_shift" in entry.options:
        fs, span_n = pipeline.inputs.fs, pipeline.span_n
        ms = 5 * design.slowest_stride if min_shift_s is None else int(round(float(min_shift_s) * fs))
        if 2 * ms >= span_n:
            raise SyncstatsInputError(
                f"time_shift needs a span longer than twice the minimum shift ({ms / fs:.1f} s); record longer or "
                "set a smaller minimum shift."
            )
        opts["min_shift"] = ms
        notes.append(f"time_shift: minimum shift {ms / fs:.3g} s")
        if n_surrogates > span_n - 2 * ms:
            notes.append(f"time_shift: only {span_n - 2 * ms} distinct shifts exist for {n_surrogates} surrogates")
    return opts, notes


@dataclass
class NullJob:
    """Everything one batch of surrogates needs (picklable, for process executors)."""

    pipeline: object  # syncstats.pipeline.Pipeline
    family: Family
    method: str
    seed: np.random.SeedSequence
    options: dict = field(default_factory=dict)

    def __call__(self, bounds: tuple[int, int]) -> np.ndarray:
        start, stop = bounds
        return self.family.evaluate(self.phases(start, stop))

    def phases(self, start: int, stop: int) -> dict:
        """Surrogate phases on the span for surrogates start..stop-1: name -> (b, T, n)."""
        pl, entry = self.pipeline, SURROGATE_METHODS[self.method]
        inp = pl.inputs
        rngs = lambda k: child_generators(self.seed, start, stop, stream=k)  # noqa: E731
        spectral = self.method in _SPECTRAL_METHODS and all(
            pl.specs[n].spectral for n in pl.names if inp.kinds[n] == "signal")
        if entry.acts_on == "signals":
            cont = [n for n in pl.names if inp.kinds[n] == "signal"]
            if spectral:
                sp = _fourier_spectra(np.concatenate([inp.raw[n] for n in cont], axis=0), rngs(0),
                                      shared=_SPECTRAL_METHODS[self.method])
                rows = np.cumsum([0] + [inp.raw[n].shape[0] for n in cont])
                return pl.phases(spectra={n: sp[:, rows[i]:rows[i + 1]] for i, n in enumerate(cont)})
            sur = entry.make(np.concatenate([inp.raw[n] for n in cont], axis=0), rngs(0), **self.options)
            rows = np.cumsum([0] + [inp.raw[n].shape[0] for n in cont])
            return pl.phases(raw={n: sur[:, rows[i]:rows[i + 1]] for i, n in enumerate(cont)})
        raw, events, phases, spectra = {}, {}, {}, {}
        for k, n in enumerate(pl.names):
            if entry.targets == "all_but_first" and k == 0:
                continue
            if spectral and entry.acts_on == "signal" and inp.kinds[n] == "signal":
                spectra[n] = _fourier_spectra(inp.raw[n], rngs(k), shared=_SPECTRAL_METHODS[self.method])
            elif entry.acts_on == "signal" and inp.kinds[n] == "signal":
                raw[n] = entry.make(inp.raw[n], rngs(k), **self.options)
            elif entry.acts_on == "events" and inp.kinds[n] == "events":
                events[n] = entry.make(inp.events[n], rngs(k), **self.options)
            elif entry.acts_on == "phase":
                phases[n] = entry.make(pl.data[n], rngs(k), **self.options)
        return pl.phases(raw=raw, events=events, phases=phases, spectra=spectra, batch=stop - start)


def null_distribution(pipeline, family: Family, method: str, n_surrogates: int, seed, *, options=None,
                      batch_size=None, memory_mb=DEFAULT_MEMORY_MB, executor=None, n_jobs=None,
                      progress=None) -> np.ndarray:
    """The family's values on ``n_surrogates`` surrogates: ndarray (S, F).

    ``batch_size`` is an upper bound on the surrogates per batch; the batch is further
    capped so that its working memory stays under ``memory_mb`` (None: no cap). Neither
    changes results.
    """
    job = NullJob(pipeline, family, method, seed, dict(options or {}))
    size = batch_for_budget(pipeline, memory_mb) if memory_mb is not None else None
    if batch_size is not None:
        size = int(batch_size) if size is None else min(size, int(batch_size))
    if size is None:
        size = max(1, n_surrogates)
    parts = map_batches(job, batch_bounds(n_surrogates, size), executor=executor, n_jobs=n_jobs,
                        progress=progress)
    return np.concatenate([np.reshape(x, (-1, len(family))) for x in parts], axis=0)
