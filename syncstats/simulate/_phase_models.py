"""Phase oscillators, Stuart-Landau oscillators and quasi-periodic units."""
from __future__ import annotations

import math

import numpy as np

from ._common import (DENSE_MAX_UNITS, Simulation, _fail, check_coupling,
                      check_n_replicas, check_n_units, check_ratio, check_real,
                      check_time_grid, check_vector, coupling_summary, frozen, pair_ratio,
                      replica_streams)
from ._runner import ModelSpec, run_model

__all__ = ["phase_oscillators", "stuart_landau", "quasi_periodic"]

TWO_PI = 2.0 * math.pi
GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0  # 0.618..., the "most irrational" frequency ratio
_MATRIX_MODE_UNITS = 8  # above this many units the phase model works on (R, N) arrays


def _common_inputs(func, n_units, duration, fs, freqs, coupling, noise, measurement_noise,
                   n_replicas, ratio=None, min_units=1, signed_freqs=False, large_n=False):
    N = check_n_units(n_units, func, minimum=min_units)
    if not large_n and N > DENSE_MAX_UNITS:
        _fail(f"{func}: at most {DENSE_MAX_UNITS} units are supported by this model, got "
              f"n_units={N}; use phase_oscillators for large populations.")
    T = check_time_grid(duration, fs, func)
    f = check_vector(freqs, N, "freqs", func, positive=not signed_freqs)
    n_rep = check_n_replicas(n_replicas, func)
    R = n_rep or 1
    C, is_global = check_coupling(coupling, N, R, func, dense=not large_n)
    sig = check_vector(noise, N, "noise", func, nonneg=True)
    meas = check_vector(measurement_noise, N, "measurement_noise", func, nonneg=True)
    m = check_ratio(ratio, N, func)
    return N, T, float(fs), f, n_rep, R, C, is_global, sig, meas, m


def _finish(model, signals, phases, events, fs, n_rep, params):
    if n_rep is None:
        signals, phases = signals[0], phases[0]
        if events is not None:
            events = events[0]
    return Simulation(signals=signals, fs=fs, phases=phases, events=events, model=model,
                      params=frozen(params))


def _unit_var(states, n_vars, var):
    """(n, V, R, 1) unit-major states -> (n, R, N) for variable ``var``."""
    return np.transpose(states[:, var::n_vars, :, 0], (0, 2, 1))


def _mul(c: int, name: str) -> str:
    return name if c == 1 else f"{c} * {name}"


def _coupling_ns(terms, m):
    """Namespace entries ``c_k{i}_{j}`` and the list (i, j, p, q) of coupling terms."""
    ns, tt = {}, []
    for i, j, k in terms:
        p, q = pair_ratio(m[i], m[j])
        ns[f"c_k{i}_{j}"] = k
        tt.append((i, j, p, q))
    return ns, tt


def _sine_terms(d, x, tt):
    """Add the sine coupling sum_j K_ij sin(p x_j - q x_i) to derivative strings."""
    for i, j, p, q in tt:
        d[i] += f" + c_k{i}_{j} * sin({_mul(p, x[j])} - {_mul(q, x[i])})"
    return d


# =========================================================================== phase model
def _rate_hz(omega, C, m, k_global=None):
    """Fastest rate in the phase equations (Hz): |omega| plus the largest coupling sum."""
    if k_global is not None:
        ksum = float(np.max(np.abs(k_global)))
    else:
        ksum = float(np.max(np.sum(np.abs(C), axis=-1)))
    return (float(np.max(np.abs(omega))) + ksum * float(np.max(m))) / TWO_PI


def _phase_spec(N, omega, C, k_global, sigma, m, event_level=None):
    uniform = bool(np.all(m == m[0]))
    matrix = N > _MATRIX_MODE_UNITS
    rate = _rate_hz(omega, C, m, k_global)
    dt_max = 1.0 / (100.0 * rate) if rate > 0 else math.inf

    if matrix:
        if C is None and not (k_global is not None and uniform):
            C, _ = check_coupling(k_global, N, k_global.size, "phase_oscillators")
        if k_global is not None and uniform:
            Kg = k_global.reshape(-1, 1)  # global K per replica

            def build(coup, scalar):
                om = omega[None, :]

                def drift(x, u):
                    s, c = np.sin(x[0]), np.cos(x[0])
                    S = s.mean(axis=1, keepdims=True)
                    Cm = c.mean(axis=1, keepdims=True)
                    return [om + Kg * (S * c - Cm * s)]
                return drift
        elif uniform:
            def build(coup, scalar):
                om = omega[None, :]
                K = C  # (R or 1, N, N)

                def drift(x, u):
                    s, c = np.sin(x[0]), np.cos(x[0])
                    Ks = np.einsum("rij,rj->ri", K, s) if K.shape[0] > 1 else s @ K[0].T
                    Kc = np.einsum("rij,rj->ri", K, c) if K.shape[0] > 1 else c @ K[0].T
                    return [om + c * Ks - s * Kc]
                return drift
        else:
            P = np.empty((N, N))
            Q = np.empty((N, N))
            for i in range(N):
                for j in range(N):
                    P[i, j], Q[i, j] = pair_ratio(m[i], m[j])

            def build(coup, scalar):
                om = omega[None, :]
                K = C

                def drift(x, u):
                    ph = x[0]
                    arg = P[None] * ph[:, None, :] - Q[None] * ph[:, :, None]
                    return [om + np.sum(K * np.sin(arg), axis=-1)]
                return drift

        def initial(gen):
            return [gen.uniform(0.0, TWO_PI, N)]

        return ModelSpec(name="phase_oscillators", n_units=N, n_vars=1, matrix=True,
                         build=build, sigma=sigma[None, :], initial=initial,
                         observe_signal=lambda st: np.cos(st[:, 0]),
                         observe_angle=lambda st: st[:, 0], angle_unwrapped=True,
                         dt_max=dt_max, event_level=event_level, ivp_rtol=1e-10,
                         ivp_atol=1e-10)

    def build(terms, scalar):
        ns, tt = _coupling_ns(terms, m)
        ns.update({f"c_om{i}": float(omega[i]) for i in range(N)})

        def emit(x, u, tmp):
            return [], _sine_terms([f"c_om{i}" for i in range(N)], x, tt)
        return emit, ns

    def initial(gen):
        return list(gen.uniform(0.0, TWO_PI, N))

    return ModelSpec(name="phase_oscillators", n_units=N, n_vars=N, matrix=False,
                     build=build, sigma=sigma[:, None], initial=initial,
                     observe_signal=lambda st: np.cos(_unit_var(st, 1, 0)),
                     observe_angle=lambda st: _unit_var(st, 1, 0), angle_unwrapped=True,
                     dt_max=dt_max, event_level=event_level, ivp_rtol=1e-10,
                     ivp_atol=1e-10)


def phase_oscillators(n_units, duration, fs, *, freqs, coupling=0.0, ratio=None, noise=0.0,
                      measurement_noise=0.0, n_replicas=None, dt=None, integrator="auto",
                      rng=None) -> Simulation:
    r"""Noisy phase oscillators with sine (Kuramoto/Adler) coupling, 1:1 or n:m.

    Parameters
    ----------
    n_units : int
        Number of oscillators N.
    duration : float
        Length of the output in seconds.
    fs : float
        Output sampling rate in Hz.
    freqs : float or array_like, shape (N,)
        Natural frequencies f_i in Hz (omega_i = 2 pi f_i). Zero or negative values
        are allowed here (a rotating frame, e.g. a Kuramoto population centred at 0).
    coupling : float, array_like (n_replicas,), (N, N) or (n_replicas, N, N)
        ``coupling[i, j]`` = K_ij in rad/s, the strength with which unit j acts on unit
        i (rows receive, columns drive; a directed coupling has one of K_ij, K_ji zero).
        A scalar K means global coupling K/N between all units (Kuramoto's
        normalisation); a 1-D array gives one global K per replica. Default 0.
    ratio : sequence of N positive ints, optional
        Cycle numbers m_i: unit i completes m_i cycles while unit j completes m_j. For
        a pair, ``ratio=(p, q)`` is the ratio p:q (unit 0 = A makes p cycles
        while unit 1 = B makes q). Default: all 1 (1:1).
    noise : float or array_like (N,)
        Intrinsic noise sigma_i in rad/sqrt(s) (phase diffusion: the phase variance of a
        free unit grows as sigma_i^2 t).
    measurement_noise : float or array_like (N,)
        SD of white Gaussian noise added to each output signal, as a fraction of that
        signal's noise-free SD.
    n_replicas : int or None
        ``None``: arrays of shape (N, n_samples). An int R: independent replicas, shape
        (R, N, n_samples); replica i is identical whatever R is.
    dt : float or None
        Internal step in seconds, rounded down to 1/(k fs) for an integer k. Default:
        at most 1/(100 r) with r = max|f_i| + max_i sum_j |K_ij| max(m) / (2 pi) (Hz),
        and at most half the output step.
    integrator : {"auto", "fixed", "solve_ivp"}
        "auto" = fixed-step stochastic Heun when any noise > 0, otherwise
        ``scipy.integrate.solve_ivp`` (DOP853).
    rng : int, numpy.random.Generator or None
        Seeds everything (initial phases, intrinsic and measurement noise).

    Returns
    -------
    Simulation
        ``signals`` = cos(phi) (+ measurement noise), ``phases`` = phi (unwrapped),
        ``events`` = None.

    Notes
    -----
    .. math::

        d\phi_i = \Big[\omega_i + \sum_j K_{ij} \sin(p_{ij}\phi_j - q_{ij}\phi_i)\Big]dt
                  + \sigma_i\, dW_i ,

    where (p_ij, q_ij) = (m_i, m_j)/gcd(m_i, m_j). For a pair with ratio p:q the
    generalised phase difference psi = q phi_A - p phi_B obeys the Adler equation
    d psi/dt = (q omega_A - p omega_B) - (q K_AB + p K_BA) sin psi (+ noise): it locks
    iff |q omega_A - p omega_B| < q K_AB + p K_BA, and otherwise slips with beat
    frequency sqrt(Delta^2 - (q K_AB + p K_BA)^2) (rad/s). With K_AB = K_BA = eps and
    1:1 this is the textbook |Delta omega| < 2 eps.
    For more than 8 units the drift is computed on (replica, unit) arrays (mean field
    for a scalar coupling: K (S cos phi_i - C sin phi_i) with C + iS = mean exp(i phi)).

    References
    ----------
    Adler R (1946) A study of locking phenomena in oscillators. Proc IRE 34:351-357.
    Kuramoto Y (1975) Self-entrainment of a population of coupled non-linear
    oscillators. Lecture Notes in Physics 39:420-422.
    Pikovsky A, Rosenblum M, Kurths J (2001) Synchronization. Cambridge Univ Press,
    ch. 3 and 7.

    Examples
    --------
    >>> sim = phase_oscillators(2, 10.0, 100.0, freqs=[1.0, 1.05], coupling=[[0, 1], [1, 0]],
    ...                         rng=1)
    >>> sim.signals.shape
    (2, 1000)
    """
    func = "phase_oscillators"
    N, T, fs, f, n_rep, R, C, is_global, sig, meas, m = _common_inputs(
        func, n_units, duration, fs, freqs, coupling, noise, measurement_noise, n_replicas,
        ratio, signed_freqs=True, large_n=True)
    omega = TWO_PI * f
    spec = _phase_spec(N, omega, C, is_global, sig, m)
    streams = replica_streams(rng, R, func=func)
    signals, phases, events, params = run_model(
        spec, n_samples=T, fs=fs, n_rep=R, streams=streams,
        coupling=C if C is not None else np.zeros((is_global.size, 1, 1)),
        integrator=integrator, dt=dt, measurement_noise=meas, func=func)
    params.update(n_units=N, freqs_hz=f.tolist() if N <= 64 else "per unit (not stored)",
                  ratio=m.tolist() if N <= 64 else "per unit (not stored)",
                  noise=sig.tolist() if N <= 64 else float(sig.max()),
                  measurement_noise=meas.tolist() if N <= 64 else float(meas.max()),
                  coupling=coupling_summary(C, is_global))
    return _finish(func, signals, phases, events, fs, n_rep, params)


# =========================================================================== Stuart-Landau
def _sl_spec(N, omega, lam, C, sigma, m):
    def build(terms, scalar):
        ns, tt = _coupling_ns(terms, m)
        ns.update({f"c_iom{i}": complex(0.0, float(omega[i])) for i in range(N)})
        ns.update({f"c_la{i}": float(lam[i]) for i in range(N)})

        def emit(x, u, tmp):
            st = [f"{tmp}r{i} = {x[i]}.real * {x[i]}.real + {x[i]}.imag * {x[i]}.imag"
                  for i in range(N)]
            d = [f"{x[i]} * (c_la{i} * (1.0 - {tmp}r{i}) + c_iom{i})" for i in range(N)]
            for i, j, p, q in tt:
                drive = x[j] if p == 1 else f"{x[j]} ** {p}"
                if q == 2:
                    drive = f"{drive} * {x[i]}.conjugate()"
                elif q > 2:
                    drive = f"{drive} * {x[i]}.conjugate() ** {q - 1}"
                d[i] += f" + c_k{i}_{j} * ({drive} - {x[i]})"
            return st, d
        return emit, ns

    def initial(gen):
        return list(np.exp(1j * gen.uniform(0.0, TWO_PI, N)))

    def zs(states):
        return np.transpose(states[:, :, :, 0], (0, 2, 1))

    dt_max = min(1.0 / (100.0 * _rate_hz(omega, C, m)), 0.1 / max(float(lam.max()), 1e-12))
    return ModelSpec(name="stuart_landau", n_units=N, n_vars=N, matrix=False,
                     build=build, sigma=sigma[:, None], initial=initial,
                     observe_signal=lambda st: zs(st).real,
                     observe_angle=lambda st: np.angle(zs(st)), dt_max=dt_max,
                     complex_state=True, ivp_method="DOP853", ivp_rtol=1e-8,
                     ivp_atol=1e-10)


def stuart_landau(n_units, duration, fs, *, freqs, coupling=0.0, ratio=None,
                  amplitude_relaxation=1.0, noise=0.0, measurement_noise=0.0,
                  n_replicas=None, dt=None, integrator="auto", rng=None) -> Simulation:
    r"""Noisy Stuart-Landau oscillators (normal form of a supercritical Hopf bifurcation).

    Parameters
    ----------
    n_units, duration, fs, freqs, n_replicas, dt, integrator, rng, measurement_noise
        As in :func:`phase_oscillators`.
    coupling : float or array_like
        ``coupling[i, j]`` = K_ij in 1/s (unit j acting on unit i); conventions as in
        :func:`phase_oscillators`. At unit amplitude it acts on the phases exactly like
        the phase model's K_ij.
    ratio : sequence of N positive ints, optional
        Cycle numbers (see :func:`phase_oscillators`); n:m coupling uses the resonant
        term below.
    amplitude_relaxation : float or array_like (N,)
        lambda in 1/s: amplitude perturbations decay at rate 2 lambda. Small values
        (lambda << omega) give a weakly attracting cycle whose amplitude wanders under
        noise.
    noise : float or array_like (N,)
        sigma_i: white noise of this SD per sqrt(s) on both the real and the imaginary
        part of z_i.

    Returns
    -------
    Simulation
        ``signals`` = Re z (+ measurement noise); ``phases`` = unwrapped arg z.

    Notes
    -----
    .. math::

        dz_i = \Big[(\lambda_i(1-|z_i|^2) + i\omega_i) z_i
               + \sum_j K_{ij}\big(z_j^{p}\,\bar z_i^{\,q-1} - z_i\big)\Big]dt
               + \sigma_i (dW_i + i\,dW_i'),

    with (p, q) the reduced cycle numbers of the pair i <- j. The limit cycle is
    |z| = 1 with frequency omega_i (no shear). Writing z = r e^{i phi}, the coupling
    adds K_ij r_j^p r_i^{q-2} sin(p phi_j - q phi_i) to d phi_i/dt, i.e. at r = 1 the
    Adler/Kuramoto term of :func:`phase_oscillators`; the -K z_i part only damps the
    amplitude (for p = q = 1 the term is the usual diffusive K (z_j - z_i)).

    References
    ----------
    Kuramoto Y (1984) Chemical Oscillations, Waves, and Turbulence. Springer, ch. 2.
    Pikovsky A, Rosenblum M, Kurths J (2001) Synchronization. CUP, sec. 7.4 and 8.
    """
    func = "stuart_landau"
    N, T, fs, f, n_rep, R, C, _, sig, meas, m = _common_inputs(
        func, n_units, duration, fs, freqs, coupling, noise, measurement_noise, n_replicas,
        ratio)
    lam = check_vector(amplitude_relaxation, N, "amplitude_relaxation", func, positive=True)
    spec = _sl_spec(N, TWO_PI * f, lam, C, sig, m)
    streams = replica_streams(rng, R, func=func)
    signals, phases, events, params = run_model(
        spec, n_samples=T, fs=fs, n_rep=R, streams=streams, coupling=C,
        integrator=integrator, dt=dt, measurement_noise=meas, func=func)
    params.update(n_units=N, freqs_hz=f.tolist(), ratio=m.tolist(), noise=sig.tolist(),
                  amplitude_relaxation=lam.tolist(), measurement_noise=meas.tolist(),
                  coupling=coupling_summary(C, None))
    return _finish(func, signals, phases, events, fs, n_rep, params)


# =========================================================================== quasi-periodic
def _qp_spec(N, omega1, omega2, amp2, C, sigma, m):
    def build(terms, scalar):
        ns, tt = _coupling_ns(terms, m)
        ns.update({f"c_o1_{i}": float(omega1[i]) for i in range(N)})
        ns.update({f"c_o2_{i}": float(omega2[i]) for i in range(N)})

        def emit(x, u, tmp):
            th1 = [x[2 * i] for i in range(N)]
            d1 = _sine_terms([f"c_o1_{i}" for i in range(N)], th1, tt)
            d = []
            for i in range(N):
                d += [d1[i], f"c_o2_{i}"]
            return [], d
        return emit, ns

    def initial(gen):
        return list(gen.uniform(0.0, TWO_PI, 2 * N))

    def observe_signal(states):
        th1 = _unit_var(states, 2, 0)
        th2 = _unit_var(states, 2, 1)
        return np.cos(th1) + amp2[None, None, :] * np.cos(th2)

    fmax = max(_rate_hz(omega1, C, m), omega2.max() / TWO_PI)
    return ModelSpec(name="quasi_periodic", n_units=N, n_vars=2 * N, matrix=False,
                     build=build, sigma=np.repeat(sigma, 2)[:, None],
                     initial=initial, observe_signal=observe_signal,
                     observe_angle=lambda st: _unit_var(st, 2, 0), angle_unwrapped=True,
                     dt_max=1.0 / (100.0 * fmax), ivp_rtol=1e-10, ivp_atol=1e-10)


def quasi_periodic(n_units, duration, fs, *, freqs, coupling=0.0, ratio=None,
                   second_freq_ratio=GOLDEN, second_amplitude=0.8, noise=0.0,
                   measurement_noise=0.0, n_replicas=None, dt=None, integrator="auto",
                   rng=None) -> Simulation:
    r"""Units that each move on a two-frequency torus (quasi-periodic, not a limit cycle).

    Each unit has two internal phases: theta1 at the unit's main frequency ``freqs`` and
    theta2 at ``freqs * second_freq_ratio`` (default the golden mean 0.618..., an
    irrational ratio, so the unit never repeats). Only theta1 is coupled between units.

    Parameters
    ----------
    n_units, duration, fs, freqs, coupling, ratio, n_replicas, dt, integrator, rng
        As in :func:`phase_oscillators` (coupling acts on theta1 only, in rad/s).
    second_freq_ratio : float
        f2 / f1, default (sqrt(5) - 1)/2.
    second_amplitude : float
        Weight a2 of the second component in the output.
    noise : float or array_like (N,)
        Phase diffusion sigma (rad/sqrt(s)) on both internal phases.
    measurement_noise : float or array_like (N,)
        Relative SD of added white noise (see :func:`phase_oscillators`).

    Returns
    -------
    Simulation
        ``signals`` = cos(theta1) + a2 cos(theta2) (+ measurement noise); ``phases`` =
        theta1 (the coupled component).

    Notes
    -----
    d theta1_i = [omega1_i + sum_j K_ij sin(p theta1_j - q theta1_i)] dt + sigma dW,
    d theta2_i = omega2_i dt + sigma dW'. Because theta2 does not act on theta1, the
    locking of the main components follows the Adler criterion exactly as for
    :func:`phase_oscillators`, while the output has two incommensurate spectral peaks.

    References
    ----------
    Pikovsky A, Rosenblum M, Kurths J (2001) Synchronization. CUP, sec. 7.3 (motion on
    a torus, quasi-periodicity).
    """
    func = "quasi_periodic"
    N, T, fs, f, n_rep, R, C, _, sig, meas, m = _common_inputs(
        func, n_units, duration, fs, freqs, coupling, noise, measurement_noise, n_replicas,
        ratio)
    rho = check_real(second_freq_ratio, "second_freq_ratio", func, low=0, low_open=True)
    a2 = check_vector(second_amplitude, N, "second_amplitude", func, nonneg=True)
    spec = _qp_spec(N, TWO_PI * f, TWO_PI * f * rho, a2, C, sig, m)
    streams = replica_streams(rng, R, func=func)
    signals, phases, events, params = run_model(
        spec, n_samples=T, fs=fs, n_rep=R, streams=streams, coupling=C,
        integrator=integrator, dt=dt, measurement_noise=meas, func=func)
    params.update(n_units=N, freqs_hz=f.tolist(), second_freq_ratio=rho,
                  second_amplitude=a2.tolist(), ratio=m.tolist(), noise=sig.tolist(),
                  measurement_noise=meas.tolist(), coupling=coupling_summary(C, None))
    return _finish(func, signals, phases, events, fs, n_rep, params)
