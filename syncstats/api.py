"""``syncstats.analyze``: the whole job on signals, events or phases held in memory.

This module only orchestrates: it validates the inputs, fixes the phase pipeline on the
data, builds the searched family, asks :mod:`syncstats.inference` for the null
distribution, p-values, corrections and intervals, and assembles the tidy table.
"""
from __future__ import annotations

import datetime as _dt
import warnings
from collections.abc import Mapping
from itertools import combinations
from math import gcd

import numpy as np
import pandas as pd
from scipy import stats as _st

from . import inference as inf
from . import measures as M
from ._errors import SyncstatsInputError, SyncstatsWarning
from ._rng import as_seed_sequence
from .nulls import SURROGATE_METHODS
from .phase import PhaseSpec, diagnose, estimate_phase, event_phase
from .prep import _check_band, auto_band, spectral_peak
from .results import ResultData, finalize_table
from .run import batch_bounds, map_batches

__all__ = ["analyze", "AnalysisResult", "combine_results"]

SURROGATES = tuple(SURROGATE_METHODS)
CI_METHODS = ("percentile", "bca", "basic")


class AnalysisResult(ResultData):
    """The result of :func:`analyze` (see :class:`syncstats.results.ResultData`)."""

    def save(self, out_dir, *, overwrite: bool = False):
        """Write ``results.csv``, ``report.html``, ``methods.md`` and ``provenance.json``
        to ``out_dir`` atomically (a failed write leaves no partial folder)."""
        from .report import save_result

        return save_result(self, out_dir, overwrite=overwrite)


# --------------------------------------------------------------------------- inputs
def _as_float_array(name, v, what="signal"):
    try:
        a = np.array(v, dtype=float)  # a copy: inputs are never modified
    except (TypeError, ValueError):
        raise SyncstatsInputError(f"{what} '{name}' is not numeric; give a 1-D array of numbers.") from None
    return a


def _normalize_signals(signals, fs):
    """-> (names list, dict name -> (T, N) array, fs, recording name, source list)."""
    rec_name, sources, events = "", [], {}
    if signals is not None and hasattr(signals, "signals") and hasattr(signals, "events"):  # a Recording
        rec = signals
        rec_name, events = rec.name, dict(rec.events)
        sources = [rec.source] if getattr(rec, "source", "") else []
        if fs is None:
            fs = rec.fs
        signals = dict(rec.signals)
    if signals is None:
        return [], {}, fs, rec_name, sources, events
    if isinstance(signals, pd.DataFrame):
        idx = signals.index
        if fs is None and isinstance(idx, (pd.DatetimeIndex, pd.TimedeltaIndex)):
            secs = np.asarray((idx - idx[0]) / pd.Timedelta(seconds=1), dtype=float)
            fs = _fs_from_time(secs)
        elif fs is None and not isinstance(idx, pd.RangeIndex) and pd.api.types.is_numeric_dtype(idx):
            fs = _fs_from_time(np.asarray(idx, dtype=float))
        signals = {str(c): signals[c].to_numpy() for c in signals.columns}
    elif isinstance(signals, np.ndarray) or (isinstance(signals, (list, tuple)) and not isinstance(signals, Mapping)):
        arr = np.asarray(signals)
        if arr.ndim != 2:
            raise SyncstatsInputError(
                f"signals given as an array must be 2-D (rows = signals, columns = samples); got shape {arr.shape}."
            )
        signals = {f"s{i + 1}": arr[i] for i in range(arr.shape[0])}
    elif not isinstance(signals, Mapping):
        raise SyncstatsInputError(
            f"signals must be a mapping name -> array, a pandas DataFrame or a 2-D array; got {type(signals).__name__}."
        )
    out = {}
    for name, v in signals.items():
        name = str(name)
        a = _as_float_array(name, v)
        if a.ndim == 1:
            a = a[None, :]
        if a.ndim != 2:
            raise SyncstatsInputError(
                f"signal '{name}' must be 1-D (samples) or 2-D (trials x samples); got shape {a.shape}."
            )
        bad = ~np.isfinite(a)
        if bad.any():
            i = int(np.argmax(bad.reshape(-1)) % a.shape[-1])
            raise SyncstatsInputError(
                f"signal '{name}' contains NaN or infinite values (first at sample {i}); "
                "cut the record into gap-free segments or repair the samples before the analysis."
            )
        if np.all(np.ptp(a, axis=-1) == 0):
            raise SyncstatsInputError(f"signal '{name}' is constant; a phase needs an oscillating signal.")
        out[name] = a
    return list(out), out, fs, rec_name, sources, events


def _fs_from_time(t):
    d = np.diff(t)
    if d.size == 0 or np.any(d <= 0):
        raise SyncstatsInputError("the time index must be strictly increasing; sort the samples or pass fs.")
    med = np.median(d)
    if np.max(np.abs(d - med)) > 0.01 * med:
        raise SyncstatsInputError(
            "the time index is irregular (sampling intervals vary by more than 1%); resample to a regular grid or pass fs."
        )
    return 1.0 / med


def _check_fs(fs):
    if fs is None:
        raise SyncstatsInputError(
            "fs (sampling rate in Hz) is missing; pass fs=..., or give signals with a time index."
        )
    try:
        fs = float(fs)
    except (TypeError, ValueError):
        raise SyncstatsInputError(f"fs must be a positive number of Hz, got {fs!r}.") from None
    if not np.isfinite(fs) or fs <= 0:
        raise SyncstatsInputError(f"fs must be a positive number of Hz, got {fs!r}.")
    return fs


def _check_events(name, ev):
    e = _as_float_array(name, ev, "event list")
    if e.ndim != 1 or e.size < 3:
        raise SyncstatsInputError(f"event list '{name}' needs at least 3 event times in a 1-D list (seconds).")
    if not np.all(np.isfinite(e)):
        raise SyncstatsInputError(f"event list '{name}' contains NaN or infinite times; remove them.")
    d = np.diff(e)
    if np.any(d == 0):
        raise SyncstatsInputError(f"event list '{name}' has duplicate times (first at {e[1:][d == 0][0]:g} s); remove duplicates.")
    if np.any(d < 0):
        raise SyncstatsInputError(f"event list '{name}' is not sorted (first at {e[1:][d < 0][0]:g} s); sort the event times.")
    return e


# --------------------------------------------------------------------------- analyze
def analyze(
    signals=None,
    fs=None,
    *,
    pairs=None,
    ratios=None,
    measures=("plv",),
    surrogate="iaaft",
    n_surrogates=999,
    correction="fdr_bh",
    alpha=0.05,
    rng=None,
    events=None,
    phases=None,
    bands="auto",
    phase_method="hilbert",
    protophase_correction=False,
    windows=None,
    window_step=None,
    edge_s=None,
    min_shift_s=None,
    ci_level=0.95,
    ci_method="percentile",
    n_bootstrap=999,
    batch_size=32,
    executor=None,
    n_jobs=None,
    recording=None,
    group_label="group",
    progress=None,
) -> AnalysisResult:
    """Test whether recorded rhythms are phase-locked, against surrogate data.

    Parameters
    ----------
    signals : mapping name -> array (N,) or (trials, N), DataFrame, 2-D array, or Recording
        Continuous recordings on one sampling grid (rows of a 2-D array are signals).
    fs : float
        Sampling rate in Hz (required unless ``signals`` carry a regular time index; for
        event-only input it sets the grid on which event phases are evaluated, default
        20 samples per mean cycle of the fastest event train).
    pairs : list of (name_a, name_b), optional
        Default: every pair of signals, events and phases, in input order.
    ratios : list of (p, q) or "p:q", "auto", or a mapping (name_a, name_b) -> either
        ``p:q`` means A completes p cycles while B completes q; ``psi = q·phi_A − p·phi_B``.
        "auto" scans coprime ratios near the ratio of the dominant frequencies of each
        pair. A mapping sets the ratios per pair (its keys are the pairs when ``pairs``
        is not given). Default [(1, 1)].
    measures : sequence of str
        Any of "plv", "ppc", "entropy_index", "conditional_index" (per pair) and
        "order_parameter" (one row for the whole group, signal_a = ``group_label``).
    surrogate : str
        "fourier", "aaft", "iaaft", "time_shift", "twin", "trial_shuffle",
        "interval_shuffle", "multivariate_fourier".
    n_surrogates : int
        Surrogates drawn; 0 computes the measures only (inference columns NaN/empty).
    correction : str
        "fdr_bh", "fdr_by", "holm", "bonferroni", "max_stat" (step-down Westfall–Young
        over the standardized statistics) or "none". The family is every
        pair x ratio x window of one measure in this recording.
    alpha : float
        Level for ``significant`` (p_adjusted < alpha).
    rng : int, numpy.random.Generator or None
        Seeds every draw (surrogates and bootstrap); child streams are addressed by index,
        so results do not depend on ``batch_size``, ``executor`` or ``n_jobs``.
    events : mapping name -> event times (s), optional
        Event-defined rhythms (beats, breath onsets); phase by linear interpolation.
    phases : mapping name -> unwrapped phase (N,) or (trials, N), optional
        Phases computed elsewhere; only phase-level nulls apply to them.
    bands : "auto", (low, high), mapping name -> band, or None
        Band-pass (Hz) before the Hilbert transform; "auto" centres a band on each
        signal's dominant spectral peak (±50 %). None: no filtering.
    phase_method : "hilbert" or "wavelet" (or a mapping name -> method)
    protophase_correction : bool
        Apply the Kralemann et al. protophase-to-phase transform to every phase.
    windows : float or list of (start_s, end_s), optional
        Window length in seconds (sliding by ``window_step``, default the length), or
        explicit windows; every window counts in the correction family.
    edge_s : float, optional
        Seconds dropped at each end after filtering (default: one period of the lowest
        band edge, at most 10 % of the record).
    min_shift_s : float, optional
        Smallest circular shift for ``time_shift`` (default five mean cycles of the
        slowest rhythm).
    ci_level, ci_method, n_bootstrap
        Confidence interval of each value by a bootstrap over whole cycles ("percentile",
        "bca" or "basic"; 0 resamples skips the intervals).
    batch_size : int
        Surrogates per batch (memory O(batch_size x N)); does not change results.
    executor : None, "serial", "processes", a concurrent.futures executor or a dask Client
    n_jobs : int, optional
        Workers for ``executor="processes"``.
    recording : str, optional
        Name written to the ``recording`` column.
    progress : callable, optional
        Called with the number of surrogates finished after each batch.

    Returns
    -------
    AnalysisResult
        ``.table`` (tidy, one row per recording x pair x ratio x window x measure),
        ``.diagnostics``, ``.save(dir)``.

    Examples
    --------
    >>> import numpy as np, syncstats
    >>> t = np.arange(0, 120, 0.02)
    >>> x = {"a": np.sin(2 * np.pi * 1.0 * t), "b": np.sin(2 * np.pi * 1.0 * t + 0.5)}
    >>> res = syncstats.analyze(x, fs=50, n_surrogates=0)
    >>> round(float(res.table["value"].iloc[0]), 3)
    1.0
    """
    started = _dt.datetime.now(_dt.timezone.utc).isoformat()
    # ---- plain options
    measures = (measures,) if isinstance(measures, str) else tuple(measures)
    bad = [m for m in measures if m not in M.MEASURES]
    if not measures or bad:
        raise SyncstatsInputError(
            f"measures must be chosen from {', '.join(M.MEASURES)}; got {', '.join(map(repr, bad)) or 'nothing'}."
        )
    if surrogate not in SURROGATES:
        raise SyncstatsInputError(f"surrogate must be one of {', '.join(SURROGATES)}; got {surrogate!r}.")
    if correction not in inf.CORRECTIONS:
        raise SyncstatsInputError(f"correction must be one of {', '.join(inf.CORRECTIONS)}; got {correction!r}.")
    try:
        n_surrogates = int(n_surrogates)
        n_bootstrap = int(n_bootstrap)
    except (TypeError, ValueError):
        raise SyncstatsInputError("n_surrogates and n_bootstrap must be whole numbers (0 or more).") from None
    if n_surrogates < 0 or n_bootstrap < 0:
        raise SyncstatsInputError("n_surrogates and n_bootstrap must be 0 or more.")
    if not (0 < float(alpha) < 1):
        raise SyncstatsInputError(f"alpha must lie in (0, 1), got {alpha!r}.")
    if not (0 < float(ci_level) < 1):
        raise SyncstatsInputError(f"ci_level must lie in (0, 1), got {ci_level!r}.")
    if ci_method not in CI_METHODS:
        raise SyncstatsInputError(f"ci_method must be one of {', '.join(CI_METHODS)}; got {ci_method!r}.")
    seq = as_seed_sequence(rng)

    # ---- inputs
    names, raw, fs, rec_name, sources, rec_events = _normalize_signals(signals, fs)
    ev_in = dict(rec_events)
    ev_in.update(events or {})
    evs = {str(k): _check_events(str(k), v) for k, v in ev_in.items()}
    ph_in = {}
    for k, v in (phases or {}).items():
        a = _as_float_array(str(k), v, "phase")
        a = a[None, :] if a.ndim == 1 else a
        if a.ndim != 2 or not np.all(np.isfinite(a)):
            raise SyncstatsInputError(f"phase '{k}' must be a finite 1-D (or trials x samples) array of unwrapped radians.")
        ph_in[str(k)] = a
    all_names = names + [n for n in evs if n not in raw] + [n for n in ph_in if n not in raw and n not in evs]
    dup = (set(raw) & set(evs)) | (set(raw) & set(ph_in)) | (set(evs) & set(ph_in))
    if dup:
        raise SyncstatsInputError(f"the name '{sorted(dup)[0]}' is used twice (signal, events or phases); give each rhythm its own name.")
    if len(all_names) < 2:
        raise SyncstatsInputError(
            f"need at least two rhythms to test locking, got {len(all_names)} ({', '.join(all_names) or 'none'}); "
            "pass two or more signals, event lists or phases."
        )
    kinds = {n: "signal" for n in raw} | {n: "events" for n in evs} | {n: "phase" for n in ph_in}
    lengths = {n: a.shape for n, a in list(raw.items()) + list(ph_in.items())}
    if len({s for s in lengths.values()}) > 1:
        desc = ", ".join(f"{n}: {s[-1]} samples" + (f" x {s[0]} trials" if s[0] > 1 else "") for n, s in lengths.items())
        raise SyncstatsInputError(f"signals must have equal lengths (and trial counts) on one grid; got {desc}.")
    if raw or ph_in:
        fs = _check_fs(fs)
        n_trials, n_samp = next(iter(lengths.values()))
        t = np.arange(n_samp) / fs
    else:
        if fs is None:
            rate = max(len(e) / (e[-1] - e[0]) for e in evs.values())
            fs = float(np.ceil(20 * rate))
        fs = _check_fs(fs)
        t0 = max(e[0] for e in evs.values())
        t1 = min(e[-1] for e in evs.values())
        if t1 <= t0:
            raise SyncstatsInputError("the event lists do not overlap in time; give events from one recording.")
        t = np.arange(np.floor(t0 * fs), np.ceil(t1 * fs) + 1) / fs
        n_trials, n_samp = 1, t.size
    if evs and n_trials > 1:
        raise SyncstatsInputError("event lists cannot be combined with multi-trial signals; analyse trials as signals.")

    # ---- phase specs fixed on the data (reused unchanged for every surrogate)
    specs = {}
    for n in raw:
        method = phase_method.get(n, "hilbert") if isinstance(phase_method, Mapping) else phase_method
        if method not in ("hilbert", "wavelet"):
            raise SyncstatsInputError(f"phase_method for '{n}' must be 'hilbert' or 'wavelet', got {method!r}.")
        b = bands.get(n, "auto") if isinstance(bands, Mapping) else bands
        x0 = raw[n].mean(axis=0)
        if isinstance(b, str) and b == "auto":
            try:
                b = auto_band(x0, fs)
            except SyncstatsInputError:
                raise SyncstatsInputError(
                    f"signal '{n}': no spectral peak to centre a band on; give bands={{'{n}': (low_hz, high_hz)}}."
                ) from None
        elif b is not None:
            b = _check_band(b, fs, where=f"band of signal '{n}'")
        freq = None
        if method == "wavelet":
            freq = float(np.sqrt(b[0] * b[1])) if b is not None else spectral_peak(x0, fs)[0]
            b = None
        specs[n] = PhaseSpec(method=method, band=b, freq=freq, protophase_correction=bool(protophase_correction))

    # ---- observed phases on the full grid
    full = {}
    for n in all_names:
        if kinds[n] == "signal":
            full[n] = estimate_phase(raw[n], fs, specs[n])[0]
        elif kinds[n] == "events":
            ph = event_phase(evs[n], t)[None, :]
            if protophase_correction:
                from .phase import protophase_to_phase

                ok = np.isfinite(ph)
                ph = ph.copy()
                ph[ok] = protophase_to_phase(ph[ok])
            full[n] = ph
        else:
            full[n] = ph_in[n]

    # ---- analysed span: finite everywhere, minus filter edges
    finite = np.all(np.stack([np.all(np.isfinite(full[n]), axis=0) for n in all_names]), axis=0)
    if not finite.any():
        raise SyncstatsInputError("the rhythms share no time span; check event times and the sampling grid.")
    i0, i1 = int(np.argmax(finite)), int(len(finite) - np.argmax(finite[::-1]))
    if edge_s is None:
        edge = 0.0
        for n, sp in specs.items():
            if sp.band is not None:
                edge = max(edge, 1.0 / sp.band[0])
            elif sp.freq is not None:
                edge = max(edge, 1.5 / sp.freq)
        edge = min(edge, 0.1 * n_samp / fs)
    else:
        edge = float(edge_s)
        if edge < 0 or 2 * edge * fs >= (i1 - i0):
            raise SyncstatsInputError(f"edge_s={edge_s!r} must be >= 0 and leave part of the record; use a smaller value.")
    e_samp = int(round(edge * fs))
    if raw:
        i0, i1 = max(i0, e_samp), min(i1, n_samp - e_samp)
    span_n = i1 - i0
    obs = {n: full[n][..., i0:i1] for n in all_names}

    # ---- diagnostics
    diag_rows, diag_warn = [], {}
    for n in all_names:
        x = raw[n][0, i0:i1] if n in raw else None
        amp = estimate_phase(raw[n][:1], fs, specs[n])[1][0, i0:i1] if n in raw else None
        d = diagnose(n, x, fs, obs[n][0], amp, spec=specs.get(n), kind=kinds[n] if n not in raw else "signal")
        diag_warn[n] = list(d.warnings)
        diag_rows.append(
            {
                "signal": n,
                "kind": kinds[n],
                "dominant_freq_hz": d.dominant_freq_hz,
                "peak_sharpness": d.peak_sharpness,
                "near_zero_amplitude_share": d.near_zero_amplitude_share,
                "backward_step_share": d.backward_step_share,
                "n_cycles": d.n_cycles * n_trials,
                "method": d.method,
                "band": "" if d.band is None else f"{d.band[0]:.4g}-{d.band[1]:.4g} Hz",
                "warnings": "; ".join(d.warnings),
            }
        )
    diagnostics = pd.DataFrame(diag_rows)
    cycles = {n: float(np.mean((obs[n][:, -1] - obs[n][:, 0]) / (2 * np.pi))) * n_trials for n in all_names}
    freqs = {n: cycles[n] / (span_n * n_trials / fs) for n in all_names}

    # ---- pairs, ratios, windows
    if pairs is None:
        pair_list = list(combinations(all_names, 2))
    else:
        pair_list = []
        for pr in pairs:
            try:
                a, b = (str(x) for x in pr)
            except (TypeError, ValueError):
                raise SyncstatsInputError(f"each pair must be two names (name_a, name_b); got {pr!r}.") from None
            for x in (a, b):
                if x not in kinds:
                    raise SyncstatsInputError(
                        f"pair ({a}, {b}) names '{x}', which is not among the rhythms ({', '.join(all_names)}); fix the name."
                    )
            if a == b:
                raise SyncstatsInputError(f"pair ({a}, {b}) pairs a rhythm with itself; choose two different rhythms.")
            pair_list.append((a, b))
    pair_measures = [m for m in measures if m != "order_parameter"]
    if not pair_measures:
        pair_list = []
    if isinstance(ratios, Mapping):
        per_pair = {}
        for k, v in ratios.items():
            key = tuple(str(x) for x in k) if not isinstance(k, str) else tuple(k.split("|"))
            if len(key) != 2 or key[0] not in kinds or key[1] not in kinds:
                raise SyncstatsInputError(
                    f"ratios key {k!r} must be a pair (name_a, name_b) of the rhythms ({', '.join(all_names)})."
                )
            per_pair[key] = v
        if pairs is None and pair_measures:
            pair_list = list(per_pair)
        missing = [pr for pr in pair_list if pr not in per_pair]
        if missing:
            raise SyncstatsInputError(
                f"ratios gives no entry for the pair {missing[0]}; add one or leave the pair out of pairs."
            )
    else:
        per_pair = {pr: ratios for pr in pair_list}
    ratio_map = {}
    for a, b in pair_list:
        rr = per_pair[(a, b)]
        if isinstance(rr, str) and rr == "auto":
            ratio_map[(a, b)] = M.auto_ratios(freqs[a], freqs[b])
        else:
            rl = [(1, 1)] if rr is None else rr
            if isinstance(rl, (str, tuple)) and not (isinstance(rl, tuple) and rl and isinstance(rl[0], (tuple, list, str))):
                rl = [rl]
            chk = []
            for r in rl:
                p, q = M.check_ratio(r)
                if gcd(p, q) != 1:
                    g = gcd(p, q)
                    raise SyncstatsInputError(
                        f"ratio {p}:{q} is not in lowest terms; it tests the same locking as {p // g}:{q // g}, use that."
                    )
                chk.append((p, q))
            ratio_map[(a, b)] = list(dict.fromkeys(chk))
    win = _windows(windows, window_step, t[i0], span_n, fs)

    # strides: samples per mean cycle of the slower rhythm (PPC thinning, bootstrap blocks)
    stride = {}
    for (a, b), rl in ratio_map.items():
        for p, q in rl:
            f_slow = min(freqs[a], freqs[b])
            stride[(a, b, p, q)] = max(1, int(round(fs / f_slow)))
    f_slowest = min(freqs.values())
    stride[("__group__",)] = max(1, int(round(fs / f_slowest)))
    min_cyc = min(cycles[n] for n in all_names) / n_trials
    if min_cyc * n_trials < 10:
        slow = min(all_names, key=lambda n: cycles[n])
        raise SyncstatsInputError(
            f"'{slow}' has only {min_cyc * n_trials:.1f} cycles in the analysed span; locking needs at least 10 cycles "
            "of the slower rhythm: record longer or check the band."
        )

    if windows is not None:
        for a, b in ratio_map:
            slow = min((a, b), key=lambda n: freqs[n])
            wlen = min(w1 - w0 for w0, w1 in win) / fs
            if wlen * freqs[slow] < 10:
                raise SyncstatsInputError(
                    f"windows of {wlen:g} s hold only {wlen * freqs[slow]:.1f} cycles of '{slow}' (pair {a}, {b}); "
                    f"locking needs at least 10 cycles of the slower rhythm: use windows of at least "
                    f"{np.ceil(10 / freqs[slow]):.0f} s or leave the pair out."
                )
    rows = []
    for (a, b), rl in ratio_map.items():
        for p, q in rl:
            for w0, w1 in win:
                for m in pair_measures:
                    rows.append(inf.Row("pair", a, b, p, q, w0, w1, m))
    if "order_parameter" in measures:
        for w0, w1 in win:
            rows.append(inf.Row("group", group_label, "", 1, 1, w0, w1, "order_parameter", tuple(all_names)))
    family = inf.Family(tuple(rows), stride)
    observed = np.atleast_1d(family.evaluate(obs))

    # ---- surrogate method checks and the null distribution
    notes, method_warn = [], {}
    null_level = _null_level(surrogate, kinds, pair_list, n_trials) if n_surrogates > 0 else ""
    options = {}
    if surrogate == "time_shift" and n_surrogates > 0:
        ms = (5 * max(stride.values())) if min_shift_s is None else int(round(float(min_shift_s) * fs))
        if 2 * ms >= span_n:
            raise SyncstatsInputError(
                f"time_shift needs a span longer than twice the minimum shift ({ms / fs:.1f} s); record longer or set min_shift_s lower."
            )
        options["min_shift"] = ms
        if n_surrogates > span_n - 2 * ms:
            notes.append(f"time_shift: only {span_n - 2 * ms} distinct shifts exist for {n_surrogates} surrogates")
    method_warn = _method_warnings(surrogate, raw, obs, fs, options, all_names, evs) if n_surrogates > 0 else {}
    null = None
    if n_surrogates > 0:
        job = inf.NullJob(
            pipeline=inf.Pipeline(
                names=tuple(all_names), kinds=kinds, fs=fs, t=t, i0=i0, i1=i1, raw=raw, specs=specs, events=evs,
                user_phases=ph_in,
            ),
            family=family,
            method=surrogate,
            seed=seq,
            observed_full=full,
            options=options,
        )
        parts = map_batches(job, batch_bounds(n_surrogates, int(batch_size)), executor=executor, n_jobs=n_jobs, progress=progress)
        null = np.concatenate([np.reshape(x, (-1, len(rows))) for x in parts], axis=0)

    # ---- p-values, corrections (one family per measure)
    p_val = np.full(len(rows), np.nan)
    p_adj = np.full(len(rows), np.nan)
    fam_txt = [""] * len(rows)
    small_s = set()
    if null is not None:
        p_val = inf.surrogate_pvalue(observed, null)
        for m in measures:
            idx = [i for i, r in enumerate(rows) if r.measure == m]
            p_adj[idx] = inf.adjust(p_val[idx], correction, observed=observed[idx], null=null[:, idx])
            n_pairs = len({(rows[i].a, rows[i].b) for i in idx})
            n_rat = len({(rows[i].a, rows[i].b, rows[i].p, rows[i].q) for i in idx})
            txt = (
                f"{len(idx)} tests of {m}: {n_pairs} pair(s) x {n_rat / max(n_pairs, 1):.3g} ratio(s) per pair x {len(win)} window(s)"
                if m != "order_parameter"
                else f"{len(idx)} tests of order_parameter: 1 group x {len(win)} window(s)"
            )
            for i in idx:
                fam_txt[i] = txt
            need = inf.min_surrogates(len(idx), alpha, correction)
            if n_surrogates < need:
                small_s.update(idx)
                notes.append(
                    f"{n_surrogates} surrogates are too few for a family of {len(idx)} {m} tests with {correction} "
                    f"at alpha={alpha}; use at least {need}"
                )
    null_mean = null.mean(axis=0) if null is not None else np.full(len(rows), np.nan)
    null_sd = null.std(axis=0, ddof=1) if null is not None and null.shape[0] > 1 else np.full(len(rows), np.nan)

    # ---- table rows
    table_rows, null_d, psi_d = [], {}, {}
    boot_seq = np.random.SeedSequence(seq.entropy, spawn_key=tuple(seq.spawn_key) + (2**31 - 1,))
    ci_txt = f"block bootstrap over whole cycles ({ci_method}, {n_bootstrap} resamples)" if n_bootstrap else ""
    for i, r in enumerate(rows):
        w_sl = slice(r.w0, r.w1)
        if r.kind == "pair":
            psi = M.phase_difference(obs[r.a], obs[r.b], r.p, r.q)[..., w_sl]
            pref = float(M.preferred_phase(psi.reshape(-1)))
            ncyc = min(_cycles(obs[r.a][..., w_sl]), _cycles(obs[r.b][..., w_sl]))
            key = (r.a, r.b, r.p, r.q)
            if key not in psi_d:  # whole span, ~20 samples a slow cycle, for the report's rose
                full_psi = M.phase_difference(obs[r.a], obs[r.b], r.p, r.q)
                psi_d[key] = np.angle(np.exp(1j * full_psi.reshape(-1)[:: max(1, stride[key] // 20)]))
        else:
            pref = float("nan")
            ncyc = min(_cycles(obs[n][..., w_sl]) for n in r.members)
        rng_i = np.random.default_rng(np.random.SeedSequence(boot_seq.entropy, spawn_key=tuple(boot_seq.spawn_key) + (i,)))
        lo = hi = plo = phi_ = float("nan")
        if n_bootstrap:
            bst, fn = family.block_stats(obs, r)
            lo, hi = inf.block_ci(bst, fn, n_resamples=n_bootstrap, level=float(ci_level), method=ci_method, rng=rng_i)
            if r.kind == "pair" and r.measure == "plv":
                plo, phi_ = inf.angle_ci(bst, n_resamples=n_bootstrap, level=float(ci_level), rng=rng_i)
        wl = []
        for n in ((r.a, r.b) if r.kind == "pair" else r.members):
            wl += diag_warn.get(n, []) + method_warn.get(n, [])
        if ncyc < 10:
            wl.append(f"only {ncyc:.1f} cycles of the slower rhythm in this window")
        if i in small_s:
            wl.append(f"too few surrogates for the family ({n_surrogates})")
        has_inf = null is not None
        row = {
            "recording": rec_name if recording is None else str(recording),
            "signal_a": r.a,
            "signal_b": r.b,
            "ratio": f"{r.p}:{r.q}",
            "p": r.p,
            "q": r.q,
            "window_start_s": float(t[i0 + r.w0]),
            "window_end_s": float(t[i0 + r.w1 - 1] + 1.0 / fs),
            "measure": r.measure,
            "value": float(observed[i]),
            "n_cycles": float(ncyc),
            "preferred_phase": pref,
            "surrogate": surrogate if has_inf else "",
            "n_surrogates": n_surrogates if has_inf else 0,
            "null_mean": float(null_mean[i]),
            "null_sd": float(null_sd[i]),
            "effect": float(observed[i] - null_mean[i]),
            "z": float((observed[i] - null_mean[i]) / null_sd[i]) if has_inf and null_sd[i] > 0 else float("nan"),
            "p_value": float(p_val[i]),
            "p_adjusted": float(p_adj[i]),
            "correction": correction if has_inf else "",
            "family": fam_txt[i],
            "significant": bool(p_adj[i] < alpha) if has_inf else pd.NA,
            "ci_low": lo,
            "ci_high": hi,
            "ci_level": float(ci_level) if n_bootstrap else float("nan"),
            "ci_method": ci_txt,
            "warnings": "; ".join(dict.fromkeys(wl)),
            "preferred_phase_ci_low": plo,
            "preferred_phase_ci_high": phi_,
            "null_level": null_level if has_inf else "",
        }
        table_rows.append(row)
        if null is not None:
            null_d[i] = null[:, i].copy()
    table = finalize_table(table_rows)
    for w in dict.fromkeys(sum(method_warn.values(), [])):
        warnings.warn(w, SyncstatsWarning, stacklevel=2)
    notes = [_level_note(null_level, surrogate)] + notes if null is not None else ["no surrogates drawn: measures only, no test"] + notes
    params = {
        "fs": fs,
        "pairs": [list(p) for p in pair_list],
        "ratios": {f"{a}|{b}": [f"{p}:{q}" for p, q in rl] for (a, b), rl in ratio_map.items()},
        "ratios_requested": ratios if isinstance(ratios, str) or ratios is None else str(ratios),
        "measures": list(measures),
        "surrogate": surrogate,
        "n_surrogates": n_surrogates,
        "correction": correction,
        "alpha": float(alpha),
        "seed_entropy": str(seq.entropy),
        "seed_spawn_key": list(seq.spawn_key),
        "phase_method": {n: s.method for n, s in specs.items()} | {n: kinds[n] for n in all_names if n not in specs},
        "bands": {n: (list(s.band) if s.band is not None else None) for n, s in specs.items()},
        "wavelet_freqs": {n: s.freq for n, s in specs.items() if s.freq is not None},
        "protophase_correction": bool(protophase_correction),
        "windows": [[float(t[i0 + a]), float(t[i0 + b - 1] + 1 / fs)] for a, b in win],
        "edge_s": edge,
        "span_s": [float(t[i0]), float(t[i1 - 1] + 1 / fs)],
        "n_trials": n_trials,
        "min_shift_s": options.get("min_shift", 0) / fs if surrogate == "time_shift" else None,
        "ci_level": float(ci_level),
        "ci_method": ci_method,
        "n_bootstrap": n_bootstrap,
        "batch_size": int(batch_size),
        "null_level": null_level,
        "kinds": kinds,
        "started_at": started,
        "finished_at": _dt.datetime.now(_dt.timezone.utc).isoformat(),
        "syncstats_version": _version(),
    }
    return AnalysisResult(
        table=table,
        diagnostics=diagnostics,
        params=params,
        null_distributions=null_d,
        phase_differences=psi_d,
        phases={n: obs[n][0] for n in all_names},
        time_s=t[i0:i1].copy(),
        events={n: evs[n].copy() for n in evs},
        notes=notes,
        inputs=list(sources),
    )


def _cycles(ph):
    return float(np.mean((ph[..., -1] - ph[..., 0]) / (2 * np.pi)) * (ph.shape[0] if ph.ndim > 1 else 1))


def _windows(windows, step, t0, n, fs):
    if windows is None:
        return [(0, n)]
    if isinstance(windows, (int, float)) and not isinstance(windows, bool):
        length = int(round(float(windows) * fs))
        stp = length if step is None else int(round(float(step) * fs))
        if length < 2 or length > n or stp < 1:
            raise SyncstatsInputError(
                f"windows={windows!r} s must be shorter than the analysed span ({n / fs:.1f} s) and window_step positive."
            )
        return [(s, s + length) for s in range(0, n - length + 1, stp)]
    out = []
    for w in windows:
        try:
            a, b = (float(v) for v in w)
        except (TypeError, ValueError):
            raise SyncstatsInputError(f"each window must be (start_s, end_s); got {w!r}.") from None
        s0, s1 = int(round((a - t0) * fs)), int(round((b - t0) * fs))
        if not (0 <= s0 < s1 <= n):
            raise SyncstatsInputError(
                f"window ({a:g}, {b:g}) s lies outside the analysed span ({t0:g}–{t0 + n / fs:g} s); adjust it."
            )
        out.append((s0, s1))
    if not out:
        raise SyncstatsInputError("windows is empty; give a window length in seconds or a list of (start_s, end_s).")
    return out


def _null_level(method, kinds, pairs, n_trials):
    info = SURROGATE_METHODS[method]
    level = info.level
    has = set(kinds.values())
    if level == "signal" and "signal" not in has:
        raise SyncstatsInputError(
            f"surrogate '{method}' randomises raw continuous signals, but only events/phases were given; "
            "use 'time_shift' or 'interval_shuffle' (events)."
        )
    if level == "signal":
        for a, b in pairs:
            if kinds[a] != "signal" and kinds[b] != "signal":
                raise SyncstatsInputError(
                    f"surrogate '{method}' cannot randomise the pair ({a}, {b}): neither is a raw signal; use 'time_shift'."
                )
    if method == "interval_shuffle":
        if "events" not in has:
            raise SyncstatsInputError("surrogate 'interval_shuffle' needs event lists (events=...); use 'iaaft' or 'time_shift' for signals.")
        for a, b in pairs:
            if kinds[a] != "events" and kinds[b] != "events":
                raise SyncstatsInputError(
                    f"surrogate 'interval_shuffle' cannot randomise the pair ({a}, {b}): neither is an event list; use 'time_shift'."
                )
    if method == "trial_shuffle" and n_trials < 2:
        raise SyncstatsInputError(
            "surrogate 'trial_shuffle' needs several trials per signal (arrays of shape trials x samples); use 'iaaft' or 'time_shift'."
        )
    if method == "multivariate_fourier" and n_trials > 1:
        raise SyncstatsInputError("surrogate 'multivariate_fourier' takes single-trial signals; use 'trial_shuffle' for trials.")
    return level


def _level_note(level, method):
    if method == "trial_shuffle":
        return "null: trial_shuffle: each trial of one rhythm paired with another trial of the other"
    return {
        "signal": f"null: {method} surrogates of the raw signals, each passed through the same detrending, band-pass and phase estimation as the data",
        "phase": f"null: {method} surrogates made from the phases (the filtering and phase estimation are not repeated)",
        "event": f"null: {method} surrogates of the event times, turned into phases as the data were",
    }.get(level, f"null: {method}")


def _method_warnings(method, raw, obs, fs, options, names, evs=None):
    """Warnings when the chosen null is known to be weak or invalid for these data."""
    out = {}
    for n in names:
        w = []
        if method == "interval_shuffle" and evs and n in evs and len(evs[n]) > 30:
            from statsmodels.stats.diagnostic import acorr_ljungbox

            iv = np.diff(evs[n])
            lb = acorr_ljungbox(iv - iv.mean(), lags=[min(10, len(iv) // 4)], return_df=True)
            pval = float(lb["lb_pvalue"].iloc[0])
            if pval < 0.01:
                w.append(
                    f"{n}: its intervals are serially correlated (Ljung-Box p = {pval:.2g}), which interval_shuffle "
                    "destroys, so rate modulation can pass for locking: prefer time_shift"
                )
        if method == "fourier" and n in raw:
            x = raw[n].reshape(-1)
            sk, ku = float(_st.skew(x)), float(_st.kurtosis(x))
            if abs(sk) > 1 or ku > 2:
                w.append(
                    f"{n}: fourier surrogates are Gaussian but this signal is spiky (skewness {sk:.1f}, excess kurtosis {ku:.1f}), "
                    "prefer iaaft"
                )
        if method == "time_shift" and n in obs:
            ms = options["min_shift"]
            ph = obs[n][0]
            if ph.size > ms + 1:
                d = ph[ms:] - ph[:-ms]
                c = float(np.abs(np.mean(np.exp(1j * (d - d.mean())))))
                if c > 0.5:
                    w.append(
                        f"{n}: rhythm so regular that its phase is predictable across the minimum shift (coherence {c:.2f}), "
                        "so time_shift has little power"
                    )
        if w:
            out[n] = w
    return out


def _version():
    try:
        from importlib.metadata import version

        return version("syncstats")
    except Exception:  # pragma: no cover
        return "0+unknown"


def combine_results(results) -> AnalysisResult:
    """One result from the analyses of several recordings (or gap-free segments).

    Tables and diagnostics are stacked (diagnostics get a ``recording`` column); each
    recording keeps its own correction family. Figures data (phase differences, phases,
    events) come from the longest recording, which the notes name.
    """
    results = list(results)
    if not results:
        raise SyncstatsInputError("no recordings to combine; check the input file.")
    tables, diags, nulls_, offset = [], [], {}, 0
    for r in results:
        rec = r.table["recording"].iloc[0] if len(r.table) else ""
        tables.append(r.table)
        d = r.diagnostics.copy()
        d.insert(0, "recording", rec)
        diags.append(d)
        for k, v in r.null_distributions.items():
            nulls_[k + offset] = v
        offset += len(r.table)
    longest = max(results, key=lambda r: 0 if r.time_s is None else len(r.time_s))
    rec_long = longest.table["recording"].iloc[0] if len(longest.table) else ""
    notes = list(dict.fromkeys(sum((r.notes for r in results), [])))
    notes.append(f"{len(results)} recordings analysed separately; figures show '{rec_long}', the longest")
    params = dict(longest.params)
    params["recordings"] = [r.table["recording"].iloc[0] if len(r.table) else "" for r in results]
    params["started_at"] = min(r.params["started_at"] for r in results)
    params["finished_at"] = max(r.params["finished_at"] for r in results)
    return AnalysisResult(
        table=finalize_table(pd.concat(tables, ignore_index=True).to_dict("records")),
        diagnostics=pd.concat(diags, ignore_index=True),
        params=params,
        null_distributions=nulls_,
        phase_differences=longest.phase_differences,
        phases=longest.phases,
        time_s=longest.time_s,
        events=longest.events,
        notes=notes,
        inputs=sorted({p for r in results for p in r.inputs}),
    )
