"""Noise-driven damped linear oscillators: narrow-band noise, not self-sustained."""
from __future__ import annotations

import math

import numpy as np
from scipy.linalg import cholesky, eigh, expm, solve_discrete_lyapunov

from ._common import (DENSE_MAX_UNITS, Simulation, _fail, add_measurement_noise,
                      check_coupling, check_n_replicas, check_n_units, check_time_grid,
                      check_vector, coupling_summary, replica_streams)
from ._phase_models import _finish

__all__ = ["damped_noise_oscillator"]

TWO_PI = 2.0 * math.pi


def _psd_sqrt(Q: np.ndarray) -> np.ndarray:
    """A matrix L with L L^T = Q for a symmetric positive semi-definite Q."""
    try:
        return cholesky(Q, lower=True)
    except np.linalg.LinAlgError:
        w, v = eigh(Q)
        return v * np.sqrt(np.clip(w, 0.0, None))


def _discretise(A: np.ndarray, BBt: np.ndarray, h: float):
    """Exact transition F = exp(A h) and noise covariance Q over one step (Van Loan)."""
    n = A.shape[0]
    Mx = np.zeros((2 * n, 2 * n))
    Mx[:n, :n] = -A
    Mx[:n, n:] = BBt
    Mx[n:, n:] = A.T
    E = expm(Mx * h)
    F = E[n:, n:].T
    Q = F @ E[:n, n:]
    return F, 0.5 * (Q + Q.T)


def damped_noise_oscillator(n_units, duration, fs, *, freqs, coupling=0.0, damping=0.05,
                            noise=None, measurement_noise=0.0, n_replicas=None,
                            rng=None) -> Simulation:
    r"""Damped harmonic oscillators driven by white noise (a null model: no limit cycle).

    Each unit is narrow-band Gaussian noise centred near ``freqs``: it looks rhythmic,
    but it has no self-sustained oscillation, so it cannot synchronise. Independent
    units with similar frequencies are the classic trap for phase-locking statistics
    computed after narrow band-pass filtering.

    Parameters
    ----------
    n_units, duration, fs, measurement_noise, n_replicas, rng
        As in :func:`phase_oscillators`.
    freqs : float or array_like (N,)
        Undamped natural frequencies f0 in Hz.
    coupling : float or array_like
        ``coupling[i, j]`` = K_ij (dimensionless): unit j pulls unit i with force
        omega_i^2 K_ij (x_j - x_i). Linear coupling makes the units correlated (coherent)
        but still not synchronised in the sense of self-sustained oscillators.
    damping : float or array_like (N,)
        Damping ratio zeta (quality factor 1 / (2 zeta)); default 0.05.
    noise : float, array_like (N,) or None
        Forcing intensity sigma (signal units per s^1.5). ``None`` chooses, per unit,
        sigma = 2 sqrt(zeta omega0^3), which gives an uncoupled unit a stationary SD
        of 1.

    Returns
    -------
    Simulation
        ``signals`` = x; ``phases`` = unwrapped atan2(-x'/omega0, x) (a protophase that
        can run backwards when the amplitude is small).

    Notes
    -----
    .. math::

        \ddot x_i + 2\zeta_i\omega_i \dot x_i + \omega_i^2 x_i
            = \omega_i^2 \sum_j K_{ij}(x_j - x_i) + \sigma_i \xi_i(t).

    The linear SDE is discretised exactly at the output step h = 1/fs (no step
    error): X_{n+1} = F X_n + eta_n, F = exp(A h), Cov(eta) = int_0^h e^{As} B B^T
    e^{A^T s} ds, computed with Van Loan's (1978) block-matrix exponential. The first
    sample is drawn from the stationary distribution (discrete Lyapunov equation), so
    there is no transient. Stationary variance of an uncoupled unit:
    sigma^2 / (4 zeta omega0^3) (Uhlenbeck & Ornstein 1930).

    References
    ----------
    Uhlenbeck GE, Ornstein LS (1930) On the theory of the Brownian motion. Phys Rev
    36:823-841.
    Van Loan CF (1978) Computing integrals involving the matrix exponential. IEEE Trans
    Autom Control 23:395-404.
    """
    func = "damped_noise_oscillator"
    N = check_n_units(n_units, func)
    if N > DENSE_MAX_UNITS:
        _fail(f"{func}: at most {DENSE_MAX_UNITS} units are supported, got n_units={N}; "
              f"simulate fewer units.")
    T = check_time_grid(duration, fs, func)
    fs = float(fs)
    f = check_vector(freqs, N, "freqs", func, positive=True)
    n_rep = check_n_replicas(n_replicas, func)
    R = n_rep or 1
    C, _ = check_coupling(coupling, N, R, func)
    zeta = check_vector(damping, N, "damping", func, positive=True)
    w0 = TWO_PI * f
    if noise is None:
        sig = 2.0 * np.sqrt(zeta * w0 ** 3)
    else:
        sig = check_vector(noise, N, "noise", func, nonneg=True)
    meas = check_vector(measurement_noise, N, "measurement_noise", func, nonneg=True)
    h = 1.0 / fs
    Fs, Ls, L0s = [], [], []
    BBt = np.zeros((2 * N, 2 * N))
    BBt[N:, N:] = np.diag(sig ** 2)
    for r in range(C.shape[0]):
        K = C[r]
        A = np.zeros((2 * N, 2 * N))
        A[:N, N:] = np.eye(N)
        A[N:, :N] = -np.diag(w0 ** 2) + (w0 ** 2)[:, None] * (K - np.diag(K.sum(axis=1)))
        A[N:, N:] = -np.diag(2.0 * zeta * w0)
        if np.max(np.linalg.eigvals(A).real) >= 0:
            _fail(f"{func}: this coupling makes the linear system unstable (an eigenvalue "
                  f"with non-negative real part); use smaller or positive coupling "
                  f"values.")
        F, Q = _discretise(A, BBt, h)
        P = solve_discrete_lyapunov(F, Q)
        Fs.append(F)
        Ls.append(_psd_sqrt(Q))
        L0s.append(_psd_sqrt(0.5 * (P + P.T)))
    F = np.array(Fs)      # (R or 1, 2N, 2N)
    Lq = np.array(Ls)
    L0 = np.array(L0s)
    streams = replica_streams(rng, R, func=func)
    X = np.stack([L0[min(r, L0.shape[0] - 1)] @ streams[r][0].standard_normal(2 * N)
                  for r in range(R)])  # (R, 2N)
    out = np.empty((T, R, 2 * N))
    out[0] = X
    chunk = 4096
    FT = np.transpose(F, (0, 2, 1))
    LT = np.transpose(Lq, (0, 2, 1))
    shared = F.shape[0] == 1
    for s0 in range(1, T, chunk):
        n = min(chunk, T - s0)
        Z = np.stack([streams[r][1].standard_normal((n, 2 * N)) for r in range(R)], axis=1)
        E = (Z @ LT[0]) if shared else np.einsum("nri,rij->nrj", Z, LT)
        for k in range(n):
            X = (X @ FT[0] if shared else np.einsum("ri,rij->rj", X, FT)) + E[k]
            out[s0 + k] = X
    x = np.transpose(out[:, :, :N], (1, 2, 0))           # (R, N, T)
    v = np.transpose(out[:, :, N:], (1, 2, 0))
    phases = np.unwrap(np.arctan2(-v / w0[None, :, None], x), axis=-1)
    signals = add_measurement_noise(x, meas, [s[2] for s in streams])
    params = {"integrator": "exact discretisation (Van Loan)", "dt_s": h, "substeps": 1,
              "scheme": "exact linear-Gaussian transition at the output step",
              "n_units": N, "freqs_hz": f.tolist(), "damping": zeta.tolist(),
              "noise": sig.tolist(), "measurement_noise": meas.tolist(),
              "coupling": coupling_summary(C, None)}
    return _finish(func, signals, phases, None, fs, n_rep, params)
