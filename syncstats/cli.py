"""The ``syncstats`` command: a thin shell over the Python API.

Exit status: 0 success; 2 bad input or usage (one plain sentence on stderr naming the
file/signal/option at fault and what to do; a traceback only with ``--debug``);
1 an internal error. Outputs are written atomically; inputs are never modified.
"""
from __future__ import annotations

import argparse
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
"""

EXAMPLES_SIMULATE = """\
examples:
  syncstats simulate --kind stuart_landau --coupled --duration 300 --fs 100 --seed 3 --out sim-locked
  syncstats simulate --kind beats --ratio 4:1 --seed 2 --out sim-beats
"""

#: option -> (config key, converter); also the set of keys a --config file may hold
CONFIG_KEYS = {
    "fs": float,
    "signals": str,
    "events": list,
    "pairs": list,
    "ratios": str,
    "measures": str,
    "surrogate": str,
    "n_surrogates": int,
    "correction": str,
    "alpha": float,
    "seed": int,
    "bands": dict,
    "phase_method": str,
    "protophase_correction": bool,
    "windows": float,
    "window_step": float,
    "edge_s": float,
    "ci_level": float,
    "ci_method": str,
    "n_bootstrap": int,
    "batch_size": int,
    "jobs": int,
    "gaps": str,
    "resample_to": float,
    "annotation": str,
    "time_column": str,
}


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors in one sentence (exit 2)."""

    def error(self, message):  # noqa: D401
        raise SyncstatsInputError(f"{message} (see '{self.prog} --help').")


def _build_parser() -> argparse.ArgumentParser:
    p = _Parser(
        prog="syncstats",
        description="Test whether recorded rhythms are phase-locked (1:1 or n:m) against surrogate data. "
        "Research software, not a medical device.",
    )
    p.add_argument("--debug", action="store_true", help="show tracebacks (may stand anywhere on the line)")
    sub = p.add_subparsers(dest="command", parser_class=_Parser)

    a = sub.add_parser(
        "analyze",
        help="analyse a recording file",
        epilog=EXAMPLES_ANALYZE,
        formatter_class=argparse.RawDescriptionHelpFormatter,
        description="Phases, locking measures, surrogate test, corrections and intervals for one recording file.",
    )
    a.add_argument("input", help="CSV/TSV, Parquet, EDF/BDF, WFDB (.hea) or an event list (.txt)")
    a.add_argument("--fs", type=float, help="sampling rate in Hz (when the file has no time column)")
    a.add_argument("--signals", help="comma-separated signal names to use (default: all)")
    a.add_argument("--events", action="append", metavar="NAME=FILE", help="event times (s) from a file; repeatable")
    a.add_argument("--pair", action="append", nargs=2, metavar=("A", "B"), dest="pairs", help="a pair to test; repeatable (default: every pair)")
    a.add_argument("--ratios", help="comma-separated p:q ratios (A makes p cycles while B makes q), or 'auto'")
    a.add_argument("--measures", help="comma-separated: plv, ppc, entropy_index, conditional_index, order_parameter")
    a.add_argument("--surrogate", help="fourier, aaft, iaaft, time_shift, twin, trial_shuffle, interval_shuffle, multivariate_fourier")
    a.add_argument("--n-surrogates", type=int, dest="n_surrogates", help="surrogates to draw (default 999; 0 = measures only)")
    a.add_argument("--correction", help="fdr_bh, fdr_by, holm, bonferroni, max_stat or none")
    a.add_argument("--alpha", type=float, help="significance level (default 0.05)")
    a.add_argument("--seed", type=int, help="seed for every random draw (recorded in provenance.json)")
    a.add_argument("--band", action="append", metavar="NAME=LOW-HIGH", dest="band", help="pass band in Hz for one signal; repeatable")
    a.add_argument("--phase-method", dest="phase_method", help="hilbert (default) or wavelet")
    a.add_argument("--protophase-correction", dest="protophase_correction", action="store_const", const=True, help="uniformise protophases")
    a.add_argument("--windows", type=float, help="window length in seconds (windows count in the correction)")
    a.add_argument("--window-step", type=float, dest="window_step", help="window step in seconds (default: the length)")
    a.add_argument("--ci-level", type=float, dest="ci_level", help="confidence level (default 0.95)")
    a.add_argument("--ci-method", dest="ci_method", help="percentile (default), bca or basic")
    a.add_argument("--n-bootstrap", type=int, dest="n_bootstrap", help="bootstrap resamples (default 999)")
    a.add_argument("--batch-size", type=int, dest="batch_size", help="surrogates per batch (memory; results do not change)")
    a.add_argument("--jobs", type=int, help="worker processes (default 1)")
    a.add_argument("--gaps", choices=("error", "split"), help="at a gap: stop with an error (default) or analyse each gap-free segment")
    a.add_argument("--resample-to", type=float, dest="resample_to", help="bring signals of different rates to this rate (Hz)")
    a.add_argument("--annotation", help="EDF+/WFDB annotation to read as events (e.g. R, atr)")
    a.add_argument("--time-column", dest="time_column", help="name of the time column in a table")
    a.add_argument("--config", help="TOML file with any of these options (command-line options win)")
    a.add_argument("--out", required=True, help="output folder (must not exist or be empty)")
    a.add_argument("--overwrite", action="store_true", help="replace an existing output folder")
    a.add_argument("--quiet", action="store_true", help="no progress bar")

    d = sub.add_parser("demo", help="run the whole job on the bundled demo study",
                       description="Analyse the bundled demo study (simulated) and write the four output files.")
    d.add_argument("--out", required=True, help="output folder")
    d.add_argument("--n-surrogates", type=int, dest="n_surrogates", default=199, help="surrogates (default 199)")
    d.add_argument("--seed", type=int, default=2026)
    d.add_argument("--overwrite", action="store_true")
    d.add_argument("--quiet", action="store_true")

    s = sub.add_parser("simulate", help="write a simulated scenario with known truth to files",
                       epilog=EXAMPLES_SIMULATE, formatter_class=argparse.RawDescriptionHelpFormatter,
                       description="Simulate coupled or independent rhythms and write recording.csv, events and truth.json.")
    s.add_argument("--kind", default="stuart_landau", help="phase, stuart_landau, van_der_pol, spiking, beats, quasi_periodic, rossler, damped_noise")
    s.add_argument("--coupled", action="store_true", help="couple the units (default: independent)")
    s.add_argument("--ratio", default="1:1", help="p:q locking ratio for coupled units")
    s.add_argument("--duration", type=float, default=300.0, help="seconds")
    s.add_argument("--fs", type=float, default=100.0, help="sampling rate, Hz")
    s.add_argument("--seed", type=int, default=0)
    s.add_argument("--out", required=True, help="output folder")
    s.add_argument("--overwrite", action="store_true")
    return p


def _load_config(path):
    p = Path(path)
    if not p.is_file():
        raise SyncstatsInputError(f"config file '{p}' does not exist; give the path of a TOML file.")
    try:
        cfg = tomllib.loads(p.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as err:
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


def _progress(total, quiet):
    if quiet or total == 0 or not sys.stderr.isatty():
        return None, lambda: None
    from tqdm import tqdm

    bar = tqdm(total=total, unit="surrogate", file=sys.stderr, leave=False)
    return bar.update, bar.close


def _run_analyze(args):
    from . import io as sio
    from .api import analyze
    from .api import combine_results

    opts = {}
    if args.config:
        opts.update(_load_config(args.config))
    for k in CONFIG_KEYS:
        v = getattr(args, k, None)
        if v is not None:
            opts[k] = v
    if args.band:
        opts["bands"] = dict(_parse_band(b) for b in args.band)
    events = {}
    for item in opts.get("events") or []:
        if "=" not in item:
            raise SyncstatsInputError(f"--events '{item}' must look like NAME=FILE, e.g. beats=rpeaks.txt.")
        name, path = item.split("=", 1)
        events[name.strip()] = path.strip()
    read_kw = dict(
        fs=opts.get("fs"),
        signals=_split(opts.get("signals")),
        events=events or None,
        time_column=opts.get("time_column"),
        annotation=opts.get("annotation"),
        resample_to=opts.get("resample_to"),
    )
    if opts.get("gaps", "error") == "split":
        recs = sio.read_segments(args.input, gaps="split", **read_kw)
    else:
        recs = [sio.read_recording(args.input, **read_kw)]
    ratios = opts.get("ratios")
    if ratios is not None and ratios != "auto":
        ratios = _split(ratios)
    measures = tuple(_split(opts.get("measures")) or ("plv",))
    n_sur = int(opts.get("n_surrogates", 999))
    results = []
    for rec in recs:
        tick, close = _progress(n_sur, args.quiet)
        try:
            res = analyze(
                rec,
                fs=rec.fs,
                pairs=[tuple(p) for p in opts["pairs"]] if opts.get("pairs") else None,
                ratios=ratios,
                measures=measures,
                surrogate=opts.get("surrogate", "iaaft"),
                n_surrogates=n_sur,
                correction=opts.get("correction", "fdr_bh"),
                alpha=float(opts.get("alpha", 0.05)),
                rng=opts.get("seed"),
                bands=opts.get("bands", "auto"),
                phase_method=opts.get("phase_method", "hilbert"),
                protophase_correction=bool(opts.get("protophase_correction", False)),
                windows=opts.get("windows"),
                window_step=opts.get("window_step"),
                edge_s=opts.get("edge_s"),
                ci_level=float(opts.get("ci_level", 0.95)),
                ci_method=opts.get("ci_method", "percentile"),
                n_bootstrap=int(opts.get("n_bootstrap", 999)),
                batch_size=int(opts.get("batch_size", 32)),
                executor="processes" if int(opts.get("jobs", 1)) > 1 else None,
                n_jobs=int(opts.get("jobs", 1)),
                recording=rec.name,
                progress=tick,
            )
        finally:
            close()
        results.append(res)
    res = results[0] if len(results) == 1 else combine_results(results)
    res = replace(
        res,
        inputs=tuple([str(Path(args.input))] + [str(Path(p)) for p in events.values()] + ([args.config] if args.config else [])),
        params={**res.params, "command": "analyze", "input": str(args.input)},
    )
    out = res.save(args.out, overwrite=args.overwrite)
    _summary(res, out, args.quiet)
    return 0


def _summary(res, out, quiet):
    if quiet:
        return
    tab = res.table
    n_sig = int(tab["significant"].fillna(False).astype(bool).sum()) if len(tab) else 0
    print(f"syncstats: {len(tab)} tests, {n_sig} significant after correction; wrote {out}")


def _run_demo(args):
    from .demo import demo_analysis

    tick, close = _progress(args.n_surrogates, args.quiet)
    try:
        res = demo_analysis(n_surrogates=args.n_surrogates, rng=args.seed, progress=tick)
    finally:
        close()
    out = res.save(args.out, overwrite=args.overwrite)
    _summary(res, out, args.quiet)
    return 0


def _run_simulate(args):
    from .demo import write_scenario

    out = write_scenario(
        args.out, kind=args.kind, coupled=args.coupled, ratio=args.ratio, duration=args.duration, fs=args.fs,
        rng=args.seed, overwrite=args.overwrite,
    )
    print(f"syncstats: wrote {out}")
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


def main(argv=None) -> int:
    """Entry point of the ``syncstats`` command; returns the exit status."""
    argv = sys.argv[1:] if argv is None else list(argv)
    debug = "--debug" in argv
    argv = [a for a in argv if a != "--debug"]
    parser = _build_parser()
    saved = warnings.showwarning
    _plain_warnings()
    try:
        if not argv:
            parser.print_help(sys.stderr)
            return 2
        args = parser.parse_args(argv)
        if args.command is None:
            parser.print_help(sys.stderr)
            return 2
        return {"analyze": _run_analyze, "demo": _run_demo, "simulate": _run_simulate}[args.command](args)
    except SyncstatsInputError as err:
        if debug:
            raise
        print(f"syncstats: error: {err}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("syncstats: interrupted; nothing was written.", file=sys.stderr)
        return 1
    except Exception as err:  # an internal error: not the user's fault
        if debug:
            raise
        print(
            f"syncstats: internal error ({type(err).__name__}: {err}); rerun with --debug and report the traceback.",
            file=sys.stderr,
        )
        return 1
    finally:
        warnings.showwarning = saved


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
