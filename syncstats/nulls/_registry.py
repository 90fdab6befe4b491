"""Registry of the surrogate methods: what each one randomises, what null it tests, where it fails."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

from ._events import interval_shuffle, trial_shuffle
from ._fourier import aaft, fourier, iaaft, multivariate_fourier
from ._shift import time_shift
from ._twin import twin

__all__ = ["SurrogateMethod", "SURROGATE_METHODS", "LEVELS"]

#: Data a method works on. "signal": raw continuous signals, each surrogate goes through
#: the whole preprocessing and phase pipeline again. "phase": may be applied to phase
#: series (or raw signals) because it commutes with the pipeline (circular shifts, trial
#: re-pairing). "event": event times, turned into phases afterwards.
LEVELS = ("signal", "phase", "event")


@dataclass(frozen=True)
class SurrogateMethod:
    """Description of one surrogate method (an entry of :data:`SURROGATE_METHODS`).

    Attributes
    ----------
    name : str
        Registry key, as used by ``analyze(surrogate=...)``.
    function : callable
        The generator in :mod:`syncstats.nulls`.
    level : str
        One of :data:`LEVELS`.
    null_hypothesis : str
        One sentence: what the null distribution represents.
    failure_cases : str
        One sentence: data for which the null is invalid or weak.
    citation : str
        The paper the implementation follows.
    """

    name: str
    function: Callable
    level: str
    null_hypothesis: str
    failure_cases: str
    citation: str


_ENTRIES = (
    SurrogateMethod(
        "fourier",
        fourier,
        "signal",
        "Each signal is a stationary linear Gaussian process with its own power spectrum, independent of the others.",
        "Spiky or relaxation signals (ECG, spike trains) give Gaussian surrogates with a different waveform; in "
        "docs/validation.md the test was conservative (not invalid) on spiking, relaxation and limit-cycle "
        "oscillators (FPR 0.000-0.015) and analyze warns on spiky signals; end-point mismatch adds spurious "
        "high-frequency power (crop with match_endpoints).",
        "Theiler J et al. (1992) Physica D 58:77-94.",
    ),
    SurrogateMethod(
        "aaft",
        aaft,
        "signal",
        "Each signal is a monotone static transform of a stationary linear Gaussian process, independent of the others.",
        "The rescaling flattens the spectrum (more so for short or strongly non-Gaussian records), which can "
        "produce false rejections; spiky waveforms are still not reproduced.",
        "Theiler J et al. (1992) Physica D 58:77-94.",
    ),
    SurrogateMethod(
        "iaaft",
        iaaft,
        "signal",
        "Each signal is a monotone static transform of a stationary linear Gaussian process (same spectrum and same "
        "value distribution), independent of the others.",
        "Waveform shape (sharp spikes, relaxation cycles) and non-stationarity are not kept, so strongly nonlinear "
        "oscillators are not a valid null; the spectrum is matched only approximately.",
        "Schreiber T, Schmitz A (1996) Phys Rev Lett 77:635-638.",
    ),
    SurrogateMethod(
        "multivariate_fourier",
        multivariate_fourier,
        "signal",
        "The signals are jointly a linear Gaussian process with the observed auto- and cross-spectra (linear "
        "correlation kept), so it tests locking beyond linear coupling, not independence.",
        "Linearly correlated or commonly filtered signals keep their coherence and so most of their apparent "
        "locking; like fourier it is invalid for spiky waveforms.",
        "Prichard D, Theiler J (1994) Phys Rev Lett 73:951-954.",
    ),
    SurrogateMethod(
        "time_shift",
        time_shift,
        "phase",
        "Each signal keeps its whole own dynamics, and the alignment between the signals is arbitrary (independence "
        "up to a time shift).",
        "Very regular or strictly periodic rhythms (or a common periodic drive) give almost the same alignment at "
        "every shift, so the null is weak; rates that change between epochs are carried across by a shift "
        "(non-stationarity breaks it); weakly diffusing oscillators showed a mild excess of false positives "
        "(pooled FPR about 0.07 at alpha 0.05, docs/validation.md); short records allow few shifts.",
        "Hurtado JM, Rubchinsky LL, Sigvardt KA (2004) J Neurophysiol 91:1883-1898.",
    ),
    SurrogateMethod(
        "twin",
        twin,
        "signal",
        "Each signal is a trajectory of the same (deterministic or noisy) system started from a new initial "
        "condition, independent of the other signal.",
        "Noisy, high-dimensional or short records have few twins, so surrogates are nearly circular shifts of the "
        "data (check twin_share); the down-sampled state grid limits the time resolution of the jumps.",
        "Thiel M et al. (2006) Europhys Lett 75:535-541; Romano MC et al. (2009) Chaos 19:015108.",
    ),
    SurrogateMethod(
        "trial_shuffle",
        trial_shuffle,
        "phase",
        "Trial i of one rhythm is no more locked to trial i of the other than to any other trial j != i.",
        "A stimulus- or task-locked common drive survives re-pairing (the test then asks for coupling beyond it); "
        "with few trials there are only !n distinct re-pairings (n = 4: 9).",
        "Lachaux JP et al. (1999) Hum Brain Mapp 8:194-208.",
    ),
    SurrogateMethod(
        "interval_shuffle",
        interval_shuffle,
        "event",
        "Event times form a renewal process with the observed interval distribution, independent of the other rhythm.",
        "Serial correlation of intervals (slow rate changes such as heart rate modulated by breathing) is destroyed, "
        "so any rhythm that modulates the intervals can count as locking; non-stationary rates are not kept.",
        "Lancaster G et al. (2018) Phys Rep 748:1-60 (review).",
    ),
)

#: name -> :class:`SurrogateMethod`. Names are the values accepted by
#: ``analyze(surrogate=...)``. Treat as read-only.
SURROGATE_METHODS: dict[str, SurrogateMethod] = {e.name: e for e in _ENTRIES}
