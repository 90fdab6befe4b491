"""Limit-cycle and chaotic waveform models: van der Pol, FitzHugh-Nagumo, Roessler.

Each unit is the textbook model written in its own (dimensionless) *model time*; unit i
runs with the time scale s_i = f_i * T0, where T0 is the model's natural period in model
time (computed once with ``scipy.integrate.solve_ivp`` and cached, see
:func:`natural_period`), so that an uncoupled, noise-free unit oscillates at f_i Hz.
Diffusive coupling acts on the first (observed) variable and, like the intrinsic noise,
is expressed in model-time units:

    dX_i = s_i [F(X_i) + e_1 sum_j K_ij (x_j - x_i)] dt + sigma sqrt(s_i) dW_i,

so strengths and noise levels mean the same thing at any frequency.
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from scipy.integrate import solve_ivp

from ._common import (Simulation, _fail, check_choice, check_real, coupling_summary,
                      replica_streams)
from ._phase_models import _common_inputs, _finish
from ._runner import ModelSpec, run_model

__all__ = ["van_der_pol", "fitzhugh_nagumo", "rossler", "natural_period"]

TWO_PI = 2.0 * math.pi
MODELS = ("van_der_pol", "fitzhugh_nagumo", "rossler")
_DEFAULTS = {
    "van_der_pol": {"mu": 10.0},
    "fitzhugh_nagumo": {"a": 0.7, "b": 0.8, "epsilon": 0.08, "current": 0.5},
    "rossler": {"a": 0.2, "b": 0.2, "c": 5.7},
}


# =========================================================================== vector fields
def _rhs(model, p):
    if model == "van_der_pol":
        mu = p["mu"]

        def f(t, u):
            x, y = u[0], u[1]
            return [mu * (y - (x ** 3 / 3.0 - x)), -x / mu]
    elif model == "fitzhugh_nagumo":
        a, b, eps, cur = p["a"], p["b"], p["epsilon"], p["current"]

        def f(t, u):
            v, w = u[0], u[1]
            return [v - v ** 3 / 3.0 - w + cur, eps * (v + a - b * w)]
    else:
        a, b, c = p["a"], p["b"], p["c"]

        def f(t, u):
            x, y, z = u[0], u[1], u[2]
            return [-y - z, x + a * y, b + z * (x - c)]
    return f


def _fhn_fixed_point(a, b, cur):
    if b == 0:
        v = -a
        return v, v - v ** 3 / 3.0 + cur
    # v - v^3/3 - (v + a)/b + cur = 0
    roots = np.roots([-1.0 / 3.0, 0.0, 1.0 - 1.0 / b, cur - a / b])
    real = roots[np.abs(roots.imag) < 1e-9].real
    v = float(real[np.argmin(np.abs(real))]) if real.size else float(roots[0].real)
    return v, (v + a) / b


@lru_cache(maxsize=64)
def _cycle(model: str, key: tuple):
    """Natural period, cycle samples, phase-angle centre/orientation and event angle.

    Noise-free single unit in model time, ``solve_ivp`` (LSODA for the stiff relaxation
    models, DOP853 for Roessler), rtol 1e-9. For Roessler the "period" is 2 pi / Omega
    with Omega the mean angular velocity of atan2(y, x) over 600 time units.
    """
    p = dict(key)
    f = _rhs(model, p)
    if model == "rossler":
        sol = solve_ivp(f, (0.0, 700.0), [1.0, 1.0, 0.0], method="DOP853", rtol=1e-8,
                        atol=1e-10, dense_output=True)
        t = np.arange(100.0, 700.0, 0.01)
        u = sol.sol(t)
        ph = np.unwrap(np.arctan2(u[1], u[0]))
        omega = (ph[-1] - ph[0]) / (t[-1] - t[0])
        if not np.all(np.isfinite(u)) or omega <= 0 or np.mean(np.diff(ph) > 0) < 0.999:
            _fail(f"rossler: with a={p['a']}, b={p['b']}, c={p['c']} the attractor does "
                  f"not rotate monotonically around the origin (not phase-coherent); use "
                  f"parameters near a=b=0.2, c=5.7.")
        samples = u[:, ::30].T.copy()  # 2000 points on the attractor
        return {"period": TWO_PI / omega, "samples": samples, "centre": (0.0, 0.0),
                "sign": 1.0, "event_angle": 0.0, "omega": omega}
    if model == "van_der_pol":
        mu = p["mu"]
        tg = TWO_PI if mu < 1.0 else (3.0 - 2.0 * math.log(2.0)) * mu + 7.0 * mu ** (-1 / 3)
        y0, centre = [2.0, 2.0 / 3.0], (0.0, 0.0)
    else:
        centre = _fhn_fixed_point(p["a"], p["b"], p["current"])
        tg = 5.0 / p["epsilon"]
        y0 = [centre[0] + 1.0, centre[1]]

    def ev(t, u):
        return u[0] - centre[0]
    ev.direction = 1.0
    span = 12.0 * tg
    for _ in range(4):
        sol = solve_ivp(f, (0.0, span), y0, method="LSODA", rtol=1e-9, atol=1e-11,
                        events=ev, dense_output=True)
        te = sol.t_events[0]
        if te.size >= 8:
            break
        span *= 4.0
    else:
        _fail(f"{model}: with parameters {p} the unit does not oscillate (no limit cycle "
              f"found); for fitzhugh_nagumo increase current (e.g. 0.5), for van_der_pol "
              f"use mu > 0.")
    d = np.diff(te[-5:])
    period = float(d.mean())
    if np.ptp(d) > 1e-4 * period:
        _fail(f"{model}: with parameters {p} the oscillation is not periodic; use the "
              f"default parameters.")
    t = np.linspace(te[-2], te[-1], 2049)[:-1]
    u = sol.sol(t)
    ang = np.unwrap(np.arctan2(u[1] - centre[1], u[0] - centre[0]))
    sign = 1.0 if ang[-1] > ang[0] else -1.0
    if not np.all(np.diff(sign * ang) > 0):
        _fail(f"{model}: with parameters {p} the limit cycle does not turn monotonically "
              f"around its centre, so no phase angle is defined; use the default "
              f"parameters.")
    event_angle = 0.0
    if model == "fitzhugh_nagumo":
        # spike = upstroke of v through 0 (or through v* if v never reaches 0)
        vlev = 0.0 if u[0].max() > 0.0 > u[0].min() else centre[0]
        v_ = np.append(u[0], u[0][0])
        k = np.nonzero((v_[:-1] < vlev) & (v_[1:] >= vlev))[0][0]
        w_up = u[1][k]
        event_angle = float(sign * math.atan2(w_up - centre[1], vlev - centre[0]))
    return {"period": period, "samples": u.T.copy(), "centre": centre, "sign": sign,
            "event_angle": event_angle}


def _model_params(model: str, func: str, **given) -> dict:
    p = dict(_DEFAULTS[model])
    for k, v in given.items():
        if v is None:
            continue
        if k not in p:
            _fail(f"{func}: unknown parameter {k!r} for {model}; accepted: "
                  f"{', '.join(p)}.")
        p[k] = check_real(v, k, func)
    if model == "van_der_pol" and p["mu"] <= 0:
        _fail(f"{func}: parameter mu must be > 0, got {p['mu']}; pass e.g. mu=10.")
    if model == "fitzhugh_nagumo" and (p["epsilon"] <= 0 or p["b"] < 0):
        _fail(f"{func}: parameters epsilon must be > 0 and b >= 0, got epsilon="
              f"{p['epsilon']}, b={p['b']}; use the defaults (a=0.7, b=0.8, "
              f"epsilon=0.08).")
    return p


def natural_period(model: str, **params) -> float:
    """Natural period of one noise-free unit in model time units.

    Parameters
    ----------
    model : {"van_der_pol", "fitzhugh_nagumo", "rossler"}
    **params
        Model parameters (defaults: van der Pol mu=10; FitzHugh-Nagumo a=0.7, b=0.8,
        epsilon=0.08, current=0.5; Roessler a=0.2, b=0.2, c=5.7).

    Returns
    -------
    float
        Period of the limit cycle (time between upward crossings of the first variable
        through the centre of rotation); for Roessler the mean period 2 pi / Omega, with
        Omega the mean angular velocity of atan2(y, x).

    Notes
    -----
    Computed with ``scipy.integrate.solve_ivp`` (LSODA resp. DOP853, rtol 1e-9 resp.
    1e-8; Roessler averaged over 600 time units after 100 transient ones) and
    cached. Van der Pol is used in the Lienard form of Strogatz (2015, sec. 7.5):
    x' = mu (y - F(x)), y' = -x / mu, F(x) = x^3/3 - x, whose time is the time of
    x'' + mu (x^2 - 1) x' + x = 0; for mu >> 1 the period is about (3 - 2 ln 2) mu.

    References
    ----------
    Strogatz SH (2015) Nonlinear Dynamics and Chaos, 2nd ed. Westview, sec. 7.5-7.6.

    Examples
    --------
    >>> round(natural_period("van_der_pol", mu=0.01), 3)  # near-harmonic: 2 pi
    6.283
    """
    check_choice(model, "model", MODELS, "natural_period")
    p = _model_params(model, "natural_period", **params)
    return float(_cycle(model, tuple(sorted(p.items())))["period"])


# =========================================================================== specs
def _waveform_spec(model, p, f_hz, C_terms_unused, sigma_model):
    """ModelSpec for N units of ``model`` at frequencies ``f_hz`` (Hz)."""
    cyc = _cycle(model, tuple(sorted(p.items())))
    T0 = cyc["period"]
    N = f_hz.size
    s = f_hz * T0  # model time units per second
    d = 3 if model == "rossler" else 2
    cx, cy = cyc["centre"]
    sign = cyc["sign"]
    samples = cyc["samples"]

    def build(terms, scalar):
        # time scale folded into the constants: fewer operations per step
        ns = {f"c_s{i}": float(s[i]) for i in range(N)}
        for i, j, k in terms:
            ns[f"c_k{i}_{j}"] = k * float(s[i])
        if model == "van_der_pol":
            ns.update({f"c_smu{i}": float(s[i] * p["mu"]) for i in range(N)})
            ns.update({f"c_ms{i}": float(-s[i] / p["mu"]) for i in range(N)})
        elif model == "fitzhugh_nagumo":
            ns.update({f"c_se{i}": float(s[i] * p["epsilon"]) for i in range(N)})
            ns.update({f"c_sI{i}": float(s[i] * p["current"]) for i in range(N)})
            ns.update(c_a=p["a"], c_b=p["b"])
        else:
            ns.update({f"c_sb{i}": float(s[i] * p["b"]) for i in range(N)})
            ns.update(c_a=p["a"], c_c=p["c"])
        third = 1.0 / 3.0

        def emit(x, u, tmp):
            coup = ["" for _ in range(N)]
            for i, j, _k in terms:
                coup[i] += f" + c_k{i}_{j} * ({x[d * j]} - {x[d * i]})"
            out = []
            for i in range(N):
                v = x[d * i:d * i + d]
                if model == "van_der_pol":
                    out += [f"c_smu{i} * ({v[1]} - {v[0]} * ({v[0]} * {v[0]} * {third!r} "
                            f"- 1.0)){coup[i]}", f"c_ms{i} * {v[0]}"]
                elif model == "fitzhugh_nagumo":
                    out += [f"c_s{i} * ({v[0]} * (1.0 - {v[0]} * {v[0]} * {third!r}) - "
                            f"{v[1]}) + c_sI{i}{coup[i]}",
                            f"c_se{i} * ({v[0]} + c_a - c_b * {v[1]})"]
                else:
                    out += [f"-c_s{i} * ({v[1]} + {v[2]}){coup[i]}",
                            f"c_s{i} * ({v[0]} + c_a * {v[1]})",
                            f"c_sb{i} + c_s{i} * {v[2]} * ({v[0]} - c_c)"]
            return [], out
        return emit, ns

    def initial(gen):
        idx = gen.integers(0, samples.shape[0], N)
        return list(samples[idx].ravel())

    def var(states, k):
        return np.transpose(states[:, k::d, :, 0], (0, 2, 1))

    def observe_angle(states):
        return sign * np.arctan2(var(states, 1) - cy, var(states, 0) - cx)

    if model == "van_der_pol":
        dt_model = min(0.5 / p["mu"], T0 / 200.0)
    elif model == "fitzhugh_nagumo":
        dt_model = min(T0 / 200.0, 0.2)
    else:
        dt_model = T0 / 200.0
    sig = np.repeat(sigma_model * np.sqrt(s), d)[:, None]
    return ModelSpec(name=model, n_units=N, n_vars=d * N, matrix=False, build=build,
                     sigma=sig, initial=initial, observe_signal=lambda st: var(st, 0),
                     observe_angle=observe_angle, fullres_angle=True,
                     dt_max=dt_model / float(s.max()),
                     ivp_method="DOP853" if model == "rossler" else "LSODA",
                     event_level=cyc["event_angle"] if model == "fitzhugh_nagumo" else None)


def _run_waveform(model, func, n_units, duration, fs, freqs, coupling, noise,
                  measurement_noise, n_replicas, dt, integrator, rng, params):
    N, T, fs, f, n_rep, R, C, _, sig, meas, _m = _common_inputs(
        func, n_units, duration, fs, freqs, coupling, noise, measurement_noise, n_replicas)
    p = _model_params(model, func, **params)
    spec = _waveform_spec(model, p, f, None, sig)
    streams = replica_streams(rng, R, func=func)
    signals, phases, events, rp = run_model(
        spec, n_samples=T, fs=fs, n_rep=R, streams=streams, coupling=C,
        integrator=integrator, dt=dt, measurement_noise=meas, func=func)
    period = _cycle(model, tuple(sorted(p.items())))["period"]
    rp.update(n_units=N, freqs_hz=f.tolist(), noise=sig.tolist(),
              measurement_noise=meas.tolist(), coupling=coupling_summary(C, None),
              model_period=period, time_scale=(f * period).tolist(), **p)
    return _finish(func, signals, phases, events, fs, n_rep, rp)


_SHARED = """
    n_units : int
        Number of units N.
    duration : float
        Length of the output in seconds.
    fs : float
        Output sampling rate in Hz.
    freqs : float or array_like (N,)
        Frequency of each uncoupled, noise-free unit in Hz (sets its time scale).
    coupling : float or array_like
        ``coupling[i, j]`` = K_ij, diffusive coupling of unit j into unit i, in
        model-time units (scalar = global K/N; see :func:`phase_oscillators`).
    noise : float or array_like (N,)
        Intrinsic white noise sigma on every state variable, in model units per
        sqrt(model time).
    measurement_noise : float or array_like (N,)
        SD of added white noise as a fraction of each signal's noise-free SD.
    n_replicas, dt, integrator, rng
        As in :func:`phase_oscillators` (the default ``dt`` is given in Notes;
        noise-free runs use solve_ivp unless ``integrator="fixed"``).
"""


def van_der_pol(n_units, duration, fs, *, freqs, coupling=0.0, mu=10.0, noise=0.0,
                measurement_noise=0.0, n_replicas=None, dt=None, integrator="auto",
                rng=None) -> Simulation:
    """Van der Pol oscillators, by default in the relaxation regime (mu = 10).

    Parameters
    ----------
    {shared}
    mu : float
        Nonlinearity; mu >> 1 gives relaxation oscillations (slow drift, fast jumps).

    Returns
    -------
    Simulation
        ``signals`` = x (amplitude about 2); ``phases`` = unwrapped angle of (x, y)
        around the origin, oriented to increase (a protophase: monotone but not
        uniform in time).

    Notes
    -----
    Lienard form (Strogatz 2015, sec. 7.5), per unit in model time:
    x' = mu (y - x^3/3 + x) + sum_j K_ij (x_j - x), y' = -x / mu, equivalent to
    x'' + mu (x^2 - 1) x' + x = 0. Limit-cycle amplitude ~2 for any mu; period 2 pi for
    mu -> 0 and ~(3 - 2 ln 2) mu for mu >> 1. Fixed internal step
    dt = min(0.5/mu, T0/200) model units (stochastic Heun; the explicit stability limit
    is about 0.67/mu), at least 2 steps per output sample.

    References
    ----------
    van der Pol B (1926) On relaxation-oscillations. Phil Mag 2:978-992.
    Strogatz SH (2015) Nonlinear Dynamics and Chaos, 2nd ed., sec. 7.5-7.6.
    """
    return _run_waveform("van_der_pol", "van_der_pol", n_units, duration, fs, freqs,
                         coupling, noise, measurement_noise, n_replicas, dt, integrator,
                         rng, {"mu": mu})


def fitzhugh_nagumo(n_units, duration, fs, *, freqs, coupling=0.0, current=0.5, a=0.7,
                    b=0.8, epsilon=0.08, noise=0.0, measurement_noise=0.0,
                    n_replicas=None, dt=None, integrator="auto", rng=None) -> Simulation:
    """FitzHugh-Nagumo units driven into periodic firing by a constant current.

    Parameters
    ----------
    {shared}
    current : float
        Injected current I; the classical parameters are excitable (quiet) for I = 0
        and fire periodically for I of about 0.35 to 1.4. Default 0.5.
    a, b, epsilon : float
        Recovery parameters (FitzHugh 1961: 0.7, 0.8, 0.08).

    Returns
    -------
    Simulation
        ``signals`` = v (spike-like transients: fast upstroke to ~+2, fast downstroke,
        slow recovery); ``phases`` = unwrapped angle of (v, w) around the fixed point;
        ``events`` = spike times (s), the moments the phase passes the upstroke of v
        through 0 on the noise-free cycle.

    Notes
    -----
    v' = v - v^3/3 - w + I + sum_j K_ij (v_j - v), w' = epsilon (v + a - b w) in model
    time. Fixed internal step dt = min(T0/200, 0.2) model units (stochastic Heun).

    References
    ----------
    FitzHugh R (1961) Impulses and physiological states in theoretical models of nerve
    membrane. Biophys J 1:445-466.
    Nagumo J, Arimoto S, Yoshizawa S (1962) An active pulse transmission line
    simulating nerve axon. Proc IRE 50:2061-2070.
    """
    return _run_waveform("fitzhugh_nagumo", "fitzhugh_nagumo", n_units, duration, fs,
                         freqs, coupling, noise, measurement_noise, n_replicas, dt,
                         integrator, rng,
                         {"current": current, "a": a, "b": b, "epsilon": epsilon})


def rossler(n_units, duration, fs, *, freqs, coupling=0.0, a=0.2, b=0.2, c=5.7, noise=0.0,
            measurement_noise=0.0, n_replicas=None, dt=None, integrator="auto",
            rng=None) -> Simulation:
    """Roessler units in the phase-coherent chaotic regime (a = b = 0.2, c = 5.7).

    Parameters
    ----------
    {shared}
    a, b, c : float
        Roessler parameters.

    Returns
    -------
    Simulation
        ``signals`` = x; ``phases`` = unwrapped atan2(y, x) (monotone in this regime).

    Notes
    -----
    x' = -y - z + sum_j K_ij (x_j - x), y' = x + a y, z' = b + z (x - c), model time.
    The unit's ``freqs`` is its *mean* frequency (2 pi / mean period; the mean angular
    velocity at the default parameters is about 1.07 per model time unit). Fixed
    internal step T0/200 model units (stochastic Heun). Phase synchronisation of
    diffusively coupled, detuned units: Rosenblum, Pikovsky & Kurths (1996).

    References
    ----------
    Roessler OE (1976) An equation for continuous chaos. Phys Lett A 57:397-398.
    Rosenblum MG, Pikovsky AS, Kurths J (1996) Phase synchronization of chaotic
    oscillators. Phys Rev Lett 76:1804-1807.
    """
    return _run_waveform("rossler", "rossler", n_units, duration, fs, freqs, coupling,
                         noise, measurement_noise, n_replicas, dt, integrator, rng,
                         {"a": a, "b": b, "c": c})


for _f in (van_der_pol, fitzhugh_nagumo, rossler):
    _f.__doc__ = _f.__doc__.replace("    {shared}\n", _SHARED.lstrip("\n"))
del _f
