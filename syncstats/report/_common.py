"""Shared vocabulary of the report: display names, number formats, per-pair summaries.

Nothing here computes a statistic: rows of the result table are grouped, sorted and put
into words, exactly as the analysis wrote them.
"""
from __future__ import annotations

import math
from functools import cached_property

import numpy as np
import pandas as pd

from ..inference import CORRECTION_METHODS
from ..measures import MEASURE_METHODS
from ..nulls import SURROGATE_METHODS

__all__: list[str] = []

def measure_name(m) -> str:
    e = MEASURE_METHODS.get(str(m))
    return e.label if e else str(m)


def surrogate_name(s) -> str:
    e = SURROGATE_METHODS.get(str(s))
    return e.label if e else str(s)


def correction_name(c) -> str:
    e = CORRECTION_METHODS.get(str(c))
    return e.label if e else ("no" if str(c) == "" else str(c))


def is_missing(x) -> bool:
    if x is None or x is pd.NA:
        return True
    try:
        return bool(pd.isna(x))
    except (TypeError, ValueError):
        return False


def fmt_num(x, digits: int = 2) -> str:
    """A value for reading: fixed decimals, '—' when missing."""
    if is_missing(x):
        return "—"
    x = float(x)
    if not math.isfinite(x):
        return "∞" if x > 0 else ("−∞" if x < 0 else "—")
    if x != 0 and abs(x) < 10 ** (-digits):
        if abs(x) >= 1e-4:
            return f"{x:.{digits + 2}f}".rstrip("0").replace("-", "−")
        return f"{x:.1e}".replace("-", "−")
    return f"{x:.{digits}f}".replace("-", "−")


def fmt_p(p) -> str:
    """A p-value for reading (never rounded down to 0)."""
    if is_missing(p):
        return "—"
    p = float(p)
    if p >= 0.1:
        return f"{p:.2f}"
    if p >= 0.001:
        return f"{p:.3f}"
    if p >= 0.0001:
        return f"{p:.4f}"
    return f"{p:.1e}"


def fmt_level(level) -> str:
    """Confidence level as a percentage ('95')."""
    if is_missing(level):
        return ""
    level = float(level)
    if level <= 1:
        level *= 100
    return f"{level:g}"


def ratio_words(a: str, b: str, p: int, q: int) -> str:
    """The ratio convention in words: A makes p cycles while B makes q."""
    cyc = lambda n: "cycle" if n == 1 else "cycles"  # noqa: E731
    return f"{a} makes {p} {cyc(p)} while {b} makes {q}"


def _truthy(x) -> bool:
    return (not is_missing(x)) and bool(x)


def _group_name(label: str) -> str:
    return label if "group" in label.lower() else f"group {label}"


class PairSummary:
    """The rows of one pair (or one group) and the row that best states the finding.

    ``rows`` (all rows of the pair), ``whole`` (rows spanning the whole analysed record)
    and ``windows`` (rows of windows inside it) are cut from the table on first use, so
    summarising tens of thousands of pairs stays cheap.
    """

    def __init__(self, recording, signal_a, signal_b, table, idx, whole_idx, win_idx, headline, status,
                 also_locked=None, alpha=None):
        self.recording, self.signal_a, self.signal_b = recording, signal_a, signal_b
        self._table, self._idx, self._whole_idx, self._win_idx = table, idx, whole_idx, win_idx
        self.headline: pd.Series | None = headline
        self.status: str = status  # "locked", "dependent", "inconclusive", "none", "untested", "failed"
        self.also_locked: list = list(also_locked or [])  # other significant ratios
        self.alpha: float | None = alpha

    @property
    def has_whole(self) -> bool:
        return len(self._whole_idx) > 0

    @property
    def has_windows(self) -> bool:
        return len(self._win_idx) > 0

    @property
    def ratios(self) -> list:
        """Ratios tested for the pair, in table order."""
        return list(dict.fromkeys(self._table["ratio"].to_numpy()[self._idx].tolist()))

    @property
    def whole_positions(self):
        return self._table.index[self._whole_idx]

    @property
    def window_positions(self):
        return self._table.index[self._win_idx]

    @cached_property
    def rows(self) -> pd.DataFrame:
        return self._table.iloc[self._idx]

    @cached_property
    def whole(self) -> pd.DataFrame:
        return self._table.iloc[self._whole_idx]

    @cached_property
    def windows(self) -> pd.DataFrame:
        return self._table.iloc[self._win_idx]

    @property
    def is_group(self) -> bool:
        return self.signal_b == ""

    @property
    def label(self) -> str:
        base = _group_name(self.signal_a) if self.is_group else f"{self.signal_a} and {self.signal_b}"
        return f"{self.recording} · {base}" if self.recording else base

    @property
    def key(self) -> tuple:
        return (self.recording, self.signal_a, self.signal_b)


def _split_windows(rows: pd.DataFrame) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Separate whole-record rows from window rows, per (ratio, measure)."""
    whole_idx, win_idx = [], []
    for _, g in rows.groupby(["ratio", "measure"], sort=False, dropna=False):
        if len(g) == 1:
            whole_idx.extend(g.index)
            continue
        start = g["window_start_s"].to_numpy(float)
        end = g["window_end_s"].to_numpy(float)
        span = end - start
        if not (np.isfinite(span).all() and len(span) > 1):
            win_idx.extend(g.index)  # spans unknown: treat every row as a window
            continue
        i = int(np.argmax(span))
        others = np.delete(span, i)
        covers = start[i] <= start.min() and end[i] >= end.max()
        if covers and span[i] > 1.5 * others.max():
            whole_idx.append(g.index[i])
            win_idx.extend(np.delete(g.index.to_numpy(), i))
        else:
            win_idx.extend(g.index)
    return rows.loc[sorted(whole_idx)], rows.loc[sorted(win_idx)]


def _rank_key(rows: pd.DataFrame, measure_order: list) -> pd.DataFrame:
    sig = rows["significant"].map(_truthy)
    locked = rows.apply(_is_locked, axis=1) if len(rows) else sig
    order = {m: i for i, m in enumerate(measure_order)}
    key = pd.DataFrame(
        {
            "not_locked": ~locked.astype(bool),
            "not_sig": ~sig.astype(bool),
            "padj": rows["p_adjusted"].astype(float).fillna(np.inf),
            "praw": rows["p_value"].astype(float).fillna(np.inf),
            "mrank": rows["measure"].map(lambda m: order.get(m, len(order))),
            "negz": -rows["z"].astype(float).fillna(-np.inf),
            "nege": -rows["effect"].astype(float).fillna(-np.inf),
            "negv": -rows["value"].astype(float).fillna(-np.inf),
        },
        index=rows.index,
    )
    return key


def _is_locked(row) -> bool:
    """The row's ``locked`` flag; tables without one (older files) fall back to
    ``significant``."""
    lk = row.get("locked") if hasattr(row, "get") else None
    return _truthy(row["significant"]) if is_missing(lk) else _truthy(lk)


def best_row(rows: pd.DataFrame, measure_order: list):
    """Locked first (the selected ratio, significant), then significant, then smallest
    corrected p, smallest raw p, preferred measure,
    largest effect (value above its null mean: when p-values sit at their floor 1/(1+S),
    z is dominated by a tiny null spread, the effect is what a reader compares), largest
    value."""
    if rows.empty:
        return None
    key = _rank_key(rows, measure_order)
    key = key.sort_values(["not_locked", "not_sig", "padj", "praw", "mrank", "nege", "negv"], kind="stable")
    return rows.loc[key.index[0]]


def measure_order(table: pd.DataFrame, params: dict) -> list:
    ms = params.get("measures") if isinstance(params, dict) else None
    if isinstance(ms, str):
        ms = [ms]
    out = [str(m) for m in (ms or [])]
    for m in table["measure"].tolist():
        if m not in out:
            out.append(m)
    return out


def _at_resolution_floor(row, table=None, alpha=None) -> bool:
    """True when no surrogate reached the observed value (p = 1/(1 + S), the smallest
    p-value S surrogates can give), the row is not significant, and more surrogates could
    change that: S is below what the correction needs for this family size (the
    correction registry's ``min_surrogates``). With enough surrogates a corrected p above
    alpha is an answer, not a lack of resolution."""
    n, p = row["n_surrogates"], row["p_value"]
    if is_missing(n) or is_missing(p) or int(n) <= 0:
        return False
    if float(p) > (1.0 + 1e-9) / (1 + int(n)):
        return False
    corr = CORRECTION_METHODS.get(str(row["correction"]))
    if corr is None or alpha is None or table is None:
        return True
    first = str(row.get("family", "")).split(" ", 1)[0]
    if first.isdigit():
        m = int(first)
    else:
        m = int(((table["recording"] == row["recording"]) & (table["measure"] == row["measure"])).sum())
    return int(n) < corr.min_surrogates(m, float(alpha))


def summarize_pairs(table: pd.DataFrame, params: dict) -> list[PairSummary]:
    """One summary per (recording, signal_a, signal_b), in table order.

    The ranking key is computed once for the whole table (a report of 200 signals has
    about 20 000 pairs); the headline of a pair is the first row of its ranking.
    """
    if table is None or table.empty:
        return []
    morder = measure_order(table, params)
    alpha = params.get("alpha") if isinstance(params, dict) else None
    key = _rank_key(table, morder)
    order_cols = ["not_locked", "not_sig", "padj", "praw", "mrank", "nege", "negv"]
    rank = np.empty(len(table), dtype=np.int64)
    rank[np.lexsort([key[c].to_numpy() for c in reversed(order_cols)])] = np.arange(len(table))
    has_windows = bool(table.groupby(["recording", "signal_a", "signal_b", "ratio", "measure"], sort=False,
                                     dropna=False).size().max() > 1)
    sig_all = table["significant"].map(_truthy).to_numpy(bool)
    value_ok = table["value"].notna().to_numpy()
    tested_all = (table["p_adjusted"].notna() | table["p_value"].notna()).to_numpy()
    ratio_all = table["ratio"].to_numpy()
    out = []
    groups = table.groupby(["recording", "signal_a", "signal_b"], sort=False, dropna=False).indices
    positions = pd.Series(np.arange(len(table)), index=table.index)
    for (rec, a, b), idx in groups.items():
        idx = np.sort(idx)
        if has_windows:
            whole, windows = _split_windows(table.iloc[idx])
            whole_idx = positions.loc[whole.index].to_numpy()
            win_idx = positions.loc[windows.index].to_numpy()
        else:
            whole_idx, win_idx = idx, idx[:0]
        cpos = whole_idx if whole_idx.size else win_idx
        valid = cpos[value_ok[cpos]]
        if valid.size == 0:
            head, status = None, "failed"
        else:
            head = table.iloc[valid[np.argmin(rank[valid])]]
            if not tested_all[valid].any():
                status = "untested"
            elif _is_locked(head):
                status = "locked"
            else:
                status = "dependent" if _truthy(head["significant"]) else "none"
            if status == "none" and _at_resolution_floor(head, table, alpha):
                status = "inconclusive"
        also = []
        if status in ("locked", "dependent"):  # significant but not the locking ratio
            sig = cpos[sig_all[cpos]]
            also = [r for r in dict.fromkeys(ratio_all[sig].tolist()) if r != head["ratio"]]
        out.append(PairSummary(str(rec), str(a), str(b), table, idx, whole_idx, win_idx, head, status, also,
                               None if alpha is None else float(alpha)))
    return out


def evidence_order(summaries: list[PairSummary]) -> list[PairSummary]:
    """Pairs with the strongest evidence first (for choosing which get figures)."""
    rank = {"locked": 0, "dependent": 1, "inconclusive": 2, "none": 3, "untested": 4, "failed": 5}

    def key(s: PairSummary):
        h = s.headline
        padj = float(h["p_adjusted"]) if h is not None and not is_missing(h["p_adjusted"]) else np.inf
        val = float(h["value"]) if h is not None and not is_missing(h["value"]) else -np.inf
        return (rank[s.status], padj, -val)

    return sorted(summaries, key=key)


def _stat_clause(row: pd.Series, *, at: str = "") -> str:
    parts = [f"{measure_name(row['measure'])} {fmt_num(row['value'])}{at}"]
    if not is_missing(row["ci_low"]) and not is_missing(row["ci_high"]):
        lvl = fmt_level(row["ci_level"])
        parts.append(f"{lvl + '% ' if lvl else ''}CI {fmt_num(row['ci_low'])} to {fmt_num(row['ci_high'])}")
    padj = row["p_adjusted"]
    corr = str(row["correction"])
    if not is_missing(padj):
        if corr in ("", "none"):
            ptxt = f"p = {fmt_p(padj)} (not corrected)"
        else:
            ptxt = f"corrected p = {fmt_p(padj)}"
    elif not is_missing(row["p_value"]):
        ptxt = f"p = {fmt_p(row['p_value'])} (not corrected)"
    else:
        ptxt = ""
    if ptxt:
        n = int(row["n_surrogates"]) if not is_missing(row["n_surrogates"]) else 0
        ptxt += f" against {n} {surrogate_name(row['surrogate'])} surrogates"
        parts.append(ptxt)
    return ", ".join(parts)


def strength_word(row) -> str:
    """Graded wording from the interval of the value (PLV-like measures in [0, 1]):
    "strongly" when the lower end reaches 0.7, "moderately" from 0.4, else "weakly"
    (the value alone at a high p-value floor says little; the interval says how much
    locking the data can support)."""
    lo = row.get("ci_low") if hasattr(row, "get") else None
    v = lo if lo is not None and not is_missing(lo) else row["value"]
    if is_missing(v) or str(row["measure"]) not in ("plv", "conditional_index", "order_parameter"):
        return ""
    v = float(v)
    return "strongly" if v >= 0.7 else ("moderately" if v >= 0.4 else "weakly")


def locked_epochs(s) -> list:
    """[(ratio, start_s, end_s)]: consecutive windows locked at the same ratio, merged
    (the headline measure's rows)."""
    w = s.windows
    h = s.headline
    if w.empty or h is None or "locked" not in w:
        return []
    w = w[(w["measure"] == h["measure"]) & w["locked"].map(_truthy)].sort_values("window_start_s")
    out = []
    for r, a, b in w[["ratio", "window_start_s", "window_end_s"]].itertuples(index=False):
        if out and out[-1][0] == r and a <= out[-1][2]:
            out[-1] = (r, out[-1][1], max(out[-1][2], float(b)))
        else:
            out.append((r, float(a), float(b)))
    return out


def verdict(s: PairSummary) -> tuple[str, str, str]:
    """(short status label, who, finding) for a pair; the sentence is ``who + ": " + finding``.

    Plain text, not escaped.
    """
    h = s.headline
    if s.is_group:
        who = _group_name(s.signal_a)
        ratio_txt = ""
    else:
        who = f"{s.signal_a} and {s.signal_b}"
        ratio_txt = ""
        if h is not None:
            ratio_txt = f"{h['ratio']} ({ratio_words(s.signal_a, s.signal_b, int(h['p']), int(h['q']))})"
    if s.recording:
        who = f"{s.recording}, {who}"
    if s.status == "failed" or h is None:
        return "not computed", who, "no value could be computed (see the warnings below)."
    win_txt = ""
    if not s.has_whole and s.has_windows:
        w = s.windows[s.windows["ratio"] == h["ratio"]]
        w = w[w["measure"] == h["measure"]]
        n_sig = int(w["significant"].map(_truthy).sum())
        if s.status == "none":
            n_win = s.windows[["window_start_s", "window_end_s"]].drop_duplicates().shape[0]
            win_txt = f" in any of {n_win} windows"
        elif s.status == "untested":
            win_txt = f" in the strongest of {len(w)} windows ({fmt_num(h['window_start_s'], 0)}–{fmt_num(h['window_end_s'], 0)} s)"
        else:
            win_txt = f" in {n_sig} of {len(w)} windows (strongest at {fmt_num(h['window_start_s'], 0)}–{fmt_num(h['window_end_s'], 0)} s)"
    at = f" at {ratio_txt}" if ratio_txt else ""
    epochs = locked_epochs(s) if (s.status == "locked" and not s.has_whole and s.has_windows) else []
    if epochs and not s.is_group:
        spans = "; ".join(f"{r} during {fmt_num(a, 0)}–{fmt_num(b, 0)} s" for r, a, b in epochs)
        n_win = s.windows[["window_start_s", "window_end_s"]].drop_duplicates().shape[0]
        return "phase-locked", who, (
            f"{strength_word(h)} phase-locked at a ratio that changes over time — {spans} "
            f"(locked windows of {n_win}, merged where consecutive windows lock at the same ratio); strongest: "
            f"{_stat_clause(h, at=' at ' + str(h['ratio']))}.")
    if s.status == "locked":
        cert = h.get("ratio_certainty") if hasattr(h, "get") else None
        cert_txt = (f"; this ratio had the largest effect in {100 * float(cert):.0f}% of resamples"
                    if cert is not None and not is_missing(cert) else "")
        also = (f"; dependent but not locked at {', '.join(s.also_locked)} (significant, smaller effect)"
                if s.also_locked else "")
        return "phase-locked", who, f"{strength_word(h)} phase-locked{at}{win_txt} — {_stat_clause(h)}{cert_txt}{also}."
    if s.status == "dependent":
        return "dependent", who, (
            f"not independent, but no tested ratio stands out as the locking ratio{win_txt} — significant{at}: "
            f"{_stat_clause(h)}; a larger effect at another ratio was not significant.")
    if s.status == "inconclusive":
        n = int(h["n_surrogates"])
        a_txt = f" α = {s.alpha:g}" if s.alpha is not None else " the chosen level"
        return "inconclusive", who, (
            f"inconclusive{at}{win_txt} — {measure_name(h['measure'])} {fmt_num(h['value'])} was "
            f"above all {n} {surrogate_name(h['surrogate'])} surrogates (p = {fmt_p(h['p_value'])}, "
            f"corrected p = {fmt_p(h['p_adjusted'])}), but that is not below{a_txt}, and {n} "
            "surrogates cannot give a smaller p-value; run again with more surrogates."
        )
    if s.status == "none":
        ratios = s.ratios
        tested = f" at the ratio{'s' if len(ratios) > 1 else ''} tested ({', '.join(ratios)})" if ratios and ratios != [""] else ""
        at_r = f" at {h['ratio']}" if ratio_txt and len(ratios) > 1 else ""
        clause = _stat_clause(h, at=at_r)
        return "no evidence", who, f"no evidence of locking{tested}{win_txt} — strongest: {clause}."
    return (
        "not tested",
        who,
        f"{measure_name(h['measure'])} {fmt_num(h['value'])}{at}{win_txt}; no test was "
        "made (no surrogates were drawn), so this value alone cannot show locking.",
    )
