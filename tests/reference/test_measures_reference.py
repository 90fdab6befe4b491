"""Locking measures and phases against sources outside the project.

Every check names its source beside the value; the values live in reference_values/.
"""
import numpy as np
import pingouin as pg
import pytest
from scipy import integrate, stats

from syncstats import measures as M
from syncstats.inference import rayleigh_test
from syncstats.phase import analytic_phase, event_phase, wavelet_phase

from ..conftest import load_ref


def test_plv_and_mean_direction_match_scipy_directional_stats_and_pingouin():
    # Reference libraries: scipy.stats.directional_stats, pingouin circ_r / circ_mean,
    # on Zar's Example 26.2 directions (Zar, Biostatistical Analysis, 4th ed.).
    ref = load_ref("circular.json")["zar_example_27_1"]
    a = np.deg2rad(ref["angles_deg"])
    ds = stats.directional_stats(np.column_stack([np.cos(a), np.sin(a)]))
    assert M.plv(a) == pytest.approx(ds.mean_resultant_length, abs=1e-12)
    assert M.plv(a) == pytest.approx(pg.circ_r(a), abs=1e-12)
    assert M.preferred_phase(a) == pytest.approx(np.arctan2(*ds.mean_direction[::-1]), abs=1e-12)
    assert M.preferred_phase(a) == pytest.approx(pg.circ_mean(a), abs=1e-12)
    # Zar Example 27.1 values (computed, REFERENCES.md)
    assert M.plv(a) == pytest.approx(ref["mean_resultant_length"], abs=ref["tol"])
    assert np.rad2deg(M.preferred_phase(a)) == pytest.approx(ref["mean_direction_deg"], abs=0.01)


def test_rayleigh_zar_example_and_pingouin():
    # Zar Example 27.1 (his Eq. 27.4 approximation) and pingouin.circ_rayleigh, which
    # implements the same approximation.
    ref = load_ref("circular.json")["zar_example_27_1"]
    a = np.deg2rad(ref["angles_deg"])
    z, p = rayleigh_test(a)
    assert z == pytest.approx(ref["rayleigh_z"], abs=1e-5)
    assert p == pytest.approx(ref["zar_approx_p"], abs=1e-6)
    zp, pp = pg.circ_rayleigh(a)
    assert z == pytest.approx(zp, rel=1e-10) and p == pytest.approx(pp, rel=1e-10)
    assert 0.001 < p < 0.002  # the book's table bracket (recalled)


def test_rayleigh_fisher_example():
    # Fisher (1993), Example 4.11: n = 60, R-bar = 0.2370, P ~ 0.034 (REFERENCES.md)
    ref = load_ref("circular.json")["fisher_example_4_11"]
    n, rbar = ref["n"], ref["mean_resultant_length"]
    # a set of n angles with that mean resultant length: two symmetric clusters
    c = np.arccos(rbar)
    a = np.r_[np.full(n // 2, c), np.full(n // 2, -c)]
    assert M.plv(a) == pytest.approx(rbar, abs=1e-12)
    _, p = rayleigh_test(a)
    assert p == pytest.approx(ref["zar_approx_p"], abs=ref["tol"])
    assert p == pytest.approx(ref["book_p"], abs=0.001)


@pytest.mark.parametrize("row", load_ref("von_mises_plv.csv").to_dict("records"))
def test_von_mises_plv_expectation(row):
    # E[PLV] -> A(kappa) = I1(kappa)/I0(kappa) (scipy.special; A&S Table 9.8);
    # independent von Mises samples: E[PPC] = A(kappa)^2 (Vinck et al. 2010).
    # (the stored A(kappa) is the expected value; checking it against scipy.special would
    # test scipy and the file, not syncstats, so it is not done here)
    k = row["kappa"]
    rng = np.random.default_rng(int(10 * k))
    psi = stats.vonmises.rvs(k, size=(400, 500), random_state=rng)
    big = stats.vonmises.rvs(k, size=200_000, random_state=rng)
    assert M.plv(big) == pytest.approx(row["expected_plv"], abs=4e-3)
    assert np.mean(M.ppc(psi)) == pytest.approx(row["expected_plv"] ** 2, abs=5e-3)


def test_uniform_phases_expectations():
    # Under independence/uniformity E[PLV^2] = 1/N and E[PPC] = 0 (REFERENCES.md, closed form)
    rng = np.random.default_rng(5)
    psi = rng.uniform(-np.pi, np.pi, size=(20000, 50))
    assert np.mean(M.plv(psi) ** 2) == pytest.approx(1 / 50, rel=0.03)
    assert np.mean(M.ppc(psi)) == pytest.approx(0.0, abs=1e-3)


def test_ppc_identity_vinck_example():
    # Vinck et al. 2010, pair-sum identity; 12 angles of REFERENCES.md
    ref = load_ref("circular.json")["vinck_ppc_angles"]
    a = np.deg2rad(ref["angles_deg"])
    assert M.plv(a) == pytest.approx(ref["plv"], abs=ref["tol"])
    assert M.ppc(a) == pytest.approx(ref["ppc"], abs=ref["tol"])
    # the identity against the explicit pair sum (Vinck 2010 Eq. 14)
    i, j = np.triu_indices(a.size, 1)
    assert M.ppc(a) == pytest.approx(np.mean(np.cos(a[i] - a[j])), abs=1e-12)


def test_entropy_index_worked_values():
    # Tass et al. 1998 definition; counts [5,3,2,0] computed in REFERENCES.md
    ref = load_ref("entropy_index.json")
    c = ref["counts_5320"]
    assert M.entropy_index_from_counts(np.array(c["counts"])) == pytest.approx(c["rho"], abs=c["tol"])
    assert M.entropy_index_from_counts(np.array([0, 7, 0, 0])) == pytest.approx(1.0)
    assert M.entropy_index_from_counts(np.array([4, 4, 4, 4])) == pytest.approx(0.0, abs=1e-15)
    # binning through the phase-array path reproduces the counts
    nb = 4
    centers = (np.arange(nb) + 0.5) * 2 * np.pi / nb
    psi = np.repeat(centers, c["counts"])
    assert M.entropy_index(psi, n_bins=nb) == pytest.approx(c["rho"], abs=c["tol"])
    rule = ref["bin_rule"]
    for n, rounded in zip(rule["n"], rule["rounded"]):
        assert M.entropy_bins(n) == rounded


def test_entropy_index_limits_and_uniform_bias():
    # uniform -> ~0 with bias ~ (M-1)/(2 N ln M) (REFERENCES.md); point mass -> 1
    ref = load_ref("entropy_index.json")["uniform_bias"]
    rng = np.random.default_rng(11)
    for n, bias in zip(ref["n"], ref["bias"]):
        psi = rng.uniform(0, 2 * np.pi, size=(4000, n))
        assert np.mean(M.entropy_index(psi)) == pytest.approx(bias, rel=0.15)
    assert M.entropy_index(np.full(500, 1.234)) == pytest.approx(1.0)


@pytest.mark.parametrize("row", load_ref("adler_plv.csv").to_dict("records"))
def test_adler_time_averaged_plv_on_simulated_phases(row):
    # Adler equation d psi/dt = dw - 2 eps sin psi; nu = dw/(2 eps) > 1: time-averaged
    # PLV = nu - sqrt(nu^2 - 1), preferred phase +pi/2 (Pikovsky, Rosenblum & Kurths
    # 2001). Integrated with scipy solve_ivp over a whole number of slips.
    nu, eps = row["nu"], 0.5
    dw = 2 * eps * nu
    period = 2 * np.pi / np.sqrt(dw**2 - 4 * eps**2)
    n_slips = 20
    t = np.linspace(0, n_slips * period, 400_001)
    sol = integrate.solve_ivp(lambda _, y: dw - 2 * eps * np.sin(y), (0, t[-1]), [0.0], t_eval=t, rtol=1e-10, atol=1e-12)
    psi = sol.y[0]
    w_b = 2 * np.pi * 1.3
    phi_b = w_b * t
    phi_a = phi_b + psi
    # trapezoid time average (uniform grid; drop the duplicated end point)
    val = M.plv(M.phase_difference(phi_a[:-1], phi_b[:-1]))
    assert val == pytest.approx(row["plv"], abs=2e-4)
    assert M.preferred_phase(psi[:-1]) == pytest.approx(np.pi / 2, abs=1e-3)


def test_adler_locked_regime_plv_one():
    # nu <= 1: psi locks at arcsin(nu), PLV = 1 (Pikovsky et al. 2001)
    nu, eps = 0.6, 0.5
    dw = 2 * eps * nu
    t = np.linspace(0, 200, 20001)
    sol = integrate.solve_ivp(lambda _, y: dw - 2 * eps * np.sin(y), (0, 200), [0.0], t_eval=t, rtol=1e-10, atol=1e-12)
    psi = sol.y[0][10000:]
    assert M.plv(psi) == pytest.approx(1.0, abs=1e-9)
    assert M.preferred_phase(psi) == pytest.approx(np.arcsin(nu), abs=1e-6)


def test_hilbert_phase_of_exact_sinusoid():
    # closed form: the analytic signal of cos(w t + c) is exp(i(w t + c)); an integer
    # number of cycles makes the FFT-based Hilbert transform exact.
    fs, f, c = 100.0, 2.0, 0.3
    t = np.arange(0, 50, 1 / fs)
    ph, amp = analytic_phase(np.cos(2 * np.pi * f * t + c), fs, band=None, remove_trend=False)
    assert np.allclose(ph, 2 * np.pi * f * t + c, atol=1e-9)
    assert np.allclose(amp, 1.0, atol=1e-9)


def test_wavelet_phase_of_exact_sinusoid():
    # Morlet transform of cos(w t) at its own frequency has phase w t (away from edges);
    # Torrence & Compo 1998 (analytic wavelet), closed form.
    fs, f = 100.0, 2.0
    t = np.arange(0, 40, 1 / fs)
    ph, _ = wavelet_phase(np.cos(2 * np.pi * f * t), fs, f)
    mid = slice(500, -500)
    err = np.angle(np.exp(1j * (ph[mid] - 2 * np.pi * f * t[mid])))
    assert np.max(np.abs(err)) < 1e-3


def test_event_phase_of_periodic_events_is_exact():
    # strictly periodic events: phi(t) = 2 pi (t - t0)/T exactly (linear interpolation)
    period, t0 = 0.8, 0.35
    ev = t0 + period * np.arange(30)
    t = np.linspace(t0, ev[-1], 5000)
    assert np.allclose(event_phase(ev, t), 2 * np.pi * (t - t0) / period, atol=1e-10)
    assert np.isnan(event_phase(ev, np.array([0.0]))[0])
