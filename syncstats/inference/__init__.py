"""Inference: the design of the searched family, null distributions from surrogates
pushed through the data's pipeline, p-values, corrections, effect sizes and intervals.

Stages (each a function returning a small frozen object): :func:`make_design` ->
:func:`null_distribution` -> :func:`test_family` -> :func:`choose_ratios` ->
:func:`row_intervals`.
"""
from ._bootstrap import CI_METHODS, Interval, RowIntervals, angle_ci, block_ci, row_intervals
from ._circular import critical_plv, rayleigh_test
from ._design import MIN_CYCLES, Design, make_design
from ._family import Family, Row
from ._nulls import (SHIFT_IN_PLACE_OF, NullJob, ShiftPlan, check_method, exact_shift_null, method_options,
                     null_distribution, shift_in_place, shift_plan)
from ._pvalues import (CORRECTION_METHODS, CORRECTIONS, Correction, adjust, max_stat_adjust, min_surrogates,
                       surrogate_pvalue)
from ._ratios import (MAX_DRIFT_PER_CYCLE, RatioChoice, choose_ratios, drift_per_cycle, lock_evidence,
                      lock_floor, two_state_warning)
from ._testing import FamilyTest, test_family

__all__ = [
    "critical_plv",
    "lock_floor",
    "two_state_warning",
    "CI_METHODS",
    "CORRECTIONS",
    "CORRECTION_METHODS",
    "Correction",
    "Design",
    "Family",
    "FamilyTest",
    "Interval",
    "MIN_CYCLES",
    "NullJob",
    "ShiftPlan",
    "exact_shift_null",
    "shift_plan",
    "RatioChoice",
    "Row",
    "RowIntervals",
    "adjust",
    "angle_ci",
    "block_ci",
    "choose_ratios",
    "drift_per_cycle",
    "lock_evidence",
    "MAX_DRIFT_PER_CYCLE",
    "check_method",
    "make_design",
    "max_stat_adjust",
    "method_options",
    "shift_in_place",
    "SHIFT_IN_PLACE_OF",
    "min_surrogates",
    "null_distribution",
    "rayleigh_test",
    "row_intervals",
    "surrogate_pvalue",
    "test_family",
]
