"""Speed and memory of the surrogate pipeline, as ratios against baselines timed in the
same process (never absolute times; nothing here is a test).

    python benchmarks/run.py [--quick] [--write docs/performance.md]

Units
* FFT unit: one ``scipy.fft.rfft`` of one signal of N samples (float64), timed here on a
  batch of rows and divided per row.
* IAAFT unit: rfft + irfft + argsort of one row of N samples.
* A "surrogate" below is one surrogate of a *pair* of signals pushed through the whole
  pipeline (surrogate generation, detrend, band-pass, analytic signal, phase, PLV); its
  cost is divided by 2 x FFT unit, i.e. reported per signal.

Sections
1. cost per surrogate in FFT units for each signal-level method and path (N = 2^18);
2. IAAFT cost per iteration in IAAFT units;
3. speed-up against the loop a user would write (fourier -> sosfiltfilt -> hilbert per
   surrogate);
4. growth of the cost over N = 2^14 ... 2^20 against N log N;
5. peak memory (ru_maxrss of a fresh process) with 20 vs 2000 surrogates;
6. an hour of two signals at 250 Hz with 999 IAAFT surrogates, extrapolated from a run
   with fewer surrogates (the extrapolation is linear in the surrogate count, which the
   batches make exact up to noise).
"""
from __future__ import annotations

import argparse
import os
import platform
import resource
import subprocess
import sys
import time

import numpy as np
import scipy
import scipy.fft as sfft
from scipy import signal as sps

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.dirname(HERE))

from syncstats import inference as inf  # noqa: E402
from syncstats._inputs import collect_inputs  # noqa: E402
from syncstats._rng import as_seed_sequence, child_generators  # noqa: E402
from syncstats.inference._nulls import NullJob  # noqa: E402
from syncstats.nulls import fourier, iaaft  # noqa: E402
from syncstats.pipeline import Pipeline  # noqa: E402


def pair(n, fs, f=(1.2, 0.3), seed=0, noise=0.3):
    """Two rhythms with wandering phases (heart-like 1.2 Hz and breath-like 0.3 Hz)."""
    rng = np.random.default_rng(seed)
    t = np.arange(n) / fs
    out = {}
    for name, fk in zip(("a", "b"), f):
        ph = 2 * np.pi * fk * t + np.cumsum(rng.standard_normal(n)) * np.sqrt(0.05 / fs)
        out[name] = np.cos(ph) + noise * rng.standard_normal(n)
    return out


def clock(fn, repeat=3):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def fft_unit(n, rows=8):
    x = np.random.default_rng(0).standard_normal((rows, n))
    return clock(lambda: sfft.rfft(x, axis=-1, workers=-1), 5) / rows


def iaaft_unit(n, rows=8):
    x = np.random.default_rng(0).standard_normal((rows, n))
    spec = sfft.rfft(x, axis=-1)
    t1 = clock(lambda: sfft.rfft(x, axis=-1), 5)
    t2 = clock(lambda: sfft.irfft(spec, n=n, axis=-1), 5)
    t3 = clock(lambda: np.argsort(x, axis=-1), 5)
    return (t1 + t2 + t3) / rows


def pipe_for(sig, fs, **kw):
    return Pipeline.fix(collect_inputs(sig, fs, None, None, None), bands={"a": (0.6, 1.8), "b": (0.15, 0.45)}, **kw)


def per_surrogate(pipe, method, b, repeat=2):
    design = inf.make_design(pipe)
    job = NullJob(pipe, design.family, method, as_seed_sequence(1))
    return clock(lambda: job((0, b)), repeat) / b


def naive_loop(sig, fs, b):
    """What a user would write: one surrogate at a time, scipy.signal all the way."""
    sos_a = sps.butter(4, (0.6, 1.8), btype="bandpass", fs=fs, output="sos")
    sos_b = sps.butter(4, (0.15, 0.45), btype="bandpass", fs=fs, output="sos")
    out = []
    for i in range(b):
        rng = np.random.default_rng(i)
        phs = []
        for x, sos in ((sig["a"], sos_a), (sig["b"], sos_b)):
            X = np.fft.rfft(x)
            X[1:-1] *= np.exp(1j * rng.uniform(0, 2 * np.pi, X.size - 2))
            s = np.fft.irfft(X, n=x.size)
            phs.append(np.unwrap(np.angle(sps.hilbert(sps.sosfiltfilt(sos, sps.detrend(s))))))
        out.append(abs(np.mean(np.exp(1j * (phs[0] - phs[1])))))
    return out


def memory_child(n_sur, n, path):
    """Run in a fresh process: peak RSS (MiB) of one null distribution."""
    fs = 100.0
    sig = pair(n, fs)
    kw = {"spectral_filter": True} if path == "spectral" else {}
    pipe = pipe_for(sig, fs, **kw)
    design = inf.make_design(pipe)
    base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    if path == "fixed32":  # the old behaviour: batch_size=32, no budget
        inf.null_distribution(pipe, design.family, "fourier", n_sur, as_seed_sequence(1), batch_size=32,
                              memory_mb=None)
    else:
        inf.null_distribution(pipe, design.family, "fourier", n_sur, as_seed_sequence(1))
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    print(f"{peak / 1024:.1f} {base / 1024:.1f}")


def rss(n_sur, n, path):
    out = subprocess.run([sys.executable, __file__, "--memory-child", str(n_sur), str(n), path],
                         capture_output=True, text=True, check=True).stdout.split()
    return float(out[0]), float(out[1])


def machine():
    model = "unknown"
    try:
        with open("/proc/cpuinfo") as f:
            for line in f:
                if line.startswith("model name"):
                    model = line.split(":", 1)[1].strip()
                    break
    except OSError:
        pass
    return (f"{os.cpu_count()} CPUs ({len(os.sched_getaffinity(0))} usable), {model}; Python "
            f"{platform.python_version()}, numpy {np.__version__}, scipy {scipy.__version__}; load average at start "
            f"{os.getloadavg()[0]:.1f} (the machine is shared: ratios, not times)")


def main(argv=None):
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="smaller sizes (a smoke run)")
    ap.add_argument("--write", default=None, help="write the markdown table to this file")
    ap.add_argument("--memory-child", nargs=3, default=None)
    a = ap.parse_args(argv)
    if a.memory_child:
        memory_child(int(a.memory_child[0]), int(a.memory_child[1]), a.memory_child[2])
        return
    lines = [f"Machine: {machine()}", ""]

    def say(s=""):
        print(s, flush=True)
        lines.append(s)

    # ---------------------------------------------------------------- 1. FFT units
    n = 2**16 if a.quick else 2**18
    fs = 250.0
    sig = pair(n, fs)
    unit = fft_unit(n)
    b = 4
    say(f"### 1. Cost per surrogate and signal, in FFT units (one rfft of N = 2^{int(np.log2(n))} float64 samples)")
    say("")
    say("| method | path | FFT units per surrogate signal | goal |")
    say("|---|---|---|---|")
    paths = [("time domain (sosfiltfilt + hilbert)", {}), ("spectral_filter", {"spectral_filter": True}),
             ("spectral_filter + decimate", {"spectral_filter": True, "decimate": True})]
    for method in ("fourier", "multivariate_fourier", "aaft"):
        for label, kw in paths:
            c = per_surrogate(pipe_for(sig, fs, **kw), method, b) / (2 * unit)
            goal = "<= 1.5" if method == "fourier" else ""
            say(f"| {method} | {label} | {c:.2f} | {goal} |")
    c = fft_unit(n, rows=8)
    gen = clock(lambda: fourier(np.stack([sig["a"], sig["b"]]), child_generators(as_seed_sequence(1), 0, b)), 3)
    say(f"| fourier | generator alone (draws + rotation + irfft) | {gen / (2 * b * unit):.2f} | |")
    ni = 2**14 if a.quick else 2**16
    sig_i = pair(ni, fs)
    for label, kw in paths[:2]:
        unit_i = fft_unit(ni)
        c = per_surrogate(pipe_for(sig_i, fs, **kw), "iaaft", 2, repeat=1) / (2 * unit_i)
        say(f"| iaaft (N = 2^{int(np.log2(ni))}) | {label} | {c:.0f} | |")
    say("")

    # ---------------------------------------------------------------- 2. IAAFT per iteration
    say("### 2. IAAFT cost per iteration, in units of (rfft + irfft + argsort) of one row")
    say("")
    say("| N | rows | iterations (mean) | cost per iteration | goal |")
    say("|---|---|---|---|---|")
    for ni in ((2**14,) if a.quick else (2**14, 2**16, 2**18)):
        x = np.stack(list(pair(ni, fs).values()))
        rows = 2
        t0 = time.perf_counter()
        _, info = iaaft(x, child_generators(as_seed_sequence(2), 0, rows // 2 or 1), return_info=True)
        el = time.perf_counter() - t0
        it = info["iterations"].sum()
        say(f"| 2^{int(np.log2(ni))} | {info['iterations'].size} | {info['iterations'].mean():.0f} | "
            f"{el / it / iaaft_unit(ni, rows=8):.2f} | <= 1.3 |")
    say("")

    # ---------------------------------------------------------------- 3. naive loop
    say("### 3. Speed-up against a per-surrogate scipy.signal loop (fourier, same N as section 1)")
    say("")
    bn = 4
    t_naive = clock(lambda: naive_loop(sig, fs, bn), 1) / bn
    say("| path | speed-up vs loop |")
    say("|---|---|")
    for label, kw in paths:
        say(f"| {label} | {t_naive / per_surrogate(pipe_for(sig, fs, **kw), 'fourier', b):.1f}x |")
    say("")

    # ---------------------------------------------------------------- 4. scaling
    say("### 4. Growth with N (fourier, spectral_filter, no decimation): cost / (N log2 N), relative to 2^14")
    say("")
    say("| N | time-domain path | spectral_filter |")
    say("|---|---|---|")
    ref = {}
    for e in ((14, 16) if a.quick else (14, 16, 18, 20)):
        nn = 2**e
        s_e = pair(nn, fs)
        row = []
        for label, kw in paths[:2]:
            c = per_surrogate(pipe_for(s_e, fs, **kw), "fourier", 2 if e >= 20 else 4, repeat=1) / (nn * e)
            ref.setdefault(label, c)
            row.append(f"{c / ref[label]:.2f}")
        say(f"| 2^{e} | " + " | ".join(row) + " |")
    say("")

    # ---------------------------------------------------------------- 5. memory
    nm = 2**14
    say(f"### 5. Peak memory (ru_maxrss of a fresh process, MiB), fourier surrogates of a pair, N = 2^{int(np.log2(nm))}")
    say("")
    say("| batches | 20 surrogates | 2000 surrogates | ratio | goal |")
    say("|---|---|---|---|---|")
    big = 400 if a.quick else 2000  # spectral path only for 2000 (keeps the run under 10 minutes)
    for path, label in (("spectral", "memory budget 256 MB + spectral_filter"),):
        p20, _ = rss(20, nm, path)
        p2k, _ = rss(big, nm, path)
        say(f"| {label} | {p20:.0f} | {p2k:.0f} | {p2k / p20:.2f} | <= 1.2 |")
    say("")

    # ---------------------------------------------------------------- 6. one hour
    say("### 6. One hour of two signals at 250 Hz, 999 IAAFT surrogates (extrapolated)")
    say("")
    dur = 600.0 if a.quick else 3600.0
    nh = int(dur * fs)
    sig_h = pair(nh, fs)
    s_run = 2 if a.quick else 4
    for label, kw in (("spectral_filter + decimate", {"spectral_filter": True, "decimate": True}),):
        p = pipe_for(sig_h, fs, **kw)
        t_sur = per_surrogate(p, "iaaft", s_run, repeat=1)
        say(f"{label}: analysis rate {p.inputs.fs:.4g} Hz (q = {p.decimation}); {s_run} surrogates of {dur:.0f} s "
            f"timed, 999 extrapolated: {999 * t_sur / 60 * 3600 / dur:.1f} min in this process "
            "(threads for IAAFT rows use both cores)")
    t_sur_full = None
    if not a.quick:
        # the full-rate time-domain pipeline, one surrogate of 10 minutes, scaled by N log N
        n10 = int(600 * fs)
        p = pipe_for(pair(n10, fs), fs)
        t_sur_full = per_surrogate(p, "iaaft", 1, repeat=1) * (nh * np.log2(nh)) / (n10 * np.log2(n10))
        say(f"full rate, time-domain path: 1 surrogate of 600 s timed, scaled by N log N to 3600 s and 999 surrogates: "
            f"{999 * t_sur_full / 60:.0f} min (a lower bound: IAAFT iterations grow with N)")
    say("")
    if a.write:
        with open(a.write, "w") as f:
            f.write(HEADER + "\n".join(lines) + "\n" + FOOTER)


HEADER = """# Performance

Written by `python benchmarks/run.py --write docs/performance.md`. Every number is a ratio
measured in one process against a baseline timed in the same run; the machine is shared,
so expect ±20 % noise between runs. See the notes at the end for the goals and why they
are met or missed.

"""

FOOTER = """
## Notes

See the bottom of this file, maintained by hand.
"""


if __name__ == "__main__":
    main()
