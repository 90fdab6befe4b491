"""From a loaded source to Recordings: one sampling grid, gaps found, never filled.

The grid step works on "cells": the common grid whose step 1/g is the largest time
step on which every signal's samples fall (g = gcd of the rates; a cell holds
rate_i / g samples of signal i). A cell is good when all its samples of all signals
are finite. Gap-free segments are runs of good cells inside a block that is
continuous in time, so every signal of a segment starts at the same instant.
"""
from __future__ import annotations

import datetime as _dt
import math
from fractions import Fraction

import numpy as np

from syncstats._checks import check_float
from syncstats._errors import SyncstatsInputError

from ._common import _fmt_hz, _fraction_gcd, _rate_fraction, _Source
from ._recording import Recording

__all__: list[str] = []

GAP_MODES = ("error", "split")
_MAX_RESAMPLE_FACTOR = 10_000
#: Largest accepted sample magnitude: squares and sums over 1e9 samples (power spectra,
#: variances) stay far below the float64 maximum of about 1.8e308.
_MAX_MAGNITUDE = 1e100


def _check_gap_options(gaps: str, min_segment_s: float) -> float:
    if gaps not in GAP_MODES:
        raise SyncstatsInputError(
            f"The gaps option {gaps!r} is not supported; choose one of "
            f"{', '.join(map(repr, GAP_MODES))}."
        )
    return check_float(min_segment_s, "min_segment_s (minimum segment length, s)", low=0)


def _resample_factors(src: _Source, target: Fraction) -> dict[str, tuple[int, int]]:
    factors: dict[str, tuple[int, int]] = {}
    for name, rate in src.rates.items():
        ratio = target / rate
        up, down = ratio.numerator, ratio.denominator
        if max(up, down) > _MAX_RESAMPLE_FACTOR:
            raise SyncstatsInputError(
                f"File '{src.path}', signal {name!r}: resampling {_fmt_hz(rate)} to "
                f"{_fmt_hz(target)} needs the ratio {up}/{down}, too fine for polyphase "
                "resampling; choose a common rate with a simpler ratio to "
                f"{_fmt_hz(rate)} (e.g. a divisor of it)."
            )
        factors[name] = (up, down)
    return factors


def _cell_layout(src: _Source) -> tuple[Fraction, dict[str, int], int, np.ndarray]:
    """Common grid rate g, samples per cell of each signal, number of cells, good-cell mask.

    Only whole cells count: samples after the last cell that every signal fills (less
    than 1/g s) are not used, so all signals of a segment also end at the same instant.
    """
    g = _fraction_gcd(src.rates.values())
    per_cell = {n: int(r / g) for n, r in src.rates.items()}
    n_cells = min(len(x) // per_cell[n] for n, x in src.signals.items())
    good = np.ones(n_cells, dtype=bool)
    for n, x in src.signals.items():
        m = per_cell[n]
        good &= np.isfinite(x[:n_cells * m]).reshape(n_cells, m).all(axis=1)
    return g, per_cell, n_cells, good


def _block_cells(src: _Source, g: Fraction, n_cells: int) -> list[tuple[int, int, float]]:
    if not src.blocks:
        return [(0, n_cells, 0.0)]
    out = []
    for b in src.blocks:
        c0 = math.floor(b.data_start * g)
        c1 = min(math.floor(b.data_stop * g), n_cells)
        if c1 > c0:
            out.append((c0, c1, b.onset_s))
    return out


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Start/stop of the runs of True in a boolean vector."""
    edges = np.flatnonzero(np.diff(np.r_[False, mask, False].astype(np.int8)))
    return list(zip(edges[0::2].tolist(), edges[1::2].tolist()))


def _segments(src: _Source, g: Fraction, n_cells: int, good: np.ndarray
              ) -> tuple[list[tuple[int, int, float]], list[tuple[int, int, float]]]:
    """Gap-free segments (cell start, cell stop, real onset s) and the blocks they lie in."""
    blocks = _block_cells(src, g, n_cells)
    segs = []
    for c0, c1, onset in blocks:
        for a, b in _runs(good[c0:c1]):
            segs.append((c0 + a, c0 + b, onset + float(Fraction(a) / g)))
    return segs, blocks


def _real_time(data_t: float, blocks: list[tuple[int, int, float]], g: Fraction) -> float:
    """Map a position in the concatenated data (s) to real time (s)."""
    for c0, c1, onset in blocks:
        if data_t < float(Fraction(c1) / g) or (c0, c1, onset) == blocks[-1]:
            return onset + data_t - float(Fraction(c0) / g)
    return data_t  # pragma: no cover


def _gap_error(src: _Source, g: Fraction, blocks, segs) -> SyncstatsInputError:
    """Describe the first gap: where (s), which signal, and what to do."""
    candidates = []
    for name, x in src.signals.items():
        nan = np.flatnonzero(np.isnan(x))
        if nan.size:
            k = int(nan[0])
            t = _real_time(k / float(src.rates[name]), blocks, g)
            candidates.append((t, f"signal {name!r}: missing values (NaN or empty cells) "
                                  f"start at {t:.6g} s"))
    for j in range(1, len(blocks)):
        c0p, c1p, onp = blocks[j - 1]
        prev_end = onp + float(Fraction(c1p - c0p) / g)
        onset = blocks[j][2]
        candidates.append((prev_end, f"all signals: there are no samples between "
                                     f"{prev_end:.6g} s and {onset:.6g} s (a break in the {src.break_source})"))
    if not candidates:
        t = segs[0][2] if segs else 0.0
        candidates.append((t, f"the data are not continuous near {t:.6g} s"))
    candidates.sort(key=lambda c: c[0])
    return SyncstatsInputError(
        f"{src.kind} file '{src.path}', {candidates[0][1]}, the first gap of a file that "
        f"falls into {len(segs)} gap-free piece(s); syncstats never interpolates, so split "
        "the record at gaps to analyse each gap-free piece, or fill or cut the gap yourself."
    )


def _shift_iso(start: str | None, seconds: float) -> str | None:
    if start is None or seconds == 0:
        return start
    try:
        t0 = _dt.datetime.fromisoformat(start)
    except ValueError:
        return None
    return (t0 + _dt.timedelta(seconds=seconds)).isoformat()


def _merge_events(src: _Source, extra: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    events = dict(src.events)
    for name, times in extra.items():
        if name in events:
            raise SyncstatsInputError(
                f"Event name {name!r} is given as an event list and also comes from file "
                f"'{src.path}'; give the event list another name, e.g. '{name}_2'."
            )
        events[name] = times
    return events


def _common_rate(src: _Source, resample_to: float | None
                 ) -> tuple[Fraction | None, dict[str, tuple[int, int]], float]:
    """The output rate: the one shared rate, or ``resample_to`` with each signal's up/down factors.

    Returns (target, factors, fs_out); target is None and factors empty when nothing is
    resampled (also when every signal is already at ``resample_to``).
    """
    distinct = sorted(set(src.rates.values()))
    if len(distinct) > 1 and resample_to is None:
        listing = ", ".join(f"{n!r} {_fmt_hz(r)}" for n, r in src.rates.items())
        raise SyncstatsInputError(
            f"{src.kind} file '{src.path}' has signals at different sampling rates "
            f"({listing}); give a common rate to resample them to, or choose signals "
            "that share one rate."
        )
    target = None
    factors: dict[str, tuple[int, int]] = {}
    if resample_to is not None:
        target = _rate_fraction(resample_to)
        factors = _resample_factors(src, target)
        if all(f == (1, 1) for f in factors.values()):
            target, factors = None, {}
    return target, factors, float(target if target is not None else distinct[0])


def _check_values(src: _Source) -> None:
    """Refuse signals with no samples, no finite sample, or values too large to process."""
    if any(len(x) == 0 for x in src.signals.values()):
        empty = [n for n, x in src.signals.items() if len(x) == 0]
        raise SyncstatsInputError(
            f"{src.kind} file '{src.path}': signal(s) {', '.join(map(repr, empty))} have "
            "no samples; leave them out of the chosen signals."
        )
    hollow = [n for n, x in src.signals.items() if not np.isfinite(x).any()]
    if hollow:
        raise SyncstatsInputError(
            f"{src.kind} file '{src.path}': signal(s) {', '.join(map(repr, hollow))} have no "
            "valid sample (every value is missing); leave them out of the chosen signals."
        )
    for n, x in src.signals.items():
        big = float(np.max(np.abs(x[np.isfinite(x)])))
        if big > _MAX_MAGNITUDE:
            raise SyncstatsInputError(
                f"{src.kind} file '{src.path}', signal {n!r}: values reach {big:.3g}, too "
                f"large to process without overflow (the limit is {_MAX_MAGNITUDE:.0e} in "
                "magnitude); rescale the signal, e.g. write it in another unit."
            )


def _check_cells(src: _Source, g: Fraction, per_cell: dict[str, int], n_cells: int) -> None:
    """Refuse signals that end before the first step of the common grid (no whole cell)."""
    if n_cells == 0:
        short = [n for n, x in src.signals.items() if len(x) < per_cell[n]]
        raise SyncstatsInputError(
            f"{src.kind} file '{src.path}': signal(s) {', '.join(map(repr, short))} end "
            f"before the first step of the signals' common time grid ({float(1 / g):.6g} s); "
            "leave them out with signals=[...]."
        )


def _length_notes(src: _Source, g: Fraction) -> list[str]:
    """A note when the signals end at different times (all are cut to the shortest)."""
    lengths = {n: len(x) / float(src.rates[n]) for n, x in src.signals.items()}
    if max(lengths.values()) - min(lengths.values()) > 1.0 / float(g):
        return [f"signals end at different times; all were cut to the shortest "
                f"({min(lengths.values()):.6g} s)"]
    return []


def _resample_notes(src: _Source, target: Fraction | None) -> list[str]:
    """A note naming the resampling and its filter ([] when nothing was resampled)."""
    if target is None:
        return []
    return [
        "resampled " + ", ".join(f"{n!r} ({_fmt_hz(r)})" for n, r in src.rates.items())
        + f" to {_fmt_hz(target)} with scipy.signal.resample_poly (polyphase, "
        "linear-phase FIR anti-alias filter with its delay removed, Kaiser window "
        "beta=5, mean-value padding at the ends)"
    ]


def _long_segments(src: _Source, segs, g: Fraction, min_segment_s: float
                   ) -> tuple[list[tuple[int, int, float]], list[str]]:
    """The gap-free pieces at least ``min_segment_s`` long, and a note on those dropped.

    Refuses a file none of whose pieces is long enough.
    """
    kept = [s for s in segs if float(Fraction(s[1] - s[0]) / g) >= min_segment_s]
    dropped = [s for s in segs if s not in kept]
    notes = []
    if dropped:
        spans = "; ".join(
            f"{s[2]:.6g}-{s[2] + float(Fraction(s[1] - s[0]) / g):.6g} s" for s in dropped[:10]
        ) + ("; ..." if len(dropped) > 10 else "")
        notes.append(
            f"dropped {len(dropped)} gap-free piece(s) shorter than the minimum segment "
            f"length of {min_segment_s:g} s: {spans}"
        )
    if not kept:
        longest = max(float(Fraction(s[1] - s[0]) / g) for s in segs) if segs else 0.0
        raise SyncstatsInputError(
            f"{src.kind} file '{src.path}' has no gap-free piece as long as the minimum "
            f"segment length of {min_segment_s:g} s (the longest is {longest:.6g} s); "
            "lower the minimum segment length or repair the gaps."
        )
    return kept, notes


def _piece_signals(src: _Source, a: int, b: int, per_cell: dict[str, int],
                   factors: dict[str, tuple[int, int]]) -> dict[str, np.ndarray]:
    """Cells a..b of every signal, resampled where a factor says so, cut to equal length."""
    sigs = {}
    for n, x in src.signals.items():
        m = per_cell[n]
        piece = x[a * m: b * m]
        if factors and factors[n] != (1, 1):
            from scipy.signal import resample_poly

            up, down = factors[n]
            piece = resample_poly(piece, up, down, padtype="mean")
        sigs[n] = np.array(piece, dtype=float)
    n_out = min(len(v) for v in sigs.values())
    return {n: v[:n_out] for n, v in sigs.items()}


def _segment_recordings(src: _Source, pieces, *, rec_name: str, whole: bool, fs_out: float,
                        events: dict[str, np.ndarray], notes: list[str]) -> list[Recording]:
    """One Recording per piece (signals, onset s, duration s): named ``<name>#k`` with its
    own start time, events and a note on where it lies, or the record itself when whole."""
    out = []
    for i, (sigs, onset, dur) in enumerate(pieces, start=1):
        seg_notes = list(notes)
        if whole:
            seg_name, seg_start = rec_name, src.start_time
        else:
            seg_name = f"{rec_name}#{i}"
            seg_notes.append(
                f"segment {i} of {len(pieces)}: {onset:.6g}-{onset + dur:.6g} s of the file, "
                "a gap-free piece (gaps are never interpolated)"
            )
            seg_start = _shift_iso(src.start_time, onset)
        seg_events = {en: et[(et >= onset) & (et < onset + dur)] - onset
                      for en, et in events.items()}
        out.append(Recording(
            name=seg_name, signals=sigs, fs=fs_out, units=dict(src.units),
            start_time=seg_start, events=seg_events, source=str(src.path),
            notes=tuple(seg_notes), offset_s=0.0 if whole else float(onset),
        ))
    return out


def _finish(src: _Source, *, name: str | None, resample_to: float | None, gaps: str,
            min_segment_s: float, extra_events: dict[str, np.ndarray]) -> list[Recording]:
    """Bring a loaded source to Recordings (one, or one per gap-free segment)."""
    rec_name = src.name if name is None else str(name)
    events = _merge_events(src, extra_events)
    if not src.signals:  # an event list: nothing to put on a grid
        return [Recording(name=rec_name, signals={}, fs=None, units={},
                          start_time=src.start_time, events=events, source=str(src.path),
                          notes=tuple(src.notes))]
    target, factors, fs_out = _common_rate(src, resample_to)
    _check_values(src)
    g, per_cell, n_cells, good = _cell_layout(src)
    _check_cells(src, g, per_cell, n_cells)
    segs, blocks = _segments(src, g, n_cells, good)
    whole = len(segs) == 1 and segs[0][:2] == (0, n_cells)
    notes = list(src.notes) + _length_notes(src, g)
    if not whole and gaps == "error":
        raise _gap_error(src, g, blocks, segs)
    notes += _resample_notes(src, target)
    kept = segs
    if not whole:
        kept, dropped_notes = _long_segments(src, segs, g, min_segment_s)
        notes += dropped_notes
    pieces = []
    for a, b, onset in kept:
        sigs = _piece_signals(src, a, b, per_cell, factors)
        pieces.append((sigs, onset, len(next(iter(sigs.values()))) / fs_out))
    notes += _outside_notes(events, [(onset, dur) for _, onset, dur in pieces])
    return _segment_recordings(src, pieces, rec_name=rec_name, whole=whole, fs_out=fs_out,
                               events=events, notes=notes)


def _outside_notes(events: dict[str, np.ndarray], spans: list[tuple[float, float]]) -> list[str]:
    """One note per event list with times outside every analysed span [onset, onset + dur)."""
    notes = []
    for name, times in events.items():
        inside = np.zeros(len(times), dtype=bool)
        for onset, dur in spans:
            inside |= (times >= onset) & (times < onset + dur)
        lost = int((~inside).sum())
        if lost:
            notes.append(
                f"events {name!r}: {lost} of {len(times)} event times lie outside the analysed "
                "signal span (before its start, after its end, or in a gap or dropped piece) "
                "and were dropped"
            )
    return notes
