"""Confidence intervals by a bootstrap over whole cycles."""
from __future__ import annotations

import numpy as np
from scipy import stats

__all__ = ["block_ci", "angle_ci"]


def block_ci(block_stats: np.ndarray, fn, *, n_resamples: int, level: float, method: str, rng):
    """Bootstrap CI of ``fn(sum of block statistics)`` resampling whole blocks.

    Each block is one mean cycle of the slower rhythm; its additive statistics (phasor
    sums, bin counts) are summed over a resample of blocks drawn with replacement. The
    interval comes from ``scipy.stats.bootstrap`` (percentile, basic or BCa) with the
    block numbers as the resampled data.

    Returns (low, high); NaN when there are fewer than 3 blocks.

    References
    ----------
    Efron B, Tibshirani RJ (1993) An Introduction to the Bootstrap, Chapman & Hall.
    """
    nblk = block_stats.shape[0]
    if nblk < 3 or n_resamples < 1:
        return float("nan"), float("nan")

    def statistic(idx, axis=-1):
        idx = np.moveaxis(np.asarray(idx), axis, -1)
        return fn(block_stats[idx].sum(axis=-2))

    with np.errstate(invalid="ignore", divide="ignore"):
        res = stats.bootstrap(
            (np.arange(nblk),),
            statistic,
            n_resamples=n_resamples,
            confidence_level=level,
            method=method,
            vectorized=True,
            batch=max(1, min(n_resamples, 2_000_000 // max(block_stats.size, 1))),
            rng=rng,
        )
    lo, hi = res.confidence_interval
    return float(lo), float(hi)


def angle_ci(block_stats: np.ndarray, *, n_resamples: int, level: float, rng):
    """Percentile CI of the preferred phase from resampled block phasor sums.

    ``block_stats`` columns are (sum cos psi, sum sin psi, count). The resampled mean
    angles are expressed as deviations from the observed mean angle in (−π, π], and the
    interval is the percentile interval of those deviations added back to the observed
    angle (wrapped). NaN when there are fewer than 3 blocks.
    """
    nblk = block_stats.shape[0]
    if nblk < 3 or n_resamples < 1:
        return float("nan"), float("nan")
    tot = block_stats.sum(axis=0)
    theta0 = np.arctan2(tot[1], tot[0])
    idx = rng.integers(0, nblk, size=(n_resamples, nblk))
    sums = block_stats[idx].sum(axis=1)
    dev = np.angle(np.exp(1j * (np.arctan2(sums[:, 1], sums[:, 0]) - theta0)))
    a = (1 - level) / 2
    lo, hi = np.quantile(dev, [a, 1 - a])
    wrap = lambda v: float(np.angle(np.exp(1j * v)))  # noqa: E731
    return wrap(theta0 + lo), wrap(theta0 + hi)
