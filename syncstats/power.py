"""Power and study design: how long to record to detect a given coupling.

* :func:`power_curve` estimates, by simulation with :mod:`syncstats.simulate`, the
  share of replicas in which :func:`syncstats.analyze` rejects independence, over a
  grid of recording lengths and coupling strengths, with a binomial confidence
  interval for every cell.
* :func:`required_length` finds the shortest length on a grid that reaches a target
  power (bisection; power grows with length).
* :func:`rayleigh_power` and :func:`rayleigh_cycles_needed` give the power of the
  cycle-level Rayleigh test in closed form (normal approximation), for a quick first
  plan before the simulation.
* :func:`power_figure` draws a curve (matplotlib object API; never pyplot).

Reproducibility: replica ``r`` draws from ``SeedSequence(entropy, spawn_key=(r,))``
(the r-th child of ``SeedSequence(entropy).spawn``) for every cell of the grid: the
cells share their random numbers (common random numbers, which makes differences
between cells less noisy), and no result depends on the executor, the number of
workers or ``replicas_per_job``.

Research software, not a medical device: a power calculation for a simulated model is
a planning aid; study design decisions rest with qualified people and the regulations
that apply where they work.
"""
from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from scipy import integrate, optimize, special, stats

from . import _checks
from ._errors import SyncstatsInputError
from .run import batch_bounds, map_batches

__all__ = [
    "LENGTH_UNITS",
    "PowerCurve",
    "power_curve",
    "power_figure",
    "rayleigh_cycles_needed",
    "rayleigh_power",
    "required_length",
]

LENGTH_UNITS = ("s", "cycles")
_COLUMNS = ["length", "length_unit", "duration_s", "n_cycles", "coupling", "n_replicas", "n_rejections",
            "power", "ci_low", "ci_high", "ci_level", "alpha", "kind", "measure", "surrogate", "n_surrogates"]


# ============================================================================ closed form
def _vm_kappa(rho):
    """Von Mises concentration whose mean resultant length I1/I0 equals rho."""
    if rho <= 0:
        return 0.0
    f = lambda k: special.i1e(k) / special.i0e(k) - rho  # noqa: E731
    hi = 1.0
    while f(hi) < 0:
        hi *= 2.0
    return optimize.brentq(f, 0.0, hi, xtol=1e-12)


def rayleigh_power(n_cycles, *, plv=None, kappa=None, alpha=0.05, search=1):
    """Power of the cycle-level Rayleigh test for von Mises angles (normal approximation).

    Parameters
    ----------
    n_cycles : float
        Independent angles (one per cycle of the slower rhythm).
    plv, kappa : float
        Population locking, either as mean resultant length ``rho`` (the PLV an infinite
        record would give) or as von Mises concentration ``kappa``; give one.
    alpha : float
        Family-wise level; with ``search`` > 1 the per-test level is alpha/search.
    search : int
        Tests searched (Bonferroni).

    Returns
    -------
    float

    Notes
    -----
    With ``C = Σ cos(θ − μ)`` and ``S = Σ sin(θ − μ)``, the central limit theorem gives
    ``C ~ N(nρ, n((1 + ρ₂)/2 − ρ²))`` and ``S ~ N(0, n(1 − ρ₂)/2)``, independent, with
    ``ρ = I1(κ)/I0(κ)`` and ``ρ₂ = I2(κ)/I0(κ)`` for a von Mises law. The test rejects
    when ``C² + S² ≥ R_c²``, ``R_c`` from inverting Zar's approximation
    (:func:`syncstats.claims.critical_plv`); the probability is one integral over S.
    A reference test compares it with a direct Monte Carlo (``scipy.stats.vonmises``).

    Examples
    --------
    >>> round(rayleigh_power(50, plv=0.0), 3)   # size of the test
    0.051
    """
    from .claims import critical_plv

    n = _checks.check_float(n_cycles, "rayleigh_power: n_cycles", low=2.0)
    alpha = _checks.check_float(alpha, "rayleigh_power: alpha", low=0, high=1, open_low=True, open_high=True)
    search = _checks.check_int(search, "rayleigh_power: search", low=1)
    if (plv is None) == (kappa is None):
        raise SyncstatsInputError(
            "rayleigh_power: give exactly one of plv= (population mean resultant length in [0, 1)) or kappa= "
            "(von Mises concentration >= 0)."
        )
    if kappa is None:
        rho = _checks.check_float(plv, "rayleigh_power: plv", low=0.0, high=1.0, open_high=True)
        kappa = _vm_kappa(rho)
    else:
        kappa = _checks.check_float(kappa, "rayleigh_power: kappa", low=0.0)
    g_c = critical_plv(n, alpha / search)
    if not math.isfinite(g_c):
        return 0.0
    r2 = (n * g_c) ** 2
    if kappa == 0:
        # uniform angles: 2 R²/n ~ chi²(2) asymptotically, the size of the test
        return float(math.exp(-r2 / n))
    i0 = special.i0e(kappa)
    rho, rho2 = special.i1e(kappa) / i0, special.ive(2, kappa) / i0
    mc, sc = n * rho, math.sqrt(max(n * ((1 + rho2) / 2 - rho * rho), 1e-300))
    ss = math.sqrt(max(n * (1 - rho2) / 2, 1e-300))
    r = math.sqrt(r2)

    def miss(s):  # P(C² < r² − s²) times the density of S
        h = math.sqrt(max(r2 - s * s, 0.0))
        return (special.ndtr((h - mc) / sc) - special.ndtr((-h - mc) / sc)) * math.exp(-0.5 * (s / ss) ** 2) / (ss * math.sqrt(2 * math.pi))

    p_miss, _ = integrate.quad(miss, -r, r, limit=200)
    return float(min(1.0, max(0.0, 1.0 - p_miss)))


def rayleigh_cycles_needed(*, plv=None, kappa=None, power=0.8, alpha=0.05, search=1, max_cycles=1e6):
    """Fewest independent cycles for which the cycle-level Rayleigh test reaches ``power``.

    Uses :func:`rayleigh_power` (normal approximation); confirm with
    :func:`power_curve`, which includes the phase estimation and the surrogate test.

    Examples
    --------
    >>> rayleigh_cycles_needed(plv=0.3, power=0.8)
    52
    """
    power = _checks.check_float(power, "rayleigh_cycles_needed: power", low=0, high=1, open_low=True, open_high=True)
    f = lambda k: rayleigh_power(k, plv=plv, kappa=kappa, alpha=alpha, search=search)  # noqa: E731
    lo, hi = 2, 4
    while f(hi) < power:
        lo, hi = hi, hi * 2
        if hi > max_cycles:
            raise SyncstatsInputError(
                f"rayleigh_cycles_needed: more than {max_cycles:g} cycles would be needed; the locking is too weak "
                "to detect, choose a larger plv or kappa."
            )
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if f(mid) >= power:
            hi = mid
        else:
            lo = mid
    return int(hi)


# ============================================================================ simulation
@dataclass(frozen=True)
class _ReplicaJob:
    """Picklable job: replicas ``tasks[start:stop]`` of the grid -> p-values."""

    tasks: tuple  # (cell index, duration_s, coupling, replica index)
    entropy: int
    kind: str
    ratio: tuple
    fs: float | None
    scenario_options: dict
    measure: str
    surrogate: str
    n_surrogates: int
    analyze_options: dict

    def __call__(self, bounds):
        from .api import analyze
        from .simulate import scenario

        start, stop = bounds
        out = []
        for cell, dur, k, r in self.tasks[start:stop]:
            rep = np.random.SeedSequence(self.entropy, spawn_key=(r,))
            sim_seed, test_seed = rep.spawn(2)
            extra = dict(self.scenario_options)
            if self.fs is not None:
                extra["fs"] = self.fs
            sc = scenario(self.kind, coupled=k > 0, coupling=k if k > 0 else None, ratio=self.ratio,
                          duration=dur, rng=np.random.default_rng(sim_seed), **extra)
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                names = tuple(sc.phases)[:2]
                tested = tuple(sc.truth["tested_ratio"])
                res = analyze(sc.signals, sc.fs, events=sc.events, pairs=[names], ratios=[tested],
                              measures=(self.measure,),
                              surrogate=self.surrogate, n_surrogates=self.n_surrogates, correction="none",
                              rng=np.random.default_rng(test_seed), **self.analyze_options)
            row = res.table.iloc[0]
            out.append((cell, float(row["p_value"]), float(row["value"]), float(row["n_cycles"])))
        return out


@dataclass(frozen=True)
class PowerCurve:
    """Simulated power over lengths x couplings.

    Attributes
    ----------
    table : pandas.DataFrame
        One row per (length, coupling): ``length``, ``length_unit``, ``duration_s``,
        ``n_cycles`` (mean measured cycles of the slower rhythm), ``coupling``,
        ``n_replicas``, ``n_rejections``, ``power`` (share with p <= alpha), ``ci_low``,
        ``ci_high``, ``ci_level`` (Clopper–Pearson), ``alpha``, ``kind``, ``measure``,
        ``surrogate``, ``n_surrogates``.
    p_values : ndarray (n_cells, n_replicas)
        Surrogate p-values per cell and replica (cells in table order).
    values : ndarray (n_cells, n_replicas)
        The measure per cell and replica.
    params : dict
        Every option, the seed entropy included.
    """

    table: pd.DataFrame
    p_values: np.ndarray
    values: np.ndarray
    params: dict[str, Any] = field(default_factory=dict)

    def figure(self, *, target_power=None):
        """A matplotlib Figure of power against length (see :func:`power_figure`)."""
        return power_figure(self, target_power=target_power)


def _seed_entropy(rng):
    if isinstance(rng, np.random.Generator):
        return int(rng.integers(0, 2**63 - 1))
    if rng is None:
        return int(np.random.SeedSequence().entropy)
    if isinstance(rng, np.random.SeedSequence):
        return int(rng.entropy)
    return _checks.check_int(rng, "rng", low=0, hint="Pass an int seed or a numpy.random.Generator.")


def _power_curve_iv(lengths, couplings, kind, length_unit, measure, surrogate, n_surrogates, n_replicas, alpha,
                    ratio, fs, scenario_options, ci_level, replicas_per_job, analyze_options):
    from .simulate import SCENARIO_KINDS

    def as_list(x, name, low, open_low):
        vals = [x] if np.isscalar(x) else list(x) if x is not None else []
        if not vals:
            raise SyncstatsInputError(f"power_curve: {name} is empty; give one or more numbers, e.g. {name}=[60, 120].")
        return sorted(dict.fromkeys(_checks.check_float(v, f"power_curve: {name}", low=low, open_low=open_low)
                                    for v in vals))

    lengths = as_list(lengths, "lengths", 0.0, True)
    couplings = as_list(couplings, "couplings", 0.0, False)
    if kind not in SCENARIO_KINDS:
        raise SyncstatsInputError(
            f"power_curve: kind must be one of {', '.join(SCENARIO_KINDS)}; got {kind!r}; 'phase' is the default."
        )
    if length_unit not in LENGTH_UNITS:
        raise SyncstatsInputError(
            f"power_curve: length_unit must be 's' (seconds) or 'cycles' (of the slower rhythm); got {length_unit!r}."
        )
    if not isinstance(measure, str):
        raise SyncstatsInputError(f"power_curve: measure must be one measure name such as 'plv'; got {measure!r}.")
    n_surrogates = _checks.check_int(n_surrogates, "power_curve: n_surrogates", low=1,
                                     hint="Choose S with S + 1 a multiple of 1/alpha, e.g. 39 for alpha = 0.05.")
    n_replicas = _checks.check_int(n_replicas, "power_curve: n_replicas", low=1, hint="Use e.g. 100 or more.")
    alpha = _checks.check_float(alpha, "power_curve: alpha", low=0, high=1, open_low=True, open_high=True)
    ci_level = _checks.check_float(ci_level, "power_curve: ci_level", low=0, high=1, open_low=True, open_high=True)
    replicas_per_job = _checks.check_int(replicas_per_job, "power_curve: replicas_per_job", low=1)
    if fs is not None:
        fs = _checks.check_fs(fs, where="power_curve: fs", hint="pass the simulated sampling rate in Hz")
    if ratio is not None:
        ratio = _checks.parse_ratio(ratio)
    for nm, d in (("scenario_options", scenario_options), ("analyze_options", analyze_options)):
        if d is not None and not isinstance(d, dict):
            raise SyncstatsInputError(f"power_curve: {nm} must be a dict of keyword arguments; got {type(d).__name__}.")
    scenario_options = dict(scenario_options or {})
    analyze_options = dict(analyze_options or {})
    bad = sorted({"coupled", "coupling", "duration", "rng", "ratio", "kind", "n_replicas"} & set(scenario_options))
    if bad:
        raise SyncstatsInputError(
            f"power_curve: scenario_options may not set {', '.join(bad)}; power_curve sets them from its own parameters."
        )
    bad = sorted({"pairs", "ratios", "measures", "surrogate", "n_surrogates", "correction", "rng", "events"}
                 & set(analyze_options))
    if bad:
        raise SyncstatsInputError(
            f"power_curve: analyze_options may not set {', '.join(bad)}; use power_curve's own parameters."
        )
    analyze_options.setdefault("n_bootstrap", 0)
    if (n_surrogates + 1) * alpha % 1 > 1e-9 and abs((n_surrogates + 1) * alpha % 1 - 1) > 1e-9:
        warnings.warn(
            f"power_curve: (n_surrogates + 1) * alpha = {(n_surrogates + 1) * alpha:g} is not a whole number, so the "
            f"surrogate test has size below alpha; use e.g. n_surrogates = {round(1 / alpha) * 2 - 1}.",
            stacklevel=3,
        )
    return (lengths, couplings, kind, length_unit, measure, surrogate, n_surrogates, n_replicas, alpha, ratio, fs,
            scenario_options, ci_level, replicas_per_job, analyze_options)


def _slow_freq(kind, ratio, scenario_options):
    """Noise-free frequency (Hz) of the slower unit of a scenario, from its options."""
    from .simulate import scenario

    # the scenario's own defaults decide: a short probe is cheap and exact
    probe = scenario(kind, coupled=False, ratio=ratio, duration=20.0, fs=scenario_options.get("fs", 20.0),
                     rng=0, **{k: v for k, v in scenario_options.items() if k != "fs"})
    return float(min(dict(probe.params)["freqs_hz"]))


def power_curve(*, lengths, couplings, kind="phase", length_unit="s", measure="plv", surrogate="fourier",
                n_surrogates=39, n_replicas=100, alpha=0.05, ratio=None, fs=None, scenario_options=None,
                ci_level=0.95, executor=None, n_jobs=None, replicas_per_job=10, rng=None,
                analyze_options=None) -> PowerCurve:
    """Power to reject independence, by simulation, over recording lengths and couplings.

    Parameters
    ----------
    lengths : float or sequence of float
        Recording lengths, in seconds (``length_unit="s"``) or in cycles of the slower
        rhythm (``"cycles"``; converted with its noise-free frequency).
    couplings : float or sequence of float
        Coupling strengths in the scenario's unit (``truth["coupling_units"]``; rad/s
        for "phase"). 0 simulates independent rhythms: the power there is the
        false-positive rate and should sit near ``alpha``.
    kind : str
        A ``syncstats.simulate.SCENARIO_KINDS`` kind (default "phase": noisy phase
        oscillators with sine coupling).
    measure : str
        The measure tested (one of ``syncstats.measures.MEASURES``).
    surrogate : str
        Null method for ``syncstats.analyze`` (default "fourier": pipeline-faithful and
        fast; IAAFT is about ten times slower).
    n_surrogates : int
        Surrogates per replica (default 39: S + 1 is a multiple of 1/alpha, so the
        discrete test has size exactly alpha at 0.05).
    n_replicas : int
        Simulated recordings per cell.
    alpha : float
        A replica rejects when its surrogate p-value is <= alpha.
    ratio : (p, q), optional
        Simulated and tested ratio (scenario default when None).
    fs : float, optional
        Simulated sampling rate (scenario default when None).
    scenario_options : dict, optional
        Further ``syncstats.simulate.scenario`` keywords (freq, detuning, noise,
        measurement_noise, direction, options).
    ci_level : float
        Level of the Clopper–Pearson interval of each power (``scipy.stats.binomtest``).
    executor, n_jobs
        As for ``syncstats.run.map_batches`` (None/"serial", "processes", an executor
        or a Dask client).
    replicas_per_job : int
        Replicas per submitted job (does not change results).
    rng : int, numpy.random.Generator or None
        Seed of every simulation and every surrogate draw.
    analyze_options : dict, optional
        Further ``syncstats.analyze`` keywords (bands, phase_method, windows, ...).

    Returns
    -------
    PowerCurve

    Examples
    --------
    >>> pc = power_curve(lengths=[30], couplings=[0.3], n_replicas=4, fs=10.0, rng=1)
    >>> pc.table[["length", "coupling", "n_replicas"]].values.tolist()
    [[30.0, 0.3, 4.0]]
    """
    (lengths, couplings, kind, length_unit, measure, surrogate, n_surrogates, n_replicas, alpha, ratio, fs,
     scenario_options, ci_level, replicas_per_job, analyze_options) = _power_curve_iv(
        lengths, couplings, kind, length_unit, measure, surrogate, n_surrogates, n_replicas, alpha, ratio, fs,
        scenario_options, ci_level, replicas_per_job, analyze_options)
    entropy = _seed_entropy(rng)
    if length_unit == "cycles":
        f_slow = _slow_freq(kind, ratio, dict(scenario_options, **({"fs": fs} if fs else {})))
        durations = [L / f_slow for L in lengths]
    else:
        durations = list(lengths)
    cells = [(L, d, k) for L, d in zip(lengths, durations) for k in couplings]
    tasks = tuple((c, d, k, r) for c, (_, d, k) in enumerate(cells) for r in range(n_replicas))
    job = _ReplicaJob(tasks=tasks, entropy=entropy, kind=kind, ratio=ratio, fs=fs,
                      scenario_options=scenario_options, measure=measure, surrogate=surrogate,
                      n_surrogates=n_surrogates, analyze_options=analyze_options)
    chunks = map_batches(job, batch_bounds(len(tasks), replicas_per_job), executor=executor, n_jobs=n_jobs)
    flat = [x for ch in chunks for x in ch]
    pv = np.array([x[1] for x in flat]).reshape(len(cells), n_replicas)
    val = np.array([x[2] for x in flat]).reshape(len(cells), n_replicas)
    ncyc = np.array([x[3] for x in flat]).reshape(len(cells), n_replicas)
    rows = []
    for c, (L, d, k) in enumerate(cells):
        rej = int(np.count_nonzero(pv[c] <= alpha + 1e-12))
        ci = stats.binomtest(rej, n_replicas).proportion_ci(confidence_level=ci_level, method="exact")
        rows.append(dict(length=float(L), length_unit=length_unit, duration_s=float(d),
                         n_cycles=float(np.mean(ncyc[c])), coupling=float(k), n_replicas=n_replicas,
                         n_rejections=rej, power=rej / n_replicas, ci_low=float(ci.low), ci_high=float(ci.high),
                         ci_level=ci_level, alpha=alpha, kind=kind, measure=measure, surrogate=surrogate,
                         n_surrogates=n_surrogates))
    table = pd.DataFrame(rows, columns=_COLUMNS)
    params = dict(lengths=lengths, couplings=couplings, kind=kind, length_unit=length_unit, measure=measure,
                  surrogate=surrogate, n_surrogates=n_surrogates, n_replicas=n_replicas, alpha=alpha,
                  ratio=ratio, fs=fs, scenario_options=scenario_options, ci_level=ci_level,
                  analyze_options=analyze_options, seed_entropy=entropy)
    return PowerCurve(table=table, p_values=pv, values=val, params=params)


def required_length(*, coupling, lengths=None, target_power=0.8, curve=None, **options):
    """Shortest length on the grid ``lengths`` whose simulated power reaches the target.

    Bisection over the sorted grid (power grows with length), each step one
    :func:`power_curve` cell with the same seed, so the answer equals reading the full
    curve. Returns a one-row-per-evaluated-length :class:`PowerCurve` table and the
    answer.

    Parameters
    ----------
    coupling : float
        The coupling strength to detect (> 0).
    lengths : sequence of float
        Candidate lengths (unit from ``length_unit``, default seconds).
    target_power : float
        Default 0.8.
    **options
        Any other :func:`power_curve` keyword (kind, measure, surrogate, n_surrogates,
        n_replicas, alpha, rng, executor, ...).

    curve : PowerCurve, optional
        Read the answer from this curve's cells at ``coupling`` instead of simulating
        (``lengths`` and ``options`` are then ignored).

    Returns
    -------
    dict
        ``length`` (None when even the longest does not reach the target),
        ``length_conservative`` (shortest whose CI lower bound reaches the target, or
        None), ``target_power``, ``table`` (evaluated cells, by length).
    """
    coupling = _checks.check_float(coupling, "required_length: coupling", low=0.0, open_low=True,
                                   hint="Give the coupling strength to detect.")
    target_power = _checks.check_float(target_power, "required_length: target_power", low=0, high=1, open_low=True,
                                       open_high=True)
    if curve is not None:
        if not isinstance(curve, PowerCurve):
            raise SyncstatsInputError("required_length: curve must be a PowerCurve from power_curve, or None.")
        tab = curve.table[np.isclose(curve.table["coupling"], coupling)].sort_values("length").reset_index(drop=True)
        if tab.empty:
            raise SyncstatsInputError(
                f"required_length: the curve has no cells at coupling {coupling:g}; pick one of "
                f"{', '.join(f'{k:g}' for k in sorted(set(curve.table['coupling'])))}."
            )
        ok, cons = tab[tab["power"] >= target_power], tab[tab["ci_low"] >= target_power]
        return dict(length=None if ok.empty else float(ok["length"].min()),
                    length_conservative=None if cons.empty else float(cons["length"].min()),
                    target_power=target_power, table=tab)
    if lengths is None or np.isscalar(lengths) or len(lengths) == 0:
        raise SyncstatsInputError("required_length: lengths must be a list of candidate lengths, e.g. [60, 120, 240].")
    grid = sorted(dict.fromkeys(_checks.check_float(v, "required_length: lengths", low=0, open_low=True)
                                for v in lengths))
    if "rng" not in options or options["rng"] is None:
        options["rng"] = _seed_entropy(None)  # one seed for every evaluation
    else:
        options["rng"] = _seed_entropy(options["rng"])
    cache = {}

    def row(i):
        if i not in cache:
            cache[i] = power_curve(lengths=[grid[i]], couplings=[coupling], **options).table.iloc[0]
        return cache[i]

    lo, hi = -1, len(grid) - 1
    if row(hi)["power"] < target_power:
        hi = None
    else:
        while hi - lo > 1:
            mid = (lo + hi) // 2
            if row(mid)["power"] >= target_power:
                hi = mid
            else:
                lo = mid
    table = pd.DataFrame([cache[i] for i in sorted(cache)]).reset_index(drop=True)
    cons = table[table["ci_low"] >= target_power]
    return dict(length=None if hi is None else float(grid[hi]),
                length_conservative=None if cons.empty else float(cons["length"].min()),
                target_power=target_power, table=table)


# ============================================================================ figure
def power_figure(curve, *, target_power=None):
    """Power against length, one line per coupling, with binomial intervals.

    Uses the matplotlib object API (``Figure`` + ``FigureCanvasAgg``); save with
    ``fig.savefig(path)``. The user's pyplot backend is never touched.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    tab = curve.table if isinstance(curve, PowerCurve) else curve
    if not isinstance(tab, pd.DataFrame) or not set(_COLUMNS) <= set(tab.columns):
        raise SyncstatsInputError(
            "power_figure: curve must be a PowerCurve or its table; pass the result of power_curve."
        )
    fig = Figure(figsize=(6.0, 4.0), layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    for k, g in tab.groupby("coupling", sort=True):
        g = g.sort_values("length")
        yerr = np.vstack([g["power"] - g["ci_low"], g["ci_high"] - g["power"]])
        ax.errorbar(g["length"], g["power"], yerr=yerr, marker="o", capsize=3, label=f"coupling {k:g}")
    alpha = float(tab["alpha"].iloc[0])
    ax.axhline(alpha, color="0.5", lw=0.8, ls=":", label=f"alpha = {alpha:g}")
    if target_power is not None:
        ax.axhline(float(target_power), color="0.3", lw=0.8, ls="--", label=f"target {float(target_power):g}")
    unit = tab["length_unit"].iloc[0]
    ax.set_xlabel("recording length (s)" if unit == "s" else "recording length (cycles of the slower rhythm)")
    ax.set_ylabel("power (share of replicas with p <= alpha)")
    ax.set_ylim(-0.02, 1.02)
    ax.set_title(f"{tab['measure'].iloc[0]}, {tab['surrogate'].iloc[0]} surrogates "
                 f"(S = {int(tab['n_surrogates'].iloc[0])}), {int(tab['n_replicas'].iloc[0])} replicas per point",
                 fontsize=9)
    ax.legend(fontsize=8, loc="lower right")
    return fig
