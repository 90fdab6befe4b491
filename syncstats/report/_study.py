"""The files of a study: results.csv, study_results.csv, report.html, methods.md, provenance.json.

Draws and words what a :class:`syncstats.study.StudyResult` holds; computes no statistic
(the forest plot shows the subject values and the second-level estimate and interval
as the study computed them). Figures use the object API (Figure + FigureCanvasAgg).
Every user string is escaped; the page has no scripts and no network addresses.
"""
from __future__ import annotations

import datetime as _dt
import html
import json
import platform
import sys
from pathlib import Path

import numpy as np
import pandas as pd

from .._atomic import write_folder_atomically
from ._common import fmt_num, fmt_p, measure_name
from ._figures import PALETTE, _RC, _new_figure, plain, to_data_uri
from ._provenance import PACKAGES, _input_entry, _version, column_dtypes, to_jsonable

__all__ = ["save_study", "render_study_html", "study_methods_text", "study_provenance"]

CAUTION = ("Research software, not a medical device: these results are not a diagnosis and do not replace "
           "qualified clinical judgement or local regulations.")

_CONDITION_COLOURS = ["#1e6f6a", "#d4872a", "#6a4c93", "#b0452f", "#4f9c95", "#8a6d3b"]

_TEST_WORDS = {
    "one_sample": "one-sample", "paired": "paired (within subjects)", "between_groups": "between groups",
    "phase_consistency": "preferred-phase consistency",
}


def _e(x) -> str:
    return html.escape("" if x is None else str(x), quote=True)


def _units(study):
    sl = study.subject_values
    if not len(sl):
        return []
    keys = ["signal_a", "signal_b", "ratio", "p", "q", "window", "measure"]
    return [dict(zip(keys, k)) for k, _ in sl.groupby(keys, sort=False, dropna=False)]


def _select(df, unit):
    m = np.ones(len(df), bool)
    for k, v in unit.items():
        m &= (df[k] == v).to_numpy()
    return df[m]


def _unit_title(u) -> str:
    return (f"{u['signal_a']} and {u['signal_b']}, {u['ratio']} ({u['signal_a']} makes {u['p']} cycle(s) while "
            f"{u['signal_b']} makes {u['q']}), window {u['window']}, {measure_name(u['measure'])}")


# --------------------------------------------------------------------------- words


def _verdict(row, alpha) -> str:
    """One plain sentence for a second-level row."""
    if isinstance(row.get("note"), str) and row["note"]:
        return f"not tested: {row['note']}."
    sig = bool(row["significant"]) if not pd.isna(row["significant"]) else False
    est = fmt_num(row["estimate"], 3)
    ci = ""
    if np.isfinite(row.get("ci_low", np.nan)):
        ci = f" ({int(round(100 * row['ci_level']))} % CI {fmt_num(row['ci_low'], 3)} to {fmt_num(row['ci_high'], 3)})"
    padj = fmt_p(row["p_adjusted"])
    who = f"group {row['group']}, condition {row['condition']}"
    t = row["test"]
    if t == "one_sample":
        what = (f"the {row['summary']} is above zero across subjects" if sig and row["estimate"] > 0
                else f"the {row['summary']} differs from zero across subjects" if sig
                else f"no evidence that the {row['summary']} differs from zero across subjects")
    elif t == "paired":
        what = (f"the {row['summary']} differs between conditions ({row['contrast']} = {est}{ci})" if sig
                else f"no evidence of a difference between conditions ({row['contrast']} = {est}{ci})")
        ci = ""
    elif t == "between_groups":
        what = (f"the {row['summary']} differs between groups ({row['contrast']} = {est}{ci})" if sig
                else f"no evidence of a difference between groups ({row['contrast']} = {est}{ci})")
        ci = ""
    else:
        what = ("subjects' preferred phases are consistent (circular mean "
                f"{fmt_num(row['estimate'], 2)} rad, resultant length {fmt_num(row['effect_size'], 2)})" if sig
                else "no evidence that subjects share a preferred phase")
        ci = ""
    est_txt = f" (estimate {est}{ci})" if t == "one_sample" else ""
    return f"{who}: {what}{est_txt}; {row['method']}, corrected p = {padj} at alpha {alpha:g}."


def _table_html(df: pd.DataFrame, cols, fmt=None) -> str:
    fmt = fmt or {}
    head = "".join(f"<th>{_e(c)}</th>" for c in cols)
    body = []
    for _, r in df.iterrows():
        cells = []
        for c in cols:
            v = r[c]
            cells.append(f"<td>{_e(fmt[c](v) if c in fmt else ('' if pd.isna(v) else v))}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


# --------------------------------------------------------------------------- figures


def _forest_figure(study, unit) -> str | None:
    """Subject values per condition, with each cell's parametric estimate and interval."""
    import matplotlib

    sv = _select(study.subject_values, unit)
    sl = _select(study.second_level, unit)
    if not len(sv):
        return None
    conds = list(dict.fromkeys(sv["condition"]))
    subjects = list(dict.fromkeys(sv["subject"]))
    pooled = sl[(sl["test"] == "one_sample") & (sl["approach"] == "parametric")]
    groups = list(dict.fromkeys(sv["group"]))
    pool_name = "(all groups)" if len(groups) > 1 else groups[0]
    with matplotlib.rc_context(_RC):
        fig = _new_figure((6.2, 0.9 + 0.22 * (len(subjects) + 2)))
        ax = fig.add_subplot(1, 1, 1)
        ypos = {s: len(subjects) - k + 1 for k, s in enumerate(subjects)}
        for ci, cond in enumerate(conds):
            col = _CONDITION_COLOURS[ci % len(_CONDITION_COLOURS)]
            d = sv[sv["condition"] == cond]
            off = (ci - (len(conds) - 1) / 2) * 0.18
            ax.plot(d["value"], [ypos[s] + off for s in d["subject"]], "o", ms=4, color=col, label=plain(cond))
            est = pooled[(pooled["condition"] == cond) & (pooled["group"] == pool_name)]
            if len(est) and np.isfinite(est["estimate"].iloc[0]):
                r = est.iloc[0]
                y0 = 0.5 + off
                if np.isfinite(r["ci_low"]):
                    ax.plot([r["ci_low"], r["ci_high"]], [y0, y0], "-", color=col, lw=2)
                ax.plot([r["estimate"]], [y0], "D", ms=7, color=col)
        ax.axvline(0.0, color=PALETTE["muted"], lw=0.8, ls="--")
        ax.set_yticks([ypos[s] for s in subjects] + [0.5], [plain(s) for s in subjects] + ["group estimate"])
        ax.set_xlabel(f"per-subject {study.params.get('measure_summary', 'effect')} (mean over the subject's recordings)")
        ax.set_title("Per-subject values and group estimate (95 % bootstrap CI)")
        ax.legend(loc="lower right")
        ax.grid(axis="x")
        fig.tight_layout()
        return to_data_uri(fig)


def _phase_figure(study, unit) -> str | None:
    sv = _select(study.subject_values, unit)
    sv = sv[np.isfinite(sv["preferred_phase"].to_numpy(float))]
    if not len(sv):
        return None
    import matplotlib

    conds = list(dict.fromkeys(sv["condition"]))
    with matplotlib.rc_context(_RC):
        fig = _new_figure((3.6, 3.6))
        ax = fig.add_subplot(1, 1, 1, projection="polar")
        for ci, cond in enumerate(conds):
            d = sv[sv["condition"] == cond]
            r = 1.0 - 0.12 * ci
            ax.plot(d["preferred_phase"], np.full(len(d), r), "o", ms=5, alpha=0.85,
                    color=_CONDITION_COLOURS[ci % len(_CONDITION_COLOURS)], label=plain(cond))
        ax.set_ylim(0, 1.1)
        ax.set_yticks([])
        ax.set_title("Each subject's preferred phase (rad)")
        ax.legend(loc="lower left", bbox_to_anchor=(-0.15, -0.15))
        fig.tight_layout()
        return to_data_uri(fig)


# --------------------------------------------------------------------------- page

_CSS = """
body{font-family:'DejaVu Sans',Arial,sans-serif;color:#23303b;max-width:980px;margin:2em auto;padding:0 1em;
line-height:1.45}
h1{font-size:1.5em;margin-bottom:.2em}h2{font-size:1.2em;margin-top:1.6em;border-bottom:1px solid #c5ccd3}
h3{font-size:1.02em;margin-top:1.2em}
.caution{background:#fbf3e6;border-left:4px solid #d4872a;padding:.6em .9em;margin:1em 0}
.fail{background:#f8ebe8;border-left:4px solid #b0452f;padding:.6em .9em}
table{border-collapse:collapse;font-size:.82em;margin:.6em 0}
th,td{border-bottom:1px solid #e3e8ed;padding:.25em .5em;text-align:left;vertical-align:top}
th{background:#f3f5f7}
img{max-width:100%}
.muted{color:#6b7784;font-size:.9em}
ul.verdict li{margin:.25em 0}
"""


def render_study_html(study) -> str:
    """The study report as one self-contained HTML page (no scripts, no network)."""
    p = study.params
    alpha = float(p.get("alpha", 0.05))
    parts = [
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>",
        "<title>syncstats study report</title>",
        f"<style>{_CSS}</style></head><body>",
        "<h1>Study report: are the rhythms phase-synchronized across subjects?</h1>",
        f"<p class='caution'>{_e(CAUTION)}</p>",
        f"<p>{_e(p.get('n_recordings'))} recordings listed; {_e(p.get('n_analysed'))} analysed, "
        f"{_e(p.get('n_failed'))} failed. Each recording: {_e(p.get('surrogate'))} surrogates "
        f"(n = {_e(p.get('n_surrogates'))}), {_e(p.get('correction'))} correction within the recording. "
        f"Second level on the per-recording <b>{_e(p.get('measure_summary'))}</b>, "
        f"{_e(p.get('second_level_correction'))} correction per family, alpha {_e(alpha)}.</p>",
    ]
    if study.notes:
        parts.append("<ul class='muted'>" + "".join(f"<li>{_e(n)}</li>" for n in study.notes) + "</ul>")
    # failures
    if len(study.failures):
        parts.append("<h2>Recordings that failed</h2><div class='fail'><ul>")
        for _, r in study.failures.iterrows():
            parts.append(f"<li><b>{_e(r['recording'])}</b> ({_e(r['file'])}): {_e(r['reason'])}</li>")
        parts.append("</ul><p>These recordings are not in any test below.</p></div>")
    # design
    m = study.manifest
    design = (m.groupby(["group", "condition"], sort=False)
              .agg(subjects=("subject", "nunique"), recordings=("recording", "count")).reset_index())
    parts.append("<h2>Design</h2>" + _table_html(design, ["group", "condition", "subjects", "recordings"]))
    # per unit
    for u in _units(study):
        parts.append(f"<h2>{_e(_unit_title(u))}</h2>")
        sl = _select(study.second_level, u)
        parts.append("<h3>Verdict in plain words</h3><ul class='verdict'>")
        for _, r in sl.iterrows():
            parts.append(f"<li>{_e(_TEST_WORDS.get(r['test'], r['test']))}, {_e(r['approach'])}: "
                         f"{_e(_verdict(r, alpha))}</li>")
        parts.append("</ul>")
        d = _select(study.descriptives, u)
        parts.append("<h3>Per condition and group</h3>")
        parts.append(_table_html(d, ["group", "condition", "n_subjects", "n_recordings", "mean", "sd", "median"],
                                 {c: (lambda v: fmt_num(v, 3)) for c in ("mean", "sd", "median")}))
        f1, f2 = _forest_figure(study, u), _phase_figure(study, u)
        for uri, alt in ((f1, "forest plot of per-subject values"), (f2, "circular plot of preferred phases")):
            if uri:
                parts.append(f"<p><img alt='{_e(alt)}' src='{uri}'></p>")
        parts.append("<h3>Second-level tests</h3>")
        parts.append(_table_html(sl, ["test", "method", "group", "condition", "contrast", "n_subjects", "estimate",
                                      "ci_low", "ci_high", "statistic", "p_value", "effect_size",
                                      "effect_size_kind", "p_adjusted", "significant"],
                                 {c: (lambda v: fmt_num(v, 3)) for c in ("estimate", "ci_low", "ci_high",
                                                                          "statistic", "effect_size")}
                                 | {"p_value": fmt_p, "p_adjusted": fmt_p}))
    fams = list(dict.fromkeys(study.second_level["family"])) if len(study.second_level) else []
    if fams:
        parts.append("<h2>What was corrected</h2><ul>" + "".join(f"<li>{_e(f)}</li>" for f in fams) + "</ul>")
    parts.append(f"<p class='muted'>Files: results.csv (every recording), study_results.csv (second level), "
                 f"methods.md, provenance.json. syncstats {_e(p.get('syncstats_version'))}.</p>")
    parts.append(f"<p class='caution'>{_e(CAUTION)}</p></body></html>")
    return "".join(parts)


def study_methods_text(study) -> str:
    """A methods paragraph for the study (markdown)."""
    p = study.params
    fams = list(dict.fromkeys(study.second_level["family"])) if len(study.second_level) else []
    mixed = p.get("repeated_measures") == "mixed_model"
    lines = [
        "# Methods (study)",
        "",
        f"Each of {p.get('n_analysed')} recordings (of {p.get('n_recordings')} listed; {p.get('n_failed')} could "
        f"not be analysed) was analysed separately with syncstats {p.get('syncstats_version')}: "
        f"{p.get('surrogate')} surrogates (n = {p.get('n_surrogates')}) pushed through the same pipeline, "
        f"{p.get('correction')} correction within each recording. Recording i of the manifest used the child "
        f"seed with spawn key (0, i) of the study seed {p.get('seed_entropy')}, so results do not depend on "
        f"the executor or the number of workers.",
        "",
        f"Second level: for every pair x ratio x window x measure, the per-recording {p.get('measure_summary')} "
        + ("(value minus the surrogate null mean) " if p.get("measure_summary") == "effect" else "")
        + "was averaged over each subject's recordings within a group x condition cell"
        + (" (a linear mixed model with a random intercept per subject, statsmodels MixedLM, replaced the "
           "averaging for the parametric one-sample test where a subject had several recordings)" if mixed else "")
        + ". One-sample tests against zero (one-sample t-test; Wilcoxon signed-rank), paired comparisons between "
        "conditions within subjects (paired t-test; Wilcoxon signed-rank) and comparisons between groups "
        "(Welch t-test; Mann-Whitney U) were computed with pingouin, with Hedges g or the rank-biserial "
        f"correlation as effect sizes and percentile bootstrap intervals over subjects "
        f"({p.get('n_bootstrap_second_level')} resamples, scipy.stats.bootstrap). The consistency of subjects' "
        "preferred phases was tested with the Rayleigh test (pingouin.circ_rayleigh). p-values were corrected "
        f"with {p.get('second_level_correction')} (statsmodels multipletests) within each family:",
        "",
    ]
    lines += [f"- {f}" for f in fams]
    lines += ["", CAUTION, ""]
    return "\n".join(lines)


def study_provenance(study, output_files=()) -> dict:
    """What produced the study: versions, parameters, seed, input hashes, failures."""
    return to_jsonable({
        "syncstats_version": _version("syncstats"),
        "written_at": _dt.datetime.now(_dt.timezone.utc).isoformat(),
        "python": sys.version.split()[0],
        "platform": platform.platform(),
        "packages": {k: _version(k) for k in PACKAGES + ("distributed",)},
        "parameters": study.params,
        "inputs": [_input_entry(p) for p in study.inputs],
        "failures": study.failures.to_dict("records"),
        "n_computed": study.n_computed,
        "n_cached": study.n_cached,
        "tables": {"results.csv": {"dtypes": column_dtypes(study.table)},
                   "study_results.csv": {"dtypes": column_dtypes(study.second_level)}},
        "output_files": [str(Path(f).name) for f in output_files],
    })


def save_study(study, out_dir, *, overwrite: bool = False) -> Path:
    """Write the five study files into ``out_dir`` at once, or nothing at all (plus
    epochs.csv and epochs_summary.csv when the recordings were analysed with epochs)."""
    from ._epochs import write_epoch_files

    def build(folder: Path) -> None:
        study.table.to_csv(folder / "results.csv", index=False, encoding="utf-8", lineterminator="\n")
        study.second_level.to_csv(folder / "study_results.csv", index=False, encoding="utf-8", lineterminator="\n")
        (folder / "report.html").write_text(render_study_html(study), encoding="utf-8")
        (folder / "methods.md").write_text(study_methods_text(study), encoding="utf-8")
        files = ["results.csv", "study_results.csv", "report.html", "methods.md"]
        files += [p.name for p in write_epoch_files(study, folder)]
        rec = study_provenance(study, output_files=files + ["provenance.json"])
        (folder / "provenance.json").write_text(json.dumps(rec, indent=2, allow_nan=False), encoding="utf-8")

    return write_folder_atomically(out_dir, build, overwrite=overwrite, protected=list(study.inputs))
