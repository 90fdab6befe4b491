"""methods.md: a methods paragraph ready to paste into a paper, with its references.

Only what the run used is named and cited. Wording is ours; measures, surrogates and
corrections are described and cited from their registries; the phase methods' papers
are listed here (author, year, journal, volume:pages).
"""
from __future__ import annotations

from pathlib import Path

import pandas as pd

from ..inference import CORRECTION_METHODS
from ..measures import MEASURE_METHODS
from ..nulls import SURROGATE_METHODS
from ._common import fmt_level, ratio_words
from ._epochs import epochs_methods

__all__ = ["methods_text", "write_methods_md", "CAUTION"]

CAUTION = (
    "syncstats is research software, not a medical device: its results are not for "
    "diagnosis or treatment. Follow local regulations and qualified clinical judgement."
)

REFERENCES = {
    "chavez2006": "Chavez M, et al. (2006). J Neurosci Methods 154:149–160.",
    "torrence1998": "Torrence C, Compo GP (1998). Bull Am Meteorol Soc 79:61–78.",
    "kralemann2007": "Kralemann B, et al. (2007). Phys Rev E 76:055201(R).",
    "kralemann2008": "Kralemann B, et al. (2008). Phys Rev E 77:066205.",
    "tass1998": "Tass P, et al. (1998). Phys Rev Lett 81:3291–3294.",
    "schafer1998": "Schäfer C, Rosenblum MG, Kurths J, Abel H-H (1998). Nature 392:239–240.",
    "schafer1999": "Schäfer C, et al. (1999). Phys Rev E 60:857–870.",
    "phipson2010": "Phipson B, Smyth GK (2010). Stat Appl Genet Mol Biol 9:39.",
    "efron1993": "Efron B, Tibshirani RJ (1993). An Introduction to the Bootstrap. Chapman & Hall.",
    "bartsch2007": "Bartsch R, Kantelhardt JW, Penzel T, Havlin S (2007). Phys Rev Lett 98:054102.",
    "toledo2002": "Toledo E, Akselrod S, Pinhas I, Aravot D (2002). Med Eng Phys 24:45–52.",
}

_NULL_LEVEL_TEXT = {
    "signal": ("Each surrogate was made from the raw signal and passed through exactly the "
               "same preprocessing and phase estimation as the data, so any locking that the "
               "filters themselves create is part of the null."),
    "phase": ("Surrogates were made at the level of the phases supplied, not from raw "
              "signals; they do not account for locking created by any filtering done before "
              "the phases were computed."),
    "event": ("Surrogates were made at the level of the event times supplied, not from raw "
              "signals; they do not account for any processing done before the events were "
              "detected."),
}


_MD_SPECIAL = set("\\`*_[]{}<>&|~#!")
_HTML = {"<": "&lt;", ">": "&gt;", "&": "&amp;"}


def _label(x) -> str:
    """A label (signal, recording, band or method name) as literal text in Markdown:
    HTML's ``< > &`` become entities and Markdown's markup characters get a backslash."""
    return "".join(_HTML.get(ch) or ("\\" + ch if ch in _MD_SPECIAL else ch) for ch in str(x))


def _as_list(x) -> list:
    if x is None:
        return []
    if isinstance(x, (str, bytes)):
        return [x]
    if isinstance(x, dict):
        return list(x.items())
    try:
        return list(x)
    except TypeError:
        return [x]


def _join(words: list[str]) -> str:
    words = [w for w in words if w]
    if len(words) <= 1:
        return "".join(words)
    return ", ".join(words[:-1]) + " and " + words[-1]


#: the registries cite by full reference; the same paper is one entry
_KEY_OF = {v: k for k, v in REFERENCES.items()}


class _Cites:
    def __init__(self):
        self.keys: list[str] = []

    def __call__(self, keys) -> str:
        """Register references; return an in-text marker like ' [1, 2]'."""
        nums = []
        for k in keys:
            k = _KEY_OF.get(k, k)
            if k not in self.keys:  # a key of REFERENCES, or a registry's full citation
                self.keys.append(k)
            nums.append(self.keys.index(k) + 1)
        return f" [{', '.join(map(str, nums))}]" if nums else ""


def _phase_sentence(params: dict, diagnostics: pd.DataFrame, cite: _Cites) -> str:
    methods = set()
    pm = params.get("phase_method")
    for m in _as_list(pm):
        methods.add(str(m[1] if isinstance(m, tuple) else m))
    if diagnostics is not None and not diagnostics.empty and "method" in diagnostics:
        methods.update(str(m) for m in diagnostics["method"].dropna())
    parts = []
    if "hilbert" in methods:
        parts.append("the analytic signal (Hilbert transform) of each detrended, zero-phase "
                     "band-pass filtered signal, with the filter edges discarded"
                     + cite(["chavez2006"]))
    if "wavelet" in methods:
        parts.append("the argument of a complex Morlet wavelet transform at the rhythm's "
                     "frequency" + cite(["torrence1998"]))
    if methods & {"events", "event"}:
        parts.append("linear interpolation of 2π per interval between successive event "
                     "times (marker events)")
    if methods & {"phase", "phases"}:
        parts.append("phases supplied directly with the data (used as given)")
    other = sorted(methods - {"hilbert", "wavelet", "events", "event", "phase", "phases"})
    parts.extend(f"the '{_label(m)}' method" for m in other)
    if not parts:
        return ""
    s = f"Instantaneous phases were obtained from {_join(parts)}."
    bands = params.get("bands")
    if bands:
        if isinstance(bands, dict):
            txt = _join([f"{_label(k)} {_band_txt(v)}" for k, v in bands.items()])
        else:
            txt = _band_txt(bands)
        s += f" Pass bands: {txt}."
    if params.get("protophase_correction"):
        s += (" Each phase estimate was transformed so that its density over the cycle is "
              "uniform (protophase-to-phase correction)" + cite(["kralemann2007", "kralemann2008"]) + ".")
    return s


def _band_txt(v) -> str:
    if v is None or (isinstance(v, str) and v in ("", "auto")):
        return "chosen around each signal's spectral peak"
    try:
        lo, hi = (float(x) for x in v)
        return f"{lo:.3g}–{hi:.3g} Hz"
    except (TypeError, ValueError):
        return _label(v)


def _windows_text(windows, table) -> str:
    """'in 9 windows of 60 s (0–300 s)' or '' when the whole record was one window."""
    spans = []
    for w in _as_list(windows):
        try:
            a, b = (float(x) for x in w)
        except (TypeError, ValueError):
            continue
        spans.append((a, b))
    if len(spans) < 2 and isinstance(windows, (int, float)) and not isinstance(windows, bool):
        return f"in windows of {float(windows):g} s"
    if len(spans) < 2 and table is not None and not table.empty:
        spans = list(dict.fromkeys(zip(table["window_start_s"].astype(float),
                                       table["window_end_s"].astype(float))))
    if len(spans) < 2:
        return ""
    lengths = sorted({round(b - a, 3) for a, b in spans})
    ltxt = f"{lengths[0]:g} s" if len(lengths) == 1 else f"{lengths[0]:g} to {lengths[-1]:g} s"
    lo = min(a for a, _ in spans)
    hi = max(b for _, b in spans)
    return f"in {len(spans)} windows of {ltxt} between {lo:g} and {hi:g} s"


def _two_state_sentence(table) -> str:
    """How rows with two lock states were flagged ("" when no row was)."""
    if table is None or "warnings" not in table or not table["warnings"].str.contains("two preferred values").any():
        return ""
    return ("Rows were flagged when ψ had two preferred values half a turn apart: its second circular "
            "moment |⟨exp(2iψ)⟩| above its first and above the Rayleigh critical value at 0.001 for the "
            "row's cycles. Rhythms with symmetric waveforms can hold a p:q lock in two such states and "
            "jump between them, which cancels the PLV although ψ stays locked between the jumps.")


def _ci_sentence(params: dict, table, cite) -> str:
    has_ci = table is not None and not table.empty and table["ci_low"].notna().any()
    n_boot = params.get("n_bootstrap")
    if not has_ci or (n_boot is not None and not n_boot):
        return ""
    lvl = fmt_level(params.get("ci_level")) or fmt_level(table["ci_level"].dropna().iloc[0]
                                                         if table["ci_level"].notna().any() else None)
    kind = str(params.get("ci_method") or "")
    texts = [t for t in dict.fromkeys(table["ci_method"].astype(str)) if t]
    boot = n_boot or any("boot" in t.lower() for t in texts)
    head = f"The {lvl + '% ' if lvl else ''}confidence interval"
    if boot:
        detail = ", ".join(x for x in (f"{int(n_boot)} resamples" if n_boot else "",
                                       f"{kind} interval" if kind else "") if x)
        return (f"{head} of each value came from a block bootstrap that resamples whole cycles "
                f"rather than single samples{' (' + detail + ')' if detail else ''}"
                f"{cite(['efron1993'])}.")
    how = texts[0] if texts else kind
    return f"{head} of each value: {how}." if how else ""


def _ratio_list(table: pd.DataFrame, params: dict) -> list[str]:
    if table is not None and not table.empty:
        return list(dict.fromkeys(str(r) for r in table["ratio"] if str(r)))
    rs = params.get("ratios")
    out = []
    for r in _as_list(rs):
        if isinstance(r, (list, tuple)) and len(r) == 2:
            out.append(f"{int(r[0])}:{int(r[1])}")
        else:
            out.append(str(r))
    return out


def _example_pair(table: pd.DataFrame):
    if table is None or table.empty:
        return None
    pairs = table[table["signal_b"] != ""]
    if pairs.empty:
        return None
    nonunit = pairs[(pairs["p"] != pairs["q"])]
    row = (nonunit if not nonunit.empty else pairs).iloc[0]
    return (_label(row["signal_a"]), _label(row["signal_b"]), int(row["p"]), int(row["q"]),
            _label(row["ratio"]))


def _signal_count(params: dict, table) -> int:
    """Number of signals analysed: from the recorded kinds, else from the table's pairs."""
    kinds = params.get("kinds") if isinstance(params.get("kinds"), dict) else None
    if kinds:
        return len(kinds)
    if table is not None and not table.empty:
        pairs = table[table["signal_b"] != ""]  # group rows name the group, not a signal
        return len(set(pairs["signal_a"]) | set(pairs["signal_b"]))
    return 0


def _heading_sentence(params: dict, table) -> str:
    """The opening sentence: the program, its version, the signals and their rate."""
    head = "Phase synchronization was assessed with syncstats"
    ver = params.get("syncstats_version")
    if ver:
        head += f" (version {ver})"
    bits = []
    n_signals = _signal_count(params, table)
    if n_signals:
        bits.append(f"{n_signals} signals")
    fs = params.get("fs")
    if fs:
        bits.append(f"sampled at {float(fs):g} Hz")
    return head + (f" on {' '.join(bits)}" if bits else "") + "."


def _ratio_sentence(params: dict, table, cite: _Cites) -> str:
    """The generalized phase difference and the ratios it was formed at ("" without ratios)."""
    ratios = _ratio_list(table, params)
    if not ratios:
        return ""
    nm = any(r != "1:1" for r in ratios)
    s = (f"For each pair the generalized phase difference ψ = q·φ_A − p·φ_B was formed at "
         f"the ratio{'s' if len(ratios) > 1 else ''} {_join(ratios)}")
    if params.get("ratios") == "auto":
        s += " (chosen from the signals' dominant frequencies)"
    return s + (cite(["tass1998"]) if nm else "") + "."


def _measures_sentence(params: dict, table, cite: _Cites) -> str:
    """The locking measures, described and cited from their registry ("" without any)."""
    measures = [str(m) for m in _as_list(params.get("measures"))]
    if table is not None and not table.empty:
        measures += [m for m in dict.fromkeys(table["measure"]) if m not in measures]
    mtxt = []
    for m in measures:
        entry = MEASURE_METHODS.get(m)
        mtxt.append(entry.description + cite(entry.citations) if entry else f"the measure '{_label(m)}'")
    return f"Locking was quantified by {_join(mtxt)}." if mtxt else ""


def _windows_sentence(params: dict, table) -> str:
    """The time windows, each a separate test ("" when the whole record was one window)."""
    wtxt = _windows_text(params.get("windows"), table)
    if not wtxt:
        return ""
    return (f"To follow locking over time, every measure was computed {wtxt}, and every "
            "window counted as a separate test.")


def _surrogate_sentence(params: dict, n_sur: int, cite: _Cites) -> str:
    """How many surrogates of which kind, and the null hypothesis they stand for."""
    sur = str(params.get("surrogate") or "")
    entry = SURROGATE_METHODS.get(sur)
    text = entry.description + cite(entry.citations) if entry else f"'{_label(sur)}' surrogates"
    per_signal = entry is not None and entry.acts_on == "signal"
    return (f"Significance was tested against {n_sur} {text}"
            + (", generated independently for each signal." if per_signal else ".")
            + (f" Null hypothesis: {entry.null_hypothesis}" if entry else ""))


def _shift_sentence(params: dict) -> str:
    """How many effectively independent shifts the time-shift test had ("" otherwise)."""
    corr, n_eff = params.get("shift_correlation_s"), params.get("effective_shifts")
    if not corr or not n_eff:
        return ""
    rng = lambda v, f: f"{v[0]:{f}}" if f"{v[0]:{f}}" == f"{v[1]:{f}}" else f"{v[0]:{f}}–{v[1]:{f}}"  # noqa: E731
    return (f"The PLV stayed alike over shifts closer than {rng(corr, '.3g')} s (the correlation length of "
            f"its curve over shifts, measured on a decoupled copy of the pair), so the shifts held about "
            f"{rng([round(n_eff[0]), round(n_eff[1])], 'd')} effectively independent values.")


def _null_level_sentence(params: dict) -> str:
    """At which level (raw signal, phase, event) the surrogates were made ("" if unknown)."""
    nl = str(params.get("null_level") or "")
    kinds = params.get("kinds") or {}
    if nl == "phase" and kinds and "phase" not in set(kinds.values()):
        # phases computed by syncstats itself: a shift or re-pairing commutes with it
        return ("Surrogates were made from the phases computed above; a time shift or a "
                "re-pairing of trials commutes with the zero-phase filter away from the "
                "record ends, which were discarded, so the filtering is the same for data "
                "and surrogates.")
    return _NULL_LEVEL_TEXT.get(nl, "")


def _pvalue_sentence(cite: _Cites) -> str:
    """The surrogate p-value and the bias, effect and z columns reported with it."""
    return ("The p-value of each test was (1 + k)/(1 + S), where k is the number of the "
            "S surrogates whose value reached the observed one, so p is never zero"
            + cite(["phipson2010"]) + ". For each row the surrogate mean (the bias "
            "expected without coupling), the debiased effect (value − surrogate mean) and "
            "z = effect / surrogate standard deviation are reported.")


def _correction_sentence(params: dict, table, cite: _Cites) -> str:
    """The multiple-testing correction (or its absence) and the families corrected for."""
    corr = str(params.get("correction") or "none")
    fam = ""
    if table is not None and not table.empty:
        fams = [_label(f) for f in dict.fromkeys(table["family"].astype(str)) if f]
        if fams:
            fam = f" The family corrected for was: {'; '.join(fams)}."
    if corr in ("none", ""):
        return "No correction for multiple testing was applied; the p-values are per test." + fam
    entry = CORRECTION_METHODS.get(corr)
    text = entry.description + cite(entry.citations) if entry else f"the '{_label(corr)}' correction"
    return f"Every ratio, pair and window searched was corrected for together with {text}.{fam}"


def _decision_sentence(params: dict) -> str:
    """When a row was called significant and when locked ("" without a level α)."""
    alpha = params.get("alpha")
    if alpha is None:
        return ""
    return (f"A result was called significant when its corrected p-value was below "
            f"α = {float(alpha):g}. Significance rejects independence only; a row was "
            "called locked when, in addition, its ratio had the largest debiased effect "
            "of its pair and window (the ratio certainty is the share of cycle-block "
            "bootstrap resamples in which it stayed the largest), its value exceeded "
            "the Rayleigh critical value for its number of cycles (more concentration "
            "than chance over that many independent cycles), and the phase difference "
            "made at most one net turn in four cycles of the slower rhythm (frequency "
            "entrainment; a ratio at which ψ keeps turning can show dependence, "
            "not a lock).")


def _test_sentences(params: dict, table, cite: _Cites) -> list[str]:
    """The significance test: surrogates, null level, p-values, correction, decision rule."""
    n_sur = int(params.get("n_surrogates") or 0)
    if n_sur <= 0:
        return ["No surrogates were drawn (n_surrogates = 0), so no significance test was "
                "made: the values are descriptive only."]
    return [_surrogate_sentence(params, n_sur, cite), _shift_sentence(params), _null_level_sentence(params),
            _pvalue_sentence(cite), _correction_sentence(params, table, cite),
            _decision_sentence(params)]


def _null_comparison_sentence(result) -> str:
    """The other nulls the same data were tested against ("" without a test or a comparison)."""
    from ._compare import methods_sentence

    return methods_sentence(result) if int((result.params or {}).get("n_surrogates") or 0) > 0 else ""


def _seed_sentence(params: dict) -> str:
    """The seed that makes every random draw repeatable ("" when none was recorded)."""
    seed = params.get("seed_entropy")
    if seed is None:
        return ""
    return (f"All random draws came from one seeded generator (seed entropy {seed}), so "
            "the analysis can be repeated exactly.")


def _synchrogram_sentence(result, cite: _Cites) -> str:
    """The synchrograms shown for event data ("" without events)."""
    if not result.events:
        return ""
    return ("Synchrograms (the phase of the slower rhythm at each event of the faster "
            "one) are shown for event data" + cite(["schafer1998", "schafer1999"]) + ".")


def _convention_lines(table) -> list[str]:
    """The 'Ratio convention' section, with an example pair from the table when there is one."""
    lines = ["## Ratio convention", ""]
    lines.append("A ratio p:q means that signal A completes p cycles while signal B completes "
                 "q cycles (the frequency of A is about p/q times that of B), and the phase "
                 "difference tested is ψ = q·φ_A − p·φ_B, which stays bounded when the two are "
                 "locked at that ratio.")
    ex = _example_pair(table)
    if ex:
        a, b, p, q, r = ex
        lines.append(f"For example, {r} for the pair ({a}, {b}) means that {ratio_words(a, b, p, q)}.")
    return lines + [""]


def _notes_lines(result) -> list[str]:
    """The 'Notes from the run' section ([] when the run left no notes)."""
    run_notes = [str(n) for n in (result.notes or []) if str(n).strip()]
    if not run_notes:
        return []
    return ["## Notes from the run", ""] + [f"- {_label(n)}" for n in run_notes] + [""]


def _reference_lines(cite: _Cites) -> list[str]:
    """The numbered 'References' section, in order of first citation ([] when none)."""
    if not cite.keys:
        return []
    return (["## References", ""]
            + [f"{i}. {REFERENCES.get(k, k)}" for i, k in enumerate(cite.keys, 1)] + [""])


def methods_text(result, *, notes: bool = True, caution: bool = True) -> str:
    """The methods section (Markdown) for ``result``.

    One paragraph naming every method, parameter and count used, the ratio convention in
    words, the run's notes (``notes=True``), the caution (``caution=True``) and the
    numbered references (only those cited in the paragraph).
    """
    from . import _clusters, _trials

    params = dict(result.params or {})
    table = result.table
    cite = _Cites()  # sentences are built in reading order: citation numbers follow it
    para = [_heading_sentence(params, table),
            _phase_sentence(params, result.diagnostics, cite),
            _ratio_sentence(params, table, cite),
            _measures_sentence(params, table, cite),
            _windows_sentence(params, table),
            *_test_sentences(params, table, cite),
            _two_state_sentence(table),
            _null_comparison_sentence(result),
            _ci_sentence(params, table, cite),
            epochs_methods(result, cite),
            _seed_sentence(params),
            *_trials.methods_sentences(result, cite),
            *_clusters.methods_sentences(result, cite),
            _synchrogram_sentence(result, cite)]
    lines = ["# Methods", "", " ".join(s for s in para if s), ""]
    lines += _convention_lines(table)
    lines += _notes_lines(result) if notes else []
    lines += ["## Caution", "", CAUTION, ""] if caution else []
    lines += _reference_lines(cite)
    return "\n".join(lines)


def write_methods_md(result, path) -> Path:
    """Write :func:`methods_text` to ``path`` (UTF-8). Returns the path."""
    path = Path(path)
    path.write_text(methods_text(result), encoding="utf-8")
    return path
