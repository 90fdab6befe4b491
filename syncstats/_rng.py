"""Random-stream handling (SPEC 7): one ``rng`` argument feeds every draw.

Surrogate ``i`` always draws from the same child stream, whatever the batch size or the
number of workers, because child streams are addressed by index via ``SeedSequence``
spawn keys rather than drawn in sequence.
"""
from __future__ import annotations

import numpy as np

__all__ = ["as_seed_sequence", "child_generators"]


def as_seed_sequence(rng) -> np.random.SeedSequence:
    """Turn ``None``, an int, a ``SeedSequence`` or a ``Generator`` into a ``SeedSequence``.

    A ``Generator`` is consumed once (one 128-bit draw) so that passing the same
    generator twice gives two different analyses, as SPEC 7 expects.
    """
    if isinstance(rng, np.random.SeedSequence):
        return rng
    if isinstance(rng, np.random.Generator):
        return np.random.SeedSequence(int(rng.integers(0, 2**63 - 1)))
    if rng is None or isinstance(rng, (int, np.integer)):
        if rng is not None and int(rng) < 0:
            from ._errors import SyncstatsInputError

            raise SyncstatsInputError(
                f"rng/seed must be a non-negative integer or a numpy Generator, got {rng}; pass e.g. rng=1."
            )
        return np.random.SeedSequence(None if rng is None else int(rng))
    from ._errors import SyncstatsInputError

    raise SyncstatsInputError(
        f"rng must be None, a non-negative int seed or a numpy.random.Generator, got {type(rng).__name__}."
    )


def child_generators(seq: np.random.SeedSequence, start: int, stop: int, *, stream: int = 0):
    """Generators for surrogate indices ``start..stop-1`` of sub-stream ``stream``.

    Child ``i`` has spawn key ``seq.spawn_key + (stream, i)``: it does not depend on how
    the indices are split into batches.
    """
    return [
        np.random.default_rng(
            np.random.SeedSequence(seq.entropy, spawn_key=tuple(seq.spawn_key) + (stream, i))
        )
        for i in range(start, stop)
    ]
