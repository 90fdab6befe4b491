"""The searched family: every (pair or group) x ratio x window x measure, evaluated on
phase arrays in one vectorised call (observed data: leading shape (); a batch of
surrogates: leading shape (B,)).

Phases are stored per signal with shape (..., T, N): T trials (1 for a single record)
and N samples on the analysed span. Measures pool trials and samples.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import measures as M

__all__ = ["Row", "Family"]


@dataclass(frozen=True)
class Row:
    """One test of the family."""

    kind: str  # "pair" or "group"
    a: str
    b: str  # "" for a group
    p: int
    q: int
    w0: int  # window start (sample index within the analysed span)
    w1: int  # window end (exclusive)
    measure: str
    members: tuple[str, ...] = ()  # group members


def _flat(x):
    """(..., T, n) -> (..., T*n): trials and samples pooled (the measures are
    order-invariant)."""
    return x.reshape(*x.shape[:-2], x.shape[-2] * x.shape[-1])


@dataclass(frozen=True)
class Family:
    """Rows plus what the measures need (the PPC stride)."""

    rows: tuple[Row, ...]
    stride: dict  # (a, b, p, q) -> samples per mean cycle of the slower rhythm

    def __len__(self):
        return len(self.rows)

    def psi(self, phases, row):
        return M.phase_difference(phases[row.a], phases[row.b], row.p, row.q)[..., row.w0:row.w1]

    def evaluate(self, phases: dict) -> np.ndarray:
        """Values of every row: ndarray (..., F)."""
        out = []
        cache = {}
        for r in self.rows:
            if r.kind == "group":
                stack = np.stack([phases[m][..., r.w0:r.w1] for m in r.members], axis=-3)
                # (..., units, T, n) -> mean over units of phasors, pooled over T and n
                rt = np.abs(np.mean(np.exp(1j * stack), axis=-3))
                out.append(_flat(rt).mean(axis=-1))
                continue
            key = (r.a, r.b, r.p, r.q, r.w0, r.w1)
            if key not in cache:
                cache[key] = self.psi(phases, r)
            psi = cache[key]
            if r.measure == "plv":
                out.append(M.plv(_flat(psi)))
            elif r.measure == "ppc":
                s = self.stride[(r.a, r.b, r.p, r.q)]
                n = psi.shape[-1] // s * s  # whole cycles in each trial, then trials pooled
                out.append(M.cycle_ppc(_flat(psi[..., :n]), s))
            elif r.measure == "entropy_index":
                out.append(M.entropy_index(_flat(psi)))
            elif r.measure == "conditional_index":
                pa = _flat(phases[r.a][..., r.w0:r.w1])
                pb = _flat(phases[r.b][..., r.w0:r.w1])
                out.append(M.conditional_index(pa, pb, r.p, r.q))
            else:  # pragma: no cover - rows are validated upstream
                raise ValueError(r.measure)
        return np.stack(np.broadcast_arrays(*out), axis=-1)

    # ---- block statistics for the bootstrap (additive over blocks of whole cycles) ----
    def block_stats(self, phases: dict, row: Row):
        """Per-block additive statistics and the function that turns their sum into the
        measure: ``(stats (n_blocks, k), fn(sum (..., k)) -> (...))``.

        Blocks are whole mean cycles of the slower rhythm within each trial, so the
        bootstrap resamples cycles, never single samples (Efron & Tibshirani 1993; a
        moving-block idea with the block set to one cycle).
        """
        if row.kind == "group":
            stack = np.stack([phases[m][..., row.w0:row.w1] for m in row.members], axis=0)
            rt = np.abs(np.mean(np.exp(1j * stack), axis=0))  # (T, n)
            s = self.stride.get(("__group__",), max(rt.shape[-1] // 20, 1))
            blocks = _blocks(rt[..., None], s)  # (nb, s, 1)
            st = np.concatenate([blocks.sum(axis=1), np.full((blocks.shape[0], 1), blocks.shape[1])], axis=1)
            return st, lambda z: z[..., 0] / z[..., 1]
        s = self.stride[(row.a, row.b, row.p, row.q)]
        psi = self.psi(phases, row)  # (T, n)
        if row.measure == "plv":
            e = np.exp(1j * psi)
            blk = _blocks(np.stack([e.real, e.imag], axis=-1), s)
            st = np.concatenate([blk.sum(axis=1), np.full((blk.shape[0], 1), blk.shape[1])], axis=1)
            return st, lambda z: np.hypot(z[..., 0], z[..., 1]) / z[..., 2]
        if row.measure == "ppc":
            e = np.exp(1j * psi)
            blk = _blocks(np.stack([e.real, e.imag], axis=-1), s)
            z = blk.mean(axis=1)  # cycle-mean phasors (n_blocks, 2)
            st = np.column_stack([z, (z**2).sum(axis=1), np.ones(len(z))])

            def fn(v):
                n = v[..., 3]
                return (v[..., 0] ** 2 + v[..., 1] ** 2 - v[..., 2]) / (n * (n - 1.0))

            return st, fn
        if row.measure == "entropy_index":
            nb = M.entropy_bins(psi.size)
            idx = M._bin_index(psi, 2 * np.pi, nb)
            return _block_bincount(idx, nb, s), M.entropy_index_from_counts
        if row.measure == "conditional_index":
            pa = phases[row.a][..., row.w0:row.w1]
            pb = phases[row.b][..., row.w0:row.w1]
            nb = min(64, M.entropy_bins(max(pa.size // row.p, 3)))
            idx = M._bin_index(pa, 2 * np.pi * row.p, nb)
            z = np.exp(1j * pb / row.q)
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
        raise ValueError(row.measure)  # pragma: no cover


def _blocks(x, s):
    """(T, n, k) -> (n_blocks, s, k): whole blocks of s samples inside each trial; the
    incomplete tail of each trial is left out."""
    t, n = x.shape[0], x.shape[1]
    nb = n // s
    if nb == 0:  # a span shorter than one cycle: each trial is one block
        return x
    return x[:, : nb * s].reshape(t * nb, s, x.shape[-1])


def _block_bincount(idx, nb, s, weights=None):
    """Per-block bin sums: idx (T, n) of bin numbers -> (n_blocks, nb)."""
    t, n = idx.shape
    nblk = max(n // s, 1)
    s_eff = n // nblk if n // s == 0 else s
    use = nblk * s_eff
    blk = (np.arange(t)[:, None] * nblk + np.arange(use)[None, :] // s_eff)
    flat = (blk * nb + idx[:, :use]).ravel()
    w = None if weights is None else weights[:, :use].ravel()
    return np.bincount(flat, weights=w, minlength=t * nblk * nb).reshape(t * nblk, nb)
