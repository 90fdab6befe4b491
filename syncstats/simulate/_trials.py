"""Repeated trials in which two rhythms lock only during a stretch after a stimulus."""
from __future__ import annotations

import numpy as np

from .._rng import as_seed_sequence
from ._common import Simulation, check_real, frozen
from ._phase_models import phase_oscillators

__all__ = ["stimulus_locked_trials"]


def stimulus_locked_trials(n_trials, duration, fs, *, freq=10.0, detuning=0.02, coupling=6.0, noise=1.0,
                           lock_start_s=None, lock_end_s=None, ramp_s=0.1, measurement_noise=0.3,
                           rng=None) -> Simulation:
    """Trials of two noisy phase oscillators A and B that are 1:1 locked only within
    ``[lock_start_s, lock_end_s]`` of every trial.

    Each trial runs (i) a coupled pair (A, B*) — sine-coupled phase oscillators
    (:func:`phase_oscillators`, coupling ``coupling`` rad/s each way, B detuned by
    ``detuning``) — and (ii) an independent free copy B0 of B, all from random initial
    phases. B follows B0 outside the locked stretch and B* inside it, joined by linear
    ramps of ``ramp_s`` seconds on the unwrapped phase (B = B0 + w(t)·(B* − B0 − 2πk),
    k fixed so that the joint is within ±π): a continuous, monotone phase. Across trials,
    psi = phi_A − phi_B is then concentrated inside the stretch (at the pair's locked
    offset) and uniform outside it. ``lock_start_s=None`` gives no locking at all (every
    trial independent: a null scenario).

    Returns
    -------
    Simulation
        ``signals`` and ``phases`` of shape (n_trials, 2, n_samples): cos(phase) plus white
        measurement noise (fraction of the clean SD); ``params`` holds the stretch.
    """
    func = "stimulus_locked_trials"
    n_trials = int(check_real(n_trials, "n_trials", func, low=1, integer=True))
    duration = check_real(duration, "duration", func, low=0, low_open=True)
    fs = check_real(fs, "fs", func, low=0, low_open=True)
    root = as_seed_sequence(rng)
    kid = lambda s: np.random.SeedSequence(root.entropy, spawn_key=tuple(root.spawn_key) + (s,))  # noqa: E731
    f_b = freq * (1 + detuning)
    pair = phase_oscillators(2, duration, fs, freqs=[freq, f_b], coupling=[[0, coupling], [coupling, 0]],
                             noise=noise, n_replicas=n_trials, rng=kid(0))
    free = phase_oscillators(1, duration, fs, freqs=[f_b], noise=noise, n_replicas=n_trials, rng=kid(1))
    phi_a, phi_b = pair.phases[:, 0], free.phases[:, 0].copy()
    t = np.arange(phi_a.shape[-1]) / fs
    if lock_start_s is not None:
        lock_start_s = check_real(lock_start_s, "lock_start_s", func, low=0)
        lock_end_s = check_real(duration if lock_end_s is None else lock_end_s, "lock_end_s", func, low=lock_start_s)
        ramp_s = check_real(ramp_s, "ramp_s", func, low=0, low_open=True)
        w = np.clip(np.minimum((t - lock_start_s) / ramp_s + 1, (lock_end_s - t) / ramp_s + 1), 0, 1)
        d = pair.phases[:, 1] - phi_b
        i0 = min(int(round(lock_start_s * fs)), t.size - 1)
        d -= 2 * np.pi * np.round(d[:, i0:i0 + 1] / (2 * np.pi))
        phi_b = phi_b + w * d
    phases = np.stack([phi_a, phi_b], axis=1)
    clean = np.cos(phases)
    gen = np.random.default_rng(kid(2))
    level = check_real(measurement_noise, "measurement_noise", func, low=0)
    signals = clean + level * clean.std(axis=-1, keepdims=True) * gen.standard_normal(clean.shape)
    params = dict(n_trials=n_trials, duration=duration, freq=freq, detuning=detuning, coupling=coupling, noise=noise,
                  lock_start_s=lock_start_s, lock_end_s=lock_end_s, ramp_s=ramp_s,
                  measurement_noise=measurement_noise)
    return Simulation(signals=signals, fs=fs, phases=phases, events=None, model=func, params=frozen(params))
