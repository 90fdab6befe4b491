"""``syncstats.analyze``: the whole job on signals, events or phases held in memory.

This module only orchestrates named stages, each returning a small frozen object:
checked options (:mod:`syncstats._options`) -> collected inputs (:mod:`syncstats._inputs`)
-> the pipeline fixed on the data (:class:`syncstats.pipeline.Pipeline`) -> the design
of the searched family -> the null distribution -> the family test -> intervals
(:mod:`syncstats.inference`) -> the table (:func:`syncstats.results.build_table`).
"""
from __future__ import annotations

import datetime as _dt
from dataclasses import replace

import numpy as np
import pandas as pd

from . import inference as inf
from ._errors import SyncstatsInputError, warn
from ._inputs import collect_inputs
from ._options import check_options
from .epochs import check_epoch_options, combine_epochs, run_epochs
from ._views import rhythm_diagnostics, rhythm_views
from .nulls import LEVEL_NOTES, SURROGATE_METHODS
from .pipeline import Pipeline
from .results import ResultData, build_table, finalize_table

__all__ = ["analyze", "AnalysisResult", "combine_results"]


class AnalysisResult(ResultData):
    """The result of :func:`analyze` (see :class:`syncstats.results.ResultData`)."""

    def save(self, out_dir, *, overwrite: bool = False, record_paths: bool | None = None):
        """Write ``results.csv``, ``report.html``, ``methods.md`` and ``provenance.json``
        to ``out_dir`` atomically (a failed write leaves no partial folder).
        ``record_paths``: also record absolute input paths and the Python location in
        provenance.json (by default only the paths as given and content hashes)."""
        from .report import save_result

        return save_result(self, out_dir, overwrite=overwrite, record_paths=record_paths)


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
    batch_size=None,
    decimate=True,
    spectral_filter=False,
    memory_mb=256.0,
    all_shifts=None,
    executor=None,
    n_jobs=None,
    recording=None,
    group_label="group",
    progress=None,
    epochs=None,
    trial_locking=False,
    stimulus_s=0.0,
    trial_correction="cluster",
    trial_threshold=0.05,
    clusters=False,
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
        Smallest circular shift for ``time_shift``. Default: one sample — every shift of
        the circle but the identity, so the shifts form a group and the test is an exact
        permutation test (excluding shifts near the observed alignment inflated the
        false-positive rate on slowly varying rhythms). The notes report how many shifts
        are effectively independent (from the correlation length of the shift curve).
    all_shifts : bool, optional
        ``time_shift`` over every admissible shift (an exact permutation test, one FFT per
        pair and ratio) instead of ``n_surrogates`` random shifts. Default: used wherever
        it applies (two rhythms, whole-record PLV rows).
    ci_level, ci_method, n_bootstrap
        Confidence interval of each value by a bootstrap over whole cycles ("percentile",
        "bca" or "basic"; 0 resamples skips the intervals).
    batch_size : int, optional
        Surrogates per batch (memory O(batch_size x N)); default: as many as fit in
        ``memory_mb``. Does not change results.
    decimate : bool or int, default True
        Analyse on a common grid at least 10 times the highest frequency any rhythm
        needs (zero-phase anti-alias filter, integer factor; an int forces the factor),
        for data and surrogates alike; the analysis rate is stated in the notes and
        params. False keeps the recorded rate.
    spectral_filter : bool, default False
        Band-pass and analytic signal in the frequency domain (one inverse FFT per
        surrogate; phases differ from the time-domain filter only near the record ends).
    memory_mb : float, default 256
        Working-memory cap of one batch of surrogates (results do not change).
    executor : None, "serial", "processes", a concurrent.futures executor or a dask Client
    n_jobs : int, optional
        Workers for ``executor="processes"``.
    recording : str, optional
        Name written to the ``recording`` column.
    progress : callable, optional
        Called with the number of surrogates finished after each batch.
    epochs : bool or mapping, optional
        Also find synchronization epochs of every pair x ratio over the whole span and
        test their total locked time against the same surrogate method (time_shift in place
        of fourier, aaft or iaaft, with which that test exceeds its level;
        :func:`syncstats.locking_epochs`); True uses the defaults, a mapping sets
        ``tolerance``, ``window_cycles``, ``min_cycles``, ``min_s``. The result's
        ``.epochs`` holds them; ``save`` writes epochs.csv and epochs_summary.csv.
    trial_locking : bool, default False
        Also follow the across-trial PLV and PPC over time relative to a stimulus (signals
        of shape trials x samples) against trial-shuffled surrogates, corrected over time
        points (:func:`syncstats.trial_locking.locking_over_trials`); result in
        ``.trial_locking``, saved as trial_locking.csv and trial_stretches.csv.
    stimulus_s : float, default 0
        Seconds from the start of each trial to its stimulus (``trial_locking``).
    trial_correction : "cluster" (default) or "max_stat"
        Correction over time points of each curve (``trial_locking``).
    trial_threshold : float, default 0.05
        Cluster-forming level: pointwise (1 − level) quantile of the pooled curves.
    clusters : bool, default False
        Also run the synchronization cluster analysis of the whole group (at least three
        rhythms; :func:`syncstats.clusters.group_clusters`) with the run's surrogate (time_shift
        in place of fourier, aaft or iaaft, with which the cluster test exceeds its level); result
        in ``.clusters``, saved as clusters.csv, cluster_components.csv and order_parameter.csv.

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
    started = _now()
    eopt = check_epoch_options(epochs)
    opt = check_options(
        measures=measures, surrogate=surrogate, n_surrogates=n_surrogates, correction=correction, alpha=alpha,
        rng=rng, protophase_correction=protophase_correction, edge_s=edge_s, min_shift_s=min_shift_s,
        ci_level=ci_level, ci_method=ci_method, n_bootstrap=n_bootstrap, batch_size=batch_size, n_jobs=n_jobs,
        group_label=group_label, progress=progress, decimate=decimate, spectral_filter=spectral_filter,
        memory_mb=memory_mb,
    )
    inputs = collect_inputs(signals, fs, events, phases, recording)
    pipe = Pipeline.fix(inputs, bands=bands, phase_method=phase_method, protophase_correction=opt.protophase_correction,
                        edge_s=opt.edge_s, decimate=opt.decimate, spectral_filter=opt.spectral_filter)
    design = inf.make_design(pipe, pairs=pairs, ratios=ratios, measures=opt.measures, windows=windows,
                             window_step=window_step, group_label=opt.group_label)
    observed = np.atleast_1d(design.family.evaluate(pipe.data))
    null, level, notes, options, method_warn, plan = None, "", [], {}, {}, None
    if opt.n_surrogates:
        level = inf.check_method(opt.surrogate, inputs, design.pairs)
        options, notes, plan = inf.method_options(opt.surrogate, pipe, design, opt.n_surrogates, opt.min_shift_s,
                                                  all_shifts=all_shifts)
    extras = _extras(pipe, design, opt, options, executor, inputs.recording, trial_locking=trial_locking,
                     stimulus_s=stimulus_s, trial_correction=trial_correction, trial_threshold=trial_threshold,
                     clusters=clusters)
    if opt.n_surrogates:
        method_warn = _method_warnings(opt.surrogate, pipe, options)
        if plan is not None and plan.exact:
            null = inf.exact_shift_null(plan, design, pipe.span_n)
            if opt.progress is not None:  # one step: every shift at once
                opt.progress(opt.n_surrogates)
        else:
            null = inf.null_distribution(pipe, design.family, opt.surrogate, opt.n_surrogates, opt.seed,
                                         options=options, batch_size=opt.batch_size, memory_mb=opt.memory_mb,
                                         executor=executor, n_jobs=opt.n_jobs, progress=opt.progress)
    pref, ncyc, moment1, moment2 = design.row_summaries(pipe.data)
    test = inf.test_family(observed, null, design, opt.correction, opt.alpha, n_cycles=ncyc)
    chosen = inf.choose_ratios(design, pipe.data, observed, test, alpha=opt.alpha,
                               n_resamples=opt.n_bootstrap or 199, seed=opt.seed, n_cycles=ncyc)
    intervals = inf.row_intervals(design.family, pipe.data, opt.seed, n_resamples=opt.n_bootstrap,
                                  level=opt.ci_level, method=opt.ci_method)
    diags = pipe.diagnostics()
    if eopt is not None:
        extras["epochs"] = run_epochs(pipe, design, eopt, opt, inputs, executor=executor)
    table = build_table(
        design, recording=inputs.recording, time_s=pipe.time_s, fs=pipe.inputs.fs, observed=observed, test=test,
        ratios=chosen, intervals=intervals, preferred_phase=pref, n_cycles=ncyc,
        row_warnings=_row_warnings(design, diags, method_warn, ncyc, test, opt.n_surrogates, plan,
                                   (moment1, moment2), pipe.data, pipe.inputs.fs),
        surrogate=opt.surrogate, n_surrogates=0 if null is None else null.shape[0], alpha=opt.alpha, ci_level=opt.ci_level,
        ci_method=opt.ci_method, n_bootstrap=opt.n_bootstrap, null_level=level,
    )
    shift_warn = [plan.row_warning(i) for i in range(len(design.rows))] if plan is not None else []
    for w in dict.fromkeys(sum(method_warn.values(), []) + [w for w in shift_warn if w]):
        warn(w, stacklevel=2)
    diag_frame = _diagnostics_frame(diags, pipe.inputs, rhythm_diagnostics(pipe))
    lead = [f"null: {opt.surrogate} {LEVEL_NOTES[level]}"] if null is not None else [
        "no surrogates drawn: measures only, no test"]
    return AnalysisResult(
        table=table,
        diagnostics=diag_frame,
        params=_params(opt, inputs, pipe, design, options, level, ratios, started, plan)
        | {"psi_drift_per_cycle": [float(d) if np.isfinite(d) else None for d in chosen.drift]}
        | {k: v.params for k, v in extras.items()},
        null_distribution=None if null is None else np.ascontiguousarray(null.T),
        phase_differences=design.psi_samples(pipe.data),
        phases={n: pipe.data[n][0] for n in inputs.names},
        time_s=pipe.time_s.copy(),
        events={n: e.copy() for n, e in inputs.events.items()},
        notes=tuple(lead + list(pipe.notes) + notes + list(test.notes)
                    + (list(extras["epochs"].notes) if "epochs" in extras else [])),
        inputs=tuple(inputs.sources),
        rhythm_views=rhythm_views(pipe, diag_frame),
        **extras,
    )


def _extras(pipe, design, opt, options, executor, recording, *, trial_locking, stimulus_s, trial_correction,
            trial_threshold, clusters):
    """The optional analyses on the same pipeline: locking over trials, group clusters."""
    from ._checks import check_bool

    out = {}
    run = dict(n_surrogates=opt.n_surrogates, alpha=opt.alpha, seed=opt.seed, batch_size=opt.batch_size,
               memory_mb=opt.memory_mb, executor=executor, n_jobs=opt.n_jobs, recording=recording)
    if check_bool(trial_locking, "trial_locking"):
        from .trial_locking import trial_locking_on

        out["trial_locking"] = trial_locking_on(pipe, design.ratios, stimulus_s=stimulus_s,
                                                correction=trial_correction, threshold=trial_threshold, **run)
    if check_bool(clusters, "clusters"):
        from .clusters import cluster_null, clusters_on, with_notes

        method, copts, cnotes = cluster_null(opt.surrogate, pipe, design, opt.n_surrogates,
                                             min_shift_s=opt.min_shift_s, options=options)
        out["clusters"] = with_notes(clusters_on(pipe, surrogate=method, options=copts,
                                                 stride=design.slowest_stride, **run), cnotes)
    return out


def _now():
    return _dt.datetime.now(_dt.timezone.utc).isoformat()


def _method_warnings(method, pipe, options):
    """name -> warnings when the chosen null is known to be weak for that rhythm."""
    warn, inp = SURROGATE_METHODS[method].warn, pipe.inputs
    out = {n: warn(n, raw=inp.raw.get(n), phase=pipe.data[n], events=inp.events.get(n), options=options)
           for n in inp.names}
    return {n: w for n, w in out.items() if w}


def _row_warnings(design, diags, method_warn, n_cycles, test, n_surrogates, plan, moments, data, fs):
    """Per row: the list of warnings (rhythms, ratio, cycles, surrogates, shift resolution,
    two states of psi). ``moments``: the first two circular moments of psi per row;
    ``data``: the phases (at ``fs``)."""
    by_name = {d.signal: list(d.warnings) for d in diags}
    out = []
    for i, r in enumerate(design.rows):
        wl = []
        for n in r.members:
            wl += by_name.get(n, []) + method_warn.get(n, [])
        if far := design.ratio_warning(r, data, fs):
            wl.append(far)
        if n_cycles[i] < inf.MIN_CYCLES:
            wl.append(f"only {n_cycles[i]:.1f} cycles of the slower rhythm in this window")
        if test.few_surrogates[i]:
            wl.append(f"too few surrogates for the family ({n_surrogates})")
        if plan is not None and plan.row_warning(i):
            wl.append(plan.row_warning(i))
        if two := inf.two_state_warning(moments[0][i], moments[1][i], n_cycles[i]):
            wl.append(two)
        out.append(wl)
    return out


def _diagnostics_frame(diags, inputs, extra=None):
    extra = extra or {}
    return pd.DataFrame([
        {
            "signal": d.signal,
            "kind": inputs.kinds[d.signal],
            "dominant_freq_hz": d.dominant_freq_hz,
            "peak_sharpness": d.peak_sharpness,
            "near_zero_amplitude_share": d.near_zero_amplitude_share,
            "backward_step_share": d.backward_step_share,
            "n_cycles": d.n_cycles * inputs.n_trials,
            "method": d.method,
            "band": "" if d.band is None else f"{d.band[0]:.4g}-{d.band[1]:.4g} Hz",
            "warnings": "; ".join(d.warnings),
            **extra.get(d.signal, {}),
        }
        for d in diags
    ])


def _params(opt, inputs, pipe, design, options, level, ratios_requested, started, plan=None):
    fs, t = pipe.inputs.fs, pipe.time_s
    return {
        "fs": inputs.fs,
        "analysis_fs": fs,
        "decimation": pipe.decimation,
        "spectral_filter": opt.spectral_filter,
        "memory_mb": opt.memory_mb,
        "pairs": [list(p) for p in design.pairs],
        "ratios": {f"{a}|{b}": [f"{p}:{q}" for p, q in rl] for (a, b), rl in design.ratios.items()},
        "ratios_requested": ratios_requested if isinstance(ratios_requested, str) or ratios_requested is None
        else str(ratios_requested),
        "measures": list(opt.measures),
        "surrogate": opt.surrogate,
        "n_surrogates": opt.n_surrogates,
        "correction": opt.correction,
        "alpha": opt.alpha,
        "seed_entropy": str(opt.seed.entropy),
        "seed_spawn_key": list(opt.seed.spawn_key),
        "phase_method": {n: s.method for n, s in pipe.specs.items()}
        | {n: inputs.kinds[n] for n in inputs.names if n not in pipe.specs},
        "bands": {n: (list(s.band) if s.band is not None else None) for n, s in pipe.specs.items()},
        "wavelet_freqs": {n: s.freq for n, s in pipe.specs.items() if s.freq is not None},
        "protophase_correction": opt.protophase_correction,
        "windows": [[float(t[a]), float(t[b - 1] + 1 / fs)] for a, b in design.windows],
        "edge_s": pipe.edge_s,
        "span_s": [float(t[0]), float(t[-1] + 1 / fs)],
        "n_trials": inputs.n_trials,
        "min_shift_s": options["min_shift"] / fs if "min_shift" in options else None,
        "all_shifts": None if plan is None else plan.exact,
        # the range over rows of how far apart two shifts must be to give unrelated values
        # (correlation length of the shift curve, s) and of the effectively independent shifts
        "shift_correlation_s": None if plan is None else [float(plan.corr_len.min() / fs),
                                                          float(plan.corr_len.max() / fs)],
        "effective_shifts": None if plan is None else [float(plan.n_eff.min()), float(plan.n_eff.max())],
        "ci_level": opt.ci_level,
        "ci_method": opt.ci_method,
        "n_bootstrap": opt.n_bootstrap,
        "batch_size": opt.batch_size,
        "null_level": level,
        "kinds": dict(inputs.kinds),
        "started_at": started,
        "finished_at": _now(),
        "syncstats_version": _version(),
    }


def _version():
    try:
        from importlib.metadata import version

        return version("syncstats")
    except Exception:  # pragma: no cover
        return "0+unknown"


def combine_results(results, *, correct_across: bool = True) -> AnalysisResult:
    """One result from the analyses of several recordings (or gap-free segments of one file).

    Tables and diagnostics are stacked (diagnostics get a ``recording`` column). With
    ``correct_across`` (default) the correction family spans every recording: for each
    measure the p-values of all rows are corrected together with the run's correction
    (the max-statistic pairs surrogate b of every recording, valid because the
    recordings' surrogates are independent), and ``significant`` / ``locked`` follow.
    Figure data (phase differences, phases, events) come from the longest recording,
    which the notes name.
    """
    results = list(results)
    if not results:
        raise SyncstatsInputError("no recordings to combine; check the input file.")
    tables, diags = [], []
    for r in results:
        rec = r.table["recording"].iloc[0] if len(r.table) else ""
        tables.append(r.table)
        d = r.diagnostics.copy()
        d.insert(0, "recording", rec)
        diags.append(d)
    nulls = [r.null_distribution for r in results]
    null = None
    if all(n is not None for n in nulls) and len({n.shape[1] for n in nulls}) == 1:
        null = np.concatenate(nulls, axis=0)
    longest = max(results, key=lambda r: 0 if r.time_s is None else len(r.time_s))
    rec_long = longest.table["recording"].iloc[0] if len(longest.table) else ""
    notes = list(dict.fromkeys(sum((list(r.notes) for r in results), [])))
    table = finalize_table(pd.concat(tables, ignore_index=True).to_dict("records"))
    if correct_across and len(results) > 1:
        drift = sum((list(r.params.get("psi_drift_per_cycle") or [None] * len(r.table)) for r in results), [])
        table, note = _correct_across(table, null, longest.params, drift=drift)
        if note:
            notes.append(note)
    notes.append(f"{len(results)} recordings analysed; figures show '{rec_long}', the longest")
    dropped = [what for what in ("trial_locking", "clusters")
               if any(getattr(r, what) is not None for r in results if r is not longest)]
    if dropped:  # one result holds one of each; say so rather than drop them unannounced
        notes.append(f"{' and '.join(d.replace('_', ' ') for d in dropped)}: shown and saved for '{rec_long}' only; "
                     "analyse the other recordings one at a time for theirs")
    comps = [r.null_comparison for r in results if r.null_comparison is not None]
    if comps:  # each recording's own comparison (p_adjusted within the recording)
        longest = replace(longest, null_comparison=pd.concat(comps, ignore_index=True))
    params = dict(longest.params)
    params["recordings"] = [r.table["recording"].iloc[0] if len(r.table) else "" for r in results]
    params["started_at"] = min(r.params["started_at"] for r in results)
    params["finished_at"] = max(r.params["finished_at"] for r in results)
    return replace(
        longest,
        table=table,
        diagnostics=pd.concat(diags, ignore_index=True),
        params=params,
        null_distribution=null,
        notes=tuple(notes),
        inputs=tuple(sorted({p for r in results for p in r.inputs})),
        epochs=combine_epochs([r.epochs for r in results]),
    )


def _correct_across(table, null, params, drift=None):
    """Correct every measure's rows over all recordings together (see combine_results).
    ``drift``: per row, the net turns of psi per cycle (None where not known)."""
    from .measures import MEASURE_METHODS

    tested = table["p_value"].notna()
    corr = str(params.get("correction") or "")
    if not tested.any() or corr not in inf.CORRECTION_METHODS:
        return table, ""
    alpha = float(params.get("alpha", 0.05))
    if corr == "max_stat" and (null is None or null.shape[0] != len(table)):
        return table, ("recordings kept their own max-statistic families (their surrogate counts differ); "
                       "use a p-value correction to correct across them")
    t = table.copy()
    n_rec = t["recording"].nunique()
    for m, idx in t.groupby("measure", sort=False).indices.items():
        idx = idx[tested.to_numpy()[idx]]
        if idx.size == 0:
            continue
        sd_fn = MEASURE_METHODS[m].chance_sd if m in MEASURE_METHODS else None
        floor = sd_fn(t["n_cycles"].to_numpy()[idx]) if sd_fn is not None else None
        adj = inf.adjust(t["p_value"].to_numpy()[idx], corr, observed=t["value"].to_numpy()[idx],
                         null=None if null is None else null[idx].T, floor=floor)
        t.loc[t.index[idx], "p_adjusted"] = np.maximum(adj, t["p_value"].to_numpy()[idx])
        t.loc[t.index[idx], "family"] = f"{idx.size} tests of {m} across {n_rec} recordings"
    sig = t["p_adjusted"] < alpha
    t["significant"] = sig.where(tested, pd.NA).astype("boolean")
    best = t.groupby(["recording", "signal_a", "signal_b", "window_start_s", "measure"], sort=False)["effect"]
    selected = t["effect"].eq(best.transform("max")) | best.transform("size").eq(1)
    drift = drift if drift is not None and len(drift) == len(t) else [None] * len(t)
    strong = pd.Series([inf.lock_evidence(v, m, n, d, alpha)
                        for v, m, n, d in zip(t["value"], t["measure"], t["n_cycles"], drift)], index=t.index)
    t["locked"] = (selected & sig & strong).where(tested, pd.NA).astype("boolean")
    return t, f"the correction ({corr}) spans all {n_rec} recordings"
