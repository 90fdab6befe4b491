"""Locking measures on phase arrays (pure numpy; broadcast over leading axes).

Ratio convention (DESIGN.md): ``p:q`` means signal A completes p cycles while B
completes q; the generalized phase difference is ``psi = q·phi_A − p·phi_B``.
Phases are unwrapped radians with time on the last axis.
"""
from __future__ import annotations

from math import gcd

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
    "check_ratio",
]

#: pairwise measures accepted by ``analyze``; "order_parameter" is the group measure
MEASURES = ("plv", "ppc", "entropy_index", "conditional_index", "order_parameter")


def check_ratio(ratio) -> tuple[int, int]:
    """Validate a ratio given as ``(p, q)`` or ``"p:q"``; returns the integer pair."""
    raw = ratio
    if isinstance(ratio, str):
        parts = ratio.split(":")
        if len(parts) != 2:
            raise SyncstatsInputError(f"ratio {raw!r} must look like 'p:q' with positive integers, e.g. '4:1'.")
        ratio = parts
    try:
        p, q = ratio
        pf, qf = float(p), float(q)
    except (TypeError, ValueError):
        raise SyncstatsInputError(f"ratio {raw!r} must be a pair of positive integers (p, q), e.g. (4, 1).") from None
    if not (pf.is_integer() and qf.is_integer()) or pf < 1 or qf < 1:
        raise SyncstatsInputError(
            f"ratio {raw!r} must be two positive integers p:q (A makes p cycles while B makes q), e.g. 4:1."
        )
    return int(pf), int(qf)


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
