"""Tables: CSV / TSV / whitespace-delimited text (delimiter sniffed) and Parquet.

A table has a header row, one column per signal and either a time column (seconds, or
ISO 8601 date-times) or a sampling rate given by the caller. The time column decides
the sampling rate and shows missing samples (a step longer than 1.5 sampling
intervals); a step that differs from the sampling interval by more than 1 % (plus the
rounding of the written times) is irregular sampling and an error.
"""
from __future__ import annotations

import csv
import io
import re
import warnings
from fractions import Fraction
from pathlib import Path

import numpy as np
import pandas as pd

from syncstats._errors import SyncstatsInputError

from ._common import (
    _Block,
    _is_number,
    _library_notes,
    _library_warnings,
    _rate_fraction,
    _read_text,
    _select,
    _short,
    _Source,
)

__all__: list[str] = []

#: Column names recognised as the time column (compared lower-cased, stripped).
TIME_COLUMN_NAMES = (
    "time", "time_s", "t", "seconds", "sec", "secs", "time_sec", "time_seconds",
    "time (s)", "time[s]", "time [s]", "timestamp", "datetime",
)

#: Column names recognised as a time column in milliseconds (converted to seconds).
TIME_COLUMN_NAMES_MS = ("time_ms", "ms", "time (ms)", "time[ms]", "time [ms]", "t_ms")

_DELIMITERS = ("\t", ",", ";", "|")
#: Longest header row accepted (characters): a header names columns, and a longer first
#: row is a sign of a wrong file or missing line breaks.
_MAX_HEADER_CHARS = 1_000_000
#: Largest magnitude of a time value (s), about 31,700 years: beyond it the steps
#: between samples can no longer be resolved in float64.
_MAX_TIME_S = 1e12
_REL_JITTER = 0.01  # sampling interval may vary by 1 % (plus time rounding)
_GAP_FACTOR = 1.5   # a step longer than 1.5 intervals means missing samples


# --------------------------------------------------------------------------- reading

def _sniff_delimiter(p: Path, lines: list[str]) -> str | None:
    """Pick the delimiter that splits the first lines into the same number (>1) of fields.

    Returns None for whitespace-separated text and "," for a single column.
    """
    if p.suffix.lower() == ".tsv":
        return "\t"
    sample = lines[:20]
    for d in _DELIMITERS:
        counts = {len(_fields(p, ln, d)) for ln in sample}
        if len(counts) == 1 and counts.pop() > 1:
            return d
    ws = {len(ln.split()) for ln in sample}
    if len(ws) == 1 and ws.pop() > 1:
        return None
    return ","


def _fields(p: Path, line: str, delimiter: str) -> list[str]:
    """One line split by the csv module; its errors (a cell over its size limit) become
    a sentence."""
    try:
        return next(csv.reader([line], delimiter=delimiter))
    except csv.Error as err:
        raise SyncstatsInputError(
            f"File '{p}' has a line the table reader cannot split ({_short(err)}), near "
            f"{line[:40]!r}; no sample value is that long, so check that the file is a "
            "table with one row per line."
        ) from err


def _split_header(line: str, delimiter: str | None, p: Path) -> list[str]:
    if delimiter is None:
        return line.split()
    return [c.strip() for c in _fields(p, line, delimiter)]


def _read_delimited_frame(p: Path, text: str | None = None, *, nrows: int | None = None
                          ) -> pd.DataFrame:
    """Read a delimited text table with a required header row.

    Leading lines that start with ``#`` are skipped. The frame's ``attrs`` carry
    ``first_data_line`` (file line number of the first data row).
    """
    if text is None:
        text = _read_text(p, "file")
    skip = 0
    lines: list[str] = []
    for raw in io.StringIO(text, newline=None):
        line = raw.rstrip("\r\n")
        if not lines and (not line.strip() or line.lstrip().startswith("#")):
            skip += 1
            continue
        if line.strip():
            lines.append(line)
        if len(lines) >= 21:
            break
    if not lines:
        raise SyncstatsInputError(
            f"File '{p}' has no header row and no data (only blank or '#' lines); write a "
            "header row naming the columns, then one row per sample."
        )
    if len(lines[0]) > _MAX_HEADER_CHARS:
        raise SyncstatsInputError(
            f"File '{p}' has a first row of {len(lines[0]):,} characters, longer than the "
            f"{_MAX_HEADER_CHARS:,} accepted for a header row; check that it is a table "
            "with a header row naming the columns and one row per line."
        )
    delimiter = _sniff_delimiter(p, lines)
    header = _split_header(lines[0], delimiter, p)
    if all(_is_number(h) for h in header):
        raise SyncstatsInputError(
            f"File '{p}' has no header row (its first row {lines[0][:60]!r} is all "
            "numbers); add a first row that names the columns, e.g. 'time_s,ecg,resp'."
        )
    dupes = sorted({h for h in header if h and header.count(h) > 1})
    if dupes:
        raise SyncstatsInputError(
            f"File '{p}' names column(s) {', '.join(map(repr, dupes))} more than once in "
            "its header; give every column a unique name."
        )
    notes: list[str] = []
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            frame = pd.read_csv(
                io.StringIO(text, newline=None),
                skiprows=skip,
                sep=r"\s+" if delimiter is None else delimiter,
                skipinitialspace=True,
                index_col=False,
                nrows=nrows,
            )
    except (pd.errors.ParserError, ValueError) as err:
        raise SyncstatsInputError(
            f"File '{p}' could not be parsed as a delimited table ({_short(err)}); check "
            "that every row has as many fields as the header."
        ) from err
    if any(issubclass(w.category, pd.errors.ParserWarning) for w in caught):
        _check_extra_fields(p, text.splitlines(), skip, delimiter, len(header))
        notes.append("some rows have more fields than the header; the extra fields are "
                     "empty and were ignored")
    notes += _library_notes([w for w in caught
                             if not issubclass(w.category, pd.errors.ParserWarning)],
                            "the table reader (pandas)")
    frame.columns = [str(h) for h in header] if len(header) == frame.shape[1] else [
        str(c).strip() for c in frame.columns]
    frame.attrs["first_data_line"] = skip + 2
    frame.attrs["notes"] = notes
    return frame


def _check_extra_fields(p: Path, lines: list[str], skip: int, delimiter: str | None,
                        width: int) -> None:
    """Rows longer than the header are only accepted when the extra fields are empty."""
    for i in range(skip + 1, len(lines)):
        if not lines[i].strip():
            continue
        fields = _split_header(lines[i], delimiter, p)
        if len(fields) > width and any(f.strip() for f in fields[width:]):
            raise SyncstatsInputError(
                f"File '{p}', line {i + 1} has {len(fields)} fields but the header names "
                f"{width} columns; give every column a name in the header row."
            )


def _read_parquet_frame(p: Path) -> pd.DataFrame:
    """Read a Parquet file with pandas/pyarrow; a named or date-time index becomes a column."""
    notes: list[str] = []
    try:
        with _library_warnings(notes, "the Parquet reader (pandas/pyarrow)"):
            frame = pd.read_parquet(p)
    except Exception as err:  # pyarrow raises several unrelated types
        raise SyncstatsInputError(
            f"File '{p}' could not be read as Parquet ({_short(err)}); check that it is a "
            "complete Parquet file."
        ) from err
    if not isinstance(frame.index, pd.RangeIndex):
        if frame.index.name is not None or isinstance(frame.index, pd.DatetimeIndex):
            frame = frame.reset_index()
    frame.columns = [str(c) for c in frame.columns]
    frame.attrs["first_data_line"] = None
    frame.attrs["notes"] = notes
    return frame


# --------------------------------------------------------------------------- frame -> source

def _where_row(frame: pd.DataFrame, i: int) -> str:
    first = frame.attrs.get("first_data_line")
    return f"line {first + i}" if first is not None else f"row {i}"


def _drop_index_column(frame: pd.DataFrame, p: Path, notes: list[str]) -> pd.DataFrame:
    """Drop unnamed columns that are empty or a written row index 0..n-1 (with a note)."""
    cols = list(frame.columns)
    unnamed = [i for i, c in enumerate(cols) if c == "" or c.startswith("Unnamed: ")]
    if not unnamed:
        return frame
    empty = [i for i in unnamed if frame.iloc[:, i].isna().all()]
    if empty:
        notes.append(f"dropped {len(empty)} unnamed empty column(s) (a trailing delimiter?)")
        frame = frame.iloc[:, [i for i in range(len(cols)) if i not in empty]]
        cols = list(frame.columns)
        unnamed = [i for i, c in enumerate(cols) if c == "" or c.startswith("Unnamed: ")]
        if not unnamed:
            return frame
    if unnamed == [0]:
        first = pd.to_numeric(frame.iloc[:, 0], errors="coerce").to_numpy(dtype=float)
        if np.array_equal(first, np.arange(len(frame), dtype=float)):
            notes.append("dropped the unnamed first column (a row index 0, 1, 2, ...)")
            return frame.iloc[:, 1:]
    i = unnamed[0]
    raise SyncstatsInputError(
        f"File '{p}': column {i + 1} has no name in the header row; give every column a "
        "name (the time column and each signal)."
    )


def _find_time_column(cols: list[str], time_column: str | None, p: Path) -> str | None:
    if time_column is not None:
        if time_column not in cols:
            raise SyncstatsInputError(
                f"File '{p}' has no column {time_column!r} to use as the time column; its columns "
                f"are {', '.join(map(repr, cols))}, pick one of those."
            )
        return time_column
    names = TIME_COLUMN_NAMES + TIME_COLUMN_NAMES_MS
    found = [c for c in cols if c.strip().lower() in names]
    if len(found) > 1:
        raise SyncstatsInputError(
            f"File '{p}' has several time-like columns ({', '.join(map(repr, found))}); "
            "name the one that holds the sample times."
        )
    return found[0] if found else None


def _is_ms_name(col: str) -> bool:
    low = col.strip().lower()
    return low in TIME_COLUMN_NAMES_MS or low.endswith("_ms")


def _time_values(frame: pd.DataFrame, col: str, p: Path) -> tuple[np.ndarray, str | None]:
    """Time column as seconds (float64) and the ISO start when it holds date-times."""
    raw = frame[col]
    if pd.api.types.is_timedelta64_dtype(raw):
        return raw.dt.total_seconds().to_numpy(dtype=float), None
    if pd.api.types.is_datetime64_any_dtype(raw):
        stamps = raw
    elif pd.api.types.is_numeric_dtype(raw) and not pd.api.types.is_bool_dtype(raw):
        t = raw.to_numpy(dtype=float)
        _check_time_missing(frame, t, col, p)
        return t, None
    else:
        num = pd.to_numeric(raw, errors="coerce")
        if num.notna().sum() == raw.notna().sum():
            t = num.to_numpy(dtype=float)
            _check_time_missing(frame, t, col, p)
            return t, None
        if num.notna().any():
            i = int(np.flatnonzero(num.isna() & raw.notna())[0])
            raise SyncstatsInputError(
                f"File '{p}', time column {col!r}, {_where_row(frame, i)}: "
                f"{raw.iloc[i]!r} is not a number of seconds; write every time as a number "
                "(or every time as an ISO 8601 date-time)."
            )
        try:
            stamps = pd.to_datetime(raw, format="ISO8601")
        except (ValueError, TypeError) as err:
            raise SyncstatsInputError(
                f"File '{p}': time column {col!r} holds neither numbers of seconds nor ISO "
                f"8601 date-times ({_short(err)}); write the times in seconds, or give "
                "the sampling rate and name another time column."
            ) from err
    if stamps.isna().any():
        i = int(np.flatnonzero(stamps.isna().to_numpy())[0])
        raise SyncstatsInputError(
            f"File '{p}', time column {col!r}, {_where_row(frame, i)}: the time is empty; "
            "every row needs a time (leave signal cells empty for missing samples instead)."
        )
    t = (stamps - stamps.iloc[0]).dt.total_seconds().to_numpy(dtype=float)
    start = stamps.iloc[0]
    return t, start.isoformat()


def _check_time_missing(frame: pd.DataFrame, t: np.ndarray, col: str, p: Path) -> None:
    bad = np.flatnonzero(~np.isfinite(t))
    if bad.size:
        i = int(bad[0])
        raise SyncstatsInputError(
            f"File '{p}', time column {col!r}, {_where_row(frame, i)}: the time is empty or "
            "not finite; every row needs a time (leave signal cells empty for missing "
            "samples instead)."
        )


def _decimal_resolution(t: np.ndarray) -> float:
    """Rounding step of written times (10**-d for the fewest decimals d that fit), or 0."""
    scale = max(1.0, float(np.max(np.abs(t))))
    eps = 8 * np.finfo(float).eps * scale
    for d in range(0, 10):
        step = 10.0 ** -d
        if np.max(np.abs(np.round(t, d) - t)) <= max(1e-3 * step, eps):
            return step
    return 0.0


def _analyse_time(frame: pd.DataFrame, t: np.ndarray, col: str, p: Path, fs: float | None
                  ) -> tuple[float, list[tuple[int, int]], list[str]]:
    """Sampling rate and continuous runs (row ranges) from a time column in seconds."""
    n = len(t)
    notes: list[str] = []
    far = np.flatnonzero(np.abs(t) > _MAX_TIME_S)
    if far.size:
        i = int(far[0])
        raise SyncstatsInputError(
            f"File '{p}', time column {col!r}, {_where_row(frame, i)}: the time {t[i]:.6g} s "
            f"lies beyond {_MAX_TIME_S:.0e} s (about 31,700 years); write the times in "
            "seconds from the start of the recording."
        )
    if n < 2:
        if fs is None:
            raise SyncstatsInputError(
                f"File '{p}' has a single row, so its time column {col!r} cannot give a "
                "sampling rate; add rows or give the sampling rate."
            )
        return fs, [(0, n)], notes
    dt = np.diff(t)
    bad = np.flatnonzero(dt <= 0)
    if bad.size:
        i = int(bad[0]) + 1
        what = "repeats" if dt[i - 1] == 0 else "goes back from"
        raise SyncstatsInputError(
            f"File '{p}', time column {col!r}, {_where_row(frame, i)}: the time {what} "
            f"{t[i - 1]:.9g} s" + (f" to {t[i]:.9g} s" if dt[i - 1] != 0 else "")
            + "; sort the rows by time and remove duplicate rows."
        )
    res = _decimal_resolution(t)
    med = float(np.median(dt))
    jumps = np.flatnonzero(dt > _GAP_FACTOR * med)
    starts = np.r_[0, jumps + 1]
    stops = np.r_[jumps + 1, n]
    counts = stops - 1 - starts
    spans = t[stops - 1] - t[starts]
    if counts.sum() == 0:
        raise SyncstatsInputError(
            f"File '{p}': the time column {col!r} has no two consecutive regular samples; "
            "check the time column (seconds) or give the sampling rate for a regular grid."
        )
    fs_est = float(counts.sum() / spans.sum())
    if fs is not None:
        if abs(fs_est - fs) > _REL_JITTER * fs:
            raise SyncstatsInputError(
                f"File '{p}': the sampling rate given, {fs:g} Hz, disagrees with the time column "
                f"{col!r}, whose steps give {fs_est:.6g} Hz; leave the rate out to use the "
                "time column, or fix it."
            )
        rate = fs
    else:
        rate = fs_est
        nearest = round(fs_est)
        tol = 2 * res * len(starts) / float(spans.sum()) + 1e-9
        if nearest > 0 and abs(fs_est - nearest) <= fs_est * tol:
            rate = float(nearest)
        notes.append(f"sampling rate {rate:.9g} Hz taken from the time column {col!r}")
    nominal = 1.0 / rate
    inside = np.ones(n - 1, dtype=bool)
    inside[jumps] = False
    dev = np.abs(dt - nominal)
    irregular = np.flatnonzero(inside & (dev > _REL_JITTER * nominal + res * (1 + 1e-6)))
    if irregular.size:
        i = int(irregular[0]) + 1
        raise SyncstatsInputError(
            f"File '{p}', time column {col!r}, {_where_row(frame, i)}: the sampling "
            f"interval is {dt[i - 1]:.6g} s where {nominal:.6g} s is expected (it varies by "
            "more than 1 %), so the file is not regularly sampled; syncstats never "
            "interpolates, so resample it onto a regular grid before reading."
        )
    return rate, list(zip(starts.tolist(), stops.tolist())), notes


def _signal_values(frame: pd.DataFrame, col: str, p: Path) -> np.ndarray:
    """One signal column as float64; empty cells become NaN (gaps), text is an error."""
    raw = frame[col]
    if pd.api.types.is_bool_dtype(raw):
        raise SyncstatsInputError(
            f"File '{p}': column {col!r} holds true/false values, not numbers; exclude it "
            "of the chosen signals or write it as numbers."
        )
    if pd.api.types.is_numeric_dtype(raw):
        x = raw.to_numpy(dtype=float, na_value=np.nan)
    else:
        num = pd.to_numeric(raw, errors="coerce")
        offending = np.flatnonzero((num.isna() & raw.notna()).to_numpy())
        if offending.size:
            i = int(offending[0])
            hint = (" (it looks like a decimal comma: write numbers with a decimal point)"
                    if re.fullmatch(r"\s*[-+]?\d+,\d+\s*", str(raw.iloc[i])) else "")
            raise SyncstatsInputError(
                f"File '{p}', column {col!r}, {_where_row(frame, i)}: {raw.iloc[i]!r} is not "
                f"a number{hint}; fix the value (leave the cell empty for a missing sample), "
                "or leave this column out of the chosen signals."
            )
        x = num.to_numpy(dtype=float, na_value=np.nan)
    inf = np.flatnonzero(np.isinf(x))
    if inf.size:
        i = int(inf[0])
        raise SyncstatsInputError(
            f"File '{p}', column {col!r}, {_where_row(frame, i)}: the value is infinite; "
            "replace it by a finite number or leave the cell empty for a missing sample."
        )
    return x


def _frame_to_source(frame: pd.DataFrame, p: Path, kind: str, *, fs: float | None,
                     time_column: str | None, signals: list[str] | None) -> _Source:
    notes: list[str] = list(frame.attrs.get("notes", []))
    if frame.shape[0] == 0:
        raise SyncstatsInputError(
            f"File '{p}' has a header but no data rows; write one row per sample below "
            "the header."
        )
    frame = _drop_index_column(frame, p, notes)
    cols = [str(c) for c in frame.columns]
    tcol = _find_time_column(cols, time_column, p)
    if tcol is None and fs is None:
        raise SyncstatsInputError(
            f"File '{p}' has no time column (looked for {', '.join(TIME_COLUMN_NAMES[:4])}, "
            "...) and no sampling rate was given; give the sampling rate, or name the "
            "column with the sample times in seconds."
        )
    available = [c for c in cols if c != tcol]
    if signals is not None and tcol is not None and tcol in signals:
        raise SyncstatsInputError(
            f"File '{p}': {tcol!r} is the time column and cannot also be a signal; leave "
            "it out of the chosen signals, or name another time column."
        )
    if not available:
        raise SyncstatsInputError(
            f"File '{p}' has no signal columns besides the time column {tcol!r}; if it is "
            "a list of event times, give it as an event list instead."
        )
    chosen = _select(available, signals, p, "column")
    start_time = None
    origin = 0.0
    if tcol is not None:
        t, start_time = _time_values(frame, tcol, p)
        if start_time is None and _is_ms_name(tcol):
            t = t / 1000.0
            notes.append(f"time column {tcol!r} read as milliseconds")
        rate, runs, tnotes = _analyse_time(frame, t, tcol, p, fs)
        notes += tnotes
        origin = float(t[0])
        if origin != 0.0:
            notes.append(
                f"the time column starts at {origin:.9g} s; times here (and of event "
                "files) count from that first row"
            )
        t_rel = t - origin
    else:
        rate = float(fs)
        runs = [(0, frame.shape[0])]
        t_rel = None
    rate_frac = _rate_fraction(rate)
    blocks = None
    if len(runs) > 1:
        blocks = [
            _Block(Fraction(a) / rate_frac, Fraction(b) / rate_frac, float(t_rel[a]))
            for a, b in runs
        ]
    data = {c: _signal_values(frame, c, p) for c in chosen}
    return _Source(
        path=p, name=p.stem, kind=kind, signals=data,
        rates={c: rate_frac for c in chosen}, units={c: "" for c in chosen},
        start_time=start_time, blocks=blocks, notes=notes, time_origin_s=origin,
        break_source="time column",
    )


def _load_delimited(p: Path, *, fs: float | None, time_column: str | None,
                    signals: list[str] | None) -> _Source:
    frame = _read_delimited_frame(p)
    kind = {".tsv": "TSV", ".txt": "text table"}.get(p.suffix.lower(), "CSV")
    return _frame_to_source(frame, p, kind, fs=fs, time_column=time_column, signals=signals)


def _load_parquet(p: Path, *, fs: float | None, time_column: str | None,
                  signals: list[str] | None) -> _Source:
    frame = _read_parquet_frame(p)
    return _frame_to_source(frame, p, "Parquet", fs=fs, time_column=time_column,
                            signals=signals)

