"""Figures of the report, drawn with matplotlib's Agg renderer and embedded as PNG data URIs.

Figures are made with the object API (``Figure`` + ``FigureCanvasAgg``), never through
pyplot: rendering is headless whatever backend the user's session has, and the report
does not switch that backend (``matplotlib.use("Agg")`` would, e.g. in a notebook).

Every figure draws what the result holds — phase differences, null distributions, table
rows — and computes no statistic. Histograms and interpolation of a stored phase at
stored event times are the only arithmetic, and both are for drawing.

To add a figure: write ``_panel_<name>(ax, summary, result, ...) -> str | None`` that
draws into ``ax`` and returns a one-line caption (or ``None`` when it has nothing to
show and should be skipped), then list it in ``_PAIR_PANELS``.
"""
from __future__ import annotations

import base64
import io

import matplotlib
import matplotlib.lines
import numpy as np
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from PIL import Image  # Pillow: a required dependency of matplotlib

from ._common import (
    PairSummary,
    fmt_num,
    is_missing,
    measure_name,
    surrogate_name,
)

__all__: list[str] = []

#: our palette (also used by the page's CSS)
PALETTE = {
    "ink": "#23303b",
    "muted": "#6b7784",
    "paper": "#ffffff",
    "data": "#1e6f6a",  # deep teal: the data
    "data_soft": "#bcdad6",
    "observed": "#d4872a",  # amber: the observed value
    "null": "#9aa6b2",  # slate: what chance gives
    "null_soft": "#e3e8ed",
    "alert": "#b0452f",
}

_RC = {
    "font.family": "DejaVu Sans",
    "font.size": 8.5,
    "axes.titlesize": 9.5,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.titlepad": 8,
    "axes.labelsize": 8.5,
    "axes.edgecolor": "#c5ccd3",
    "axes.labelcolor": PALETTE["ink"],
    "axes.linewidth": 0.8,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "xtick.color": PALETTE["muted"],
    "ytick.color": PALETTE["muted"],
    "text.color": PALETTE["ink"],
    "figure.facecolor": PALETTE["paper"],
    "axes.facecolor": PALETTE["paper"],
    "grid.color": "#edf0f2",
    "grid.linewidth": 0.8,
    "legend.frameon": False,
    "legend.fontsize": 7.5,
    "svg.fonttype": "none",
    "axes.axisbelow": True,
}

DPI = 110
#: one panel in inches: three side by side fill the page column at 1:1 (3 x 2.9 in x 110 dpi)
PANEL_W, PANEL_H = 2.9, 2.8
PNG_COLOURS = 160

#: sequential map for pair matrices: warm paper -> pale teal -> deep teal -> night
_SEQ_CMAP = matplotlib.colors.LinearSegmentedColormap.from_list(
    "syncstats_tide", ["#f6f1e4", "#bcdad6", "#4f9c95", "#1e6f6a", "#14383f"]
)


def plain(label) -> str:
    """A user label safe for matplotlib text (no mathtext from a '$' in a name)."""
    return str(label).replace("$", r"\$")


def _new_figure(size, **kwargs) -> Figure:
    """A figure with its own Agg canvas, outside pyplot's figure registry."""
    fig = Figure(figsize=size, **kwargs)
    FigureCanvasAgg(fig)
    return fig


def to_data_uri(fig: Figure) -> str:
    """PNG data URI of a figure.

    The image is reduced to an adaptive palette of ``PNG_COLOURS`` colours (flat-colour
    charts lose nothing visible) which makes the page about three times smaller.
    """
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI, metadata={"Software": None},
                pil_kwargs={"compress_level": 1})
    buf.seek(0)
    with Image.open(buf) as im:
        small = im.convert("RGB").quantize(colors=PNG_COLOURS, method=Image.Quantize.MEDIANCUT,
                                           dither=Image.Dither.NONE)
    out = io.BytesIO()
    small.save(out, format="PNG", optimize=True)
    return "data:image/png;base64," + base64.b64encode(out.getvalue()).decode("ascii")


# --------------------------------------------------------------------------- panels


def _panel_phase_difference(ax, s: PairSummary, result, head) -> str | None:
    key = (s.signal_a, s.signal_b, int(head["p"]), int(head["q"]))
    psi = result.phase_differences.get(key) if result.phase_differences else None
    if psi is None:
        return None
    psi = np.asarray(psi, dtype=float)
    psi = psi[np.isfinite(psi)]
    if psi.size == 0:
        return None
    fig, spec = ax.figure, ax.get_subplotspec()
    ax.remove()
    ax = fig.add_subplot(spec, projection="polar")
    n_bins = 36
    counts, edges = np.histogram(np.angle(np.exp(1j * psi)), bins=n_bins, range=(-np.pi, np.pi))
    share = counts / counts.sum()
    width = edges[1] - edges[0]
    ax.bar(edges[:-1] + width / 2, share, width=width * 0.92, color=PALETTE["data"],
           alpha=0.85, edgecolor="white", linewidth=0.4)
    ax.axhline(0, color=PALETTE["null"])
    uniform = 1.0 / n_bins
    th = np.linspace(-np.pi, np.pi, 200)
    ax.plot(th, np.full_like(th, uniform), color=PALETTE["null"], lw=1, ls="--")
    rmax = share.max() * 1.08
    # the arrow is the mean resultant of the sample drawn (the whole record), so the
    # rose and the arrow describe the same data (drawing arithmetic, not a new statistic)
    resultant = np.mean(np.exp(1j * psi))
    ax.annotate("", xy=(float(np.angle(resultant)), rmax * float(abs(resultant))), xytext=(0, 0),
                arrowprops=dict(arrowstyle="-|>", color=PALETTE["observed"], lw=2))
    ax.set_ylim(0, rmax)
    ax.set_yticklabels([])
    ax.set_xticks(np.deg2rad([0, 90, 180, 270]))
    ax.set_xticklabels(["0", "π/2", "π", "−π/2"])
    ax.grid(True, color="#e6eaee")
    ax.spines["polar"].set_color("#c5ccd3")
    ax.set_title(f"Phase difference ψ at {head['ratio']}", loc="left", pad=14)
    return (
        f"Phase difference ψ = q·φ_A − p·φ_B at {head['ratio']} over the whole analysed record, as shares "
        "per 10° sector. A peaked rose means a preferred timing; the dashed circle is what a flat "
        "(unlocked) distribution would give; the amber arrow is the mean direction of this whole-record "
        "sample and its length the whole-record PLV (a window's value can differ)."
    )


def _panel_null(ax, s: PairSummary, result, head) -> str | None:
    nd = result.null_distribution
    if nd is None or head.name >= len(nd):
        return None
    null = nd[head.name]
    null = np.asarray(null, dtype=float)
    null = null[np.isfinite(null)]
    if null.size == 0:
        return None
    value = float(head["value"])
    lo = min(null.min(), value)
    hi = max(null.max(), value)
    pad = 0.05 * (hi - lo if hi > lo else 1.0)
    bins = np.linspace(lo - pad, hi + pad, min(40, max(10, null.size // 10)) + 1)
    counts, _, _ = ax.hist(null, bins=bins, color=PALETTE["null"], edgecolor="white", linewidth=0.4,
            label=f"{null.size} {surrogate_name(head['surrogate'])} surrogates")
    ax.axvline(value, color=PALETTE["observed"], lw=2.2, label=f"observed {fmt_num(value)}")
    if not is_missing(head["null_mean"]):
        ax.axvline(float(head["null_mean"]), color=PALETTE["ink"], lw=1, ls=":",
                   label=f"null mean {fmt_num(head['null_mean'])}")
    ax.set_xlabel(measure_name(head["measure"]))
    ax.set_ylabel("surrogates")
    ax.legend(loc="upper right", handlelength=1.4)
    ax.set_ylim(0, max(1.0, float(np.max(counts))) * 1.6)
    ax.set_title(f"Observed vs. chance ({head['ratio']})")
    return (
        "What independent rhythms with the same spectra give (grey) and the observed value "
        "(amber line). Locking is claimed only when the amber line sits clear of the grey mass."
    )


def _panel_timecourse(ax, s: PairSummary, result, head) -> str | None:
    w = s.windows
    if w.empty:
        return None
    w = w[w["measure"] == head["measure"]]
    all_ratios = list(dict.fromkeys([head["ratio"]] + w["ratio"].tolist()))
    ratios = all_ratios[:8]
    colors = [PALETTE["data"], "#7a5aa6", "#3f7fb5", "#8f8a3a", "#b5643f", "#3a8f7d", "#8a8a8a", "#5a3a8f"]
    drawn = False
    for r, c in zip(ratios, colors):
        g = w[w["ratio"] == r].sort_values("window_start_s")
        if len(g) < 2:
            continue
        mid = (g["window_start_s"].to_numpy(float) + g["window_end_s"].to_numpy(float)) / 2
        val = g["value"].to_numpy(float)
        lo, hi = g["ci_low"].to_numpy(float), g["ci_high"].to_numpy(float)
        if np.isfinite(lo).any():
            ax.fill_between(mid, lo, hi, color=c, alpha=0.15, lw=0)
        ax.plot(mid, val, color=c, lw=1.6, marker="o", ms=3, label=r)
        sig = g["significant"].map(lambda x: (not is_missing(x)) and bool(x)).to_numpy(bool)
        if sig.any():
            ax.plot(mid[sig], val[sig], ls="none", marker="o", ms=7, mfc="none",
                    mec=PALETTE["observed"], mew=1.6)
        nm = g["null_mean"].to_numpy(float)
        if np.isfinite(nm).any():
            ax.plot(mid, nm, color=PALETTE["null"], lw=1, ls="--")
        drawn = True
    if not drawn:
        return None
    ax.set_xlabel("time (s, window centre)")
    ax.set_ylabel(measure_name(head["measure"]))
    ax.grid(True, axis="y")
    if len(ratios) > 1:  # beside the axes, never over the title or the lines
        ax.legend(title="ratio", loc="upper left", bbox_to_anchor=(1.01, 1.0), ncol=1, handlelength=1.2,
                  borderaxespad=0.0, frameon=False)
    ax.set_title("Over time", loc="left")
    left_out = (f" {len(all_ratios) - len(ratios)} more ratio(s) are in the table only."
                if len(all_ratios) > len(ratios) else "")
    return (
        f"{measure_name(head['measure'])} in each window for every ratio tested (line; band = confidence "
        "interval); dashed grey = null mean; amber rings = windows significant after correction." + left_out
    )


def _panel_ratio_scan(ax, s: PairSummary, result, head) -> str | None:
    if s.is_group:
        return None
    rows = s.whole if not s.whole.empty else s.windows
    rows = rows[rows["measure"] == head["measure"]]
    if rows["ratio"].nunique() < 2 or not s.whole.size:
        return None
    rows = rows.drop_duplicates("ratio")
    x = np.arange(len(rows))
    val = rows["value"].to_numpy(float)
    sig = rows["significant"].map(lambda v: (not is_missing(v)) and bool(v)).to_numpy(bool)
    colors = [PALETTE["data"] if k else PALETTE["data_soft"] for k in sig]
    ax.bar(x, val, color=colors, width=0.65)
    nm = rows["null_mean"].to_numpy(float)
    if np.isfinite(nm).any():
        ax.scatter(x, nm, marker="_", s=220, color=PALETTE["ink"], lw=1.6, zorder=3,
                   label="null mean")
        ax.legend(loc="upper right")
    lo, hi = rows["ci_low"].to_numpy(float), rows["ci_high"].to_numpy(float)
    ok = np.isfinite(lo) & np.isfinite(hi)
    if ok.any():
        # an interval need not contain the value (e.g. percentile bootstrap of a biased
        # index), so it is drawn as a plain segment
        ax.vlines(x[ok], lo[ok], hi[ok], color=PALETTE["muted"], lw=1.2, zorder=4)
    ax.set_xticks(x)
    ax.set_xticklabels(rows["ratio"].tolist(), rotation=0 if len(rows) < 8 else 45)
    ax.set_xlabel("ratio p:q (cycles of A : cycles of B)")
    ax.set_ylabel(measure_name(head["measure"]))
    ax.grid(True, axis="y")
    ax.margins(y=0.2)
    ax.set_title("Ratios tested")
    return (
        "Each tested ratio: dark bars are significant after correction for the whole search, "
        "pale bars are not; black ticks = null mean (the level chance alone reaches)."
    )


def _panel_synchrogram(ax, s: PairSummary, result, head) -> str | None:
    if s.is_group or not result.events or result.time_s is None or not result.phases:
        return None
    p, q = int(head["p"]), int(head["q"])
    a, b = s.signal_a, s.signal_b
    # events of the faster rhythm, phase of the slower one, wrapped over its q (or p) cycles
    options = [(a, b, q)] if p > q else [(b, a, p)] if q > p else [(a, b, q), (b, a, p)]
    for fast, slow, m in options:
        ev = result.events.get(fast)
        ph = result.phases.get(slow)
        if ev is not None and ph is not None:
            break
    else:
        return None
    t = np.asarray(result.time_s, dtype=float)
    ph = np.asarray(ph, dtype=float)
    ev = np.asarray(ev, dtype=float)
    if t.size < 2 or ph.shape[-1] != t.size:
        return None
    ok = np.isfinite(ph)
    ev = ev[(ev >= t[ok].min()) & (ev <= t[ok].max())] if ok.any() else ev[:0]
    if ev.size == 0:
        return None
    at_ev = np.interp(ev, t[ok], ph[ok])
    y = np.mod(at_ev, 2 * np.pi * m) / (2 * np.pi)
    ax.scatter(ev, y, s=7, color=PALETTE["data"], alpha=0.85, lw=0)
    ax.set_ylim(0, m)
    ax.set_yticks(np.arange(m + 1) if m > 1 else [0, 0.5, 1])
    ax.set_xlabel(f"time of each {plain(fast)} event (s)")
    ax.set_ylabel(f"{plain(slow)} phase / 2π, mod {m}")
    ax.grid(True, axis="y")
    ax.set_title(f"Synchrogram ({head['ratio']})")
    n_lines = max(p, q) if p != q else 1
    return (
        f"Phase of {slow} (wrapped over {m} cycle{'s' if m > 1 else ''}) at each event of "
        f"{fast}. Locking at {head['ratio']} shows as {n_lines} flat band"
        f"{'s' if n_lines > 1 else ''}; drifting stripes mean the rhythms slip."
    )


_PAIR_PANELS = (
    _panel_phase_difference,
    _panel_null,
    _panel_ratio_scan,
    _panel_timecourse,
    _panel_synchrogram,
)


def pair_figure(s: PairSummary, result) -> tuple[str | None, list[str]]:
    """One figure per pair (up to five panels). Returns (data URI or None, captions)."""
    with matplotlib.rc_context(_RC):
        fig, captions = draw_pair(s, result)
        return (to_data_uri(fig), captions) if fig is not None else (None, [])


def draw_pair(s: PairSummary, result) -> tuple[Figure | None, list[str]]:
    """The pair's figure as a matplotlib ``Figure`` (laid out) and its captions."""
    head = s.headline
    if head is None:
        return None, []
    with matplotlib.rc_context(_RC):
        fig = _new_figure((PANEL_W * 3, PANEL_H * 2))
        gs = fig.add_gridspec(2, 3)
        captions = []
        used = 0
        for panel in _PAIR_PANELS:
            if used >= 6:
                break
            ax = fig.add_subplot(gs[used // 3, used % 3])
            cap = panel(ax, s, result, head)
            if cap is None:
                for extra in [a for a in fig.axes if a.get_subplotspec() is not None
                              and a.get_subplotspec().num1 == used]:
                    extra.remove()
                continue
            captions.append(cap)
            used += 1
        if used == 0:
            return None, []
        # re-lay the panels actually drawn: 1-3 in a row, 4 as 2 x 2, 5-6 as 2 x 3
        rows, cols = (1, used) if used <= 3 else ((2, 2) if used == 4 else (2, 3))
        fig.set_size_inches(PANEL_W * cols, PANEL_H * rows)
        new_gs = fig.add_gridspec(rows, cols)
        for ax in list(fig.axes):
            num = ax.get_subplotspec().num1
            ax.set_subplotspec(new_gs[num // cols, num % cols])
        # constrained layout makes room for legends outside the axes (the time panel's ratio
        # legend); tight_layout does not, and let that legend run into the next panel's label
        fig.set_layout_engine("constrained", w_pad=0.08, h_pad=0.1, wspace=0.04, hspace=0.06)
        fig.canvas.draw()
        fig.set_layout_engine("none")  # laid out once; no second layout pass when saving
        return fig, captions


#: signals drawn in the signal figure (the page says when more exist)
MAX_SIGNAL_ROWS = 8


def _spectrum_panel(ax, name, v, f0) -> bool:
    f, pxx = v.get("freq_hz"), v.get("power")
    if f is None or pxx is None or np.size(f) < 2:
        ax.text(0.5, 0.5, "event times: no spectrum", ha="center", va="center", transform=ax.transAxes,
                color=PALETTE["muted"])
        ax.set_axis_off()
        ax.set_title(f"{_short(name)}", loc="left")
        return False
    f, pxx = np.asarray(f, float), np.asarray(pxx, float)
    band = v.get("band")
    if band is not None:
        ax.axvspan(band[0], band[1], color=PALETTE["data_soft"], alpha=0.7, lw=0)
    ax.semilogy(f, np.maximum(pxx, np.max(pxx) * 1e-8), color=PALETTE["ink"], lw=1.1)
    if f0 is not None and np.isfinite(f0):
        ax.axvline(f0, color=PALETTE["observed"], lw=1.2, ls="--")
    ax.set_xlim(0, float(f[-1]))
    btxt = f"band {band[0]:.3g}–{band[1]:.3g} Hz" if band is not None else "no band-pass"
    ax.set_xlabel(f"frequency (Hz); {btxt}")
    ax.set_ylabel("power")
    ax.set_yticklabels([], minor=True)
    ax.set_title(f"{_short(name)}: spectrum", loc="left")
    return True


def _short(name, n: int = 22) -> str:
    name = str(name)
    return plain(name if len(name) <= n else name[: n - 1] + "…")


def _trace_panel(ax, name, v):
    t = np.asarray(v.get("t", []), float)
    if t.size < 2:
        ax.set_axis_off()
        return
    handles = []
    if v.get("raw") is not None:
        raw = np.asarray(v["raw"], float)
        filt = np.asarray(v["filtered"], float)
        # the raw trace is drawn around its own mean so that it sits on the filtered one
        handles += ax.plot(t, raw - np.nanmean(raw), color=PALETTE["null"], lw=0.8, label="raw (mean removed)")
        handles += ax.plot(t, filt, color=PALETTE["data"], lw=1.4, label="band-passed")
        ax.set_ylabel("signal")
    else:
        ax.set_yticks([])
    ev = np.asarray(v.get("events", []), float)
    if ev.size:
        for e in ev:
            ax.axvline(e, color=PALETTE["alert"], lw=0.8, alpha=0.7)
        handles.append(matplotlib.lines.Line2D([], [], color=PALETTE["alert"], lw=0.8, label="events"))
    tw = ax.twinx()
    tw.plot(t, np.asarray(v["phase"], float), ls="none", marker=".", ms=2.2, color=PALETTE["observed"])
    handles.append(matplotlib.lines.Line2D([], [], ls="none", marker=".", color=PALETTE["observed"],
                                           label="phase (right axis)"))
    tw.set_ylim(-np.pi * 1.08, np.pi * 1.08)
    tw.set_yticks([-np.pi, 0, np.pi])
    tw.set_yticklabels(["−π", "0", "π"])
    tw.spines["right"].set_visible(True)
    ax.set_xlabel("time (s)")
    ax.set_xlim(t[0], t[-1])
    # above the axes, never over the traces
    ax.legend(handles=handles, loc="lower left", bbox_to_anchor=(0.0, 1.01), ncol=len(handles), borderaxespad=0.0,
              handlelength=1.2, columnspacing=1.0, frameon=False)


def draw_signals(result) -> tuple[Figure | None, str]:
    """Each rhythm's spectrum with its pass band (left) and a short stretch of the raw and
    band-passed signal with its phase and events (right)."""
    views = getattr(result, "rhythm_views", None) or {}
    names = list(views)[:MAX_SIGNAL_ROWS]
    if not names:
        return None, ""
    d = result.diagnostics
    f0s = {}
    if d is not None and not d.empty and "dominant_freq_hz" in d:
        f0s = dict(zip(d["signal"].astype(str), d["dominant_freq_hz"].astype(float)))
    with matplotlib.rc_context(_RC):
        fig = _new_figure((PANEL_W * 3, 2.3 * len(names)))
        gs = fig.add_gridspec(len(names), 2, width_ratios=(1, 2))
        for k, n in enumerate(names):
            _spectrum_panel(fig.add_subplot(gs[k, 0]), n, views[n], f0s.get(n))
            _trace_panel(fig.add_subplot(gs[k, 1]), n, views[n])
        fig.set_layout_engine("constrained", w_pad=0.08, h_pad=0.1, wspace=0.04, hspace=0.08)
        fig.canvas.draw()
        fig.set_layout_engine("none")
    more = f" {len(views) - len(names)} more signal(s) are not drawn." if len(views) > len(names) else ""
    cap = ("Left: each signal's power spectrum (Welch) with the pass band used for its phase shaded and its "
           "dominant frequency dashed. Right: the first seconds of the analysed span — the raw signal (grey, "
           "mean removed), the band-passed signal the phase comes from (teal) and the phase (amber dots, right "
           "axis), over about eight of the rhythm's own cycles; event rhythms show their event times (red) and the phase interpolated between them."
           " A phase is meaningful where the band-passed trace follows the raw rhythm cycle by cycle." + more)
    return fig, cap


def signal_figure(result) -> tuple[str | None, str]:
    """Data URI of :func:`draw_signals` and its caption (None, "" when nothing to draw)."""
    with matplotlib.rc_context(_RC):
        fig, cap = draw_signals(result)
        return (to_data_uri(fig), cap) if fig is not None else (None, "")


def group_figure(table: pd.DataFrame, morder: list, *, max_maps: int = 6):
    """Pair-matrix heat maps of the value (row = signal A, column = signal B).

    One map per recording x ratio of the first measure, on whole-record rows (or the
    first window when only windows exist). Returns (data URI, caption) or (None, "").
    """
    pairs = table[table["signal_b"] != ""]
    if pairs.empty:
        return None, ""
    measure = next((m for m in morder if (pairs["measure"] == m).any()), pairs["measure"].iloc[0])
    pairs = pairs[pairs["measure"] == measure]
    # keep one row per (recording, a, b, ratio): the longest span
    span = pairs["window_end_s"].astype(float) - pairs["window_start_s"].astype(float)
    pairs = pairs.assign(_span=span.fillna(0)).sort_values("_span", ascending=False, kind="stable")
    n_spans = pairs[["window_start_s", "window_end_s"]].drop_duplicates().shape[0]
    pairs = pairs.drop_duplicates(["recording", "signal_a", "signal_b", "ratio"])
    span_txt = ""
    if n_spans > 1:
        w0, w1 = float(pairs["window_start_s"].iloc[0]), float(pairs["window_end_s"].iloc[0])
        span_txt = (f" Values of the longest analysed span of each pair ({w0:.0f}–{w1:.0f} s for the first); "
                    f"{n_spans} spans were analysed, see the table for the others.")
    maps = []
    for rec, g in pairs.groupby("recording", sort=False):
        names = list(dict.fromkeys(g["signal_a"].tolist() + g["signal_b"].tolist()))
        if len(names) < 3:
            continue
        for r in list(dict.fromkeys(g["ratio"].tolist())):
            maps.append((rec, r, names, g[g["ratio"] == r]))
    if not maps:
        return None, ""
    omitted = max(0, len(maps) - max_maps)
    maps = maps[:max_maps]
    ncol = min(len(maps), 3)
    nrow = int(np.ceil(len(maps) / ncol))
    with matplotlib.rc_context(_RC):
        size = max(len(m[2]) for m in maps)
        cell = 0.42 if size <= 10 else 0.26
        w = max(3.4, 1.6 + cell * size)
        fig = _new_figure((w * ncol + 1.0, (w - 0.4) * nrow), layout="constrained")
        axes = fig.subplots(nrow, ncol, squeeze=False)
        cmap = _SEQ_CMAP
        allv = np.concatenate([m[3]["value"].to_numpy(float) for m in maps])
        allv = allv[np.isfinite(allv)]
        vmax = max(float(allv.max()), 1e-9) if allv.size else 1.0
        vmin = min(0.0, float(allv.min())) if allv.size else 0.0
        im = None
        for ax, (rec, r, names, g) in zip(axes.flat, maps):
            k = len(names)
            idx = {n: i for i, n in enumerate(names)}
            mat = np.full((k, k), np.nan)
            sig = np.zeros((k, k), bool)
            for _, row in g.iterrows():
                i, j = idx[row["signal_a"]], idx[row["signal_b"]]
                mat[i, j] = row["value"]
                sig[i, j] = (not is_missing(row["significant"])) and bool(row["significant"])
                if str(r) == "1:1" and np.isnan(mat[j, i]):
                    mat[j, i], sig[j, i] = mat[i, j], sig[i, j]
            im = ax.imshow(np.ma.masked_invalid(mat), cmap=cmap, vmin=vmin, vmax=vmax)
            ax.set_facecolor("#f3f4f6")
            ax.set_xticks(range(k))
            ax.set_yticks(range(k))
            lab = [plain(n) if len(n) <= 14 else plain(n[:13]) + "…" for n in names]
            ax.set_xticklabels(lab, rotation=45, ha="right")
            ax.set_yticklabels(lab)
            ax.spines[:].set_visible(False)
            if k <= 10:
                for i in range(k):
                    for j in range(k):
                        if np.isfinite(mat[i, j]):
                            txt = f"{mat[i, j]:.2f}".replace("-", "−") + ("*" if sig[i, j] else "")
                            light = (mat[i, j] - vmin) / (vmax - vmin + 1e-12) > 0.55
                            ax.text(j, i, txt, ha="center", va="center", fontsize=7,
                                    color="white" if light else PALETTE["ink"],
                                    fontweight="bold" if sig[i, j] else "normal")
            title = f"{measure_name(measure)} at {r}"
            if rec:
                title = f"{plain(rec)}: {title}"
            ax.set_title(title)
        for ax in list(axes.flat)[len(maps):]:
            ax.remove()
        if im is not None:
            fig.colorbar(im, ax=axes.ravel().tolist(), shrink=0.7, label=measure_name(measure))
        uri = to_data_uri(fig)
    cap = (
        f"{measure_name(measure)} for every pair (row = signal A, column = signal B; a 1:1 "
        "map is symmetric). * and bold = significant after correction. Grey = not analysed."
        + span_txt
    )
    if omitted:
        cap += f" {omitted} further map(s) were left out to keep the page small; see results.csv."
    return uri, cap
