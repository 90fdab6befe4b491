"""Synchronization clusters in a group of rhythms.

Synchronization cluster analysis (Allefeld & Kurths 2004): the N x N matrix R of pairwise
1:1 phase-locking values (diagonal 1) is symmetric and positive semi-definite with trace N.
Its eigen-decomposition R = Σ_k λ_k v_k v_kᵀ describes the group: a set of m rhythms that
lock together raises one eigenvalue towards m, independent rhythms leave every eigenvalue
near 1. Component k is a cluster candidate when λ_k > 1; rhythm i's participation index in
component k is P_ik = λ_k v_ik² (so Σ_k P_ik = R_ii = 1), and each rhythm is assigned to
the component in which it participates most (these formulas are written from memory of
Allefeld & Kurths 2004; the tests check them against a direct numpy eigen-decomposition
and the closed-form identities above).

Clusters of similar strength: when two clusters give nearly equal eigenvalues, the tiny
chance locking between them mixes their eigenvectors (perturbation of a near-degenerate
pair), and every rhythm then participates about equally in both (seen on two simulated
clusters of three: participations 0.55/0.43 everywhere). The c candidate components
(eigenvalues above 1) are therefore varimax-rotated (Kaiser 1958; ``statsmodels`` ``rotate_factors``)
as loadings ``L = V_c Λ_c^{1/2}``: the rotation keeps each rhythm's total participation
in the c clusters (row sums of L²) and the total strength, and makes each cluster's
loadings concentrate on its own rhythms. The participation index of rhythm i in cluster
k is then ``L'_ik²``, and the cluster's strength is ``Σ_i L'_ik²`` (= λ_k without rotation).

Surrogate test of cluster strength (our construction, in the spirit of Allefeld, Müller &
Kurths 2007, who compare the eigenvalues with their distribution under independence): the
whole analysis is repeated on surrogates of the run's null (every rhythm randomised by the
pipeline-faithful null machinery, child stream per surrogate, in batches), and each
cluster's strength s_k is compared with the *largest* strength of every surrogate matrix
(the same decomposition and rotation applied to it): p_k = (1 + #{s_max,s >= s_k}) / (1 + S),
a max-statistic over components, so the family-wise error of declaring any cluster under
independence is alpha (the data's largest strength is exchangeable with the surrogates').
A component is a cluster when s_k > 1 and p_k < alpha. (Comparing the rotated strengths
with the surrogates' largest *eigenvalue* instead was conservative: 0.0125 at R = 400.)
The univariate phase-randomising nulls (fourier, aaft, iaaft) are replaced by the time
shift for this test (:func:`cluster_null`): with them it rejected independent rhythms too
often (iaaft 0.157 at alpha 0.05, time shift 0.047).

The group's Kuramoto order parameter r(t) = |mean_j exp(i phi_j(t))| is reported over time
(mean over trials, averaged in blocks of one mean cycle of the slowest rhythm) with a
pointwise null band (alpha/2 and 1 − alpha/2 quantiles of the surrogates' curves).
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np
import pandas as pd

from ._checks import check_float, check_int
from ._errors import SyncstatsInputError
from ._rng import as_seed_sequence

__all__ = ["GroupClusters", "plv_matrix", "cluster_decomposition", "rotated_participation", "group_clusters", "clusters_on",
           "cluster_null",
           "PARTICIPATION_COLUMNS", "COMPONENT_COLUMNS", "ORDER_COLUMNS"]

CITATIONS = (
    "Allefeld C, Kurths J (2004). An approach to multivariate phase synchronization analysis and its application to "
    "event-related potentials. Int J Bifurcat Chaos 14:417–426.",
    "Allefeld C, Müller M, Kurths J (2007). Eigenvalue decomposition as a generalized synchronization cluster "
    "analysis. Int J Bifurcat Chaos 17:3493–3497.",
    "Kaiser HF (1958). The varimax criterion for analytic rotation in factor analysis. Psychometrika 23:187–200.",
)
#: spawn-key tag of the cluster null's seed (apart from the main null's streams)
SEED_TAG = 7102
#: phase-randomising nulls: the cluster test was not calibrated with them (see the notes)
_FOURIER_FAMILY = ("fourier", "aaft", "iaaft", "multivariate_fourier")
#: the cluster test's false-positive rates with iaaft and with the time shift (:func:`cluster_null`)
MEASURED = "0.157 at alpha 0.05 on six independent noisy phase oscillators, 60 s, R = 300; time_shift 0.047"
#: at most this many points of the order-parameter curve
MAX_POINTS = 1000

PARTICIPATION_COLUMNS = ("recording", "signal", "component", "eigenvalue", "strength", "participation", "assigned",
                         "component_significant")
COMPONENT_COLUMNS = ("recording", "component", "eigenvalue", "strength", "members", "n_members", "mean_plv_within",
                     "null_mean", "null_upper", "p_value", "significant", "surrogate", "n_surrogates")
ORDER_COLUMNS = ("recording", "time_s", "order_parameter", "null_mean", "null_low", "null_high")


def plv_matrix(phases: np.ndarray) -> np.ndarray:
    """Pairwise 1:1 PLV matrix of N rhythms: (…, N, T) phases -> (…, N, N), diagonal 1.

    ``R_ij = |mean_t exp(i (phi_i(t) − phi_j(t)))|`` (Mormann et al. 2000; the matrix of
    Allefeld & Kurths 2004).

    Examples
    --------
    >>> ph = np.array([[0.0, 1.0, 2.0], [0.5, 1.5, 2.5], [0.0, 0.0, 0.0]])
    >>> np.round(plv_matrix(ph), 3).tolist()[0]  # |1 + e^i + e^2i| / 3 = sin(1.5) / (3 sin(0.5))
    [1.0, 1.0, 0.694]
    """
    z = np.exp(1j * np.asarray(phases, dtype=float))
    r = np.abs(z @ np.swapaxes(z.conj(), -1, -2)) / z.shape[-1]
    idx = np.arange(r.shape[-1])
    r[..., idx, idx] = 1.0
    return r


def cluster_decomposition(r: np.ndarray):
    """Eigenvalues (descending), eigenvectors (columns) and participation indices of R.

    Returns ``(lam (N,), vec (N, N), part (N, N))`` with ``part[i, k] = lam[k] * vec[i, k]**2``
    (rhythm i in component k; rows sum to R_ii = 1). Eigenvector signs are fixed so that
    the largest-magnitude entry of each is positive.

    Examples
    --------
    >>> lam, vec, part = cluster_decomposition(np.array([[1.0, 0.8], [0.8, 1.0]]))
    >>> np.round(lam, 6).tolist(), np.round(part[:, 0], 6).tolist()
    ([1.8, 0.2], [0.9, 0.9])
    """
    r = np.asarray(r, dtype=float)
    if r.ndim != 2 or r.shape[0] != r.shape[1] or not np.allclose(r, r.T) or not np.all(np.isfinite(r)):
        raise SyncstatsInputError("the locking matrix must be a finite symmetric square matrix (rhythms x rhythms).")
    lam, vec = np.linalg.eigh(r)
    lam, vec = lam[::-1], vec[:, ::-1]
    sign = np.sign(vec[np.argmax(np.abs(vec), axis=0), np.arange(vec.shape[1])])
    vec = vec * np.where(sign == 0, 1.0, sign)
    return lam, vec, lam[None, :] * vec**2


def rotated_participation(lam, vec, n_clusters: int):
    """Participation indices with the first ``n_clusters`` components varimax-rotated.

    ``lam`` (N,) descending and ``vec`` (N, N) from :func:`cluster_decomposition`. Returns
    ``part`` (N, N): columns ``< n_clusters`` hold ``L'_ik²`` of the rotated loadings
    ``L' = varimax(V_c Λ_c^{1/2})`` ordered by strength (column sum), the other columns
    ``λ_k v_ik²`` unchanged. Row sums stay 1 (= R_ii).

    Examples
    --------
    >>> r = np.array([[1, .9, .05, .05], [.9, 1, .05, .05], [.05, .05, 1, .9], [.05, .05, .9, 1]])
    >>> lam, vec, _ = cluster_decomposition(r)
    >>> np.round(rotated_participation(lam, vec, 2)[:, :2], 2).tolist()
    [[0.95, 0.0], [0.95, 0.0], [0.0, 0.95], [0.0, 0.95]]
    """
    lam, vec = np.asarray(lam, dtype=float), np.asarray(vec, dtype=float)
    part = np.clip(lam, 0, None)[None, :] * vec**2
    c = int(n_clusters)
    if c >= 2:
        from statsmodels.multivariate.factor_rotation import rotate_factors

        loads0 = vec[:, :c] * np.sqrt(np.clip(lam[:c], 0, None))
        best, crit = None, -np.inf
        for t0 in _starting_rotations(c):  # the unrotated loadings can be a stationary point
            loads, _ = rotate_factors(loads0 @ t0, "varimax")
            sq = loads**2
            v = float(np.sum(np.var(sq, axis=0)))  # the raw varimax criterion
            if v > crit + 1e-12:
                best, crit = sq, v
        part[:, :c] = best[:, np.argsort(-best.sum(axis=0), kind="stable")]
    return part


def _starting_rotations(c):
    """Deterministic starts for varimax: the identity and a 45° turn in each plane (i, j).

    Varimax climbs from its start; loadings whose squared columns are each constant (two
    equally strong clusters seen through the uniform and the contrast eigenvector) are a
    stationary point of the criterion, and a start at the identity would stay there.
    """
    out = [np.eye(c)]
    for i in range(c):
        for j in range(i + 1, c):
            g = np.eye(c)
            g[i, i] = g[j, j] = g[i, j] = np.sqrt(0.5)
            g[j, i] = -np.sqrt(0.5)
            out.append(g)
    return out


@dataclass(frozen=True)
class GroupClusters:
    """Result of the synchronization cluster analysis.

    Attributes
    ----------
    matrix : pandas.DataFrame
        The pairwise 1:1 PLV matrix (index and columns: rhythm names, input order).
    participation : pandas.DataFrame
        One row per rhythm x component (:data:`PARTICIPATION_COLUMNS`); ``assigned`` marks
        the component the rhythm participates in most, when that component is a cluster.
    components : pandas.DataFrame
        One row per component (:data:`COMPONENT_COLUMNS`), eigenvalues descending;
        ``null_mean``/``null_upper``: mean and (1 − alpha) quantile of the surrogates'
        largest strength.
    order : pandas.DataFrame
        The group's order parameter over time with its pointwise null band (:data:`ORDER_COLUMNS`).
    params : dict
    notes : tuple of str
    """

    matrix: pd.DataFrame
    participation: pd.DataFrame
    components: pd.DataFrame
    order: pd.DataFrame
    params: dict = field(default_factory=dict)
    notes: tuple = ()

    @property
    def clusters(self) -> list:
        """Member lists of the significant clusters, strongest first."""
        c = self.components
        return [m.split(";") for m in c.loc[c["significant"].fillna(False).astype(bool), "members"] if m]


def _stack(ph, names):
    """name -> (…, K, n) phases -> (…, N, K·n) stacked for the matrix."""
    x = np.stack([ph[n] for n in names], axis=-3)
    return x.reshape(x.shape[:-2] + (x.shape[-2] * x.shape[-1],))


def _order_curve(ph, names, block):
    """Order parameter over time: mean over trials, then block means: (…, n_blocks)."""
    x = np.stack([ph[n] for n in names], axis=-3)  # (…, N, K, n)
    r = np.abs(np.mean(np.exp(1j * x), axis=-3)).mean(axis=-2)  # (…, n)
    nb = r.shape[-1] // block
    return r[..., : nb * block].reshape(r.shape[:-1] + (nb, block)).mean(axis=-1)


@dataclass
class _ClusterJob:
    """One batch of surrogates -> (eigenvalues (b, N), order curves (b, n_blocks))."""

    null: object  # inference.NullJob
    names: tuple
    block: int

    def __call__(self, bounds):
        ph = self.null.phases(*bounds)
        top = [_strengths(plv_matrix(m)).max() for m in _stack(ph, self.names)]
        return np.concatenate([np.asarray(top)[:, None], _order_curve(ph, self.names, self.block)], axis=-1)


def _strengths(r):
    """Cluster strengths of one matrix: column sums of the rotated participation, and what is
    needed to report them: (strength (N,), lam, vec, part)."""
    lam, vec, _ = cluster_decomposition(r)
    part = rotated_participation(lam, vec, int(np.sum(lam > 1.0)))  # candidates: eigenvalues above 1
    return part.sum(axis=0)


def cluster_null(surrogate, pipe, design, n_surrogates, *, min_shift_s=None, options=None):
    """The null the cluster test runs with: ``(method, options, notes)``; fourier, aaft and
    iaaft become time_shift (:func:`syncstats.inference.shift_in_place`)."""
    from . import inference as inf

    return inf.shift_in_place(surrogate, pipe, design, n_surrogates, min_shift_s=min_shift_s, options=options,
                              what="clusters", measured=MEASURED)


def clusters_on(pipe, *, surrogate="iaaft", n_surrogates=999, alpha=0.05, seed=None, options=None,
                stride=None, batch_size=None, memory_mb=256.0, executor=None, n_jobs=None,
                recording="") -> GroupClusters:
    """Synchronization cluster analysis on a pipeline already fixed on the data.

    ``surrogate`` names the null (a :data:`syncstats.nulls.SURROGATE_METHODS` entry; its
    ``options`` as :func:`syncstats.inference.method_options` returns them); ``stride`` is
    samples per mean cycle of the slowest rhythm (block of the order-parameter curve).
    The null draws from child ``spawn_key + (SEED_TAG,)`` of ``seed``.
    """
    from .inference._nulls import NullJob, batch_for_budget
    from .run import batch_bounds, map_batches

    names = tuple(pipe.names)
    if len(names) < 3:
        raise SyncstatsInputError(f"cluster analysis needs at least 3 rhythms; got {len(names)} "
                                  f"({', '.join(names)}).")
    alpha = check_float(alpha, "alpha", low=0, high=1, open_low=True, open_high=True)
    n_surrogates = check_int(n_surrogates, "n_surrogates (--n-surrogates)", low=0)
    seq = as_seed_sequence(seed)
    sub = np.random.SeedSequence(seq.entropy, spawn_key=tuple(seq.spawn_key) + (SEED_TAG,))
    n = pipe.span_n
    block = max(1, int(stride or 1), -(-n // MAX_POINTS))
    r = plv_matrix(_stack(pipe.data, names))
    lam, vec, _ = cluster_decomposition(r)
    part = rotated_participation(lam, vec, int(np.sum(lam > 1.0)))  # candidates: eigenvalues above 1
    strength = part.sum(axis=0)  # = _strengths(r), the statistic computed the same way on every surrogate
    curve = _order_curve(pipe.data, names, block)
    nb = curve.shape[-1]
    t0 = pipe.time_s[: nb * block].reshape(nb, block).mean(axis=1)
    notes = [f"cluster analysis of {len(names)} rhythms (1:1 PLV matrix, eigen-decomposition, candidates varimax-"
             "rotated)"]
    if n_surrogates:
        job = _ClusterJob(NullJob(pipe, None, surrogate, sub, dict(options or {})), names, block)
        size = batch_for_budget(pipe, memory_mb) if memory_mb is not None else n_surrogates
        if batch_size is not None:
            size = min(size, int(batch_size))
        parts = map_batches(job, batch_bounds(n_surrogates, max(1, size)), executor=executor, n_jobs=n_jobs)
        null = np.concatenate([np.reshape(x, (-1, 1 + nb)) for x in parts], axis=0)
        top, curve_null = null[:, 0], null[:, 1:]
        # each strength against the surrogates' largest strength: a max-statistic over components
        p = (1.0 + np.sum(top[None, :] >= strength[:, None] - 1e-12, axis=1)) / (1.0 + n_surrogates)
        sig = (p < alpha) & (strength > 1.0)
        null_mean, null_upper = float(top.mean()), float(np.quantile(top, 1 - alpha))
        if surrogate in _FOURIER_FAMILY:
            notes.append(f"clusters: with phase-randomising surrogates the cluster test exceeded its level on "
                         "simulated phase oscillators (iaaft: false-positive rate 0.157 at alpha 0.05, 300 runs; "
                         f"{surrogate} not calibrated); prefer time_shift (or trial_shuffle for trials)")
        if 1.0 / (1 + n_surrogates) >= alpha:
            notes.append(f"clusters: {n_surrogates} surrogates cannot give p < {alpha:g} (the smallest p is "
                         f"1/{n_surrogates + 1}); draw more surrogates")
        band = (curve_null.mean(axis=0), np.quantile(curve_null, alpha / 2, axis=0),
                np.quantile(curve_null, 1 - alpha / 2, axis=0))
    else:
        p = np.full(lam.shape, np.nan)
        sig = np.zeros(lam.shape, bool)
        null_mean = null_upper = float("nan")
        band = (np.full(nb, np.nan),) * 3
    best = np.argmax(part, axis=1)
    assigned = np.zeros(part.shape, bool)
    assigned[np.arange(len(names)), best] = sig[best]
    rows = [{"recording": recording, "signal": names[i], "component": k + 1, "eigenvalue": float(lam[k]),
             "strength": float(strength[k]), "participation": float(part[i, k]), "assigned": bool(assigned[i, k]),
             "component_significant": bool(sig[k]) if n_surrogates else pd.NA}
            for i in range(len(names)) for k in range(len(names))]
    participation = pd.DataFrame(rows, columns=list(PARTICIPATION_COLUMNS))
    participation["component_significant"] = participation["component_significant"].astype("boolean")
    comp = []
    for k in range(len(names)):
        mem = [i for i in np.argsort(-part[:, k], kind="stable") if best[i] == k]
        sub_r = r[np.ix_(mem, mem)]
        within = float((sub_r.sum() - len(mem)) / (len(mem) * (len(mem) - 1))) if len(mem) > 1 else float("nan")
        comp.append({"recording": recording, "component": k + 1, "eigenvalue": float(lam[k]),
                     "strength": float(strength[k]),
                     "members": ";".join(names[i] for i in mem), "n_members": len(mem), "mean_plv_within": within,
                     "null_mean": null_mean, "null_upper": null_upper, "p_value": float(p[k]),
                     "significant": bool(sig[k]) if n_surrogates else pd.NA,
                     "surrogate": surrogate if n_surrogates else "", "n_surrogates": n_surrogates})
    components = pd.DataFrame(comp, columns=list(COMPONENT_COLUMNS))
    components["significant"] = components["significant"].astype("boolean")
    order = pd.DataFrame({"recording": recording, "time_s": t0, "order_parameter": curve, "null_mean": band[0],
                          "null_low": band[1], "null_high": band[2]}, columns=list(ORDER_COLUMNS))
    if n_surrogates:
        notes.append(f"clusters: {int(sig.sum())} of {len(names)} components exceed 1 and the surrogates' largest "
                     f"strength (p < {alpha:g}, max-statistic over components, {n_surrogates} {surrogate} "
                     "surrogates)")
    params = {"surrogate": surrogate, "n_surrogates": n_surrogates, "alpha": alpha, "block_samples": block,
              "seed_entropy": str(seq.entropy), "seed_spawn_key": list(sub.spawn_key)}
    return GroupClusters(pd.DataFrame(r, index=list(names), columns=list(names)), participation, components, order,
                         params, tuple(notes))


def group_clusters(signals, fs=None, *, surrogate="time_shift", n_surrogates=999, alpha=0.05, rng=None, events=None,
                   phases=None, bands="auto", phase_method="hilbert", edge_s=None, decimate=True, min_shift_s=None,
                   batch_size=None, memory_mb=256.0, executor=None, n_jobs=None, recording=None) -> GroupClusters:
    """Synchronization clusters of a group of rhythms with a surrogate test.

    Parameters
    ----------
    signals, fs, events, phases : as for :func:`syncstats.analyze` (at least 3 rhythms)
    surrogate : str, default "time_shift"
        Null method (any of ``syncstats.nulls.SURROGATE_METHODS``; it randomises every
        rhythm, or every rhythm but the first). fourier, aaft and iaaft are replaced by
        time_shift (:func:`cluster_null`; the run's notes say so).
    n_surrogates : int, default 999 (0: decomposition only)
    alpha : float, default 0.05
    rng : int, Generator or None — seeds every draw
    bands, phase_method, edge_s, decimate, min_shift_s : the phase pipeline and the
        time-shift option, as for ``analyze``
    batch_size, memory_mb, executor, n_jobs : how surrogates are computed (never changes results)

    Returns
    -------
    GroupClusters

    Examples
    --------
    >>> t = np.arange(0, 60, 0.05)
    >>> x = {n: np.sin(2 * np.pi * f * t + o) for n, f, o in
    ...      [("a", 1.0, 0), ("b", 1.0, 1), ("c", 1.6, 0), ("d", 1.6, 2)]}
    >>> res = group_clusters(x, fs=20, n_surrogates=0)
    >>> sorted(sorted(m.split(";")) for m in res.components["members"][:2])
    [['a', 'b'], ['c', 'd']]
    """
    from . import inference as inf
    from ._inputs import collect_inputs
    from .nulls import SURROGATE_METHODS
    from .pipeline import Pipeline

    if surrogate not in SURROGATE_METHODS:
        raise SyncstatsInputError(f"surrogate {surrogate!r} is not known; use one of {', '.join(SURROGATE_METHODS)}.")
    inputs = collect_inputs(signals, fs, events, phases, recording)
    pipe = Pipeline.fix(inputs, bands=bands, phase_method=phase_method, edge_s=edge_s, decimate=decimate)
    design = inf.make_design(pipe, measures=("plv",))
    options = {}
    if n_surrogates:
        inf.check_method(surrogate, inputs, design.pairs)
        options, _, _ = inf.method_options(surrogate, pipe, design, n_surrogates, min_shift_s, all_shifts=False)
    method, options, notes = cluster_null(surrogate, pipe, design, n_surrogates, min_shift_s=min_shift_s,
                                          options=options)
    res = clusters_on(pipe, surrogate=method, n_surrogates=n_surrogates, alpha=alpha, seed=rng, options=options,
                      stride=design.slowest_stride, batch_size=batch_size, memory_mb=memory_mb, executor=executor,
                      n_jobs=n_jobs, recording=inputs.recording)
    return with_notes(res, notes)


def with_notes(res: GroupClusters, notes) -> GroupClusters:
    """``res`` with ``notes`` put before its own (a frozen result: a new object)."""
    return replace(res, notes=tuple(notes) + res.notes) if notes else res
