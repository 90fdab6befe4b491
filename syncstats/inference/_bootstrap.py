"""Confidence intervals by a bootstrap over whole cycles."""
from __future__ import annotations

from typing import NamedTuple

import numpy as np
from scipy import stats

__all__ = ["Interval", "RowIntervals", "block_ci", "angle_ci", "row_intervals", "CI_METHODS"]

#: interval methods of ``scipy.stats.bootstrap`` offered by ``analyze(ci_method=...)``
CI_METHODS = ("percentile", "bca", "basic")


class Interval(NamedTuple):
    """A confidence interval (NaN ends when it could not be computed)."""

    low: float
    high: float


_NAN = Interval(float("nan"), float("nan"))


class RowIntervals(NamedTuple):
    """Intervals of one table row: of the value, and of the preferred phase (PLV rows)."""

    value: Interval
    angle: Interval


def block_ci(block_stats: np.ndarray, fn, *, n_resamples: int, level: float, method: str, rng) -> Interval:
    """Bootstrap CI of ``fn(sum of block statistics)`` resampling whole blocks.

    Each block is one mean cycle of the slower rhythm; its additive statistics (phasor
    sums, bin counts) are summed over a resample of blocks drawn with replacement. The
    interval comes from ``scipy.stats.bootstrap`` (percentile, basic or BCa) with the
    block numbers as the resampled data.

    Returns an :class:`Interval`; NaN when there are fewer than 3 blocks.

    References
    ----------
    Efron B, Tibshirani RJ (1993) An Introduction to the Bootstrap, Chapman & Hall.
    """
    nblk = block_stats.shape[0]
    if nblk < 3 or n_resamples < 1:
        return _NAN

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
    return Interval(float(lo), float(hi))


def angle_ci(block_stats: np.ndarray, *, n_resamples: int, level: float, rng) -> Interval:
    """Percentile CI of the preferred phase from resampled block phasor sums.

    ``block_stats`` columns are (sum cos psi, sum sin psi, count). The resampled mean
    angles are expressed as deviations from the observed mean angle in (−π, π], and the
    interval is the percentile interval of those deviations added back to the observed
    angle (wrapped). NaN when there are fewer than 3 blocks.
    """
    nblk = block_stats.shape[0]
    if nblk < 3 or n_resamples < 1:
        return _NAN
    tot = block_stats.sum(axis=0)
    theta0 = np.arctan2(tot[1], tot[0])
    idx = rng.integers(0, nblk, size=(n_resamples, nblk))
    sums = block_stats[idx].sum(axis=1)
    dev = np.angle(np.exp(1j * (np.arctan2(sums[:, 1], sums[:, 0]) - theta0)))
    a = (1 - level) / 2
    lo, hi = np.quantile(dev, [a, 1 - a])
    wrap = lambda v: float(np.angle(np.exp(1j * v)))  # noqa: E731
    return Interval(wrap(theta0 + lo), wrap(theta0 + hi))


def row_intervals(family, data: dict, seed: np.random.SeedSequence, *, n_resamples: int, level: float,
                  method: str) -> list[RowIntervals]:
    """Intervals of every row of ``family`` on the data's phases.

    Row i draws from its own stream (spawn key of ``seed`` + (2**31 − 1, i)), apart from
    the surrogate streams, so intervals do not depend on the surrogates drawn.
    """
    out = []
    key = tuple(seed.spawn_key) + (2**31 - 1,)
    for i, r in enumerate(family.rows):
        if not n_resamples:
            out.append(RowIntervals(_NAN, _NAN))
            continue
        rng = np.random.default_rng(np.random.SeedSequence(seed.entropy, spawn_key=key + (i,)))
        bst, fn = family.block_stats(data, r)
        value = block_ci(bst, fn, n_resamples=n_resamples, level=level, method=method, rng=rng)
        angle = angle_ci(bst, n_resamples=n_resamples, level=level, rng=rng) if (
            r.kind == "pair" and r.measure == "plv") else _NAN
        out.append(RowIntervals(value, angle))
    return out
