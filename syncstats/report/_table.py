"""results.csv: the tidy table, every column at full precision."""
from __future__ import annotations

import csv
import json
from pathlib import Path


import pandas as pd

from ..results import COLUMNS, empty_table

__all__ = ["write_results_csv", "read_results_csv", "column_dtypes", "FORMULA_START"]

#: a text cell starting with one of these is read as a formula by spreadsheets; such cells
#: (and cells starting with the quote itself, so the rule can be undone) get a leading
#: single quote, which makes a spreadsheet show the cell as text (common practice, the
#: OWASP-style rule against CSV formula injection)
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_QUOTE = "'"

_TEXT = ("object", "str", "string")
_BOOL = ("bool", "boolean")


def column_dtypes(table: pd.DataFrame) -> dict:
    """Column name -> dtype name (recorded in provenance.json so the CSV reads back exactly)."""
    return {str(c): str(t) for c, t in table.dtypes.items()}


def write_results_csv(result, path) -> Path:
    """Write ``result.table`` to ``path`` as UTF-8 CSV (no index, full float precision).

    Missing values are written as empty fields; ``significant`` as True / False / empty.
    Floats are written with the shortest representation that reads back to the same
    double, so :func:`read_results_csv` returns the identical table.

    Text cells (labels, never numbers) that a spreadsheet would run as a formula are
    written with a leading single quote (see :data:`FORMULA_START`);
    :func:`read_results_csv` removes it again.
    """
    path = Path(path)
    table = result.table.copy()
    lone_cr = False
    for c in table.columns:
        if not (pd.api.types.is_object_dtype(table[c]) or pd.api.types.is_string_dtype(table[c])):
            continue
        table[c] = table[c].map(_quote_text)
        lone_cr = lone_cr or table[c].map(lambda v: isinstance(v, str) and "\r" in v).any()
    # the csv writer quotes a field holding a line break only if it is the line terminator,
    # so a label with a carriage return in it needs every text field quoted
    table.to_csv(path, index=False, encoding="utf-8", lineterminator="\n",
                 quoting=csv.QUOTE_NONNUMERIC if lone_cr else csv.QUOTE_MINIMAL)
    return path


def _quote_text(v):
    if isinstance(v, str) and v.startswith(FORMULA_START + (_QUOTE,)):
        return _QUOTE + v
    return v


def _unquote_text(v):
    if isinstance(v, str) and v.startswith(_QUOTE):
        return v[1:]
    return v


def _dtypes_beside(path: Path) -> dict:
    prov = path.with_name("provenance.json")
    try:
        rec = json.loads(prov.read_text(encoding="utf-8"))
        return dict(rec.get("table", {}).get("dtypes", {}))
    except (OSError, ValueError, AttributeError):
        return {}


def read_results_csv(path, *, dtypes: dict | None = None) -> pd.DataFrame:
    """Read a results.csv written by syncstats back into its original dtypes.

    Parameters
    ----------
    path : path-like
    dtypes : dict, optional
        Column -> dtype name. Default: the contract dtypes for contract columns and, for
        extra columns, those recorded in the ``provenance.json`` beside the file (pandas
        infers them when there is none).

    Returns
    -------
    pandas.DataFrame
        Text columns keep "" rather than NaN; ``significant`` is a nullable boolean.
    """
    path = Path(path)
    recorded = dict(_dtypes_beside(path) if dtypes is None else dtypes)
    ref = empty_table().dtypes
    header = pd.read_csv(path, nrows=0).columns.tolist()
    kinds = {}
    for c in header:
        if c == "significant":
            kinds[c] = "boolean"
        elif c in COLUMNS:
            kinds[c] = str(ref[c])
        else:
            kinds[c] = recorded.get(c)
    as_text = [c for c, k in kinds.items() if k in _TEXT or k in _BOOL]
    na = {c: [""] for c in header if c not in as_text}
    df = pd.read_csv(path, dtype={c: str for c in as_text}, keep_default_na=False,
                     na_values=na)
    for c in df.columns:
        if pd.api.types.is_object_dtype(df[c]) or pd.api.types.is_string_dtype(df[c]):
            df[c] = df[c].map(_unquote_text)
    for c, k in kinds.items():
        if k is None:
            continue
        if k in _BOOL:
            df[c] = df[c].map({"True": True, "False": False, "": pd.NA}).astype("boolean")
        elif k == "object":
            df[c] = df[c].astype(object)
        else:
            try:
                df[c] = df[c].astype(k)
            except (TypeError, ValueError):
                pass
    return df
