"""Event-related locking over trials: the across-trial PLV and PPC as a function of time
relative to a stimulus, tested at every time point against trial-shuffled surrogates
with the family-wise error over time points controlled.

For trials k = 1..K of two rhythms A and B and a ratio p:q, psi_k(t) = q·phi_A,k(t) −
p·phi_B,k(t) and

* across-trial PLV(t) = |(1/K) Σ_k exp(i psi_k(t))|   (Lachaux et al. 1999, eq. 1);
* across-trial PPC(t) = (K·PLV(t)² − 1)/(K − 1)       (Vinck et al. 2010, pair-sum identity),
  unbiased for the squared population PLV whatever K.

Null: trial-shuffled surrogates (trial k of A paired with trial pi(k) of B, pi a random
derangement; :func:`syncstats.nulls.trial_shuffle`), drawn in batches through the same
:class:`~syncstats.inference.NullJob` as every other null (child stream per surrogate, so
batch size and workers never change results). Only the surrogate curves are kept
(S x time points floats per curve), never the surrogate phases.

Correction over the time points of one curve (pair x ratio x measure), one of
:data:`TRIAL_CORRECTIONS`:

* ``"cluster"`` (default): cluster-based permutation test (Maris & Oostenveld 2007). A time
  point is supra-threshold when the curve exceeds the pointwise (1 − ``threshold``) quantile
  of the pooled curves (data + surrogates); a stretch is a run of supra-threshold points,
  its mass the sum of the standardized curve over the run; its p-value compares the mass
  with the largest mass of every surrogate curve. Controls the FWER of "some stretch is
  locked"; the edges of a significant stretch are not themselves tested.
* ``"max_stat"``: single-step max-statistic over time points (Westfall & Young 1993;
  Nichols & Holmes 2002): the standardized curve at each time point is compared with the
  maximum over time of every surrogate's standardized curve; strong FWER control at every
  time point, less power for long weak stretches.

Standardization uses the mean and SD over the pooled S + 1 curves at each time point (the
data's curve is treated exactly like the surrogates', so the test is a permutation test);
the SD is floored at the measure's chance SD for K independent trials (Rayleigh for the
PLV, the pair-sum variance for the PPC), as in the project's max-statistic.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ._checks import check_float, check_int
from ._errors import SyncstatsInputError
from ._rng import as_seed_sequence
from .measures import _ppc_sd, _rayleigh_sd, plv, ppc

__all__ = ["TrialLocking", "TRIAL_CORRECTIONS", "TRIAL_MEASURES", "locking_over_trials", "trial_locking_on",
           "across_trial_plv", "across_trial_ppc", "cut_trials", "CURVE_COLUMNS", "STRETCH_COLUMNS"]

#: corrections over time points: name -> description (methods text)
TRIAL_CORRECTIONS = {
    "cluster": "a cluster-based permutation test over time points (Maris & Oostenveld 2007): stretches of time "
               "points above the pointwise {thr_pct:g} % quantile of the pooled curves, each stretch's mass (sum of "
               "the standardized curve) compared with the largest mass of every surrogate curve; the edges of a "
               "significant stretch are not themselves tested",
    "max_stat": "a single-step max-statistic over time points (Westfall & Young 1993; Nichols & Holmes 2002): each "
                "time point's standardized value compared with the maximum over time of every surrogate curve, "
                "which controls the family-wise error at every time point",
}
TRIAL_CITATIONS = {
    "plv": "Lachaux J-P, et al. (1999). Hum Brain Mapp 8:194–208.",
    "ppc": "Vinck M, et al. (2010). NeuroImage 51:112–122.",
    "cluster": "Maris E, Oostenveld R (2007). Nonparametric statistical testing of EEG- and MEG-data. "
               "J Neurosci Methods 164:177–190.",
    "max_stat": "Nichols TE, Holmes AP (2002). Nonparametric permutation tests for functional neuroimaging: a "
                "primer with examples. Hum Brain Mapp 15:1–25.",
}
#: measures available over trials
TRIAL_MEASURES = ("plv", "ppc")
#: at most this many time points per curve (longer spans are thinned evenly)
MAX_POINTS = 1000
#: fewest trials accepted (4 trials allow 9 distinct re-pairings)
MIN_TRIALS = 4
#: spawn-key tag of the trial-locking null's seed (apart from the main null's streams)
SEED_TAG = 7101

CURVE_COLUMNS = ("recording", "signal_a", "signal_b", "ratio", "p", "q", "measure", "time_s", "value",
                 "null_mean", "null_sd", "null_upper", "threshold", "p_value", "p_adjusted", "significant",
                 "stretch")
STRETCH_COLUMNS = ("recording", "signal_a", "signal_b", "ratio", "p", "q", "measure", "stretch", "start_s",
                   "end_s", "peak_s", "peak_value", "mass", "p_value", "significant", "correction", "n_trials",
                   "n_surrogates")


def across_trial_plv(psi: np.ndarray) -> np.ndarray:
    """Across-trial PLV at every time point: ``|mean_k exp(i psi[..., k, t])|``.

    ``psi`` (…, K trials, T) -> (…, T). Lachaux et al. (1999) Hum Brain Mapp 8:194–208, eq. 1.

    Examples
    --------
    >>> psi = np.array([[0.0, 0.0], [np.pi / 2, np.pi]])  # two trials, two time points
    >>> np.round(across_trial_plv(psi), 6).tolist()  # |(1 + i)/2|, |(1 − 1)/2|
    [0.707107, 0.0]
    """
    return plv(psi, axis=-2)


def across_trial_ppc(psi: np.ndarray) -> np.ndarray:
    """Across-trial PPC at every time point: ``(K·PLV² − 1)/(K − 1)`` over the K trials
    (axis −2). Vinck et al. (2010) NeuroImage 51:112–122 (pair-sum identity).

    Examples
    --------
    >>> psi = np.array([[0.0], [np.pi / 2], [np.pi]])  # cos differences: 0, -1, 0 -> mean -1/3
    >>> round(float(across_trial_ppc(psi)[0]), 6)
    -0.333333
    """
    return ppc(psi, axis=-2)


_VALUE = {"plv": across_trial_plv, "ppc": across_trial_ppc}
_CHANCE_SD = {"plv": _rayleigh_sd, "ppc": _ppc_sd}


@dataclass(frozen=True)
class TrialLocking:
    """Result of the event-related locking analysis.

    Attributes
    ----------
    curves : pandas.DataFrame
        One row per pair x ratio x measure x time point (:data:`CURVE_COLUMNS`); ``time_s``
        is relative to the stimulus; ``null_upper`` the pointwise (1 − alpha) quantile of
        the surrogate curves; ``threshold`` the value the curve must exceed (max_stat: the
        family-wise critical value; cluster: the cluster-forming threshold); ``p_adjusted``
        the family-wise p-value (cluster: the p-value of the stretch holding the point,
        1 outside stretches); ``stretch`` the stretch number (-1 none).
    stretches : pandas.DataFrame
        One row per stretch (:data:`STRETCH_COLUMNS`): cluster: every run of
        supra-threshold points; max_stat: every run of significant points.
    params : dict
        stimulus_s, correction, threshold, alpha, n_trials, n_surrogates, seed, ...
    notes : tuple of str
    """

    curves: pd.DataFrame
    stretches: pd.DataFrame
    params: dict = field(default_factory=dict)
    notes: tuple = ()


# ----------------------------------------------------------------------------- input helpers
def cut_trials(signals, fs, stimuli, window):
    """Cut continuous signals into trials around stimulus times.

    Parameters
    ----------
    signals : mapping name -> 1-D array (samples), t = 0 at the first sample
    fs : float, Hz
    stimuli : 1-D array of stimulus times, s
    window : (start_s, end_s) relative to each stimulus, start < 0 <= end typical

    Returns
    -------
    trials : dict name -> (K, n) array; stimulus_s : float (seconds from the start of each
    trial to its stimulus); dropped : int (stimuli whose window leaves the record)
    """
    fs = check_float(fs, "fs", low=0, open_low=True)
    try:
        w0, w1 = (float(v) for v in window)
    except (TypeError, ValueError):
        raise SyncstatsInputError(f"the trial window must be two numbers START,END in seconds; got {window!r}.") from None
    if not (np.isfinite(w0) and np.isfinite(w1) and w1 > w0):
        raise SyncstatsInputError(f"the trial window {w0:g},{w1:g} s must have END after START; e.g. -0.5,2.")
    st = np.asarray(stimuli, dtype=float).ravel()
    if st.size == 0 or not np.all(np.isfinite(st)):
        raise SyncstatsInputError("the stimulus times must be finite numbers in seconds; check the stimulus file.")
    n = int(round((w1 - w0) * fs))
    out, kept = {}, None
    for name, x in signals.items():
        x = np.asarray(x, dtype=float)
        if x.ndim != 1:
            raise SyncstatsInputError(f"signal '{name}' must be one continuous record to cut into trials.")
        starts = np.round((st + w0) * fs).astype(int)
        ok = (starts >= 0) & (starts + n <= x.size)
        kept = ok if kept is None else kept & ok
        out[name] = (x, starts)
    if kept is None or kept.sum() < MIN_TRIALS:
        raise SyncstatsInputError(
            f"only {0 if kept is None else int(kept.sum())} stimuli have their whole trial window "
            f"({w0:g} to {w1:g} s) inside the record; at least {MIN_TRIALS} are needed: check the stimulus times "
            "and the trial window.")
    trials = {name: np.stack([x[s:s + n] for s in starts[kept]]) for name, (x, starts) in out.items()}
    return trials, -w0, int((~kept).sum())


def _check(pipe, stimulus_s, measures, correction, alpha, threshold, n_surrogates):
    k = pipe.inputs.n_trials
    if k < MIN_TRIALS:
        raise SyncstatsInputError(
            f"locking over trials needs at least {MIN_TRIALS} trials (signals of shape trials x samples); got {k}.")
    stimulus_s = check_float(stimulus_s, "stimulus_s (--trial-window)", hint="seconds from the start of each trial")
    dur = pipe.inputs.t[-1] - pipe.inputs.t[0] + 1.0 / pipe.inputs.fs
    if not 0 <= stimulus_s <= dur:
        raise SyncstatsInputError(
            f"stimulus_s={stimulus_s:g} s lies outside the trials (0 to {dur:g} s); give the stimulus time in seconds "
            "from the start of each trial.")
    if isinstance(measures, str):
        measures = (measures,)
    bad = [m for m in measures if m not in TRIAL_MEASURES]
    if bad or not measures:
        raise SyncstatsInputError(f"measure {bad[0] if bad else '(none)'!r} cannot be followed over trials; use any of "
                                  f"{', '.join(TRIAL_MEASURES)}.")
    if correction not in TRIAL_CORRECTIONS:
        raise SyncstatsInputError(f"trial correction {correction!r} is not known; use one of "
                                  f"{', '.join(TRIAL_CORRECTIONS)} (--trial-correction).")
    alpha = check_float(alpha, "alpha", low=0, high=1, open_low=True, open_high=True)
    threshold = check_float(threshold, "trial threshold (--trial-threshold)", low=0, high=1, open_low=True,
                            open_high=True)
    n_surrogates = check_int(n_surrogates, "n_surrogates (--n-surrogates)", low=0)
    return float(stimulus_s), tuple(dict.fromkeys(measures)), alpha, threshold, n_surrogates


# ----------------------------------------------------------------------------- the computation
def _curves(ph, specs, idx):
    """(…, C, n) curves for specs (a, b, p, q, measure) from phases name -> (…, K, N)."""
    psis, out = {}, []
    for a, b, p, q, m in specs:
        key = (a, b, p, q)
        if key not in psis:
            psis[key] = q * ph[a][..., idx] - p * ph[b][..., idx]
        out.append(_VALUE[m](psis[key]))
    return np.stack(out, axis=-2)


@dataclass
class _CurveJob:
    """One batch of trial-shuffled surrogates -> their curves (picklable)."""

    null: object  # inference.NullJob
    specs: tuple
    idx: np.ndarray

    def __call__(self, bounds):
        return _curves(self.null.phases(*bounds), self.specs, self.idx)


def _runs(mask):
    """(start, stop) of every run of True in a 1-D bool array."""
    d = np.diff(np.concatenate([[0], mask.astype(np.int8), [0]]))
    return list(zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1)))


def _max_mass(z, supra):
    """Largest run mass (sum of z over a run of supra) of each row; 0 without a run."""
    out = np.zeros(z.shape[0])
    for i in range(z.shape[0]):
        for s, e in _runs(supra[i]):
            out[i] = max(out[i], float(z[i, s:e].sum()))
    return out


def _test_curve(obs, null, *, measure, n_trials, correction, alpha, threshold):
    """Pointwise and family-wise statistics of one curve; obs (n,), null (S, n)."""
    s = null.shape[0]
    pooled = np.concatenate([obs[None], null], axis=0)
    mean = pooled.mean(axis=0)
    sd = np.maximum(pooled.std(axis=0, ddof=1), float(_CHANCE_SD[measure](n_trials)))
    z = (pooled - mean) / sd
    p_point = (1.0 + np.sum(null >= obs - 1e-12, axis=0)) / (1.0 + s)
    out = dict(null_mean=null.mean(axis=0), null_sd=null.std(axis=0, ddof=1) if s > 1 else np.full(obs.shape, np.nan),
               null_upper=np.quantile(null, 1 - alpha, axis=0), p_value=p_point)
    stretches = []
    if correction == "max_stat":
        maxz = np.sort(z[1:].max(axis=1))[::-1]
        p_adj = (1.0 + np.sum(maxz[:, None] >= z[0][None, :] - 1e-12, axis=0)) / (1.0 + s)
        # most surrogate maxima a significant point may tie or exceed, by the same comparison as p_adj < alpha
        kmax = int(np.sum((1.0 + np.arange(s)) / (1.0 + s) < alpha)) - 1
        zc = maxz[kmax] if 0 <= kmax < s else np.inf
        out["threshold"] = mean + sd * zc
        sig = p_adj < alpha
        for a, b in _runs(sig):
            stretches.append((a, b, float(z[0, a:b].sum()), float(p_adj[a:b].min()), True))
    else:
        thr = np.quantile(pooled, 1 - threshold, axis=0)
        out["threshold"] = thr
        supra = pooled > thr
        maxmass = _max_mass(z[1:], supra[1:])
        p_adj = np.ones_like(obs)
        sig = np.zeros(obs.shape, bool)
        for a, b in _runs(supra[0]):
            mass = float(z[0, a:b].sum())
            pc = (1.0 + np.sum(maxmass >= mass - 1e-12)) / (1.0 + s)
            p_adj[a:b] = pc
            sig[a:b] = pc < alpha
            stretches.append((a, b, mass, pc, bool(pc < alpha)))
    out["p_adjusted"], out["significant"] = p_adj, sig
    return out, stretches


def trial_locking_on(pipe, pairs_ratios, *, stimulus_s=0.0, measures=TRIAL_MEASURES, n_surrogates=999,
                     correction="cluster", alpha=0.05, threshold=0.05, seed=None, batch_size=None,
                     memory_mb=256.0, executor=None, n_jobs=None, recording="") -> TrialLocking:
    """Event-related locking on a pipeline already fixed on trial data.

    ``pairs_ratios`` maps (a, b) -> list of (p, q). ``seed`` is the run's SeedSequence (or
    anything :func:`syncstats._rng.as_seed_sequence` takes); the null draws from its
    child ``spawn_key + (SEED_TAG,)`` so that it never reuses the main null's streams.
    See :func:`locking_over_trials` for the other parameters.
    """
    from .inference._nulls import NullJob, batch_for_budget
    from .run import batch_bounds, map_batches

    stimulus_s, measures, alpha, threshold, n_surrogates = _check(pipe, stimulus_s, measures, correction, alpha,
                                                                  threshold, n_surrogates)
    seq = as_seed_sequence(seed)
    sub = np.random.SeedSequence(seq.entropy, spawn_key=tuple(seq.spawn_key) + (SEED_TAG,))
    k = pipe.inputs.n_trials
    n = pipe.span_n
    idx = np.arange(0, n, max(1, -(-n // MAX_POINTS)))
    t_rel = pipe.time_s[idx] - pipe.inputs.t[0] - stimulus_s
    specs = tuple((a, b, p, q, m) for (a, b), rl in pairs_ratios.items() for p, q in rl for m in measures)
    obs = _curves(pipe.data, specs, idx)  # (C, n)
    null = None
    notes = [f"locking over trials: {k} trials, times relative to the stimulus at {stimulus_s:g} s into each trial; "
             f"{len(idx)} time points per curve" + (f" (every {idx[1] - idx[0]}th sample)" if len(idx) > 1 and
                                                     idx[1] - idx[0] > 1 else "")]
    if n_surrogates:
        job = _CurveJob(NullJob(pipe, None, "trial_shuffle", sub), specs, idx)
        size = batch_for_budget(pipe, memory_mb) if memory_mb is not None else n_surrogates
        if batch_size is not None:
            size = min(size, int(batch_size))
        parts = map_batches(job, batch_bounds(n_surrogates, max(1, size)), executor=executor, n_jobs=n_jobs)
        null = np.concatenate([np.reshape(x, (-1,) + obs.shape) for x in parts], axis=0)  # (S, C, n)
        if 1.0 / (1 + n_surrogates) >= alpha:
            notes.append(f"locking over trials: {n_surrogates} surrogates cannot give p < {alpha:g} (the smallest "
                         f"p is 1/{n_surrogates + 1}); draw at least {math.ceil(1 / alpha)} surrogates")
        distinct = math.floor(math.factorial(k) / math.e + 0.5) if k < 15 else float("inf")
        if distinct < n_surrogates + 1:
            notes.append(f"locking over trials: only {distinct} distinct trial re-pairings exist for {k} trials, "
                         "so the surrogate curves repeat; record more trials")
    curve_rows, stretch_rows = [], []
    for c, (a, b, p, q, m) in enumerate(specs):
        base = {"recording": recording, "signal_a": a, "signal_b": b, "ratio": f"{p}:{q}", "p": p, "q": q,
                "measure": m}
        if null is not None:
            st, found = _test_curve(obs[c], null[:, c], measure=m, n_trials=k, correction=correction, alpha=alpha,
                                    threshold=threshold)
        else:
            nan = np.full(obs.shape[1], np.nan)
            st = dict(null_mean=nan, null_sd=nan, null_upper=nan, threshold=nan, p_value=nan, p_adjusted=nan,
                      significant=np.zeros(obs.shape[1], bool))
            found = []
        label = np.full(obs.shape[1], -1)
        for j, (s0, s1, mass, pc, sig) in enumerate(found):
            label[s0:s1] = j
            pk = s0 + int(np.argmax(obs[c, s0:s1]))
            stretch_rows.append({**base, "stretch": j, "start_s": float(t_rel[s0]),
                                 "end_s": float(t_rel[s1 - 1]), "peak_s": float(t_rel[pk]),
                                 "peak_value": float(obs[c, pk]), "mass": mass, "p_value": pc, "significant": sig,
                                 "correction": correction, "n_trials": k, "n_surrogates": n_surrogates})
        curve_rows.append(pd.DataFrame({**base, "time_s": t_rel, "value": obs[c], **{
            key: st[key] for key in ("null_mean", "null_sd", "null_upper", "threshold", "p_value", "p_adjusted")},
            "significant": pd.array(st["significant"], dtype="boolean") if null is not None
            else pd.array([pd.NA] * obs.shape[1], dtype="boolean"), "stretch": label}))
    curves = pd.concat(curve_rows, ignore_index=True)[list(CURVE_COLUMNS)]
    stretches = pd.DataFrame(stretch_rows, columns=list(STRETCH_COLUMNS))
    params = {"stimulus_s": stimulus_s, "measures": list(measures), "correction": correction,
              "threshold": threshold, "alpha": alpha, "n_trials": k, "n_surrogates": n_surrogates,
              "surrogate": "trial_shuffle", "family": "the time points of one curve (pair x ratio x measure)",
              "seed_entropy": str(seq.entropy), "seed_spawn_key": list(sub.spawn_key)}
    return TrialLocking(curves, stretches, params, tuple(notes))


def locking_over_trials(signals, fs=None, *, stimulus_s=0.0, pairs=None, ratios=None, measures=TRIAL_MEASURES,
                        n_surrogates=999, correction="cluster", alpha=0.05, threshold=0.05, rng=None, bands="auto",
                        phase_method="hilbert", edge_s=None, decimate=True, batch_size=None, memory_mb=256.0,
                        executor=None, n_jobs=None, phases=None, recording=None) -> TrialLocking:
    """Across-trial PLV and PPC over time relative to a stimulus, with a trial-shuffle test.

    Parameters
    ----------
    signals : mapping name -> (trials, samples) array (or a DataFrame / Recording as for
        :func:`syncstats.analyze`; every signal must hold the same trials)
    fs : float, Hz
    stimulus_s : float, default 0
        Seconds from the start of each trial to its stimulus; output times are relative to it.
    pairs, ratios : as for :func:`syncstats.analyze` (ratio "auto" scans near the frequencies)
    measures : any of "plv", "ppc" (default both)
    n_surrogates : int, default 999
        Trial-shuffled surrogates (0: curves only).
    correction : "cluster" (default) or "max_stat" — over the time points of each curve
    alpha : float, default 0.05
    threshold : float, default 0.05
        Cluster-forming level: points above the pointwise (1 − threshold) quantile of the
        pooled curves (cluster correction only).
    rng : int, Generator or None — seeds every draw
    bands, phase_method, edge_s, decimate : the phase pipeline, as for ``analyze``
    batch_size, memory_mb, executor, n_jobs : how surrogates are computed (never changes results)

    Returns
    -------
    TrialLocking

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(0)
    >>> t = np.arange(0, 2, 0.01)
    >>> start = rng.uniform(0, 2 * np.pi, (8, 1))  # a random phase in each of 8 trials
    >>> x = {"a": np.sin(2 * np.pi * 5 * t + start), "b": np.sin(2 * np.pi * 5 * t + start - 0.9)}
    >>> res = locking_over_trials(x, fs=100, n_surrogates=0, bands=(3, 7))
    >>> bool(res.curves["value"].median() > 0.99)   # a fixed lag: locked in every trial
    True
    """
    from . import inference as inf
    from ._inputs import collect_inputs
    from .pipeline import Pipeline

    inputs = collect_inputs(signals, fs, None, phases, recording)
    pipe = Pipeline.fix(inputs, bands=bands, phase_method=phase_method, edge_s=edge_s, decimate=decimate)
    design = inf.make_design(pipe, pairs=pairs, ratios=ratios, measures=("plv",))
    return trial_locking_on(pipe, design.ratios, stimulus_s=stimulus_s, measures=measures, n_surrogates=n_surrogates,
                            correction=correction, alpha=alpha, threshold=threshold, seed=rng, batch_size=batch_size,
                            memory_mb=memory_mb, executor=executor, n_jobs=n_jobs, recording=inputs.recording)
