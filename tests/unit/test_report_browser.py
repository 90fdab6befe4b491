"""report.html in a real browser: headless Chromium renders it offline, logs nothing, and
the screenshots (a small report and the demo report) are not blank; and figure checks on
the figures the rendered page shows: no text overlaps a legend, every tested ratio appears
in the time figure.

Needs Chromium for the screenshots (Debian package ``chromium``; .ci/run installs it).
Without it those tests are skipped with the reason shown; the figure checks need only
matplotlib and always run.
"""
from __future__ import annotations

import os
import shutil
import subprocess

import numpy as np
import pytest

import syncstats
from syncstats.report import save_result

pytestmark = pytest.mark.browser


def _chromium() -> str | None:
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    return "/usr/bin/chromium" if os.access("/usr/bin/chromium", os.X_OK) else None


CHROMIUM = _chromium()
needs_chromium = pytest.mark.skipif(
    CHROMIUM is None,
    reason="headless Chromium not found (install the Debian package: apt-get install -y chromium)",
)

_FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
          "--disable-background-networking", "--disable-component-update", "--disable-sync",
          "--hide-scrollbars")


def _run(args: list[str], profile) -> subprocess.CompletedProcess:
    return subprocess.run([CHROMIUM, *_FLAGS, f"--user-data-dir={profile}", *args],
                          capture_output=True, text=True, timeout=120, stdin=subprocess.DEVNULL)


@pytest.fixture(scope="module")
def three_rhythms():
    """Three simulated rhythms (invented data), two sharing a wandering phase."""
    rng = np.random.default_rng(5)
    fs = 50.0
    t = np.arange(0, 150, 1 / fs)
    shared = 2 * np.pi * 0.5 * t + np.cumsum(rng.normal(0, 0.08, t.size))
    own = 2 * np.pi * 0.8 * t + np.cumsum(rng.normal(0, 0.08, t.size))
    sig = {"pulse": np.cos(shared) + 0.3 * rng.normal(size=t.size),
           "flow": np.cos(shared + 1.0) + 0.3 * rng.normal(size=t.size),
           "<b>tremor</b>": np.cos(own) + 0.3 * rng.normal(size=t.size)}
    return syncstats.analyze(sig, fs=fs, n_surrogates=39, n_bootstrap=30, rng=5)


@pytest.fixture(scope="module")
def report_file(three_rhythms, tmp_path_factory):
    out = save_result(three_rhythms, tmp_path_factory.mktemp("browser") / "report")
    return out / "report.html"


@pytest.fixture(scope="module")
def demo_report(tmp_path_factory):
    """The demo study's report (19 surrogates to keep it quick): windows, ratio scans, events."""
    import warnings

    from syncstats.demo import demo_analysis

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        res = demo_analysis(n_surrogates=19)
    out = save_result(res, tmp_path_factory.mktemp("demo") / "report")
    return res, out / "report.html"


def _figures_on_page(result):
    """The page's figures as matplotlib Figures: (label, figure) for each pair drawn, and the
    signal figure (drawn by the same functions, from the same result, as the page)."""
    import matplotlib

    from syncstats.report import _figures
    from syncstats.report._common import evidence_order, summarize_pairs
    from syncstats.report._html import MAX_FIGURE_PAIRS

    out = []
    with matplotlib.rc_context(_figures._RC):
        chosen = [s for s in evidence_order(summarize_pairs(result.table, result.params))
                  if s.headline is not None][:MAX_FIGURE_PAIRS]
        for s in chosen:
            fig, _ = _figures.draw_pair(s, result)
            out.append((s, fig, _figures.to_data_uri(fig)))
        fig, _ = _figures.draw_signals(result)
        out.append((None, fig, _figures.to_data_uri(fig)))
    return out


def _texts_over_legends(fig) -> list:
    """Every visible text of the figure whose box overlaps a legend it does not belong to."""
    from matplotlib.text import Text

    r = fig.canvas.get_renderer()
    legends = [leg for ax in fig.axes if (leg := ax.get_legend()) is not None]
    bad = []
    for leg in legends:
        box = leg.get_window_extent(r)
        own = {id(t) for t in leg.get_texts()} | {id(leg.get_title())}
        for t in fig.findobj(Text):
            if id(t) in own or not t.get_visible() or not t.get_text().strip():
                continue
            if t.get_window_extent(r).overlaps(box):
                bad.append((t.get_text(), [x.get_text() for x in leg.get_texts()]))
    return bad


@pytest.mark.parametrize("which", ["three_rhythms", "demo_report"])
def test_no_text_overlaps_a_legend_in_the_page_figures(which, request):
    res = request.getfixturevalue(which)
    res, page = res if isinstance(res, tuple) else (res, None)
    figs = _figures_on_page(res)
    assert len(figs) >= 2
    for s, fig, _ in figs:
        assert _texts_over_legends(fig) == [], None if s is None else s.label


def test_page_shows_exactly_the_checked_figures(demo_report):
    res, page = demo_report
    html = page.read_text()
    for s, _, uri in _figures_on_page(res):
        assert uri in html, None if s is None else s.label


def test_time_figure_shows_every_tested_ratio(demo_report):
    res, _ = demo_report
    checked = 0
    for s, fig, _ in _figures_on_page(res):
        if s is None or s.windows.empty:
            continue
        tested = set(s.windows.loc[s.windows["measure"] == s.headline["measure"], "ratio"])
        ax = next(a for a in fig.axes if a.get_title(loc="left") == "Over time")
        shown = {t.get_text() for t in ax.get_legend().get_texts()} if len(tested) > 1 else tested
        assert shown == tested, s.label
        checked += 1
    assert checked == 3  # every demo pair has windows; two scan several ratios automatically


@needs_chromium
def test_screenshot_is_not_blank(report_file, tmp_path):
    import matplotlib.image as mpimg

    shot = tmp_path / "report.png"
    res = _run([f"--screenshot={shot}", "--window-size=1280,2000", report_file.as_uri()],
               tmp_path / "profile")
    assert res.returncode == 0, res.stderr[-2000:]
    assert shot.exists() and shot.stat().st_size > 10_000
    img = mpimg.imread(shot)
    assert img.shape[0] == 2000 and img.shape[1] == 1280
    rgb = img[..., :3]
    assert float(rgb.std()) > 0.05  # not one flat colour
    # several distinct colours: header band, page, cards, figures
    assert np.unique((rgb[::8, ::8] * 255).astype(np.uint8).reshape(-1, 3), axis=0).shape[0] > 50


@needs_chromium
def test_page_logs_no_errors_and_renders_the_sections(report_file, tmp_path):
    res = _run(["--enable-logging=stderr", "--v=0", "--dump-dom", report_file.as_uri()],
               tmp_path / "profile")
    assert res.returncode == 0, res.stderr[-2000:]
    # The page has no scripts, so any console message (a blocked resource, a content-
    # security-policy violation, an uncaught error) means something is wrong.
    bad = [line for line in res.stderr.splitlines()
           if ":CONSOLE" in line or "Uncaught" in line or "net::ERR" in line
           or "Refused to" in line or "violates the following Content Security Policy" in line]
    assert bad == []
    dom = res.stdout
    for heading in ("What we found", "Pair by pair", "The numbers", "Signal checks",
                    "Before you use these results"):
        assert heading in dom, heading
    assert "&lt;b&gt;tremor&lt;/b&gt;" in dom and "<b>tremor</b>" not in dom


@needs_chromium
def test_demo_report_screenshot(demo_report, tmp_path):
    """The whole demo report in one tall screenshot: the page renders to its end, with a
    band of figure-like colour wherever a figure stands, and logs nothing."""
    import matplotlib.image as mpimg

    _, page = demo_report
    shot = tmp_path / "demo.png"
    res = _run([f"--screenshot={shot}", "--window-size=1280,16000", page.as_uri()], tmp_path / "profile")
    assert res.returncode == 0, res.stderr[-2000:]
    img = mpimg.imread(shot)[..., :3]
    assert img.shape[:2] == (16000, 1280)
    assert float(img[:1200].std()) > 0.05  # the masthead and findings
    content = np.flatnonzero(np.abs(np.diff(img.mean(axis=(1, 2)))) > 0)
    assert content.max() > 6000  # the page renders far down, not just its top
    bands = [np.unique((img[y:y + 700:4, ::4] * 255).astype(np.uint8).reshape(-1, 3), axis=0).shape[0]
             for y in range(0, int(content.max()), 700)]
    # three pair figures, the pair matrix and the signal figure: colourful bands
    assert sum(b > 400 for b in bands) >= 5, bands
    res = _run(["--enable-logging=stderr", "--v=0", "--dump-dom", page.as_uri()], tmp_path / "profile_dom")
    assert res.returncode == 0
    assert not [line for line in res.stderr.splitlines() if ":CONSOLE" in line or "Refused to" in line]
    for heading in ("What we found", "Pair by pair", "Signal checks", "Spectrum and trace of each signal"):
        assert heading in res.stdout, heading
