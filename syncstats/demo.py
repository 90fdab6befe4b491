"""The bundled demo study and scenario files for the command line.

Sits at the top with ``api`` and ``cli``: it joins the simulators (which depend only on
numpy/scipy), the readers/writers and ``analyze``.
"""
from __future__ import annotations

import json
from dataclasses import replace
from pathlib import Path

import numpy as np
from scipy import signal as sps

from .api import AnalysisResult, analyze

__all__ = ["DEMO_SETTINGS", "demo_analysis", "write_scenario"]

#: what `syncstats demo` runs: two-minute windows every minute (at least 10 cycles of
#: the slow wave in each), the ratios a physiologist would try for heart and breathing,
#: an automatic scan for the slow wave, IAAFT surrogates of the continuous signals (the
#: heart's beat times stay as recorded, so one side of every pair is randomised) and a
#: family-wise max-statistic over every pair x ratio x window. Time-shift surrogates are
#: not used here: the heart and breathing rates change from epoch to epoch, and a shift
#: that carries one epoch's rhythm into another's breaks the stationarity that null
#: assumes (it produced a false heart/slow-wave hit on this study).
DEMO_SETTINGS = dict(
    pairs=[("heart", "breath"), ("breath", "slow_wave"), ("heart", "slow_wave")],
    ratios={("heart", "breath"): [(3, 1), (4, 1), (5, 1)], ("breath", "slow_wave"): "auto", ("heart", "slow_wave"): "auto"},
    measures=("plv",),
    surrogate="iaaft",
    correction="max_stat",
    windows=120.0,
    window_step=60.0,
    bands={"breath": (0.1, 0.6), "slow_wave": (0.05, 0.15)},
)


DEMO_FS = 10.0  # Hz, rate at which the demo's continuous signals are analysed


def demo_analysis(*, n_surrogates: int = 199, rng=2026, progress=None) -> AnalysisResult:
    """Analyse the bundled demo study (an invented, simulated resting session).

    Returns the :class:`~syncstats.api.AnalysisResult`; its notes tell the story and the
    true epochs so that a reader can compare the verdicts with the truth.
    """
    from .simulate import load_demo

    demo = load_demo()
    # breathing and the slow wave are below 1 Hz: analyse them at 10 Hz (zero-phase FIR
    # anti-alias filter, far above both bands, so it cannot create locking in band)
    step = int(round(demo.fs / DEMO_FS))
    signals = {k: sps.decimate(v, step, ftype="fir", zero_phase=True) for k, v in demo.signals.items() if k != "ecg"}
    res = analyze(
        signals,
        fs=demo.fs / step,
        events=demo.events,
        n_surrogates=n_surrogates,
        rng=rng,
        recording="demo",
        progress=progress,
        **DEMO_SETTINGS,
    )
    truth = demo.truth
    told = []
    for ep in truth.get("epochs", []):
        what = f"locked at {ep['ratio']}" if ep.get("locked") else "not locked"
        pair = " and ".join(ep.get("pair", []))
        told.append(f"truth: {pair} {what} from {ep['start_s']:g} s to {ep['end_s']:g} s")
    told.append(f"demo: breath and slow_wave decimated from {demo.fs:g} Hz to {DEMO_FS:g} Hz before the analysis")
    return replace(res, notes=("demo data: " + str(truth.get("story", "")),) + tuple(res.notes) + tuple(told),
                   params={**res.params, "command": "demo"})


def write_scenario(out, *, kind="stuart_landau", coupled=False, ratio="1:1", duration=300.0, fs=100.0, rng=0,
                   overwrite=False, **scenario_options) -> Path:
    """Simulate a scenario and write ``recording.csv`` (time_s + signals), one event file
    per event train (``events_<name>.txt``) and ``truth.json`` into ``out`` atomically."""
    from ._atomic import write_folder_atomically
    from ._checks import parse_ratio
    from .io import Recording, write_events, write_recording_csv
    from .simulate import scenario

    sc = scenario(kind, coupled=coupled, ratio=parse_ratio(ratio), duration=duration, fs=fs, rng=rng,
                  **{k: v for k, v in scenario_options.items() if v is not None})

    def build(tmp: Path) -> None:
        write_recording_csv(Recording(name=kind, signals={k: np.asarray(v) for k, v in sc.signals.items()}, fs=sc.fs),
                            tmp / "recording.csv")
        for name, ev in (sc.events or {}).items():
            write_events(np.asarray(ev), tmp / f"events_{name}.txt")
        truth = {"kind": kind, "coupled": bool(coupled), "seed": rng, "fs": sc.fs, "description": sc.description,
                 "truth": {k: (list(v) if isinstance(v, tuple) else v) for k, v in dict(sc.truth).items()}}
        (tmp / "truth.json").write_text(json.dumps(truth, indent=2, default=str))

    return write_folder_atomically(out, build, overwrite=overwrite)
