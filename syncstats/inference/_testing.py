"""The family test: surrogate p-values, the correction over the searched family, and
the null's moments, for every row at once."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..measures import MEASURE_METHODS
from ._pvalues import adjust, min_surrogates, surrogate_pvalue

__all__ = ["FamilyTest", "test_family"]


@dataclass(frozen=True)
class FamilyTest:
    """Per-row inference (arrays aligned with the design's rows; NaN without surrogates).

    ``few_surrogates`` marks rows whose family is too large for the surrogate count;
    ``notes`` say so in words.
    """

    correction: str
    p_value: np.ndarray
    p_adjusted: np.ndarray
    null_mean: np.ndarray
    null_sd: np.ndarray
    family: tuple[str, ...]
    few_surrogates: np.ndarray
    notes: tuple[str, ...]


def test_family(observed, null, design, correction: str, alpha: float, n_cycles=None) -> FamilyTest:
    """p = (1 + #{null >= observed}) / (1 + S); one correction family per measure.

    ``n_cycles`` (per row) sets the floor of each null spread for the max-statistic: the
    measure's spread under independence for that many cycles (``Measure.chance_sd``).
    """
    f = len(design.rows)
    nan = np.full(f, np.nan)
    if null is None:
        return FamilyTest("", nan, nan.copy(), nan.copy(), nan.copy(), ("",) * f, np.zeros(f, bool), ())
    s = null.shape[0]
    p_val = surrogate_pvalue(observed, null)
    p_adj = np.full(f, np.nan)
    fam, few, notes = [""] * f, np.zeros(f, bool), []
    for m in dict.fromkeys(r.measure for r in design.rows):
        idx = [i for i, r in enumerate(design.rows) if r.measure == m]
        sd_fn = MEASURE_METHODS[m].chance_sd
        floor = sd_fn(np.asarray(n_cycles)[idx]) if (sd_fn is not None and n_cycles is not None) else None
        p_adj[idx] = adjust(p_val[idx], correction, observed=observed[idx], null=null[:, idx], floor=floor)
        p_adj[idx] = np.maximum(p_adj[idx], p_val[idx])
        txt = design.describe(m)
        for i in idx:
            fam[i] = txt
        need = min_surrogates(len(idx), alpha, correction)
        if s < need:
            few[idx] = True
            notes.append(
                f"{s} surrogates are too few for a family of {len(idx)} {m} tests with {correction} at alpha={alpha}; "
                f"use at least {need}"
            )
    null_mean = null.mean(axis=0)
    null_sd = null.std(axis=0, ddof=1) if s > 1 else nan.copy()
    return FamilyTest(correction, p_val, p_adj, null_mean, null_sd, tuple(fam), few, tuple(notes))


