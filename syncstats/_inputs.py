"""Collect ``analyze``'s inputs (signals, events, phases) onto one checked time grid."""
from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from ._checks import as_float_array, check_event_times, check_fs
from ._errors import SyncstatsInputError
from .pipeline import Inputs

__all__ = ["collect_inputs", "TIME_NAMES"]

#: DataFrame columns read as the time axis (seconds), never as a rhythm
TIME_NAMES = ("time", "t", "time_s", "seconds", "timestamp")

#: values beyond this overflow in filtering and power spectra; refuse them up front
_MAX_ABS = 1e150


def _fs_from_time(t, where="the time index"):
    d = np.diff(t)
    if d.size == 0 or np.any(d <= 0):
        raise SyncstatsInputError(f"{where} must be strictly increasing; sort the samples or give the sampling rate.")
    med = np.median(d)
    if np.max(np.abs(d - med)) > 0.01 * med:
        raise SyncstatsInputError(
            f"{where} is irregular (sampling intervals vary by more than 1%); resample to a regular grid or give "
            "the sampling rate."
        )
    return 1.0 / med


def _from_frame(df: pd.DataFrame, fs):
    idx = df.index
    if fs is None and isinstance(idx, (pd.DatetimeIndex, pd.TimedeltaIndex)):
        fs = _fs_from_time(np.asarray((idx - idx[0]) / pd.Timedelta(seconds=1), dtype=float))
    elif fs is None and not isinstance(idx, pd.RangeIndex) and pd.api.types.is_numeric_dtype(idx):
        fs = _fs_from_time(np.asarray(idx, dtype=float))
    time_cols = [c for c in df.columns if str(c).strip().lower() in TIME_NAMES]
    for c in time_cols:
        rate = _fs_from_time(np.asarray(df[c], dtype=float), where=f"time column '{c}'")
        if fs is None:
            fs = rate
        elif abs(rate - float(fs)) > 0.01 * float(fs):
            raise SyncstatsInputError(
                f"time column '{c}' implies {rate:.6g} Hz but the sampling rate given is {float(fs):g} Hz; "
                "fix one of them."
            )
    return {str(c): df[c].to_numpy() for c in df.columns if c not in time_cols}, fs


def _signal_arrays(signals, fs):
    """-> (dict name -> (T, N) array, fs, recording name, sources, events)."""
    rec_name, sources, events, offset = "", (), {}, 0.0
    if signals is not None and hasattr(signals, "signals") and hasattr(signals, "events"):  # a Recording
        rec = signals
        offset = float(getattr(rec, "offset_s", 0.0) or 0.0)
        rec_name, events = rec.name, {k: np.asarray(v, dtype=float) + offset for k, v in rec.events.items()}
        sources = (rec.source,) if getattr(rec, "source", "") else ()
        fs = rec.fs if fs is None else fs
        signals = dict(rec.signals)
    if signals is None:
        return {}, fs, rec_name, sources, events, offset
    if isinstance(signals, pd.DataFrame):
        signals, fs = _from_frame(signals, fs)
    elif isinstance(signals, np.ndarray) or (isinstance(signals, (list, tuple)) and not isinstance(signals, Mapping)):
        arr = as_float_array(signals, "array", "signals")
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
        a = as_float_array(v, name)
        a = a[None, :] if a.ndim == 1 else a
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
        if a.size and np.max(np.abs(a)) > _MAX_ABS:
            raise SyncstatsInputError(
                f"signal '{name}' has values up to {np.max(np.abs(a)):.3g}, too large to filter without overflow; "
                "rescale it (e.g. to volts or standard units)."
            )
        if np.all(np.ptp(a, axis=-1) == 0):
            raise SyncstatsInputError(f"signal '{name}' is constant; a phase needs an oscillating signal.")
        out[name] = a
    return out, fs, rec_name, sources, events, offset


def collect_inputs(signals, fs, events=None, phases=None, recording=None) -> Inputs:
    """Check every input and put them on one grid (copies: inputs are never modified)."""
    raw, fs, rec_name, sources, rec_events, offset = _signal_arrays(signals, fs)
    ev_in = dict(rec_events)
    if events is not None and not isinstance(events, Mapping):
        raise SyncstatsInputError(f"events must be a mapping name -> event times (s); got {type(events).__name__}.")
    ev_in.update(events or {})
    evs = {str(k): check_event_times(v, str(k)) for k, v in ev_in.items()}
    if phases is not None and not isinstance(phases, Mapping):
        raise SyncstatsInputError(f"phases must be a mapping name -> unwrapped phase array; got {type(phases).__name__}.")
    ph_in = {}
    for k, v in (phases or {}).items():
        a = as_float_array(v, str(k), "phase")
        a = a[None, :] if a.ndim == 1 else a
        if a.ndim != 2 or not np.all(np.isfinite(a)):
            raise SyncstatsInputError(f"phase '{k}' must be a finite 1-D (or trials x samples) array of unwrapped radians.")
        ph_in[str(k)] = a
    dup = (set(raw) & set(evs)) | (set(raw) & set(ph_in)) | (set(evs) & set(ph_in))
    if dup:
        raise SyncstatsInputError(
            f"the name '{sorted(dup)[0]}' is used twice (signal, events or phases); give each rhythm its own name."
        )
    if "" in set(raw) | set(evs) | set(ph_in):
        raise SyncstatsInputError("a rhythm has an empty name; give every signal, event list and phase a name.")
    names = tuple(raw) + tuple(evs) + tuple(ph_in)
    if len(names) < 2:
        raise SyncstatsInputError(
            f"need at least two rhythms to test locking, got {len(names)} ({', '.join(names) or 'none'}); "
            "pass two or more signals, event lists or phases."
        )
    kinds = {n: "signal" for n in raw} | {n: "events" for n in evs} | {n: "phase" for n in ph_in}
    lengths = {n: a.shape for n, a in list(raw.items()) + list(ph_in.items())}
    if len(set(lengths.values())) > 1:
        desc = ", ".join(f"{n}: {s[-1]} samples" + (f" x {s[0]} trials" if s[0] > 1 else "") for n, s in lengths.items())
        raise SyncstatsInputError(f"signals must have equal lengths (and trial counts) on one grid; got {desc}.")
    if raw or ph_in:
        fs = check_fs(fs, hint="give the sampling rate, or signals with a time index")
        n_trials, n_samp = next(iter(lengths.values()))
        t = offset + np.arange(n_samp) / fs  # file time (a segment of a file starts at its offset)
    else:
        if fs is None:
            rate = max(len(e) / (e[-1] - e[0]) for e in evs.values())
            fs = float(np.ceil(20 * rate))
        fs = check_fs(fs, hint="give the sampling rate of the grid for event phases")
        t0 = max(e[0] for e in evs.values())
        t1 = min(e[-1] for e in evs.values())
        if t1 <= t0:
            raise SyncstatsInputError("the event lists do not overlap in time; give events from one recording.")
        t = np.arange(np.floor(t0 * fs), np.ceil(t1 * fs) + 1) / fs
        n_trials = 1
    if evs and n_trials > 1:
        raise SyncstatsInputError("event lists cannot be combined with multi-trial signals; analyse trials as signals.")
    return Inputs(
        names=names, kinds=kinds, fs=fs, t=t, n_trials=int(n_trials), raw=raw, events=evs, user_phases=ph_in,
        recording=rec_name if recording is None else str(recording), sources=tuple(sources),
    )
