"""Surrogate p-values and corrections for a searched family."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np
from statsmodels.stats.multitest import multipletests

from .._errors import SyncstatsInputError

__all__ = ["Correction", "CORRECTION_METHODS", "CORRECTIONS", "surrogate_pvalue", "adjust", "max_stat_adjust",
           "min_surrogates"]


def _tolerance(observed):
    # ties within floating-point noise count as exceedances (as scipy's resampling tests do)
    return 1e-12 * np.maximum(1.0, np.abs(observed))


def surrogate_pvalue(observed: np.ndarray, null: np.ndarray) -> np.ndarray:
    """One-sided surrogate p-value ``(1 + #{T_b >= T_0}) / (1 + B)``; never 0.

    Parameters
    ----------
    observed : ndarray, shape (F,)
    null : ndarray, shape (B, F)

    References
    ----------
    Phipson B, Smyth GK (2010) Stat Appl Genet Mol Biol 9(1):39.
    """
    observed = np.asarray(observed, dtype=float)
    null = np.asarray(null, dtype=float)
    k = np.sum(null >= observed - _tolerance(observed), axis=0)
    return (1.0 + k) / (1.0 + null.shape[0])


def _standardize(observed, null, floor=None):
    mu = null.mean(axis=0)
    sd = null.std(axis=0, ddof=1)
    if floor is not None:
        sd = np.maximum(sd, np.nan_to_num(np.asarray(floor, dtype=float), nan=0.0))
    sd = np.where(sd > 0, sd, np.inf)  # a degenerate null column can never win the max
    return (observed - mu) / sd, (null - mu) / sd


def max_stat_adjust(observed: np.ndarray, null: np.ndarray, *, step_down: bool = True, floor=None) -> np.ndarray:
    """Family-wise adjusted p-values by the standardized max-statistic.

    Each statistic is standardized against its own surrogates (z); inside each surrogate
    draw the maximum over the family is taken; ``p_j = (1 + #{M_b >= z_j})/(1 + B)``.
    The step-down version (Westfall & Young 1993, Algorithm 4.1 shape) takes, for the
    j-th largest observed z, the maximum over the hypotheses not yet rejected, and
    enforces monotone adjusted p-values; it is uniformly more powerful than single step
    and controls the FWER under subset pivotality.

    ``floor`` (F,) is a lower bound on each statistic's null standard deviation: the
    sampling spread the measure has under independence for that many cycles (e.g. the
    Rayleigh spread of the PLV). Where a null's own spread collapses — a ratio at which
    the phase difference rotates steadily gives almost the same tiny value for every
    time-shifted surrogate — an unfloored z would turn a meaningless difference (PLV
    0.0021 against 0.0017) into the family maximum. The floor is a fixed, per-hypothesis
    scale applied to observed and null values alike, so the max-statistic keeps its
    family-wise error control.

    References
    ----------
    Westfall PH, Young SS (1993) Resampling-Based Multiple Testing, Wiley.
    """
    observed = np.asarray(observed, dtype=float)
    null = np.asarray(null, dtype=float)
    b, f = null.shape
    z_obs, z_null = _standardize(observed, null, floor)
    z_obs = np.where(np.isfinite(z_obs), z_obs, -np.inf)
    z_null = np.where(np.isfinite(z_null), z_null, -np.inf)
    tol = _tolerance(z_obs[np.isfinite(z_obs)]).max() if np.any(np.isfinite(z_obs)) else 0.0
    if not step_down:
        m = z_null.max(axis=1)
        return (1.0 + np.sum(m[:, None] >= z_obs[None, :] - tol, axis=0)) / (1.0 + b)
    order = np.argsort(-z_obs, kind="stable")
    # successive maxima over the hypotheses ranked j..F (from the bottom up)
    tail_max = np.maximum.accumulate(z_null[:, order[::-1]], axis=1)[:, ::-1]
    p_sorted = (1.0 + np.sum(tail_max >= z_obs[order][None, :] - tol, axis=0)) / (1.0 + b)
    p_sorted = np.maximum.accumulate(p_sorted)
    out = np.empty(f)
    out[order] = p_sorted
    return out


@dataclass(frozen=True)
class Correction:
    """One multiple-testing correction (an entry of :data:`CORRECTION_METHODS`).

    Attributes
    ----------
    name : str
        Key accepted by ``analyze(correction=...)`` and ``--correction``.
    label : str
        Display name in the report.
    controls : str
        What it controls: "FDR", "FWER" or "none".
    description : str
        Noun phrase for the methods text.
    citations : tuple of str
    adjust : callable
        ``adjust(pvalues, observed, null, floor) -> adjusted p-values`` over one family
        (``floor``: lower bounds of the null spreads, used by the max-statistic).
    min_surrogates : callable
        ``min_surrogates(m, alpha) -> int``: smallest surrogate count at which a family
        of m tests can reach significance.
    """

    name: str
    label: str
    controls: str
    description: str
    citations: tuple[str, ...]
    adjust: Callable
    min_surrogates: Callable


def _statsmodels(method):
    return lambda p, observed=None, null=None, floor=None: multipletests(p, method=method)[1]


def _per_test(m, alpha):  # the smallest p must pass alpha/m (FDR: m/q − 1, Phipson & Smyth 2010)
    return int(np.ceil(max(int(m), 1) / alpha - 1))


def _single(m, alpha):
    return int(np.ceil(1 / alpha - 1))


#: name -> :class:`Correction`; the names are the values accepted by ``analyze(correction=...)``
CORRECTION_METHODS: dict[str, Correction] = {
    c.name: c
    for c in (
        Correction("fdr_bh", "Benjamini–Hochberg false discovery rate", "FDR",
                   "the Benjamini–Hochberg false-discovery-rate procedure",
                   ("Benjamini Y, Hochberg Y (1995). J R Stat Soc B 57:289–300.",), _statsmodels("fdr_bh"), _per_test),
        Correction("fdr_by", "Benjamini–Yekutieli false discovery rate", "FDR",
                   "the Benjamini–Yekutieli false-discovery-rate procedure (valid under any dependence)",
                   ("Benjamini Y, Yekutieli D (2001). Ann Stat 29:1165–1188.",), _statsmodels("fdr_by"), _per_test),
        Correction("holm", "Holm step-down", "FWER", "Holm's step-down family-wise correction",
                   ("Holm S (1979). Scand J Stat 6:65–70.",), _statsmodels("holm"), _per_test),
        Correction("bonferroni", "Bonferroni", "FWER", "the Bonferroni family-wise correction", (),
                   _statsmodels("bonferroni"), _per_test),
        Correction("max_stat", "max-statistic family-wise", "FWER",
                   "a max-statistic family-wise correction: each statistic was standardised against its own "
                   "surrogates and compared with the distribution of the maximum over the family within each "
                   "surrogate (step-down; each null spread floored at the measure's chance spread for the "
                   "row's number of cycles)",
                   ("Westfall PH, Young SS (1993). Resampling-Based Multiple Testing. Wiley.",),
                   lambda p, observed=None, null=None, floor=None: max_stat_adjust(observed, null, floor=floor),
                   _single),
        Correction("none", "no", "none", "no correction for multiple tests", (),
                   lambda p, observed=None, null=None, floor=None: np.asarray(p, dtype=float).copy(), _single),
    )
}

#: names of the corrections, in registry order
CORRECTIONS = tuple(CORRECTION_METHODS)


def adjust(pvalues: np.ndarray, method: str, *, observed=None, null=None, floor=None) -> np.ndarray:
    """Adjusted p-values over one family with the correction ``method``
    (:data:`CORRECTION_METHODS`; ``max_stat`` needs ``observed`` and ``null``)."""
    p = np.asarray(pvalues, dtype=float)
    if method not in CORRECTION_METHODS:
        raise SyncstatsInputError(
            f"correction must be one of {', '.join(CORRECTIONS)}; got {method!r}."
        )
    if p.size == 0:
        return p.copy()
    return CORRECTION_METHODS[method].adjust(p, observed=observed, null=null, floor=floor)


def min_surrogates(n_tests: int, alpha: float, method: str) -> int:
    """Smallest surrogate count B at which the family can reach significance.

    FDR methods: B >= m/q − 1 (the smallest attainable p, 1/(1 + B), must pass q/m); Bonferroni/Holm: the smallest p must pass
    alpha/m, so B >= m/alpha − 1; max-statistic and single tests: B >= 1/alpha − 1.
    """
    return CORRECTION_METHODS[method].min_surrogates(n_tests, alpha)
