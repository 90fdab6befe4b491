"""Fourier-type surrogates: phase randomisation, AAFT, IAAFT and multivariate phase randomisation.

All generators take signals ``x`` of shape (C, N) (or (N,), treated as C = 1) and a list of
B numpy Generators, one per surrogate, and return an array of shape (B, C, N). Surrogate
``b`` draws all its randomness from ``rngs[b]`` in a fixed order, so a surrogate does not
depend on how the surrogates are split into batches.
"""
from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import scipy.fft as sfft

from ._validation import _as_channels, _check_int, _check_rngs

__all__ = ["fourier", "aaft", "iaaft", "multivariate_fourier"]

_TWO_PI = 2.0 * np.pi


def _n_random_bins(n: int) -> int:
    """Number of rfft bins k with 0 < k < N/2 (the bins whose phase is randomised)."""
    return (n - 1) // 2


def _rotations(rngs, n_channels: int, n: int, *, shared: bool) -> np.ndarray:
    """Unit phasors exp(i phi) of shape (B, C, N//2 + 1); DC and Nyquist stay 1.

    Surrogate ``b`` draws ``phi`` ~ U[0, 2 pi) for its (C, n_rand) bins (or (n_rand,) when
    ``shared``, the same phase for every channel) from ``rngs[b]``. cos/sin are evaluated
    per surrogate on a contiguous array, so the floating-point result cannot depend on the
    batch layout.
    """
    k_bins = n // 2 + 1
    n_rand = _n_random_bins(n)
    out = np.ones((len(rngs), n_channels, k_bins), dtype=np.complex128)
    for b, r in enumerate(rngs):
        if shared:
            phi = r.uniform(0.0, _TWO_PI, size=n_rand)
        else:
            phi = r.uniform(0.0, _TWO_PI, size=(n_channels, n_rand))
        out[b, :, 1 : 1 + n_rand] = np.cos(phi) + 1j * np.sin(phi)
    return out


def _phase_randomise(spectrum: np.ndarray, rot: np.ndarray, n: int) -> np.ndarray:
    """irfft(spectrum * rot) along the last axis (spectrum broadcasts against rot)."""
    return sfft.irfft(spectrum * rot, n=n, axis=-1, workers=-1)


# From this iteration on, the rank order of the previous iteration is used to pre-sort
# the rows, so that the adaptive (stable) sort meets almost sorted data; before it the
# ranks still change wholesale and a plain sort is faster. The choice depends only on
# the iteration number, so it is the same for a surrogate in any batch. Both give the
# same permutation up to the order of exact ties.
_PRESORT_FROM = 8


def _n_cpus() -> int:
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - non-Linux
        return max(1, os.cpu_count() or 1)


def _iaaft_step(rows, amp_rows, sorted_rows, prev_order):
    """One IAAFT iteration on a block of rows (each row independent of the others).

    Returns the new rows (values of ``sorted_rows`` in the rank order of the
    amplitude-adjusted rows), their rank order, and which rows changed.
    """
    n = rows.shape[-1]
    # (a) impose the Fourier amplitudes, keep the phases.
    spec = sfft.rfft(rows, axis=-1)
    mag = spec.real * spec.real
    mag += spec.imag * spec.imag
    np.sqrt(mag, out=mag)
    zero = mag == 0
    np.divide(amp_rows, mag, out=mag, where=~zero)
    spec *= mag
    if zero.any():  # undefined phase: take phase 0 (rare: exact zero bins)
        spec[zero] = np.broadcast_to(amp_rows, spec.shape)[zero]
    s = sfft.irfft(spec, n=n, axis=-1)
    # (b) impose the values in the rank order of s.
    if prev_order is None:
        order = np.argsort(s, axis=-1)
    else:
        presorted = np.take_along_axis(s, prev_order, axis=-1)
        order = np.take_along_axis(prev_order, np.argsort(presorted, axis=-1, kind="stable"), axis=-1)
    new = np.empty_like(rows)
    np.put_along_axis(new, order, np.broadcast_to(sorted_rows, rows.shape), axis=-1)
    changed = np.any(new != rows, axis=-1)
    return new, order, changed


def _rank_remap(target_sorted: np.ndarray, order_source: np.ndarray) -> np.ndarray:
    """Values of ``target_sorted`` placed in the rank order of ``order_source`` (last axis).

    ``target_sorted`` broadcasts against ``order_source``; ties in ``order_source`` are
    broken by position (stable sort), so the result is deterministic.
    """
    order = np.argsort(order_source, axis=-1, kind="stable")
    out = np.empty(order.shape, dtype=np.float64)
    np.put_along_axis(out, order, np.broadcast_to(target_sorted, order.shape), axis=-1)
    return out


def _randomised_phases(x, rngs, func: str, *, shared: bool) -> np.ndarray:
    """Validated input -> phase-randomised surrogates (independent or shared phases)."""
    x2, _ = _as_channels(x, func)
    rngs = _check_rngs(rngs, func)
    c, n = x2.shape
    spec = sfft.rfft(x2, axis=-1, workers=-1)
    return _phase_randomise(spec[None], _rotations(rngs, c, n, shared=shared), n)


def spectra(x, rngs, *, shared: bool = False) -> np.ndarray:
    """rfft spectra of the surrogates of :func:`fourier` (``shared=False``) or
    :func:`multivariate_fourier` (``shared=True``), without the inverse FFT: (B, C, N//2 + 1).

    ``irfft(spectra(x, rngs), n=N)`` equals ``fourier(x, rngs)`` exactly (same draws, same
    arithmetic); the pipeline's spectral path (:func:`syncstats.phase.phase_from_spectrum`)
    takes these directly, so a surrogate costs one inverse FFT in all.
    """
    func = "multivariate_fourier" if shared else "fourier"
    x2, _ = _as_channels(x, func)
    rngs = _check_rngs(rngs, func)
    c, n = x2.shape
    return sfft.rfft(x2, axis=-1, workers=-1)[None] * _rotations(rngs, c, n, shared=shared)


def fourier(x, rngs) -> np.ndarray:
    """Phase-randomised (FT) surrogates, each channel randomised independently.

    Parameters
    ----------
    x : array_like, shape (C, N) or (N,)
        Real signals, time on the last axis (any unit). A 1-D input is one channel.
    rngs : sequence of numpy.random.Generator, length B
        One generator per surrogate; surrogate ``b`` draws only from ``rngs[b]``.

    Returns
    -------
    numpy.ndarray, shape (B, C, N), float64
        Surrogates with exactly the periodogram of ``x`` (to rounding) and its mean.

    Notes
    -----
    With X_k = rfft(x)_k, the surrogate is irfft(X_k exp(i phi_k)), phi_k ~ U[0, 2 pi)
    independent for 0 < k < N/2 and for each channel; phi_0 = 0 and (even N) phi_{N/2} = 0,
    so the DC and Nyquist coefficients keep their original real values. Hence
    |S_k| = |X_k| for every k and mean(S) = mean(x). Each surrogate draws one (C, (N-1)//2)
    block of uniforms. The null hypothesis is a stationary linear Gaussian process; the
    end-point mismatch of ``x`` leaks into high frequencies, so crop first with
    :func:`match_endpoints`.

    References
    ----------
    Theiler J, Eubank S, Longtin A, Galdrikian B, Farmer JD (1992). Testing for
    nonlinearity in time series: the method of surrogate data. Physica D 58:77-94.

    Examples
    --------
    >>> import numpy as np
    >>> x = np.sin(2 * np.pi * np.arange(64) / 8)
    >>> s = fourier(x, [np.random.default_rng(0)])
    >>> s.shape
    (1, 1, 64)
    >>> bool(np.allclose(np.abs(np.fft.rfft(s[0, 0])), np.abs(np.fft.rfft(x))))
    True
    """
    return _randomised_phases(x, rngs, "fourier", shared=False)


def multivariate_fourier(x, rngs) -> np.ndarray:
    """Multivariate phase-randomised surrogates: one random phase per frequency, shared by all channels.

    Parameters
    ----------
    x : array_like, shape (C, N) or (N,)
        Real signals recorded together, time on the last axis.
    rngs : sequence of numpy.random.Generator, length B
        One generator per surrogate; surrogate ``b`` draws only from ``rngs[b]``.

    Returns
    -------
    numpy.ndarray, shape (B, C, N), float64
        Surrogates that keep every auto-spectrum |X_c,k|^2 and every cross-spectrum
        X_a,k conj(X_b,k) (magnitude and phase), hence all auto- and cross-correlations.

    Notes
    -----
    S_c = irfft(X_c,k exp(i phi_k)) with the same phi_k ~ U[0, 2 pi) for every channel c,
    0 < k < N/2; DC and Nyquist unchanged. Then S_a,k conj(S_b,k) = X_a,k conj(X_b,k)
    exactly. The null is a multivariate linear Gaussian process: rejecting it says the
    locking goes beyond what linear (cross-)correlation explains; it does **not** test
    independence (use :func:`fourier`, :func:`iaaft` or :func:`time_shift` for that).
    Each surrogate draws one ((N-1)//2,) block of uniforms.

    References
    ----------
    Prichard D, Theiler J (1994). Generating surrogate data for time series with several
    simultaneously measured variables. Phys Rev Lett 73:951-954.

    Examples
    --------
    >>> import numpy as np
    >>> t = np.arange(256)
    >>> x = np.stack([np.sin(2 * np.pi * t / 16), np.sin(2 * np.pi * t / 16 + 1.0)])
    >>> s = multivariate_fourier(x, [np.random.default_rng(1)])[0]
    >>> X, S = np.fft.rfft(x), np.fft.rfft(s)
    >>> bool(np.allclose(S[0] * np.conj(S[1]), X[0] * np.conj(X[1])))
    True
    """
    return _randomised_phases(x, rngs, "multivariate_fourier", shared=True)


def aaft(x, rngs) -> np.ndarray:
    """Amplitude-adjusted Fourier transform (AAFT) surrogates, channels independent.

    Parameters
    ----------
    x : array_like, shape (C, N) or (N,)
        Real signals, time on the last axis.
    rngs : sequence of numpy.random.Generator, length B
        One generator per surrogate; surrogate ``b`` draws only from ``rngs[b]``.

    Returns
    -------
    numpy.ndarray, shape (B, C, N), float64
        Each surrogate channel is a permutation of the values of the channel of ``x``.

    Notes
    -----
    Per channel (Theiler et al. 1992, section 2.4): (1) draw N standard normal values g,
    sort them and place them in the rank order of x, y = sort(g)[rank(x)];
    (2) phase-randomise y as in :func:`fourier`; (3) place the sorted values of x in the
    rank order of the result. The null is a monotone static transform of a linear
    Gaussian process. The spectrum is only approximately kept (flattened by step 3);
    :func:`iaaft` corrects this. Draw order per surrogate: a (C, N) normal block, then a
    (C, (N-1)//2) uniform block.

    References
    ----------
    Theiler J, Eubank S, Longtin A, Galdrikian B, Farmer JD (1992). Testing for
    nonlinearity in time series: the method of surrogate data. Physica D 58:77-94.

    Examples
    --------
    >>> import numpy as np
    >>> x = np.exp(np.sin(np.arange(100) / 3.0))
    >>> s = aaft(x, [np.random.default_rng(0), np.random.default_rng(1)])
    >>> bool(np.array_equal(np.sort(s[1, 0]), np.sort(x)))
    True
    """
    x2, _ = _as_channels(x, "aaft")
    rngs = _check_rngs(rngs, "aaft")
    c, n = x2.shape
    x_sorted = np.sort(x2, axis=-1)
    gauss = np.stack([np.sort(r.standard_normal((c, n)), axis=-1) for r in rngs])
    # Rotations are drawn after the normals, per surrogate, so draw order is fixed.
    rot = _rotations(rngs, c, n, shared=False)
    y = np.empty_like(gauss)
    order_x = np.argsort(x2, axis=-1, kind="stable")
    np.put_along_axis(y, np.broadcast_to(order_x, gauss.shape), gauss, axis=-1)
    y_ft = _phase_randomise(sfft.rfft(y, axis=-1, workers=-1), rot, n)
    return _rank_remap(x_sorted, y_ft)


def iaaft(x, rngs, *, max_iter: int = 200, return_info: bool = False):
    """Iterative amplitude-adjusted Fourier transform (IAAFT) surrogates, channels independent.

    Parameters
    ----------
    x : array_like, shape (C, N) or (N,)
        Real signals, time on the last axis.
    rngs : sequence of numpy.random.Generator, length B
        One generator per surrogate; surrogate ``b`` draws only from ``rngs[b]``.
    max_iter : int, default 200
        Cap on the number of iterations per surrogate channel (>= 1).
    return_info : bool, default False
        Also return a dict with the per-channel iteration counts and convergence flags.

    Returns
    -------
    surrogates : numpy.ndarray, shape (B, C, N), float64
        Each surrogate channel is an exact permutation of the values of that channel of x.
    info : dict
        Only when ``return_info``: ``"iterations"`` (B, C) int, the iterations each
        surrogate channel ran (the last one is the iteration that found no change), and
        ``"converged"`` (B, C) bool, False where the cap stopped the iteration.

    Notes
    -----
    Schreiber & Schmitz (1996): start from a random permutation r_0 of x (per channel).
    Iterate (a) s_n = irfft(|X_k| exp(i arg rfft(r_n)_k)) -- impose the original Fourier
    amplitudes, keep the phases -- and (b) r_{n+1} = sort(x)[rank(s_n)] -- impose the
    original values. Stop when r_{n+1} = r_n (the rank order no longer changes) or after
    ``max_iter`` iterations; the returned r is after step (b), so the value distribution is
    exact and the spectrum approximate (its error is what remains at the fixed point).
    Convergence is tracked per surrogate channel: a channel that has converged is removed
    from the working set and never updated again, so the result of a surrogate does not
    depend on the batch it was generated in. The iteration is vectorised over the
    channels still active, whose rows are split over the available CPU cores (threads;
    each row's arithmetic is the same in any split). "No change" is tested on the
    values, i.e. the rank order up to ties in x. Draw order per surrogate: one (C, N)
    permutation block (``Generator.permuted``).

    References
    ----------
    Schreiber T, Schmitz A (1996). Improved surrogate data for nonlinearity tests.
    Phys Rev Lett 77:635-638.

    Examples
    --------
    >>> import numpy as np
    >>> x = np.sin(np.arange(512) / 4.0) ** 3
    >>> s, info = iaaft(x, [np.random.default_rng(0)], return_info=True)
    >>> bool(np.array_equal(np.sort(s[0, 0]), np.sort(x))), bool(info["converged"][0, 0])
    (True, True)
    """
    x2, _ = _as_channels(x, "iaaft")
    rngs = _check_rngs(rngs, "iaaft")
    max_iter = _check_int(max_iter, "max_iter", "iaaft", low=1)
    c, n = x2.shape
    b_count = len(rngs)
    x_sorted = np.sort(x2, axis=-1)
    amp = np.abs(sfft.rfft(x2, axis=-1, workers=-1))

    base = np.broadcast_to(np.arange(n), (c, n))
    perms = np.stack([r.permuted(base, axis=-1) for r in rngs])  # (B, C, N)
    cur = np.take_along_axis(np.broadcast_to(x2, perms.shape), perms, axis=-1).reshape(b_count * c, n)
    chan = np.tile(np.arange(c), b_count)
    iters = np.zeros(b_count * c, dtype=np.int64)
    converged = np.zeros(b_count * c, dtype=bool)
    active = np.arange(b_count * c)
    order = None  # rank order of the previous iteration, rows aligned with `active`

    n_threads = min(_n_cpus(), active.size)
    with ThreadPoolExecutor(max_workers=n_threads) as pool:
        for it in range(1, max_iter + 1):
            all_active = active.size == cur.shape[0]
            rows = cur if all_active else cur[active]  # updated in place below
            ch = chan[active]
            prev = order if it >= _PRESORT_FROM else None
            order = np.empty(rows.shape, dtype=np.intp)
            changed = np.empty(active.size, dtype=bool)

            def work(sl, rows=rows, ch=ch, prev=prev, order=order, changed=changed):
                new, order[sl], changed[sl] = _iaaft_step(
                    rows[sl],
                    amp if c == 1 else amp[ch[sl]],
                    x_sorted if c == 1 else x_sorted[ch[sl]],
                    None if prev is None else prev[sl],
                )
                rows[sl] = new

            edges = np.linspace(0, active.size, min(n_threads, active.size) + 1).astype(int)
            for _ in pool.map(work, [slice(lo, hi) for lo, hi in zip(edges[:-1], edges[1:])]):
                pass
            if not all_active:
                cur[active] = rows
            iters[active] += 1
            converged[active[~changed]] = True
            if not changed.all():
                active = active[changed]
                order = order[changed]
            if active.size == 0:
                break

    out = cur.reshape(b_count, c, n)
    if return_info:
        return out, {"iterations": iters.reshape(b_count, c), "converged": converged.reshape(b_count, c)}
    return out
