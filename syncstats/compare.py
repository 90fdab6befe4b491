"""Several nulls on the same data, and which one to believe (``syncstats.compare_nulls``).

Different surrogates test different null hypotheses (``SURROGATE_METHODS[m].null_hypothesis``)
and can disagree on one record. :func:`compare_nulls` runs the first-named null exactly as
:func:`syncstats.analyze` would (its rows are the result's table), runs every further
null on the same data with the same seed, and states for every row which null's
assumptions fit the data and which one to believe.

The choice is made **from the diagnostics only, never from the p-values**: a null picked
because it gave the smaller p would not hold its level. The rules (``NULL_RULES``; the
reasoning is in DEVELOPERS.md, "Which null to believe"):

1. *Stationarity.* Every null here but ``trial_shuffle`` assumes each rhythm keeps its
   rate over the record (a time shift carries one epoch's rate into another; Fourier
   surrogates spread a rate change over the whole record). When the mean rate of any
   rhythm of the row differs between quarters of the span by more than
   ``RATE_DRIFT_LIMIT`` (relative) and the quarters' rates differ beyond their block-to-
   block scatter (``rate_change_p`` below ``RATE_CHANGE_P``), those nulls do not fit.
   Both conditions: on 60 s of stationary simulated rhythms the relative range reached
   0.20 for noise-driven damped oscillators (their rate is noisy, not changing) and the
   p-value fell below 0.001 in up to 2.5 % of limit cycles, but never both.
2. *Power of the time shift.* Fewer than 19 effectively independent shifts (the row
   warning of the time shift) leave it little power: it "fits" but is weak, and a
   non-rejection by it says little.
3. *Waveform.* Plain ``fourier`` does not fit a spiky signal (its Gaussian surrogates
   have another waveform; the warning ``analyze`` raises for it). ``iaaft`` keeps
   the value distribution and stays valid there (docs/validation.md: FPR 0.000-0.083 on
   spiking, relaxation, chaotic and limit-cycle rhythms).
4. *Self-sustained rhythms.* A steady amplitude (``amplitude_cv`` below
   ``STEADY_AMPLITUDE_CV``; filtered Gaussian noise gives 0.52) marks a self-sustained
   rhythm, which is not the linear Gaussian process the Fourier-family nulls assume; those
   nulls do not fit it. Their error goes either way with the record length: on 200 s of
   independent limit cycles they were conservative (docs/validation.md, FPR 0.01-0.03), on
   60 s of independent Stuart-Landau limit cycles IAAFT rejected in 13 of 100 pairs (time
   shift: 4 of 100), which is the short, regular record where a time shift has little
   power and the two disagree. A valid test with little power is believed over one that
   may reject for reasons other than coupling.
5. *Any other warning a null's own run raised about itself* (e.g. serially correlated
   intervals for ``interval_shuffle``) means it does not fit.

Believe the first null in ``PREFERENCE`` that fits and is not weak; failing that, the
first that fits; when none fits, none is recommended and the reason says why.
``time_shift`` comes first: it keeps each rhythm's whole own dynamics and is an exact
permutation test over shifts under stationarity, so it holds its level at any length
(with few independent shifts it only loses power).
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np
import pandas as pd

from ._errors import SyncstatsInputError
from ._rng import as_seed_sequence

__all__ = ["compare_nulls", "null_advice", "parse_surrogates", "NULL_RULES", "PREFERENCE", "RATE_DRIFT_LIMIT",
           "RATE_CHANGE_P",
           "STEADY_AMPLITUDE_CV", "COMPARISON_COLUMNS"]

#: relative change of a rhythm's mean rate between quarters of the span above which (with
#: ``RATE_CHANGE_P``) the rhythm counts as non-stationary (the limit cycles of our simulators
#: stay under 0.03 over 60 s)
RATE_DRIFT_LIMIT = 0.05
#: p-value of "the quarters share one rate" (ANOVA on block rates) below which the change counts
RATE_CHANGE_P = 0.001
#: amplitude coefficient of variation below which a rhythm counts as self-sustained
#: (Rayleigh amplitude of filtered Gaussian noise: sqrt(4/pi - 1) = 0.523)
STEADY_AMPLITUDE_CV = 0.3
#: which null to believe when several fit (first = preferred)
PREFERENCE = ("time_shift", "trial_shuffle", "iaaft", "twin", "multivariate_fourier", "aaft", "fourier",
              "interval_shuffle")
_STATIONARY = {"time_shift", "fourier", "aaft", "iaaft", "multivariate_fourier", "twin", "interval_shuffle"}
_FOURIER = {"fourier", "aaft", "iaaft", "multivariate_fourier"}

#: the rules in words (methods text, report)
NULL_RULES = (
    "the choice is made from the signal diagnostics only, never from the p-values, so the believed null keeps "
    "its level",
    f"a rhythm whose mean rate differs between quarters of the record by more than {RATE_DRIFT_LIMIT:.0%}, beyond "
    f"its block-to-block scatter (p < {RATE_CHANGE_P}), breaks the stationarity every null but trial_shuffle "
    "assumes",
    "time_shift with fewer than 19 effectively independent shifts has little power: its non-rejection says little",
    "fourier does not fit spiky signals; iaaft keeps the value distribution and stays valid there",
    f"a steady amplitude (coefficient of variation below {STEADY_AMPLITUDE_CV}; filtered noise gives 0.52) marks a "
    "self-sustained rhythm, which Fourier-family nulls do not model: conservative on long records, but on 60 s of "
    "independent limit cycles IAAFT rejected 13 % of pairs at the 5 % level, so they are not believed there",
    "among the nulls that fit, the preference is " + ", ".join(PREFERENCE) + "; one with power beats one without",
)

_KEYS = ["recording", "signal_a", "signal_b", "ratio", "window_start_s", "window_end_s", "measure"]
#: columns of null_comparison.csv
COMPARISON_COLUMNS = tuple(_KEYS + ["surrogate", "n_surrogates", "p_value", "p_adjusted", "significant",
                                    "null_mean", "null_sd", "assessment", "recommended", "reason"])


def parse_surrogates(value, where: str = "surrogates") -> tuple[str, ...]:
    """``"iaaft,time_shift"`` or a sequence -> checked, distinct names (at least one)."""
    from .nulls import SURROGATE_METHODS

    items = [s.strip() for s in value.split(",")] if isinstance(value, str) else [str(s).strip() for s in value]
    items = [s for s in items if s]
    if not items:
        raise SyncstatsInputError(f"{where} names no surrogate; give e.g. iaaft,time_shift.")
    for s in items:
        if s not in SURROGATE_METHODS:
            raise SyncstatsInputError(f"{where}: unknown surrogate '{s}'; choose from {', '.join(SURROGATE_METHODS)}.")
    if len(set(items)) != len(items):
        raise SyncstatsInputError(f"{where} names a surrogate twice ({', '.join(items)}); list each once.")
    return tuple(items)


def compare_nulls(signals=None, fs=None, *, surrogates=("iaaft", "time_shift"), rng=None, progress=None,
                  **options):
    """Run several nulls on the same data and say which one to believe.

    Parameters
    ----------
    signals, fs, **options
        As for :func:`syncstats.analyze` (every keyword but ``surrogate``).
    surrogates : sequence of str or "a,b"
        Two or more surrogate names. The first is the primary null: the returned
        result's table is exactly ``analyze(..., surrogate=surrogates[0])``.
    rng : int, SeedSequence, Generator or None
        One seed for every null (a Generator is consumed once, as in ``analyze``).
    progress : callable, optional
        Called with the number of surrogates finished (over all nulls).

    Returns
    -------
    AnalysisResult
        The primary result with ``null_comparison`` (columns ``COMPARISON_COLUMNS``:
        one row per table row x null) and a note per null; ``save`` also writes
        ``null_comparison.csv`` and the report's section "Which null to believe".

    Examples
    --------
    >>> import numpy as np, syncstats
    >>> from syncstats.simulate import scenario
    >>> sc = scenario("stuart_landau", coupled=False, duration=60.0, fs=50.0, rng=0)
    >>> res = syncstats.compare_nulls(sc.signals, fs=sc.fs, surrogates="iaaft,time_shift",
    ...                               n_surrogates=19, n_bootstrap=0, rng=0)
    >>> res.null_comparison[["surrogate", "assessment", "recommended"]].values.tolist()
    [['iaaft', 'unfit', False], ['time_shift', 'weak', True]]
    """
    from .api import analyze

    if "surrogate" in options:
        raise SyncstatsInputError("compare_nulls takes surrogates=[...] (the first is the primary null), not "
                                  "surrogate=; pass e.g. surrogates=('iaaft', 'time_shift').")
    names = parse_surrogates(surrogates)
    if len(names) < 2:
        raise SyncstatsInputError("compare_nulls needs at least two surrogates; for one, call analyze.")
    seed = as_seed_sequence(rng)
    results = [analyze(signals, fs, surrogate=names[0], rng=seed, progress=progress, **options)]
    extra = dict(options, n_bootstrap=0)  # the further nulls give p-values; intervals are the primary's
    for m in names[1:]:
        results.append(analyze(signals, fs, surrogate=m, rng=seed, progress=progress, **extra))
    comp = null_advice(results, results[0].diagnostics)
    primary = results[0]
    notes = list(primary.notes) + [f"also run on the same data and seed: {', '.join(names[1:])} (see "
                                   "null_comparison.csv and 'Which null to believe')"]
    params = {**primary.params, "surrogates_compared": list(names), "null_rules": list(NULL_RULES)}
    return replace(primary, null_comparison=comp, notes=tuple(notes), params=params)


def _split(text) -> list[str]:
    return [w.strip() for w in str(text or "").split(";") if w.strip()]


def _assess(method: str, members, diag: dict, row_warnings: list[str]) -> tuple[str, list[str]]:
    """(``fits`` | ``weak`` | ``unfit``, reasons) of one null for one row."""
    reasons, status = [], "fits"
    if method in _STATIONARY:
        for n in members:
            drift = diag.get(n, {}).get("rate_drift", np.nan)
            p = diag.get(n, {}).get("rate_change_p", np.nan)
            if np.isfinite(drift) and drift > RATE_DRIFT_LIMIT and p < RATE_CHANGE_P:
                status = "unfit"
                reasons.append(f"the rate of {n} changes over the record (quarters differ by {drift:.0%}), and "
                               f"{method} assumes a steady rate")
    own = [w for w in row_warnings if method in w or "little power" in w]
    if method == "time_shift":
        if any("effectively independent shifts" in w for w in own):
            if status == "fits":
                status = "weak"
            reasons.append("few effectively independent shifts (the alignment repeats over shifts), so it has "
                           "little power here")
        else:
            reasons.append("enough effectively independent shifts for the test to have power")
    elif any(w for w in own if "effectively independent shifts" not in w):
        status = "unfit"
        reasons += [w.split(": ", 1)[-1] for w in own if "effectively independent shifts" not in w]
    if method in _FOURIER:
        steady = [n for n in members if diag.get(n, {}).get("amplitude_cv", np.nan) < STEADY_AMPLITUDE_CV]
        if steady:
            status = "unfit"
            cvs = ", ".join(f"{diag[n]['amplitude_cv']:.2f}" for n in steady)
            reasons.append(f"{' and '.join(steady)} keep{'s' if len(steady) == 1 else ''} a steady amplitude "
                           f"(coefficient of variation {cvs}; filtered noise gives 0.52): a self-sustained rhythm, "
                           f"not the linear Gaussian process {method} assumes, so it can reject for reasons other "
                           "than coupling (on short records) or lose power (on long ones)")
    if status == "fits" and not any("rate" in r for r in reasons):
        reasons.insert(0, "its assumptions fit the diagnostics")
    return status, reasons


def null_advice(results, diagnostics: pd.DataFrame) -> pd.DataFrame:
    """The comparison table of several results of the same design (one per null).

    ``results[k].table`` rows must correspond one to one (same data, same design).
    Returns a DataFrame with ``COMPARISON_COLUMNS``.
    """
    diag = {}
    if diagnostics is not None and len(diagnostics):
        for _, d in diagnostics.iterrows():
            diag[str(d["signal"])] = {k: float(d[k]) for k in ("amplitude_cv", "rate_drift", "rate_change_p") if k in d
                                      and pd.notna(d[k])}
    sig_warn = set()
    if diagnostics is not None and "warnings" in diagnostics:
        for v in diagnostics["warnings"]:
            sig_warn.update(_split(v))
    n_rows = {len(r.table) for r in results}
    if len(n_rows) != 1:
        raise SyncstatsInputError("the results to compare have different rows; run every null on the same data "
                                  "and options.")
    rows = []
    for i in range(n_rows.pop()):
        per = []
        for r in results:
            t = r.table.iloc[i]
            members = [t["signal_a"]] + ([t["signal_b"]] if t["signal_b"] else [])
            if not t["signal_b"]:
                members = [n for n in diag]  # a group row: every rhythm
            warn = [w for w in _split(t["warnings"]) if w not in sig_warn]
            status, why = _assess(str(t["surrogate"]), members, diag, warn)
            if not t["surrogate"]:
                status, why = "unfit", ["no surrogates drawn"]
            per.append((t, status, why))
        order = {m: k for k, m in enumerate(PREFERENCE)}
        pick = None
        for want in ("fits", "weak"):
            cand = [k for k, (t, s, _) in enumerate(per) if s == want]
            if cand:
                pick = min(cand, key=lambda k: order.get(str(per[k][0]["surrogate"]), len(order)))
                break
        for k, (t, status, why) in enumerate(per):
            reason = "; ".join(why)
            if pick is None:
                reason += "; none of the nulls run fits this row, so none is recommended"
            rows.append({**{c: t[c] for c in _KEYS}, "surrogate": t["surrogate"], "n_surrogates": t["n_surrogates"],
                         "p_value": t["p_value"], "p_adjusted": t["p_adjusted"], "significant": t["significant"],
                         "null_mean": t["null_mean"], "null_sd": t["null_sd"], "assessment": status,
                         "recommended": k == pick, "reason": reason})
    out = pd.DataFrame(rows, columns=list(COMPARISON_COLUMNS))
    out["significant"] = out["significant"].astype("boolean")
    out["recommended"] = out["recommended"].astype(bool)
    return out
