"""prep and phase: filters, bands, diagnostics, protophase correction."""
import numpy as np
import pytest
from scipy import signal as sps

from syncstats.phase import PhaseSpec, diagnose, estimate_phase, protophase_to_phase
from syncstats.prep import auto_band, bandpass, detrend, spectral_peak


def test_detrend_matches_scipy():
    # reference library: scipy.signal.detrend (least squares)
    rng = np.random.default_rng(0)
    x = rng.standard_normal((3, 1001)) + np.linspace(0, 5, 1001)
    assert np.allclose(detrend(x), sps.detrend(x, axis=-1, type="linear"), atol=1e-10)


def test_bandpass_is_zero_phase_and_batches():
    fs = 100.0
    t = np.arange(0, 60, 1 / fs)
    x = np.sin(2 * np.pi * 1.0 * t)
    y = bandpass(x, fs, (0.5, 2.0))
    mid = slice(1000, -1000)
    assert np.allclose(y[mid], x[mid], atol=0.02)  # unit gain, no phase shift at 1 Hz
    batch = np.stack([x, 2 * x])
    assert np.allclose(bandpass(batch, fs, (0.5, 2.0))[1], 2 * y)


def test_spectral_peak_and_auto_band():
    fs = 50.0
    t = np.arange(0, 200, 1 / fs)
    rng = np.random.default_rng(1)
    x = np.sin(2 * np.pi * 0.3 * t) + 0.3 * rng.standard_normal(t.size)
    f0, sharp = spectral_peak(x, fs)
    assert f0 == pytest.approx(0.3, abs=0.02)
    assert sharp > 0.5
    lo, hi = auto_band(x, fs)
    assert lo < 0.3 < hi < 0.6
    _, sharp_noise = spectral_peak(rng.standard_normal(t.size), fs)
    assert sharp_noise < 0.3


def test_protophase_correction_makes_the_phase_uniform():
    # Kralemann et al. 2008: theta = phi + a sin(phi) is a non-uniform protophase of a
    # uniformly rotating phi; the correction recovers phi up to a constant.
    t = np.linspace(0, 200, 40001)
    phi = 2 * np.pi * 0.5 * t
    theta = phi + 0.6 * np.sin(phi)
    est = protophase_to_phase(theta, n_harmonics=20)
    err = np.angle(np.exp(1j * (est - phi)))
    assert np.std(err) < 5e-3
    # density of the corrected phase is flat (entropy index of phase mod 2 pi ~ 0)
    from syncstats.measures import entropy_index

    assert entropy_index(est, n_bins=20) < 1e-3 < entropy_index(theta, n_bins=20)


def test_diagnostics_flag_noise_and_pass_a_clean_rhythm():
    fs = 50.0
    t = np.arange(0, 100, 1 / fs)
    rng = np.random.default_rng(2)
    clean = np.sin(2 * np.pi * 1.0 * t)
    spec = PhaseSpec(band=(0.5, 1.5))
    ph, amp = estimate_phase(clean, fs, spec)
    d = diagnose("clean", clean, fs, ph, amp, spec=spec)
    assert d.warnings == () and d.n_cycles == pytest.approx(100, abs=1)
    noise = rng.standard_normal(t.size)
    spec_n = PhaseSpec(band=(5.0, 20.0))
    ph, amp = estimate_phase(noise, fs, spec_n)
    d = diagnose("noise", noise, fs, ph, amp, spec=spec_n)
    assert any("broad spectrum" in w for w in d.warnings)
    # the table joins warnings with "; ", so no single warning may contain ";"
    assert all(";" not in w for w in d.warnings)
    short = clean[: int(5 * fs)]
    ph, amp = estimate_phase(short, fs, spec)
    assert any("cycles" in w for w in diagnose("short", short, fs, ph, amp, spec=spec).warnings)
