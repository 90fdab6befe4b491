"""Surrogate generators against sources outside the project.

Sources: closed-form identities of the DFT (Parseval, correlation theorem), numpy.fft as
an independent reference FFT (the generators use scipy.fft), the defining properties
stated in Theiler et al. 1992 (Physica D 58:77), Schreiber & Schmitz 1996 (PRL 77:635),
Prichard & Theiler 1994 (PRL 73:951), Thiel et al. 2006 (EPL 75:535), Hurtado et al. 2004
(J Neurophysiol 91:1883), combinatorics of derangements (reference_values/
nulls_derangements.json) and scipy.stats.chisquare as the reference goodness-of-fit test.
"""
import itertools
import math

import numpy as np
import pytest
from scipy import stats

import syncstats.nulls as sn

from ..conftest import load_ref


def gens(seeds):
    return [np.random.default_rng(s) for s in seeds]


def test_fourier_parseval_and_periodogram_against_numpy_fft():
    # Closed form: Parseval sum |x|^2 = (1/N) sum |X_k|^2, and |S_k| = |X_k| for all k
    # (Theiler et al. 1992, section 2.3). numpy.fft is the reference FFT.
    rng = np.random.default_rng(0)
    x = np.cumsum(rng.standard_normal((2, 777)), axis=-1)
    s = sn.fourier(x, gens(range(5)))
    np.testing.assert_allclose(np.sum(s**2, axis=-1), np.broadcast_to(np.sum(x**2, axis=-1), (5, 2)), rtol=1e-12)
    np.testing.assert_allclose(np.abs(np.fft.fft(s)), np.broadcast_to(np.abs(np.fft.fft(x)), s.shape), rtol=1e-9, atol=1e-9)


def test_fourier_of_a_pure_cosine_is_a_phase_shifted_cosine():
    # Closed form: x = A cos(2 pi k0 t / N) has one non-zero bin pair, so every FT
    # surrogate is A cos(2 pi k0 t / N + phi) with phi uniform.
    n, k0, amp = 512, 17, 1.7
    t = np.arange(n)
    x = amp * np.cos(2 * np.pi * k0 * t / n)
    s = sn.fourier(x, gens(range(200)))[:, 0]
    phi = np.angle(np.fft.rfft(s)[:, k0])
    np.testing.assert_allclose(s, amp * np.cos(2 * np.pi * k0 * t / n + phi[:, None]), atol=1e-10)
    # phi is uniform on the circle: Kolmogorov-Smirnov test (scipy.stats.kstest)
    assert stats.kstest((phi % (2 * np.pi)) / (2 * np.pi), "uniform").pvalue > 0.01


def test_multivariate_fourier_keeps_cross_correlation_at_every_lag():
    # Prichard & Theiler 1994: the same phase for all channels keeps the cross-spectrum,
    # hence the circular cross-correlation c(tau) = sum_t a(t) b(t + tau) at every lag
    # (correlation theorem, closed form). Computed here directly, without an FFT.
    rng = np.random.default_rng(1)
    n = 300
    a = np.cumsum(rng.standard_normal(n))
    b = 0.6 * np.roll(a, 5) + rng.standard_normal(n)
    x = np.stack([a, b])

    def ccf(u, v):
        return np.array([np.dot(u, np.roll(v, -tau)) for tau in range(n)])

    s = sn.multivariate_fourier(x, gens(range(3)))
    ref = ccf(a, b)
    for k in range(3):
        np.testing.assert_allclose(ccf(s[k, 0], s[k, 1]), ref, atol=1e-8 * np.abs(ref).max())
    # univariate surrogates break it (they test independence instead)
    u = sn.fourier(x, gens([0]))[0]
    assert np.max(np.abs(ccf(u[0], u[1]) - ref)) > 0.2 * np.abs(ref).max()


def test_aaft_reproduces_linear_correlation_of_transformed_gaussian_process():
    # Theiler et al. 1992 (AAFT null): data = monotone static transform of a linear
    # Gaussian process. For x = exp(g), g an AR(1) with coefficient 0.9 (closed-form
    # lag-1 autocorrelation 0.9), the Gaussianised surrogates keep the lag-1
    # autocorrelation of the Gaussianised data (tolerance 0.05, our choice; AAFT is known
    # to whiten slightly: Schreiber & Schmitz 1996).
    rng = np.random.default_rng(2)
    n = 4096
    g = np.zeros(n)
    e = rng.standard_normal(n)
    for i in range(1, n):
        g[i] = 0.9 * g[i - 1] + e[i]
    x = np.exp(g / g.std())

    def gauss_rho1(v):
        z = stats.norm.ppf((stats.rankdata(v) - 0.5) / v.size)
        return np.corrcoef(z[:-1], z[1:])[0, 1]

    r0 = gauss_rho1(x)
    assert r0 == pytest.approx(0.9, abs=0.03)
    s = sn.aaft(x, gens(range(8)))[:, 0]
    r = np.array([gauss_rho1(v) for v in s])
    assert np.all(np.abs(r - r0) < 0.05)
    # the raw-value distribution is exactly that of x (the defining rescaling step)
    assert np.array_equal(np.sort(s, axis=-1), np.broadcast_to(np.sort(x), s.shape))


def test_iaaft_iteration_improves_spectrum_and_reaches_fixed_point():
    # Schreiber & Schmitz 1996: the alternation reduces the spectral discrepancy and
    # stops at a fixed point (rank order unchanged) with the exact value distribution.
    rng = np.random.default_rng(3)
    n = 1024
    g = np.convolve(rng.standard_normal(n + 20), np.hanning(21), mode="valid")
    x = g**3  # non-Gaussian values
    amp = np.abs(np.fft.fft(x))

    def err(s):
        return np.linalg.norm(np.abs(np.fft.fft(s)) - amp, axis=-1) / np.linalg.norm(amp)

    s1 = sn.iaaft(x, gens(range(4)), max_iter=1)[:, 0]
    s, info = sn.iaaft(x, gens(range(4)), max_iter=1000, return_info=True)
    s = s[:, 0]
    assert info["converged"].all()
    assert np.all(err(s) < 0.5 * err(s1))
    assert np.array_equal(np.sort(s, axis=-1), np.broadcast_to(np.sort(x), s.shape))
    # at the fixed point one more iteration changes nothing: recompute it by hand
    for v in s:
        X = np.fft.fft(v)
        adj = np.real(np.fft.ifft(amp * np.exp(1j * np.angle(X))))
        again = np.empty(n)
        again[np.argsort(adj, kind="stable")] = np.sort(x)
        assert np.array_equal(again, v)


def test_time_shift_plv_all_against_direct_sum_and_time_shift():
    # Correlation theorem (closed form): |mean_t za(t) conj(zb(t + tau))| for every tau
    # equals the direct O(N^2) sum; and the PLV of a time-shift surrogate (Hurtado et al.
    # 2004) shifted by s with the phase-continuous joint equals shift_curve[s] (the same
    # correlation theorem on the zero-padded, two-part sum).
    rng = np.random.default_rng(4)
    n = 400
    pa = np.cumsum(rng.normal(0.15, 0.2, n))
    pb = pa + 0.3 * rng.standard_normal(n)
    za, zb = np.exp(1j * pa), np.exp(1j * pb)
    lag_plv = sn.time_shift_plv_all(za, zb)
    direct = np.array([abs(np.mean(za * np.conj(np.roll(zb, -tau)))) for tau in range(n)])
    np.testing.assert_allclose(lag_plv, direct, atol=1e-12)
    s, sh = sn.time_shift(pb, gens(range(6)), min_shift=40, return_shifts=True)
    curve = sn.shift_curve(pa, pb)
    assert curve[0] == pytest.approx(lag_plv[0], abs=1e-12)
    for k in range(6):
        plv = abs(np.mean(np.exp(1j * (pa - s[k]))))
        assert plv == pytest.approx(curve[sh[k]], abs=1e-12)


@pytest.mark.parametrize("max_points", [3000, 500])
def test_twin_surrogates_of_a_periodic_orbit_stay_on_the_orbit(max_points):
    # Thiel et al. 2006: twins are states with identical neighbourhoods (columns of the
    # recurrence matrix). For a strictly periodic sequence (period 50 samples, values
    # repeated exactly) the states one period apart are identical. With a recurrence rate
    # below the share of identical pairs (about 1/50 here) the threshold is 0, the twin
    # classes are exactly the repeated states, and every walk stays on the orbit: each
    # surrogate is the original shifted in time (a consequence of the definition).
    one = np.sin(2 * np.pi * np.arange(50) / 50) + 0.3 * np.sin(6 * np.pi * np.arange(50) / 50)
    x = np.tile(one, 60)  # N = 3000
    s, info = sn.twin(x, gens(range(4)), max_points=max_points, recurrence_rate=0.01, return_info=True)
    assert info[0]["epsilon"] == 0.0 and info[0]["twin_share"] == 1.0
    for v in s[:, 0]:
        k = int(np.nonzero(one == v[0])[0][0])
        assert np.array_equal(v, np.roll(x, -k)[: x.size])


def test_trial_shuffle_derangement_count_and_uniformity():
    # Number of derangements !n (reference_values/nulls_derangements.json; closed form
    # round(n!/e), recurrence, and enumeration here). Rejection sampling makes every
    # derangement equally likely: chi-square goodness of fit (scipy.stats.chisquare).
    ref = load_ref("nulls_derangements.json")
    for n, d in zip(ref["n"], ref["derangements"]):
        assert d == round(math.factorial(n) / math.e)
        if n <= 7:
            assert d == sum(all(p[i] != i for i in range(n)) for p in itertools.permutations(range(n)))
    n = 4
    perms = sn.trial_shuffle(n, gens(range(1800)))
    keys, counts = np.unique(perms, axis=0, return_counts=True)
    assert len(keys) == ref["derangements"][ref["n"].index(n)]  # all 9 occur, nothing else
    assert not np.any(keys == np.arange(n))
    assert stats.chisquare(counts).pvalue > 0.001


def test_interval_shuffle_keeps_the_interval_multiset_exactly_for_integer_intervals():
    # Closed form: a permutation of the intervals; with integer-valued times the
    # cumulative sums are exact, so sorted intervals and the last event match exactly.
    rng = np.random.default_rng(5)
    ev = 10.0 + np.cumsum(rng.integers(20, 60, size=40)).astype(float)
    for s in sn.interval_shuffle(ev, gens(range(5))):
        assert np.array_equal(np.sort(np.diff(s)), np.sort(np.diff(ev)))
        assert s[0] == ev[0] and s[-1] == ev[-1]
