"""Report pieces for locking over trials: CSV files, the page section, the methods sentence.

Draws and words what :mod:`syncstats.trial_locking` computed; computes nothing statistical.
"""
from __future__ import annotations

import matplotlib
import numpy as np

from ._common import fmt_num, measure_name
from ._figures import _RC, PALETTE, _new_figure, plain, to_data_uri

__all__ = ["csv_frames", "section_html", "methods_sentences"]

#: at most this many curves drawn (the CSV holds all)
MAX_CURVES = 12


def csv_frames(result) -> dict:
    """File name -> DataFrame for the saved folder (empty when the run had no trial analysis)."""
    tl = getattr(result, "trial_locking", None)
    if tl is None:
        return {}
    return {"trial_locking.csv": tl.curves, "trial_stretches.csv": tl.stretches}


def _figure(tl):
    keys = list(dict.fromkeys(zip(tl.curves["signal_a"], tl.curves["signal_b"], tl.curves["ratio"],
                                  tl.curves["measure"])))[:MAX_CURVES]
    ncol = min(len(keys), 2)
    nrow = -(-len(keys) // ncol)
    with matplotlib.rc_context(_RC):
        fig = _new_figure((4.6 * ncol, 2.7 * nrow), layout="constrained")
        axes = np.atleast_1d(fig.subplots(nrow, ncol, squeeze=False)).ravel()
        for ax, (a, b, r, m) in zip(axes, keys):
            c = tl.curves
            c = c[(c["signal_a"] == a) & (c["signal_b"] == b) & (c["ratio"] == r) & (c["measure"] == m)]
            t = c["time_s"].to_numpy(float)
            tested = np.isfinite(c["null_mean"].to_numpy(float)).any()
            if tested:
                ax.fill_between(t, c["null_mean"].to_numpy(float), c["null_upper"].to_numpy(float),
                                color=PALETTE["null_soft"], lw=0, label="surrogates: mean to upper level")
                ax.plot(t, c["threshold"].to_numpy(float), color=PALETTE["null"], lw=0.9, ls=(0, (4, 2)),
                        label="threshold")
                st = tl.stretches
                st = st[(st["signal_a"] == a) & (st["signal_b"] == b) & (st["ratio"] == r) & (st["measure"] == m)]
                first = True
                for _, s in st[st["significant"].astype(bool)].iterrows():
                    ax.axvspan(s["start_s"], s["end_s"], color=PALETTE["observed"], alpha=0.18, lw=0,
                               label="significant stretch" if first else None)
                    first = False
            ax.plot(t, c["value"].to_numpy(float), color=PALETTE["data"], lw=1.4, label="data")
            ax.axvline(0.0, color=PALETTE["ink"], lw=0.8)
            ax.set_xlabel("time from stimulus (s)")
            ax.set_ylabel(f"across-trial {measure_name(m)}")
            ax.set_title(f"{plain(a)} / {plain(b)}, {r}")
            ax.grid(True, axis="y")
        axes[0].legend(loc="upper left", fontsize=7)
        for ax in axes[len(keys):]:
            ax.remove()
        return to_data_uri(fig)


def section_html(result, esc) -> str:
    """The page section: curves with the null band and stretches, and the stretch table."""
    tl = getattr(result, "trial_locking", None)
    if tl is None or tl.curves.empty:
        return ""
    p = tl.params
    n_sur = int(p.get("n_surrogates") or 0)
    corr = {"cluster": "stretch (cluster) permutation test", "max_stat": "max-statistic over time points"}.get(
        p.get("correction"), str(p.get("correction")))
    intro = (f"<p>Across {int(p.get('n_trials', 0))} trials, the phase difference of each pair was compared at "
             "every time point relative to the stimulus (vertical line at 0 s). ")
    if n_sur:
        intro += (f"The grey band runs from the mean of {n_sur} trial-shuffled surrogates to their pointwise "
                  f"{100 * (1 - float(p.get('alpha', 0.05))):g} % level; the dashed line is the threshold of the "
                  f"{esc(corr)}; shaded stretches are significant after correction over the time points of the "
                  "curve.</p>")
    else:
        intro += "No surrogates were drawn: the curves are descriptive only.</p>"
    body = [f'<div class="card">{intro}<figure><img src="{_figure(tl)}" alt="Locking over trials">'
            "<figcaption>Across-trial locking over time from the stimulus.</figcaption></figure>"]
    st = tl.stretches
    if n_sur and not st.empty:
        rows = []
        for _, s in st.iterrows():
            sig = bool(s["significant"])
            cls = ' class="sig"' if sig else ""
            rows.append(
                f"<tr{cls}>"
                f'<td class="t">{esc(s["signal_a"])} / {esc(s["signal_b"])}</td><td class="t">{esc(s["ratio"])}</td>'
                f'<td class="t">{esc(measure_name(s["measure"]))}</td><td>{fmt_num(s["start_s"])} to '
                f'{fmt_num(s["end_s"])}</td><td>{fmt_num(s["peak_s"])}</td><td>{fmt_num(s["peak_value"])}</td>'
                f'<td>{fmt_num(s["p_value"])}</td><td>{"yes" if sig else "no"}</td></tr>')
        rows = "".join(rows)
        body.append('<table><thead><tr><th class="t">pair</th><th class="t">ratio</th><th class="t">measure</th>'
                    "<th>stretch (s)</th><th>peak at (s)</th><th>peak value</th><th>p (corrected)</th>"
                    f"<th>significant?</th></tr></thead><tbody>{rows}</tbody></table>")
    elif n_sur:
        body.append("<p>No stretch rose above the threshold.</p>")
    body.append('<p class="small">Every time point: trial_locking.csv; every stretch: trial_stretches.csv.</p></div>')
    return "".join(body)


def methods_sentences(result, cite) -> list:
    """Sentences for methods.md (with citations registered through ``cite``)."""
    from ..trial_locking import TRIAL_CITATIONS, TRIAL_CORRECTIONS

    tl = getattr(result, "trial_locking", None)
    if tl is None:
        return []
    p = tl.params
    out = [f"Locking over trials was followed at every time point relative to a stimulus "
           f"({float(p['stimulus_s']):g} s into each of {int(p['n_trials'])} trials) by the across-trial "
           "phase-locking value" + cite([TRIAL_CITATIONS["plv"]]) + " and the across-trial pairwise phase "
           "consistency" + cite([TRIAL_CITATIONS["ppc"]]) + "."]
    if int(p.get("n_surrogates") or 0):
        desc = TRIAL_CORRECTIONS[p["correction"]].format(thr_pct=100 * (1 - float(p["threshold"])))
        out.append(f"Each curve was tested against {int(p['n_surrogates'])} trial-shuffled surrogates (trial i of "
                   "one rhythm paired with another trial of the other) with " + desc
                   + cite([TRIAL_CITATIONS[p["correction"]]]) + f", at a family-wise level of {float(p['alpha']):g}.")
    return out
