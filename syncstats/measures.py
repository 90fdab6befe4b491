"""Locking measures on phase arrays (pure numpy; broadcast over leading axes).

Ratio convention (the project's contract): ``p:q`` means signal A completes p cycles while B
completes q; the generalized phase difference is ``psi = q·phi_A − p·phi_B``.
Phases are unwrapped radians with time on the last axis.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from math import gcd
from typing import Callable

import numpy as np

from ._errors import SyncstatsInputError

__all__ = [
    "MEASURES",
    "phase_difference",
    "plv",
    "preferred_phase",
    "ppc",
    "cycle_ppc",
    "entropy_index",
    "entropy_bins",
    "conditional_index",
    "order_parameter",
    "auto_ratios",
    "RowPhases",
    "Measure",
    "MEASURE_METHODS",
]

def phase_difference(phi_a: np.ndarray, phi_b: np.ndarray, p: int = 1, q: int = 1) -> np.ndarray:
    """Generalized phase difference ``psi = q·phi_a − p·phi_b`` (unwrapped)."""
    return q * np.asarray(phi_a) - p * np.asarray(phi_b)


def _mean_vector(psi, axis=-1):
    return np.mean(np.exp(1j * np.asarray(psi)), axis=axis)


def plv(psi: np.ndarray, axis: int = -1) -> np.ndarray:
    """Phase-locking value (mean phase coherence) ``γ = |mean exp(i psi)|``.

    Under independence ``E[γ²] ≈ 1/N_eff`` with ``N_eff`` about the number of cycles,
    not of samples: compare with surrogates, never with a sample-count formula.

    References
    ----------
    Mormann F et al. (2000) Physica D 144:358–369; Lachaux JP et al. (1999) Hum Brain
    Mapp 8:194–208.

    Examples
    --------
    >>> round(float(plv(np.array([0.0, 0.0, np.pi / 2, np.pi / 2]))), 6)  # |(2+2i)/4|
    0.707107
    """
    return np.abs(_mean_vector(psi, axis))


def preferred_phase(psi: np.ndarray, axis: int = -1) -> np.ndarray:
    """Circular mean of ``psi`` in (−π, π]."""
    ang = np.angle(_mean_vector(psi, axis))
    return np.where(ang <= -np.pi, ang + 2 * np.pi, ang)


def ppc(psi: np.ndarray, axis: int = -1) -> np.ndarray:
    """Pairwise phase consistency ``(N γ² − 1)/(N − 1)``.

    Unbiased for the squared population PLV when the N angles are independent: give it
    one angle per cycle or per trial (``analyze`` samples psi once per mean cycle of the
    slower rhythm). Can be negative.

    References
    ----------
    Vinck M et al. (2010) NeuroImage 51:112–122, the pair-sum identity.
    """
    psi = np.asarray(psi)
    n = psi.shape[axis]
    if n < 2:
        raise SyncstatsInputError("ppc needs at least two angles; use a longer span or fewer windows.")
    g = plv(psi, axis)
    return (n * g**2 - 1.0) / (n - 1.0)


def cycle_ppc(psi: np.ndarray, samples_per_cycle: int) -> np.ndarray:
    """Pairwise phase consistency over cycle-mean phasors.

    ``psi`` (time last) is cut into consecutive blocks of ``samples_per_cycle`` samples
    (one mean cycle of the slower rhythm; an incomplete last block is dropped); each
    block gives its mean phasor ``z_k = mean exp(i psi)``, and

    ``PPC = (|Σ z_k|² − Σ |z_k|²) / (N (N − 1))``,

    the mean of ``Re(z_j conj(z_k))`` over all pairs of different cycles. With unit
    phasors (``samples_per_cycle = 1``) this is exactly the PPC of Vinck et al. (2010);
    averaging within each cycle instead of taking one sample per cycle avoids a
    stroboscopic artefact: sampled exactly once per slow cycle, ``q·phi_A − p·phi_B`` of
    *any* integer ratio looks constant.

    References
    ----------
    Vinck M et al. (2010) NeuroImage 51:112–122 (pairwise estimator).
    """
    psi = np.asarray(psi, dtype=float)
    s = max(int(samples_per_cycle), 1)
    nb = psi.shape[-1] // s
    if nb < 2:
        raise SyncstatsInputError("ppc needs at least two cycles; use a longer span or fewer windows.")
    z = np.exp(1j * psi[..., : nb * s]).reshape(*psi.shape[:-1], nb, s).mean(axis=-1)
    tot = z.sum(axis=-1)
    return (np.abs(tot) ** 2 - np.sum(np.abs(z) ** 2, axis=-1)) / (nb * (nb - 1.0))


def entropy_bins(n_samples: int) -> int:
    """Number of bins ``round(exp(0.626 + 0.4 ln(N − 1)))`` (rounded to the nearest
    integer; at least 2). The rule is used by Tass et al. 1998; its original source is
    attributed to Otnes & Enochson 1972 (recalled, not checked)."""
    return max(2, int(np.round(np.exp(0.626 + 0.4 * np.log(max(n_samples, 2) - 1)))))


def _binned_counts(idx: np.ndarray, n_bins: int, weights=None) -> np.ndarray:
    """Per-row bincount of ``idx`` (..., N) -> (..., n_bins)."""
    lead = idx.shape[:-1]
    rows = int(np.prod(lead)) if lead else 1
    flat = idx.reshape(rows, -1) + (np.arange(rows) * n_bins)[:, None]
    w = None if weights is None else weights.reshape(rows, -1).ravel()
    out = np.bincount(flat.ravel(), weights=w, minlength=rows * n_bins)
    return out.reshape(*lead, n_bins)


def _bin_index(angle: np.ndarray, period: float, n_bins: int) -> np.ndarray:
    idx = np.floor(np.mod(angle, period) / period * n_bins).astype(np.int64)
    return np.minimum(idx, n_bins - 1)


def entropy_index(psi: np.ndarray, n_bins: int | None = None) -> np.ndarray:
    """Shannon-entropy synchronization index ``ρ = (ln N_b − S)/ln N_b``.

    ``S = −Σ p_k ln p_k`` over ``N_b`` equal bins of ``psi mod 2π``; 0 for a uniform
    distribution, 1 for a point mass. Biased upward with few samples per bin; surrogates
    use the same bins. Time is the last axis.

    References
    ----------
    Tass P et al. (1998) Phys Rev Lett 81:3291–3294.
    """
    psi = np.asarray(psi, dtype=float)
    nb = entropy_bins(psi.shape[-1]) if n_bins is None else int(n_bins)
    counts = _binned_counts(_bin_index(psi, 2 * np.pi, nb), nb)
    return entropy_index_from_counts(counts)


def entropy_index_from_counts(counts: np.ndarray) -> np.ndarray:
    """ρ from bin counts on the last axis (for worked examples)."""
    counts = np.asarray(counts, dtype=float)
    nb = counts.shape[-1]
    pk = counts / counts.sum(axis=-1, keepdims=True)
    with np.errstate(divide="ignore", invalid="ignore"):
        s = -np.sum(np.where(pk > 0, pk * np.log(pk), 0.0), axis=-1)
    return (np.log(nb) - s) / np.log(nb)


def conditional_index(phi_a, phi_b, p: int = 1, q: int = 1, n_bins: int | None = None) -> np.ndarray:
    """Conditional-probability (stroboscopic) index λ for p:q locking.

    ``phi_a mod 2πp`` is split into ``N_b`` bins; in bin l,
    ``r_l = |mean exp(i phi_b / q)|`` over the samples whose ``phi_a`` falls there;
    ``λ = mean_l r_l`` over the occupied bins (empty bins are left out of the mean).
    ≈1 when locked, small when independent; each ``r_l`` is biased by about
    ``1/sqrt(M_l)``, so surrogates (with the same bins) are the reference.

    Parameters
    ----------
    phi_a, phi_b : ndarray, shape (..., N), unwrapped phases
    p, q : int
        Ratio p:q (A makes p cycles while B makes q).
    n_bins : int, optional
        Default: the entropy-index rule applied to N / p (samples per cycle of A's
        p-cycle pattern), at most 64.

    References
    ----------
    Tass P et al. (1998) Phys Rev Lett 81:3291–3294.
    """
    phi_a = np.asarray(phi_a, dtype=float)
    phi_b = np.asarray(phi_b, dtype=float)
    phi_a, phi_b = np.broadcast_arrays(phi_a, phi_b)
    n = phi_a.shape[-1]
    nb = min(64, entropy_bins(max(n // p, 3))) if n_bins is None else int(n_bins)
    idx = _bin_index(phi_a, 2 * np.pi * p, nb)
    z = np.exp(1j * phi_b / q)
    cnt = _binned_counts(idx, nb)
    re = _binned_counts(idx, nb, z.real)
    im = _binned_counts(idx, nb, z.imag)
    with np.errstate(invalid="ignore", divide="ignore"):
        r = np.hypot(re, im) / cnt
    occupied = cnt > 0
    return np.sum(np.where(occupied, r, 0.0), axis=-1) / np.maximum(occupied.sum(axis=-1), 1)


def order_parameter(phases: np.ndarray, axis: int = -2) -> np.ndarray:
    """Time-averaged Kuramoto order parameter of a group.

    ``R(t) = |mean_j exp(i θ_j(t))|`` over the units (``axis``, default −2), then the mean
    of R over time (last axis). Under independence ``E[R(t)²] = 1/n_units``.
    """
    r_t = np.abs(np.mean(np.exp(1j * np.asarray(phases)), axis=axis))
    return r_t.mean(axis=-1)


def auto_ratios(f_a: float, f_b: float, *, max_p: int = 12, max_q: int = 4, tol: float = 0.2, most: int = 5):
    """Coprime ``(p, q)`` with ``p/q`` near ``f_a/f_b``.

    Lists coprime pairs with ``p <= max_p``, ``q <= max_q`` whose ratio lies within
    ``tol`` (relative) of ``f_a/f_b``, nearest first, at most ``most``; the nearest one is
    always included. Every ratio scanned counts in the correction family.
    """
    if not (np.isfinite(f_a) and np.isfinite(f_b) and f_a > 0 and f_b > 0):
        raise SyncstatsInputError(
            "ratios='auto' needs a dominant frequency for both signals; give the ratios explicitly."
        )
    target = f_a / f_b
    cands = []
    for q in range(1, max_q + 1):
        for p in range(1, max_p + 1):
            if gcd(p, q) == 1:
                cands.append((abs(p / q - target) / target, q, p))
    cands.sort()
    out = [(p, q) for d, q, p in cands if d <= tol][:most]
    if not out:
        d, q, p = cands[0]
        out = [(p, q)]
    return out


# --------------------------------------------------------------------------- registry
def _flat(x):
    """(..., T, n) -> (..., T*n): trials and samples pooled (the measures are order-invariant)."""
    return x.reshape(*x.shape[:-2], x.shape[-2] * x.shape[-1])


class RowPhases:
    """The phases one table row is computed from, on its window.

    ``members`` are unwrapped phases of shape (..., T, n) (leading axes: a batch of
    surrogates; T trials; n samples of the window): (A, B) for a pair, every unit for a
    group. ``stride`` is the number of samples in one mean cycle of the slower rhythm
    (the block length of cycle-based statistics). ``psi`` is computed once on demand.
    """

    def __init__(self, members, p: int = 1, q: int = 1, stride: int = 1, psi=None):
        self.members = tuple(members)
        self.p, self.q, self.stride = int(p), int(q), max(int(stride), 1)
        if psi is not None:
            self.__dict__["psi"] = psi

    @cached_property
    def psi(self):
        return phase_difference(self.members[0], self.members[1], self.p, self.q)


@dataclass(frozen=True)
class Measure:
    """One locking measure: how to compute it and how to describe it.

    Attributes
    ----------
    name : str
        Key accepted by ``analyze(measures=...)`` and written to the ``measure`` column.
    label : str
        Display name in the report.
    kind : str
        "pair" (one row per pair x ratio x window) or "group" (one row per window).
    value : callable
        ``value(RowPhases) -> (...)``: the measure, broadcast over leading axes.
    block_stats : callable
        ``block_stats(RowPhases) -> (stats (n_blocks, k), fn)`` for one record: additive
        statistics per block of whole cycles and the function turning their sum into
        the measure (``fn(stats.sum(0)) == value``), so a bootstrap resample is a sum.
    description : str
        Words for the methods text.
    citations : tuple of str
        Papers, as "Author (year). Journal volume:pages."
    chance_sd : callable or None
        ``chance_sd(n_cycles)``: the measure's standard deviation under independence for
        that many independent cycles (a floor for null spreads in the max-statistic);
        None where no closed form is used.
    """

    name: str
    label: str
    kind: str
    value: Callable
    block_stats: Callable
    description: str
    citations: tuple[str, ...]
    chance_sd: Callable | None = None


def _rayleigh_sd(n):
    """SD of the mean resultant length of n independent uniform angles: the Rayleigh
    distribution of sqrt(n)·R has variance (4 − π)/4 (closed form, large n)."""
    return np.sqrt((4 - np.pi) / (4 * np.maximum(np.asarray(n, dtype=float), 1.0)))


def _ppc_sd(n):
    """SD of the PPC of n independent uniform unit phasors: the mean of the n(n−1)/2
    pair products cos(θ_j − θ_k), pairwise uncorrelated with variance 1/2, so
    var = 2/(n(n − 1)) (closed form)."""
    n = np.maximum(np.asarray(n, dtype=float), 2.0)
    return np.sqrt(2.0 / (n * (n - 1.0)))


def _block_ids(t: int, n: int, s: int) -> tuple[np.ndarray, int]:
    """Block number of every sample of (T, n): consecutive runs of s samples inside each
    trial, the last (shorter) run of a trial being a block of its own; -> (ids (T, n), count)."""
    per = max(-(-n // s), 1)
    return np.arange(t)[:, None] * per + np.minimum(np.arange(n) // s, per - 1)[None, :], t * per


def _block_sums(x, s):
    """(T, n, k) -> (n_blocks, k + 1): per-block sums of the k columns and the sample count."""
    t, n, k = x.shape
    ids, nblk = _block_ids(t, n, s)
    flat = ids.ravel()
    cols = [np.bincount(flat, weights=x[..., j].ravel(), minlength=nblk) for j in range(k)]
    cols.append(np.bincount(flat, minlength=nblk).astype(float))
    return np.stack(cols, axis=1)


def _block_bincount(idx, nb, s, weights=None):
    """Per-block bin sums: idx (T, n) of bin numbers -> (n_blocks, nb)."""
    t, n = idx.shape
    ids, nblk = _block_ids(t, n, s)
    flat = (ids * nb + idx).ravel()
    w = None if weights is None else weights.ravel()
    return np.bincount(flat, weights=w, minlength=nblk * nb).reshape(nblk, nb)


def _phasor(v):
    e = np.exp(1j * v.psi)
    return np.stack([e.real, e.imag], axis=-1)


def _plv_value(v):
    return plv(_flat(v.psi))


def _plv_blocks(v):
    return _block_sums(_phasor(v), v.stride), lambda z: np.hypot(z[..., 0], z[..., 1]) / z[..., 2]


def _ppc_value(v):
    s = v.stride
    n = v.psi.shape[-1] // s * s  # whole cycles in each trial, then trials pooled
    return cycle_ppc(_flat(v.psi[..., :n]), s)


def _ppc_blocks(v):
    e, s = _phasor(v), v.stride
    n = e.shape[1] // s * s  # whole cycles only, as the measure itself
    z = e[:, :n].reshape(e.shape[0] * (n // s), s, 2).mean(axis=1)  # cycle-mean phasors (n_blocks, 2)
    st = np.column_stack([z, (z**2).sum(axis=1), np.ones(len(z))])

    def fn(u):
        n = u[..., 3]
        return (u[..., 0] ** 2 + u[..., 1] ** 2 - u[..., 2]) / (n * (n - 1.0))

    return st, fn


def _entropy_value(v):
    return entropy_index(_flat(v.psi))


def _entropy_blocks(v):
    nb = entropy_bins(v.psi.size)
    return _block_bincount(_bin_index(v.psi, 2 * np.pi, nb), nb, v.stride), entropy_index_from_counts


def _conditional_value(v):
    return conditional_index(_flat(v.members[0]), _flat(v.members[1]), v.p, v.q)


def _conditional_blocks(v):
    pa, pb, s = v.members[0], v.members[1], v.stride
    nb = min(64, entropy_bins(max(pa.size // v.p, 3)))
    idx = _bin_index(pa, 2 * np.pi * v.p, nb)
    z = np.exp(1j * pb / v.q)
    st = np.concatenate(
        [_block_bincount(idx, nb, s), _block_bincount(idx, nb, s, z.real), _block_bincount(idx, nb, s, z.imag)],
        axis=1,
    )

    def fn(zz):
        cnt, re, im = zz[..., :nb], zz[..., nb : 2 * nb], zz[..., 2 * nb :]
        with np.errstate(invalid="ignore", divide="ignore"):
            r = np.hypot(re, im) / cnt
        occ = cnt > 0
        return np.sum(np.where(occ, r, 0.0), axis=-1) / np.maximum(occ.sum(axis=-1), 1)

    return st, fn


def _group_stack(v):
    return np.stack(v.members, axis=-3)  # (..., units, T, n)


def _order_value(v):
    st = _group_stack(v)
    return order_parameter(st.reshape(*st.shape[:-2], st.shape[-2] * st.shape[-1]), axis=-2)


def _order_blocks(v):
    rt = np.abs(np.mean(np.exp(1j * _group_stack(v)), axis=0))  # (T, n): R(t)
    return _block_sums(rt[..., None], v.stride), lambda z: z[..., 0] / z[..., 1]


_VINCK = "Vinck M, et al. (2010). NeuroImage 51:112–122."
_TASS = "Tass P, et al. (1998). Phys Rev Lett 81:3291–3294."

#: name -> :class:`Measure`; the names are the values accepted by ``analyze(measures=...)``
MEASURE_METHODS: dict[str, Measure] = {
    m.name: m
    for m in (
        Measure("plv", "PLV", "pair", _plv_value, _plv_blocks,
                "the phase-locking value (PLV, the length of the time average of the unit vector exp(iψ))",
                ("Mormann F, et al. (2000). Physica D 144:358–369.",), _rayleigh_sd),
        Measure("ppc", "PPC", "pair", _ppc_value, _ppc_blocks,
                "the pairwise phase consistency (PPC: the mean over all pairs of different cycles of the product "
                "of their cycle-mean phasors, an estimate of the squared PLV that is not biased by the number of "
                "cycles)", (_VINCK,), _ppc_sd),
        Measure("entropy_index", "entropy index", "pair", _entropy_value, _entropy_blocks,
                "the Shannon-entropy index of the distribution of ψ", (_TASS,)),
        Measure("conditional_index", "conditional-probability index", "pair", _conditional_value,
                _conditional_blocks, "the conditional-probability (stroboscopic) index", (_TASS,)),
        Measure("order_parameter", "order parameter", "group", _order_value, _order_blocks,
                "the Kuramoto order parameter of the group (time average of |mean exp(iθ)| over the units)",
                ("Allefeld C, Kurths J (2004). Int J Bifurcat Chaos 14:417–426.",)),
    )
}

#: names of every measure, in registry order
MEASURES = tuple(MEASURE_METHODS)
