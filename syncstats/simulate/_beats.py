"""Heartbeat-like event trains whose pacemaker phase is coupled to a breathing rhythm."""
from __future__ import annotations

import math

import numpy as np

from ._common import (Simulation, _fail, add_measurement_noise, check_choice,
                      check_n_replicas, check_ratio, check_real, check_time_grid,
                      replica_streams)
from ._phase_models import _finish
from ._runner import INTEGRATORS, ModelSpec, choose_substeps, integrate_spec

__all__ = ["beat_train", "ecg_like", "breath_waveform"]

TWO_PI = 2.0 * math.pi
_SCHEDULED = ("heart_freq", "breath_freq", "coupling", "rsa")

# ECG-like template: (amplitude, centre s relative to the R peak, width s) of the
# P, Q, R, S and T deflections. An invented smooth template, not a physiological model.
_ECG_WAVES = ((0.15, -0.20, 0.025), (-0.12, -0.035, 0.010), (1.0, 0.0, 0.012),
              (-0.25, 0.035, 0.012), (0.30, 0.28, 0.055))


def breath_waveform(phase, warp=0.5):
    """Breathing-like waveform of a phase: -cos(phi + warp sin phi).

    Minimum (start of inspiration) at phi = 2 pi k. The phase warp makes the
    waveform non-sinusoidal (quick passage through the trough, slow turn at the peak),
    so a Hilbert phase of the signal is only a protophase of the true phase.
    """
    phase = np.asarray(phase, dtype=float)
    return -np.cos(phase + warp * np.sin(phase))


def ecg_like(beat_times, n_samples, fs):
    """ECG-like trace: a fixed sum-of-Gaussians template placed at every beat time.

    Parameters
    ----------
    beat_times : array_like
        R-peak times in seconds.
    n_samples : int
    fs : float
        Sampling rate in Hz.

    Returns
    -------
    ndarray, shape (n_samples,)
    """
    t = np.arange(n_samples) / fs
    y = np.zeros(n_samples)
    half = int(math.ceil(0.6 * fs))
    for tb in np.asarray(beat_times, dtype=float):
        c = int(round(tb * fs))
        lo, hi = max(0, c - half), min(n_samples, c + half + 1)
        if lo >= hi:
            continue
        dtt = t[lo:hi] - tb
        seg = np.zeros(hi - lo)
        for amp, mu, wd in _ECG_WAVES:
            seg += amp * np.exp(-0.5 * ((dtt - mu) / wd) ** 2)
        y[lo:hi] += seg
    return y


def _schedule(value, name, func, *, positive=False):
    """A scalar or a piecewise-linear schedule (times_s, values) -> (const, fn or None)."""
    if isinstance(value, tuple) and len(value) == 2 and np.ndim(value[0]) == 1:
        t = np.array(value[0], dtype=float)
        v = np.array(value[1], dtype=float)
        if (t.shape != v.shape or t.size < 1 or not np.all(np.isfinite(t))
                or not np.all(np.isfinite(v)) or np.any(np.diff(t) <= 0)):
            _fail(f"{func}: schedule {name} must be (times_s, values) with increasing "
                  f"times and equal lengths, got {value!r}; pass e.g. ([0, 100], [1.0, "
                  f"1.2]).")
        if positive and np.any(v <= 0):
            _fail(f"{func}: every value of {name} must be > 0; pass positive values.")
        return None, (t, v)
    low = 0 if positive else None
    return check_real(value, name, func, low=low, low_open=positive), None


def beat_train(duration, fs, *, heart_freq=1.0, breath_freq=0.25, ratio=(4, 1),
               coupling=0.0, rsa=0.0, heart_noise=0.1, breath_noise=0.1,
               amplitude_noise=0.15, amplitude_time=10.0, ecg=True, measurement_noise=0.0,
               n_replicas=None, dt=None, integrator="auto", rng=None) -> Simulation:
    r"""Beat times of a pacemaker phase-coupled to a slower breathing-like rhythm.

    Unit 0 is the pacemaker ("heart"), unit 1 the slow rhythm ("breath"). Beats are the
    moments the pacemaker phase passes a multiple of 2 pi; the slow rhythm is returned
    as a continuous breathing-like signal with a wandering amplitude.

    Parameters
    ----------
    duration : float
        Seconds.
    fs : float
        Sampling rate (Hz) of the continuous outputs.
    heart_freq, breath_freq : float or (times_s, values)
        Natural frequencies in Hz; a tuple gives a piecewise-linear schedule in time
        (used by the demo to change the physiological state).
    ratio : (p, q)
        Ratio of the coupling term: heart completes p beats while breathing completes
        q cycles ((4, 1) = four beats per breath).
    coupling : float or (times_s, values)
        epsilon in rad/s: the breathing phase acts on the pacemaker phase through
        epsilon sin(p phi_R - q phi_H). Locking iff |q w_H - p w_R| < q epsilon.
    rsa : float or (times_s, values)
        Depth (rad/s) of a respiratory modulation of the heart rate,
        a sin(phi_R): faster beats during inspiration. It changes the beat intervals
        but does not by itself lock the beats to breathing at any p:q other than the
        1:1 term it contains (it has no phi_H dependence).
    heart_noise, breath_noise : float
        Phase diffusion sigma (rad/sqrt(s)) of each rhythm.
    amplitude_noise : float
        Stationary SD of the log-amplitude of the breathing signal (an
        Ornstein-Uhlenbeck process with correlation time ``amplitude_time`` s).
    ecg : bool
        If True, ``signals[0]`` is an ECG-like trace built from the beat times (see
        :func:`ecg_like`); otherwise cos(phi_H).
    measurement_noise : float or (2,) array
        SD of added white noise as a fraction of each signal's noise-free SD.
    n_replicas, dt, integrator, rng
        As in :func:`phase_oscillators`.

    Returns
    -------
    Simulation
        ``signals`` (2, n): ECG-like (or cos phi_H) and breathing; ``phases`` = (phi_H,
        phi_R); ``events`` = (beat times, breath onsets), in seconds.

    Notes
    -----
    .. math::

        d\phi_H &= [\omega_H + \epsilon \sin(p\phi_R - q\phi_H) + a\sin\phi_R]\,dt
                   + \sigma_H dW_H,\\
        d\phi_R &= \omega_R\,dt + \sigma_R dW_R,\qquad
        dA = -A/\tau\,dt + s\sqrt{2/\tau}\,dW_A,\\
        \text{breath}(t) &= e^{A}\,\bigl(-\cos(\phi_R + 0.5\sin\phi_R)\bigr).

    Beat times are found at the internal step (stochastic Heun, dt <= 1/(100 f_H)) and
    interpolated linearly. The coupling is one-way (breathing -> heart), as in
    cardiorespiratory synchronisation studies.

    References
    ----------
    Schaefer C, Rosenblum MG, Kurths J, Abel H-H (1998) Heartbeat synchronized with
    ventilation. Nature 392:239-240.
    Pikovsky A, Rosenblum M, Kurths J (2001) Synchronization. CUP, sec. 3.
    """
    func = "beat_train"
    T = check_time_grid(duration, fs, func)
    fs = float(fs)
    n_rep = check_n_replicas(n_replicas, func)
    m = check_ratio(ratio, 2, func)
    p, q = int(m[0]), int(m[1])
    g = math.gcd(p, q)
    p, q = p // g, q // g
    vals, scheds = {}, {}
    for name, value, pos in (("heart_freq", heart_freq, True),
                             ("breath_freq", breath_freq, True),
                             ("coupling", coupling, False), ("rsa", rsa, False)):
        vals[name], scheds[name] = _schedule(value, name, func, positive=pos)
    sh = check_real(heart_noise, "heart_noise", func, low=0)
    sr = check_real(breath_noise, "breath_noise", func, low=0)
    sa = check_real(amplitude_noise, "amplitude_noise", func, low=0)
    tau = check_real(amplitude_time, "amplitude_time", func, low=0, low_open=True)
    try:
        meas = np.broadcast_to(np.asarray(measurement_noise, dtype=float), (2,)).copy()
    except (TypeError, ValueError):
        meas = np.array([np.nan])
    if meas.shape != (2,) or not np.all(np.isfinite(meas)) or np.any(meas < 0):
        _fail(f"{func}: measurement_noise must be one number >= 0 or two (heart, breath), "
              f"got {measurement_noise!r}; pass e.g. measurement_noise=0.1.")
    spec, _ = _beats_spec(vals, scheds, [(p, q, "coupling")], sh, sr, sa, tau)
    signals, phases, events, params = run_beats(
        spec, T=T, fs=fs, dt=dt, integrator=integrator, n_rep=n_rep, rng=rng, ecg=ecg,
        meas=meas, func=func)
    params.update({"units": ["heart", "breath"], "ratio": [p, q], "heart_noise": sh,
                   "breath_noise": sr, "amplitude_noise": sa, "amplitude_time": tau,
                   "ecg": bool(ecg), "measurement_noise": meas.tolist()})
    for name in _SCHEDULED:
        params[name] = (vals[name] if scheds[name] is None
                        else [scheds[name][0].tolist(), scheds[name][1].tolist()])
    return _finish(func, signals, phases, events, fs, n_rep, params)


def _beats_spec(vals, scheds, terms, sh, sr, sa, tau):
    """ModelSpec with variables (phi_H, phi_R, log-amplitude).

    ``terms`` lists the coupling terms (p, q, name): eps_name * sin(p phi_R - q phi_H);
    ``vals``/``scheds`` hold a constant or a schedule for "heart_freq", "breath_freq",
    "rsa" and every term name.
    """
    names = ["heart_freq", "breath_freq", "rsa"] + [t[2] for t in terms]
    varying = any(scheds.get(n) is not None for n in names)

    def top(name):
        return np.max(scheds[name][1]) if scheds.get(name) is not None else vals[name]

    fmax = max(top("heart_freq"), top("breath_freq"))

    def value_at(name, t):
        if scheds.get(name) is None:
            return np.full(t.shape, vals[name])
        tt, vv = scheds[name]
        return np.interp(t, tt, vv)

    scale = {"heart_freq": TWO_PI, "breath_freq": TWO_PI}

    def inputs(t):
        t = np.asarray(t, dtype=float)
        return np.stack([scale.get(n, 1.0) * value_at(n, t) for n in names], axis=-1)

    def build(coupling_terms, scalar):
        ns = {"c_tau": -1.0 / tau}
        if not varying:
            ns.update({f"c_{k}": scale.get(n, 1.0) * vals[n] for k, n in enumerate(names)})

        def emit(x, u, tmp):
            nm = list(u) if varying else [f"c_{k}" for k in range(len(names))]
            ph, pr, a = x
            d0 = f"{nm[0]} + {nm[2]} * sin({pr})"
            for k, (p, q, _name) in enumerate(terms):
                d0 += f" + {nm[3 + k]} * sin({_m(p, pr)} - {_m(q, ph)})"
            return [], [d0, nm[1], f"c_tau * {a}"]
        return emit, ns

    def initial(gen):
        ph = gen.uniform(0.0, TWO_PI, 2)
        return [ph[0], ph[1], sa * gen.standard_normal()]

    def observe_signal(st):
        ph, pr, a = st[:, 0, :, 0], st[:, 1, :, 0], st[:, 2, :, 0]
        return np.stack([np.cos(ph), np.exp(a) * breath_waveform(pr)], axis=-1)

    def observe_angle(st):
        return np.stack([st[:, 0, :, 0], st[:, 1, :, 0]], axis=-1)

    sigma = np.array([sh, sr, sa * math.sqrt(2.0 / tau)])[:, None]
    spec = ModelSpec(name="beat_train", n_units=2, n_vars=3, matrix=False, build=build,
                     sigma=sigma, initial=initial, observe_signal=observe_signal,
                     observe_angle=observe_angle, angle_unwrapped=True,
                     dt_max=1.0 / (100.0 * fmax), event_level=0.0,
                     inputs=inputs if varying else None,
                     n_inputs=len(names) if varying else 0, ivp_rtol=1e-10, ivp_atol=1e-10)
    return spec, fmax


def run_beats(spec, *, T, fs, dt, integrator, n_rep, rng, ecg, meas, func, stream=0):
    """Integrate a beats spec; returns (signals, phases, events, params)."""
    check_choice(integrator, "integrator", INTEGRATORS, func)
    noisy = bool(np.any(spec.sigma != 0))
    integ = ("fixed" if noisy else "solve_ivp") if integrator == "auto" else integrator
    if integ == "solve_ivp" and noisy:
        _fail(f"{func}: integrator='solve_ivp' is for noise-free runs but a noise level is "
              f"> 0; use integrator='fixed' (or 'auto').")
    k = choose_substeps(fs, spec.dt_max, dt, func)
    h = 1.0 / (fs * k)
    R = n_rep or 1
    streams = replica_streams(rng, R, stream=stream, func=func)
    inits = [spec.initial(s_[0]) for s_ in streams]
    rec = integrate_spec(spec, n_steps=(T - 1) * k, h=h, every=k, n_out=T, n_rep=R,
                         inits=inits, noise_gens=[s_[1] for s_ in streams],
                         coupling=np.zeros((1, 2, 2)), integrator=integ)
    events = rec.events()
    clean = rec.signals.copy()
    if ecg:
        for r in range(R):
            clean[r, 0] = ecg_like(events[r][0], T, fs)
    signals = add_measurement_noise(clean, meas, [s_[2] for s_ in streams])
    params = {"integrator": integ, "dt_s": h, "substeps": k,
              "scheme": ("stochastic Heun, fixed step" if integ == "fixed"
                         else "scipy.integrate.solve_ivp (DOP853, rtol 1e-10)")}
    return signals, rec.phases, events, params


def _m(c, name):
    return name if c == 1 else f"{c} * {name}"
