"""Which ratio the rhythms lock at, and how sure that choice is.

A significant row rejects *independence* at its ratio; when several ratios of one pair
are tested, a lock at one ratio makes the rhythms dependent at every ratio, so a
neighbouring ratio can be significant too. The question a user asks is "at which ratio
are they locked?". Procedure, for every pair x window x measure with more than one ratio:

1. the **selected ratio** is the one with the largest debiased effect (value minus the
   null mean; the value itself when nothing was tested);
2. its **certainty** is the share of cycle-block bootstrap resamples (the blocks of the
   intervals, resampled jointly for all ratios of the pair, so their dependence is kept)
   in which the same ratio keeps the largest debiased effect;
3. a row is **locked** when it is the selected ratio, it is significant after the
   correction, its value exceeds what independent angles reach by chance over its cycles
   (:func:`lock_floor`) and psi does not keep turning (:func:`drift_per_cycle`, at most
   ``MAX_DRIFT_PER_CYCLE`` net turns per cycle: frequency entrainment); every other ratio is "dependent but not locked at this ratio" (if
   significant) or "no evidence" — never locked.

With one ratio tested, ``locked`` is step 3 without the selection, and the certainty is empty.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._circular import critical_plv

__all__ = ["RatioChoice", "choose_ratios", "lock_floor", "drift_per_cycle", "lock_evidence", "MAX_DRIFT_PER_CYCLE",
           "two_state_warning"]

_CHUNK = 100  # resamples per chunk (memory: chunk x blocks x statistics)


@dataclass(frozen=True)
class RatioChoice:
    """Per row: ``locked`` (object array of True / False / None when nothing was tested)
    and ``certainty`` (float, NaN where one ratio was tested)."""

    locked: np.ndarray
    certainty: np.ndarray
    selected: np.ndarray  # bool: the row is its group's selected ratio
    drift: np.ndarray  # net turns of psi per cycle (drift_per_cycle); NaN where not measured


def lock_floor(measure: str, n_cycles: float, alpha: float) -> float:
    """The smallest value of ``measure`` that independent angles exceed by chance with
    probability at most ``alpha`` over ``n_cycles`` cycles (-inf where no floor is defined)."""
    if not n_cycles or n_cycles < 2:
        return float("inf") if measure in ("plv", "ppc") else float("-inf")
    if measure == "plv":
        return critical_plv(n_cycles, alpha)
    if measure == "ppc":
        g = critical_plv(n_cycles, alpha)
        return (n_cycles * g * g - 1.0) / (n_cycles - 1.0) if np.isfinite(g) else float("inf")
    return float("-inf")


#: chance level for the second circular moment in :func:`two_state_warning`: strict, since
#: the warning is looked for on every row
TWO_STATE_LEVEL = 0.001


def two_state_warning(r1: float, r2: float, n_cycles: float) -> str:
    """A warning when psi has two preferred values half a turn apart: the second circular
    moment |<exp(2i psi)>| (``r2``) above the first (``r1``) and above what independent
    angles reach over ``n_cycles`` cycles with probability ``TWO_STATE_LEVEL``.

    A one-peaked psi has r2 below r1 (wrapped normal: r2 = r1^4; von Mises: I2/I0 < I1/I0).
    Two peaks half a turn apart cancel in r1 but not in r2: odd-symmetric oscillators
    (waveforms with x -> -x symmetry) locked at p:q with p + q odd have two equivalent
    states, and noise makes psi jump between them, which can bring the whole-record PLV
    close to zero although psi stays locked on either side of each jump."""
    if not (np.isfinite(r1) and np.isfinite(r2)) or r2 <= r1 or r2 <= critical_plv(n_cycles, TWO_STATE_LEVEL):
        return ""
    return (f"psi has two preferred values half a turn apart (|<exp(2i psi)>| = {r2:.2f} against a PLV of "
            f"{r1:.2f}): the rhythms may hold this ratio but jump between two equivalent states, which cancels the "
            "PLV; analyse the record in windows or epochs to see the stretches")


#: net turns of psi per cycle of the slower rhythm above which a ratio is not called
#: locked (frequency entrainment, q·f_A = p·f_B, up to one net slip in four cycles). Noisy
#: locked phase oscillators at 4:1 drifted up to 0.10; the neighbours of a lock in a scan
#: of small ratios drift a third of a turn per cycle or more (1:1 next to 3:2: 0.5)
MAX_DRIFT_PER_CYCLE = 0.25


def drift_per_cycle(design, data, n_cycles) -> np.ndarray:
    """Per row: net turns of psi over the row's span per cycle, |psi(end) − psi(start)| /
    (2π · cycles), averaged over trials (NaN for rows that are not pairs).

    Locking at p:q means frequency entrainment as well as a concentrated psi: the mean
    frequencies obey q·f_A = p·f_B, so psi makes no net turns but for rare slips. A ratio
    at which psi keeps turning can still show a non-zero PLV — the non-uniform protophases
    of relaxation or spiking waveforms carry a lock at one ratio into the harmonics seen at
    another (van der Pol pair locked near 3:2: 1:1 PLV 0.13 with psi turning 103 times in
    300 s, significant against time shifts) — which is dependence, not a lock at that ratio.
    """
    out = np.full(len(design.rows), np.nan)
    for i, r in enumerate(design.rows):
        if r.kind != "pair" or not n_cycles[i] or not np.isfinite(n_cycles[i]):
            continue
        psi = np.asarray(r.view(data).psi, float)
        out[i] = float(np.mean(np.abs(psi[..., -1] - psi[..., 0]))) / (2 * np.pi * float(n_cycles[i]))
    return out


def lock_evidence(value, measure: str, n_cycles: float, drift, alpha: float) -> bool:
    """Beyond selection and significance, what a locked row needs: a value above the
    chance floor for its cycles (:func:`lock_floor`) and no more than
    ``MAX_DRIFT_PER_CYCLE`` net turns of psi per cycle (``drift`` NaN or None: not
    measured, no condition)."""
    turning = drift is not None and np.isfinite(drift) and drift > MAX_DRIFT_PER_CYCLE
    return bool(value > lock_floor(measure, n_cycles, alpha) and not turning)


def choose_ratios(design, data, observed, test, *, alpha, n_resamples, seed, n_cycles=None) -> RatioChoice:
    rows = design.rows
    tested = not np.all(np.isnan(test.p_adjusted))
    debiased = observed - np.nan_to_num(test.null_mean, nan=0.0)
    groups: dict = {}
    for i, r in enumerate(rows):
        key = (r.kind, r.a, r.b, r.w0, r.w1, r.measure)
        groups.setdefault(key, []).append(i)
    selected = np.zeros(len(rows), bool)
    certainty = np.full(len(rows), np.nan)
    key0 = tuple(seed.spawn_key) + (2**31 - 2,)
    for g, idx in enumerate(groups.values()):
        if len(idx) == 1:
            selected[idx[0]] = True
            continue
        best = idx[int(np.argmax(debiased[idx]))]
        selected[best] = True
        rng = np.random.default_rng(np.random.SeedSequence(seed.entropy, spawn_key=key0 + (g,)))
        c = _certainty(design.family, data, [rows[i] for i in idx], np.nan_to_num(test.null_mean[idx], nan=0.0),
                       idx.index(best), n_resamples, rng)
        certainty[idx] = c
    sig = test.p_adjusted < alpha
    drift = np.full(len(rows), np.nan) if n_cycles is None else drift_per_cycle(design, data, n_cycles)
    strong = np.ones(len(rows), bool) if n_cycles is None else np.array(
        [lock_evidence(observed[i], r.measure, float(n_cycles[i]), drift[i], alpha) for i, r in enumerate(rows)])
    locked = np.array([bool(selected[i] and sig[i] and strong[i]) if tested else None for i in range(len(rows))],
                      dtype=object)
    return RatioChoice(locked, certainty, selected, drift)


def _certainty(family, data, rows, null_mean, best, n_resamples, rng) -> float:
    stats = [family.block_stats(data, r) for r in rows]
    nblk = {st.shape[0] for st, _ in stats}
    if len(nblk) != 1 or n_resamples < 1:
        return float("nan")
    nb = nblk.pop()
    if nb < 3:
        return float("nan")
    wins, done = 0, 0
    while done < n_resamples:
        k = min(_CHUNK, n_resamples - done)
        pick = rng.integers(0, nb, size=(k, nb))
        with np.errstate(invalid="ignore", divide="ignore"):
            vals = np.stack([fn(st[pick].sum(axis=1)) for st, fn in stats], axis=1) - null_mean[None, :]
        wins += int(np.sum(np.argmax(np.nan_to_num(vals, nan=-np.inf), axis=1) == best))
        done += k
    return wins / n_resamples
