"""Calibration and power of every surrogate test on every rhythm family.

For each rhythm family (simulated with ``syncstats.simulate``) and each surrogate method,
``R`` independent replicas are analysed with ``syncstats.analyze`` exactly as a user would
(same pipeline, one test per replica at the family's ratio, no correction): the share of
replicas with p <= alpha is the false-positive rate (FPR) when the rhythms are
independent and the power when they are coupled. The naive Rayleigh test on every
sample of the phase difference is the contrast row.

The reduced size runs in the default test suite (``test_calibration.py``); the full
size regenerates ``docs/validation.md``:

    python -m tests.validation.study            # full size, about an hour on 2 cores
    python -m tests.validation.study --quick    # a few minutes, prints the table only

The binomial 99 % band for the FPR is ``scipy.stats.binom.ppf([0.005, 0.995], R, alpha)/R``
(common practice for Monte-Carlo calibration checks). S + 1 is a multiple of 1/alpha so
that the discrete surrogate test has size exactly alpha.
"""
from __future__ import annotations

import argparse
import warnings
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
from scipy import stats

import syncstats
from syncstats.inference import rayleigh_test
from syncstats.measures import phase_difference
from syncstats.simulate import scenario_batch

ALPHA = 0.05
DURATION = 200.0  # s
FS = 10.0  # Hz: rhythms near 1 Hz and 0.25 Hz
CHUNK = 10  # replicas simulated together (fixed, so results do not depend on workers)


#: hand-kept notes on changes made after the main table was last generated (re-measured
#: rows); empty it when the main table is regenerated
ADDENDUM: list[str] = []


@dataclass(frozen=True)
class Family:
    """One rhythm family of the study."""

    name: str
    kind: str
    methods: tuple[str, ...]
    ratio: tuple[int, int] = (1, 1)
    options: dict = field(default_factory=dict)
    events: tuple[str, ...] = ()  # rhythms given to analyze as event times
    note: str = ""


FAMILIES = (
    Family("phase oscillators", "phase", ("time_shift", "fourier", "iaaft", "twin")),
    Family("Stuart-Landau limit cycles", "stuart_landau", ("time_shift", "fourier", "iaaft", "twin")),
    Family("van der Pol relaxation", "van_der_pol", ("time_shift", "fourier", "iaaft")),
    Family("FitzHugh-Nagumo spiking (waveforms)", "spiking", ("time_shift", "fourier", "iaaft")),
    Family("FitzHugh-Nagumo spiking (spike times)", "spiking", ("time_shift", "interval_shuffle"), events=("A", "B")),
    Family("quasi-periodic units", "quasi_periodic", ("time_shift", "fourier", "iaaft")),
    Family("Roessler phase-coherent chaos", "rossler", ("time_shift", "fourier", "iaaft", "twin")),
    Family("heart beats + breathing, no RSA", "beats", ("time_shift", "interval_shuffle", "iaaft"), ratio=(4, 1),
           options={"rsa": 0.0}, events=("heart",)),
    Family("heart beats + breathing, with RSA", "beats", ("time_shift", "interval_shuffle", "iaaft"), ratio=(4, 1),
           events=("heart",), note="RSA makes the rhythms dependent without locking: rejections are not false"),
    Family("noise-driven damped oscillators", "damped_noise", ("time_shift", "fourier", "iaaft"),
           note="not self-sustained; 'coupled' = linear coupling, which is dependence but not locking"),
)


def band(r: int, alpha: float = ALPHA):
    """Binomial 99 % band of the rejection share for r replicas at nominal alpha.

    ``scipy.stats.binom.ppf([0.005, 0.995], r, alpha) / r`` (common practice for
    Monte-Carlo calibration checks). A share above the upper end has probability at most
    0.5 % when the test has size alpha.
    """
    lo, hi = stats.binom.ppf([0.005, 0.995], r, alpha)
    return lo / r, hi / r


def fpr_upper(r: int, alpha: float = ALPHA) -> float:
    """Upper end of the binomial 99 % band: the largest FPR a size-alpha test passes."""
    return band(r, alpha)[1]


def _inputs(batch, i, fam: Family):
    sc = batch.replica(i)
    signals = {k: v for k, v in sc.signals.items() if k not in fam.events}
    events = {k: sc.events[k] for k in fam.events} if fam.events else None
    names = list(batch.names)
    return signals, events, (names[0], names[1])


def _one(args):
    fam, method, coupled, r0, r1, n_sur, seed = args
    warnings.simplefilter("ignore")
    # a chunk of replicas has its own seed: results do not depend on the number of workers
    batch = scenario_batch(fam.kind, n_replicas=r1 - r0, coupled=coupled, ratio=fam.ratio,
                           duration=DURATION, fs=FS, options=fam.options or None,
                           rng=np.random.SeedSequence([seed, r0]))
    out = []
    for i in range(r0, r1):
        signals, events, pair = _inputs(batch, i - r0, fam)
        if method == "rayleigh":
            res = syncstats.analyze(signals, fs=FS, events=events, pairs=[pair], ratios=[fam.ratio], n_surrogates=0,
                                    n_bootstrap=0)
            psi = phase_difference(res.phases[pair[0]], res.phases[pair[1]], *fam.ratio)
            out.append(float(rayleigh_test(psi)[1]))
            continue
        res = syncstats.analyze(signals, fs=FS, events=events, pairs=[pair], ratios=[fam.ratio], surrogate=method,
                                n_surrogates=n_sur, n_bootstrap=0, correction="none", rng=seed * 100_000 + i)
        out.append(float(res.table.p_value.iloc[0]))
    return out


def rejection_rate(fam: Family, method: str, *, coupled: bool, replicas: int, n_surrogates: int, seed: int,
                   workers: int = 1):
    """Share of replicas with p <= ALPHA (and the p-values)."""
    jobs = [(fam, method, coupled, a, min(a + CHUNK, replicas), n_surrogates, seed) for a in range(0, replicas, CHUNK)]
    if workers > 1:
        with ProcessPoolExecutor(workers) as pool:
            parts = list(pool.map(_one, jobs))
    else:
        parts = [_one(j) for j in jobs]
    p = np.concatenate(parts)
    return float(np.mean(p <= ALPHA)), p


def verdict(fpr: float, r: int) -> str:
    lo, hi = band(r)
    if fpr > hi:
        return "INVALID (too many false positives)"
    if fpr < lo:
        return "conservative (valid, loses power)"
    return "calibrated"


def run_study(*, replicas: int, n_surrogates: int, heavy_replicas: int, workers: int, seed: int = 11):
    rows = []
    for k, fam in enumerate(FAMILIES):
        for method in fam.methods + ("rayleigh",):
            r = heavy_replicas if method in ("iaaft", "twin") else replicas
            fpr, _ = rejection_rate(fam, method, coupled=False, replicas=r, n_surrogates=n_surrogates,
                                    seed=seed + 2 * k, workers=workers)
            pw, _ = rejection_rate(fam, method, coupled=True, replicas=r, n_surrogates=n_surrogates,
                                   seed=seed + 2 * k + 1, workers=workers)
            rows.append(dict(family=fam.name, method=method if method != "rayleigh" else "naive Rayleigh (every sample)",
                             ratio=f"{fam.ratio[0]}:{fam.ratio[1]}", replicas=r, fpr=fpr, power=pw,
                             verdict=verdict(fpr, r), note=fam.note))
            print(f"{fam.name:42s} {rows[-1]['method']:30s} FPR {fpr:.3f} power {pw:.3f} {rows[-1]['verdict']}",
                  flush=True)
    return rows


def write_markdown(rows, path: Path, *, replicas, heavy_replicas, n_surrogates):
    lo, hi = band(replicas)
    hlo, hhi = band(heavy_replicas)
    lines = [
        "# Validation: false-positive rate and power of each surrogate test",
        "",
        "Generated by `python -m tests.validation.study` (do not edit by hand). Every replica is one",
        f"simulated pair ({DURATION:g} s at {FS:g} Hz, `syncstats.simulate.scenario_batch` defaults) analysed with",
        "`syncstats.analyze` exactly as a user would: automatic band, Hilbert phase (event phase for",
        f"event rhythms), PLV at the family's ratio, {n_surrogates} surrogates, no correction; a rejection is",
        f"p <= {ALPHA}. FPR: independent rhythms (detuned, uncoupled); power: coupled and locked (truth from",
        "the Adler criterion or a noise-free run).",
        "",
        f"Binomial 99 % band of the FPR at alpha = {ALPHA}: [{lo:.3f}, {hi:.3f}] for {replicas} replicas,",
        f"[{hlo:.3f}, {hhi:.3f}] for {heavy_replicas} (IAAFT and twin rows). Above the band the test is",
        "invalid for that family; below it the test is valid but conservative.",
        "",
        "| family | method | ratio | replicas | FPR | power | verdict | note |",
        "|---|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        lines.append(
            f"| {r['family']} | {r['method']} | {r['ratio']} | {r['replicas']} | {r['fpr']:.3f} | {r['power']:.3f} | "
            f"{r['verdict']} | {r['note']} |"
        )
    lines += [
        "",
        "## Reading the table",
        "",
        "* The naive Rayleigh test treats every sample of the phase difference as independent; its",
        "  false-positive rate (0.36 to 0.90 here) shows why a surrogate null is needed.",
        "* fourier and iaaft assume a linear Gaussian process. For self-sustained oscillators their",
        "  surrogates wander in frequency more than the data, so they are conservative (fourier FPR",
        "  0.000 to 0.015 on limit cycles, spiking and quasi-periodic units) but keep good power at",
        "  these record lengths. They were not invalid on our spiking waveforms; `analyze` still",
        "  warns when `fourier` meets a spiky signal, because Gaussian surrogates do not reproduce",
        "  its waveform, and recommends iaaft.",
        "* time_shift keeps each rhythm's own dynamics and runs over the whole circular group of",
        "  shifts, an exact permutation test under stationarity. With the old five-cycle minimum",
        "  shift it sat above the band on weakly diffusing phase oscillators (0.085 at R = 400): the",
        "  observed alignment's own neighbourhood was left out of the reference set, which then held",
        "  too few independent values; with the whole group it is at the nominal level. A shift also",
        "  carries one epoch's rhythm into another, so rate changes between epochs (the demo study)",
        "  break it; and very regular rhythms leave it little power (`analyze` warns when fewer than",
        "  19 effectively independent shifts remain).",
        "* interval_shuffle destroys serial correlation of intervals (respiratory heart-rate",
        "  modulation). At the 4:1 ratio tested here that did not produce false rejections, but",
        "  `analyze` warns when the intervals are serially correlated (Ljung-Box test).",
        "* twin surrogates found few twins in these noisy records (they then behave like shifts of",
        "  the data); `analyze` passes on the generator's warning.",
        "* The damped-oscillator rows are the impostor case: rhythmic but not self-sustained. Under",
        "  independence every null holds its level; 'power' there is the share of linearly coupled",
        "  pairs called dependent, not locked; a locked verdict needs a high value, a narrow",
        "  interval and persistence over time, which these pairs do not show.",
        "* A rejection always means 'not independent'. Synchronization additionally needs a",
        "  bounded phase difference at a ratio (high value, narrow interval, plateau in time).",
    ]
    from .verdicts import CSV as VERDICTS_CSV
    from .verdicts import markdown as verdict_markdown

    if VERDICTS_CSV.exists():
        lines += verdict_markdown(pd.read_csv(VERDICTS_CSV).to_dict("records"))
    if ADDENDUM:
        lines += ["", "## Changes after the first table was generated", "", *ADDENDUM]
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("\n".join(lines) + "\n")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="small size, print only")
    ap.add_argument("--markdown-only", action="store_true",
                    help="rewrite validation.md from validation.csv and validation_verdicts.csv without re-running")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--out", default=str(Path(__file__).resolve().parents[2] / "docs" / "validation.md"))
    a = ap.parse_args(argv)
    size = dict(replicas=40, heavy_replicas=20, n_surrogates=39) if a.quick else dict(
        replicas=200, heavy_replicas=60, n_surrogates=39)
    if a.markdown_only:
        rows = pd.read_csv(Path(a.out).with_suffix(".csv")).fillna("").to_dict("records")
        reps = sorted({int(r["replicas"]) for r in rows})
        write_markdown(rows, Path(a.out), replicas=reps[-1], heavy_replicas=reps[0], n_surrogates=size["n_surrogates"])
        print(f"wrote {a.out}")
        return
    rows = run_study(workers=a.workers, **size)
    if not a.quick:
        write_markdown(rows, Path(a.out), **size)
        pd.DataFrame(rows).to_csv(Path(a.out).with_suffix(".csv"), index=False)
        print(f"wrote {a.out}")


if __name__ == "__main__":
    main()
