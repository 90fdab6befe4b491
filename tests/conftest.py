import json
import os
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parents[1]
REF = ROOT / "reference_values"

#: full-size statistical runs only on demand (SYNCSTATS_FULL=1); CI runs a reduced size
FULL = os.environ.get("SYNCSTATS_FULL", "") == "1"


def load_ref(name):
    path = REF / name
    if path.suffix == ".json":
        return json.loads(path.read_text())
    import pandas as pd

    return pd.read_csv(path)


@pytest.fixture
def ref():
    return load_ref


def sine_pair(duration=200.0, fs=50.0, fa=1.0, fb=1.0, phase=0.5, noise=0.0, seed=0):
    """Two sinusoids (+ optional white noise) for tests."""
    rng = np.random.default_rng(seed)
    t = np.arange(0, duration, 1 / fs)
    a = np.sin(2 * np.pi * fa * t) + noise * rng.standard_normal(t.size)
    b = np.sin(2 * np.pi * fb * t + phase) + noise * rng.standard_normal(t.size)
    return {"a": a, "b": b}


def diffusing_pair(duration=120.0, fs=50.0, f=1.0, coupled=True, diffusion=0.3, noise=0.2, seed=0):
    """Two rhythms whose phases wander (random walk, rad^2/s = ``diffusion``); when
    ``coupled`` B follows A's phase with a small jitter, otherwise B wanders on its own.
    Independent wandering rhythms are the null case that strictly periodic sines are not.
    """
    rng = np.random.default_rng(seed)
    n = int(duration * fs)
    t = np.arange(n) / fs
    walk = lambda: np.cumsum(rng.standard_normal(n)) * np.sqrt(diffusion / fs)  # noqa: E731
    pa = 2 * np.pi * f * t + walk()
    pb = pa + 0.3 * rng.standard_normal(n) + 0.8 if coupled else 2 * np.pi * f * t + walk()
    return {
        "a": np.cos(pa) + noise * rng.standard_normal(n),
        "b": np.cos(pb) + noise * rng.standard_normal(n),
    }
