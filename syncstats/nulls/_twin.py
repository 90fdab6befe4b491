"""Twin surrogates: new trajectories of the same system, built from recurrence twins."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.fft as sfft
from scipy.spatial.distance import pdist, squareform

from .._errors import SyncstatsInputError, warn
from ._validation import _as_channels, _check_float, _check_int, _check_rngs

__all__ = ["twin"]

# Below this share of states with a twin, the surrogates are nearly circular shifts.
_MIN_TWIN_SHARE = 0.05


@dataclass(frozen=True)
class _TwinStructure:
    """Everything about one channel that does not depend on the random draws."""

    step: int  # full-rate samples per state (decimation factor d)
    n_states: int  # M states, state i sits at full-rate sample i * step
    delay: int  # embedding delay, full-rate samples
    epsilon: float  # recurrence threshold (maximum norm)
    group: np.ndarray  # (M,) twin-class label of each state
    start: np.ndarray  # (G,) offset of each class in `members`
    count: np.ndarray  # (G,) members of each class that have a successor
    members: np.ndarray  # states with a successor, grouped by class
    twin_share: float  # share of states with at least one twin besides themselves
    recurrence_rate: float  # share of ones in the recurrence matrix (diagonal included)


def _auto_delay(x: np.ndarray, max_lag: int) -> int:
    """First zero crossing of the autocorrelation (else first drop below 1/e), <= max_lag."""
    xc = x - x.mean()
    n = xc.size
    nfft = sfft.next_fast_len(2 * n, real=True)
    f = sfft.rfft(xc, nfft)
    acf = sfft.irfft(f * np.conj(f), nfft)[: max_lag + 1]
    if acf[0] <= 0:
        return 1
    acf = acf / acf[0]
    for level in (0.0, np.exp(-1.0)):
        below = np.nonzero(acf[1:] <= level)[0]
        if below.size:
            return int(below[0] + 1)
    return max(1, max_lag)


def _structure(x: np.ndarray, *, embedding_dim: int, delay: int | None, recurrence_rate: float, max_points: int) -> _TwinStructure:
    n = x.size
    span_cap = max(1, (n - 16) // (2 * max(embedding_dim - 1, 1)))
    if delay is None:
        delay = 1 if embedding_dim == 1 else _auto_delay(x, span_cap)
    span = (embedding_dim - 1) * delay
    n_embed = n - span  # full-rate embedding vectors
    if n_embed < 16:
        raise SyncstatsInputError(
            f"twin(): embedding_dim {embedding_dim} x delay {delay} spans {span} of {n} samples, leaving fewer than 16 "
            "states; lower embedding_dim or delay, or pass a longer record."
        )
    step = max(1, -(-n_embed // max_points))  # ceil
    n_states = min((n_embed - 1) // step + 1, n // step)
    t = np.arange(n_states) * step
    states = np.stack([x[t + k * delay] for k in range(embedding_dim)], axis=-1)  # (M, m)

    dist = pdist(states, metric="chebyshev")  # condensed, M (M - 1) / 2 pairs
    k = max(0, min(dist.size - 1, int(np.ceil(recurrence_rate * dist.size)) - 1))
    eps = float(np.partition(dist, k)[k])
    rec = squareform(dist <= eps)  # (M, M) bool, diagonal False
    del dist
    np.fill_diagonal(rec, True)
    rr = float(rec.mean())

    # Twins: identical columns of the (symmetric) recurrence matrix.
    packed = np.packbits(rec, axis=1)
    del rec
    _, group = np.unique(packed, axis=0, return_inverse=True)
    group = group.reshape(-1).astype(np.int64)
    n_groups = int(group.max()) + 1
    sizes = np.bincount(group, minlength=n_groups)
    twin_share = float(np.mean(sizes[group] > 1))

    has_next = np.arange(n_states) < n_states - 1
    cand = np.nonzero(has_next)[0]
    cand = cand[np.argsort(group[cand], kind="stable")]
    count = np.bincount(group[cand], minlength=n_groups)
    start = np.concatenate([[0], np.cumsum(count)[:-1]])
    return _TwinStructure(step, n_states, int(delay), eps, group, start, count, cand, twin_share, rr)


def _walk(st: _TwinStructure, u: np.ndarray) -> np.ndarray:
    """State paths (B, L) from uniforms u (B, L): u[:, 0] picks the start, u[:, i] the twin."""
    m = st.n_states
    path = np.empty(u.shape, dtype=np.int64)
    pos = np.minimum((u[:, 0] * m).astype(np.int64), m - 1)
    path[:, 0] = pos
    for i in range(1, u.shape[1]):
        g = st.group[pos]
        cnt = st.count[g]
        pick = np.minimum((u[:, i] * cnt).astype(np.int64), np.maximum(cnt - 1, 0))
        nxt = st.members[np.minimum(st.start[g] + pick, st.members.size - 1)] + 1
        # Dead end (a class whose only member is the last state): restart at random.
        restart = np.minimum((u[:, i] * m).astype(np.int64), m - 1)
        pos = np.where(cnt > 0, nxt, restart)
        path[:, i] = pos
    return path


def twin(
    x,
    rngs,
    *,
    embedding_dim: int = 2,
    delay: int | None = None,
    recurrence_rate: float = 0.05,
    max_points: int = 2000,
    return_info: bool = False,
):
    """Twin surrogates: walk the recorded trajectory, jumping among recurrence twins at random.

    Parameters
    ----------
    x : array_like, shape (C, N) or (N,)
        Real signals, time on the last axis; each channel gets its own recurrence
        structure and its own walk.
    rngs : sequence of numpy.random.Generator, length B
        One generator per surrogate; surrogate ``b`` draws only from ``rngs[b]``.
    embedding_dim : int, default 2
        Delay-embedding dimension m (>= 1). 2 spans the plane of a limit cycle
        (self-sustained oscillators); raise it for chaotic systems, at the cost of fewer
        twins. m = 1 is allowed but confuses rising and falling branches.
    delay : int, optional
        Embedding delay in samples of ``x`` (full rate). Default: per channel, the first
        zero crossing of the autocorrelation (a quarter period for a rhythm), else its
        first drop below 1/e (common practice).
    recurrence_rate : float, default 0.05
        Share of state pairs counted as recurrent, in (0, 1); fixes the threshold
        epsilon per channel.
    max_points : int, default 2000
        Largest number of states in the recurrence matrix (memory O(max_points^2) per
        channel: about 6 bytes x max_points^2 at the peak, 24 MB for 2000). Fewer states
        give more twins but longer copied segments.
    return_info : bool, default False
        Also return one dict per channel with ``step``, ``n_states``, ``delay``,
        ``epsilon``, ``recurrence_rate`` and ``twin_share`` (share of states that have a
        twin besides themselves; near 0 means the surrogates are nearly circular shifts).

    Returns
    -------
    surrogates : numpy.ndarray, shape (B, C, N), float64
        Every value is a sample of the same channel of ``x``; runs of consecutive samples
        are copied unchanged from ``x``.
    info : list of dict
        Only when ``return_info``.

    Notes
    -----
    Per channel (Thiel et al. 2006; Romano et al. 2009):

    1. States v_i = (x[i d], x[i d + tau], ..., x[i d + (m-1) tau]), i = 0..M-1, where
       d = ceil((N - (m-1) tau) / max_points) is the down-sampling step (d = 1 when the
       record is short enough); the embedding itself uses the full-rate samples.
    2. Recurrence matrix R_ij = [max_k |v_i,k - v_j,k| <= epsilon], epsilon the
       ``recurrence_rate`` quantile of the pairwise distances.
    3. States i and j are twins when columns i and j of R are identical.
    4. Walk: start at a uniformly random state; from state k pick uniformly one state j
       of k's twin class (k itself included) that has a successor and go to j + 1 (if
       none has, restart at a random state). One uniform per step.
    5. Back to the full rate by repeating segments: state i stands for the d consecutive
       samples x[i d : i d + d]; the surrogate is the concatenation of the segments of
       the walk, cut to N samples. Within a segment the original fine structure is kept
       exactly, and the joins sit where the coarse states were indistinguishable. We
       chose segments over interpolation so that surrogate values stay values of x and
       nothing is smoothed.

    The structure (steps 1-3) depends only on ``x`` and the options and is computed once
    per channel and call; the walks are vectorised over the batch. Draws per surrogate:
    one (C, ceil(N / d)) block of uniforms. Twin surrogates keep the recurrence structure
    (hence the attractor, the rhythm and its variability) but start from new initial
    conditions, so two coupled systems lose their mutual alignment. With few twins
    (``twin_share`` small: noisy data, high embedding dimension, many states) a
    surrogate is little more than a circular shift of the data; a
    :class:`~syncstats._errors.SyncstatsWarning` is issued when fewer than 5 % of the
    states of a channel have a twin.

    References
    ----------
    Thiel M, Romano MC, Kurths J, Rolfs M, Kliegl R (2006). Twin surrogates to test for
    complex synchronisation. Europhys Lett 75:535-541.
    Romano MC, Thiel M, Kurths J, Mergenthaler K, Engbert R (2009). Hypothesis test for
    synchronization: twin surrogates revisited. Chaos 19:015108.

    Examples
    --------
    >>> import numpy as np
    >>> x = np.tile(np.sin(2 * np.pi * np.arange(40) / 40), 25)
    >>> s = twin(x, [np.random.default_rng(3)], recurrence_rate=0.02)
    >>> bool(np.array_equal(s[0, 0, 40:], s[0, 0, :-40]))  # still the same periodic orbit
    True
    """
    x2, _ = _as_channels(x, "twin", min_samples=16)
    rngs = _check_rngs(rngs, "twin")
    c, n = x2.shape
    embedding_dim = _check_int(embedding_dim, "embedding_dim", "twin", low=1, high=max(1, n // 16))
    if delay is not None:
        delay = _check_int(delay, "delay", "twin", low=1, high=n)
    recurrence_rate = _check_float(recurrence_rate, "recurrence_rate", "twin", low=0.0, high=1.0)
    if recurrence_rate >= 1.0:
        raise SyncstatsInputError(
            f"recurrence_rate in twin() is {recurrence_rate}; it must be below 1 (typical 0.01-0.1)."
        )
    max_points = _check_int(max_points, "max_points", "twin", low=16)

    structs = [
        _structure(x2[ch], embedding_dim=embedding_dim, delay=delay, recurrence_rate=recurrence_rate, max_points=max_points)
        for ch in range(c)
    ]
    for ch, st in enumerate(structs):
        if st.twin_share < _MIN_TWIN_SHARE:
            warn(
                f"twin(): only {100 * st.twin_share:.1f} % of the {st.n_states} states of channel {ch} have a twin, so "
                "its surrogates are close to circular shifts; lower max_points or embedding_dim, or use another null.",
                stacklevel=2,
            )
    n_steps = [-(-n // st.step) for st in structs]
    draws = [r.random(sum(n_steps)) for r in rngs]  # (sum_c L_c,) per surrogate
    u_all = np.stack(draws)  # (B, sum L_c)
    out = np.empty((len(rngs), c, n), dtype=np.float64)
    offset = 0
    for ch, st in enumerate(structs):
        length = n_steps[ch]
        path = _walk(st, u_all[:, offset : offset + length])
        offset += length
        idx = (path[:, :, None] * st.step + np.arange(st.step)).reshape(len(rngs), -1)[:, :n]
        out[:, ch, :] = x2[ch][idx]
    if return_info:
        info = [
            {
                "step": st.step,
                "n_states": st.n_states,
                "delay": st.delay,
                "epsilon": st.epsilon,
                "recurrence_rate": st.recurrence_rate,
                "twin_share": st.twin_share,
            }
            for st in structs
        ]
        return out, info
    return out
