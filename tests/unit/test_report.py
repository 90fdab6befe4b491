"""Unit tests of the report layer (syncstats.report).

The results come from ``syncstats.analyze`` on small simulated rhythms made here with
numpy (invented data: these tests check what the report writes, not the statistics).
A hand-built ResultData covers what a short analysis does not reach cheaply (windows,
event synchrograms, many pairs, hostile labels).
"""
from __future__ import annotations

import dataclasses
import hashlib
import json
import os
import re
import sys
from html.parser import HTMLParser
from importlib import metadata

import numpy as np
import pandas as pd
import pytest

import syncstats
from syncstats._errors import SyncstatsInputError
from syncstats.report import (
    OUTPUT_FILES,
    methods_text,
    read_results_csv,
    render_html,
    save_result,
    write_report_html,
)
from syncstats.results import ResultData, finalize_table

# --------------------------------------------------------------------------- data


def _rhythms(seed: int, *, seconds: float = 200.0, fs: float = 50.0):
    """Two noisy oscillators sharing one wandering phase (coupled) and a third with its own."""
    rng = np.random.default_rng(seed)
    t = np.arange(0, seconds, 1 / fs)
    shared = 2 * np.pi * 0.5 * t + np.cumsum(rng.normal(0, 0.08, t.size))
    own = 2 * np.pi * 0.8 * t + np.cumsum(rng.normal(0, 0.08, t.size))
    a = np.cos(shared) + 0.3 * rng.normal(size=t.size)
    b = np.cos(shared + 0.7) + 0.3 * rng.normal(size=t.size)
    c = np.cos(own) + 0.3 * rng.normal(size=t.size)
    return fs, {"a": a, "b": b, "c": c}


@pytest.fixture(scope="module")
def tested_result():
    """Three signals (3 pairs at 1:1) against 79 IAAFT surrogates: a pair no surrogate
    reaches has p = 1/80, and Benjamini–Hochberg over 3 tests keeps it below 0.05."""
    fs, sig = _rhythms(1)
    return syncstats.analyze(sig, fs=fs, n_surrogates=79, n_bootstrap=50, rng=1)


@pytest.fixture(scope="module")
def saved(tested_result, tmp_path_factory):
    """tested_result with two input files, saved once; what the tests compare against."""
    base = tmp_path_factory.mktemp("saved")
    data_file = base / "input.csv"
    data_file.write_bytes(b"t,a,b\n0,1.5,2\n0.02,1.25,3\n")
    other = base / "events.txt"
    other.write_bytes(np.random.default_rng(0).bytes(3000))
    r = dataclasses.replace(tested_result, inputs=[str(data_file), other])
    before = {
        "hashes": {str(f): _sha256(f) for f in (data_file, other)},
        "table": r.table.copy(deep=True),
        "params": json.dumps(r.params, sort_keys=True),
        "nulls": None if r.null_distribution is None else r.null_distribution.copy(),
    }
    out = save_result(r, base / "run1")
    return {"result": r, "out": out, "base": base, "inputs": (data_file, other), "before": before}


@pytest.fixture(scope="module")
def untested_result():
    fs, sig = _rhythms(2, seconds=100.0)
    return syncstats.analyze({"a": sig["a"], "b": sig["b"]}, fs=fs, n_surrogates=0,
                             n_bootstrap=0, rng=2)


@pytest.fixture(scope="module")
def hostile_result():
    """Signal names with markup and a '$' (mathtext) in them."""
    fs, sig = _rhythms(3, seconds=100.0)
    names = {"a": "<script>alert(1)</script>", "b": "R&D $x$ \"q\""}
    data = {names[k]: sig[k] for k in ("a", "b")}
    r = syncstats.analyze(data, fs=fs, n_surrogates=19, n_bootstrap=20, rng=3)
    return dataclasses.replace(
        r,
        notes=list(r.notes) + ["<b>note</b> & <img src=x onerror=alert(2)>"],
        inputs=[],
    )


def _toy_result(names=("heart", "breath", "arm"), *, windows=True, events=True,
                n_surrogates=99, seed=0) -> ResultData:
    """A hand-built result (invented values) with windows, events and every figure input."""
    rng = np.random.default_rng(seed)
    fs = 10.0
    t = np.arange(0, 120, 1 / fs)
    freqs = {n: 0.3 + 0.17 * i for i, n in enumerate(names)}
    phases = {n: 2 * np.pi * f * t + np.cumsum(rng.normal(0, 0.02, t.size)) for n, f in freqs.items()}
    spans = [(0.0, 120.0)] + ([(s, s + 40.0) for s in (0.0, 20.0, 40.0, 60.0, 80.0)] if windows else [])
    rows, nulls, psis = [], {}, {}
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            for p, q in ((1, 1), (2, 1)):
                psis[(a, b, p, q)] = np.angle(np.exp(1j * (q * phases[a] - p * phases[b])))[::4]
                for w0, w1 in spans:
                    v = float(rng.uniform(0.05, 0.6))
                    row = dict(recording="", signal_a=a, signal_b=b, ratio=f"{p}:{q}", p=p, q=q,
                               window_start_s=w0, window_end_s=w1, measure="plv", value=v,
                               n_cycles=40.0, preferred_phase=float(rng.uniform(-3, 3)),
                               warnings="")
                    if n_surrogates:
                        null = rng.beta(2, 12, n_surrogates)
                        pv = (1 + int((null >= v).sum())) / (1 + n_surrogates)
                        row.update(surrogate="iaaft", n_surrogates=n_surrogates,
                                   null_mean=float(null.mean()), null_sd=float(null.std()),
                                   effect=v - float(null.mean()), z=1.0, p_value=pv,
                                   p_adjusted=min(1.0, 3 * pv), correction="fdr_bh",
                                   family="toy family", significant=3 * pv < 0.05,
                                   ci_low=v - 0.05, ci_high=v + 0.05, ci_level=0.95,
                                   ci_method="toy interval")
                        nulls[len(rows)] = null
                    else:
                        row.update(n_surrogates=0, significant=pd.NA)
                    rows.append(row)
    diag = pd.DataFrame({
        "signal": list(names), "dominant_freq_hz": [freqs[n] for n in names],
        "peak_sharpness": 0.8, "near_zero_amplitude_share": 0.0, "backward_step_share": 0.0,
        "n_cycles": 40.0, "method": "hilbert", "band": "", "warnings": "",
    })
    ev = {}
    if events:
        a = names[0]
        ev[a] = np.interp(2 * np.pi * np.arange(1, int(phases[a][-1] / (2 * np.pi))), phases[a], t)
    params = dict(fs=fs, measures=["plv"], surrogate="iaaft", n_surrogates=n_surrogates,
                  correction="fdr_bh", alpha=0.05, seed_entropy="7", null_level="signal",
                  windows=[list(s) for s in spans], ci_level=0.95, ci_method="percentile",
                  started_at="2024-05-01T10:00:00+00:00", finished_at="2024-05-01T10:01:00+00:00",
                  syncstats_version="0")
    return ResultData(table=finalize_table(rows), diagnostics=diag, params=params,
                      null_distribution=np.array([nulls[i] for i in range(len(rows))]) if nulls else None,
                      phase_differences=psis, phases=phases,
                      time_s=t, events=ev, notes=["toy"], inputs=[])


# --------------------------------------------------------------------------- helpers

_VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source",
         "track", "wbr"}


class _Checker(HTMLParser):
    """Tracks open elements; records mismatches, network references and scripts."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.network: list[str] = []
        self.ids: set[str] = set()
        self.tags: list[str] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        for k, v in attrs:
            if k == "id":
                self.ids.add(v)
            if k in ("src", "href", "srcset", "action", "poster", "data") and v:
                if not (v.startswith("data:") or v.startswith("#")):
                    self.network.append(f"{tag} {k}={v[:60]}")
        if tag not in _VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.handle_starttag(tag, attrs)
        if tag not in _VOID:
            self.stack.pop()

    def handle_endtag(self, tag):
        if tag in _VOID:
            return
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes {self.stack[-1:] or 'nothing'}")
            if tag in self.stack:
                while self.stack and self.stack.pop() != tag:
                    pass
        else:
            self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


def _parse(page: str) -> _Checker:
    c = _Checker()
    c.feed(page)
    c.close()
    return c


def _sha256(path) -> str:
    return hashlib.sha256(open(path, "rb").read()).hexdigest()


def _listing(folder) -> list[str]:
    return sorted(os.listdir(folder))


# --------------------------------------------------------------------------- files


def test_save_writes_the_four_files(saved):
    out = saved["out"]
    assert out == (saved["base"] / "run1").absolute()
    assert _listing(out) == sorted(OUTPUT_FILES)
    for name in OUTPUT_FILES:
        assert (out / name).stat().st_size > 100, name
    # nothing else was left beside the folder (no temporary folder)
    assert _listing(saved["base"]) == ["events.txt", "input.csv", "run1"]


def test_analysis_result_save_uses_the_report(tested_result, tmp_path):
    out = tested_result.save(tmp_path / "via_save")
    assert _listing(out) == sorted(OUTPUT_FILES)


def test_results_csv_round_trips(saved):
    table = saved["result"].table
    back = read_results_csv(saved["out"] / "results.csv")
    pd.testing.assert_frame_equal(back, table, check_exact=True)
    # full precision with a plain reader too: every float column bit-identical
    plain = pd.read_csv(saved["out"] / "results.csv")
    for col in ("value", "null_mean", "null_sd", "z", "p_value", "ci_low", "ci_high"):
        np.testing.assert_array_equal(plain[col].to_numpy(float), table[col].to_numpy(float))


def test_results_csv_round_trips_without_inference(untested_result, tmp_path):
    out = save_result(untested_result, tmp_path / "rt0")
    back = read_results_csv(out / "results.csv")
    pd.testing.assert_frame_equal(back, untested_result.table, check_exact=True)
    assert back["significant"].isna().all()


# --------------------------------------------------------------------------- html


def test_html_is_well_formed_and_offline(saved):
    page = (saved["out"] / "report.html").read_text(encoding="utf-8")
    c = _parse(page)
    assert c.errors == []
    assert c.stack == [], f"unclosed elements: {c.stack}"
    assert c.network == []
    assert "http://" not in page and "https://" not in page
    assert "<script" not in page.lower()
    assert "@import" not in page and "url(" not in page
    for sid in ("findings", "ratios", "pairs", "group", "numbers", "checks", "method", "caution"):
        assert sid in c.ids, sid
    # every embedded figure is a PNG data URI
    imgs = re.findall(r'<img src="([^"]+)"', page)
    assert imgs and all(s.startswith("data:image/png;base64,") for s in imgs)


def test_html_states_question_verdicts_and_cautions(tested_result, tmp_path):
    page = render_html(tested_result)
    text = "".join(_parse(page).text)
    assert "phase-synchronized" in text
    t = tested_result.table
    locked = t[t["significant"].fillna(False).astype(bool)]
    # the coupled pair (a, b) is reported in words, with its numbers as the table holds them
    assert ("a", "b") in set(zip(locked["signal_a"], locked["signal_b"]))
    assert "phase-locked at 1:1 (a makes 1 cycle while b makes 1)" in text
    assert "against 79 IAAFT surrogates" in text
    assert "no evidence of locking" in text  # the pairs with c
    assert "not a medical device" in text and "qualified clinical judgement" in text


def test_untested_run_says_no_test_was_made(untested_result):
    text = "".join(_parse(render_html(untested_result)).text)
    assert "no test was made" in text
    assert "phase-locked" not in text.replace("Phase-", "")
    md = methods_text(untested_result)
    assert "no significance test was made" in md
    assert "Phipson" not in md  # nothing was tested, so the p-value paper is not cited


def test_labels_are_escaped(hostile_result, tmp_path):
    out = save_result(hostile_result, tmp_path / "x")
    page = (out / "report.html").read_text(encoding="utf-8")
    assert "<script>alert(1)</script>" not in page
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page
    assert "<b>note</b>" not in page and "&lt;b&gt;note&lt;/b&gt;" in page
    assert "<img src=x" not in page
    assert "R&amp;D $x$ &quot;q&quot;" in page
    c = _parse(page)
    assert c.errors == [] and c.stack == [] and c.network == []
    assert "script" not in c.tags


def test_pair_figures_are_limited(tmp_path):
    r = _toy_result(names=("p1", "p2", "p3", "p4"), windows=False, events=False)  # 6 pairs
    page = write_report_html(r, tmp_path / "r.html", max_figure_pairs=2).read_text(encoding="utf-8")
    c = _parse(page)
    n_img = page.count('<img src="data:image/png')
    assert n_img == 2 + 1  # two pair figures + the pair matrix
    assert "figures are drawn for the 2 pairs with the strongest evidence only; 4 more" in "".join(c.text)


def test_windows_events_and_group_view_are_drawn(tmp_path):
    r = _toy_result()
    page = write_report_html(r, tmp_path / "r.html").read_text(encoding="utf-8")
    text = "".join(_parse(page).text)
    assert "PLV in each window" in text  # time-resolved panel
    assert "at each event of heart" in text  # synchrogram
    assert 'alt="Pair matrix"' in page  # 3+ signals: group heat map
    assert "Window by window (" in text  # window rows folded under the whole-record rows


def test_empty_result_still_gives_a_report(tmp_path):
    from syncstats.results import empty_table

    r = ResultData(table=empty_table(), diagnostics=pd.DataFrame(), params={})
    out = save_result(r, tmp_path / "empty")
    page = (out / "report.html").read_text(encoding="utf-8")
    c = _parse(page)
    assert c.errors == [] and c.stack == []
    assert "nothing was analysed" in page
    assert read_results_csv(out / "results.csv").empty


# --------------------------------------------------------------------------- methods


def test_methods_names_what_was_used_and_only_that(tested_result):
    md = methods_text(tested_result)
    for needle in ("79 iterative amplitude-adjusted Fourier-transform (IAAFT) surrogates",
                   "phase-locking value", "Hilbert", "Benjamini–Hochberg", "α = 0.05",
                   "(1 + k)/(1 + S)", "block bootstrap", "50 resamples",
                   f"seed entropy {tested_result.params['seed_entropy']}",
                   "signal A completes p cycles while signal B completes q cycles",
                   "not a medical device", "qualified clinical judgement"):
        assert needle in md, needle
    refs = md.split("## References", 1)[1]
    for used in ("Schreiber T, Schmitz A (1996)", "Mormann F", "Benjamini Y, Hochberg Y (1995)",
                 "Phipson B, Smyth GK (2010)", "Chavez M", "Efron B"):
        assert used in refs, used
    for unused in ("Vinck", "Westfall", "Yekutieli", "Holm", "Tass", "Hurtado", "Thiel",
                   "Prichard", "Torrence", "Kralemann", "Schäfer"):
        assert unused not in md, unused
    # every in-text marker points at a listed reference
    n_refs = len(re.findall(r"^\d+\. ", refs, flags=re.M))
    markers = {int(x) for grp in re.findall(r"\[([\d, ]+)\]", md) for x in grp.split(",")}
    assert markers == set(range(1, n_refs + 1))


# --------------------------------------------------------------------------- provenance


def test_provenance_records_versions_params_hashes(saved):
    out, r = saved["out"], saved["result"]
    data_file, other = saved["inputs"]
    prov = json.loads((out / "provenance.json").read_text(encoding="utf-8"))
    got = {e["path"]: e["sha256"] for e in prov["inputs"]}
    assert got[str(data_file)] == hashlib.sha256(data_file.read_bytes()).hexdigest()
    assert got[str(other)] == hashlib.sha256(other.read_bytes()).hexdigest()
    for dist in ("numpy", "scipy", "pandas", "statsmodels", "pingouin", "matplotlib", "syncstats"):
        assert prov["versions"][dist] == metadata.version(dist), dist
    assert prov["python"]["version"] == "%d.%d.%d" % sys.version_info[:3]
    assert prov["platform"]["system"]
    assert prov["parameters"] == json.loads(json.dumps(r.params))
    assert prov["seed_entropy"] == r.params["seed_entropy"]
    assert prov["started_at"] == r.params["started_at"]
    assert prov["finished_at"] == r.params["finished_at"]
    for name in ("results.csv", "report.html", "methods.md"):
        assert prov["outputs"][name]["sha256"] == _sha256(out / name), name


def test_missing_input_file_is_recorded_not_fatal(untested_result, tmp_path):
    r = dataclasses.replace(untested_result, inputs=[str(tmp_path / "gone.edf")])
    out = save_result(r, tmp_path / "o")
    prov = json.loads((out / "provenance.json").read_text(encoding="utf-8"))
    assert prov["inputs"][0]["sha256"] is None and "not found" in prov["inputs"][0]["error"]


def test_inputs_and_result_are_not_modified(saved):
    r, before = saved["result"], saved["before"]
    for f, h in before["hashes"].items():
        assert _sha256(f) == h, f
    pd.testing.assert_frame_equal(r.table, before["table"])
    assert json.dumps(r.params, sort_keys=True) == before["params"]
    np.testing.assert_array_equal(r.null_distribution, before["nulls"])


# --------------------------------------------------------------------------- atomicity


def _fail(*args, **kwargs):
    raise RuntimeError("writer failed on purpose")


@pytest.mark.parametrize("target", ["_methods.write_methods_md", "_html.write_report_html",
                                    "_provenance.write_provenance_json"])
def test_failed_write_leaves_nothing(untested_result, tmp_path, monkeypatch, target):
    import syncstats.report as rep

    module, func = target.split(".")
    monkeypatch.setattr(getattr(rep, module), func, _fail)
    dest = tmp_path / "new" / "deeper" / "run"
    with pytest.raises(RuntimeError, match="on purpose"):
        save_result(untested_result, dest)
    assert _listing(tmp_path) == []  # no run folder, no temp folder, no created parents


def test_failed_overwrite_keeps_the_old_folder(untested_result, tmp_path, monkeypatch):
    import syncstats.report._methods as m

    dest = tmp_path / "run"
    dest.mkdir()
    (dest / "old.txt").write_text("keep me")
    monkeypatch.setattr(m, "write_methods_md", _fail)
    with pytest.raises(RuntimeError):
        save_result(untested_result, dest, overwrite=True)
    assert _listing(tmp_path) == ["run"]
    assert _listing(dest) == ["old.txt"] and (dest / "old.txt").read_text() == "keep me"


def test_nonempty_folder_is_refused(untested_result, tmp_path):
    dest = tmp_path / "run"
    dest.mkdir()
    (dest / "mine.txt").write_text("x")
    with pytest.raises(SyncstatsInputError, match="overwrite=True"):
        save_result(untested_result, dest)
    assert _listing(dest) == ["mine.txt"]
    assert _listing(tmp_path) == ["run"]


def test_overwrite_swaps_the_folder(untested_result, tmp_path):
    dest = tmp_path / "run"
    dest.mkdir()
    (dest / "stale.txt").write_text("x")
    save_result(untested_result, dest, overwrite=True)
    assert _listing(dest) == sorted(OUTPUT_FILES)
    assert _listing(tmp_path) == ["run"]  # the old folder was deleted after the swap


def test_empty_existing_folder_is_used(untested_result, tmp_path):
    dest = tmp_path / "run"
    dest.mkdir()
    save_result(untested_result, dest)
    assert _listing(dest) == sorted(OUTPUT_FILES)


def test_file_in_place_of_folder_is_refused(untested_result, tmp_path):
    f = tmp_path / "run"
    f.write_text("a file")
    with pytest.raises(SyncstatsInputError, match="is a file"):
        save_result(untested_result, f, overwrite=True)
    assert f.read_text() == "a file"


def test_overwrite_refused_when_an_input_lies_inside(untested_result, tmp_path):
    dest = tmp_path / "run"
    dest.mkdir()
    data = dest / "data.csv"
    data.write_text("x\n1\n")
    r = dataclasses.replace(untested_result, inputs=[str(data)])
    with pytest.raises(SyncstatsInputError, match="contains the input file"):
        save_result(r, dest, overwrite=True)
    assert data.read_text() == "x\n1\n"


def test_save_rejects_a_non_result(tmp_path):
    with pytest.raises(SyncstatsInputError, match="ResultData"):
        save_result(pd.DataFrame(), tmp_path / "o")
    assert _listing(tmp_path) == []


# --------------------------------------------------------------------------- wording


def _one_row_result(**row) -> ResultData:
    base = dict(recording="", signal_a="heart", signal_b="breath", ratio="4:1", p=4, q=1,
                window_start_s=0.0, window_end_s=300.0, measure="plv", value=0.41,
                n_cycles=75.0, preferred_phase=0.3, surrogate="iaaft", n_surrogates=999,
                null_mean=0.05, null_sd=0.02, effect=0.36, z=18.0, p_value=0.001,
                p_adjusted=0.003, correction="fdr_bh", family="3 tests", significant=True,
                ci_low=0.35, ci_high=0.47, ci_level=0.95, ci_method="bootstrap", warnings="")
    base.update(row)
    params = dict(measures=["plv"], surrogate=base["surrogate"], n_surrogates=base["n_surrogates"],
                  correction=base["correction"], alpha=0.05)
    return ResultData(table=finalize_table([base]), diagnostics=pd.DataFrame(), params=params)


def test_locked_verdict_reads_as_a_sentence():
    text = "".join(_parse(render_html(_one_row_result())).text)
    assert ("heart and breath: weakly phase-locked at 4:1 (heart makes 4 cycles while breath makes 1) "
            "— PLV 0.41, 95% CI 0.35 to 0.47, corrected p = 0.003 against 999 IAAFT "
            "surrogates.") in text


def test_unresolvable_test_is_called_inconclusive_not_negative():
    # no surrogate reached the value (p = 1/(1 + 39)) but the corrected p misses alpha
    r = _one_row_result(n_surrogates=39, p_value=1 / 40, p_adjusted=0.075, significant=False)
    text = "".join(_parse(render_html(r)).text)
    assert "inconclusive at 4:1" in text
    assert "above all 39 IAAFT surrogates (p = 0.025, corrected p = 0.075)" in text
    assert "no evidence of locking" not in text
    # one surrogate above the value: an ordinary negative
    r = _one_row_result(n_surrogates=39, p_value=2 / 40, p_adjusted=0.15, significant=False)
    text = "".join(_parse(render_html(r)).text)
    assert "no evidence of locking at the ratio tested (4:1)" in text


@pytest.mark.parametrize(
    "surrogate, correction, cited, not_cited",
    [
        ("time_shift", "max_stat", ["Hurtado JM", "Westfall PH"], ["Schreiber", "Benjamini"]),
        ("multivariate_fourier", "fdr_by", ["Prichard D", "Yekutieli"], ["Hurtado", "Westfall"]),
        ("twin", "holm", ["Thiel M", "Romano MC", "Holm S"], ["Theiler J", "Benjamini"]),
        ("fourier", "none", ["Theiler J"], ["Benjamini", "Holm", "Westfall"]),
    ],
)
def test_methods_cite_the_chosen_null_and_correction(surrogate, correction, cited, not_cited):
    r = _one_row_result(surrogate=surrogate, correction=correction)
    md = methods_text(r)
    for c in cited:
        assert c in md, c
    for c in not_cited:
        assert c not in md, c
    if correction == "none":
        assert "No correction for multiple testing was applied" in md
    # a non-1:1 ratio is an n:m analysis: its source is cited, the example is in words
    assert "Tass P" in md
    assert "4:1 for the pair (heart, breath) means that heart makes 4 cycles while breath makes 1" in md


def test_methods_state_the_effectively_independent_shifts():
    r = _one_row_result(surrogate="time_shift")
    md = methods_text(dataclasses.replace(r, params=r.params | {"shift_correlation_s": [12.04, 13.5],
                                                                "effective_shifts": [21.6, 24.2]}))
    assert ("The PLV stayed alike over shifts closer than 12–13.5 s (the correlation length of its curve over "
            "shifts, measured on a decoupled copy of the pair), so the shifts held about 22–24 effectively "
            "independent values.") in md
    assert "effectively independent values" not in methods_text(_one_row_result(surrogate="iaaft"))


def test_methods_describe_the_windows():
    md = methods_text(_toy_result())
    assert "in 6 windows of 40 to 120 s between 0 and 120 s" in md
    assert "Schäfer C" in md  # event data: synchrograms drawn and cited


def test_missing_values_and_spans_do_not_break_the_page(tmp_path):
    import warnings

    nan = float("nan")
    rows = [dict(recording="", signal_a=a, signal_b=b, ratio="1:1", p=1, q=1,
                 window_start_s=nan, window_end_s=nan, measure="plv", value=nan,
                 n_surrogates=0, significant=pd.NA, warnings="too short")
            for a, b in (("x", "y"), ("x", "z"), ("y", "z"))]
    r = ResultData(table=finalize_table(rows), diagnostics=pd.DataFrame(), params={"n_surrogates": 0})
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        out = save_result(r, tmp_path / "nan")
    text = "".join(_parse((out / "report.html").read_text(encoding="utf-8")).text)
    assert text.count("no value could be computed") == 3


# --------------------------------------------------------------------------- what users read


@pytest.fixture(scope="module")
def noisy_channels():
    """Four channels of broad-band noise around weak rhythms (EEG-like): every signal gets
    diagnostics warnings, and each of the six pairs uses two of them."""
    rng = np.random.default_rng(11)
    fs = 50.0
    t = np.arange(0, 60, 1 / fs)
    sig = {f"ch{k}": 0.3 * np.cos(2 * np.pi * (0.9 + 0.07 * k) * t) + rng.normal(size=t.size) for k in range(4)}
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return syncstats.analyze(sig, fs=fs, surrogate="fourier", n_surrogates=19, n_bootstrap=0, rng=11)


def _section(page: str, sid: str) -> str:
    start = page.index(f'<section id="{sid}">')
    return page[start:page.index("</section>", start)]


def test_pair_cards_refer_to_signal_warnings_instead_of_repeating_them(noisy_channels):
    diag_warn = [w.strip() for v in noisy_channels.diagnostics["warnings"] for w in v.split(";") if w.strip()]
    assert len(diag_warn) >= 4  # the case the cards used to repeat (one red box per warning per card)
    page = render_html(noisy_channels, provenance={})
    cards = _section(page, "pairs")
    import html as _h

    assert 'class="warn"' not in cards  # no red warning boxes in the cards
    for w in diag_warn:
        assert _h.escape(w) not in cards
    n_cards = cards.count('class="card pair"')
    assert n_cards == 6
    assert cards.count('href="#checks"') == n_cards  # each card points to the signal checks
    assert "Signal checks flagged ch0" in cards
    checks = _section(page, "checks")
    for w in diag_warn:  # listed once, in the signal checks
        assert checks.count(f"<li>{_h.escape(w)}</li>") == 1


def test_signal_figure_shows_each_band_and_a_raw_filtered_phase_trace(tested_result):
    from matplotlib.patches import Rectangle

    from syncstats.report._figures import draw_signals

    views = tested_result.rhythm_views
    assert set(views) == {"a", "b", "c"}
    for n, v in views.items():
        assert v["band"] == tuple(tested_result.params["bands"][n])  # the band the phase used
        assert len(v["freq_hz"]) <= 800 and len(v["t"]) <= 800  # thinned, small
        assert len(v["raw"]) == len(v["filtered"]) == len(v["phase"]) == len(v["t"])
        assert np.all(np.abs(v["phase"]) <= np.pi + 1e-12)
        # the band-passed trace is the rhythm: it follows the raw signal (shared phase, little noise)
        assert np.corrcoef(v["raw"], v["filtered"])[0, 1] > 0.8
    fig, cap = draw_signals(tested_result)
    axes = [ax for ax in fig.axes]
    spec_axes = [ax for ax in axes if "spectrum" in ax.get_title(loc="left")]
    assert len(spec_axes) == 3
    for ax in spec_axes:
        name = ax.get_title(loc="left").split(":")[0]
        lo, hi = tested_result.params["bands"][name]
        shaded = [p for p in ax.patches if isinstance(p, Rectangle)]
        assert len(shaded) == 1
        assert np.isclose(shaded[0].get_x(), lo) and np.isclose(shaded[0].get_x() + shaded[0].get_width(), hi)
    labels = {t.get_text() for ax in axes if ax.get_legend() for t in ax.get_legend().get_texts()}
    assert {"raw (mean removed)", "band-passed", "phase (right axis)"} <= labels
    assert "pass band" in cap
    page = render_html(tested_result, provenance={})
    assert 'alt="Spectrum and trace of each signal"' in _section(page, "checks")


def test_signal_figure_marks_events():
    from syncstats.report._figures import draw_signals

    rng = np.random.default_rng(4)
    fs = 20.0
    t = np.arange(0, 120, 1 / fs)
    beats = np.cumsum(0.8 + 0.02 * rng.normal(size=160))
    res = syncstats.analyze({"breath": np.cos(2 * np.pi * 0.25 * t) + 0.1 * rng.normal(size=t.size)}, fs=fs,
                            events={"beats": beats[beats < 119]}, ratios=[(1, 5)], n_surrogates=0, n_bootstrap=0)
    v = res.rhythm_views["beats"]
    assert v["kind"] == "events" and len(v["events"]) >= 5
    assert np.all((v["events"] >= v["t"][0]) & (v["events"] <= v["t"][-1] + 1 / fs))
    assert 5 <= len(v["events"]) <= 12  # about eight of its own cycles
    fig, _ = draw_signals(res)
    texts = {t.get_text() for ax in fig.axes if ax.get_legend() for t in ax.get_legend().get_texts()}
    assert "events" in texts
    assert any("no spectrum" in t.get_text() for ax in fig.axes for t in ax.texts)
