"""Studies: many recordings, one analysis each, and a second level across subjects.

``analyze_study(manifest, **analyze_options)`` reads every recording a manifest lists,
runs :func:`syncstats.analyze` on each (a recording that cannot be read or analysed
becomes a failure row with its one-sentence reason; the others go on), caches each
finished recording on disk so that an interrupted study resumes where it stopped, and
tests across subjects whether the per-recording locking is there (one-sample), differs
between conditions within subjects (paired) or between groups (two-sample).

Sits at the top with ``api`` and ``cli``: it joins the readers, ``analyze``, the
executors and the report layer. The second level calls pingouin (t-tests, Wilcoxon,
Mann-Whitney, Rayleigh), statsmodels (corrections, mixed model) and scipy (bootstrap).

Manifest (a CSV, UTF-8, header row)
-----------------------------------
Required columns: ``recording`` (unique name), ``file`` (relative to the manifest's
folder, or absolute), ``subject``, ``group``, ``condition`` (non-empty text; a subject
belongs to one group). Optional per-recording columns: ``fs`` (Hz), ``signals``
(comma-separated names), ``events`` (``NAME=FILE`` items separated by ``;``, files
relative to the manifest), ``time_column``, ``annotation``. Other columns are kept
and ignored.

Second-level table (``StudyResult.second_level``, ``study_results.csv``)
------------------------------------------------------------------------
One row per test. The tests run per pair x ratio x window x measure ("unit") on one
per-recording summary (``summary``: the debiased ``effect`` = value - null mean by
default, or ``z``, or the raw ``value``). A subject's recordings in one group x condition
cell are averaged first (``aggregation`` = "subject mean"), unless
``repeated_measures="mixed_model"`` asks for a linear mixed model with a random intercept
per subject for the parametric one-sample test of a cell where some subject has several
recordings (``aggregation`` = "mixed model (random intercept per subject)").

See :data:`SECOND_LEVEL_COLUMNS` for every column and its meaning.

Research software, not a medical device.
"""
from __future__ import annotations

import concurrent.futures as cf
import contextlib
import hashlib
import inspect
import itertools
import json
import math
import os
import pickle
import threading
import uuid
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from ._errors import SyncstatsInputError, collect_warnings
from ._rng import as_seed_sequence

__all__ = [
    "analyze_study",
    "second_level_tests",
    "read_manifest",
    "make_demo_study",
    "StudyResult",
    "SECOND_LEVEL_COLUMNS",
    "MANIFEST_COLUMNS",
    "SUMMARIES",
    "STUDY_OUTPUT_FILES",
]

#: required manifest columns
MANIFEST_COLUMNS = ("recording", "file", "subject", "group", "condition")
#: optional per-recording manifest columns (passed to the reader)
OPTIONAL_COLUMNS = ("fs", "signals", "events", "time_column", "annotation")
#: per-recording summaries the second level can test
SUMMARIES = ("effect", "z", "value")
#: second-level p-value corrections (statsmodels ``multipletests`` names, plus "none")
SECOND_LEVEL_CORRECTIONS = ("fdr_bh", "fdr_by", "holm", "bonferroni", "none")
REPEATED_MEASURES = ("mean", "mixed_model")
#: files a saved study holds
STUDY_OUTPUT_FILES = ("results.csv", "study_results.csv", "report.html", "methods.md", "provenance.json")
#: label of the pooled rows when the study has several groups
ALL_GROUPS = "(all groups)"
#: fewest subjects (per group for the two-sample test) for a second-level test
MIN_SUBJECTS = 3

#: the second-level schema: column -> meaning
SECOND_LEVEL_COLUMNS = {
    "signal_a": "first signal of the pair (as in results.csv)",
    "signal_b": "second signal of the pair",
    "ratio": "p:q ratio tested (A makes p cycles while B makes q)",
    "p": "cycles of A in the ratio",
    "q": "cycles of B in the ratio",
    "window": "window number within each recording (1 = first; 1 is the whole record when not windowed)",
    "measure": "locking measure (plv, ppc, ...)",
    "summary": "per-recording column tested: effect (value - null mean), z or value",
    "test": "one_sample (summary differs from 0), paired (between conditions within subjects), "
            "between_groups (between groups within a condition), phase_consistency (Rayleigh test of "
            "subjects' preferred phases)",
    "approach": "parametric, rank or circular",
    "method": "the test by name (one-sample t-test, Wilcoxon signed-rank, paired t-test, Welch t-test, "
              "Mann-Whitney U, mixed model, Rayleigh test)",
    "group": f"group tested (\"{ALL_GROUPS}\" pools every group)",
    "condition": "condition tested (for paired tests: the two conditions as 'B vs A')",
    "contrast": "what the estimate measures, e.g. 'mean > 0', 'paced − rest', 'group_b − group_a'",
    "aggregation": "how several recordings of one subject were combined",
    "n_subjects": "subjects entering the test (per side for between_groups: 'n_a + n_b' is n_subjects_a/_b)",
    "n_subjects_a": "subjects in the reference side (between_groups) or the reference condition (paired)",
    "n_subjects_b": "subjects in the other side (between_groups) or the other condition (paired)",
    "n_recordings": "recordings behind the test",
    "estimate": "mean (parametric) or median (rank) of the summary, of within-subject differences, or "
                "the difference between groups; circular mean phase (radians) for phase_consistency",
    "ci_low": "lower bound of the bootstrap (or Wald, mixed model) interval of the estimate",
    "ci_high": "upper bound of that interval",
    "ci_level": "confidence level of the interval",
    "ci_method": "how the interval was obtained",
    "statistic": "test statistic (t, W, U, z of the mixed model, Rayleigh z)",
    "df": "degrees of freedom of a t-test (Welch's for between_groups), else empty",
    "p_value": "uncorrected p-value (two-sided)",
    "effect_size": "Hedges g (parametric), rank-biserial correlation (rank), mean resultant length (circular)",
    "effect_size_kind": "hedges_g, rank_biserial, standardized_mean or mean_resultant_length",
    "p_adjusted": "p-value corrected over the family",
    "correction": "correction method (statsmodels multipletests name or none)",
    "family": "what the correction counted (tests of one approach across the whole study)",
    "significant": "p_adjusted < alpha",
    "note": "why a test could not run (too few subjects), else empty",
}


# =========================================================================== result


@dataclass(frozen=True)
class StudyResult:
    """What :func:`analyze_study` returns.

    Attributes
    ----------
    table : pandas.DataFrame
        Every recording's tidy table stacked (schema of ``results.csv``) with the
        manifest's ``subject``, ``group``, ``condition`` after ``recording`` and a
        ``window`` number (see :data:`SECOND_LEVEL_COLUMNS`).
    second_level : pandas.DataFrame
        One row per second-level test (:data:`SECOND_LEVEL_COLUMNS`).
    failures : pandas.DataFrame
        ``recording``, ``file``, ``reason``: recordings that could not be analysed.
    subject_values : pandas.DataFrame
        The values the second level tested: one row per unit x group x condition x
        subject (``value`` = the subject's mean summary, ``preferred_phase`` = circular
        mean of the subject's preferred phases, ``n_recordings``).
    descriptives : pandas.DataFrame
        Per unit x group x condition: subjects, recordings, mean, SD, median of the
        subject values (for the report).
    diagnostics : pandas.DataFrame
        Every recording's signal diagnostics with a ``recording`` column.
    manifest : pandas.DataFrame
        The checked manifest (resolved ``path`` column added).
    params : dict
        Every parameter of the run (JSON-serialisable), the seed included.
    notes : tuple of str
    inputs : tuple of str
        The manifest and every input file.
    n_computed, n_cached : int
        Recordings analysed in this run and recordings taken from the cache.
    """

    table: pd.DataFrame
    second_level: pd.DataFrame
    failures: pd.DataFrame
    subject_values: pd.DataFrame
    descriptives: pd.DataFrame
    diagnostics: pd.DataFrame
    manifest: pd.DataFrame
    params: dict
    notes: tuple = ()
    inputs: tuple = ()
    n_computed: int = 0
    n_cached: int = 0
    recording_notes: dict = field(default_factory=dict)
    epochs: object = None  # syncstats.epochs.EpochResult of every recording (analyze option epochs)

    @property
    def n_failed(self) -> int:
        return len(self.failures)

    @property
    def n_recordings(self) -> int:
        return len(self.manifest)

    def save(self, out_dir, *, overwrite: bool = False) -> Path:
        """Write results.csv, study_results.csv, report.html, methods.md and
        provenance.json into ``out_dir`` at once (a failed write leaves nothing)."""
        from .report._study import save_study

        return save_study(self, out_dir, overwrite=overwrite)

    def __repr__(self) -> str:
        return (f"StudyResult({self.n_recordings} recordings, {self.n_failed} failed, "
                f"{len(self.second_level)} second-level tests, computed {self.n_computed}, "
                f"cached {self.n_cached})")


# =========================================================================== manifest


def _cell(v) -> str:
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return ""
    return str(v).strip()


def read_manifest(manifest, *, base_dir=None) -> pd.DataFrame:
    """Read and check a study manifest; add a resolved ``path`` column.

    Parameters
    ----------
    manifest : path-like or pandas.DataFrame
        CSV file (files are relative to its folder) or a table with the same columns.
    base_dir : path-like, optional
        Folder the ``file`` entries are relative to (default: the manifest's folder, or
        the current folder for a DataFrame).

    Returns
    -------
    pandas.DataFrame
        Text columns stripped; ``path`` (absolute file path) and ``event_paths``
        (name -> absolute path) added. Files are not opened here: a missing or broken
        file becomes a failure of that recording.

    Examples
    --------
    >>> import pandas as pd
    >>> m = pd.DataFrame({"recording": ["r1"], "file": ["r1.csv"], "subject": ["s1"],
    ...                   "group": ["g"], "condition": ["rest"]})
    >>> read_manifest(m, base_dir="/data")["path"].iloc[0]
    '/data/r1.csv'
    """
    if isinstance(manifest, pd.DataFrame):
        where = "the manifest table"
        df = manifest.copy()
        base = Path(os.path.abspath(os.fspath(base_dir if base_dir is not None else ".")))
    else:
        p = Path(os.fspath(manifest))
        where = f"manifest '{p}'"
        if not p.is_file():
            raise SyncstatsInputError(f"{where} does not exist; give the path of a CSV file listing the recordings.")
        try:
            df = pd.read_csv(p, dtype=str, keep_default_na=False, encoding="utf-8-sig")
        except UnicodeDecodeError:
            raise SyncstatsInputError(f"{where} is not UTF-8 text; save it as a UTF-8 CSV file.") from None
        except (pd.errors.ParserError, pd.errors.EmptyDataError, OSError) as err:
            msg = str(err).strip().rstrip(".").replace("\n", " ")
            raise SyncstatsInputError(f"{where} cannot be read as CSV ({msg}); check the file.") from None
        base = Path(os.path.abspath(os.fspath(base_dir if base_dir is not None else p.parent)))
    df.columns = [str(c).strip() for c in df.columns]
    missing = [c for c in MANIFEST_COLUMNS if c not in df.columns]
    if missing:
        raise SyncstatsInputError(
            f"{where} lacks the column(s) {', '.join(missing)}; a manifest needs the columns "
            f"{', '.join(MANIFEST_COLUMNS)} (optional: {', '.join(OPTIONAL_COLUMNS)}).")
    if len(df) == 0:
        raise SyncstatsInputError(f"{where} lists no recordings; add one row per recording.")
    for c in df.columns:
        df[c] = [_cell(v) for v in df[c]]
    for c in MANIFEST_COLUMNS:
        empty = [i + 2 for i, v in enumerate(df[c]) if v == ""]
        if empty:
            raise SyncstatsInputError(
                f"{where} has an empty '{c}' on line {empty[0]}; fill in {c} for every recording.")
    dup = df["recording"][df["recording"].duplicated()].tolist()
    if dup:
        raise SyncstatsInputError(
            f"{where} names recording '{dup[0]}' more than once; give every recording a unique name.")
    groups = df.groupby("subject")["group"].nunique()
    mixed = groups[groups > 1].index.tolist()
    if mixed:
        raise SyncstatsInputError(
            f"{where} puts subject '{mixed[0]}' in more than one group; a subject belongs to one group.")
    if "fs" in df.columns:
        for i, v in enumerate(df["fs"]):
            if v == "":
                continue
            try:
                ok = float(v) > 0 and math.isfinite(float(v))
            except ValueError:
                ok = False
            if not ok:
                raise SyncstatsInputError(
                    f"{where} has fs '{v}' on line {i + 2}; give a positive sampling rate in Hz or leave it empty.")
    df["path"] = [str(base / f) if not os.path.isabs(f) else f for f in df["file"]]
    evs = []
    for i, v in enumerate(df["events"] if "events" in df.columns else [""] * len(df)):
        ev = {}
        for item in [x.strip() for x in v.split(";") if x.strip()]:
            name, sep, f = item.partition("=")
            if not sep or not name.strip() or not f.strip():
                raise SyncstatsInputError(
                    f"{where} has events '{item}' on line {i + 2}; write NAME=FILE items separated by ';', "
                    f"e.g. beats=s01_beats.txt.")
            f = f.strip()
            ev[name.strip()] = str(base / f) if not os.path.isabs(f) else f
        evs.append(ev)
    df["event_paths"] = evs
    return df.reset_index(drop=True)


def _read_options(row, study_read) -> dict:
    kw = dict(study_read or {})
    if row.get("fs", ""):
        kw["fs"] = float(row["fs"])
    if row.get("signals", ""):
        kw["signals"] = [s.strip() for s in row["signals"].split(",") if s.strip()]
    if row["event_paths"]:
        kw["events"] = dict(row["event_paths"])
    for k in ("time_column", "annotation"):
        if row.get(k, ""):
            kw[k] = row[k]
    return kw


# =========================================================================== one recording


def _recording_seed(seed: np.random.SeedSequence, i: int) -> np.random.SeedSequence:
    """Child seed of manifest row ``i`` (stream 0): independent of executor and order."""
    return np.random.SeedSequence(seed.entropy, spawn_key=tuple(seed.spawn_key) + (0, i))


def _analyze_one(job: dict) -> dict:
    """Read and analyse one recording; never raises for a bad recording (picklable)."""
    from .api import analyze
    from .io import read_recording

    # the recording's notes come from a collection kept per thread: warnings.catch_warnings
    # swaps process-wide state, so threads of one process (a threaded Dask worker) mixed
    # each other's notes; it only silences other warnings, in the main thread
    main = threading.current_thread() is threading.main_thread()
    try:
        with warnings.catch_warnings() if main else contextlib.nullcontext(), collect_warnings() as caught:
            if main:
                warnings.simplefilter("ignore")
            rec = read_recording(job["path"], name=job["recording"], **job["read"])
            res = analyze(rec, fs=rec.fs, recording=job["recording"],
                          rng=np.random.SeedSequence(job["entropy"], spawn_key=tuple(job["spawn_key"])),
                          **job["analyze"])
        notes = list(dict.fromkeys(caught)) + list(rec.notes)
        return {"ok": True, "table": res.table, "diagnostics": res.diagnostics, "notes": notes,
                "params": res.params, "epochs": res.epochs}
    except SyncstatsInputError as err:
        return {"ok": False, "reason": str(err)}
    except (KeyboardInterrupt, SystemExit):
        raise
    except Exception as err:  # a broken file can trip anything: keep the study going
        msg = str(err).strip().replace("\n", " ")[:300]
        return {"ok": False, "reason": f"unexpected error while reading or analysing the file "
                                       f"({type(err).__name__}: {msg}); check the file."}


# =========================================================================== cache


def _canon(x):
    """JSON-able, order-stable form of options (for the cache key)."""
    if isinstance(x, dict):
        return {str(k): _canon(v) for k, v in sorted(x.items(), key=lambda kv: str(kv[0]))}
    if isinstance(x, (list, tuple)):
        return [_canon(v) for v in x]
    if isinstance(x, np.generic):
        return x.item()
    if isinstance(x, float) and not math.isfinite(x):
        return repr(x)
    if isinstance(x, (str, int, float, bool)) or x is None:
        return x
    return repr(x)


def _file_digest(path: str) -> str:
    """SHA-256 over a file and its same-stem companions (e.g. WFDB .hea + .dat)."""
    from .report._provenance import sha256_file

    p = Path(path)
    h = hashlib.sha256()
    files = sorted({p} | {f for f in p.parent.glob(p.stem + ".*") if f.is_file() and f.stem == p.stem})
    for f in files:
        h.update(f.name.encode() + b"\0" + sha256_file(f).encode() + b"\0")
    return h.hexdigest()


def _cache_key(job: dict) -> str:
    paths = [job["path"]] + sorted((job["read"].get("events") or {}).values())
    digests = [_file_digest(p) for p in paths]
    payload = {"v": 1, "version": _version(), "recording": job["recording"], "files": digests,
               "read": {k: v for k, v in job["read"].items() if k != "events"},
               "events": sorted((job["read"].get("events") or {}).keys()),
               "analyze": job["analyze"], "entropy": str(job["entropy"]), "spawn_key": list(job["spawn_key"])}
    text = json.dumps(_canon(payload), sort_keys=True)
    return hashlib.sha256(text.encode()).hexdigest()


def _cache_load(cache_dir, key):
    if cache_dir is None:
        return None
    f = Path(cache_dir) / f"{key}.pkl"
    try:
        with open(f, "rb") as fh:
            out = pickle.load(fh)  # our own cache folder (trusted: the user's own run wrote it)
    except (OSError, pickle.UnpicklingError, EOFError, AttributeError, ValueError, TypeError, ImportError):
        return None
    return out if isinstance(out, dict) and out.get("ok") and out.get("key") == key else None


def _cache_store(cache_dir, key, out):
    if cache_dir is None:
        return
    folder = Path(cache_dir)
    tmp = folder / f".{key}.partial-{uuid.uuid4().hex[:8]}"
    try:
        with open(tmp, "wb") as fh:
            pickle.dump({**out, "key": key}, fh, protocol=pickle.HIGHEST_PROTOCOL)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, folder / f"{key}.pkl")  # same key -> same content: replacing is harmless
    finally:
        tmp.unlink(missing_ok=True)


# =========================================================================== executors


def _run_jobs(jobs, executor, n_jobs, on_done):
    """Run ``_analyze_one`` over ``jobs`` [(index, job)], calling ``on_done(index, out)``
    in this process as each finishes (so the cache is written by the caller)."""
    if not jobs:
        return
    if executor is None or executor == "serial":
        for i, job in jobs:
            on_done(i, _analyze_one(job))
        return
    if executor == "processes":
        pool = cf.ProcessPoolExecutor(max_workers=n_jobs)
        try:
            _drain_concurrent(pool, jobs, on_done)
        except BaseException:
            pool.shutdown(wait=False, cancel_futures=True)
            raise
        pool.shutdown(wait=True)
        return
    if isinstance(executor, str) and (executor == "local" or "://" in executor):
        client, cluster = _dask_client(executor, n_jobs)
        try:
            _drain_dask(client, jobs, on_done)
        finally:
            client.close()
            if cluster is not None:
                cluster.close()
        return
    if hasattr(executor, "submit"):
        if isinstance(executor, cf.Executor):
            _drain_concurrent(executor, jobs, on_done)
        elif type(executor).__module__.startswith("distributed"):
            _drain_dask(executor, jobs, on_done)
        else:
            futs = [(i, executor.submit(_analyze_one, job)) for i, job in jobs]
            for i, f in futs:
                on_done(i, f.result())
        return
    raise SyncstatsInputError(
        f"executor must be 'serial', 'processes', 'local', a scheduler address such as tcp://host:8786, "
        f"a concurrent.futures executor or a dask Client; got {executor!r}.")


def _drain_concurrent(pool, jobs, on_done):
    futs = {pool.submit(_analyze_one, job): i for i, job in jobs}
    try:
        for f in cf.as_completed(futs):
            on_done(futs[f], f.result())
    except BaseException:
        for f in futs:
            f.cancel()
        raise


def _drain_dask(client, jobs, on_done):
    from distributed import as_completed

    futs = {}
    for i, job in jobs:
        futs[client.submit(_analyze_one, job, pure=False)] = i
    try:
        for f in as_completed(list(futs)):
            on_done(futs[f], f.result())
    except BaseException:
        client.cancel(list(futs))
        raise


def _dask_client(address, n_jobs):
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise SyncstatsInputError(
            "a Dask scheduler was asked for but dask.distributed is not installed; install "
            "syncstats[distributed] or run without a scheduler.") from None
    if address == "local":
        cluster = LocalCluster(n_workers=n_jobs or 2, threads_per_worker=1, processes=True,
                               dashboard_address=None)
        return Client(cluster), cluster
    try:
        return Client(address, timeout="20s"), None
    except (OSError, TimeoutError) as err:
        raise SyncstatsInputError(
            f"cannot reach the Dask scheduler at '{address}' ({type(err).__name__}); check the address "
            f"and that the scheduler is running.") from None


# =========================================================================== study


def _check_study_options(measure_summary, second_level_correction, repeated_measures, n_jobs, analyze_options):
    from .api import analyze

    if measure_summary not in SUMMARIES:
        raise SyncstatsInputError(
            f"measure_summary must be one of {', '.join(SUMMARIES)}; got {measure_summary!r}.")
    if second_level_correction not in SECOND_LEVEL_CORRECTIONS:
        raise SyncstatsInputError(
            f"second_level_correction must be one of {', '.join(SECOND_LEVEL_CORRECTIONS)}; "
            f"got {second_level_correction!r}.")
    if repeated_measures not in REPEATED_MEASURES:
        raise SyncstatsInputError(
            f"repeated_measures must be one of {', '.join(REPEATED_MEASURES)}; got {repeated_measures!r}.")
    if n_jobs is not None and (not isinstance(n_jobs, (int, np.integer)) or n_jobs < 1):
        raise SyncstatsInputError(f"n_jobs must be a positive whole number; got {n_jobs!r}.")
    accepted = set(inspect.signature(analyze).parameters) - {"signals", "fs", "recording", "rng", "executor",
                                                             "n_jobs", "progress", "events", "phases"}
    bad = sorted(set(analyze_options) - accepted)
    if bad:
        raise SyncstatsInputError(
            f"analyze_study does not take the option(s) {', '.join(bad)}; per-recording fs, signals and events "
            f"go in the manifest, and the accepted analysis options are {', '.join(sorted(accepted))}.")


def _cache_folder(cache_dir) -> Path | None:
    """The cache folder as an absolute path, created if needed (None without a cache)."""
    if cache_dir is None:
        return None
    cache = Path(os.path.abspath(os.fspath(cache_dir)))
    if cache.exists() and not cache.is_dir():
        raise SyncstatsInputError(f"cache folder '{cache}' is a file; give a folder for the cache.")
    try:
        cache.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise SyncstatsInputError(f"cannot create the cache folder '{cache}' ({err.strerror}); "
                                  f"choose another place.") from None
    return cache


def _plan_jobs(mf, seed, read_options, analyze_options, cache, progress):
    """One job per manifest row: rows with a missing file fail, cached rows are taken from the
    cache, the rest are pending. Returns (outs, failures, pending, cache keys)."""
    outs, pending, failures = {}, [], {}
    keys = {}
    for i, row in mf.iterrows():
        s = _recording_seed(seed, i)
        job = {"recording": row["recording"], "path": row["path"], "read": _read_options(row, read_options),
               "analyze": dict(analyze_options), "entropy": s.entropy, "spawn_key": tuple(s.spawn_key)}
        missing = [p for p in [row["path"]] + list(row["event_paths"].values()) if not Path(p).is_file()]
        if missing:
            failures[i] = f"file '{missing[0]}' does not exist; check the 'file' or 'events' column of the manifest."
            _tell(progress, row["recording"], "failed")
            continue
        keys[i] = _cache_key(job) if cache is not None else None
        hit = _cache_load(cache, keys[i]) if cache is not None else None
        if hit is not None:
            outs[i] = hit
            _tell(progress, row["recording"], "cached")
        else:
            pending.append((i, job))
    return outs, failures, pending, keys


def _run_pending(pending, mf, keys, cache, executor, n_jobs, progress, outs, failures) -> int:
    """Analyse the pending recordings, adding each to ``outs`` (and the cache) or to
    ``failures``; returns how many were computed."""
    n_computed = 0

    def done(i, out):
        nonlocal n_computed
        if out["ok"]:
            _cache_store(cache, keys[i], out)
            outs[i] = out
            n_computed += 1
        else:
            failures[i] = out["reason"]
        _tell(progress, mf.at[i, "recording"], "computed" if out["ok"] else "failed")

    _run_jobs(pending, executor, n_jobs, done)
    return n_computed


def _check_some_analysed(mf, outs, failures) -> None:
    """Refuse a study in which no recording could be analysed (naming the first failure)."""
    if not outs:
        first = min(failures)
        raise SyncstatsInputError(
            f"none of the {len(mf)} recordings could be analysed (first, '{mf.at[first, 'recording']}': "
            f"{failures[first].rstrip('.')}); fix the files or the manifest and run again.")


def _failure_table(mf, failures) -> pd.DataFrame:
    """One row per failed recording: recording, file, reason."""
    return pd.DataFrame([{"recording": mf.at[i, "recording"], "file": mf.at[i, "file"], "reason": failures[i]}
                         for i in sorted(failures)], columns=["recording", "file", "reason"])


def _study_diagnostics(mf, outs) -> pd.DataFrame:
    """The analysed recordings' phase diagnostics, one table with a recording column first."""
    diags = []
    for i in sorted(outs):
        d = outs[i]["diagnostics"].copy()
        d.insert(0, "recording", mf.at[i, "recording"])
        diags.append(d)
    return pd.concat(diags, ignore_index=True) if diags else pd.DataFrame()


def _study_params(manifest, mf, outs, failures, seed, cache, *, measure_summary, second_level_correction,
                  repeated_measures, n_bootstrap_second_level, alpha, ci_level, analyze_options, read_options,
                  executor, n_computed, n_cached) -> dict:
    """The study's parameters for the provenance and the report (in their fixed order)."""
    first_params = outs[min(outs)]["params"]
    return {
        "command": "study",
        "manifest": manifest if not isinstance(manifest, pd.DataFrame) else "(table in memory)",
        "n_recordings": len(mf),
        "n_analysed": len(outs),
        "n_failed": len(failures),
        "measure_summary": measure_summary,
        "second_level_correction": second_level_correction,
        "repeated_measures": repeated_measures,
        "n_bootstrap_second_level": n_bootstrap_second_level,
        "alpha": alpha,
        "ci_level": ci_level,
        "analyze_options": _canon(analyze_options),
        "read_options": _canon(read_options or {}),
        "seed_entropy": str(seed.entropy),
        "seed_spawn_key": list(seed.spawn_key),
        "recording_seed_rule": "recording i (manifest row, from 0) uses SeedSequence(entropy, spawn_key + (0, i))",
        "surrogate": first_params.get("surrogate"),
        "n_surrogates": first_params.get("n_surrogates"),
        "measures": first_params.get("measures"),
        "correction": first_params.get("correction"),
        "executor": executor if isinstance(executor, str) or executor is None else type(executor).__name__,
        "cache_dir": None if cache is None else str(cache),
        "n_computed": n_computed,
        "n_cached": n_cached,
        "syncstats_version": _version(),
    }


def _study_notes(mf, outs, failures, measure_summary) -> tuple:
    """The study's notes: how many recordings were analysed and what the second level tests."""
    notes = [f"{len(outs)} of {len(mf)} recordings analysed"
             + (f"; {len(failures)} failed (named below with the reason)" if failures else ""),
             f"second level on the per-recording '{measure_summary}'"]
    if measure_summary == "value":
        notes.append("no one-sample test on the raw value: a locking index is positive even without locking")
    return tuple(notes)


def _study_inputs(manifest, mf, outs) -> tuple:
    """The input files, once each: the manifest file (if any), then each analysed recording's files."""
    inputs = ([str(manifest)] if not isinstance(manifest, pd.DataFrame) else []) + [
        p for i in sorted(outs) for p in [mf.at[i, "path"]] + list(mf.at[i, "event_paths"].values())]
    return tuple(dict.fromkeys(inputs))


def analyze_study(
    manifest,
    *,
    base_dir=None,
    measure_summary="effect",
    second_level_correction="fdr_bh",
    repeated_measures="mean",
    n_bootstrap_second_level=1999,
    executor=None,
    n_jobs=None,
    cache_dir=None,
    rng=None,
    read_options=None,
    progress=None,
    **analyze_options,
) -> StudyResult:
    """Analyse every recording of a study and test across subjects.

    Parameters
    ----------
    manifest : path-like or pandas.DataFrame
        The study manifest (see the module docstring): one row per recording.
    base_dir : path-like, optional
        Folder the manifest's files are relative to (default: the manifest's folder).
    measure_summary : {"effect", "z", "value"}
        Per-recording column the second level tests (default ``effect`` = value - null
        mean, the debiased index). With ``value`` no one-sample test is made (an index
        is positive by construction).
    second_level_correction : {"fdr_bh", "fdr_by", "holm", "bonferroni", "none"}
        Correction over each second-level family (parametric, rank, circular).
    repeated_measures : {"mean", "mixed_model"}
        Several recordings of a subject in one cell: average them first, or (parametric
        one-sample test only) fit a mixed model with a random intercept per subject.
    n_bootstrap_second_level : int
        Bootstrap resamples for the second-level intervals (0: none).
    executor : None, "serial", "processes", "local", "tcp://...", or an executor / dask Client
        Where recordings are analysed (one task per recording); results never depend on it.
    n_jobs : int, optional
        Worker processes for "processes" and "local".
    cache_dir : path-like, optional
        Folder for one finished-recording file per recording, keyed by a SHA-256 of the
        input files' content, the options and the seed; a re-run takes finished
        recordings from it. None: no cache. Resuming needs a fixed ``rng`` seed.
    rng : int, numpy.random.Generator or None
        Study seed; recording ``i`` (manifest row) gets the child seed with spawn key
        ``(0, i)``, the second-level bootstrap row ``j`` the child ``(1, j)``.
    read_options : dict, optional
        Reader options for every recording (``time_column``, ``annotation``,
        ``resample_to``, ``allow_truncated``); manifest columns override them.
    progress : callable, optional
        ``progress(recording, status)`` after each recording (status "computed",
        "cached" or "failed").
    **analyze_options
        Any keyword of :func:`syncstats.analyze` except the per-recording ones.

    Returns
    -------
    StudyResult

    Raises
    ------
    SyncstatsInputError
        Bad manifest or options, or no recording could be analysed.
    """
    _check_study_options(measure_summary, second_level_correction, repeated_measures, n_jobs, analyze_options)
    mf = read_manifest(manifest, base_dir=base_dir)
    seed = as_seed_sequence(rng)
    cache = _cache_folder(cache_dir)
    outs, failures, pending, keys = _plan_jobs(mf, seed, read_options, analyze_options, cache, progress)
    n_cached = len(outs)  # so far only recordings taken from the cache
    n_computed = _run_pending(pending, mf, keys, cache, executor, n_jobs, progress, outs, failures)
    _check_some_analysed(mf, outs, failures)
    table = _study_table(mf, outs)
    alpha = analyze_options.get("alpha", _analyze_default("alpha"))
    ci_level = analyze_options.get("ci_level", _analyze_default("ci_level"))
    second, subj, desc = second_level_tests(
        table, summary=measure_summary, correction=second_level_correction, alpha=alpha, ci_level=ci_level,
        n_bootstrap=n_bootstrap_second_level, repeated_measures=repeated_measures,
        rng=np.random.SeedSequence(seed.entropy, spawn_key=tuple(seed.spawn_key) + (1,)))
    params = _study_params(
        manifest, mf, outs, failures, seed, cache, measure_summary=measure_summary,
        second_level_correction=second_level_correction, repeated_measures=repeated_measures,
        n_bootstrap_second_level=n_bootstrap_second_level, alpha=alpha, ci_level=ci_level,
        analyze_options=analyze_options, read_options=read_options, executor=executor,
        n_computed=n_computed, n_cached=n_cached)
    return StudyResult(
        table=table, second_level=second, failures=_failure_table(mf, failures), subject_values=subj,
        descriptives=desc, diagnostics=_study_diagnostics(mf, outs), manifest=mf, params=params,
        notes=_study_notes(mf, outs, failures, measure_summary), inputs=_study_inputs(manifest, mf, outs),
        n_computed=n_computed, n_cached=n_cached,
        recording_notes={mf.at[i, "recording"]: tuple(outs[i]["notes"]) for i in sorted(outs)},
        epochs=_combine_epochs([outs[i].get("epochs") for i in sorted(outs)]),
    )


def _combine_epochs(found):
    from .epochs import combine_epochs

    return combine_epochs(found)


def _tell(progress, name, status):
    if progress is not None:
        progress(name, status)


def _analyze_default(name):
    from .api import analyze

    return inspect.signature(analyze).parameters[name].default


def _version():
    try:
        from importlib.metadata import version

        return version("syncstats")
    except Exception:  # pragma: no cover
        return "0+unknown"


_UNIT = ["signal_a", "signal_b", "ratio", "p", "q", "window", "measure"]


def _study_table(mf, outs) -> pd.DataFrame:
    parts = []
    for i in sorted(outs):
        t = outs[i]["table"].copy()
        t["recording"] = mf.at[i, "recording"]
        for k, c in enumerate(("subject", "group", "condition")):
            t.insert(1 + k, c, mf.at[i, c])
        starts = sorted(t["window_start_s"].unique())
        t.insert(t.columns.get_loc("window_start_s"), "window", [starts.index(s) + 1 for s in t["window_start_s"]])
        parts.append(t)
    return pd.concat(parts, ignore_index=True)


# =========================================================================== second level


def _pg_get(df, *names):
    """A pingouin result column under its new or old name (pingouin renamed them)."""
    for n in names:
        if n in df.columns:
            return float(df[n].iloc[0])
    return float("nan")


def _boot_ci(data, stat, seq, n_resamples, level):
    """Percentile bootstrap interval (scipy.stats.bootstrap), or NaNs."""
    from scipy import stats

    if n_resamples <= 0 or min(len(d) for d in data) < 2:
        return float("nan"), float("nan")
    if all(np.ptp(d) == 0 for d in data):
        v = float(stat(*data, axis=-1))
        return v, v
    res = stats.bootstrap(data, stat, n_resamples=n_resamples, confidence_level=level, method="percentile",
                          vectorized=True, paired=False, rng=np.random.default_rng(seq))
    return float(res.confidence_interval.low), float(res.confidence_interval.high)


def _mean(x, axis=-1):
    return np.mean(x, axis=axis)


def _median(x, axis=-1):
    return np.median(x, axis=axis)


def _mean_diff(x, y, axis=-1):
    return np.mean(x, axis=axis) - np.mean(y, axis=axis)


def _median_diff(x, y, axis=-1):
    return np.median(x, axis=axis) - np.median(y, axis=axis)


def _hedges_one_sample(cohen_d, n):
    """Hedges' small-sample correction J = 1 - 3 / (4 df - 1), df = n - 1 (Hedges 1981)."""
    return cohen_d * (1.0 - 3.0 / (4.0 * (n - 1) - 1.0))


def _circ_mean(a):
    """Circular mean in (-pi, pi] (angle of the mean unit phasor, as scipy.stats.circmean)."""
    a = np.asarray(a, float)
    a = a[np.isfinite(a)]
    return float(np.angle(np.mean(np.exp(1j * a)))) if len(a) else float("nan")


def _subject_values(table, summary):
    rows = []
    keys = _UNIT + ["group", "condition", "subject"]
    for k, g in table.groupby(keys, sort=False, dropna=False):
        y = g[summary].to_numpy(float)
        y = y[np.isfinite(y)]
        if not len(y):
            continue
        rows.append(dict(zip(keys, k)) | {"value": float(np.mean(y)), "n_recordings": int(len(y)),
                                          "preferred_phase": _circ_mean(g["preferred_phase"].to_numpy(float)),
                                          "recording_values": tuple(float(v) for v in y)})
    return pd.DataFrame(rows, columns=keys + ["value", "n_recordings", "preferred_phase", "recording_values"])


def second_level_tests(table, *, summary="effect", correction="fdr_bh", alpha=0.05, ci_level=0.95,
                       n_bootstrap=1999, repeated_measures="mean", rng=None):
    """Second-level tests across subjects on a per-recording table.

    Parameters
    ----------
    table : pandas.DataFrame
        Per-recording rows with ``subject``, ``group``, ``condition``, the unit columns
        (``signal_a``, ``signal_b``, ``ratio``, ``p``, ``q``, ``window``, ``measure``),
        ``preferred_phase`` and the ``summary`` column (as :attr:`StudyResult.table`).
    summary, correction, alpha, ci_level, n_bootstrap, repeated_measures, rng
        As in :func:`analyze_study` (``rng`` seeds the bootstrap; row ``j`` of the
        output draws from child ``(j,)`` of it).

    Returns
    -------
    second_level, subject_values, descriptives : pandas.DataFrame
        The tests (:data:`SECOND_LEVEL_COLUMNS`), the per-subject values tested, and
        per-cell descriptives.

    Notes
    -----
    Parametric tests: ``pingouin.ttest`` (one-sample against 0; paired; Welch two-sample),
    effect size Hedges g (``pingouin.compute_effsize`` for paired and two-sample, which
    standardises by the average SD of the two sides; for one sample Cohen's d = mean/SD
    times J = 1 - 3/(4(n-1) - 1)). Rank tests: ``pingouin.wilcoxon`` (one-sample and
    paired) and ``pingouin.mwu``, effect size the rank-biserial correlation as pingouin
    reports it. Estimates: means for parametric rows, medians for rank rows; intervals:
    percentile bootstrap (``scipy.stats.bootstrap``) of the estimate over subjects.
    Preferred phases: ``pingouin.circ_rayleigh`` on the subjects' circular-mean phases.
    Each approach is one family, corrected with ``statsmodels.stats.multitest.multipletests``.
    """
    _check_summary(table, summary)
    base = as_seed_sequence(rng)
    subj = _subject_values(table, summary)
    groups, conds, group_sets = _group_sets(table)
    rows = []
    for unit, u in subj.groupby(_UNIT, sort=False, dropna=False):
        rows += _unit_rows(dict(zip(_UNIT, unit)), u, summary, groups, conds, group_sets, repeated_measures,
                           ci_level)
    out = pd.DataFrame(rows, columns=[c for c in SECOND_LEVEL_COLUMNS if c not in
                                      ("p_adjusted", "correction", "family", "significant")] + ["boot_data"])
    out = _bootstrap_rows(out, base, n_bootstrap, ci_level)
    out = _correct(out, correction, alpha, n_units=subj.groupby(_UNIT, dropna=False).ngroups if len(subj) else 0)
    return _second_level_frame(out), subj.drop(columns=["recording_values"]), _descriptives(subj)


def _check_summary(table, summary):
    """Refuse an unknown summary or one the per-recording table holds no finite value of."""
    if summary not in SUMMARIES:
        raise SyncstatsInputError(f"summary must be one of {', '.join(SUMMARIES)}; got {summary!r}.")
    if summary not in table.columns or not np.isfinite(table[summary].to_numpy(float)).any():
        raise SyncstatsInputError(
            f"the per-recording '{summary}' is empty (no surrogates were drawn); set n_surrogates above 0 "
            f"or test the 'value' summary.")


def _group_sets(table):
    """Groups and conditions in table order, and the group sets tested (each group, then all pooled)."""
    groups = list(dict.fromkeys(table["group"]))
    conds = list(dict.fromkeys(table["condition"]))
    group_sets = [(g, [g]) for g in groups] + ([(ALL_GROUPS, groups)] if len(groups) > 1 else [])
    if ALL_GROUPS in groups:
        raise SyncstatsInputError(f"group name '{ALL_GROUPS}' is reserved for pooled rows; rename that group.")
    return groups, conds, group_sets


def _unit_rows(ukey, u, summary, groups, conds, group_sets, repeated_measures, ci_level):
    """All second-level rows of one unit: per cell, between conditions, between groups."""
    in_group = {gname: np.isin(u["group"].to_numpy(object), gl) for gname, gl in group_sets}
    in_cond = {c: u["condition"].to_numpy(object) == c for c in conds}
    head = ukey | {"summary": summary}
    return (_cell_rows(head, u, group_sets, conds, in_group, in_cond, repeated_measures, ci_level)
            + _condition_rows(head, u, group_sets, conds, in_group, in_cond, ci_level)
            + _group_rows(head, u, groups, conds, in_group, in_cond, ci_level))


def _cell_rows(head, u, group_sets, conds, in_group, in_cond, repeated_measures, ci_level):
    """One-sample tests (unless the summary is the raw value) and phase consistency per group x condition."""
    val, nrec, phs = u["value"].to_numpy(float), u["n_recordings"].to_numpy(int), u["preferred_phase"].to_numpy(float)
    rows = []
    for gname, _ in group_sets:
        for cond in conds:
            m = in_group[gname] & in_cond[cond]
            if not m.any():
                continue
            y = val[m]
            common = head | {"group": gname, "condition": cond, "n_subjects": len(y),
                             "n_recordings": int(nrec[m].sum())}
            if head["summary"] != "value":
                if repeated_measures == "mixed_model" and bool((nrec[m] > 1).any()):
                    rows.append(common | _mixed_one_sample(u[m], ci_level))
                else:
                    rows.append(common | _one_sample_t(y, ci_level))
                rows.append(common | _one_sample_rank(y, ci_level))
            rows.append(common | _rayleigh(phs[m]))
    return rows


def _condition_rows(head, u, group_sets, conds, in_group, in_cond, ci_level):
    """Paired tests between each two conditions, on the subjects that have both, per group set."""
    sub, val, nrec = u["subject"].to_numpy(object), u["value"].to_numpy(float), u["n_recordings"].to_numpy(int)
    rows = []
    for gname, _ in group_sets:
        for ca, cb in itertools.combinations(conds, 2):
            ma, mb = in_group[gname] & in_cond[ca], in_group[gname] & in_cond[cb]
            if not ma.any() or not mb.any():
                continue
            ia = dict(zip(sub[ma], np.flatnonzero(ma)))
            ib = dict(zip(sub[mb], np.flatnonzero(mb)))
            both = [s for s in ia if s in ib]
            ja, jb = [ia[s] for s in both], [ib[s] for s in both]
            xa, xb = val[ja], val[jb]
            common = head | {"group": gname, "condition": f"{cb} vs {ca}",
                             "contrast": f"{cb} − {ca}", "n_subjects": len(both), "n_subjects_a": len(both),
                             "n_subjects_b": len(both), "n_recordings": int(nrec[ja].sum() + nrec[jb].sum())}
            rows.append(common | _paired_t(xb, xa, ci_level))
            rows.append(common | _paired_rank(xb, xa, ci_level))
    return rows


def _group_rows(head, u, groups, conds, in_group, in_cond, ci_level):
    """Two-sample tests between each two groups within a condition."""
    val, nrec = u["value"].to_numpy(float), u["n_recordings"].to_numpy(int)
    rows = []
    for cond in conds:
        for ga, gb in itertools.combinations(groups, 2):
            ma, mb = in_group[ga] & in_cond[cond], in_group[gb] & in_cond[cond]
            if not ma.any() or not mb.any():
                continue
            common = head | {"group": f"{gb} vs {ga}", "condition": cond,
                             "contrast": f"{gb} − {ga}", "n_subjects": int(ma.sum() + mb.sum()),
                             "n_subjects_a": int(ma.sum()), "n_subjects_b": int(mb.sum()),
                             "n_recordings": int(nrec[ma].sum() + nrec[mb].sum())}
            rows.append(common | _welch(val[mb], val[ma], ci_level))
            rows.append(common | _mwu(val[mb], val[ma], ci_level))
    return rows


def _second_level_frame(out):
    """The tests in column order with their published dtypes (counts Int64, text str, significant boolean)."""
    out = out[list(SECOND_LEVEL_COLUMNS)]
    for c in ("n_subjects", "n_subjects_a", "n_subjects_b", "n_recordings"):
        out[c] = out[c].astype("Int64")
    for c in ("signal_a", "signal_b", "ratio", "measure", "summary", "test", "approach", "method", "group",
              "condition", "contrast", "aggregation", "ci_method", "effect_size_kind", "correction", "family", "note"):
        out[c] = out[c].astype(object).where(out[c].notna(), "").astype(str)
    out["significant"] = out["significant"].astype("boolean")
    return out.reset_index(drop=True)

def _descriptives(subj):
    rows = []
    for k, g in subj.groupby(_UNIT + ["group", "condition"], sort=False, dropna=False):
        y = g["value"].to_numpy(float)
        rows.append(dict(zip(_UNIT + ["group", "condition"], k)) | {
            "n_subjects": len(y), "n_recordings": int(g["n_recordings"].sum()), "mean": float(np.mean(y)),
            "sd": float(np.std(y, ddof=1)) if len(y) > 1 else float("nan"), "median": float(np.median(y))})
    return pd.DataFrame(rows, columns=_UNIT + ["group", "condition", "n_subjects", "n_recordings", "mean", "sd",
                                               "median"])


def _too_few(n, need=MIN_SUBJECTS, what="subjects"):
    return {"note": f"only {n} {what}; at least {need} are needed for this test", "p_value": float("nan")}


def _one_sample_t(y, level):
    import pingouin as pg

    head = {"test": "one_sample", "approach": "parametric", "method": "one-sample t-test", "contrast": "mean > 0",
            "aggregation": "subject mean", "estimate": float(np.mean(y)), "effect_size_kind": "hedges_g"}
    if len(y) < MIN_SUBJECTS:
        return head | _too_few(len(y))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = pg.ttest(y, 0.0)
    return head | {"statistic": _pg_get(r, "T"), "df": _pg_get(r, "dof"), "p_value": _pg_get(r, "p_val", "p-val"),
                   "effect_size": _hedges_one_sample(_pg_get(r, "cohen_d", "cohen-d"), len(y)),
                   "boot_data": ((y,), _mean)}


def _one_sample_rank(y, level):
    import pingouin as pg

    head = {"test": "one_sample", "approach": "rank", "method": "Wilcoxon signed-rank test",
            "contrast": "median > 0", "aggregation": "subject mean", "estimate": float(np.median(y)),
            "effect_size_kind": "rank_biserial"}
    if len(y) < MIN_SUBJECTS:
        return head | _too_few(len(y))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = pg.wilcoxon(y)
    return head | {"statistic": _pg_get(r, "W_val", "W-val"), "p_value": _pg_get(r, "p_val", "p-val"),
                   "effect_size": _pg_get(r, "RBC"), "boot_data": ((y,), _median)}


def _mixed_one_sample(cell, level):
    import statsmodels.formula.api as smf
    from scipy import stats

    y = [v for vals in cell["recording_values"] for v in vals]
    s = [sub for sub, vals in zip(cell["subject"], cell["recording_values"]) for _ in vals]
    head = {"test": "one_sample", "approach": "parametric", "method": "linear mixed model (intercept)",
            "contrast": "mean > 0", "aggregation": "mixed model (random intercept per subject)",
            "estimate": float("nan"), "effect_size_kind": "standardized_mean"}
    if len(cell) < MIN_SUBJECTS:
        return head | _too_few(len(cell))
    df = pd.DataFrame({"y": y, "subject": s})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit = smf.mixedlm("y ~ 1", df, groups=df["subject"]).fit(reml=True)
    est, se = float(fit.fe_params.iloc[0]), float(fit.bse_fe.iloc[0])
    zc = stats.norm.ppf(0.5 + level / 2)
    total = float(fit.cov_re.iloc[0, 0]) + float(fit.scale)
    return head | {"estimate": est, "statistic": est / se, "p_value": float(fit.pvalues.iloc[0]),
                   "ci_low": est - zc * se, "ci_high": est + zc * se, "ci_level": level,
                   "ci_method": "Wald interval of the mixed model",
                   "effect_size": est / math.sqrt(total) if total > 0 else float("nan")}


def _paired_t(xb, xa, level):
    import pingouin as pg

    d = xb - xa
    head = {"test": "paired", "approach": "parametric", "method": "paired t-test", "aggregation": "subject mean",
            "estimate": float(np.mean(d)) if len(d) else float("nan"), "effect_size_kind": "hedges_g"}
    if len(d) < MIN_SUBJECTS:
        return head | _too_few(len(d), what="subjects with both conditions")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = pg.ttest(xb, xa, paired=True)
        g = float(pg.compute_effsize(xb, xa, paired=True, eftype="hedges"))
    return head | {"statistic": _pg_get(r, "T"), "df": _pg_get(r, "dof"), "p_value": _pg_get(r, "p_val", "p-val"),
                   "effect_size": g, "boot_data": ((d,), _mean)}


def _paired_rank(xb, xa, level):
    import pingouin as pg

    d = xb - xa
    head = {"test": "paired", "approach": "rank", "method": "Wilcoxon signed-rank test (paired)",
            "aggregation": "subject mean", "estimate": float(np.median(d)) if len(d) else float("nan"),
            "effect_size_kind": "rank_biserial"}
    if len(d) < MIN_SUBJECTS:
        return head | _too_few(len(d), what="subjects with both conditions")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = pg.wilcoxon(xb, xa)
    return head | {"statistic": _pg_get(r, "W_val", "W-val"), "p_value": _pg_get(r, "p_val", "p-val"),
                   "effect_size": _pg_get(r, "RBC"), "boot_data": ((d,), _median)}


def _welch(xb, xa, level):
    import pingouin as pg

    head = {"test": "between_groups", "approach": "parametric", "method": "Welch t-test",
            "aggregation": "subject mean", "estimate": float(np.mean(xb) - np.mean(xa)),
            "effect_size_kind": "hedges_g"}
    if min(len(xa), len(xb)) < 2 or len(xa) + len(xb) < MIN_SUBJECTS + 1:
        return head | _too_few(min(len(xa), len(xb)), need=2, what="subjects in one group")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = pg.ttest(xb, xa, paired=False, correction=True)
        g = float(pg.compute_effsize(xb, xa, paired=False, eftype="hedges"))
    return head | {"statistic": _pg_get(r, "T"), "df": _pg_get(r, "dof"), "p_value": _pg_get(r, "p_val", "p-val"),
                   "effect_size": g, "boot_data": ((xb, xa), _mean_diff)}


def _mwu(xb, xa, level):
    import pingouin as pg

    head = {"test": "between_groups", "approach": "rank", "method": "Mann-Whitney U test",
            "aggregation": "subject mean", "estimate": float(np.median(xb) - np.median(xa)),
            "effect_size_kind": "rank_biserial"}
    if min(len(xa), len(xb)) < 2 or len(xa) + len(xb) < MIN_SUBJECTS + 1:
        return head | _too_few(min(len(xa), len(xb)), need=2, what="subjects in one group")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = pg.mwu(xb, xa)
    return head | {"statistic": _pg_get(r, "U_val", "U-val"), "p_value": _pg_get(r, "p_val", "p-val"),
                   "effect_size": _pg_get(r, "RBC"), "boot_data": ((xb, xa), _median_diff)}


def _rayleigh(phases):
    import pingouin as pg

    a = phases[np.isfinite(phases)]
    head = {"test": "phase_consistency", "approach": "circular", "method": "Rayleigh test",
            "contrast": "preferred phase consistent across subjects", "aggregation": "subject circular mean",
            "estimate": _circ_mean(a), "effect_size_kind": "mean_resultant_length", "n_subjects": len(a)}
    if len(a) < MIN_SUBJECTS:
        return head | _too_few(len(a))
    z, p = pg.circ_rayleigh(a)
    return head | {"statistic": float(z), "p_value": float(p),
                   "effect_size": float(np.abs(np.mean(np.exp(1j * a))))}


def _bootstrap_rows(out, base, n_bootstrap, level):
    lows, highs, lev, meth = [], [], [], []
    for j, r in enumerate(out.itertuples(index=False)):
        b = r.boot_data
        if isinstance(b, tuple) and n_bootstrap > 0:
            seq = np.random.SeedSequence(base.entropy, spawn_key=tuple(base.spawn_key) + (j,))
            lo, hi = _boot_ci(b[0], b[1], seq, n_bootstrap, level)
            lows.append(lo), highs.append(hi), lev.append(level)
            meth.append(f"percentile bootstrap over subjects ({n_bootstrap} resamples)")
        else:
            lows.append(r.ci_low), highs.append(r.ci_high), lev.append(r.ci_level), meth.append(r.ci_method)
    out = out.drop(columns=["boot_data"])
    out["ci_low"], out["ci_high"] = np.asarray(lows, float), np.asarray(highs, float)
    out["ci_level"], out["ci_method"] = np.asarray(lev, float), meth
    return out


_FAMILY_NAME = {"parametric": "parametric", "rank": "rank-based", "circular": "phase-consistency"}


def _correct(out, correction, alpha, n_units):
    from statsmodels.stats.multitest import multipletests

    out = out.copy()
    out["p_adjusted"] = np.nan
    out["correction"] = correction
    out["family"] = ""
    out["significant"] = pd.array([pd.NA] * len(out), dtype="boolean")
    for appr, idx in out.groupby("approach").groups.items():
        p = out.loc[idx, "p_value"].to_numpy(float)
        ok = np.isfinite(p)
        kinds = ", ".join(f"{n} {k.replace('_', '-')}" for k, n in out.loc[idx[ok], "test"].value_counts(
            sort=False).items())
        fam = (f"{int(ok.sum())} {_FAMILY_NAME.get(appr, appr)} second-level tests ({kinds}) over {n_units} "
               f"pair x ratio x window x measure combination(s)")
        adj = np.full(len(p), np.nan)
        if ok.any():
            adj[ok] = p[ok] if correction == "none" else multipletests(p[ok], alpha=alpha, method=correction)[1]
        out.loc[idx, "p_adjusted"] = adj
        out.loc[idx, "family"] = fam
        sig = pd.array([bool(a < alpha) if np.isfinite(a) else pd.NA for a in adj], dtype="boolean")
        out.loc[idx, "significant"] = sig
    return out


# =========================================================================== demo


DEMO_STUDY_SETTINGS = dict(surrogate="time_shift", measures=("plv",), ratios=[(1, 1)])


def make_demo_study(folder, *, n_subjects=12, duration=60.0, fs=10.0, coupling=1.0, noise=0.5, rng=2026,
                    overwrite=False) -> Path:
    """Write an invented, simulated study and return the path of its manifest.

    ``n_subjects`` subjects in two groups ("group_a", "group_b", alternating) each give one
    recording in condition "rest" (two independent noisy phase oscillators, A and B)
    and one in "paced" (the same pair mutually coupled with ``coupling`` rad/s), made by
    :func:`syncstats.simulate.scenario`. Files: ``manifest.csv`` and one CSV per
    recording under ``recordings/`` (written atomically into ``folder``).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> m = make_demo_study(pathlib.Path(tempfile.mkdtemp()) / "demo", n_subjects=2, duration=20.0)
    >>> import pandas as pd; list(pd.read_csv(m)["condition"])
    ['rest', 'paced', 'rest', 'paced']
    """
    from ._atomic import write_folder_atomically
    from .io import Recording, write_recording_csv
    from .simulate import scenario

    seed = as_seed_sequence(rng)

    def build(tmp: Path) -> None:
        (tmp / "recordings").mkdir()
        rows = []
        for s in range(n_subjects):
            subject = f"s{s + 1:02d}"
            group = "group_a" if s % 2 == 0 else "group_b"
            for c, cond in enumerate(("rest", "paced")):
                child = np.random.SeedSequence(seed.entropy, spawn_key=tuple(seed.spawn_key) + (s, c))
                coupled = cond == "paced"
                sc = scenario("phase", coupled=coupled, coupling=coupling if coupled else None, noise=noise,
                              duration=duration, fs=fs, rng=np.random.default_rng(child))
                name = f"{subject}_{cond}"
                write_recording_csv(Recording(name=name, signals={k: np.asarray(v) for k, v in sc.signals.items()},
                                              fs=sc.fs), tmp / "recordings" / f"{name}.csv")
                rows.append({"recording": name, "file": f"recordings/{name}.csv", "subject": subject,
                             "group": group, "condition": cond, "coupled": coupled})
        pd.DataFrame(rows).to_csv(tmp / "manifest.csv", index=False, lineterminator="\n")

    out = write_folder_atomically(folder, build, overwrite=overwrite)
    return out / "manifest.csv"
