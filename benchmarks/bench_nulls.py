"""Speed and memory of the surrogate pipeline, as ratios against baselines measured in
the same run (never absolute times; nothing here is a test).

    python benchmarks/bench_nulls.py [--n 30000] [--surrogates 64]

Reports
1. batched vs one-at-a-time surrogates through the whole pipeline (same results);
2. PLV at every circular shift by one FFT cross-correlation vs the direct loop;
3. peak memory of a run with batch_size=8 vs batch_size=S (tracemalloc), showing that
   memory is O(batch x N), not O(S x N).
"""
from __future__ import annotations

import argparse
import time
import tracemalloc

import numpy as np

import syncstats
from syncstats.nulls import time_shift_plv_all


def _pair(n, fs=100.0, seed=0):
    rng = np.random.default_rng(seed)
    t = np.arange(n) / fs
    walk = np.cumsum(rng.standard_normal((2, n)), axis=1) * np.sqrt(0.3 / fs)
    return {"a": np.cos(2 * np.pi * t + walk[0]), "b": np.cos(2 * np.pi * t + walk[1])}, fs


def _clock(fn, repeat=3):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main(argv=None):
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", type=int, default=30000)
    ap.add_argument("--surrogates", type=int, default=64)
    a = ap.parse_args(argv)
    sig, fs = _pair(a.n)
    kw = dict(fs=fs, surrogate="fourier", n_surrogates=a.surrogates, n_bootstrap=0, rng=1)

    t_one, r1 = _clock(lambda: syncstats.analyze(sig, batch_size=1, **kw), repeat=1)
    t_bat, r2 = _clock(lambda: syncstats.analyze(sig, batch_size=32, **kw), repeat=1)
    assert r1.table.equals(r2.table)
    print(f"1. batched (32) vs one-at-a-time pipeline: {t_one / t_bat:.2f}x faster (identical tables)")

    rng = np.random.default_rng(2)
    za = np.exp(1j * np.cumsum(rng.normal(0.1, 0.05, 4096)))
    zb = np.exp(1j * np.cumsum(rng.normal(0.1, 0.05, 4096)))
    t_fft, all_fft = _clock(lambda: time_shift_plv_all(za, zb))
    t_dir, all_dir = _clock(lambda: np.array([abs(np.mean(za * np.conj(np.roll(zb, -k)))) for k in range(za.size)]), 1)
    assert np.allclose(all_fft, all_dir, atol=1e-9)
    print(f"2. PLV at all {za.size} shifts, FFT vs direct loop: {t_dir / t_fft:.0f}x faster")

    def peak(batch):
        tracemalloc.start()
        syncstats.analyze(sig, batch_size=batch, **kw)
        _, pk = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        return pk

    small, big = peak(8), peak(a.surrogates)
    print(f"3. peak memory, batch 8 vs batch {a.surrogates}: {small / big:.2f} of the all-at-once peak")


if __name__ == "__main__":
    main()
