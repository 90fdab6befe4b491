"""Ready-made coupled / uncoupled pairs with known truth (validation, demos, power)."""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from types import MappingProxyType

import numpy as np

from ._beats import _beats_spec, beat_train
from ._common import (_fail, check_choice, check_n_replicas, check_ratio, check_real,
                      frozen, pair_ratio)
from ._linear import damped_noise_oscillator
from ._phase_models import (_sl_spec, phase_oscillators, quasi_periodic, stuart_landau)
from ._runner import integrate_spec
from ._truth import adler_prediction, strobe_label
from ._waveform_models import (_cycle, _model_params, _waveform_spec, fitzhugh_nagumo,
                               rossler, van_der_pol)

__all__ = ["Scenario", "ScenarioBatch", "SCENARIO_KINDS", "scenario", "scenario_batch"]

TWO_PI = 2.0 * math.pi

SCENARIO_KINDS = ("phase", "stuart_landau", "van_der_pol", "spiking", "beats",
                  "quasi_periodic", "rossler", "damped_noise")
DIRECTIONS = ("mutual", "a_to_b", "b_to_a")

# Defaults per kind. ``noise`` is in the unit of the model's ``noise`` argument (phase
# models rad/sqrt(s); waveform models model units per sqrt(model time)). The van der Pol
# and FitzHugh-Nagumo values give roughly the phase diffusion of the phase model's
# 0.15 rad/sqrt(s) at 1 Hz (about 0.02 rad^2/s); Roessler's own chaos already diffuses
# its phase (about 0.005 rad^2/s), so it gets little extra noise.
_KINDS = {
    "phase": dict(freq=1.0, noise=0.15, measurement_noise=0.2, coupling_units="rad/s"),
    "stuart_landau": dict(freq=1.0, noise=0.14, measurement_noise=0.2,
                          coupling_units="1/s"),
    "van_der_pol": dict(freq=1.0, noise=0.015, measurement_noise=0.2, k0=0.02,
                        coupling_units="model units (1/model time)"),
    "spiking": dict(freq=1.0, noise=0.007, measurement_noise=0.1, k0=0.002,
                    coupling_units="model units (1/model time)"),
    "beats": dict(freq=1.0, noise=0.1, measurement_noise=0.1, ratio=(4, 1),
                  direction="b_to_a", coupling_units="rad/s"),
    "quasi_periodic": dict(freq=1.0, noise=0.15, measurement_noise=0.2,
                           coupling_units="rad/s"),
    "rossler": dict(freq=1.0, noise=0.02, measurement_noise=0.1, k0=0.01,
                    coupling_units="model units (1/model time)"),
    "damped_noise": dict(freq=1.0, noise=None, measurement_noise=0.1, coupling=0.2,
                         coupling_units="dimensionless (force omega0^2 K (x_j - x_i))"),
}
_MODEL_OF_KIND = {"van_der_pol": "van_der_pol", "spiking": "fitzhugh_nagumo",
                  "rossler": "rossler"}
_TRANSIENT_CYCLES = 20   # cycles of the slower unit discarded in a labelling run
_EVAL_CYCLES = 80        # cycles of the slower unit evaluated in a labelling run
_LADDER = 14             # coupling ladder K0 * 2**(k/2), k = 0..13
_ADLER_NU = 0.5          # default coupled strength: Adler nu = 0.5 (well inside)
_RSA_DEPTH = 0.05        # beats: respiratory modulation, 5 % of the heart's omega


# =========================================================================== results
@dataclass(frozen=True)
class Scenario:
    """One simulated pair with its ground truth.

    Attributes
    ----------
    kind : str
        Scenario kind (one of ``SCENARIO_KINDS``).
    signals : dict
        Name -> 1-D float array (n_samples,): feeds ``syncstats.analyze(sc.signals,
        fs=sc.fs)`` directly. Names are "A" and "B" ("heart" and "breath" for "beats").
    fs : float
        Sampling rate in Hz.
    events : dict or None
        Name -> event times in s (spike times for "spiking"; beat times and breath
        onsets for "beats"); None for continuous-only kinds.
    phases : dict
        Name -> true (model) phase, unwrapped, radians, same length as the signals.
    coupling : ndarray (2, 2)
        ``coupling[i, j]`` = strength of unit j acting on unit i (order of ``signals``),
        in ``truth["coupling_units"]``.
    truth : mapping
        ``locked`` (bool), ``ratio`` ((p, q) when locked, else None), ``coupled`` (any
        nonzero coupling), ``dependent`` (the signals are statistically dependent),
        ``method`` (how the label was obtained: "adler", "noise_free_run",
        "uncoupled" or "linear_not_self_sustained"), ``detail`` (numbers behind it).
    description : str
        One-paragraph story of the scenario.
    params : mapping
        Everything needed to reproduce it.
    """

    kind: str
    signals: dict
    fs: float
    events: dict | None
    phases: dict
    coupling: np.ndarray
    truth: MappingProxyType
    description: str
    params: MappingProxyType

    @property
    def names(self) -> tuple:
        return tuple(self.signals)

    @property
    def time(self) -> np.ndarray:
        n = next(iter(self.signals.values())).shape[-1]
        return np.arange(n) / self.fs


@dataclass(frozen=True)
class ScenarioBatch:
    """Many independent replicas of one scenario (for validation and power studies).

    Attributes
    ----------
    signals : ndarray, shape (n_replicas, 2, n_samples)
        Rows in the order of ``names``.
    phases : ndarray, same shape
        True phases.
    events : tuple of dict or None
        One dict name -> event times per replica.
    kind, names, fs, coupling, truth, description, params
        As in :class:`Scenario` (the truth is the same for every replica).
    """

    kind: str
    names: tuple
    signals: np.ndarray
    fs: float
    events: tuple | None
    phases: np.ndarray
    coupling: np.ndarray
    truth: MappingProxyType
    description: str
    params: MappingProxyType

    @property
    def n_replicas(self) -> int:
        return int(self.signals.shape[0])

    def replica(self, i: int) -> Scenario:
        """Replica ``i`` as a :class:`Scenario` (identical to ``scenario(...)`` with the
        same arguments when i = 0)."""
        i = int(i)
        if not 0 <= i < self.n_replicas:
            _fail(f"ScenarioBatch.replica: index {i} is out of range 0..{self.n_replicas - 1}"
                  f"; pass a valid replica index.")
        return Scenario(kind=self.kind,
                        signals={n: self.signals[i, k].copy()
                                 for k, n in enumerate(self.names)},
                        fs=self.fs,
                        events=None if self.events is None else dict(self.events[i]),
                        phases={n: self.phases[i, k].copy()
                                for k, n in enumerate(self.names)},
                        coupling=self.coupling.copy(), truth=self.truth,
                        description=self.description, params=self.params)


# =========================================================================== labelling runs
def _label_inits(kind, model_params):
    if kind in ("phase", "quasi_periodic"):
        return [0.0, math.pi] if kind == "phase" else [0.0, 0.0, math.pi, 0.0]
    if kind == "stuart_landau":
        return [1.0 + 0j, -1.0 + 0j]
    if kind == "beats":
        return [0.0, math.pi, 0.0]
    cyc = _cycle(_MODEL_OF_KIND[kind], model_params)
    s = cyc["samples"]
    return list(s[0]) + list(s[s.shape[0] // 2])


@lru_cache(maxsize=256)
def _label_run(kind, model_params, fa, fb, p, q, kab, kba, extra):
    """Noise-free run of the pair (fixed-step Heun, same step rule as the noisy runs)."""
    C = np.array([[[0.0, kab], [kba, 0.0]]])
    f = np.array([fa, fb])
    zeros = np.zeros(2)
    m = np.array([p, q])
    if kind == "stuart_landau":
        spec = _sl_spec(2, TWO_PI * f, np.full(2, dict(extra)["amplitude_relaxation"]), C,
                        zeros, m)
    elif kind == "beats":
        ex = dict(extra)
        vals = {"heart_freq": fa, "breath_freq": fb, "coupling": kab, "rsa": ex["rsa"]}
        spec, _ = _beats_spec(vals, {}, [(p, q, "coupling")], 0.0, 0.0, 0.0, 10.0)
    else:
        spec = _waveform_spec(_MODEL_OF_KIND[kind], dict(model_params), f, None, zeros)
    f_slow, f_fast = min(fa, fb), max(fa, fb)
    fs_lab = 25.0 * f_fast
    n_out = int(math.ceil((_TRANSIENT_CYCLES + _EVAL_CYCLES) / f_slow * fs_lab)) + 1
    k = max(1, math.ceil(1.0 / (fs_lab * spec.dt_max) - 1e-9))
    h = 1.0 / (fs_lab * k)
    rec = integrate_spec(spec, n_steps=(n_out - 1) * k, h=h, every=k, n_out=n_out, n_rep=1,
                         inits=[_label_inits(kind, model_params)], noise_gens=None,
                         coupling=C, integrator="fixed")
    t = np.arange(n_out) / fs_lab
    lab = strobe_label(t, rec.phases[0, 0], rec.phases[0, 1], ratio=(p, q),
                       transient_cycles=_TRANSIENT_CYCLES * fb / f_slow,
                       expected_cycles=_EVAL_CYCLES * fb / f_slow)
    lab["horizon_slow_cycles"] = _EVAL_CYCLES
    return lab


def _mask(direction):
    return {"mutual": (1.0, 1.0), "b_to_a": (1.0, 0.0), "a_to_b": (0.0, 1.0)}[direction]


@lru_cache(maxsize=128)
def _calibrate(kind, model_params, fa, fb, p, q, direction, extra):
    """Smallest ladder strength that locks, times 2 (or the largest that still locks)."""
    k0 = _KINDS[kind]["k0"]
    ma, mb = _mask(direction)
    tried = []
    first = None
    for k in range(_LADDER):
        K = k0 * 2.0 ** (k / 2.0)
        lab = _label_run(kind, model_params, fa, fb, p, q, K * ma, K * mb, extra)
        tried.append((K, lab["locked"]))
        if lab["locked"]:
            first = k
            break
    if first is None:
        return None, tried
    choice = first
    for k in (first + 2, first + 1):
        if k < _LADDER + 2:
            K = k0 * 2.0 ** (k / 2.0)
            lab = _label_run(kind, model_params, fa, fb, p, q, K * ma, K * mb, extra)
            tried.append((K, lab["locked"]))
            if lab["locked"]:
                choice = k
                break
    return k0 * 2.0 ** (choice / 2.0), tried


# Ladder index chosen by :func:`_calibrate` for the default detuning (3 %) and default
# model parameters (the dynamics in model time do not depend on ``freq``); found with the
# ladder itself (tests/unit/test_simulate.py re-derives some of them). They only save
# start-up time: the truth label is still computed by a noise-free run.
_PRESETS = {
    ("van_der_pol", 1, 1, "mutual", 0.03): 6,
    ("van_der_pol", 2, 1, "mutual", 0.03): 10,
    ("van_der_pol", 3, 1, "mutual", 0.03): 7,
    ("spiking", 1, 1, "mutual", 0.03): 5,
    ("spiking", 2, 1, "mutual", 0.03): 8,
    ("spiking", 3, 1, "mutual", 0.03): 8,
    ("spiking", 1, 2, "mutual", 0.03): 7,
    ("rossler", 1, 1, "mutual", 0.03): 5,
}


def _ladder_strength(kind, model_params, fa, fb, p, q, direction, detuning, extra,
                     func):
    key = (kind, p, q, direction, round(detuning, 9))
    k0 = _KINDS[kind]["k0"]
    ma, mb = _mask(direction)
    defaults = tuple(sorted(_model_params(_MODEL_OF_KIND[kind], func).items()))
    if key in _PRESETS and model_params == defaults:
        K = k0 * 2.0 ** (_PRESETS[key] / 2.0)
        if _label_run(kind, model_params, fa, fb, p, q, K * ma, K * mb, extra)["locked"]:
            return K, "preset ladder step (2x the smallest locking strength)"
    K, tried = _calibrate(kind, model_params, fa, fb, p, q, direction, extra)
    if K is None:
        _fail(f"{func}: no coupling strength up to {tried[-1][0]:.3g} locks two "
              f"{kind} units at ratio {p}:{q} with detuning {detuning:g} ({direction}); "
              f"pass coupling=... explicitly (the truth label then comes from a "
              f"noise-free run) or choose another ratio (1:1 always works).")
    return K, "ladder K0*2^(k/2): 2x the smallest locking strength"


def _direction_matrix(direction, K):
    ma, mb = _mask(direction)
    return np.array([[0.0, K * ma], [K * mb, 0.0]])


def _plan(kind, coupled, ratio, duration, fs, freq, detuning, coupling, direction, noise,
          measurement_noise, options, func):
    """Everything but the random draws: frequencies, coupling, truth, description."""
    d, p, q, freq, detuning, direction, noise, meas = _checked_plan_args(
        kind, coupled, ratio, freq, detuning, direction, noise, measurement_noise, func)
    options = dict(options or {})
    # frequencies: the faster unit runs at ``freq`` Hz (before detuning)
    fb = freq * q / p if p >= q else freq
    fa = fb * p / q * (1.0 + detuning)
    model_params, options, extra = _kind_options(kind, options, fa, func)
    units = d["coupling_units"]
    names = ("heart", "breath") if kind == "beats" else ("A", "B")
    K, how = _coupling_strength(kind, d, coupled, coupling, model_params, fa, fb, p, q, direction, detuning,
                                extra, func)
    C = _direction_matrix(direction, K)
    truth = _truth(kind, K, C, model_params, fa, fb, p, q, extra)
    truth.update(coupling_units=units, coupling_choice=how, tested_ratio=(p, q))
    description = _describe(kind, names, fa, fb, p, q, K, direction, units, truth,
                            noise, meas, options)
    params = {"kind": kind, "coupled": bool(coupled), "ratio": (p, q),
              "duration": float(duration), "fs": float(fs), "freqs_hz": (fa, fb),
              "freq": freq, "detuning": detuning, "direction": direction,
              "coupling_strength": K, "noise": noise, "measurement_noise": meas,
              "options": dict(options)}
    return names, fa, fb, p, q, C, truth, description, params


def _checked_plan_args(kind, coupled, ratio, freq, detuning, direction, noise, measurement_noise, func):
    """Check the scalar arguments in order and fill the kind's defaults for those left None."""
    check_choice(kind, "kind", SCENARIO_KINDS, func)
    if not isinstance(coupled, (bool, np.bool_)):
        _fail(f"{func}: parameter coupled must be True or False, got {coupled!r}; pass "
              f"coupled=True for a locked pair or coupled=False for independent units.")
    d = _KINDS[kind]
    m = check_ratio(d.get("ratio", (1, 1)) if ratio is None else ratio, 2, func)
    p, q = pair_ratio(m[0], m[1])
    freq = check_real(d["freq"] if freq is None else freq, "freq", func, low=0,
                      low_open=True)
    detuning = check_real(0.03 if detuning is None else detuning, "detuning", func,
                          low=-0.5, low_open=True, high=0.5)
    direction = d.get("direction", "mutual") if direction is None else direction
    check_choice(direction, "direction", DIRECTIONS, func)
    if kind == "beats" and direction != "b_to_a":
        _fail(f"{func}: for kind 'beats' the breathing acts on the heart, so direction "
              f"must be 'b_to_a', got {direction!r}; leave direction=None.")
    noise = d["noise"] if noise is None else check_real(noise, "noise", func, low=0)
    meas = check_real(d["measurement_noise"] if measurement_noise is None
                      else measurement_noise, "measurement_noise", func, low=0)
    return d, p, q, freq, detuning, direction, noise, meas


def _kind_options(kind, options, fa, func):
    """The kind's options checked and completed: model parameters, options, and the extra ones as a sorted tuple."""
    model = _MODEL_OF_KIND.get(kind)
    if model is not None:
        mp = _model_params(model, func, **options)
        model_params = tuple(sorted(mp.items()))
        options = mp
    else:
        model_params = ()
        allowed = {"stuart_landau": ("amplitude_relaxation",), "beats": ("rsa",),
                   "quasi_periodic": ("second_freq_ratio", "second_amplitude"),
                   "damped_noise": ("damping",)}.get(kind, ())
        for k_ in options:
            if k_ not in allowed:
                _fail(f"{func}: option {k_!r} is not used by kind {kind!r}; accepted: "
                      f"{', '.join(allowed) or 'none'}.")
            options[k_] = check_real(options[k_], k_, func)
        if kind == "stuart_landau":
            options.setdefault("amplitude_relaxation", 1.0)
        if kind == "beats":
            options.setdefault("rsa", _RSA_DEPTH * TWO_PI * fa)
        if kind == "damped_noise":
            options.setdefault("damping", 0.05)
    extra = tuple(sorted((k_, float(v)) for k_, v in options.items())) if model is None else ()
    return model_params, options, extra


def _coupling_strength(kind, d, coupled, coupling, model_params, fa, fb, p, q, direction, detuning, extra, func):
    """The coupling strength K and how it was chosen (given, Adler rule, kind default or calibrated ladder)."""
    how = ""
    if not coupled:
        if coupling is not None and coupling != 0:
            _fail(f"{func}: coupling={coupling!r} was given with coupled=False; drop "
                  f"coupling or set coupled=True.")
        K = 0.0
    elif coupling is not None:
        K = check_real(coupling, "coupling", func, low=0, low_open=True)
        how = "given"
    elif kind in ("phase", "stuart_landau", "quasi_periodic", "beats"):
        delta = TWO_PI * p * fb * max(abs(detuning), 0.01)
        S = delta / _ADLER_NU
        K = S / {"mutual": p + q, "b_to_a": q, "a_to_b": p}[direction]
        how = f"Adler nu = {_ADLER_NU} (nu computed with |detuning| >= 1 %)"
    elif kind == "damped_noise":
        K = float(d["coupling"])
        how = "default linear coupling"
    else:
        K, how = _ladder_strength(kind, model_params, fa, fb, p, q, direction, detuning,
                                  extra, func)
    return K, how


def _truth(kind, K, C, model_params, fa, fb, p, q, extra):
    """The known truth of the scenario: locked or not, at which ratio, and by which rule that is known."""
    adler = None
    if kind in ("phase", "quasi_periodic", "stuart_landau", "beats"):
        adler = adler_prediction((fa, fb), C, ratio=(p, q))
    if kind == "damped_noise":
        return {"locked": False, "ratio": None, "coupled": bool(K > 0),
                "dependent": bool(K > 0), "method": "linear_not_self_sustained",
                "detail": {"note": "noise-driven damped oscillators have no limit cycle, "
                                   "so they cannot phase-lock; linear coupling makes "
                                   "them correlated (coherent), which tests based on "
                                   "independent surrogates will detect and "
                                   "multivariate (cross-spectrum keeping) surrogates "
                                   "should not."}}
    if K == 0:
        return {"locked": False, "ratio": None, "coupled": False, "dependent": False,
                "method": "uncoupled",
                "detail": {"note": "independent units (zero coupling, independent "
                                   "noise)", "frequency_ratio": fa / fb}}
    if kind in ("phase", "quasi_periodic"):
        return {"locked": adler["locked"], "ratio": (p, q) if adler["locked"] else None,
                "coupled": True, "dependent": True, "method": "adler",
                "detail": {"adler": adler}}
    lab = _label_run(kind, model_params, fa, fb, p, q, float(C[0, 1]), float(C[1, 0]),
                     extra)
    return {"locked": lab["locked"], "ratio": (p, q) if lab["locked"] else None,
            "coupled": True, "dependent": True, "method": "noise_free_run",
            "detail": {"run": dict(lab), "adler_phase_reduction": adler}}

def _describe(kind, names, fa, fb, p, q, K, direction, units, truth, noise, meas, opts):
    what = {
        "phase": "Two noisy phase oscillators (sine coupling)",
        "stuart_landau": "Two noisy Stuart-Landau oscillators (weakly nonlinear limit cycles)",
        "van_der_pol": f"Two noisy van der Pol relaxation oscillators (mu = {opts.get('mu')})",
        "spiking": "Two noisy FitzHugh-Nagumo units firing periodically (spike-like)",
        "beats": "A heartbeat-like pacemaker (events + ECG-like trace) and a "
                 "breathing-like rhythm with respiratory heart-rate modulation",
        "quasi_periodic": "Two quasi-periodic units (two incommensurate internal "
                          "frequencies, golden-mean ratio)",
        "rossler": "Two Roessler oscillators in the phase-coherent chaotic regime",
        "damped_noise": "Two noise-driven damped linear oscillators (narrow-band noise, "
                        "NOT self-sustained)",
    }[kind]
    arrow = {"mutual": "mutually", "b_to_a": f"one-way ({names[1]} -> {names[0]})",
             "a_to_b": f"one-way ({names[0]} -> {names[1]})"}[direction]
    cpl = ("independent (no coupling)" if K == 0 else
           f"{arrow} coupled with strength {K:.4g} {units}")
    cyc = lambda k: f"{k} cycle{'s' if k != 1 else ''}"  # noqa: E731
    lab = (f"LOCKED at {p}:{q} ({names[0]} completes {cyc(p)} while {names[1]} completes {cyc(q)})"
           if truth["locked"] else "NOT locked")
    nz = "default (unit-SD output)" if noise is None else f"{noise:g}"
    return (f"{what}: {names[0]} at {fa:.4g} Hz and {names[1]} at {fb:.4g} Hz "
            f"(natural frequencies), {cpl}. Intrinsic noise {nz}, measurement noise "
            f"{meas:g} x signal SD. Truth: {lab} (label from {truth['method']}).")


def _simulate(kind, names, fa, fb, p, q, C, params, n_replicas, rng):
    dur, fs = params["duration"], params["fs"]
    noise, meas, opts = params["noise"], params["measurement_noise"], params["options"]
    common = dict(freqs=[fa, fb], coupling=C, measurement_noise=meas, n_replicas=n_replicas,
                  rng=rng)
    if kind == "phase":
        return phase_oscillators(2, dur, fs, ratio=(p, q), noise=noise, **common)
    if kind == "stuart_landau":
        return stuart_landau(2, dur, fs, ratio=(p, q), noise=noise, **common, **opts)
    if kind == "quasi_periodic":
        return quasi_periodic(2, dur, fs, ratio=(p, q), noise=noise, **common, **opts)
    if kind == "van_der_pol":
        return van_der_pol(2, dur, fs, noise=noise, **common, **opts)
    if kind == "spiking":
        return fitzhugh_nagumo(2, dur, fs, noise=noise, **common, **opts)
    if kind == "rossler":
        return rossler(2, dur, fs, noise=noise, **common, **opts)
    if kind == "damped_noise":
        return damped_noise_oscillator(2, dur, fs, noise=noise, **common, **opts)
    return beat_train(dur, fs, heart_freq=fa, breath_freq=fb, ratio=(p, q),
                      coupling=float(C[0, 1]), rsa=opts["rsa"], heart_noise=noise,
                      breath_noise=0.5 * noise, measurement_noise=meas, ecg=True,
                      n_replicas=n_replicas, rng=rng)


_DOC_ARGS = """
    kind : str
        One of ``SCENARIO_KINDS``: "phase", "stuart_landau", "van_der_pol", "spiking"
        (FitzHugh-Nagumo), "beats" (heartbeat events + breathing), "quasi_periodic",
        "rossler", "damped_noise" (null model, not self-sustained).
    coupled : bool
        False: independent units with similar frequencies (the key null case).
        True: coupled strongly enough to lock at ``ratio`` (except "damped_noise",
        which becomes linearly correlated but cannot lock).
    ratio : (p, q) or None
        A completes p cycles while B completes q. Default (1, 1); (4, 1)
        for "beats". The natural frequencies are f_A = f_B (p/q)(1 + detuning).
    duration : float
        Seconds (default 300).
    fs : float
        Sampling rate in Hz (default 100).
    freq : float or None
        Frequency in Hz of the faster unit before detuning (default 1.0).
    detuning : float or None
        Relative detuning of A from the exact ratio (default 0.03).
    coupling : float or None
        Coupling strength per active direction (units in ``truth["coupling_units"]``).
        Default for coupled=True: phase-type kinds use Adler nu = 0.5; waveform kinds
        use twice the smallest strength that locks on a sqrt(2) ladder (noise-free run).
    direction : {"mutual", "a_to_b", "b_to_a"} or None
        Default "mutual" ("b_to_a", breathing -> heart, for "beats").
    noise, measurement_noise : float or None
        Intrinsic noise (in the unit of the kind's simulator) and measurement noise
        (fraction of signal SD). Defaults per kind.
    options : dict or None
        Model parameters: mu (van_der_pol); current, a, b, epsilon (spiking); a, b, c
        (rossler); amplitude_relaxation (stuart_landau); rsa (beats, rad/s; default
        5 % of the heart's angular frequency); second_freq_ratio, second_amplitude
        (quasi_periodic); damping (damped_noise).
    rng : int, numpy.random.Generator or None
        Seeds everything.
"""


def scenario(kind, *, coupled, ratio=None, duration=300.0, fs=100.0, freq=None,
             detuning=None, coupling=None, direction=None, noise=None,
             measurement_noise=None, options=None, rng=None) -> Scenario:
    """A simulated pair with known ground truth, ready for ``syncstats.analyze``.

    Parameters
    ----------
    {args}

    Returns
    -------
    Scenario

    Notes
    -----
    The truth label is "locked at p:q" or "not locked". It comes from the Adler
    criterion where that is exact ("phase", "quasi_periodic": psi obeys the Adler
    equation), otherwise from a noise-free run of the same discretised pair
    (fixed-step Heun, same step rule), started from fixed initial states: after 20
    cycles of the slower unit, psi = q phi_A - p phi_B sampled once per cycle of B
    must stay within a span of pi for 80 cycles. Intrinsic noise can still cause
    occasional phase slips in a "locked" pair; ``syncstats.simulate.phase_slips``
    counts them on the returned true phases.

    Examples
    --------
    >>> sc = scenario("phase", coupled=True, duration=60.0, rng=7)
    >>> sc.truth["locked"], sc.truth["ratio"], sorted(sc.signals)
    (True, (1, 1), ['A', 'B'])
    """
    func = "scenario"
    names, fa, fb, p, q, C, truth, desc, params = _plan(
        kind, coupled, ratio, duration, fs, freq, detuning, coupling, direction, noise,
        measurement_noise, options, func)
    sim = _simulate(kind, names, fa, fb, p, q, C, params, None, rng)
    params["simulator"] = dict(sim.params)
    events = None
    if sim.events is not None:
        events = {n: sim.events[k] for k, n in enumerate(names)}
    return Scenario(kind=kind, signals={n: sim.signals[k] for k, n in enumerate(names)},
                    fs=float(sim.fs), events=events,
                    phases={n: sim.phases[k] for k, n in enumerate(names)}, coupling=C,
                    truth=frozen(truth), description=desc, params=frozen(params))


def scenario_batch(kind, *, n_replicas, coupled, ratio=None, duration=300.0, fs=100.0,
                   freq=None, detuning=None, coupling=None, direction=None, noise=None,
                   measurement_noise=None, options=None, rng=None) -> ScenarioBatch:
    """Many independent replicas of :func:`scenario` in one vectorised call.

    Parameters
    ----------
    n_replicas : int
        Number of independent replicas R; replica i does not depend on R, and
        replica 0 equals ``scenario(...)`` with the same arguments.
    {args}

    Returns
    -------
    ScenarioBatch
        ``signals`` of shape (R, 2, n_samples).

    Examples
    --------
    >>> b = scenario_batch("phase", n_replicas=3, coupled=False, duration=20.0, rng=1)
    >>> b.signals.shape
    (3, 2, 2000)
    """
    func = "scenario_batch"
    R = check_n_replicas(n_replicas, func)
    if R is None:
        _fail(f"{func}: n_replicas must be a positive integer, got None; pass e.g. "
              f"n_replicas=200.")
    names, fa, fb, p, q, C, truth, desc, params = _plan(
        kind, coupled, ratio, duration, fs, freq, detuning, coupling, direction, noise,
        measurement_noise, options, func)
    sim = _simulate(kind, names, fa, fb, p, q, C, params, R, rng)
    params["simulator"] = dict(sim.params)
    params["n_replicas"] = R
    events = None
    if sim.events is not None:
        events = tuple({n: rep[k] for k, n in enumerate(names)} for rep in sim.events)
    return ScenarioBatch(kind=kind, names=names, signals=sim.signals, fs=float(sim.fs),
                         events=events, phases=sim.phases, coupling=C,
                         truth=frozen(truth), description=desc, params=frozen(params))


scenario.__doc__ = scenario.__doc__.replace("    {args}\n", _DOC_ARGS.lstrip("\n"))
scenario_batch.__doc__ = scenario_batch.__doc__.replace("    {args}\n",
                                                        _DOC_ARGS.lstrip("\n"))
