"""The report's part for runs that tested several nulls (``syncstats.compare_nulls``).

``null_comparison.csv`` (the comparison table as it is), the page section "Which null to
believe" and one methods sentence. Nothing here decides anything: the assessment, the
recommended null and the reasons come with the result (``result.null_comparison``), each
null's assumptions from the surrogate registry, the rules from ``params["null_rules"]``.
"""
from __future__ import annotations

import html
from pathlib import Path
from types import SimpleNamespace

import pandas as pd

from ..nulls import SURROGATE_METHODS
from ._common import fmt_num, fmt_p, is_missing, surrogate_name

__all__ = ["write_null_comparison_csv", "null_section", "findings_note", "methods_sentence", "MAX_COMPARISON_ROWS"]

#: rows of the comparison shown on the page (the CSV holds all)
MAX_COMPARISON_ROWS = 60

_KEYS = ["recording", "signal_a", "signal_b", "ratio", "window_start_s", "window_end_s", "measure"]


def _esc(x) -> str:
    return html.escape("" if x is None else str(x), quote=True)


def _has(result) -> bool:
    c = getattr(result, "null_comparison", None)
    return c is not None and len(c) > 0


def write_null_comparison_csv(result, path) -> Path | None:
    """Write ``result.null_comparison`` as CSV (same rules as results.csv); None when absent."""
    if not _has(result):
        return None
    from ._table import write_results_csv

    return write_results_csv(SimpleNamespace(table=result.null_comparison), path)


def _sig(v) -> bool:
    return (not is_missing(v)) and bool(v)


def _reading(rows: pd.DataFrame) -> str:
    """One sentence: do the nulls agree, which to believe, what that means."""
    best = rows[rows["recommended"].astype(bool)]
    sig = {str(r["surrogate"]): _sig(r["significant"]) for _, r in rows.iterrows()}
    agree = len(set(sig.values())) == 1
    names = lambda ms: " and ".join(surrogate_name(m) for m in ms)  # noqa: E731
    if agree:
        head = ("All nulls reject independence." if next(iter(sig.values()))
                else "No null rejects independence.")
    else:
        yes = [m for m, s in sig.items() if s]
        no = [m for m, s in sig.items() if not s]
        head = f"The nulls disagree: {names(yes)} reject{'s' if len(yes) == 1 else ''} independence, " \
               f"{names(no)} do{'es' if len(no) == 1 else ''} not."
    if best.empty:
        return head + " None of these nulls fits this data (see the reasons), so none is to be believed here."
    b = best.iloc[0]
    m = str(b["surrogate"])
    tail = f" Believe the {surrogate_name(m)} null (p = {fmt_p(b['p_value'])}, corrected " \
           f"{fmt_p(b['p_adjusted'])}): {b['reason']}."
    if _sig(b["significant"]):
        tail += " Under the null that fits, independence is rejected."
    elif b["assessment"] == "weak":
        tail += " It does not reject, and with so little power the data neither show nor exclude locking; " \
                "a longer record would."
    else:
        tail += " Under the null that fits, there is no evidence of locking."
    return head + tail


def null_section(result) -> str:
    """HTML body of the section "Which null to believe" ('' when one null was run)."""
    if not _has(result):
        return ""
    comp = result.null_comparison
    methods = list(dict.fromkeys(comp["surrogate"].astype(str)))
    items = []
    for m in methods:
        e = SURROGATE_METHODS.get(m)
        if e is None:
            continue
        items.append(f"<li><b>{_esc(e.label)}</b> assumes: {_esc(e.null_hypothesis)} "
                     f"<span class=\"small\">It misleads when: {_esc(e.failure_cases)}</span></li>")
    primary = methods[0]
    intro = (f"<p>The same data were tested against {len(methods)} nulls with the same seed. Each assumes "
             "something different about what independent rhythms look like, so they can disagree. The verdicts, "
             f"pair figures and table of this report use {_esc(surrogate_name(primary))} (the first named). Which null to believe "
             "for each row was decided from the signal checks alone, before looking at any p-value, so the "
             "believed null's p-value keeps its level.</p>")
    parts = [intro, f"<ul>{''.join(items)}</ul>"]
    head = ["pair (A / B)", "ratio", "window (s)"] + [f"{surrogate_name(m)}: p (corrected)" for m in methods] + \
           ["believe"]
    out = ['<div class="tablewrap"><table><thead><tr>'
           + "".join(f'<th class="t">{_esc(h)}</th>' for h in head) + "</tr></thead><tbody>"]
    groups = list(comp.groupby(_KEYS, sort=False, dropna=False))
    for _, rows in groups[:MAX_COMPARISON_ROWS]:
        r0 = rows.iloc[0]
        pair = r0["signal_a"] + (f" / {r0['signal_b']}" if r0["signal_b"] else " (group)")
        cells = [pair, r0["ratio"], f"{fmt_num(r0['window_start_s'], 1)}–{fmt_num(r0['window_end_s'], 1)}"]
        for m in methods:
            r = rows[rows["surrogate"].astype(str) == m]
            if r.empty:
                cells.append("—")
                continue
            r = r.iloc[0]
            cells.append(f"{fmt_p(r['p_value'])} ({fmt_p(r['p_adjusted'])})" + (" *" if _sig(r["significant"]) else "")
                         + ("" if r["assessment"] == "fits" else f" [{r['assessment']}]"))
        best = rows[rows["recommended"].astype(bool)]
        cells.append(surrogate_name(best.iloc[0]["surrogate"]) if not best.empty else "none fits")
        out.append('<tr class="cmp">' + "".join(f'<td class="t">{_esc(c)}</td>' for c in cells) + "</tr>")
        out.append(f'<tr class="reading"><td class="w2" colspan="{len(cells)}">{_esc(_reading(rows))}</td></tr>')
    out.append("</tbody></table></div>")
    parts.append("".join(out))
    if len(groups) > MAX_COMPARISON_ROWS:
        parts.append(f'<p class="small">Showing {MAX_COMPARISON_ROWS} of {len(groups)} rows; '
                     "null_comparison.csv holds them all.</p>")
    parts.append('<p class="small">* = significant after correction. [weak] = the null fits but has little '
                 "power here; [unfit] = an assumption of the null is broken by this data.</p>")
    rules = (result.params or {}).get("null_rules") or []
    if rules:
        parts.append("<details><summary>How the null to believe is chosen</summary><ol>"
                     + "".join(f"<li>{_esc(r)}</li>" for r in rules) + "</ol></details>")
    return '<div class="card">' + "".join(parts) + "</div>"


def findings_note(result) -> str:
    """One line under the verdicts: the verdicts use the first null; where another is believed."""
    if not _has(result):
        return ""
    comp = result.null_comparison
    methods = list(dict.fromkeys(comp["surrogate"].astype(str)))
    best = comp[comp["recommended"].astype(bool)]
    other = best[best["surrogate"].astype(str) != methods[0]]
    n_rows = len(comp.groupby(_KEYS, sort=False, dropna=False))
    txt = (f"These verdicts use {surrogate_name(methods[0])} surrogates; the data were also tested against "
           f"{', '.join(surrogate_name(m) for m in methods[1:])}.")
    if len(other):
        txt += (f" For {len(other)} of {n_rows} rows the signal checks point to another null: see "
                "“Which null to believe” before reading these verdicts.")
    else:
        txt += " See “Which null to believe” for what each assumes."
    return f'<p class="small" style="margin-top:10px"><a href="#nulls">{_esc(txt)}</a></p>'


def methods_sentence(result) -> str:
    """One sentence for methods.md ('' when one null was run)."""
    if not _has(result):
        return ""
    comp = result.null_comparison
    methods = list(dict.fromkeys(comp["surrogate"].astype(str)))
    rules = (result.params or {}).get("null_rules") or []
    s = (f"The same data were also tested against {', '.join(surrogate_name(m) for m in methods[1:])} "
         f"surrogates with the same seed (null_comparison.csv); the null to believe for each test was chosen from "
         "the signal diagnostics alone, before any p-value was seen")
    if rules:
        s += " (" + "; ".join(str(r) for r in rules[1:]) + ")"
    return s + "."
