"""The checked plain options of ``analyze`` (one validation stage, one sentence per error)."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from ._checks import check_bool, check_float, check_int
from ._errors import SyncstatsInputError
from ._rng import as_seed_sequence
from .inference import CI_METHODS, CORRECTION_METHODS
from .measures import MEASURE_METHODS
from .nulls import SURROGATE_METHODS

__all__ = ["AnalysisOptions", "check_options", "MAX_SURROGATES", "MAX_BOOTSTRAP"]

#: upper bounds that keep a run's time and memory sane (the null holds S x rows floats)
MAX_SURROGATES = 100_000
MAX_BOOTSTRAP = 100_000


@dataclass(frozen=True)
class AnalysisOptions:
    measures: tuple[str, ...]
    surrogate: str
    n_surrogates: int
    correction: str
    alpha: float
    seed: np.random.SeedSequence
    protophase_correction: bool
    edge_s: float | None
    min_shift_s: float | None
    ci_level: float
    ci_method: str
    n_bootstrap: int
    batch_size: int | None
    n_jobs: int | None
    group_label: str
    progress: Callable | None
    decimate: bool | int
    spectral_filter: bool
    memory_mb: float | None


def _choice(value, name, registry):
    if not isinstance(value, str) or value not in registry:
        raise SyncstatsInputError(f"{name} must be one of {', '.join(registry)}; got {value!r}.")
    return value


def check_options(*, measures, surrogate, n_surrogates, correction, alpha, rng, protophase_correction, edge_s,
                  min_shift_s, ci_level, ci_method, n_bootstrap, batch_size, n_jobs, group_label,
                  progress, decimate=True, spectral_filter=False, memory_mb=256.0) -> AnalysisOptions:
    """Every plain option of ``analyze`` checked at once (inputs and design come later)."""
    ms = (measures,) if isinstance(measures, str) else measures
    try:
        ms = tuple(ms)
    except TypeError:
        raise SyncstatsInputError(f"measures must be a list of names from {', '.join(MEASURE_METHODS)}; got {measures!r}.") from None
    bad = [m for m in ms if not isinstance(m, str) or m not in MEASURE_METHODS]
    if not ms or bad:
        raise SyncstatsInputError(
            f"measures must be chosen from {', '.join(MEASURE_METHODS)}; got {', '.join(map(repr, bad)) or 'nothing'}."
        )
    if progress is False:
        progress = None
    if progress is not None and not callable(progress):
        raise SyncstatsInputError(
            f"progress must be a function called with the number of surrogates finished, or None; got {progress!r}."
        )
    return AnalysisOptions(
        measures=tuple(dict.fromkeys(ms)),
        surrogate=_choice(surrogate, "surrogate", SURROGATE_METHODS),
        n_surrogates=check_int(n_surrogates, "n_surrogates", low=0, high=MAX_SURROGATES,
                               hint="Use 0 for measures only, 999 or more for a test."),
        correction=_choice(correction, "correction", CORRECTION_METHODS),
        alpha=check_float(alpha, "alpha", low=0, high=1, open_low=True, open_high=True),
        seed=as_seed_sequence(rng),
        protophase_correction=check_bool(protophase_correction, "protophase_correction"),
        edge_s=None if edge_s is None else check_float(edge_s, "edge_s", low=0),
        min_shift_s=None if min_shift_s is None else check_float(min_shift_s, "min_shift_s", low=0, open_low=True),
        ci_level=check_float(ci_level, "ci_level", low=0, high=1, open_low=True, open_high=True),
        ci_method=_choice(ci_method, "ci_method", CI_METHODS),
        n_bootstrap=check_int(n_bootstrap, "n_bootstrap", low=0, high=MAX_BOOTSTRAP,
                              hint="Use 0 to skip the intervals."),
        batch_size=None if batch_size is None else check_int(batch_size, "batch_size", low=1, high=100_000),
        n_jobs=None if n_jobs is None else check_int(n_jobs, "n_jobs", low=1, high=1024),
        group_label=str(group_label),
        progress=progress,
        decimate=decimate if isinstance(decimate, (bool, np.bool_)) else check_int(
            decimate, "decimate", low=1, high=10_000, hint="Use true, false or a whole-number factor."),
        spectral_filter=check_bool(spectral_filter, "spectral_filter"),
        memory_mb=None if memory_mb is None else check_float(memory_mb, "memory_mb", low=1),
    )
