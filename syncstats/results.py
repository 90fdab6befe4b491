"""The tidy results table (the contract schema) and the result object."""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping, NamedTuple

import numpy as np
import pandas as pd

__all__ = ["Column", "COLUMN_SPEC", "COLUMNS", "EXTRA_COLUMNS", "empty_table", "finalize_table", "build_table",
           "columns_markdown", "ResultData"]


class Column(NamedTuple):
    """One column of the tidy table: name, pandas dtype, unit ("" when none), meaning."""

    name: str
    dtype: str
    unit: str
    meaning: str


#: every column of the tidy table, described once (this feeds the table's dtypes, the
#: README's column list and the report's glossary). The contract columns come first.
COLUMN_SPEC: tuple[Column, ...] = (
    Column("recording", "object", "", "name of the recording (\"\" for a single one)"),
    Column("signal_a", "object", "", "first rhythm of the pair (A), or the group label for a group measure"),
    Column("signal_b", "object", "", "second rhythm of the pair (B); \"\" for a group measure"),
    Column("ratio", "object", "", "p:q — A completes p cycles while B completes q; psi = q·phi_A − p·phi_B"),
    Column("p", "int64", "cycles", "cycles of A in the ratio"),
    Column("q", "int64", "cycles", "cycles of B in the ratio"),
    Column("window_start_s", "float64", "s", "start of the analysed span or window"),
    Column("window_end_s", "float64", "s", "end of the analysed span or window"),
    Column("measure", "object", "", "locking measure: plv, ppc, entropy_index, conditional_index, order_parameter"),
    Column("value", "float64", "", "the measure on the data"),
    Column("n_cycles", "float64", "cycles", "cycles of the slower rhythm in the span (summed over trials)"),
    Column("preferred_phase", "float64", "rad", "circular mean of psi, in (−π, π]"),
    Column("surrogate", "object", "", "null method (surrogate type); \"\" when nothing was tested"),
    Column("n_surrogates", "int64", "", "surrogates drawn"),
    Column("null_mean", "float64", "", "mean of the measure over the surrogates (its bias under the null)"),
    Column("null_sd", "float64", "", "standard deviation of the measure over the surrogates"),
    Column("effect", "float64", "", "value − null_mean (debiased effect)"),
    Column("z", "float64", "", "(value − null_mean) / null_sd"),
    Column("p_value", "float64", "", "surrogate p-value (1 + k)/(1 + S), k = surrogates at or above the value"),
    Column("p_adjusted", "float64", "", "p-value corrected over the family"),
    Column("correction", "object", "", "correction method"),
    Column("family", "object", "", "what the correction counted (tests of one measure: pairs x ratios x windows)"),
    Column("significant", "boolean", "", "p_adjusted < alpha: independence rejected at this row"),
    Column("locked", "boolean", "", "this row's ratio is the one the rhythms lock at (the largest debiased effect "
           "among the ratios tested for the pair and window), it is significant, its value exceeds the Rayleigh "
           "critical value for its cycles, and psi makes at most one net turn in four cycles (frequency "
           "entrainment); empty when nothing was tested"),
    Column("ratio_certainty", "float64", "", "share of cycle-block bootstrap resamples in which this pair's selected "
           "ratio keeps the largest debiased effect (0–1); empty where one ratio was tested"),
    Column("ci_low", "float64", "", "lower end of the confidence interval of value"),
    Column("ci_high", "float64", "", "upper end of the confidence interval of value"),
    Column("ci_level", "float64", "", "confidence level of the interval"),
    Column("ci_method", "object", "", "how the interval was computed"),
    Column("warnings", "object", "", "diagnostics, separated by \"; \"; \"\" when none"),
    Column("preferred_phase_ci_low", "float64", "rad", "lower end of the interval of the preferred phase (PLV rows)"),
    Column("preferred_phase_ci_high", "float64", "rad", "upper end of the interval of the preferred phase (PLV rows)"),
    Column("null_level", "object", "", "what the surrogates randomised: signal, phase or event"),
    Column("n_eff_cycles", "float64", "cycles", "effectively independent cycles: cycles / the integrated "
           "autocorrelation time of the cycle-mean phasor (the bootstrap's block length)"),
)

_N_CONTRACT = [c.name for c in COLUMN_SPEC].index("warnings") + 1
#: contract columns, in order (the contract); the extra columns follow them
COLUMNS = tuple(c.name for c in COLUMN_SPEC[:_N_CONTRACT])
#: columns after the contract ones
EXTRA_COLUMNS = tuple(c.name for c in COLUMN_SPEC[_N_CONTRACT:])

_DTYPES = {c.name: c.dtype for c in COLUMN_SPEC}


def columns_markdown() -> str:
    """The column list as a Markdown table (README, report glossary)."""
    lines = ["| column | unit | meaning |", "|---|---|---|"]
    lines += [f"| `{c.name}` | {c.unit} | {c.meaning} |" for c in COLUMN_SPEC]
    return "\n".join(lines)


def empty_table() -> pd.DataFrame:
    """A table with every contract column and no rows."""
    return pd.DataFrame({c: pd.Series(dtype=_DTYPES[c]) for c in COLUMNS})


def finalize_table(rows: list[Mapping[str, Any]]) -> pd.DataFrame:
    """Rows (dicts) -> DataFrame with the contract columns first, in order and typed.

    ``significant`` is a nullable boolean: NA when no inference was made.
    """
    if not rows:
        return empty_table()
    df = pd.DataFrame(list(rows))
    for c in COLUMNS:
        if c not in df:
            df[c] = {"float64": np.nan, "boolean": pd.NA}.get(_DTYPES[c], "")
    extra = [c for c in df.columns if c not in COLUMNS]
    df = df[list(COLUMNS) + extra]
    for c in COLUMNS:
        if _DTYPES[c] == "boolean":
            df[c] = df[c].astype("boolean")
        elif _DTYPES[c] == "object":
            df[c] = df[c].fillna("").astype(str).astype(object)
        else:
            df[c] = df[c].astype(_DTYPES[c])
    return df.reset_index(drop=True)


def build_table(design, *, recording, time_s, fs, observed, test, ratios, intervals, preferred_phase, n_cycles,
                row_warnings, surrogate, n_surrogates, alpha, ci_level, ci_method, n_bootstrap, null_level):
    """The tidy table from the stages' outputs (arrays aligned with ``design.rows``)."""
    has_inf = n_surrogates > 0
    def ci_txt(r, ci):
        if not n_bootstrap:
            return ""
        what = (f"block bootstrap over blocks of {ci.block_cycles} cycle(s) ({ci_method}, {n_bootstrap} resamples)")
        if r.measure == "plv":
            what += (f", shifted by the PLV's finite-sample bias ({ci.bias:.3g}) for {ci.n_eff:.0f} effective cycles: "
                     "an interval for the PLV long records converge to")
        if ci.phase_model:
            what += (", widened to contain the parametric bootstrap interval of the fitted noisy phase-difference "
                     "model (slips at the model's rate)")
        return what
    rows = []
    for i, r in enumerate(design.rows):
        mu, sd = float(test.null_mean[i]), float(test.null_sd[i])
        ci = intervals[i]
        rows.append({
            "recording": recording,
            "signal_a": r.a,
            "signal_b": r.b,
            "ratio": f"{r.p}:{r.q}",
            "p": r.p,
            "q": r.q,
            "window_start_s": float(time_s[r.w0]),
            "window_end_s": float(time_s[r.w1 - 1] + 1.0 / fs),
            "measure": r.measure,
            "value": float(observed[i]),
            "n_cycles": float(n_cycles[i]),
            "preferred_phase": float(preferred_phase[i]),
            "surrogate": surrogate if has_inf else "",
            "n_surrogates": n_surrogates if has_inf else 0,
            "null_mean": mu,
            "null_sd": sd,
            "effect": float(observed[i] - test.null_mean[i]),
            "z": float((observed[i] - mu) / sd) if has_inf and sd > 0 else float("nan"),
            "p_value": float(test.p_value[i]),
            "p_adjusted": float(test.p_adjusted[i]),
            "correction": test.correction if has_inf else "",
            "family": test.family[i],
            "significant": bool(test.p_adjusted[i] < alpha) if has_inf else pd.NA,
            "locked": pd.NA if ratios.locked[i] is None else bool(ratios.locked[i]),
            "ratio_certainty": float(ratios.certainty[i]),
            "ci_low": ci.value.low,
            "ci_high": ci.value.high,
            "ci_level": float(ci_level) if n_bootstrap else float("nan"),
            "ci_method": ci_txt(r, ci),
            "warnings": "; ".join(dict.fromkeys(row_warnings[i])),
            "preferred_phase_ci_low": ci.angle.low,
            "preferred_phase_ci_high": ci.angle.high,
            "null_level": null_level if has_inf else "",
            "n_eff_cycles": float(ci.n_eff),
        })
    return finalize_table(rows)


@dataclass(frozen=True)
class ResultData:
    """Everything an analysis produced (``syncstats.analyze`` returns a subclass that
    adds ``save``; the report layer reads this). Immutable: derive a changed copy with
    ``dataclasses.replace``.

    Attributes
    ----------
    table : pandas.DataFrame
        The tidy table, one row per recording x pair x ratio x window x measure.
    diagnostics : pandas.DataFrame
        One row per signal: dominant frequency, peak sharpness, near-zero amplitude share,
        backward phase-step share, cycles, phase method, band, warnings.
    params : dict
        Every parameter of the run (JSON-serialisable), the seed entropy included.
    null_distribution : ndarray (n_rows, n_surrogates) or None
        Row i holds the surrogate values of table row i (None when nothing was tested).
    phase_differences : dict (signal_a, signal_b, p, q) -> ndarray
        psi wrapped to (−π, π], thinned to about 20 samples per cycle of the slower
        rhythm, over the analysed span (for histograms).
    phases : dict name -> ndarray
        Unwrapped phase of each signal on the analysed span (time vector in ``time_s``).
    time_s : ndarray
        Times (s) of the analysed span's samples.
    events : dict name -> ndarray
        Event times (s) of event-defined signals (for synchrograms).
    notes : tuple of str
        Plain-language statements for the report (null level, what was corrected ...).
    inputs : tuple of str
        Input files as the user named them (for provenance).
    epochs : syncstats.epochs.EpochResult or None
        Synchronization epochs and their test (``analyze(epochs=...)``); None when not asked.
    rhythm_views : dict name -> dict of small arrays
        For the report's signal figure: power spectrum and pass band, a short raw and
        band-passed stretch with its phase, event times (``syncstats._views``).
    null_comparison : pandas.DataFrame or None
        When several nulls were run on the same data (``syncstats.compare_nulls``): one
        row per table row x null with its p-values and which null to believe.
    trial_locking : syncstats.trial_locking.TrialLocking or None
        Locking over trials relative to a stimulus (``analyze(trial_locking=True)``).
    clusters : syncstats.clusters.GroupClusters or None
        Synchronization clusters of the group (``analyze(clusters=True)``).
    """

    table: pd.DataFrame
    diagnostics: pd.DataFrame
    params: dict
    null_distribution: np.ndarray | None = None
    phase_differences: dict = field(default_factory=dict)
    phases: dict = field(default_factory=dict)
    time_s: np.ndarray | None = None
    events: dict = field(default_factory=dict)
    notes: tuple = ()
    inputs: tuple = ()
    epochs: Any = None
    rhythm_views: dict = field(default_factory=dict)
    null_comparison: pd.DataFrame | None = None
    trial_locking: Any = None
    clusters: Any = None
