"""The ``syncstats`` command: a thin shell over the Python API.

Exit status: 0 success; 2 bad input or usage (one plain sentence on stderr naming the
file/signal/option at fault and what to do; a traceback only with ``--debug``);
3 a study in which some recordings failed and the rest were written (each failure
named with its reason); 130 interrupted (nothing written); 1 an internal error. ``python -m syncstats`` is the
same command. Outputs are written atomically; inputs are never modified.
"""
from __future__ import annotations

import argparse
import inspect
from dataclasses import replace
import sys
import tomllib
import warnings
from pathlib import Path

from ._errors import SyncstatsInputError

__all__ = ["main"]

EXAMPLES_ANALYZE = """\
examples:
  # heart and breathing in one CSV with a time column; scan ratios near the frequency ratio
  syncstats analyze night.csv --signals ecg,resp --ratios auto --seed 7 --out night-results

  # beat times from a separate file, 4:1 and 5:1 only, family-wise max-statistic
  syncstats analyze resp.csv --events beats=rpeaks.txt --ratios 4:1,5:1 \\
      --correction max_stat --n-surrogates 999 --seed 1 --out resp-beats

  # an EDF recording with R-peak annotations, 60 s windows, options from a file
  syncstats analyze sleep.edf --annotation R --windows 60 --config study.toml --out sleep-results

  # trials cut around stimulus times: when after the stimulus do the two sites lock?
  syncstats analyze sites.csv --stimuli tones.txt --trial-window=-0.5,1.5 --surrogate trial_shuffle \\
      --seed 2 --out tone-locking

  # synchronization clusters among many rhythms
  syncstats analyze cells.csv --clusters --surrogate time_shift --seed 3 --out cell-clusters
"""

EXAMPLES_SIMULATE = """\
examples:
  syncstats simulate --kind stuart_landau --coupled --duration 300 --fs 100 --seed 3 --out sim-locked
  syncstats simulate --kind beats --coupled --ratio 4:1 --seed 2 --out sim-beats
  syncstats simulate --kind phase --ratio 3:1 --detuning 0.05 --noise 0.3 --seed 4 --out sim-independent
"""

def _str(v, key):
    if not isinstance(v, str):
        raise SyncstatsInputError(f"option {key} must be text; got {v!r}.")
    return v


def _list(v, key):
    if isinstance(v, str):
        v = [v]
    if not isinstance(v, (list, tuple)) or not all(isinstance(x, (str, list, tuple)) for x in v):
        raise SyncstatsInputError(f"option {key} must be a list; got {v!r}.")
    return list(v)


def _pairs(v, key):
    items = _list(v, key)
    out = []
    for pr in items:
        if isinstance(pr, str):
            pr = [x.strip() for x in pr.split(",")]
        if len(pr) != 2 or not all(isinstance(x, str) for x in pr):
            raise SyncstatsInputError(f"option {key} must list pairs of two signal names, e.g. [[\"heart\", \"resp\"]]; got {pr!r}.")
        out.append(tuple(pr))
    return out


def _bands(v, key):
    if not isinstance(v, dict):
        raise SyncstatsInputError(f"option {key} must be a table NAME = [LOW, HIGH] in Hz; got {v!r}.")
    return {str(k): tuple(b) if isinstance(b, (list, tuple)) else b for k, b in v.items()}


def _num(low=None, high=None, open_low=False, open_high=False):
    def conv(v, key):
        from ._checks import check_float

        return check_float(v, f"option {key}", low=low, high=high, open_low=open_low, open_high=open_high)

    return conv


def _whole(low=None, high=None):
    def conv(v, key):
        from ._checks import check_int

        return check_int(v, f"option {key}", low=low, high=high)

    return conv


def _flag(v, key):
    from ._checks import check_bool

    return check_bool(v, f"option {key}")


#: every analysis option: config key -> converter; the command line and a --config file
#: go through the same converters (booleans strictly true/false)
CONFIG_KEYS = {
    "fs": _num(0, open_low=True),
    "signals": _str,
    "events": _list,
    "pairs": _pairs,
    "ratios": _str,
    "measures": _str,
    "surrogate": _str,
    "n_surrogates": _whole(0),
    "correction": _str,
    "alpha": _num(0, 1, True, True),
    "seed": _whole(0),
    "bands": _bands,
    "phase_method": _str,
    "protophase_correction": _flag,
    "windows": _num(0, open_low=True),
    "window_step": _num(0, open_low=True),
    "edge_s": _num(0),
    "min_shift_s": _num(0, open_low=True),
    "ci_level": _num(0, 1, True, True),
    "ci_method": _str,
    "n_bootstrap": _whole(0),
    "batch_size": _whole(1),
    "jobs": _whole(1),
    "gaps": _str,
    "resample_to": _num(0, open_low=True),
    "annotation": _str,
    "time_column": _str,
    "allow_truncated": _flag,
    "epochs": _flag,
    "epoch_tolerance": _num(0, 3.141592653589793, open_low=True),
    "epoch_window": _whole(2),
    "epoch_min_cycles": _num(0),
    "epoch_min_s": _num(0),
    "stimuli": _str,
    "trial_window": _str,
    "trial_correction": _str,
    "trial_threshold": _num(0, 1, True, True),
    "clusters": _flag,
}


def _package_version() -> str:
    try:
        from importlib.metadata import version

        return version("syncstats")
    except Exception:  # pragma: no cover
        return "0+unknown"


def _default(name):
    """The default of an ``analyze`` keyword (the command line never repeats them)."""
    from .api import analyze

    return inspect.signature(analyze).parameters[name].default


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors in one sentence (exit 2)."""

    def error(self, message):  # noqa: D401
        raise SyncstatsInputError(f"{message} (see '{self.prog} --help').")


def _add_analysis_options(a, measures, surrogates, corrections, ci_methods):
    """The analysis options (shared by every subcommand that analyses); defaults are
    those of ``syncstats.analyze``, choices those of the registries."""
    opt = lambda flag, help, **kw: a.add_argument(flag, help=help, **kw)  # noqa: E731
    opt("--fs", "sampling rate in Hz (when the file has no time column)")
    opt("--signals", "comma-separated signal names to use (default: all)")
    opt("--events", "event times (s) from a file; repeatable", action="append", metavar="NAME=FILE")
    opt("--pair", "a pair to test; repeatable (default: every pair)", action="append", nargs=2, metavar=("A", "B"),
        dest="pairs")
    opt("--ratios", "comma-separated p:q ratios (A makes p cycles while B makes q), or 'auto' (default: 1:1)")
    opt("--measures", f"comma-separated, from: {', '.join(measures)} (default: {','.join(_default('measures'))})")
    opt("--surrogate", f"one of: {', '.join(surrogates)} (default: {_default('surrogate')}); several, e.g. "
        "iaaft,time_shift, test the same data against each (the first fills results.csv; the report says which "
        "to believe, null_comparison.csv lists all)")
    opt("--n-surrogates", f"surrogates to draw (default {_default('n_surrogates')}; 0 = measures only)",
        dest="n_surrogates")
    opt("--correction", f"one of: {', '.join(corrections)} (default: {_default('correction')})")
    opt("--alpha", f"significance level (default {_default('alpha')})")
    opt("--seed", "seed for every random draw (recorded in provenance.json)")
    opt("--band", "pass band in Hz for one signal; repeatable", action="append", metavar="NAME=LOW-HIGH", dest="band")
    opt("--phase-method", f"hilbert or wavelet (default: {_default('phase_method')})", dest="phase_method")
    opt("--protophase-correction", "uniformise protophases", dest="protophase_correction", action="store_const",
        const=True)
    opt("--windows", "window length in seconds (windows count in the correction)")
    opt("--window-step", "window step in seconds (default: the length)", dest="window_step")
    opt("--min-shift", "smallest time shift in seconds for time_shift surrogates", dest="min_shift_s")
    opt("--ci-level", f"confidence level (default {_default('ci_level')})", dest="ci_level")
    opt("--ci-method", f"one of: {', '.join(ci_methods)} (default: {_default('ci_method')})", dest="ci_method")
    opt("--n-bootstrap", f"bootstrap resamples (default {_default('n_bootstrap')}; 0 = no intervals)",
        dest="n_bootstrap")
    opt("--batch-size", f"surrogates per batch (memory; results do not change; default {_default('batch_size')})",
        dest="batch_size")
    opt("--jobs", "worker processes (default 1)")
    opt("--gaps", "at a gap: stop with an error (default) or analyse each gap-free segment (times stay file "
        "times; one correction family spans the segments)", choices=("error", "split"))
    opt("--resample-to", "bring signals of different rates to this rate (Hz)", dest="resample_to")
    opt("--annotation", "EDF+/WFDB annotation to read as events (e.g. R, atr)")
    opt("--time-column", "name of the time column in a table", dest="time_column")
    opt("--allow-truncated", "analyse a cut-off EDF/BDF/WFDB file up to its last complete record (a warning says "
        "what was cut)", dest="allow_truncated", action="store_const", const=True)
    from .epochs import EPOCH_DEFAULTS as ed

    opt("--epochs", "also find synchronization epochs (stretches in which psi stays within the tolerance) and "
        "test their total locked time against the surrogates (time_shift in place of fourier, aaft or iaaft); "
        "writes epochs.csv and epochs_summary.csv",
        action="store_const", const=True)
    opt("--epoch-tolerance", f"largest circular SD of psi within a window, radians (default {ed['tolerance']:.4g}, "
        "i.e. pi/4); implies --epochs", dest="epoch_tolerance")
    opt("--epoch-window", f"window of the locking index, cycles of the slower rhythm (default "
        f"{ed['window_cycles']}); implies --epochs", dest="epoch_window")
    opt("--epoch-min-cycles", f"shortest epoch, cycles of the slower rhythm (default {ed['min_cycles']:g}); "
        "implies --epochs", dest="epoch_min_cycles")
    opt("--epoch-min-s", f"shortest epoch, seconds (default {ed['min_s']:g}); implies --epochs", dest="epoch_min_s")
    opt("--stimuli", "stimulus times (s, one per line, same clock as the recording): cut trials around them and "
        "follow the across-trial PLV and PPC over time from the stimulus (needs --trial-window; writes "
        "trial_locking.csv and trial_stretches.csv)", metavar="FILE")
    opt("--trial-window", "with --stimuli: each trial's span in seconds relative to its stimulus, e.g. "
        "--trial-window=-0.5,1.5 (write '=' when START is negative)",
        dest="trial_window", metavar="START,END")
    opt("--trial-correction", f"with --stimuli: correction over time points, cluster or max_stat (default: "
        f"{_default('trial_correction')})", dest="trial_correction")
    opt("--trial-threshold", f"with --stimuli and cluster correction: pointwise level that forms stretches (default "
        f"{_default('trial_threshold')})", dest="trial_threshold")
    opt("--clusters", "also find synchronization clusters among three or more rhythms, with the same surrogates "
        "(time_shift in place of fourier, aaft or iaaft; writes clusters.csv, cluster_components.csv and "
        "order_parameter.csv)", action="store_const", const=True)
    opt("--config", "TOML file with any of these options (command-line options win)")
    opt("--out", "output folder (must not exist or be empty)", required=True)
    opt("--overwrite", "replace an existing output folder", action="store_true")
    opt("--quiet", "no progress bar", action="store_true")
    opt("--json", "print a machine-readable summary (JSON) on stdout instead of the summary line",
        action="store_true")


def _add_analyze_command(sub, registries):
    """Add the ``analyze`` subcommand: one recording file and the analysis options."""
    a = sub.add_parser(
        "analyze",
        help="analyse a recording file",
        epilog=EXAMPLES_ANALYZE,
        formatter_class=argparse.RawDescriptionHelpFormatter,
        description="Phases, locking measures, surrogate test, corrections and intervals for one recording file.",
    )
    a.add_argument("input", help="CSV/TSV, Parquet, EDF/BDF, WFDB (.hea) or an event list (.txt)")
    _add_analysis_options(a, *registries)


def _add_study_command(sub, registries):
    """Add the ``study`` subcommand: a manifest, the analysis options and the across-subject options."""
    st = sub.add_parser(
        "study", help="analyse every recording of a study and test across subjects",
        description="Analyse each recording a manifest lists (recording, file, subject, group, condition), "
        "then test across subjects: one-sample, paired between conditions, between groups, preferred-phase "
        "consistency. Writes results.csv, study_results.csv, report.html, methods.md, provenance.json. "
        "Exit 3 when some recordings failed and the rest were written.")
    st.add_argument("manifest", help="CSV with the columns recording, file, subject, group, condition "
                    "(optional: fs, signals, events, time_column, annotation)")
    _add_analysis_options(st, *registries)
    st.add_argument("--summary", choices=("effect", "z", "value"), default="effect", dest="measure_summary",
                    help="per-recording value tested across subjects (default effect = value - null mean)")
    st.add_argument("--second-level-correction", dest="second_level_correction", default="fdr_bh",
                    choices=("fdr_bh", "fdr_by", "holm", "bonferroni", "none"),
                    help="correction over the second-level tests (default fdr_bh)")
    st.add_argument("--repeated", dest="repeated_measures", choices=("mean", "mixed_model"), default="mean",
                    help="several recordings of a subject in one condition: average them (default) or a "
                    "mixed model")
    st.add_argument("--scheduler", metavar="ADDRESS",
                    help="Dask scheduler address (tcp://host:8786), or 'local' for a local cluster")
    st.add_argument("--cache", metavar="DIR", help="cache of finished recordings (default: OUT.cache beside "
                    "the output folder)")
    st.add_argument("--no-cache", dest="no_cache", action="store_true", help="do not cache finished recordings")


def _add_check_claim_command(sub):
    """Add the ``check-claim`` subcommand: a reported claim's numbers, no data."""
    c = sub.add_parser("check-claim", help="check a reported synchrony claim from its numbers alone",
                       description="What a reported locking index and p-value can support, given how many cycles "
                       "it rests on and how much was searched (no data needed).")
    c.add_argument("--index", choices=("plv", "ppc"), default="plv", help="index reported (default plv)")
    c.add_argument("--value", required=True, help="reported value of the index")
    c.add_argument("--p", type=float, help="p-value claimed")
    c.add_argument("--p-bound", action="store_true", dest="p_bound", help="the p-value was reported as a bound (p < ...)")
    c.add_argument("--test", choices=("rayleigh", "rayleigh_samples", "rayleigh_cycles", "surrogate"),
                   help="test the claim used")
    c.add_argument("--cycles", type=float, help="cycles of the slower rhythm (instead of duration and frequencies)")
    c.add_argument("--duration", type=float, help="record duration in seconds")
    c.add_argument("--freq-a", type=float, dest="freq_a", help="frequency of rhythm A, Hz")
    c.add_argument("--freq-b", type=float, dest="freq_b", help="frequency of rhythm B, Hz")
    c.add_argument("--fs", type=float, help="sampling rate, Hz (for an every-sample test)")
    c.add_argument("--ratio", default="1:1", help="ratio p:q tested (default 1:1)")
    c.add_argument("--n-ratios", type=int, default=1, dest="n_ratios", help="ratios searched (default 1)")
    c.add_argument("--n-pairs", type=int, default=1, dest="n_pairs", help="pairs searched (default 1)")
    c.add_argument("--n-windows", type=int, default=1, dest="n_windows", help="windows searched (default 1)")
    c.add_argument("--n-surrogates", type=int, dest="n_surrogates", help="surrogates the claim used")
    c.add_argument("--alpha", type=float, default=0.05, help="significance level (default 0.05)")
    c.add_argument("--correction", choices=("bonferroni", "sidak"), default="bonferroni",
                   help="correction for the declared search (default bonferroni)")
    c.add_argument("--ci", help="reported confidence interval LOW,HIGH")
    c.add_argument("--out", help="write the table to this CSV file")


def _add_power_command(sub):
    """Add the ``power`` subcommand: the simulation grid of lengths and couplings."""
    w = sub.add_parser("power", help="power by simulation: how long to record, how strong a coupling is detectable",
                       description="Power of the surrogate test as a function of record length and coupling "
                       "strength, by simulating coupled rhythms with known truth.")
    w.add_argument("--lengths", required=True, help="comma-separated record lengths, e.g. 60,120,240")
    w.add_argument("--couplings", required=True, help="comma-separated coupling strengths, e.g. 0,0.3")
    w.add_argument("--unit", choices=("s", "cycles"), default="s", help="unit of --lengths (default s)")
    w.add_argument("--kind", default="phase", help="simulated rhythm family (default phase)")
    w.add_argument("--measure", default="plv", help="measure (default plv)")
    w.add_argument("--surrogate", default="fourier", help="surrogate method (default fourier)")
    w.add_argument("--n-surrogates", type=int, default=39, dest="n_surrogates", help="surrogates per replica (default 39)")
    w.add_argument("--replicas", type=int, default=100, help="simulated replicas per cell (default 100)")
    w.add_argument("--alpha", type=float, default=0.05, help="significance level (default 0.05)")
    w.add_argument("--fs", type=float, help="sampling rate of the simulation, Hz")
    w.add_argument("--target", type=float, help="target power: report the shortest length reaching it")
    w.add_argument("--jobs", type=int, help="worker processes")
    w.add_argument("--seed", type=int, help="seed")
    w.add_argument("--out", help="output folder for power.csv and power.png (must not exist)")


def _add_demo_command(sub):
    """Add the ``demo`` subcommand: the bundled demo study."""
    d = sub.add_parser("demo", help="run the whole job on the bundled demo study",
                       description="Analyse the bundled demo study (simulated) and write the four output files.")
    d.add_argument("--out", required=True, help="output folder")
    d.add_argument("--n-surrogates", type=int, dest="n_surrogates", default=199, help="surrogates (default 199)")
    d.add_argument("--seed", type=int, default=2026, help="seed for every random draw (default 2026)")
    d.add_argument("--overwrite", action="store_true", help="replace an existing output folder")
    d.add_argument("--quiet", action="store_true", help="no progress bar and no summary line")
    d.add_argument("--json", action="store_true", help="print a machine-readable summary on stdout")


def _add_simulate_command(sub):
    """Add the ``simulate`` subcommand: one simulated scenario written to files."""
    s = sub.add_parser("simulate", help="write a simulated scenario with known truth to files",
                       epilog=EXAMPLES_SIMULATE, formatter_class=argparse.RawDescriptionHelpFormatter,
                       description="Simulate coupled or independent rhythms and write recording.csv, events and truth.json.")
    s.add_argument("--kind", default="stuart_landau", help="phase, stuart_landau, van_der_pol, spiking, beats, quasi_periodic, rossler, damped_noise")
    s.add_argument("--coupled", action="store_true", help="couple the units (default: independent)")
    s.add_argument("--ratio", default="1:1", help="p:q: the units' frequencies are near this ratio (locked at it "
                   "with --coupled, independent near it without)")
    s.add_argument("--freq", type=float, help="frequency of the slower unit, Hz (default: the kind's own)")
    s.add_argument("--detuning", type=float, help="relative detuning from the exact ratio (default: the kind's own)")
    s.add_argument("--noise", type=float, help="intrinsic noise, in the kind's simulator units (default: the kind's own)")
    s.add_argument("--coupling", type=float, help="coupling strength with --coupled (default: twice what locks)")
    s.add_argument("--duration", type=float, default=300.0, help="seconds")
    s.add_argument("--fs", type=float, default=100.0, help="sampling rate, Hz")
    s.add_argument("--seed", type=int, default=0)
    s.add_argument("--out", required=True, help="output folder")
    s.add_argument("--overwrite", action="store_true")


def _build_parser() -> argparse.ArgumentParser:
    """The ``syncstats`` command line: global flags, then one subparser per subcommand."""
    p = _Parser(
        prog="syncstats",
        description="Test whether recorded rhythms are phase-locked (1:1 or n:m) against surrogate data. "
        "Research software, not a medical device.",
    )
    p.add_argument("--debug", action="store_true", help="show tracebacks (may stand anywhere on the line)")
    p.add_argument("--version", action="version", version=f"syncstats {_package_version()}")
    sub = p.add_subparsers(dest="command", parser_class=_Parser)

    from .inference import CI_METHODS, CORRECTION_METHODS
    from .measures import MEASURE_METHODS
    from .nulls import SURROGATE_METHODS
    registries = (MEASURE_METHODS, SURROGATE_METHODS, CORRECTION_METHODS, CI_METHODS)
    _add_analyze_command(sub, registries)
    _add_study_command(sub, registries)
    _add_check_claim_command(sub)
    _add_power_command(sub)
    _add_demo_command(sub)
    _add_simulate_command(sub)
    return p


def _load_config(path):
    p = Path(path)
    if not p.is_file():
        raise SyncstatsInputError(f"config file '{p}' does not exist; give the path of a TOML file.")
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as err:
        raise SyncstatsInputError(f"config file '{p}' cannot be read ({err.strerror}); check its permissions.") from None
    except UnicodeDecodeError:
        raise SyncstatsInputError(f"config file '{p}' is not UTF-8 text; save it as a UTF-8 TOML file.") from None
    try:
        cfg = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise SyncstatsInputError(f"config file '{p}' is not valid TOML ({err}); fix the file.") from None
    cfg = cfg.get("analyze", cfg)
    unknown = sorted(set(cfg) - set(CONFIG_KEYS))
    if unknown:
        raise SyncstatsInputError(
            f"config file '{p}' has unknown key(s) {', '.join(unknown)}; accepted keys: {', '.join(CONFIG_KEYS)}."
        )
    return cfg


def _split(v):
    if v is None:
        return None
    if isinstance(v, (list, tuple)):
        return [str(x).strip() for x in v]
    return [x.strip() for x in str(v).split(",") if x.strip()]


def _parse_band(item):
    try:
        name, rng = item.split("=", 1)
        lo, hi = (float(x) for x in rng.split("-", 1))
    except ValueError:
        raise SyncstatsInputError(f"--band '{item}' must look like NAME=LOW-HIGH in Hz, e.g. resp=0.1-0.5.") from None
    return name.strip(), (lo, hi)


#: the progress line: count, bar, share, and the estimated time left
PROGRESS_FORMAT = "surrogates {n_fmt}/{total_fmt} |{bar}| {percentage:3.0f}% · about {remaining} left"


def _progress(total, quiet, stream=None, mininterval=0.2):
    """(tick, close) of a progress bar on a terminal; the estimate of the time left comes
    from the mean time per surrogate so far (tqdm)."""
    stream = sys.stderr if stream is None else stream
    if quiet or total == 0 or not stream.isatty():
        return None, lambda: None
    from tqdm import tqdm

    bar = tqdm(total=total, unit="surrogate", file=stream, leave=False, bar_format=PROGRESS_FORMAT,
               smoothing=0, mininterval=mininterval)
    return bar.update, bar.close


def _options(args):
    """Config file, then command line (which wins), each value through its converter."""
    opts = {}
    if args.config:
        for k, v in _load_config(args.config).items():
            opts[k] = CONFIG_KEYS[k](v, k)
    for k, conv in CONFIG_KEYS.items():
        v = getattr(args, k, None)
        if v is not None:
            opts[k] = conv(v, "--" + k.replace("_", "-"))
    if args.band:
        opts["bands"] = dict(_parse_band(b) for b in args.band)
    return opts


def _analysis_kwargs(opts, quiet):
    """``analyze`` keywords from the options; what is not given keeps analyze's default."""
    kw = {k: opts[k] for k in ("surrogate", "n_surrogates", "correction", "alpha", "bands", "phase_method",
                                "protophase_correction", "windows", "window_step", "edge_s", "min_shift_s",
                                "ci_level", "ci_method", "n_bootstrap", "batch_size", "trial_correction",
                                "trial_threshold", "clusters") if k in opts}
    if "seed" in opts:
        kw["rng"] = opts["seed"]
    if opts.get("pairs"):
        kw["pairs"] = [tuple(p) for p in opts["pairs"]]
    if "ratios" in opts:
        from ._checks import parse_ratios

        try:
            kw["ratios"] = "auto" if opts["ratios"].strip() == "auto" else parse_ratios(opts["ratios"])
        except SyncstatsInputError as err:
            raise SyncstatsInputError(f"--ratios: {err}") from None
    if "measures" in opts:
        kw["measures"] = tuple(_split(opts["measures"]))
    settings = {k: opts[f"epoch_{o}"] for k, o in (("tolerance", "tolerance"), ("window_cycles", "window"),
                                                 ("min_cycles", "min_cycles"), ("min_s", "min_s"))
                if f"epoch_{o}" in opts}
    if opts.get("epochs") or settings:
        kw["epochs"] = settings or True
    jobs = int(opts.get("jobs", 1))
    if jobs > 1:
        kw.update(executor="processes", n_jobs=jobs)
    return kw


def _run_analyze(args):
    from . import io as sio
    from .api import analyze, combine_results

    opts = _options(args)
    events = {}
    for item in opts.get("events") or []:
        name, sep, path = str(item).partition("=")
        if not sep or not name.strip() or not path.strip():
            raise SyncstatsInputError(f"--events '{item}' must look like NAME=FILE, e.g. beats=rpeaks.txt.")
        events[name.strip()] = path.strip()
    read_kw = dict(
        fs=opts.get("fs"),
        signals=_split(opts.get("signals")),
        events=events or None,
        time_column=opts.get("time_column"),
        annotation=opts.get("annotation"),
        resample_to=opts.get("resample_to"),
        allow_truncated=bool(opts.get("allow_truncated", False)),
    )
    if opts.get("gaps", "error") == "split":
        if opts.get("stimuli"):
            raise SyncstatsInputError("--stimuli cannot be combined with --gaps split; cut the record into "
                                      "gap-free files first.")
        recs = sio.read_segments(args.input, gaps="split", **read_kw)
    else:
        recs = [sio.read_recording(args.input, **read_kw)]
    kw = _analysis_kwargs(opts, args.quiet)
    if opts.get("stimuli"):
        recs, kw = _trials_from_stimuli(recs[0], opts, kw, sio)
    else:
        for k in ("trial_window", "trial_correction", "trial_threshold"):
            if opts.get(k) is not None:
                raise SyncstatsInputError(f"--{k.replace('_', '-')} needs --stimuli FILE (the stimulus times to cut "
                                          "trials around).")
    n_sur = kw.get("n_surrogates", _default("n_surrogates"))
    nulls = _surrogate_list(kw)
    run = analyze
    if len(nulls) > 1:
        from .compare import compare_nulls

        kw.pop("surrogate")
        run = lambda rec, **k: compare_nulls(rec, surrogates=nulls, **k)  # noqa: E731
    results = []
    for rec in recs:
        tick, close = _progress(n_sur * len(nulls), args.quiet)
        try:
            data = rec.signals if isinstance(rec, _Trials) else rec
            results.append(run(data, fs=rec.fs, recording=rec.name, progress=tick, **kw))
        finally:
            close()
    res = results[0] if len(results) == 1 else combine_results(results)
    res = replace(
        res,
        inputs=tuple([str(Path(args.input))] + [str(Path(p)) for p in events.values()]
                     + ([str(Path(opts["stimuli"]))] if opts.get("stimuli") else [])
                     + ([args.config] if args.config else [])),
        params={**res.params, "command": "analyze", "input": str(args.input)},
    )
    out = res.save(args.out, overwrite=args.overwrite)
    _summary(res, out, args.quiet, getattr(args, "json", False))
    return 0


def _surrogate_list(kw) -> tuple:
    """The nulls named by --surrogate (one, or several separated by commas)."""
    if "surrogate" not in kw or "," not in str(kw["surrogate"]):
        return (kw.get("surrogate"),)
    from .compare import parse_surrogates

    return parse_surrogates(kw["surrogate"], "--surrogate")
class _Trials:
    """Trials cut from one recording around stimulus times (what --stimuli makes)."""

    def __init__(self, name, signals, fs):
        self.name, self.signals, self.fs = name, signals, fs


def _trials_from_stimuli(rec, opts, kw, sio):
    """--stimuli/--trial-window: the recording cut into trials, and stimulus_s for analyze."""
    from .trial_locking import cut_trials

    if rec.events:
        raise SyncstatsInputError("--stimuli works on continuous signals only; leave out --events/--annotation "
                                  "when cutting trials.")
    if not opts.get("trial_window"):
        raise SyncstatsInputError("--stimuli needs --trial-window=START,END (seconds relative to each stimulus, "
                                  "e.g. --trial-window=-0.5,1.5).")
    try:
        window = [float(x) for x in str(opts["trial_window"]).split(",")]
    except ValueError:
        window = None
    if window is None or len(window) != 2:
        raise SyncstatsInputError(f"--trial-window '{opts['trial_window']}' must be two numbers START,END in "
                                  "seconds, e.g. --trial-window=-0.5,1.5.")
    try:
        stim = sio.read_events(opts["stimuli"]) - float(getattr(rec, "offset_s", 0.0) or 0.0)
    except SyncstatsInputError as err:
        raise SyncstatsInputError(f"--stimuli: {err}") from None
    try:
        trials, stimulus_s, dropped = cut_trials(rec.signals, rec.fs, stim, window)
    except SyncstatsInputError as err:
        raise SyncstatsInputError(f"--stimuli {opts['stimuli']}: {err}") from None
    if dropped:
        from ._errors import SyncstatsWarning

        warnings.warn(f"{dropped} stimuli of {opts['stimuli']} were left out: their trial window leaves the record",
                      SyncstatsWarning, stacklevel=2)
    return [_Trials(rec.name, trials, rec.fs)], {**kw, "stimulus_s": stimulus_s, "trial_locking": True}


def _run_study(args):
    from .study import analyze_study

    opts = _options(args)
    if len(_surrogate_list(opts)) > 1:
        raise SyncstatsInputError("--surrogate with several nulls applies to 'syncstats analyze' only; give a "
                                  "study one null, e.g. --surrogate iaaft.")
    if opts.get("events"):
        raise SyncstatsInputError("--events does not apply to a study; list event files in the manifest's "
                                  "'events' column (NAME=FILE;NAME=FILE).")
    if opts.get("gaps", "error") != "error":
        raise SyncstatsInputError("--gaps split does not apply to a study; give each gap-free piece its own "
                                  "manifest row.")
    for k in ("stimuli", "trial_window", "clusters"):
        if opts.get(k):
            raise SyncstatsInputError(f"--{k.replace('_', '-')} does not apply to a study; run 'syncstats analyze' "
                                      "on each recording for locking over trials or clusters.")
    kw = _analysis_kwargs(opts, args.quiet)
    executor, n_jobs = kw.pop("executor", None), kw.pop("n_jobs", None)
    if args.scheduler:
        executor = args.scheduler.strip()
        if executor != "local" and "://" not in executor:
            raise SyncstatsInputError(f"--scheduler '{args.scheduler}' must be an address such as "
                                      "tcp://host:8786, or 'local'.")
    rng = kw.pop("rng", None)
    read_options = {k: opts[k] for k in ("time_column", "annotation", "resample_to") if opts.get(k) is not None}
    if opts.get("allow_truncated"):
        read_options["allow_truncated"] = True
    if "fs" in opts:  # study-wide defaults; the manifest's own columns win
        read_options["fs"] = opts["fs"]
    if "signals" in opts:
        read_options["signals"] = _split(opts["signals"])
    cache = None if args.no_cache else (args.cache or str(Path(str(args.out))) + ".cache")
    done = [0]

    def tick(name, status):
        done[0] += 1
        if not args.quiet:
            print(f"syncstats: [{done[0]}] {name}: {status}", file=sys.stderr)

    res = analyze_study(args.manifest, measure_summary=args.measure_summary,
                        second_level_correction=args.second_level_correction,
                        repeated_measures=args.repeated_measures, executor=executor, n_jobs=n_jobs,
                        cache_dir=cache, rng=rng, read_options=read_options, progress=tick, **kw)
    out = res.save(args.out, overwrite=args.overwrite)
    for _, f in res.failures.iterrows():
        print(f"syncstats: recording '{f['recording']}' ({f['file']}) failed: {f['reason']}", file=sys.stderr)
    if not args.quiet:
        n_sig = int(res.second_level["significant"].fillna(False).astype(bool).sum())
        print(f"syncstats: {res.n_recordings - res.n_failed} of {res.n_recordings} recordings analysed "
              f"({res.n_computed} computed, {res.n_cached} from the cache); {len(res.second_level)} second-level "
              f"tests, {n_sig} significant after correction; wrote {out}")
    return 3 if res.n_failed else 0


def _json_summary(res, out) -> str:
    """One JSON object: where the files are, the counts, and the rows that lock."""
    import json

    tab = res.table
    tested = bool(len(tab)) and not tab["significant"].isna().all()
    locked = tab[tab["locked"].fillna(False).astype(bool)] if tested else tab.iloc[:0]
    cols = ["recording", "signal_a", "signal_b", "ratio", "window_start_s", "window_end_s", "measure", "value",
            "ci_low", "ci_high", "p_adjusted", "ratio_certainty"]
    rows = [{k: (None if v != v else v) for k, v in r.items()} for r in locked[cols].to_dict("records")]
    return json.dumps({
        "out": str(out), "rows": int(len(tab)), "tested": tested,
        "significant": int(tab["significant"].fillna(False).astype(bool).sum()) if tested else 0,
        "locked": rows, "notes": list(res.notes),
    }, default=str)


def _summary(res, out, quiet, as_json=False):
    if as_json:
        print(_json_summary(res, out))
        return
    if quiet:
        return
    tab = res.table
    if not len(tab) or tab["significant"].isna().all():
        print(f"syncstats: {len(tab)} value(s) computed, no test made (no surrogates); wrote {out}")
        return
    n_sig = int(tab["significant"].fillna(False).astype(bool).sum())
    n_locked = int(tab["locked"].fillna(False).astype(bool).sum()) if "locked" in tab else n_sig
    print(f"syncstats: {len(tab)} test(s), {n_sig} significant after correction, {n_locked} at a locking ratio; "
          f"wrote {out}")


def _run_demo(args):
    from .demo import demo_analysis

    tick, close = _progress(args.n_surrogates, args.quiet)
    try:
        res = demo_analysis(n_surrogates=args.n_surrogates, rng=args.seed, progress=tick)
    finally:
        close()
    out = res.save(args.out, overwrite=args.overwrite)
    _summary(res, out, args.quiet, getattr(args, "json", False))
    return 0


def _run_simulate(args):
    from .demo import write_scenario

    out = write_scenario(
        args.out, kind=args.kind, coupled=args.coupled, ratio=args.ratio, duration=args.duration, fs=args.fs,
        rng=args.seed, overwrite=args.overwrite, freq=args.freq, detuning=args.detuning, noise=args.noise,
        coupling=args.coupling,
    )
    print(f"syncstats: wrote {out}")
    return 0


def _floats(text, opt):
    try:
        vals = [float(x) for x in str(text).split(",") if x.strip()]
    except ValueError:
        vals = []
    if not vals:
        raise SyncstatsInputError(f"{opt} must be comma-separated numbers, e.g. 60,120; got {text!r}.")
    return vals


def _run_check_claim(args):
    from .claims import check_claim

    ci = None
    if args.ci:
        vals = _floats(args.ci, "--ci")
        if len(vals) != 2:
            raise SyncstatsInputError(f"--ci must be LOW,HIGH (two numbers); got {args.ci!r}.")
        ci = tuple(vals)
    chk = check_claim(index=args.index, value=args.value, p_claimed=args.p, p_is_bound=args.p_bound,
                      test=args.test, n_cycles=args.cycles, duration_s=args.duration, freq_a=args.freq_a,
                      freq_b=args.freq_b, fs=args.fs, ratio=args.ratio, n_ratios=args.n_ratios,
                      n_pairs=args.n_pairs, n_windows=args.n_windows, n_surrogates=args.n_surrogates,
                      alpha=args.alpha, correction=args.correction, ci=ci)
    print(chk)
    if args.out:
        from ._atomic import write_file_atomically

        write_file_atomically(args.out, lambda f: chk.table.to_csv(f, index=False))
    return 0


def _run_power(args):
    from ._atomic import write_folder_atomically
    from .power import power_curve, required_length

    curve = power_curve(lengths=_floats(args.lengths, "--lengths"), couplings=_floats(args.couplings, "--couplings"),
                        length_unit=args.unit, kind=args.kind, measure=args.measure, surrogate=args.surrogate,
                        n_surrogates=args.n_surrogates, n_replicas=args.replicas, alpha=args.alpha, fs=args.fs,
                        executor="processes" if args.jobs and args.jobs > 1 else None, n_jobs=args.jobs,
                        rng=args.seed)
    print(curve.table.to_string(index=False))
    if args.target is not None:
        for k in sorted(set(curve.table.coupling) - {0.0}):
            r = required_length(coupling=k, curve=curve, target_power=args.target)
            print(f"coupling {k:g}: shortest length with power >= {args.target:g}: {r['length']}")
    if args.out:
        def build(folder):
            curve.table.to_csv(folder / "power.csv", index=False)
            fig = curve.figure(target_power=args.target)
            fig.savefig(folder / "power.png", dpi=120)

        write_folder_atomically(args.out, build)
    return 0


def _plain_warnings():
    """Show analysis warnings as one plain line each on stderr (no file/line noise)."""
    from ._errors import SyncstatsWarning

    def show(message, category, filename, lineno, file=None, line=None):
        if issubclass(category, SyncstatsWarning):
            print(f"syncstats: warning: {message}", file=sys.stderr)
        else:
            sys.__stderr__.write(warnings.formatwarning(message, category, filename, lineno, line))

    warnings.showwarning = show
    warnings.simplefilter("default", SyncstatsWarning)


#: subcommands whose --out is a folder: reserved before any work (see syncstats._atomic)
_FOLDER_OUT = ("analyze", "demo", "simulate", "power", "study")

_STOP_SIGNALS = ("SIGINT", "SIGTERM", "SIGHUP")


class _Stop:
    """Ctrl-C, SIGTERM and SIGHUP end a run cleanly: the first raises KeyboardInterrupt
    where the run is (workers are stopped and temporary files removed on the way out);
    a second one during that clean-up ends the process at once. While the finished
    results are being renamed into place a stop is ignored, so a run is never half
    published."""

    def __init__(self):
        self.count = 0
        self.name = ""
        self.folder = None
        self.saved = {}

    def install(self):
        import signal

        for name in _STOP_SIGNALS:
            sig = getattr(signal, name, None)
            if sig is None:
                continue
            try:
                self.saved[sig] = signal.signal(sig, self.handle)
            except (ValueError, OSError):  # not the main thread: keep the caller's handlers
                pass
        return self

    def restore(self, ignore=False):
        import signal

        for sig, old in self.saved.items():
            signal.signal(sig, signal.SIG_IGN if ignore else old)

    def handle(self, signum, frame):
        import os

        if self.folder is not None and self.folder.committing:
            return  # the complete results are being put in place: let that finish
        self.count += 1
        if self.count == 1:
            import signal

            self.name = signal.Signals(signum).name
            raise KeyboardInterrupt
        mp = sys.modules.get("multiprocessing")
        for child in (mp.active_children() if mp else ()):
            child.kill()
        if self.folder is not None:
            self.folder.release()
        os.write(2, b"syncstats: stopped again during clean-up; exiting now.\n")
        os._exit(130)


def _reserve_out(args, record_paths):
    """Check and claim the output folder before any work (exit 2 now rather than later)."""
    if args.command not in _FOLDER_OUT or not getattr(args, "out", None):
        return None
    from ._atomic import OutputFolder

    inputs = [getattr(args, "input", None), getattr(args, "manifest", None), getattr(args, "config", None)]
    inputs += [str(e).partition("=")[2] for e in (getattr(args, "events", None) or [])]
    return OutputFolder(args.out, overwrite=bool(getattr(args, "overwrite", False)), protected=inputs, cli=True,
                        record_paths=record_paths)


def main(argv=None) -> int:
    """Entry point of the ``syncstats`` command; returns the exit status."""
    stop = _Stop().install()  # first: a Ctrl-C from here on never shows a traceback
    as_command, debug = argv is None, False
    saved = warnings.showwarning
    try:
        try:
            argv = sys.argv[1:] if argv is None else list(argv)
            debug = "--debug" in argv
            record_paths = "--record-paths" in argv
            argv = [a for a in argv if a not in ("--debug", "--record-paths")]
            _plain_warnings()
            parser = _build_parser()
            parser.add_argument("--record-paths", action="store_true",
                                help="also record absolute input paths and the Python location in provenance.json "
                                "(may stand anywhere on the line)")
            if not argv:
                parser.print_help(sys.stderr)
                return 2
            args = parser.parse_args(argv)
            if args.command is None:
                parser.print_help(sys.stderr)
                return 2
            stop.folder = _reserve_out(args, record_paths)
            if stop.folder is not None:
                args.out = stop.folder  # the writers publish into the reserved folder
            try:
                return {"analyze": _run_analyze, "demo": _run_demo, "simulate": _run_simulate,
                        "check-claim": _run_check_claim, "power": _run_power, "study": _run_study}[args.command](args)
            finally:
                if stop.folder is not None:
                    stop.folder.release()  # nothing to do after a publish; else remove what it made
        except SyncstatsInputError as err:
            if debug:
                raise
            print(f"syncstats: error: {err}", file=sys.stderr)
            return 2
        except Exception as err:
            if stop.count:  # a stop signal broke something on its way (e.g. a worker ended by SIGTERM)
                raise KeyboardInterrupt from None
            if debug:
                raise
            print(
                f"syncstats: internal error ({type(err).__name__}: {err}); rerun with --debug and report the "
                "traceback.",
                file=sys.stderr,
            )
            return 1
    except KeyboardInterrupt:
        what = "interrupted" if stop.name in ("", "SIGINT") else f"stopped by {stop.name}"
        print(f"syncstats: {what}; nothing was written.", file=sys.stderr)
        return 130
    finally:
        warnings.showwarning = saved
        stop.restore(ignore=as_command)  # the command's process ends now: a late stop changes nothing


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
