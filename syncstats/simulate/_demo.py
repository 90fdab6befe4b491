"""The bundled demo recording: an invented 10-minute resting-state session.

Story (invented for syncstats, simulated with this package): a volunteer rests
supine during a quiet evening session; a chest belt records breathing, a single-lead
ECG-like trace and its R-peak times are stored, and a finger-pulse amplitude channel
shows a slow (~0.1 Hz) vasomotor wave. The heart's phase is coupled to breathing in
two epochs (4:1, then 3:1 after breathing speeds up and the heart slows) and free in
two others; respiratory heart-rate modulation is present throughout, and the slow
wave is never coupled to either rhythm. All numbers are made up for demonstration.
"""
from __future__ import annotations

import json
import math
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from types import MappingProxyType

import numpy as np

from .._rng import as_seed_sequence
from ._beats import _beats_spec, run_beats
from ._common import _fail, check_time_grid
from ._phase_models import stuart_landau
from ._runner import integrate_spec
from ._truth import adler_prediction, phase_slips

__all__ = ["DEMO_SEED", "DemoRecording", "make_demo_dataset", "load_demo", "write_demo"]

DEMO_SEED = 20240611
DEMO_FS = 100.0
DEMO_DURATION = 600.0
RECORDING_FILE = "demo_recording.csv"
BEATS_FILE = "demo_beats.csv"
TRUTH_FILE = "demo_truth.json"
_RAMP = 5.0      # half-width (s) of the linear parameter ramps between epochs
_SETTLE = 15.0   # seconds after an epoch boundary excluded from the truth epoch
_RSA = 0.3       # rad/s, respiratory heart-rate modulation (present throughout)
_EPS = 0.5       # rad/s, breathing -> heart coupling in the locked epochs

# start, end, heart natural frequency (Hz), breathing frequency (Hz), eps 4:1, eps 3:1
_EPOCHS = (
    (0.0, 150.0, 1.10, 0.270, _EPS, 0.0),
    (150.0, 300.0, 1.16, 0.260, 0.0, 0.0),
    (300.0, 450.0, 0.92, 0.300, 0.0, _EPS),
    (450.0, 600.0, 0.98, 0.240, 0.0, 0.0),
)
_SLOW_FREQ = 0.095   # Hz, slow vasomotor-like wave


@dataclass(frozen=True)
class DemoRecording:
    """The demo session.

    Attributes
    ----------
    time : ndarray (n,)
        Seconds from the start.
    fs : float
        Sampling rate of the continuous signals (100 Hz).
    signals : dict
        "ecg", "breath", "slow_wave" -> 1-D arrays (arbitrary units).
    events : dict
        "heart" -> R-peak (beat) times in seconds.
    truth : mapping
        Scenario story, epochs with their true locking state and ratio, and the
        numbers behind each label (see ``demo_truth.json``).
    phases : dict or None
        True model phases ("heart", "breath", "slow_wave") when freshly simulated by
        :func:`make_demo_dataset`; None when loaded from the package files.
    """

    time: np.ndarray
    fs: float
    signals: dict
    events: dict
    truth: MappingProxyType
    phases: dict | None = None


def _schedule(values):
    """Piecewise-linear schedule over the epochs with ramps of +-_RAMP s."""
    t, v = [0.0], [values[0]]
    for k in range(1, len(values)):
        b = _EPOCHS[k][0]
        t += [b - _RAMP, b + _RAMP]
        v += [values[k - 1], values[k]]
    t.append(DEMO_DURATION)
    v.append(values[-1])
    return np.array(t), np.array(v)


def _spec(noise: bool):
    cols = list(zip(*_EPOCHS))
    scheds = {"heart_freq": _schedule(cols[2]), "breath_freq": _schedule(cols[3]),
              "eps41": _schedule(cols[4]), "eps31": _schedule(cols[5]),
              "rsa": (np.array([0.0, DEMO_DURATION]), np.array([_RSA, _RSA]))}
    terms = [(4, 1, "eps41"), (3, 1, "eps31")]
    sh, sr, sa = (0.08, 0.08, 0.15) if noise else (0.0, 0.0, 0.0)
    spec, _ = _beats_spec({}, scheds, terms, sh, sr, sa, 10.0)
    return spec


def _child(root: np.random.SeedSequence, k: int) -> np.random.SeedSequence:
    return np.random.SeedSequence(root.entropy, spawn_key=tuple(root.spawn_key) + (100 + k,))


def make_demo_dataset(*, rng=DEMO_SEED) -> DemoRecording:
    """Simulate the demo session (10 min at 100 Hz) with its ground truth.

    Parameters
    ----------
    rng : int, numpy.random.Generator or None
        Seed. The default ``DEMO_SEED`` reproduces the files shipped in
        ``syncstats/data`` (up to their 3-decimal rounding).

    Returns
    -------
    DemoRecording

    Notes
    -----
    Heart and breathing come from :func:`beat_train`'s model with scheduled parameters:
    d phi_H = [w_H(t) + e41(t) sin(4 phi_R - phi_H) + e31(t) sin(3 phi_R - phi_H)
    + 0.3 sin phi_R] dt + 0.08 dW (rad, s), d phi_R = w_R(t) dt + 0.08 dW. The truth of
    each epoch comes from the Adler criterion at the epoch's parameters and is checked
    on a noise-free run of the same schedule (no slip = locked); the realised slips and
    the true phase-locking value of the noisy run are reported too. The slow wave is an
    independent Stuart-Landau oscillator at 0.095 Hz.
    """
    root = as_seed_sequence(rng)
    n = check_time_grid(DEMO_DURATION, DEMO_FS, "make_demo_dataset")
    # heart + breathing (noisy)
    sig, ph, ev, params = run_beats(_spec(True), T=n, fs=DEMO_FS, dt=None,
                                    integrator="fixed", n_rep=None, rng=_child(root, 0),
                                    ecg=True, meas=np.array([0.05, 0.05]),
                                    func="make_demo_dataset")
    ecg, breath = sig[0]
    ph_heart, ph_breath = ph[0]
    beats = ev[0][0]
    # slow wave, independent stream
    slow = stuart_landau(1, DEMO_DURATION, DEMO_FS, freqs=_SLOW_FREQ,
                         amplitude_relaxation=0.1, noise=0.05, measurement_noise=0.1,
                         rng=_child(root, 1))
    # noise-free run of the same schedule, fixed initial phases
    spec0 = _spec(False)
    k = params["substeps"]
    h = params["dt_s"]
    rec0 = integrate_spec(spec0, n_steps=(n - 1) * k, h=h, every=k, n_out=n, n_rep=1,
                          inits=[[0.0, math.pi, 0.0]], noise_gens=None,
                          coupling=np.zeros((1, 2, 2)), integrator="fixed")
    truth = _truth(ph_heart, ph_breath, rec0.phases[0, 0], rec0.phases[0, 1],
                   slow.phases[0], root)
    t = np.arange(n) / DEMO_FS
    return DemoRecording(time=t, fs=DEMO_FS,
                         signals={"ecg": ecg, "breath": breath, "slow_wave": slow.signals[0]},
                         events={"heart": beats}, truth=MappingProxyType(truth),
                         phases={"heart": ph_heart, "breath": ph_breath,
                                 "slow_wave": slow.phases[0]})


def _plv(psi):
    return float(abs(np.mean(np.exp(1j * psi))))


def _truth(ph_h, ph_r, ph_h0, ph_r0, ph_s, root):
    epochs = []
    for k, (t0, t1, fh, fr, e41, e31) in enumerate(_EPOCHS):
        s0 = t0 + _SETTLE
        a, b = int(round(s0 * DEMO_FS)), int(round(t1 * DEMO_FS))
        coupled = e41 > 0 or e31 > 0
        p = 4 if e41 > 0 else (3 if e31 > 0 else int(round(fh / fr)))
        eps = e41 if e41 > 0 else e31
        ad = adler_prediction((fh, fr), [[0.0, eps], [0.0, 0.0]], ratio=(p, 1))
        slips0 = phase_slips(ph_h0[a:b], ph_r0[a:b], ratio=(p, 1))
        slips = phase_slips(ph_h[a:b], ph_r[a:b], ratio=(p, 1))
        locked = bool(coupled and ad["locked"] and slips0 == 0)
        epochs.append({
            "start_s": s0, "end_s": t1, "pair": ["heart", "breath"],
            "locked": locked, "ratio": f"{p}:1" if locked else None,
            "p": p if locked else None, "q": 1 if locked else None,
            "checked_ratio": f"{p}:1",
            "meaning": (f"heart completes {p} beats while breathing completes 1 cycle"
                        if locked else
                        f"no locking; heart/breath frequency ratio about {fh / fr:.2f}"),
            "heart_natural_hz": fh, "breath_hz": fr, "coupling_rad_s": eps,
            "rsa_rad_s": _RSA,
            "adler_nu": ad["nu"] if coupled else None,
            "noise_free_slips": slips0, "realised_slips": slips,
            "true_plv": _plv(ph_h[a:b] - p * ph_r[a:b]),
        })
    return {
        "title": "syncstats demo: invented 10-minute resting session",
        "story": __doc__.split("\n\n", 1)[1].strip().replace("\n", " "),
        "invented": True,
        "generator": "syncstats.simulate.make_demo_dataset",
        "seed_entropy": int(root.entropy) if isinstance(root.entropy, int) else None,
        "fs_hz": DEMO_FS, "duration_s": DEMO_DURATION,
        "ratio_convention": "p:q = first signal completes p cycles while the second "
                            "completes q; psi = q*phi_first - p*phi_second",
        "files": {RECORDING_FILE: "time_s and one column per continuous signal",
                  BEATS_FILE: "beat_time_s: R-peak times of the heart (s)",
                  TRUTH_FILE: "this description"},
        "signals": {
            "ecg": "ECG-like trace built from the beat times (a.u.)",
            "breath": "chest-belt-like breathing signal; inspiration starts at its "
                      "minima (a.u.)",
            "slow_wave": "finger pulse-amplitude-like vasomotor wave near 0.095 Hz (a.u.)",
        },
        "events": {"heart": "R-peak times in s (file demo_beats.csv)"},
        "epochs": epochs,
        "epoch_rule": f"epochs start {_SETTLE:g} s after each change of state (the "
                      f"parameters ramp over +-{_RAMP:g} s around 150, 300 and 450 s)",
        "never_coupled": [["slow_wave", "breath"], ["slow_wave", "heart"],
                          ["slow_wave", "ecg"]],
        "slow_wave_mean_hz": float((ph_s[-1] - ph_s[0]) / (2 * math.pi * DEMO_DURATION)),
        "label_method": "Adler criterion at the epoch's parameters, confirmed by zero "
                        "phase slips of the noise-free run of the same schedule; "
                        "realised_slips and true_plv describe the noisy run from the "
                        "true model phases",
        "model": {"heart_noise_rad_per_sqrt_s": 0.08, "breath_noise_rad_per_sqrt_s": 0.08,
                  "breath_log_amplitude_sd": 0.15, "rsa_rad_s": _RSA,
                  "measurement_noise": {"ecg": 0.05, "breath": 0.05, "slow_wave": 0.1}},
    }


def _data_dir():
    return resources.files("syncstats").joinpath("data")


def write_demo(directory=None) -> dict:
    """Simulate the demo with ``DEMO_SEED`` and write the three files.

    Parameters
    ----------
    directory : path-like or None
        Output folder; default the package's ``syncstats/data``.

    Returns
    -------
    dict
        File name -> size in bytes.
    """
    out = Path(directory) if directory is not None else Path(str(_data_dir()))
    out.mkdir(parents=True, exist_ok=True)
    demo = make_demo_dataset(rng=DEMO_SEED)
    cols = ["ecg", "breath", "slow_wave"]
    table = np.column_stack([demo.time] + [demo.signals[c] for c in cols])
    np.savetxt(out / RECORDING_FILE, table, delimiter=",", fmt=["%.2f"] + ["%.3f"] * 3,
               header="time_s," + ",".join(cols), comments="")
    np.savetxt(out / BEATS_FILE, demo.events["heart"], fmt="%.4f", header="beat_time_s",
               comments="")
    with open(out / TRUTH_FILE, "w", encoding="utf-8") as fh:
        json.dump(dict(demo.truth), fh, indent=2)
        fh.write("\n")
    return {f: (out / f).stat().st_size for f in (RECORDING_FILE, BEATS_FILE, TRUTH_FILE)}


def load_demo() -> DemoRecording:
    """Load the bundled demo recording (package data, read with importlib.resources).

    Returns
    -------
    DemoRecording
        ``phases`` is None (true phases are not stored in the files).

    Examples
    --------
    >>> demo = load_demo()
    >>> sorted(demo.signals), demo.fs
    (['breath', 'ecg', 'slow_wave'], 100.0)
    """
    base = _data_dir()
    try:
        with resources.as_file(base.joinpath(RECORDING_FILE)) as p:
            with open(p, encoding="utf-8") as fh:
                header = fh.readline().strip().split(",")
            table = np.loadtxt(p, delimiter=",", skiprows=1, ndmin=2)
        with resources.as_file(base.joinpath(BEATS_FILE)) as p:
            beats = np.loadtxt(p, skiprows=1, ndmin=1)
        truth = json.loads(base.joinpath(TRUTH_FILE).read_text(encoding="utf-8"))
    except FileNotFoundError as exc:  # pragma: no cover - broken installation
        _fail(f"load_demo: package data file {exc.filename} is missing; reinstall "
              f"syncstats or run python -m syncstats.simulate._build_demo.")
    time = table[:, 0]
    fs = float(truth.get("fs_hz", round(1.0 / np.median(np.diff(time)), 9)))
    signals = {name: table[:, k + 1].copy() for k, name in enumerate(header[1:])}
    return DemoRecording(time=time, fs=fs, signals=signals, events={"heart": beats},
                         truth=MappingProxyType(truth), phases=None)
