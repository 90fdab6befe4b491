"""Synchronization epochs in the report: the page section, its figure, the methods
sentence and the two CSV files (epochs.csv, epochs_summary.csv).

Everything here words or draws what :class:`syncstats.epochs.EpochResult` holds; nothing
statistical is computed. The figure is one strip per pair x ratio: the windowed locking
index over time (teal line), the surrogates' pointwise 95 % range (slate band), the
threshold the tolerance sets (dotted line) and the epochs found (amber shading).
"""
from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pandas as pd

from ._common import fmt_num, is_missing, ratio_words
from ._figures import PALETTE, _RC, _new_figure, plain, to_data_uri

__all__ = ["epochs_section", "epochs_methods", "write_epoch_files", "EPOCH_FILES", "MAX_EPOCH_STRIPS"]

#: files written beside results.csv when a result carries epochs
EPOCH_FILES = ("epochs.csv", "epochs_summary.csv")
#: pair x ratio strips drawn (the summary table lists every one)
MAX_EPOCH_STRIPS = 8
_MAX_ROWS = 200


def write_epoch_files(result, folder: Path) -> list[Path]:
    """Write epochs.csv and epochs_summary.csv into ``folder`` (inside the run's atomic
    folder); nothing when the result has no epochs. Text cells that a spreadsheet would
    run as a formula get a leading quote (as in results.csv)."""
    found = getattr(result, "epochs", None)
    if found is None:
        return []
    from ._table import _quote_text

    out = []
    for name, df in zip(EPOCH_FILES, (found.epochs, found.summary)):
        df = df.copy()
        for c in df.columns:
            if pd.api.types.is_object_dtype(df[c]) or pd.api.types.is_string_dtype(df[c]):
                df[c] = df[c].map(_quote_text)
        path = folder / name
        df.to_csv(path, index=False, encoding="utf-8", lineterminator="\n", quoting=csv.QUOTE_MINIMAL)
        out.append(path)
    return out


def epochs_methods(result, cite) -> str:
    """The methods sentences on epochs ("" when the result has none)."""
    found = getattr(result, "epochs", None)
    if found is None:
        return ""
    o = found.options
    s = (f"Synchronization epochs were sought over the whole analysed span for every pair and ratio: ψ was "
         f"averaged within each mean cycle of the slower rhythm, the phase-locking value of ψ was computed in "
         f"windows of {o.window_cycles} consecutive cycles, and a window counted as locked when the circular "
         f"standard deviation of ψ in it was at most {o.tolerance:.3g} rad (a windowed phase-locking value of at "
         f"least {o.threshold:.3g}); an epoch was a run of cycles covered by locked windows lasting at least "
         f"{o.min_cycles:g} cycles of the slower rhythm and {o.min_s:g} s"
         + cite(["schafer1998", "schafer1999", "bartsch2007"]) + ".")
    sm = found.summary
    if "p_value" in sm and sm["p_value"].notna().any():
        corr = ", ".join(str(c) for c in dict.fromkeys(sm["correction"]) if c)
        fams = "; ".join(str(f) for f in dict.fromkeys(sm["family"]) if f)
        s += (" Because windows of independent rhythms pass such a rule by chance, above all near an integer "
              "frequency ratio" + cite(["toledo2002"]) + ", the total time locked was recomputed on every "
              f"surrogate ({int(sm['n_surrogates'].iloc[0])} {sm['surrogate'].iloc[0]} surrogates through the same "
              "pipeline) and its p-value was (1 + k)/(1 + S); the p-values were corrected with "
              f"{corr or 'no correction'} over {fams}.")
    else:
        s += " No surrogates were drawn, so the epochs were not tested."
    if "share_ci_low" in sm and sm["share_ci_low"].notna().any():
        s += (" The interval of the share of time locked came from a circular block bootstrap of the per-cycle "
              "locked indicator (blocks as long as one mean locked-plus-free stretch), holding the detection fixed"
              + cite(["efron1993"]) + ".")
    return s


def _strip(ax, key, curve, ep, head: bool):
    t, idx = np.asarray(curve["time_s"]), np.asarray(curve["index"])
    for _, e in ep.iterrows():
        ax.axvspan(e["start_s"], e["end_s"], color=PALETTE["observed"], alpha=0.22, lw=0)
    if "null_low" in curve:
        ax.fill_between(t, curve["null_low"], curve["null_high"], color=PALETTE["null_soft"], lw=0,
                        label="surrogates, 95 % range")
    ax.plot(t, idx, color=PALETTE["data"], lw=1.3, label="windowed PLV of ψ")
    ax.axhline(curve["threshold"], color=PALETTE["ink"], lw=0.8, ls=":", label="tolerance threshold")
    ax.set_ylim(0, 1.02)
    ax.set_ylabel("PLV")
    a, b, p, q = key
    ax.set_title(plain(f"{a} – {b}, {p}:{q}"), loc="left")
    ax.grid(True, axis="y")
    if head:
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False, handlelength=1.4)


def _figure(found, keys) -> str:
    import matplotlib

    with matplotlib.rc_context(_RC):
        fig = _new_figure((8.6, 1.55 * len(keys) + 0.5))
        axes = fig.subplots(len(keys), 1, sharex=True, squeeze=False)[:, 0]
        for i, (ax, key) in enumerate(zip(axes, keys)):
            a, b, p, q = key
            ep = found.epochs[(found.epochs.signal_a == a) & (found.epochs.signal_b == b)
                              & (found.epochs.p == p) & (found.epochs.q == q)]
            _strip(ax, key, found.curves[key], ep, head=i == 0)
        axes[-1].set_xlabel("time (s, window centre)")
        fig.tight_layout()
        return to_data_uri(fig)


def _cell(v) -> str:
    if is_missing(v):
        return "—"
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (float, np.floating)):
        return fmt_num(v)
    return str(v)


def _p(v) -> str:
    return "—" if is_missing(v) else fmt_num(v)


def epochs_section(result, esc) -> str:
    """HTML of the epochs section ("" when the result has none). ``esc`` escapes text."""
    found = getattr(result, "epochs", None)
    if found is None:
        return ""
    sm = found.summary
    o = found.options
    tested = "p_value" in sm and sm["p_value"].notna().any()
    parts = [f"<p>An <b>epoch</b> is a stretch in which ψ stays within a circular spread of {o.tolerance:.3g} rad "
             f"over windows of {o.window_cycles} cycles of the slower rhythm, for at least {o.min_cycles:g} cycles "
             f"and {o.min_s:g} s. "
             + ("Runs like that occur by chance too, most of all near an integer frequency ratio, so the total "
                "time locked is compared with what the surrogates give." if tested else
                "No surrogates were drawn: the epochs are described, not tested.") + "</p>"]
    # one line per pair x ratio in words
    items = []
    for _, r in sm.iterrows():
        words = ratio_words(r["signal_a"], r["signal_b"], int(r["p"]), int(r["q"]))
        line = (f"<b>{esc(r['signal_a'])} – {esc(r['signal_b'])}, {esc(r['ratio'])}</b> ({esc(words)}): "
                f"{int(r['n_epochs'])} epoch(s), {fmt_num(r['total_locked_s'])} s locked "
                f"({100 * r['locked_share']:.0f} % of {fmt_num(r['span_s'])} s")
        if not is_missing(r["share_ci_low"]):
            line += f"; {100 * r['ci_level']:.0f} % interval {100 * r['share_ci_low']:.0f}–{100 * r['share_ci_high']:.0f} %"
        line += ")"
        if tested:
            verdict = "more than chance" if (not is_missing(r["significant"]) and bool(r["significant"])) else \
                "not more than chance"
            line += (f"; surrogates lock {fmt_num(r['null_mean_s'])} s on average; corrected p = "
                     f"{_p(r['p_adjusted'])}: <b>{verdict}</b>")
        items.append(f"<li>{line}</li>")
    parts.append("<ul>" + "".join(items[:_MAX_ROWS]) + "</ul>")
    if tested and len(found.epochs):
        parts.append("<p class='small'>Each epoch is also set against the longest epoch each surrogate gave: "
                     "'longer than chance' means fewer than a share α of the surrogates had any epoch as long.</p>")
    keys = list(found.curves)[:MAX_EPOCH_STRIPS]
    if keys:
        parts.append(f'<figure><img alt="locking index over time with epochs" src="{_figure(found, keys)}">'
                     "<figcaption>Windowed phase-locking value of ψ over time (teal), the threshold the tolerance "
                     "sets (dotted), the epochs found (amber)"
                     + (" and the surrogates' pointwise 95 % range (grey band)" if tested else "") + "."
                     + (f" {len(found.curves) - len(keys)} more pair x ratio strips are in the files only."
                        if len(found.curves) > len(keys) else "") + "</figcaption></figure>")
    ep = found.epochs
    if len(ep):
        cols = [("signal_a", "A"), ("signal_b", "B"), ("ratio", "ratio"), ("epoch", "#"), ("start_s", "start (s)"),
                ("end_s", "end (s)"), ("duration_s", "duration (s)"), ("n_cycles", "cycles"),
                ("mean_phase", "mean ψ (rad)"), ("index", "PLV within"), ("p_duration", "p (duration)"),
                ("beyond_chance", "longer than chance")]
        head = "".join(f"<th>{esc(h)}</th>" for _, h in cols)
        body = "".join("<tr>" + "".join(f"<td>{esc(_cell(r[c]))}</td>" for c, _ in cols) + "</tr>"
                       for _, r in ep.head(_MAX_ROWS).iterrows())
        more = f"<p class='small'>{len(ep) - _MAX_ROWS} more rows in epochs.csv.</p>" if len(ep) > _MAX_ROWS else ""
        parts.append(f"<details><summary>All {len(ep)} epoch(s)</summary><table><thead><tr>{head}</tr></thead>"
                     f"<tbody>{body}</tbody></table>{more}</details>")
    parts.append("<p class='small'>Files: epochs.csv (one row per epoch), epochs_summary.csv (one row per pair "
                 "and ratio).</p>")
    return "".join(parts)
