"""Registry of the surrogate methods: everything about each one in one entry.

An entry says what the method randomises and how the inference layer feeds it
(``acts_on``, ``targets``), which inputs it accepts (``check``), when it is known to be
weak for the data at hand (``warn``), and how the report, the methods text and the
command line name and describe it. Adding a method = a generator module + one entry.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np
from scipy import stats as _st

from .._errors import SyncstatsInputError
from ._events import interval_shuffle, trial_shuffle
from ._fourier import aaft, fourier, iaaft, multivariate_fourier
from ._shift import time_shift
from ._twin import twin

__all__ = ["SurrogateMethod", "SURROGATE_METHODS", "LEVELS", "LEVEL_NOTES"]

#: Data a method works on, as written to the table's ``null_level`` column. "signal":
#: raw continuous signals, each surrogate goes through the whole preprocessing and phase
#: pipeline again. "phase": applied to phase series because it commutes with the
#: pipeline (time shifts, trial re-pairing). "event": event times, turned into phases
#: afterwards.
LEVELS = ("signal", "phase", "event")

#: how each level is described in the notes and methods text
LEVEL_NOTES = {
    "signal": "surrogates of the raw signals, each passed through the same detrending, band-pass and phase "
              "estimation as the data",
    "phase": "surrogates made from the phases (the filtering and phase estimation are not repeated)",
    "event": "surrogates of the event times, turned into phases as the data were",
}

#: what ``acts_on`` means: the input handed to ``make`` and what comes back
ACTS_ON = {
    "signal": "one continuous signal (T, N) -> (B, T, N) raw surrogates",
    "signals": "all continuous signals stacked (C, N) -> (B, C, N) raw surrogates",
    "phase": "one rhythm's unwrapped phase on the analysed span (T, n) -> (B, T, n)",
    "events": "one event list (K,) -> list of B event-time arrays",
}


def _no_check(kinds, pairs, n_trials):
    return None


def _no_warn(name, *, raw=None, phase=None, events=None, options=None):
    return []


@dataclass(frozen=True)
class SurrogateMethod:
    """One surrogate method (an entry of :data:`SURROGATE_METHODS`).

    Attributes
    ----------
    name : str
        Registry key, as used by ``analyze(surrogate=...)`` and ``--surrogate``.
    function : callable
        The public generator in :mod:`syncstats.nulls`.
    level : str
        One of :data:`LEVELS` (the ``null_level`` column).
    acts_on : str
        One of ``ACTS_ON``: what ``make`` receives.
    targets : str
        "all" (every rhythm of that input kind) or "all_but_first" (the first rhythm
        stays as recorded, every other one is randomised against it).
    make : callable
        ``make(x, rngs, **options)``: surrogates of ``x`` (see ``acts_on``), surrogate
        ``b`` drawn only from ``rngs[b]``.
    label : str
        Display name (report, command-line help).
    description : str
        Noun phrase for the methods text ("Fourier phase-randomised surrogates ...").
    null_hypothesis : str
        One sentence: what the null distribution represents.
    failure_cases : str
        One sentence: data for which the null is invalid or weak.
    citations : tuple of str
        The papers the implementation follows.
    options : tuple of str
        Options the inference layer must supply to ``make`` (e.g. "min_shift").
    check : callable
        ``check(kinds, pairs, n_trials)`` raises ``SyncstatsInputError`` when the method
        cannot test these inputs (beyond what ``acts_on`` already requires).
    warn : callable
        ``warn(name, raw=, phase=, events=, options=) -> list of str``: warnings when the
        null is known to be weak or invalid for this rhythm.
    """

    name: str
    function: Callable
    level: str
    acts_on: str
    targets: str
    make: Callable
    label: str
    description: str
    null_hypothesis: str
    failure_cases: str
    citations: tuple[str, ...]
    options: tuple[str, ...] = ()
    check: Callable = field(default=_no_check)
    warn: Callable = field(default=_no_warn)

    @property
    def citation(self) -> str:
        """All citations in one string."""
        return "; ".join(self.citations)


# ----------------------------------------------------------------------------- checks
def _check_trials(kinds, pairs, n_trials):
    if n_trials < 2:
        raise SyncstatsInputError(
            "surrogate 'trial_shuffle' needs several trials per signal (arrays of shape trials x samples); "
            "use 'iaaft' or 'time_shift'."
        )


def _check_single_trial(kinds, pairs, n_trials):
    if n_trials > 1:
        raise SyncstatsInputError(
            "surrogate 'multivariate_fourier' takes single-trial signals; use 'trial_shuffle' for trials."
        )


# ----------------------------------------------------------------------------- warnings
def _warn_spiky(name, *, raw=None, phase=None, events=None, options=None):
    if raw is None:
        return []
    x = np.asarray(raw).reshape(-1)
    sk, ku = float(_st.skew(x)), float(_st.kurtosis(x))
    if abs(sk) > 1 or ku > 2:
        return [
            f"{name}: fourier surrogates are Gaussian but this signal is spiky (skewness {sk:.1f}, excess kurtosis "
            f"{ku:.1f}), prefer iaaft"
        ]
    return []


def _warn_serial(name, *, raw=None, phase=None, events=None, options=None):
    if events is None or len(events) <= 30:
        return []
    from statsmodels.stats.diagnostic import acorr_ljungbox

    iv = np.diff(events)
    lb = acorr_ljungbox(iv - iv.mean(), lags=[min(10, len(iv) // 4)], return_df=True)
    pval = float(lb["lb_pvalue"].iloc[0])
    if pval < 0.01:
        return [
            f"{name}: its intervals are serially correlated (Ljung-Box p = {pval:.2g}), which interval_shuffle "
            "destroys, so rate modulation can pass for locking: prefer time_shift"
        ]
    return []


# ----------------------------------------------------------------------------- adapters
def _shuffle_trials(ph, rngs):
    perm = trial_shuffle(ph.shape[0], rngs)
    return ph[np.asarray(perm)]


_THEILER = "Theiler J, et al. (1992). Physica D 58:77–94."

_ENTRIES = (
    SurrogateMethod(
        "fourier", fourier, "signal", "signal", "all", fourier, "Fourier phase-randomised",
        "Fourier phase-randomised surrogates",
        "Each signal is a stationary linear Gaussian process with its own power spectrum, independent of the others.",
        "Spiky or relaxation signals (ECG, spike trains) give Gaussian surrogates with a different waveform; in "
        "docs/validation.md the test was conservative (not invalid) on spiking, relaxation and limit-cycle "
        "oscillators (FPR 0.000-0.015) and analyze warns on spiky signals, but liberal on independent phase "
        "oscillators in strong noise (0.083 on 60 s, time_shift 0.047); end-point mismatch adds spurious "
        "high-frequency power (crop with match_endpoints).",
        (_THEILER,), warn=_warn_spiky,
    ),
    SurrogateMethod(
        "aaft", aaft, "signal", "signal", "all", aaft, "AAFT",
        "amplitude-adjusted Fourier-transform (AAFT) surrogates",
        "Each signal is a monotone static transform of a stationary linear Gaussian process, independent of the others.",
        "The rescaling flattens the spectrum (more so for short or strongly non-Gaussian records), which can "
        "produce false rejections; spiky waveforms are still not reproduced.",
        (_THEILER,),
    ),
    SurrogateMethod(
        "iaaft", iaaft, "signal", "signal", "all", iaaft, "IAAFT",
        "iterative amplitude-adjusted Fourier-transform (IAAFT) surrogates, which keep each signal's power spectrum "
        "and value distribution",
        "Each signal is a monotone static transform of a stationary linear Gaussian process (same spectrum and same "
        "value distribution), independent of the others.",
        "Waveform shape (sharp spikes, relaxation cycles) and non-stationarity are not kept, so strongly nonlinear "
        "oscillators are not a valid null; for self-sustained rhythms in strong noise the surrogates' phases lose "
        "coherence faster than the data's (their amplitude dips towards zero), so chance locking is lower under the "
        "null than in the data (independent noisy phase oscillators, 60 and 200 s: PLV rejected at 0.093 and 0.097 "
        "for alpha 0.05, time_shift 0.047); the spectrum is matched only approximately.",
        ("Schreiber T, Schmitz A (1996). Phys Rev Lett 77:635–638.",),
    ),
    SurrogateMethod(
        "multivariate_fourier", multivariate_fourier, "signal", "signals", "all", multivariate_fourier,
        "multivariate Fourier",
        "multivariate Fourier surrogates (one random phase per frequency shared by all channels, keeping the "
        "cross-spectrum)",
        "The signals are jointly a linear Gaussian process with the observed auto- and cross-spectra (linear "
        "correlation kept), so it tests locking beyond linear coupling, not independence.",
        "Linearly correlated or commonly filtered signals keep their coherence and so most of their apparent "
        "locking; like fourier it is invalid for spiky waveforms.",
        ("Prichard D, Theiler J (1994). Phys Rev Lett 73:951–954.",), check=_check_single_trial,
    ),
    SurrogateMethod(
        "time_shift", time_shift, "phase", "phase", "all_but_first", time_shift, "time-shifted",
        "time-shift surrogates (every rhythm but the first shifted circularly against the first, with a "
        "phase-continuous joint; by default over the whole circular group of shifts, an exact permutation test)",
        "Each signal keeps its whole own dynamics, and the alignment between the signals is arbitrary (independence "
        "up to a time shift).",
        "Very regular or strictly periodic rhythms (or a common periodic drive) give almost the same alignment at "
        "every shift, so the null is weak; rates that change between epochs are carried across by a shift "
        "(non-stationarity breaks it); short records and slowly varying shift curves leave few effectively "
        "independent shifts (the notes count them).",
        ("Hurtado JM, et al. (2004). J Neurophysiol 91:1883–1898.",), options=("min_shift",),
    ),
    SurrogateMethod(
        "twin", twin, "signal", "signal", "all", twin, "twin",
        "twin surrogates (new trajectories of the same system from recurrence twins)",
        "Each signal is a trajectory of the same (deterministic or noisy) system started from a new initial "
        "condition, independent of the other signal.",
        "Noisy, high-dimensional or short records have few twins, so surrogates are nearly circular shifts of the "
        "data (check twin_share); the down-sampled state grid limits the time resolution of the jumps.",
        ("Thiel M, et al. (2006). Europhys Lett 75:535–541.", "Romano MC, et al. (2009). Chaos 19:015108."),
    ),
    SurrogateMethod(
        "trial_shuffle", trial_shuffle, "phase", "phase", "all_but_first", _shuffle_trials, "trial-shuffled",
        "trial-shuffled surrogates (trial i of one rhythm paired with another trial of the other)",
        "Trial i of one rhythm is no more locked to trial i of the other than to any other trial j != i.",
        "A stimulus- or task-locked common drive survives re-pairing (the test then asks for coupling beyond it); "
        "with few trials there are only !n distinct re-pairings (n = 4: 9).",
        ("Lachaux J-P, et al. (1999). Hum Brain Mapp 8:194–208.",), check=_check_trials,
    ),
    SurrogateMethod(
        "interval_shuffle", interval_shuffle, "event", "events", "all", interval_shuffle, "interval-shuffled",
        "interval-shuffled surrogates (inter-event intervals permuted)",
        "Event times form a renewal process with the observed interval distribution, independent of the other rhythm.",
        "Serial correlation of intervals (slow rate changes such as heart rate modulated by breathing) is destroyed, "
        "so any rhythm that modulates the intervals can count as locking; non-stationary rates are not kept.",
        ("Lancaster G, et al. (2018). Phys Rep 748:1–60 (review).",), warn=_warn_serial,
    ),
)

#: name -> :class:`SurrogateMethod`. Names are the values accepted by
#: ``analyze(surrogate=...)``. Treat as read-only.
SURROGATE_METHODS: dict[str, SurrogateMethod] = {e.name: e for e in _ENTRIES}
