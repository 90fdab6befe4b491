"""Glue between a model description and the integrators (private)."""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from ._common import _fail, add_measurement_noise, check_choice
from ._integrate import (Recorder, compile_drift, compile_heun, heun_fixed_step,
                         list_stepper, solve_ivp_run)

__all__ = ["ModelSpec", "coupling_terms", "run_model", "INTEGRATORS"]

INTEGRATORS = ("auto", "fixed", "solve_ivp")


@dataclass
class ModelSpec:
    """What a simulator tells the runner.

    ``build(coupling, scalar)``: for unit-by-unit models (``matrix=False``) returns
    ``(emit, namespace)`` for :func:`compile_heun`, where ``coupling`` is the list of
    nonzero terms ``(i, j, k_ij)`` (k a float, or an (R, 1) array when it varies across
    replicas); for ``matrix=True`` returns a list-based ``drift(x, u)`` and receives the
    (R or 1, N, N) coupling array. ``initial(gen)`` gives the V initial values of one
    replica (floats if M == 1, (M,) arrays otherwise). ``sigma`` has shape (V, M), in
    state units per sqrt(second).
    """

    name: str
    n_units: int
    n_vars: int
    matrix: bool
    build: Callable
    sigma: np.ndarray
    initial: Callable
    observe_signal: Callable
    observe_angle: Callable
    dt_max: float
    angle_unwrapped: bool = False
    fullres_angle: bool = False
    complex_state: bool = False
    ivp_method: str = "DOP853"
    ivp_rtol: float = 1e-6
    ivp_atol: float = 1e-8
    event_level: float | None = None
    event_units: tuple | None = None
    inputs: Callable | None = None
    n_inputs: int = 0


def coupling_terms(C: np.ndarray):
    """Nonzero entries of C (R, N, N) as (i, j, k_ij); k_ij a float or an (R, 1) array."""
    terms = []
    R, N, _ = C.shape
    for i in range(N):
        for j in range(N):
            col = C[:, i, j]
            if np.any(col != 0):
                terms.append((i, j, float(col[0]) if R == 1 else col[:, None].copy()))
    return terms


def choose_substeps(fs: float, dt_max: float, dt, func: str) -> int:
    """Internal steps per output sample (>= 2 by default, >= 1 if ``dt`` is given)."""
    if dt is None:
        return max(2, math.ceil(1.0 / (fs * dt_max) - 1e-9))
    if (isinstance(dt, bool) or not isinstance(dt, (int, float, np.floating))
            or not math.isfinite(dt) or dt <= 0):
        _fail(f"{func}: parameter dt must be a positive number of seconds or None, got "
              f"{dt!r}; pass e.g. dt=0.001 or leave it None.")
    return max(1, math.ceil(1.0 / (fs * dt) - 1e-9))


def _namespace(scalar: bool) -> dict:
    if scalar:
        return {"sin": math.sin, "cos": math.cos, "exp": math.exp}
    return {"sin": np.sin, "cos": np.cos, "exp": np.exp}


def integrate_spec(spec: ModelSpec, *, n_steps: int, h: float, every: int, n_out: int,
                   n_rep: int, inits, noise_gens, coupling: np.ndarray, integrator: str,
                   force_array: bool = False, chunk: int = 2048) -> Recorder:
    """Run ``spec`` and return the filled :class:`Recorder`."""
    N = spec.n_units
    M = N if spec.matrix else 1
    V = spec.n_vars
    scalar = (integrator == "fixed" and n_rep == 1 and not spec.matrix
              and coupling.shape[0] == 1 and not force_array)
    dtype = complex if spec.complex_state else float
    if scalar:
        conv = complex if spec.complex_state else float
        x0 = [conv(v) for v in inits[0]]
    else:
        x0 = [np.array([np.reshape(inits[r][v], (M,)) for r in range(n_rep)], dtype=dtype)
              for v in range(V)]
    sigma = np.broadcast_to(np.asarray(spec.sigma, dtype=float), (V, M))[:, None, :]
    noisy = bool(np.any(sigma != 0))
    rec = Recorder(spec, n_rep=n_rep, n_units=N, n_out=n_out, every=every, dt=h)
    if spec.matrix:
        drift = spec.build(coupling, scalar)
        step_fn = list_stepper(drift, noisy)
    else:
        emit, ns = spec.build(coupling_terms(coupling), scalar)
        ns = {**_namespace(scalar), **ns}
        if integrator == "fixed":
            step_fn = compile_heun(emit, V, spec.n_inputs, noisy, ns)
        else:
            drift = compile_drift(emit, V, spec.n_inputs, ns)
    if integrator == "fixed":
        heun_fixed_step(step_fn, x0, dt=h, n_steps=n_steps, sigma=sigma,
                        noise_gens=noise_gens, sink=rec, inputs=spec.inputs,
                        n_inputs=spec.n_inputs, complex_state=spec.complex_state,
                        chunk=chunk)
    else:
        solve_ivp_run(drift, x0, dt=h, n_steps=n_steps, sink=rec, inputs=spec.inputs,
                      n_inputs=spec.n_inputs, complex_state=spec.complex_state,
                      method=spec.ivp_method, rtol=spec.ivp_rtol, atol=spec.ivp_atol)
    return rec


def run_model(spec: ModelSpec, *, n_samples: int, fs: float, n_rep: int, streams,
              coupling: np.ndarray, integrator: str, dt, measurement_noise: np.ndarray,
              func: str, force_array: bool = False, chunk: int = 2048):
    """Simulate ``spec`` on the output grid; returns (signals, phases, events, params)."""
    check_choice(integrator, "integrator", INTEGRATORS, func)
    noisy = bool(np.any(np.asarray(spec.sigma) != 0))
    if integrator == "auto":
        integrator = "fixed" if noisy else "solve_ivp"
    if integrator == "solve_ivp" and noisy:
        _fail(f"{func}: integrator='solve_ivp' is for noise-free runs but noise > 0; use "
              f"integrator='fixed' (or 'auto') or set noise=0.")
    k = choose_substeps(fs, spec.dt_max, dt, func)
    h = 1.0 / (fs * k)
    inits = [spec.initial(streams[r][0]) for r in range(n_rep)]
    rec = integrate_spec(spec, n_steps=(n_samples - 1) * k, h=h, every=k, n_out=n_samples,
                         n_rep=n_rep, inits=inits, noise_gens=[s[1] for s in streams],
                         coupling=coupling, integrator=integrator,
                         force_array=force_array, chunk=chunk)
    signals = add_measurement_noise(rec.signals, measurement_noise,
                                    [s[2] for s in streams])
    events = rec.events() if spec.event_level is not None else None
    params = {"integrator": integrator, "dt_s": h, "substeps": k,
              "scheme": ("stochastic Heun, fixed step" if integrator == "fixed"
                         else f"scipy.integrate.solve_ivp ({spec.ivp_method}, rtol "
                              f"{spec.ivp_rtol:g}, atol {spec.ivp_atol:g})")}
    return signals, rec.phases, events, params
