"""Event- and trial-level surrogates: interval shuffling and trial re-pairing."""
from __future__ import annotations

import numbers

import numpy as np

from .._errors import SyncstatsInputError
from ._validation import _check_rngs

__all__ = ["interval_shuffle", "trial_shuffle"]


def interval_shuffle(events, rngs) -> list[np.ndarray]:
    """Interval-shuffled surrogates of an event train (inter-event intervals permuted).

    Parameters
    ----------
    events : array_like, shape (K,)
        Event times in seconds, sorted ascending, K >= 2.
    rngs : sequence of numpy.random.Generator, length B
        One generator per surrogate; surrogate ``b`` draws only from ``rngs[b]``.

    Returns
    -------
    list of B numpy.ndarray, each shape (K,), float64
        Surrogate event times: the same first event, the K - 1 intervals of ``events``
        in a random order (one ``permutation`` draw per surrogate), hence the same
        number of events and the same total span (to rounding of the cumulative sum).

    Notes
    -----
    t*_0 = t_0, t*_k = t_0 + sum_{j<k} I_pi(j) with I_j = t_{j+1} - t_j and pi a uniform
    random permutation. Keeps the interval distribution (rate, variability) but destroys
    the serial order of intervals (e.g. the slow modulation of heart rate by breathing),
    so it tests locking against a renewal-process null. It is a list, not an array, for
    symmetry with event lists of different lengths elsewhere in the package.

    References
    ----------
    Lancaster G, Iatsenko D, Pidde A, Ticcinelli V, Stefanovska A (2018). Surrogate data
    for hypothesis testing of physical systems. Phys Rep 748:1-60 (review of
    interval/cycle shuffling).

    Examples
    --------
    >>> import numpy as np
    >>> ev = np.array([0.5, 1.5, 2.0, 4.0])
    >>> s = interval_shuffle(ev, [np.random.default_rng(0)])[0]
    >>> float(s[0]), float(s[-1]), sorted(np.diff(s).tolist())
    (0.5, 4.0, [0.5, 1.0, 2.0])
    """
    ev = np.asarray(events)
    if ev.dtype.kind not in "iuf" or ev.ndim != 1:
        raise SyncstatsInputError(
            f"events in interval_shuffle() must be a 1-D numeric array of event times in seconds, got shape {ev.shape} "
            f"and dtype {ev.dtype}."
        )
    ev = ev.astype(np.float64, copy=False)
    if ev.size < 2:
        raise SyncstatsInputError(
            f"events in interval_shuffle() has {ev.size} event(s); at least 2 are needed to have an interval."
        )
    if not np.all(np.isfinite(ev)):
        raise SyncstatsInputError("events in interval_shuffle() contains NaN or infinite times; remove them.")
    intervals = np.diff(ev)
    if np.any(intervals < 0):
        raise SyncstatsInputError(
            "events in interval_shuffle() are not sorted ascending; sort the event times (numpy.sort) first."
        )
    rngs = _check_rngs(rngs, "interval_shuffle")
    out = []
    for r in rngs:
        perm = r.permutation(intervals)
        t = np.empty_like(ev)
        t[0] = ev[0]
        np.cumsum(perm, out=t[1:])
        t[1:] += ev[0]
        out.append(t)
    return out


def trial_shuffle(n_trials, rngs) -> np.ndarray:
    """Random trial re-pairings without fixed points (uniform random derangements).

    Parameters
    ----------
    n_trials : int
        Number of trials, >= 2.
    rngs : sequence of numpy.random.Generator, length B
        One generator per surrogate; surrogate ``b`` draws only from ``rngs[b]``.

    Returns
    -------
    numpy.ndarray, shape (B, n_trials), int
        Row b is a permutation ``pi`` with ``pi[i] != i`` for every i: trial i of signal A
        is paired with trial ``pi[i]`` of signal B.

    Notes
    -----
    Rejection sampling: draw uniform permutations from ``rngs[b]`` until one has no fixed
    point. Every derangement is then equally likely; the acceptance probability is
    !n / n! -> 1/e, so about e = 2.72 draws are needed on average. The number of distinct
    re-pairings is !n = round(n!/e) (n = 2: 1, 3: 2, 4: 9, 5: 44); with few trials the null
    distribution is coarse. Trial pairing keeps every within-trial property and the
    stimulus-locked (common-drive) component, so it tests coupling beyond what trials
    share by design.

    References
    ----------
    Lachaux JP, Rodriguez E, Martinerie J, Varela FJ (1999). Measuring phase synchrony in
    brain signals. Hum Brain Mapp 8:194-208 (shuffled-trial surrogates).

    Examples
    --------
    >>> import numpy as np
    >>> p = trial_shuffle(5, [np.random.default_rng(0), np.random.default_rng(1)])
    >>> p.shape, bool(np.any(p == np.arange(5)))
    ((2, 5), False)
    """
    if isinstance(n_trials, bool) or not isinstance(n_trials, numbers.Integral) or int(n_trials) < 2:
        raise SyncstatsInputError(
            f"n_trials in trial_shuffle() is {n_trials!r}; it must be an integer >= 2 (re-pairing needs two trials)."
        )
    n = int(n_trials)
    rngs = _check_rngs(rngs, "trial_shuffle")
    out = np.empty((len(rngs), n), dtype=np.int64)
    idx = np.arange(n)
    for b, r in enumerate(rngs):
        while True:
            perm = r.permutation(n)
            if not np.any(perm == idx):
                break
        out[b] = perm
    return out
