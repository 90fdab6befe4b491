"""The tidy results table (contract schema in DESIGN.md) and the result object."""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping

import numpy as np
import pandas as pd

__all__ = ["COLUMNS", "empty_table", "finalize_table", "ResultData"]

#: contract columns, in order; more may follow them
COLUMNS = (
    "recording",
    "signal_a",
    "signal_b",
    "ratio",
    "p",
    "q",
    "window_start_s",
    "window_end_s",
    "measure",
    "value",
    "n_cycles",
    "preferred_phase",
    "surrogate",
    "n_surrogates",
    "null_mean",
    "null_sd",
    "effect",
    "z",
    "p_value",
    "p_adjusted",
    "correction",
    "family",
    "significant",
    "ci_low",
    "ci_high",
    "ci_level",
    "ci_method",
    "warnings",
)

_DTYPES = {
    "recording": "object",
    "signal_a": "object",
    "signal_b": "object",
    "ratio": "object",
    "p": "int64",
    "q": "int64",
    "window_start_s": "float64",
    "window_end_s": "float64",
    "measure": "object",
    "value": "float64",
    "n_cycles": "float64",
    "preferred_phase": "float64",
    "surrogate": "object",
    "n_surrogates": "int64",
    "null_mean": "float64",
    "null_sd": "float64",
    "effect": "float64",
    "z": "float64",
    "p_value": "float64",
    "p_adjusted": "float64",
    "correction": "object",
    "family": "object",
    "significant": "object",
    "ci_low": "float64",
    "ci_high": "float64",
    "ci_level": "float64",
    "ci_method": "object",
    "warnings": "object",
}


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
            df[c] = np.nan if _DTYPES[c] == "float64" else ""
    extra = [c for c in df.columns if c not in COLUMNS]
    df = df[list(COLUMNS) + extra]
    for c in COLUMNS:
        if c == "significant":
            df[c] = df[c].astype("boolean")
        elif _DTYPES[c] == "object":
            df[c] = df[c].fillna("").astype(str).astype(object)
        else:
            df[c] = df[c].astype(_DTYPES[c])
    return df.reset_index(drop=True)


@dataclass
class ResultData:
    """Everything an analysis produced (``syncstats.analyze`` returns a subclass that
    adds ``save``; the report layer reads this).

    Attributes
    ----------
    table : pandas.DataFrame
        The tidy table, one row per recording x pair x ratio x window x measure.
    diagnostics : pandas.DataFrame
        One row per signal: dominant frequency, peak sharpness, near-zero amplitude share,
        backward phase-step share, cycles, phase method, band, warnings.
    params : dict
        Every parameter of the run (JSON-serialisable), the seed entropy included.
    null_distributions : dict int -> ndarray
        Row index of ``table`` -> the surrogate values of that row (length n_surrogates).
    phase_differences : dict (signal_a, signal_b, p, q) -> ndarray
        psi wrapped to (−π, π], thinned to about 20 samples per cycle of the slower
        rhythm, over the analysed span (for histograms).
    phases : dict name -> ndarray
        Unwrapped phase of each signal on the analysed span (time vector in ``time_s``).
    time_s : ndarray
        Times (s) of the analysed span's samples.
    events : dict name -> ndarray
        Event times (s) of event-defined signals (for synchrograms).
    notes : list of str
        Plain-language statements for the report (null level, what was corrected ...).
    """

    table: pd.DataFrame
    diagnostics: pd.DataFrame
    params: dict
    null_distributions: dict = field(default_factory=dict)
    phase_differences: dict = field(default_factory=dict)
    phases: dict = field(default_factory=dict)
    time_s: np.ndarray | None = None
    events: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)
    inputs: list = field(default_factory=list)
