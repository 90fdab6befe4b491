"""The design of one analysis: which pairs, ratios, windows and measures are tested (the
searched family), with the cycle bookkeeping every later stage needs."""
from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from itertools import combinations

import numpy as np

from .. import measures as M
from .._checks import check_float, parse_ratios
from .._errors import SyncstatsInputError
from ._family import Family, Row

__all__ = ["Design", "make_design", "MIN_CYCLES"]

#: fewest cycles of the slower rhythm a span or window must hold
MIN_CYCLES = 10.0


def _cycles(ph):
    """Cycles in (T, n) phases, summed over trials."""
    return float(np.mean((ph[..., -1] - ph[..., 0]) / (2 * np.pi)) * (ph.shape[0] if ph.ndim > 1 else 1))


@dataclass(frozen=True)
class Design:
    """What is tested, fixed before any surrogate is drawn.

    Attributes
    ----------
    family : Family
        Every row tested (pairs x ratios x windows x measures, then group rows).
    pairs : tuple of (a, b)
    ratios : mapping (a, b) -> tuple of (p, q)
    windows : tuple of (w0, w1)
        Sample indices within the analysed span.
    freqs : mapping name -> mean frequency on the span (Hz)
    slowest_stride : int
        Samples per mean cycle of the slowest rhythm.
    """

    family: Family
    pairs: tuple
    ratios: Mapping
    windows: tuple
    freqs: Mapping
    slowest_stride: int

    @property
    def rows(self):
        return self.family.rows

    def ratio_warning(self, row, data: dict, fs: float) -> str:
        """A warning when the row's ratio is far (> 20 %) from the pair's frequency ratio
        measured in the row's window (``data``: the phases, at ``fs``): the phase
        difference then rotates and no locking is possible at that ratio there. (Measured
        per window: a pair whose ratio changes over the record, 4:1 then 3:1, can lock at
        a ratio far from the whole span's.)"""
        if row.kind != "pair":
            return ""
        fa, fb = (_cycles(ph) / (ph.shape[-1] * (ph.shape[0] if ph.ndim > 1 else 1) / fs)
                  for ph in row.view(data).members)
        if not (fa > 0 and fb > 0):
            return ""
        measured = fa / fb
        if abs(row.p / row.q - measured) / measured <= 0.2:
            return ""
        span = row.w0 == 0 and row.w1 == data[row.a].shape[-1]
        return (f"ratio {row.p}:{row.q} is far from the measured frequency ratio {measured:.3g}"
                f"{'' if span else ' in this window'} ({row.a} {fa:.3g} Hz, {row.b} {fb:.3g} Hz), so psi rotates "
                f"and no lock is possible at it {'over the span' if span else 'in this window'}")

    def describe(self, measure: str) -> str:
        """The family of one measure in words (the ``family`` column)."""
        idx = [r for r in self.rows if r.measure == measure]
        if M.MEASURE_METHODS[measure].kind == "group":
            return f"{len(idx)} tests of {measure}: 1 group x {len(self.windows)} window(s)"
        n_pairs = len({(r.a, r.b) for r in idx})
        n_rat = len({(r.a, r.b, r.p, r.q) for r in idx})
        return (f"{len(idx)} tests of {measure}: {n_pairs} pair(s) x {n_rat / max(n_pairs, 1):.3g} ratio(s) per pair "
                f"x {len(self.windows)} window(s)")

    def row_summaries(self, data: dict):
        """Per row: preferred phase (circular mean of psi), cycles of the slower rhythm in
        the row's window, and the first two circular moments of psi, |<exp(i psi)>| and
        |<exp(2i psi)>| (NaN for a group)."""
        k = len(self.rows)
        pref, ncyc, r1, r2 = np.full(k, np.nan), np.zeros(k), np.full(k, np.nan), np.full(k, np.nan)
        for i, r in enumerate(self.rows):
            v = r.view(data)
            if r.kind == "pair":
                psi = v.psi.reshape(-1)
                pref[i], r1[i], r2[i] = M.preferred_phase(psi), M.plv(psi), M.plv(2.0 * psi)
            ncyc[i] = min(_cycles(ph) for ph in v.members)
        return pref, ncyc, r1, r2

    def psi_samples(self, data: dict) -> dict:
        """(a, b, p, q) -> psi over the whole span wrapped to (−π, π], about 20 samples per
        cycle of the slower rhythm (for the report's figures)."""
        out = {}
        for r in self.rows:
            key = (r.a, r.b, r.p, r.q)
            if r.kind == "pair" and key not in out:
                psi = M.phase_difference(data[r.a], data[r.b], r.p, r.q)
                out[key] = np.angle(np.exp(1j * psi.reshape(-1)[:: max(1, r.stride // 20)]))
        return out


def _windows(windows, step, t0, n, fs):
    if windows is None:
        return [(0, n)]
    if isinstance(windows, (int, float, np.number)) and not isinstance(windows, bool):
        length_s = check_float(windows, "windows", low=0, open_low=True, hint="give a window length in seconds.")
        step_s = length_s if step is None else check_float(step, "window_step", low=0, open_low=True,
                                                           hint="give a window step in seconds.")
        length, stp = int(round(length_s * fs)), max(int(round(step_s * fs)), 1)
        if length < 2 or length > n:
            raise SyncstatsInputError(
                f"windows={windows!r} s must be shorter than the analysed span ({n / fs:.1f} s); use a shorter window."
            )
        return [(s, s + length) for s in range(0, n - length + 1, stp)]
    out = []
    try:
        items = list(windows)
    except TypeError:
        raise SyncstatsInputError(
            f"windows must be a length in seconds or a list of (start_s, end_s); got {windows!r}."
        ) from None
    for w in items:
        try:
            a, b = (check_float(v, "window edge") for v in w)
        except (TypeError, ValueError):
            raise SyncstatsInputError(f"each window must be (start_s, end_s) in seconds; got {w!r}.") from None
        s0, s1 = int(round((a - t0) * fs)), int(round((b - t0) * fs))
        if not (0 <= s0 < s1 <= n):
            raise SyncstatsInputError(
                f"window ({a:g}, {b:g}) s lies outside the analysed span ({t0:g}–{t0 + n / fs:g} s); adjust it."
            )
        out.append((s0, s1))
    if not out:
        raise SyncstatsInputError("windows is empty; give a window length in seconds or a list of (start_s, end_s).")
    return out


def _pair_list(pairs, names, kinds):
    if pairs is None:
        return list(combinations(names, 2))
    out = []
    try:
        items = list(pairs)
    except TypeError:
        raise SyncstatsInputError(f"pairs must be a list of (name_a, name_b); got {pairs!r}.") from None
    for pr in items:
        if isinstance(pr, str):
            raise SyncstatsInputError(f"each pair must be two names (name_a, name_b); got {pr!r}.")
        try:
            a, b = (str(x) for x in pr)
        except (TypeError, ValueError):
            raise SyncstatsInputError(f"each pair must be two names (name_a, name_b); got {pr!r}.") from None
        for x in (a, b):
            if x not in kinds:
                raise SyncstatsInputError(
                    f"pair ({a}, {b}) names '{x}', which is not among the rhythms ({', '.join(names)}); fix the name."
                )
        if a == b:
            raise SyncstatsInputError(f"pair ({a}, {b}) pairs a rhythm with itself; choose two different rhythms.")
        out.append((a, b))
    if not out:
        raise SyncstatsInputError("pairs is empty; give at least one pair (name_a, name_b), or leave it out.")
    return out


def _ratio_map(ratios, pair_list, pairs_given, names, kinds, freqs, has_pair_measures):
    if isinstance(ratios, Mapping):
        per_pair = {}
        for k, v in ratios.items():
            key = tuple(str(x) for x in k) if not isinstance(k, str) else tuple(k.split("|"))
            if len(key) != 2 or key[0] not in kinds or key[1] not in kinds:
                raise SyncstatsInputError(
                    f"ratios key {k!r} must be a pair (name_a, name_b) of the rhythms ({', '.join(names)})."
                )
            per_pair[key] = v
        if not pairs_given and has_pair_measures:
            pair_list = list(per_pair)
        missing = [pr for pr in pair_list if pr not in per_pair]
        if missing:
            raise SyncstatsInputError(
                f"ratios gives no entry for the pair {missing[0]}; add one or leave the pair out of pairs."
            )
    else:
        per_pair = {pr: ratios for pr in pair_list}
    out = {}
    for a, b in pair_list:
        rr = per_pair[(a, b)]
        if isinstance(rr, str) and rr.strip() == "auto":
            # scanned on (faster, slower) so the family does not depend on the pair's order
            if freqs[a] >= freqs[b]:
                out[(a, b)] = tuple(M.auto_ratios(freqs[a], freqs[b]))
            else:
                out[(a, b)] = tuple((p, q) for q, p in M.auto_ratios(freqs[b], freqs[a]))
        else:
            out[(a, b)] = tuple(parse_ratios(rr))
    return out


def make_design(pipeline, *, pairs=None, ratios=None, measures=("plv",), windows=None, window_step=None,
                group_label="group") -> Design:
    """Pairs, ratios, windows and rows from the options and the data's phases."""
    inp, data = pipeline.inputs, pipeline.data
    names, kinds, fs, n_trials = inp.names, inp.kinds, inp.fs, inp.n_trials
    span_n = pipeline.span_n
    cycles = {n: float(np.mean((data[n][:, -1] - data[n][:, 0]) / (2 * np.pi))) * n_trials for n in names}
    freqs = {n: cycles[n] / (span_n * n_trials / fs) for n in names}
    pair_measures = [m for m in measures if M.MEASURE_METHODS[m].kind == "pair"]
    pair_list = _pair_list(pairs, names, kinds) if pair_measures else []
    ratio_map = _ratio_map(ratios, pair_list, pairs is not None, names, kinds, freqs, bool(pair_measures))
    win = _windows(windows, window_step, float(pipeline.time_s[0]), span_n, fs)
    slow = min(names, key=lambda n: cycles[n])
    if cycles[slow] < MIN_CYCLES:
        raise SyncstatsInputError(
            f"'{slow}' has only {cycles[slow]:.1f} cycles in the analysed span; locking needs at least "
            f"{MIN_CYCLES:.0f} cycles of the slower rhythm: record longer or check the band."
        )
    if windows is not None:
        wlen = min(w1 - w0 for w0, w1 in win) / fs
        for a, b in ratio_map:
            s = min((a, b), key=lambda n: freqs[n])
            if wlen * freqs[s] < MIN_CYCLES:
                raise SyncstatsInputError(
                    f"windows of {wlen:g} s hold only {wlen * freqs[s]:.1f} cycles of '{s}' (pair {a}, {b}); "
                    f"locking needs at least {MIN_CYCLES:.0f} cycles of the slower rhythm: use windows of at least "
                    f"{np.ceil(MIN_CYCLES / freqs[s]):.0f} s or leave the pair out."
                )
    slowest_stride = max(1, int(round(fs / min(freqs.values()))))
    rows = []
    for (a, b), rl in ratio_map.items():
        stride = max(1, int(round(fs / min(freqs[a], freqs[b]))))
        for p, q in rl:
            for w0, w1 in win:
                for m in pair_measures:
                    rows.append(Row("pair", a, b, p, q, w0, w1, m, (a, b), stride))
    for m in measures:
        if M.MEASURE_METHODS[m].kind == "group":
            for w0, w1 in win:
                rows.append(Row("group", group_label, "", 1, 1, w0, w1, m, tuple(names), slowest_stride))
    return Design(Family(tuple(rows)), tuple(ratio_map), ratio_map, tuple(win), freqs, slowest_stride)
