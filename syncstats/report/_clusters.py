"""Report pieces for synchronization clusters: CSV files, the page section, the methods sentence.

Draws and words what :mod:`syncstats.clusters` computed; computes nothing statistical (the
only arithmetic is the display order of the rhythms).
"""
from __future__ import annotations

import matplotlib
import numpy as np

from ._common import fmt_num, surrogate_name
from ._figures import _RC, _SEQ_CMAP, PALETTE, _new_figure, plain, to_data_uri

__all__ = ["csv_frames", "section_html", "methods_sentences"]

#: colours of the clusters in the participation panel (cycled)
_CLUSTER_COLOURS = ("#1e6f6a", "#d4872a", "#5b6fb0", "#8f5a9c", "#6d8f3a", "#b0452f")


def csv_frames(result) -> dict:
    """File name -> DataFrame for the saved folder (empty when the run had no cluster analysis)."""
    cl = getattr(result, "clusters", None)
    if cl is None:
        return {}
    return {"clusters.csv": cl.participation, "cluster_components.csv": cl.components,
            "order_parameter.csv": cl.order}


def _display_order(cl):
    """Rhythms grouped by significant cluster (by participation), then the others."""
    names = list(cl.matrix.index)
    order, labels = [], []
    for k, members in enumerate(cl.clusters):
        order += members
        labels += [k] * len(members)
    rest = [n for n in names if n not in order]
    return order + rest, labels + [-1] * len(rest)


def _figure(cl):
    order, labels = _display_order(cl)
    mat = cl.matrix.loc[order, order].to_numpy(float)
    part = cl.participation
    with matplotlib.rc_context(_RC):
        n = len(order)
        w = max(3.2, 1.4 + 0.34 * n)
        fig = _new_figure((2 * w + 0.8, w + 2.3), layout="constrained")
        grid = fig.add_gridspec(2, 2, height_ratios=[w, 2.0])
        ax_m, ax_p, ax_r = fig.add_subplot(grid[0, 0]), fig.add_subplot(grid[0, 1]), fig.add_subplot(grid[1, :])
        im = ax_m.imshow(mat, cmap=_SEQ_CMAP, vmin=0, vmax=1)
        lab = [plain(x) if len(x) <= 14 else plain(x[:13]) + "…" for x in order]
        ax_m.set_xticks(range(n))
        ax_m.set_yticks(range(n))
        ax_m.set_xticklabels(lab, rotation=45, ha="right")
        ax_m.set_yticklabels(lab)
        ax_m.spines[:].set_visible(False)
        start = 0
        for k in sorted(set(x for x in labels if x >= 0)):
            size = labels.count(k)
            ax_m.add_patch(matplotlib.patches.Rectangle((start - 0.5, start - 0.5), size, size, fill=False,
                                                        ec=_CLUSTER_COLOURS[k % len(_CLUSTER_COLOURS)], lw=2))
            start += size
        ax_m.set_title("pair locking (1:1 PLV), grouped by cluster")
        fig.colorbar(im, ax=ax_m, shrink=0.7, label="PLV")
        vals, cols = [], []
        for name, k in zip(order, labels):
            if k >= 0:
                row = part[(part["signal"] == name) & (part["component"] == k + 1)]
                vals.append(float(row["participation"].iloc[0]))
                cols.append(_CLUSTER_COLOURS[k % len(_CLUSTER_COLOURS)])
            else:
                vals.append(0.0)
                cols.append(PALETTE["null"])
        ax_p.barh(range(n), vals, color=cols)
        ax_p.set_yticks(range(n))
        ax_p.set_yticklabels(lab)
        ax_p.invert_yaxis()
        ax_p.set_xlim(0, 1)
        ax_p.set_xlabel("participation in its cluster")
        ax_p.set_title("participation index")
        ax_p.grid(True, axis="x")
        o = cl.order
        t = o["time_s"].to_numpy(float)
        if np.isfinite(o["null_mean"].to_numpy(float)).any():
            ax_r.fill_between(t, o["null_low"].to_numpy(float), o["null_high"].to_numpy(float),
                              color=PALETTE["null_soft"], lw=0, label="surrogates (pointwise band)")
            ax_r.plot(t, o["null_mean"].to_numpy(float), color=PALETTE["null"], lw=0.9, label="surrogate mean")
        ax_r.plot(t, o["order_parameter"].to_numpy(float), color=PALETTE["data"], lw=1.2, label="data")
        ax_r.set_ylim(0, 1)
        ax_r.set_xlabel("time (s)")
        ax_r.set_ylabel("order parameter")
        ax_r.set_title("the whole group's order parameter over time")
        ax_r.legend(loc="upper left", bbox_to_anchor=(1.0, 1.0))
        ax_r.grid(True, axis="y")
        return to_data_uri(fig)


def section_html(result, esc) -> str:
    """The page section: the reordered matrix, participation, order parameter, components."""
    cl = getattr(result, "clusters", None)
    if cl is None:
        return ""
    p = cl.params
    n_sur = int(p.get("n_surrogates") or 0)
    found = cl.clusters
    if n_sur:
        head = (f"<p>{len(found)} synchronization cluster{'s' if len(found) != 1 else ''} found: "
                + ("; ".join(", ".join(esc(x) for x in m) for m in found) if found else "none")
                + f". A cluster's strength is compared with the largest cluster strength of {n_sur} "
                f"{esc(surrogate_name(p.get('surrogate', '')))} surrogate matrices.</p>")
    else:
        head = "<p>No surrogates were drawn: the decomposition is descriptive only.</p>"
    rows = []
    for _, c in cl.components.iterrows():
        if not c["members"]:
            continue
        sig = bool(c["significant"]) if n_sur else False
        cls = ' class="sig"' if sig else ""
        rows.append(f"<tr{cls}><td>{int(c['component'])}</td><td class=\"t\">{esc(c['members'].replace(';', ', '))}"
                    f"</td><td>{fmt_num(c['eigenvalue'])}</td><td>{fmt_num(c['strength'])}</td>"
                    f"<td>{fmt_num(c['mean_plv_within'])}</td><td>{fmt_num(c['null_upper'])}</td>"
                    f"<td>{fmt_num(c['p_value'], 3)}</td><td>{'yes' if sig else ('—' if not n_sur else 'no')}</td></tr>")
    table = ('<table><thead><tr><th>component</th><th class="t">rhythms (most involved first)</th>'
             "<th>eigenvalue</th><th>strength</th><th>mean PLV within</th><th>surrogates' largest, "
             f"{100 * (1 - float(p.get('alpha', 0.05))):g} % level</th><th>p</th>"
             f"<th>cluster?</th></tr></thead><tbody>{''.join(rows)}</tbody></table>")
    return (f'<div class="card">{head}<figure><img src="{_figure(cl)}" alt="Synchronization clusters">'
            "<figcaption>Left: the pair matrix with rhythms grouped by cluster (outlined). Right: each rhythm's "
            "participation in its cluster (grey: in none). Below: the order parameter of all rhythms over time "
            "with the surrogates' pointwise band.</figcaption></figure>" + table
            + '<p class="small">Every rhythm x component: clusters.csv; components: cluster_components.csv; '
            "the order parameter over time: order_parameter.csv.</p></div>")


def methods_sentences(result, cite) -> list:
    """Sentences for methods.md (with citations registered through ``cite``)."""
    from ..clusters import CITATIONS

    cl = getattr(result, "clusters", None)
    if cl is None:
        return []
    p = cl.params
    out = ["Synchronization clusters were sought by the eigen-decomposition of the matrix of pairwise 1:1 "
           "phase-locking values" + cite([CITATIONS[0]]) + "; components with eigenvalues above 1 were "
           "varimax-rotated" + cite([CITATIONS[2]]) + " and each rhythm's participation index in each cluster is "
           "its squared rotated loading."]
    if int(p.get("n_surrogates") or 0):
        out.append(f"A cluster's strength (the sum of its squared rotated loadings) was compared with the largest "
                   f"strength of each of {int(p['n_surrogates'])} {p['surrogate']} surrogate matrices, decomposed "
                   "and rotated the same way (a max-statistic over components, in the spirit of comparing "
                   "eigenvalues with their distribution under independence" + cite([CITATIONS[1]])
                   + f"), at level {float(p['alpha']):g}; the order parameter of the whole group is shown over time "
                   f"with the surrogates' pointwise {100 * (1 - float(p['alpha'])):g} % band.")
    return out
