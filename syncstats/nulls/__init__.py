"""Surrogate generators (the ``nulls`` layer).

Continuous-signal generators take ``x`` of shape (C, N) (or (N,), treated as C = 1) and a
list ``rngs`` of B ``numpy.random.Generator`` objects, one per surrogate, and return an
array of shape (B, C, N). Surrogate ``b`` draws all its randomness from ``rngs[b]``, so a
surrogate does not depend on how the surrogates are split into batches. Inputs are
never modified. Event-level generators take event times or a trial count.

See :data:`SURROGATE_METHODS` for what each method tests and where it fails.
"""
from ._endpoints import match_endpoints
from ._events import interval_shuffle, trial_shuffle
from ._fourier import aaft, fourier, iaaft, multivariate_fourier
from ._registry import LEVEL_NOTES, LEVELS, SURROGATE_METHODS, SurrogateMethod
from ._shift import curve_correlation_length, shift_curve, shift_phase, time_shift, time_shift_plv_all
from ._twin import twin

__all__ = [
    "fourier",
    "aaft",
    "iaaft",
    "multivariate_fourier",
    "time_shift",
    "time_shift_plv_all",
    "shift_phase",
    "shift_curve",
    "curve_correlation_length",
    "twin",
    "interval_shuffle",
    "trial_shuffle",
    "match_endpoints",
    "SURROGATE_METHODS",
    "SurrogateMethod",
    "LEVELS",
    "LEVEL_NOTES",
]
