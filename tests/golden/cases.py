"""Frozen analyses for the refactoring guard (issue "One pipeline for data and surrogates").

Each case is a small, seeded ``syncstats.analyze`` call covering one path: pairs, events,
user phases, groups, windows, trials, every surrogate method and every correction.
``python -m tests.golden.cases`` rewrites the stored tables in ``tests/golden/tables/``;
``test_golden.py`` checks that the current code reproduces them exactly.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
TABLES = HERE / "tables"


def _wander(n=3000, fs=20.0, f=1.0, seed=0, coupled=True, n_sig=2, trials=1):
    rng = np.random.default_rng(seed)
    t = np.arange(n) / fs
    walk = lambda: np.cumsum(rng.standard_normal((trials, n)), axis=-1) * np.sqrt(0.3 / fs)  # noqa: E731
    base = 2 * np.pi * f * t + walk() + rng.uniform(0, 2 * np.pi, (trials, 1))
    out = {}
    for k in range(n_sig):
        ph = base + 0.4 * rng.standard_normal((trials, n)) + k if coupled or k == 0 else (
            2 * np.pi * f * (1 + 0.05 * k) * t + walk())
        out[f"s{k}"] = (np.cos(ph) + 0.2 * rng.standard_normal((trials, n))).squeeze(0) if trials == 1 else (
            np.cos(ph) + 0.2 * rng.standard_normal((trials, n)))
    return out


def _events(seed=0, duration=200.0):
    rng = np.random.default_rng(seed)
    t = np.arange(0, duration, 0.05)
    breath = 2 * np.pi * 0.25 * t + np.cumsum(rng.normal(0, 0.02, t.size))
    beats, phi = [], rng.uniform()
    for k in range(1, 100000):
        phi += 1.0 / 1.0 + 0.02 * rng.standard_normal()
        if phi > duration - 1:
            break
        beats.append(phi)
    return {"breath": np.cos(breath)}, {"heart": np.array(beats)}


def cases():
    """name -> dict of analyze keyword arguments."""
    sig = _wander(seed=1)
    sig3 = _wander(seed=2, n_sig=3, coupled=False)
    cont, evs = _events(seed=3)
    rng = np.random.default_rng(4)
    pa = np.cumsum(rng.normal(2 * np.pi / 20, 0.05, 3000))
    pb = pa + rng.normal(0, 0.6, 3000)
    trials = _wander(n=400, seed=5, trials=8)
    base = dict(fs=20.0, n_surrogates=19, n_bootstrap=49, rng=7, batch_size=7)
    out = {}
    for sur in ("fourier", "aaft", "iaaft", "time_shift", "twin", "multivariate_fourier"):
        out[f"pair_{sur}"] = dict(signals=sig, surrogate=sur, **base)
    for cor in ("fdr_bh", "fdr_by", "holm", "bonferroni", "max_stat", "none"):
        out[f"group_{cor}"] = dict(signals=sig3, surrogate="fourier", correction=cor, ratios=[(1, 1), (2, 1)],
                                   measures=("plv", "ppc", "entropy_index", "conditional_index", "order_parameter"),
                                   **base)
    out["windows_time_shift"] = dict(signals=sig, surrogate="time_shift", windows=50.0, window_step=25.0,
                                     correction="max_stat", **base)
    out["events_interval_shuffle"] = dict(signals=cont, events=evs, surrogate="interval_shuffle", pairs=[("heart", "breath")],
                                          ratios=[(4, 1), (3, 1)], measures=("plv", "ppc"), **base)
    out["events_protophase"] = dict(signals=cont, events=evs, surrogate="interval_shuffle", protophase_correction=True,
                                    pairs=[("heart", "breath")], ratios=[(4, 1)], **base)
    out["events_iaaft_auto"] = dict(signals=cont, events=evs, surrogate="iaaft", pairs=[("heart", "breath")], ratios="auto", **base)
    out["phases_time_shift"] = dict(signals=None, phases={"a": pa, "b": pb}, surrogate="time_shift", **base)
    out["trials_shuffle"] = dict(signals=trials, surrogate="trial_shuffle", measures=("plv", "ppc"), **base)
    out["wavelet_bca"] = dict(signals=sig, phase_method="wavelet", ci_method="bca", surrogate="fourier", **base)
    out["protophase_signals"] = dict(signals=sig, protophase_correction=True, surrogate="fourier", **base)
    out["no_surrogates"] = dict(signals=sig3, n_surrogates=0, fs=20.0, n_bootstrap=49, rng=7,
                                measures=("plv", "order_parameter"))
    return out


def run_case(name):
    import syncstats

    return syncstats.analyze(**cases()[name]).table


if __name__ == "__main__":  # pragma: no cover
    import warnings

    TABLES.mkdir(exist_ok=True)
    warnings.simplefilter("ignore")
    for name in cases():
        run_case(name).to_pickle(TABLES / f"{name}.pkl")
        print("wrote", name)
