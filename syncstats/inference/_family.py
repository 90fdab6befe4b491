"""The searched family: every (pair or group) x ratio x window x measure, evaluated on
phase arrays in one vectorised call (observed data: leading shape (); a batch of
surrogates: leading shape (B,)).

Phases are stored per signal with shape (..., T, N): T trials (1 for a single record)
and N samples on the analysed span. Measures pool trials and samples; what each measure
computes lives in :data:`syncstats.measures.MEASURE_METHODS`.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..measures import MEASURE_METHODS, RowPhases

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
    members: tuple[str, ...] = ()  # the rhythms the row uses: (a, b) for a pair
    stride: int = 1  # samples per mean cycle of the slower rhythm (cycle blocks)

    def view(self, phases: dict, psi=None) -> RowPhases:
        """The row's phases on its window."""
        return RowPhases([phases[m][..., self.w0:self.w1] for m in self.members], self.p, self.q, self.stride, psi)


@dataclass(frozen=True)
class Family:
    """The rows that are tested together."""

    rows: tuple[Row, ...]

    def __len__(self):
        return len(self.rows)

    def evaluate(self, phases: dict) -> np.ndarray:
        """Values of every row: ndarray (..., F)."""
        out, psi_cache = [], {}
        for r in self.rows:
            key = (r.members, r.p, r.q, r.w0, r.w1)
            v = r.view(phases, psi_cache.get(key))
            out.append(MEASURE_METHODS[r.measure].value(v))
            if "psi" in vars(v):  # computed by this measure: reuse it for the next ones
                psi_cache[key] = v.psi
        return np.stack(np.broadcast_arrays(*out), axis=-1)

    @staticmethod
    def block_stats(phases: dict, row: Row):
        """Per-block additive statistics of one row and the function that turns their sum
        into the measure (see :class:`syncstats.measures.Measure`)."""
        return MEASURE_METHODS[row.measure].block_stats(row.view(phases))
