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
           "DEFAULT_MEMORY_MB", "ShiftPlan", "shift_plan", "exact_shift_null", "SHIFT_IN_PLACE_OF", "shift_in_place"]

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


@dataclass(frozen=True)
class ShiftPlan:
    """How the time-shift null is run.

    ``min_shift``: smallest shift (samples; 1 = the whole circular group of shifts).
    ``corr_len``: per row, the correlation length (samples) of the pair's shift curve
    for a decoupled copy — how far apart two shifts must be to give nearly unrelated
    values. ``n_eff``: per row, effectively independent shifts, admissible / corr_len
    (a resolution diagnostic). ``exact``: every admissible shift is evaluated by FFT (two
    rhythms, whole-span PLV rows) instead of a random sample.
    """

    min_shift: int
    corr_len: np.ndarray
    n_eff: np.ndarray
    exact: bool
    curves: dict  # (a, b, p, q) -> shift curve of the data (N,)
    fs: float = 1.0

    def row_warning(self, i: int) -> str:
        """The warning for row i when too few effectively independent shifts remain."""
        if self.n_eff[i] >= MIN_EFFECTIVE_SHIFTS:
            return ""
        return (f"only about {self.n_eff[i]:.0f} effectively independent shifts (the PLV stays alike over shifts "
                f"of {self.corr_len[i] / self.fs:.3g} s), so time_shift has little power here: a longer record "
                "helps; iaaft gains power but rejects independent steady rhythms too often")


#: effectively independent shifts below which a shift test can hardly reach p <= 0.05
MIN_EFFECTIVE_SHIFTS = 19


def shift_plan(pipeline, design, min_shift_s=None, *, all_shifts=None) -> tuple[ShiftPlan, list]:
    """Choose how the time-shift null is run.

    By default every circular shift but the identity is admissible (minimum shift one
    sample): the shifts then form a group, and the test is an exact permutation test
    under stationarity. Excluding shifts near the observed alignment (a "minimum
    shift") removes the observed value's own neighbourhood from the reference set; on
    rhythms whose shift curve varies slowly (weakly diffusing oscillators) the reference
    then holds few independent values and the false-positive rate rose above alpha
    (0.085 at R = 400 on phase oscillators). With the whole group it sat at the nominal
    level, and power was kept, because under coupling the observed alignment is a local
    maximum of the shift curve while under independence it is a random point of it.

    For every tested pair and ratio the PLV at every shift (the shift curve, one FFT
    cross-correlation) is computed; its correlation length under independence is
    measured on a decoupled copy (the shifted rhythm reversed in time and conjugated:
    the same phasor autocorrelation, no coupling) and gives the number of effectively
    independent shifts, reported with a warning when too few remain for p <= 0.05.
    """
    from ..nulls import curve_correlation_length, shift_curve

    fs, n = pipeline.inputs.fs, pipeline.span_n
    data, names = pipeline.data, pipeline.names
    curves, lens = {}, {}
    for r in design.rows:
        key = (r.a, r.b, r.p, r.q)
        if r.kind != "pair" or key in curves:
            continue
        # shift_curve(x, y, p=cy, q=cx) is the PLV of cx·phi_x − cy·S(phi_y); psi (or −psi)
        # with the first rhythm fixed: A fixed -> (cx, cy) = (q, p); B fixed -> (p, q)
        fixed, moved, cx, cy = (r.b, r.a, r.p, r.q) if r.b == names[0] else (r.a, r.b, r.q, r.p)
        curves[key] = shift_curve(data[fixed], data[moved], p=cy, q=cx)
        decoupled = shift_curve(data[fixed], -data[moved][..., ::-1], p=cy, q=cx)
        lens[key] = curve_correlation_length(decoupled)
    notes = []
    ms = 1 if min_shift_s is None else int(round(float(min_shift_s) * fs))
    if ms < 1 or 2 * ms >= n:
        raise SyncstatsInputError(
            f"time_shift needs a span longer than twice the minimum shift ({ms / fs:.1f} s); record longer or "
            "set a smaller minimum shift."
        )
    if min_shift_s is not None:
        notes.append(f"time_shift: minimum shift {ms / fs:.3g} s (given); shifts nearer the observed alignment "
                     "are left out, which makes the test approximate when the shift curve varies slowly")
    admissible = n - 2 * ms + 1
    fallback = max(lens.values()) if lens else 1
    corr = np.array([float(lens.get((r.a, r.b, r.p, r.q), fallback)) for r in design.rows])
    n_eff = admissible / np.maximum(corr, 1.0)
    eligible = (len(names) == 2 and all(r.kind == "pair" and r.measure == "plv" and r.w0 == 0 and r.w1 == n
                                         for r in design.rows))
    exact = eligible if all_shifts is None else bool(all_shifts)
    if exact and not eligible:
        raise SyncstatsInputError(
            "all shifts can be evaluated only for two rhythms and whole-record PLV rows; leave all_shifts unset "
            "to sample shifts instead."
        )
    if exact:
        notes.append(f"time_shift: every admissible shift evaluated ({admissible}), an exact permutation test over "
                     "shifts without Monte Carlo error")
    return ShiftPlan(ms, corr, n_eff, exact, curves, fs), notes


def method_options(method: str, pipeline, design, n_surrogates: int, min_shift_s=None, *, all_shifts=None):
    """Options the method's generator needs (and the shift plan for time_shift), and notes."""
    entry = SURROGATE_METHODS[method]
    opts, notes, plan = {}, [], None
    if "min_shift" in entry.options:
        plan, notes = shift_plan(pipeline, design, min_shift_s, all_shifts=all_shifts)
        opts["min_shift"] = plan.min_shift
        span_n = pipeline.span_n
        if not plan.exact and n_surrogates > span_n - 2 * plan.min_shift:
            notes.append(
                f"time_shift: only {span_n - 2 * plan.min_shift + 1} distinct shifts exist for {n_surrogates} surrogates")
    elif all_shifts:
        raise SyncstatsInputError("all_shifts applies to surrogate 'time_shift' only; leave it unset.")
    return opts, notes, plan


#: univariate phase-randomising nulls: they test independence, as the time shift does, but
#: their surrogates' amplitude fluctuations make each rhythm's phase wander more than a
#: self-sustained rhythm's, so statistics built on long aligned stretches of psi (total locked
#: time, cluster strength) are lower under them than in independent data, and those tests
#: rejected too often (DEVELOPERS.md, "Phase-randomising nulls and long alignments")
SHIFT_IN_PLACE_OF = ("fourier", "aaft", "iaaft")


def shift_in_place(surrogate: str, pipeline, design, n_surrogates: int, *, min_shift_s=None, options=None,
                   what: str, measured: str) -> tuple[str, dict, list]:
    """The null a test of long alignments runs with: ``(method, options, notes)``.

    ``surrogate`` with its ``options``, except :data:`SHIFT_IN_PLACE_OF`, which become
    time_shift (same null hypothesis) with its options for ``pipeline`` and ``design``, and
    a note naming ``what`` was tested and the ``measured`` false-positive rates.
    """
    if surrogate not in SHIFT_IN_PLACE_OF or not n_surrogates:
        return surrogate, dict(options or {}), []
    opts, _, _ = method_options("time_shift", pipeline, design, n_surrogates, min_shift_s, all_shifts=False)
    return "time_shift", opts, [
        f"{what}: tested with time_shift surrogates instead of {surrogate}: with {surrogate} this test rejected "
        f"independent rhythms too often ({measured}); both test independence"]


def exact_shift_null(plan: ShiftPlan, design, span_n: int) -> np.ndarray:
    """The null over every admissible shift s in [min_shift, N − min_shift]: (S, F)."""
    s = np.arange(plan.min_shift, span_n - plan.min_shift + 1)
    return np.stack([plan.curves[(r.a, r.b, r.p, r.q)][s] for r in design.rows], axis=1)


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


#: with a progress callback, batches are cut so that progress moves in at least this many
#: steps (results do not depend on the batch size; only the vectorisation is coarser)
PROGRESS_STEPS = 20


def null_distribution(pipeline, family: Family, method: str, n_surrogates: int, seed, *, options=None,
                      batch_size=None, memory_mb=DEFAULT_MEMORY_MB, executor=None, n_jobs=None,
                      progress=None) -> np.ndarray:
    """The family's values on ``n_surrogates`` surrogates: ndarray (S, F).

    ``batch_size`` is an upper bound on the surrogates per batch; the batch is further
    capped so that its working memory stays under ``memory_mb`` (None: no cap), and with a
    ``progress`` callback at ``ceil(n_surrogates / PROGRESS_STEPS)`` so that progress moves
    even when every surrogate would fit in one batch. None of these changes results.
    """
    job = NullJob(pipeline, family, method, seed, dict(options or {}))
    size = batch_for_budget(pipeline, memory_mb) if memory_mb is not None else None
    if batch_size is not None:
        size = int(batch_size) if size is None else min(size, int(batch_size))
    if size is None:
        size = max(1, n_surrogates)
    if progress is not None:  # at least PROGRESS_STEPS steps, however many fit in one batch
        size = min(size, max(1, -(-n_surrogates // PROGRESS_STEPS)))
    parts = map_batches(job, batch_bounds(n_surrogates, size), executor=executor, n_jobs=n_jobs,
                        progress=progress)
    return np.concatenate([np.reshape(x, (-1, len(family))) for x in parts], axis=0)
