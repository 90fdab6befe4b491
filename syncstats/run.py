"""Executors: where batches of surrogates are computed.

Every batch is addressed by its surrogate indices ``(start, stop)`` and draws from its
own child streams, so serial, process-pool and Dask runs give identical results.
"""
from __future__ import annotations

import signal
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
        pool = ProcessPoolExecutor(max_workers=n_jobs, initializer=_worker_signals)
        futs = []
        try:
            with _signals_held():  # workers start at the first submit, with these signals held
                futs = [pool.submit(job, b) for b in bounds]
            out = []
            for b, f in zip(bounds, futs):
                out.append(f.result())
                tick(b)
        except BaseException:  # an interrupt or a failed batch: stop at once, not after the queue
            _stop_pool(pool, futs)
            raise
        pool.shutdown()
        return out
    if hasattr(executor, "submit"):
        futs = []
        try:
            futs = [executor.submit(job, b) for b in bounds]
            out = []
            for b, f in zip(bounds, futs):
                out.append(f.result())
                tick(b)
        except BaseException:
            for f in futs:
                f.cancel()
            raise
        return out
    raise SyncstatsInputError(
        f"executor must be one of {EXECUTORS}, a concurrent.futures executor or a dask Client; got {executor!r}."
    )


_STOP_SIGNALS = tuple(getattr(signal, n) for n in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, n))


class _signals_held:
    """Hold interrupt signals in this thread while worker processes are forked, so a
    worker never runs the parent's handler (it sets its own first, then lets them in)."""

    def __enter__(self):
        self.old = signal.pthread_sigmask(signal.SIG_BLOCK, _STOP_SIGNALS) if hasattr(signal, "pthread_sigmask") \
            else None

    def __exit__(self, *exc):
        if self.old is not None:
            signal.pthread_sigmask(signal.SIG_SETMASK, self.old)
        return False


def _worker_signals():
    """Worker start-up: Ctrl-C is for the parent, which stops the workers itself; the
    other stop signals end a worker quietly."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    for s in _STOP_SIGNALS:
        if s != signal.SIGINT:
            signal.signal(s, signal.SIG_DFL)
    if hasattr(signal, "pthread_sigmask"):
        signal.pthread_sigmask(signal.SIG_UNBLOCK, _STOP_SIGNALS)


def _stop_pool(pool, futs, timeout: float = 5.0) -> None:
    """Cancel what has not started, end the workers and reap them."""
    for f in futs:
        f.cancel()
    procs = list((getattr(pool, "_processes", None) or {}).values())  # no public handle before Python 3.14
    pool.shutdown(wait=False, cancel_futures=True)
    for p in procs:
        if p.is_alive():
            p.terminate()
    for p in procs:
        p.join(timeout)
        if p.is_alive():
            p.kill()
            p.join(1.0)
