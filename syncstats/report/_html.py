"""report.html: one self-contained page (inline CSS, PNG figures as data URIs, no scripts).

Page outline (section ids in brackets):

1. masthead — title, run facts, short caution
2. findings [findings] — the question and one verdict sentence per pair
3. ratios [ratios] — the p:q convention in words
4. pairs [pairs] — per pair: verdict, figure panels, captions (at most ``max_figure_pairs``)
5. group [group] — pair-matrix heat map(s), when a recording has 3+ signals
6. numbers [numbers] — the results table, rounded for display only
7. checks [checks] — per-signal diagnostics and every warning
8. method [method] — methods text, run notes, versions, seed, input hashes
9. caution [caution] — research software, not a medical device

Every user-supplied string goes through :func:`esc` (``html.escape``).
"""
from __future__ import annotations

import datetime as _dt
import html
from pathlib import Path

import numpy as np
import pandas as pd

from . import _compare, _figures
from ._common import (
    PairSummary,
    evidence_order,
    fmt_level,
    fmt_num,
    fmt_p,
    is_missing,
    measure_name,
    measure_order,
    ratio_words,
    summarize_pairs,
    surrogate_name,
    correction_name,
    verdict,
)
from ..results import COLUMN_SPEC
from ._epochs import epochs_section
from ._methods import CAUTION, methods_text
from ._provenance import build_provenance

__all__ = ["render_html", "write_report_html", "MAX_FIGURE_PAIRS", "MAX_TABLE_ROWS"]

MAX_FIGURE_PAIRS = 12
MAX_TABLE_ROWS = 400
MAX_VERDICTS = 300


def esc(x) -> str:
    return html.escape("" if x is None else str(x), quote=True)


_CSS = """
:root{--ink:#23303b;--muted:#66727e;--paper:#f4f1ea;--card:#ffffff;--line:#dcd7cc;
--teal:#1e6f6a;--teal-soft:#e2efed;--amber:#d4872a;--amber-soft:#fbf0e0;--slate:#e6e9ec;
--brick:#b0452f;--brick-soft:#f8e6e1}
*{box-sizing:border-box}
html{background:var(--paper)}
body{margin:0;color:var(--ink);font:15px/1.55 system-ui,-apple-system,"Segoe UI",Roboto,
"Noto Sans","DejaVu Sans",Arial,sans-serif}
.wrap{max-width:1060px;margin:0 auto;padding:0 28px}
header.mast{background:var(--ink);color:#f4f1ea;padding:30px 0 24px;border-bottom:6px solid var(--amber)}
header.mast h1{margin:0 0 4px;font-size:27px;font-weight:650;letter-spacing:.2px}
header.mast .sub{color:#c9d1d8;font-size:14px}
.facts{display:flex;flex-wrap:wrap;gap:8px 26px;margin-top:16px;font-size:13px}
.facts div b{display:block;font-weight:600;color:#9fb4c4;font-size:11px;text-transform:uppercase;
letter-spacing:.08em}
.banner{margin-top:16px;font-size:12.5px;color:#e7d9c2}
nav.toc{background:#ebe6db;border-bottom:1px solid var(--line);font-size:13px}
nav.toc .wrap{display:flex;flex-wrap:wrap;gap:4px 18px;padding-top:9px;padding-bottom:9px}
nav.toc a{color:var(--ink);text-decoration:none;border-bottom:1px dotted var(--muted)}
section{padding:26px 0 8px}
h2{font-size:20px;margin:0 0 12px;display:flex;align-items:baseline;gap:10px}
h2 .num{font-size:12px;font-weight:700;color:#fff;background:var(--teal);border-radius:3px;
padding:1px 7px;position:relative;top:-2px}
h3{font-size:16px;margin:0 0 6px}
p{margin:0 0 10px}
.card{background:var(--card);border:1px solid var(--line);border-radius:6px;padding:18px 20px;
margin-bottom:16px}
.question{font-size:16px;border-left:4px solid var(--teal);padding-left:14px;margin:4px 0 16px}
ul.verdicts{list-style:none;margin:0;padding:0}
ul.verdicts li{display:flex;gap:12px;align-items:flex-start;padding:9px 0;border-top:1px solid #eee9df}
ul.verdicts li:first-child{border-top:none}
.chip{flex:0 0 auto;font-size:11.5px;font-weight:700;text-transform:uppercase;letter-spacing:.05em;
border-radius:999px;padding:2px 0;margin-top:2px;white-space:nowrap;width:128px;text-align:center}
.chip.locked{background:var(--teal);color:#fff}
.chip.none{background:var(--slate);color:var(--ink)}
.chip.untested{background:var(--amber-soft);color:#8a520d;border:1px solid var(--amber)}
.chip.inconclusive{background:#fff;color:#8a520d;border:1px dashed var(--amber)}
.chip.dependent{background:#fff;color:var(--ink);border:1px solid var(--teal)}
.chip.failed{background:var(--brick-soft);color:var(--brick);border:1px solid var(--brick)}
.who{font-weight:650}
.small{font-size:13px;color:var(--muted)}
.pair h3{display:flex;gap:12px;align-items:center;flex-wrap:wrap}
figure{margin:12px 0 0}
figure img{max-width:100%;height:auto;display:block;margin:0 auto;border-radius:4px}
figcaption{font-size:13px;color:var(--muted);margin-top:6px}
figcaption ol{margin:4px 0 0;padding-left:20px}
.legend-ratio{background:var(--teal-soft);border-radius:6px;padding:12px 16px}
.tablewrap{overflow-x:auto;border:1px solid var(--line);border-radius:6px;background:var(--card)}
table{border-collapse:collapse;width:100%;font-size:12.5px}
th,td{padding:6px 9px;text-align:right;white-space:nowrap;border-bottom:1px solid #eee9df}
th{background:#f8f6f1;font-weight:650;position:sticky;top:0;color:#3a4752}
td.t,th.t{text-align:left}
td.w{text-align:left;white-space:normal;min-width:200px;color:var(--brick);font-size:11.5px;line-height:1.35}
td.w2{text-align:left;white-space:normal;font-size:12.5px;line-height:1.45;color:var(--ink);padding-bottom:10px}
tr.cmp td{border-bottom:none}
tr.sig td{background:#f1f8f6}
tr.sig td.mark{color:var(--teal);font-weight:700}
details{margin-top:10px}
summary{cursor:pointer;color:var(--teal);font-weight:600;font-size:13.5px}
ul.warn{margin:8px 0 0;padding-left:0;list-style:none}
ul.warn li{background:var(--brick-soft);border-left:3px solid var(--brick);padding:6px 10px;margin:5px 0;
font-size:13.5px;border-radius:0 4px 4px 0}
.pairwarn{border-left:3px solid var(--amber);background:var(--amber-soft);padding:6px 10px;margin-top:10px;
font-size:13px;border-radius:0 4px 4px 0}
.pairwarn ul{margin:2px 0 0;padding-left:18px}
.cardref{margin-top:10px}
.ok{background:var(--teal-soft);border-left:3px solid var(--teal);padding:6px 10px;font-size:13.5px}
.methods p{max-width:80ch}
.mono{font-family:ui-monospace,"DejaVu Sans Mono",Menlo,Consolas,monospace;font-size:12px;
word-break:break-all}
dl.kv{display:grid;grid-template-columns:max-content 1fr;gap:4px 18px;font-size:13.5px;margin:0}
dl.kv dt{color:var(--muted)}
dl.kv dd{margin:0}
.caution{background:var(--amber-soft);border:1px solid var(--amber);border-radius:6px;padding:16px 20px}
footer{padding:22px 0 40px;font-size:12px;color:var(--muted)}
@media print{nav.toc{display:none}header.mast{background:#fff;color:var(--ink)}}
"""


# --------------------------------------------------------------------------- helpers


def _signals(table: pd.DataFrame) -> list[str]:
    if table is None or table.empty:
        return []
    pairs = table[table["signal_b"] != ""]
    return list(dict.fromkeys(pairs["signal_a"].tolist() + pairs["signal_b"].tolist()))


def _chip(status: str, label: str) -> str:
    return f'<span class="chip {esc(status)}">{esc(label)}</span>'


def _section(sid: str, num: int, title: str, body: str) -> str:
    return (f'<section id="{sid}"><div class="wrap"><h2><span class="num">{num}</span>'
            f"{esc(title)}</h2>{body}</div></section>")


def _question(result, summaries: list[PairSummary]) -> str:
    p = result.params or {}
    names = _signals(result.table)
    ratios = list(dict.fromkeys(str(r) for r in result.table["ratio"])) if not result.table.empty else []
    who = ", ".join(names[:-1]) + " and " + names[-1] if len(names) > 1 else (names[0] if names else "the signals")
    rtxt = ""
    if ratios:
        rtxt = f" at {'the ratio' if len(ratios) == 1 else 'the ratios'} {', '.join(ratios)}"
    q = (f"Are {who} phase-synchronized{rtxt} — do their cycles keep a steady timing relation "
         "more often than two independent rhythms with the same properties would by chance?")
    n = int(p.get("n_surrogates") or 0)
    if n > 0:
        how = (f"Each value is compared with {n} {surrogate_name(p.get('surrogate', ''))} "
               "surrogates (independent rhythms that keep each signal's own properties)")
        corr = str(p.get("correction") or "none")
        if corr not in ("none", ""):
            how += f", with {correction_name(corr)} correction for everything that was searched"
        how += "."
    else:
        how = "No surrogates were drawn for this run, so no test was made: the values below are descriptive only."
    return f'<p class="question">{esc(q)}</p><p class="small">{esc(how)}</p>'


def _verdict_list(summaries: list[PairSummary]) -> str:
    if not summaries:
        return '<p>The result holds no rows: nothing was analysed.</p>'
    items = []
    for s in summaries[:MAX_VERDICTS]:
        label, who, text = verdict(s)
        items.append(f'<li>{_chip(s.status, label)}<span><span class="who">{esc(who)}</span>: '
                     f"{esc(text)}</span></li>")
    more = ""
    if len(summaries) > MAX_VERDICTS:
        more = (f'<p class="small">{len(summaries) - MAX_VERDICTS} more pairs are in the table '
                "below and in results.csv.</p>")
    return f'<ul class="verdicts">{"".join(items)}</ul>{more}'


def _ratio_block(summaries: list[PairSummary]) -> str:
    # one line per distinct ratio other than 1:1, with the pair where it matters most:
    # first the pairs whose headline is that ratio, then any pair that tested it
    examples: dict = {}
    ordered = [s for s in evidence_order(summaries) if not s.is_group]
    for s in ordered:
        h = s.headline
        if h is not None and int(h["p"]) != int(h["q"]) and h["ratio"] not in examples:
            examples[h["ratio"]] = (s, int(h["p"]), int(h["q"]))
    by_key = {s.key: s for s in ordered}
    if ordered:
        tab = ordered[0]._table
        pos = np.concatenate([s._idx for s in ordered])
        firsts = tab.iloc[pos].drop_duplicates("ratio")
        for rec, a, b, r, p, q in firsts[["recording", "signal_a", "signal_b", "ratio", "p", "q"]].itertuples(index=False):
            s = by_key.get((rec, a, b))
            if s is not None and int(p) != int(q) and r not in examples:
                examples[r] = (s, int(p), int(q))
    lines = [
        f"<li><b>{esc(r)}</b>, e.g. for {esc(s.signal_a)} and {esc(s.signal_b)}: "
        f"{esc(ratio_words(s.signal_a, s.signal_b, p, q))}.</li>"
        for r, (s, p, q) in list(examples.items())[:12]
    ]
    body = (
        "<p>A ratio <b>p:q</b> means that signal A (the first of the pair) completes <b>p</b> "
        "cycles while signal B completes <b>q</b>; the phase difference examined is "
        "ψ = q·φ<sub>A</sub> − p·φ<sub>B</sub>, which stays bounded when the two are locked at "
        "that ratio. 1:1 means one cycle each.</p>"
    )
    if lines:
        body += f"<ul>{''.join(lines)}</ul>"
    return f'<div class="legend-ratio">{body}</div>'


def _pair_cards(result, summaries: list[PairSummary], max_pairs: int) -> str:
    chosen = [s for s in evidence_order(summaries) if s.headline is not None][:max_pairs]
    if not chosen:
        return '<p class="small">No pair has values to draw.</p>'
    chosen_keys = {s.key for s in chosen}
    signal_warn = _signal_warnings(result)
    cards = []
    for s in chosen:
        label, who, text = verdict(s)
        uri, captions = _figures.pair_figure(s, result)
        fig = ""
        if uri:
            caps = "".join(f"<li>{esc(c)}</li>" for c in captions)
            fig = (f'<figure><img src="{uri}" alt="Figures for {esc(s.label)}">'
                   f"<figcaption>Panels, left to right and top to bottom:<ol>{caps}</ol></figcaption></figure>")
        else:
            fig = '<p class="small">Nothing to draw for this pair (no phase differences or surrogates were kept).</p>'
        wtxt = _card_warnings(s, signal_warn)
        cards.append(
            f'<div class="card pair"><h3>{_chip(s.status, label)}{esc(s.label)}</h3>'
            f"<p>{esc(text[:1].upper() + text[1:])}</p>{fig}{wtxt}</div>"
        )
    rest = [s for s in summaries if s.key not in chosen_keys]
    note = ""
    if rest:
        names = ", ".join(esc(s.label) for s in rest[:40]) + (" …" if len(rest) > 40 else "")
        note = (f'<p class="small">To keep this page small, figures are drawn for the '
                f"{len(chosen)} pairs with the strongest evidence only; {len(rest)} more "
                f"pair(s) appear in the verdicts and the table: {names}.</p>")
    return "".join(cards) + note


def _signal_warnings(result) -> dict:
    """signal -> its own warnings (the diagnostics' and any row warning that names it first)."""
    out: dict = {}
    d = result.diagnostics
    if d is not None and not d.empty and "warnings" in d:
        for name, v in zip(d["signal"].astype(str), d["warnings"]):
            out.setdefault(name, [])
            out[name] += [w for w in _split_warnings(v) if w not in out[name]]
    if result.table is not None and not result.table.empty:
        names = set(out) | set(result.table["signal_a"].astype(str)) | set(result.table["signal_b"].astype(str))
        for v in result.table["warnings"]:
            for w in _split_warnings(v):
                who = w.split(": ", 1)[0]
                if who in names and ": " in w:
                    out.setdefault(who, [])
                    if w not in out[who]:
                        out[who].append(w)
    return out


def _card_warnings(s: PairSummary, signal_warn: dict) -> str:
    """A pair card's warnings: each signal's own ones by reference to the Signal checks
    (listed there once), the pair's own ones in one compact box."""
    rows = sorted({w.strip() for ws in s.rows["warnings"].astype(str) for w in ws.split(";") if w.strip()})
    members = [s.signal_a] + ([s.signal_b] if s.signal_b else [])
    if s.is_group:
        members = list(signal_warn)
    own = {w for n in members for w in signal_warn.get(n, [])}
    pair_only = [w for w in rows if w not in own]
    flagged = [(n, sum(w in rows for w in signal_warn.get(n, []))) for n in members]
    flagged = [(n, k) for n, k in flagged if k]
    out = ""
    if flagged:
        who = " and ".join(f"{esc(n)} ({k} warning{'s' if k > 1 else ''})" for n, k in flagged)
        out += (f'<p class="small cardref">Signal checks flagged {who}; they apply to every pair with '
                f'{"this signal" if len(flagged) == 1 else "these signals"}: see <a href="#checks">Signal '
                "checks</a>.</p>")
    if pair_only:
        out += ('<div class="pairwarn"><b>For this pair:</b><ul>' + "".join(f"<li>{esc(w)}</li>" for w in pair_only)
                + "</ul></div>")
    return out


def _group_block(result) -> str:
    uri, cap = _figures.group_figure(result.table, measure_order(result.table, result.params or {}))
    if not uri:
        return ""
    return (f'<div class="card"><figure><img src="{uri}" alt="Pair matrix">'
            f"<figcaption>{esc(cap)}</figcaption></figure></div>")


def _table_html(table: pd.DataFrame, *, show_rec: bool, show_win: bool, show_measure: bool,
                limit: int) -> str:
    show_warn = bool((table["warnings"].astype(str).str.strip() != "").any())
    head = []
    if show_rec:
        head.append(("recording", "t"))
    head += [("pair (A / B)", "t"), ("ratio", "t")]
    if show_win:
        head.append(("window (s)", "t"))
    if show_measure:
        head.append(("measure", "t"))
    head += [("value", ""), ("CI", ""), ("null mean", ""), ("effect", ""), ("z", ""),
             ("p", ""), ("corrected p", ""), ("locked?", "")]
    if show_warn:
        head.append(("warnings", "t"))
    out = ["<table><thead><tr>"]
    out += [f'<th class="{c}">{esc(h)}</th>' for h, c in head]
    out.append("</tr></thead><tbody>")
    for _, r in table.head(limit).iterrows():
        sig = r["significant"]
        sig_txt = "—" if is_missing(sig) else ("yes" if bool(sig) else "no")
        cls = ' class="sig"' if sig_txt == "yes" else ""
        pair = r["signal_a"] + (f" / {r['signal_b']}" if r["signal_b"] else " (group)")
        ci = "—"
        if not is_missing(r["ci_low"]) and not is_missing(r["ci_high"]):
            ci = f"{fmt_num(r['ci_low'])} to {fmt_num(r['ci_high'])}"
        cells = []
        if show_rec:
            cells.append(("t", r["recording"]))
        cells += [("t", pair), ("t", r["ratio"])]
        if show_win:
            cells.append(("t", f"{fmt_num(r['window_start_s'], 1)}–{fmt_num(r['window_end_s'], 1)}"))
        if show_measure:
            cells.append(("t", measure_name(r["measure"])))
        cells += [("", fmt_num(r["value"], 3)), ("", ci),
                  ("", fmt_num(r["null_mean"], 3)), ("", fmt_num(r["effect"], 3)),
                  ("", fmt_num(r["z"], 1)), ("", fmt_p(r["p_value"])), ("", fmt_p(r["p_adjusted"])),
                  ("mark", sig_txt)]
        if show_warn:
            cells.append(("w", r["warnings"]))
        out.append(f"<tr{cls}>" + "".join(f'<td class="{c}">{esc(v)}</td>' for c, v in cells) + "</tr>")
    out.append("</tbody></table>")
    note = ""
    if len(table) > limit:
        note = (f'<p class="small">Showing the first {limit} of {len(table)} rows; '
                "results.csv holds them all.</p>")
    return f'<div class="tablewrap">{"".join(out)}</div>{note}'


def _results_table(table: pd.DataFrame, summaries: list[PairSummary]) -> str:
    if table.empty:
        return "<p>No rows.</p>"
    show_rec = bool((table["recording"].astype(str) != "").any())
    show_measure = table["measure"].nunique() > 1
    whole_idx = [i for s in summaries for i in s.whole_positions]
    win_idx = [i for s in summaries for i in s.window_positions]
    first = table.iloc[0]
    lvl = fmt_level(first["ci_level"])
    legend = ("<p class=\"small\">Rounded for reading; results.csv holds every column at full "
              f"precision. CI = {esc(lvl + '% ' if lvl else '')}confidence interval"
              f"{' (' + esc(first['ci_method']) + ')' if first['ci_method'] else ''}; effect = "
              "value − null mean; z = effect / null SD; p = surrogate p-value "
              "(1 + k)/(1 + S); corrected p after correction for the family searched"
              f"{': ' + esc(first['family']) if first['family'] else ''}.</p>")
    parts = [legend]
    if whole_idx:
        parts.append(_table_html(table.loc[sorted(whole_idx)], show_rec=show_rec, show_win=False,
                                 show_measure=show_measure, limit=MAX_TABLE_ROWS))
    if win_idx:
        body = _table_html(table.loc[sorted(win_idx)], show_rec=show_rec, show_win=True,
                           show_measure=show_measure, limit=MAX_TABLE_ROWS)
        if whole_idx:
            parts.append(f"<details><summary>Window by window ({len(win_idx)} rows)</summary>{body}</details>")
        else:
            parts.append(body)
    return "".join(parts)


def _diagnostics(result) -> str:
    d = result.diagnostics
    parts = []
    if d is not None and not d.empty:
        cols = [("signal", "t", lambda v: v), ("dominant_freq_hz", "", lambda v: fmt_num(v, 3)),
                ("peak_sharpness", "", lambda v: fmt_num(v, 2)),
                ("near_zero_amplitude_share", "", lambda v: _pct(v)),
                ("backward_step_share", "", lambda v: _pct(v)),
                ("n_cycles", "", lambda v: fmt_num(v, 1)), ("method", "t", lambda v: v),
                ("band", "t", _band)]
        names = {"signal": "signal", "dominant_freq_hz": "peak freq. (Hz)",
                 "peak_sharpness": "peak sharpness", "near_zero_amplitude_share": "near-zero amp.",
                 "backward_step_share": "backward steps", "n_cycles": "cycles",
                 "method": "phase from", "band": "band"}
        cols = [c for c in cols if c[0] in d.columns]
        rows = ["<table><thead><tr>" + "".join(f'<th class="{c}">{esc(names[k])}</th>' for k, c, _ in cols)
                + "</tr></thead><tbody>"]
        for _, r in d.iterrows():
            rows.append("<tr>" + "".join(f'<td class="{c}">{esc(f(r[k]))}</td>' for k, c, f in cols) + "</tr>")
        rows.append("</tbody></table>")
        parts.append(
            "<p>A phase means something only for a narrow-band, oscillatory signal. Sharp "
            "spectral peaks, little time at near-zero amplitude and few backward phase steps "
            "are what to look for.</p>"
            f'<div class="tablewrap">{"".join(rows)}</div>'
        )
    uri, cap = _figures.signal_figure(result)
    if uri:
        parts.append(f'<figure><img src="{uri}" alt="Spectrum and trace of each signal">'
                     f"<figcaption>{esc(cap)}</figcaption></figure>")
    warns = _all_warnings(result)
    if warns:
        parts.append("<h3 style=\"margin-top:16px\">Warnings</h3><ul class=\"warn\">"
                     + "".join(f"<li>{esc(w)}</li>" for w in warns) + "</ul>")
    else:
        parts.append('<p class="ok" style="margin-top:14px">No warnings were raised for any signal or pair.</p>')
    return "".join(parts)


def _when(stamp) -> str:
    """An ISO time stamp for reading ('2024-01-01 00:01 UTC')."""
    if not stamp:
        return "—"
    try:
        t = _dt.datetime.fromisoformat(str(stamp))
    except ValueError:
        return str(stamp)
    if t.tzinfo is not None:
        t = t.astimezone(_dt.timezone.utc)
        return t.strftime("%Y-%m-%d %H:%M UTC")
    return t.strftime("%Y-%m-%d %H:%M")


def _pct(v) -> str:
    return "—" if is_missing(v) else f"{100 * float(v):.1f}%"


def _band(v) -> str:
    if v is None or (not isinstance(v, (tuple, list, np.ndarray)) and is_missing(v)):
        return "—"
    if isinstance(v, (tuple, list, np.ndarray)) and len(v) == 2:
        try:
            return f"{float(v[0]):g}–{float(v[1]):g}"
        except (TypeError, ValueError):
            pass
    return str(v)


def _split_warnings(v) -> list[str]:
    if v is None:
        return []
    if isinstance(v, (list, tuple, np.ndarray)):
        return [str(x).strip() for x in v if str(x).strip()]
    if is_missing(v):
        return []
    return [w.strip() for w in str(v).split(";") if w.strip()]


def _all_warnings(result) -> list[str]:
    out: list[str] = []
    d = result.diagnostics
    if d is not None and not d.empty and "warnings" in d:
        for v in d["warnings"]:
            out += _split_warnings(v)
    if result.table is not None and not result.table.empty:
        for v in result.table["warnings"]:
            out += _split_warnings(v)
    return list(dict.fromkeys(out))


def _md_to_html(md: str) -> str:
    """The tiny Markdown subset methods.md uses: #/## headings, '- ' and '1. ' lists, paragraphs."""
    out, list_kind = [], None
    for line in md.splitlines():
        s = line.strip()
        kind = "ul" if s.startswith("- ") else ("ol" if s[:1].isdigit() and ". " in s[:5] else None)
        if list_kind and kind != list_kind:
            out.append(f"</{list_kind}>")
            list_kind = None
        if not s:
            continue
        if s.startswith("## "):
            out.append(f'<h3 style="margin-top:14px">{esc(s[3:])}</h3>')
        elif s.startswith("# "):
            continue  # the section has its own title
        elif kind:
            if list_kind is None:
                out.append(f"<{kind}>")
                list_kind = kind
            out.append(f"<li>{esc(s.split(' ', 1)[1])}</li>")
        else:
            out.append(f"<p>{esc(s)}</p>")
    if list_kind:
        out.append(f"</{list_kind}>")
    return "".join(out)


def _method_block(result, prov: dict) -> str:
    md = _md_to_html(methods_text(result, notes=False, caution=False))
    v = prov.get("versions", {})
    vers = ", ".join(f"{esc(k)} {esc(x)}" for k, x in v.items() if x and k != "syncstats_in_params")
    kv = [
        ("seed entropy", prov.get("seed_entropy")),
        ("started", _when(prov.get("started_at"))),
        ("finished", _when(prov.get("finished_at"))),
        ("python", prov.get("python", {}).get("version")),
        ("platform", prov.get("platform", {}).get("platform")),
        ("versions", None),
    ]
    dl = ['<dl class="kv">']
    for k, x in kv:
        if k == "versions":
            dl.append(f"<dt>versions</dt><dd>{vers or '—'}</dd>")
        else:
            dl.append(f"<dt>{esc(k)}</dt><dd>{esc('—' if x is None else x)}</dd>")
    inputs = prov.get("inputs") or []
    if inputs:
        items = []
        for e in inputs:
            h = e.get("sha256")
            if e.get("kind") == "folder":
                h = f"folder of {len(e.get('files', []))} files (hashes in provenance.json)"
            items.append(f"<div>{esc(e.get('path'))}<br><span class=\"mono\">{esc(h or e.get('error', '—'))}</span></div>")
        dl.append(f"<dt>inputs (SHA-256)</dt><dd>{''.join(items)}</dd>")
    else:
        dl.append("<dt>inputs</dt><dd>data passed in memory (no files)</dd>")
    dl.append("</dl>")
    return (f'<div class="card methods"><h3>Methods paragraph</h3><p class="small">Ready to '
            f'adapt for a paper; the same text is in methods.md.</p>{md}</div>'
            f'<div class="card"><h3>Reproducing this run</h3>{"".join(dl)}'
            '<p class="small" style="margin-top:10px">Every parameter is in provenance.json; '
            "the methods text above is also in methods.md.</p></div>")


def _glossary() -> str:
    rows = "".join(f"<tr><td><code>{esc(c.name)}</code></td><td>{esc(c.unit)}</td><td>{esc(c.meaning)}</td></tr>"
                   for c in COLUMN_SPEC)
    return (f'<details><summary>{len(COLUMN_SPEC)} columns, one row per recording × pair × ratio × window × '
            f"measure</summary><table><thead><tr><th>column</th><th>unit</th><th>meaning</th></tr></thead>"
            f"<tbody>{rows}</tbody></table></details>")


def _notes_block(result) -> str:
    notes = [str(n) for n in (result.notes or []) if str(n).strip()]
    if not notes:
        return ""
    return '<div class="card"><h3>Notes from the run</h3><ul>' + "".join(
        f"<li>{esc(n)}</li>" for n in notes) + "</ul></div>"


# --------------------------------------------------------------------------- page


def render_html(result, *, max_figure_pairs: int = MAX_FIGURE_PAIRS, provenance: dict | None = None) -> str:
    """The whole report page as a string."""
    table = result.table
    params = result.params or {}
    prov = provenance if provenance is not None else build_provenance(result)
    summaries = summarize_pairs(table, params)
    names = _signals(table)
    n_pairs = sum(not s.is_group for s in summaries)
    n_locked = sum(s.status == "locked" for s in summaries)

    facts = [
        ("signals", str(len(names)) if names else "—"),
        ("pairs", str(n_pairs)),
        ("locked", str(n_locked) if int(params.get("n_surrogates") or 0) > 0 else "not tested"),
        ("surrogates", f"{int(params.get('n_surrogates') or 0)} {surrogate_name(params.get('surrogate', ''))}".strip()),
        ("correction", correction_name(params.get("correction", "none")) if int(params.get("n_surrogates") or 0) > 0 else "—"),
        ("finished", _when(params.get("finished_at"))),
    ]
    facts_html = "".join(f"<div><b>{esc(k)}</b>{esc(v)}</div>" for k, v in facts)

    sections = []
    num = 0

    def add(sid, title, body):
        nonlocal num
        if body:
            num += 1
            sections.append((sid, title, _section(sid, num, title, body)))

    add("findings", "What we found",
        f'<div class="card">{_question(result, summaries)}{_verdict_list(summaries)}'
        f"{_compare.findings_note(result)}</div>")
    add("nulls", "Which null to believe", _compare.null_section(result))
    add("ratios", "Reading the ratios", _ratio_block(summaries) if summaries else "")
    add("pairs", "Pair by pair", _pair_cards(result, summaries, max_figure_pairs) if summaries else "")
    add("group", "All pairs at once", _group_block(result) if len(names) >= 3 else "")
    add("epochs", "Stretches of locking", epochs_section(result, esc))
    from . import _clusters, _trials

    add("trials", "Locking over trials", _trials.section_html(result, esc))
    add("clusters", "Synchronization clusters", _clusters.section_html(result, esc))
    add("numbers", "The numbers", _results_table(table, summaries))
    add("checks", "Signal checks", _diagnostics(result))
    add("method", "How it was done", _notes_block(result) + _method_block(result, prov))
    add("glossary", "What each column of results.csv means", _glossary())
    add("caution", "Before you use these results",
        f'<div class="caution"><p><b>{esc(CAUTION)}</b></p><p class="small">A significant '
        "result says that the observed locking is unlikely under the null the surrogates "
        "represent; it does not say which rhythm drives the other, and it inherits every "
        "limitation of the phase estimates listed under Signal checks.</p></div>")

    toc = "".join(f'<a href="#{sid}">{esc(t)}</a>' for sid, t, _ in sections)
    title = "Phase-synchronization report"
    sub = ", ".join(names[:8]) + (" …" if len(names) > 8 else "")
    return (
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
        "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
        "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
        "img-src data:; style-src 'unsafe-inline'\">"
        f"<title>{esc(title)}{' — ' + esc(sub) if sub else ''}</title>"
        f"<style>{_CSS}</style></head><body>"
        f'<header class="mast"><div class="wrap"><h1>{esc(title)}</h1>'
        f'<div class="sub">{esc(sub) if sub else "no signals"}</div>'
        f'<div class="facts">{facts_html}</div>'
        f'<div class="banner">Research software — not a medical device; not for diagnosis or treatment.</div>'
        "</div></header>"
        f'<nav class="toc"><div class="wrap">{toc}</div></nav>'
        + "".join(s for _, _, s in sections)
        + f'<footer><div class="wrap">Written by syncstats {esc(prov.get("versions", {}).get("syncstats") or "")} '
        f'on {esc(prov.get("written_at"))}. Files beside this page: results.csv, methods.md, '
        "provenance.json.</div></footer></body></html>\n"
    )


def write_report_html(result, path, *, max_figure_pairs: int = MAX_FIGURE_PAIRS,
                      provenance: dict | None = None) -> Path:
    """Write the report page for ``result`` to ``path`` (UTF-8). Returns the path.

    Parameters
    ----------
    result : ResultData
    path : path-like
    max_figure_pairs : int, default 12
        Pairs that get a full figure set (strongest evidence first); the page says how
        many were left without figures.
    provenance : dict, optional
        A record from ``build_provenance`` to show (default: built here).
    """
    path = Path(path)
    path.write_text(render_html(result, max_figure_pairs=max_figure_pairs, provenance=provenance),
                    encoding="utf-8")
    return path
