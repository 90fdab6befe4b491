"""Surrogate p-values and corrections for a searched family."""
from __future__ import annotations

import numpy as np
from statsmodels.stats.multitest import multipletests

from .._errors import SyncstatsInputError

__all__ = ["CORRECTIONS", "surrogate_pvalue", "adjust", "max_stat_adjust", "min_surrogates"]

#: statsmodels names of the p-value corrections, plus our max-statistic and "none"
CORRECTIONS = ("fdr_bh", "fdr_by", "holm", "bonferroni", "max_stat", "none")


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


def _standardize(observed, null):
    mu = null.mean(axis=0)
    sd = null.std(axis=0, ddof=1)
    sd = np.where(sd > 0, sd, np.inf)  # a degenerate null column can never win the max
    return (observed - mu) / sd, (null - mu) / sd


def max_stat_adjust(observed: np.ndarray, null: np.ndarray, *, step_down: bool = True) -> np.ndarray:
    """Family-wise adjusted p-values by the standardized max-statistic.

    Each statistic is standardized against its own surrogates (z); inside each surrogate
    draw the maximum over the family is taken; ``p_j = (1 + #{M_b >= z_j})/(1 + B)``.
    The step-down version (Westfall & Young 1993, Algorithm 4.1 shape) takes, for the
    j-th largest observed z, the maximum over the hypotheses not yet rejected, and
    enforces monotone adjusted p-values; it is uniformly more powerful than single step
    and controls the FWER under subset pivotality.

    References
    ----------
    Westfall PH, Young SS (1993) Resampling-Based Multiple Testing, Wiley.
    """
    observed = np.asarray(observed, dtype=float)
    null = np.asarray(null, dtype=float)
    b, f = null.shape
    z_obs, z_null = _standardize(observed, null)
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


def adjust(pvalues: np.ndarray, method: str, *, observed=None, null=None) -> np.ndarray:
    """Adjusted p-values over one family.

    ``fdr_bh``, ``fdr_by``, ``holm``, ``bonferroni`` go through
    ``statsmodels.stats.multitest.multipletests``; ``max_stat`` needs ``observed`` and
    ``null``; ``none`` returns the p-values unchanged.
    """
    p = np.asarray(pvalues, dtype=float)
    if method not in CORRECTIONS:
        raise SyncstatsInputError(
            f"correction must be one of {', '.join(CORRECTIONS)}; got {method!r}."
        )
    if p.size == 0 or method == "none":
        return p.copy()
    if method == "max_stat":
        return max_stat_adjust(observed, null)
    return multipletests(p, method=method)[1]


def min_surrogates(n_tests: int, alpha: float, method: str) -> int:
    """Smallest surrogate count B at which the family can reach significance.

    FDR methods: B >= m/q − 1 (METHODS.md); Bonferroni/Holm: the smallest p must pass
    alpha/m, so B >= m/alpha − 1; max-statistic and single tests: B >= 1/alpha − 1.
    """
    m = max(int(n_tests), 1)
    if method in ("fdr_bh", "fdr_by", "holm", "bonferroni"):
        return int(np.ceil(m / alpha - 1))
    return int(np.ceil(1 / alpha - 1))
