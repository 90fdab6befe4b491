"""The fast paths (issue 10) are statistically equivalent to the reference pipeline.

* ``spectral_filter``: the band-pass as the gain |H(f)|^2 and the analytic signal taken
  from the spectrum. Reference implementations: ``scipy.signal.sosfiltfilt`` +
  ``scipy.signal.hilbert`` (the time-domain path of :func:`syncstats.phase.analytic_phase`).
* ``decimate``: the analysis on the grid ``t[::q]``; reference: the full-rate analysis.
* memory budget: batch size from a budget never changes results.

Timing lives in benchmarks/run.py, never here. Signals are invented (noisy rhythms with
wandering phases); every draw is seeded.
"""
import numpy as np
import pytest
from scipy import fft as spfft
from scipy import signal as sps
from scipy import stats

from syncstats import inference as inf
from syncstats._inputs import collect_inputs
from syncstats._rng import as_seed_sequence
from syncstats.inference._nulls import NullJob, batch_for_budget
from syncstats.nulls._fourier import fourier, spectra
from syncstats.phase import PhaseSpec, analytic_from_spectrum, estimate_phase, phase_from_spectrum
from syncstats.pipeline import Pipeline
from syncstats.prep import bandpass_gain, decimate, decimation_factor


def wandering(n, fs, f=1.0, seed=0, diffusion=0.3, noise=0.3, trend=0.0):
    rng = np.random.default_rng(seed)
    t = np.arange(n) / fs
    ph = 2 * np.pi * f * t + np.cumsum(rng.standard_normal(n)) * np.sqrt(diffusion / fs)
    return np.cos(ph) + noise * rng.standard_normal(n) + trend * t


def circ_diff(a, b):
    return np.abs(np.angle(np.exp(1j * (a - b))))


def pipeline_for(sig, fs, **kw):
    return Pipeline.fix(collect_inputs(sig, fs, None, None, None), **kw)


# ---------------------------------------------------------------- the filter as a gain


def test_bandpass_gain_is_the_steady_state_response_of_sosfiltfilt():
    # Reference: scipy.signal.sosfiltfilt (forward-backward filtering has response |H|^2).
    fs, band = 50.0, (0.5, 1.5)
    t = np.arange(40000) / fs
    sos = sps.butter(4, band, btype="bandpass", fs=fs, output="sos")
    for f in (0.4, 0.7, 1.0, 1.4, 1.8):
        y = sps.sosfiltfilt(sos, np.cos(2 * np.pi * f * t))
        mid = slice(10000, 30000)
        measured = np.sqrt(2 * np.mean(y[mid] ** 2))  # amplitude of the output sine
        assert measured == pytest.approx(bandpass_gain(np.array([f]), fs, band)[0], rel=2e-3, abs=1e-4)


@pytest.mark.parametrize("n", [6000, 6001])
def test_spectral_analytic_signal_equals_sosfiltfilt_hilbert_away_from_edges(n):
    # Reference: scipy.signal.sosfiltfilt + scipy.signal.hilbert after a least-squares detrend.
    fs, band = 50.0, (0.5, 1.5)
    x = wandering(n, fs, seed=1, trend=0.01)
    spec = PhaseSpec(band=band)
    ph_ref, amp_ref = estimate_phase(x, fs, spec)
    ph_fast, amp_fast = estimate_phase(x, fs, PhaseSpec(band=band, spectral=True))
    # The circular filter and sosfiltfilt's padding differ near the ends; the (circular)
    # Hilbert transform of both spreads that difference inward with a 1/t tail. Stated
    # tolerance: < 0.01 rad beyond 5 periods of the low band edge (10 s) ...
    mid = slice(int(10 * fs), n - int(10 * fs))
    assert circ_diff(ph_fast[mid], ph_ref[mid]).max() < 0.01
    np.testing.assert_allclose(amp_fast[mid], amp_ref[mid], rtol=0.02, atol=0.02 * amp_ref.mean())
    # ... and within the pipeline's own edge rule (one period of the low edge = 2 s)
    # under 2 % of samples differ by more than 0.05 rad (all of them in the first and
    # last 5 s; measured 1.2 % for n = 6001, 0.5 % for n = 6000)
    span = slice(int(2 * fs), n - int(2 * fs))
    far = circ_diff(ph_fast[span], ph_ref[span]) > 0.05
    assert np.mean(far) < 0.02
    assert not far[int(3 * fs):-int(3 * fs)].any()


def test_phase_from_spectrum_of_the_datas_own_spectrum_is_the_datas_phase():
    # "surrogate" = the data's own spectrum (all random phases zero)
    fs, n = 50.0, 5000
    x = wandering(n, fs, seed=2)
    spec = PhaseSpec(band=(0.5, 1.5), spectral=True)
    own = spectra(x, [_ZeroPhases()])[0, 0]
    np.testing.assert_allclose(own, spfft.rfft(x), rtol=0, atol=1e-9)
    ph = phase_from_spectrum(own, n, fs, spec)
    ref = estimate_phase(x, fs, PhaseSpec(band=(0.5, 1.5)))[0]
    mid = slice(int(10 * fs), n - int(10 * fs))
    assert circ_diff(ph[mid], ref[mid]).max() < 0.01
    # and exactly the spectral path of the data itself
    fast = estimate_phase(x, fs, spec)[0]
    np.testing.assert_allclose(ph, fast, atol=1e-9)


class _ZeroPhases(np.random.Generator):
    """A Generator whose uniform draws are all 0 (the identity rotation)."""

    def __init__(self):
        super().__init__(np.random.PCG64(0))

    def uniform(self, low=0.0, high=1.0, size=None):
        return np.zeros(size)


def test_hilbert_without_band_matches_scipy_hilbert():
    # Reference: scipy.signal.hilbert of the detrended signal (no band-pass).
    x = wandering(2048, 50.0, seed=3, trend=0.02)
    z = analytic_from_spectrum(spfft.rfft(x), x.size, 50.0, None)
    ref = sps.hilbert(sps.detrend(x, type="linear"))
    np.testing.assert_allclose(z, ref, atol=1e-9)


def test_spectra_shortcut_equals_the_time_domain_surrogate_through_the_same_path():
    fs = 20.0
    sig = {"a": wandering(3000, fs, seed=4), "b": wandering(3000, fs, f=1.1, seed=5)}
    pipe = pipeline_for(sig, fs, spectral_filter=True)
    design = inf.make_design(pipe)
    seed = as_seed_sequence(3)
    job = NullJob(pipe, design.family, "fourier", seed)
    via_spectra = job.phases(0, 4)
    rngs = lambda k: __import__("syncstats._rng", fromlist=["x"]).child_generators(seed, 0, 4, stream=k)  # noqa: E731
    raw = {n: fourier(pipe.inputs.raw[n], rngs(k)) for k, n in enumerate(pipe.names)}
    via_raw = pipe.phases(raw=raw)
    for n in pipe.names:
        np.testing.assert_allclose(via_spectra[n], via_raw[n], atol=1e-8)


def _null(pipe, method, s, seed, **kw):
    design = inf.make_design(pipe, **kw)
    obs = design.family.evaluate(pipe.data)
    null = inf.null_distribution(pipe, design.family, method, s, as_seed_sequence(seed), batch_size=16)
    return obs, null


@pytest.mark.parametrize("method", ["fourier", "iaaft"])
def test_spectral_path_gives_the_same_null_distribution(method):
    fs, s = 20.0, 199 if method == "fourier" else 49
    n = 3000 if method == "fourier" else 1600
    sig = {"a": wandering(n, fs, seed=6), "b": wandering(n, fs, f=1.07, seed=7)}
    slow, fast = pipeline_for(sig, fs), pipeline_for(sig, fs, spectral_filter=True)
    obs0, n0 = _null(slow, method, s, 11)
    obs1, n1 = _null(fast, method, s, 11)
    # same seed -> the same surrogates: values agree surrogate by surrogate
    assert obs1[0] == pytest.approx(obs0[0], abs=0.01)
    assert np.max(np.abs(n1[:, 0] - n0[:, 0])) < 0.02
    # independent seeds: same distribution (two-sample KS, and means within 3 SE)
    _, n2 = _null(fast, method, s, 12)
    assert stats.ks_2samp(n0[:, 0], n2[:, 0]).pvalue > 0.01
    se = np.sqrt(n0[:, 0].var(ddof=1) / s + n2[:, 0].var(ddof=1) / s)
    assert abs(n0[:, 0].mean() - n2[:, 0].mean()) < 3 * se
    p0 = (1 + np.sum(n0[:, 0] >= obs0[0])) / (1 + s)
    p1 = (1 + np.sum(n1[:, 0] >= obs1[0])) / (1 + s)
    assert abs(p1 - p0) <= 3 * np.sqrt(max(p0, 1 / s) * (1 - p0) / s)


# ---------------------------------------------------------------- decimation


def test_decimation_factor_closed_form():
    # 250 Hz, top frequency 1.5 Hz: fs/q >= 15 Hz -> q = floor(250/15) = 16
    assert decimation_factor(250.0, 1.5) == 16
    assert decimation_factor(20.0, 1.5) == 1
    assert decimation_factor(100.0, float("inf")) == 1


def test_decimate_keeps_a_slow_sine_and_sits_on_t_every_q():
    # closed form: a sine far below the anti-alias cut-off passes unchanged
    fs, q = 250.0, 10
    t = np.arange(20000) / fs
    x = np.sin(2 * np.pi * 1.3 * t) + 0.5 + 0.01 * t
    y = decimate(x, q)
    assert y.shape == (2000,)
    # pass-band ripple of the Kaiser FIR ~0.1 %; the first and last samples meet the padding
    np.testing.assert_allclose(y[5:-5], x[::q][5:-5], atol=2e-3)


def test_decimated_pipeline_phases_agree_with_full_rate():
    fs, n = 250.0, 250 * 240
    sig = {"a": wandering(n, fs, seed=8, noise=0.2), "b": wandering(n, fs, f=1.1, seed=9, noise=0.2)}
    full = pipeline_for(sig, fs, bands=(0.5, 1.6))
    dec = pipeline_for(sig, fs, bands=(0.5, 1.6), decimate=True)
    q = dec.decimation
    assert q == 15 and dec.inputs.fs == pytest.approx(fs / q)
    assert dec.notes and "analysed at" in dec.notes[0]
    np.testing.assert_allclose(dec.time_s, dec.inputs.t[dec.i0:dec.i1])
    for name in sig:
        # the same instants on both grids, away from the record ends (10 s)
        t_dec = dec.time_s
        sel = (t_dec > 10) & (t_dec < n / fs - 10)
        idx = np.searchsorted(full.time_s, t_dec[sel])
        d = circ_diff(dec.data[name][0, sel], full.data[name][0, idx])
        assert d.max() < 0.05


def test_decimated_p_values_agree_within_monte_carlo_error():
    fs, n, s = 100.0, 100 * 150, 119
    rng = np.random.default_rng(10)
    common = np.cumsum(rng.standard_normal(n)) * np.sqrt(0.3 / fs)
    t = np.arange(n) / fs
    sig = {"a": np.cos(2 * np.pi * t + common) + 0.5 * rng.standard_normal(n),
           "b": np.cos(2 * np.pi * t + common + 0.8 * rng.standard_normal(n).cumsum() / np.sqrt(n) * 5)
           + 0.5 * rng.standard_normal(n)}
    full = pipeline_for(sig, fs, bands=(0.5, 1.6))
    dec = pipeline_for(sig, fs, bands=(0.5, 1.6), decimate=True)
    assert dec.decimation == 6
    o0, n0 = _null(full, "fourier", s, 21)
    o1, n1 = _null(dec, "fourier", s, 21)
    assert o1[0] == pytest.approx(o0[0], abs=0.01)
    assert stats.ks_2samp(n0[:, 0], n1[:, 0]).pvalue > 0.01
    se = np.sqrt(n0[:, 0].var(ddof=1) / s + n1[:, 0].var(ddof=1) / s)
    assert abs(n0[:, 0].mean() - n1[:, 0].mean()) < 3 * se
    p0 = (1 + np.sum(n0[:, 0] >= o0[0])) / (1 + s)
    p1 = (1 + np.sum(n1[:, 0] >= o1[0])) / (1 + s)
    assert abs(p1 - p0) <= 3 * np.sqrt(max(p0, 1 / s) * (1 - p0) / s) + 1 / (1 + s)


def test_decimation_keeps_events_on_the_common_grid():
    fs = 50.0
    t = np.arange(0, 200, 1 / fs)
    sig = {"breath": np.cos(2 * np.pi * 0.25 * t)}
    beats = np.arange(0.5, 199, 1.0)
    inp = collect_inputs(sig, fs, {"heart": beats}, None, None)
    dec = Pipeline.fix(inp, decimate=True)
    # heart at 1 Hz needs >= 10 x 2 x 1 Hz = 20 Hz: q = 2, although breathing alone would allow more
    assert dec.decimation == 2
    assert dec.data["heart"].shape == dec.data["breath"].shape


def test_decimate_bad_factor_is_an_input_error():
    from syncstats._errors import SyncstatsInputError

    with pytest.raises(SyncstatsInputError, match="decimate"):
        pipeline_for({"a": wandering(2000, 20.0), "b": wandering(2000, 20.0, seed=1)}, 20.0, decimate=2.5)


# ---------------------------------------------------------------- memory budget


def test_batches_from_the_memory_budget_do_not_change_results():
    fs = 20.0
    sig = {"a": wandering(3000, fs, seed=12), "b": wandering(3000, fs, f=1.1, seed=13)}
    pipe = pipeline_for(sig, fs)
    design = inf.make_design(pipe)
    seed = as_seed_sequence(5)
    tiny = 0.5 * 160 * 2 * 3000 / 2**20  # half a surrogate: batches of 1
    assert batch_for_budget(pipe, tiny) == 1
    assert batch_for_budget(pipe, 64.0) > 50
    a = inf.null_distribution(pipe, design.family, "aaft", 9, seed, batch_size=None, memory_mb=tiny)
    b = inf.null_distribution(pipe, design.family, "aaft", 9, seed, batch_size=None, memory_mb=None)
    np.testing.assert_array_equal(a, b)
