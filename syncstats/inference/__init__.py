"""Inference: null distributions from surrogates, p-values, corrections over the
searched family, effect sizes and confidence intervals."""
from ._bootstrap import angle_ci, block_ci
from ._circular import rayleigh_test
from ._family import Family, Row
from ._pipeline import EVENT_LEVEL, PHASE_LEVEL, SIGNAL_LEVEL, TRIAL_LEVEL, NullJob, Pipeline
from ._pvalues import CORRECTIONS, adjust, max_stat_adjust, min_surrogates, surrogate_pvalue

__all__ = [
    "CORRECTIONS",
    "EVENT_LEVEL",
    "PHASE_LEVEL",
    "SIGNAL_LEVEL",
    "TRIAL_LEVEL",
    "Family",
    "NullJob",
    "Pipeline",
    "Row",
    "adjust",
    "angle_ci",
    "block_ci",
    "max_stat_adjust",
    "min_surrogates",
    "rayleigh_test",
    "surrogate_pvalue",
]
