"""Executors: where batches of surrogates are computed.

Every batch is addressed by its surrogate indices ``(start, stop)`` and draws from its
own child streams, so serial, process-pool and Dask runs give identical results.
"""
from __future__ import annotations

from concurrent.futures import ProcessPoolExecutor

from ._errors import SyncstatsInputError

__all__ = ["batch_bounds", "map_batches", "EXECUTORS"]

EXECUTORS = ("serial", "processes")


def batch_bounds(n: int, batch_size: int) -> list[tuple[int, int]]:
    """Split ``range(n)`` into consecutive ``(start, stop)`` batches."""
    if batch_size < 1:
        raise SyncstatsInputError(f"batch_size must be a positive integer, got {batch_size}.")
    return [(s, min(n, s + batch_size)) for s in range(0, n, batch_size)]


def map_batches(job, bounds, *, executor=None, n_jobs: int | None = None, progress=None):
    """Run ``job((start, stop))`` for every batch and return the results in order.

    Parameters
    ----------
    executor : None, "serial", "processes", or an object with ``submit`` (a
        ``concurrent.futures`` executor or a ``dask.distributed.Client``)
    n_jobs : int, optional
        Worker processes for ``"processes"`` (default: all cores).
    progress : callable, optional
        Called with the number of surrogates finished after each batch.
    """
    def tick(b):
        if progress is not None:
            progress(b[1] - b[0])

    if executor is None or executor == "serial":
        out = []
        for b in bounds:
            out.append(job(b))
            tick(b)
        return out
    if executor == "processes":
        with ProcessPoolExecutor(max_workers=n_jobs) as pool:
            futs = [pool.submit(job, b) for b in bounds]
            out = []
            for b, f in zip(bounds, futs):
                out.append(f.result())
                tick(b)
            return out
    if hasattr(executor, "submit"):
        futs = [executor.submit(job, b) for b in bounds]
        out = []
        for b, f in zip(bounds, futs):
            out.append(f.result())
            tick(b)
        return out
    raise SyncstatsInputError(
        f"executor must be one of {EXECUTORS}, a concurrent.futures executor or a dask Client; got {executor!r}."
    )
