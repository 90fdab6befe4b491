"""report.html in a real browser: headless Chromium renders it offline, logs nothing, and
the screenshot is not blank.

Needs Chromium (Debian package ``chromium``; the CI script installs it). Without it the
tests are skipped with the reason shown.
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
def report_file(tmp_path_factory):
    """A report of three simulated rhythms (invented data), two sharing a wandering phase."""
    rng = np.random.default_rng(5)
    fs = 50.0
    t = np.arange(0, 150, 1 / fs)
    shared = 2 * np.pi * 0.5 * t + np.cumsum(rng.normal(0, 0.08, t.size))
    own = 2 * np.pi * 0.8 * t + np.cumsum(rng.normal(0, 0.08, t.size))
    sig = {"pulse": np.cos(shared) + 0.3 * rng.normal(size=t.size),
           "flow": np.cos(shared + 1.0) + 0.3 * rng.normal(size=t.size),
           "<b>tremor</b>": np.cos(own) + 0.3 * rng.normal(size=t.size)}
    r = syncstats.analyze(sig, fs=fs, n_surrogates=39, n_bootstrap=30, rng=5)
    out = save_result(r, tmp_path_factory.mktemp("browser") / "report")
    return out / "report.html"


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
