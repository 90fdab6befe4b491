"""syncstats.simulate against results from outside the project.

Every check value lives in reference_values/simulate_checks.json with its ``source``;
each test re-derives the value from the closed form named there, compares it with the
stored number, and then with the simulator.
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from syncstats.simulate import (damped_noise_oscillator, natural_period, phase_oscillators,
                                van_der_pol)

CHECKS = json.loads((Path(__file__).resolve().parents[2] / "reference_values"
                     / "simulate_checks.json").read_text())["checks"]
TWO_PI = 2.0 * math.pi


def _slip_period(t, psi):
    """Mean time between successive passes of psi through multiples of 2 pi."""
    s = np.sign(psi[-1] - psi[0])
    x = s * psi
    levels = TWO_PI * np.arange(math.ceil(x[0] / TWO_PI), math.floor(x[-1] / TWO_PI) + 1)
    tk = np.interp(levels, x, t)
    return float(np.mean(np.diff(tk[1:]))), tk[1:]


def _pair(nu, S, fb, ratio, k_ab, k_ba, duration, fs=50.0):
    p, q = ratio
    delta = nu * S                                   # q w_A - p w_B  (rad/s)
    fa = (p * TWO_PI * fb + delta) / (q * TWO_PI)
    sim = phase_oscillators(2, duration, fs, freqs=[fa, fb],
                            coupling=[[0.0, k_ab], [k_ba, 0.0]], ratio=ratio, rng=0)
    psi = q * sim.phases[0] - p * sim.phases[1]
    return sim.time, psi


# --------------------------------------------------------------------- Adler 1946; PRK 2001
@pytest.mark.parametrize("case", CHECKS["adler_locking_1to1"]["cases"],
                         ids=lambda c: f"nu={c['nu']}")
def test_adler_1to1_locking_range_and_beat_frequency(case):
    chk = CHECKS["adler_locking_1to1"]
    eps = chk["eps_rad_s"]
    tol = chk["tolerance"]
    nu = case["nu"]
    S = 2.0 * eps                                    # mutual coupling: S = 2 eps
    assert case["locked"] == (nu < 1.0)              # |Delta w| < 2 eps  (Adler 1946)
    if case["locked"]:
        expected = math.asin(nu)
        assert expected == pytest.approx(case["locked_psi_rad"], abs=1e-9)
        t, psi = _pair(nu, S, 1.0, (1, 1), eps, eps, duration=60.0)
        tail = psi[t > 40.0]
        assert np.ptp(tail) < 1e-4                   # no drift once locked
        got = (tail.mean() + math.pi) % TWO_PI - math.pi
        assert got == pytest.approx(expected, abs=tol["locked_psi_abs_rad"])
    else:
        beat = math.sqrt((nu * S) ** 2 - S ** 2)     # sqrt(Dw^2 - 4 eps^2)
        assert beat == pytest.approx(case["beat_rad_s"], rel=1e-9)
        plv = nu - math.sqrt(nu * nu - 1.0)
        assert plv == pytest.approx(case["mean_plv"], abs=1e-8)
        period = TWO_PI / beat
        t, psi = _pair(nu, S, 1.0, (1, 1), eps, eps, duration=12.0 * period + 10.0)
        T, tk = _slip_period(t, psi)
        assert TWO_PI / T == pytest.approx(beat, rel=tol["beat_rel"])
        sel = (t >= tk[0]) & (t < tk[-1])            # whole slip periods only
        got_plv = abs(np.mean(np.exp(1j * psi[sel])))
        assert got_plv == pytest.approx(plv, abs=tol["mean_plv_abs"])


@pytest.mark.parametrize("case", CHECKS["adler_locking_n_to_m"]["cases"],
                         ids=lambda c: f"nu={c['nu']}")
def test_adler_n_to_m_locking(case):
    chk = CHECKS["adler_locking_n_to_m"]
    p, q = chk["ratio"]
    K = chk["k_rad_s"]
    S = q * K + p * K
    nu = case["nu"]
    fb = 0.4
    if case["locked"]:
        assert math.asin(nu) == pytest.approx(case["locked_psi_rad"], abs=1e-9)
        t, psi = _pair(nu, S, fb, (p, q), K, K, duration=80.0)
        tail = psi[t > 60.0]
        assert np.ptp(tail) < 1e-4
        got = (tail.mean() + math.pi) % TWO_PI - math.pi
        assert got == pytest.approx(math.asin(nu), abs=chk["tolerance"]["locked_psi_abs_rad"])
    else:
        beat = math.sqrt((nu * S) ** 2 - S ** 2)
        assert beat == pytest.approx(case["beat_rad_s"], rel=1e-9)
        t, psi = _pair(nu, S, fb, (p, q), K, K, duration=12.0 * TWO_PI / beat + 10.0)
        T, _ = _slip_period(t, psi)
        assert TWO_PI / T == pytest.approx(beat, rel=chk["tolerance"]["beat_rel"])


# --------------------------------------------------------------------- Strogatz sec. 7.5-7.6
@pytest.mark.parametrize("integrator", ["solve_ivp", "fixed"])
def test_van_der_pol_small_mu_amplitude_is_two(integrator):
    chk = CHECKS["van_der_pol_small_mu_amplitude"]
    sim = van_der_pol(1, 40.0, 50.0, freqs=1.0, mu=chk["mu"], integrator=integrator, rng=3)
    x = sim.signals[0, sim.time > 20.0]
    amp = 0.5 * (x.max() - x.min())
    assert amp == pytest.approx(chk["expected_amplitude"], rel=chk["tolerance_rel"])


def test_van_der_pol_relaxation_period():
    chk = CHECKS["van_der_pol_relaxation_period"]
    expected = 3.0 - 2.0 * math.log(2.0)
    assert expected == pytest.approx(chk["expected_T_over_mu"], rel=1e-9)
    mu1, mu2 = chk["mu"]
    T1 = natural_period("van_der_pol", mu=mu1)
    T2 = natural_period("van_der_pol", mu=mu2)
    assert T1 / mu1 == pytest.approx(expected, rel=chk["tolerance_rel_T_over_mu"])
    assert (T2 - T1) / (mu2 - mu1) == pytest.approx(expected, rel=chk["tolerance_rel_slope"])


# --------------------------------------------------------------------- Kuramoto 1975; Strogatz 2000
def test_kuramoto_lorentzian_critical_coupling_and_order_parameter():
    chk = CHECKS["kuramoto_lorentzian"]
    gamma, N = chk["gamma_rad_s"], chk["n_units"]
    K = np.array(chk["K_rad_s"])
    Kc = 2.0 * gamma
    expected = np.sqrt(np.clip(1.0 - Kc / K, 0.0, None))
    np.testing.assert_allclose(expected, chk["expected_r"], atol=1e-9)
    i = np.arange(1, N + 1)
    omega = gamma * np.tan(np.pi * (i - 0.5) / N - np.pi / 2)   # Lorentzian quantiles
    sim = phase_oscillators(N, 100.0, 2.0, freqs=omega / TWO_PI, coupling=K, noise=0.0,
                            n_replicas=K.size, dt=0.05, integrator="fixed", rng=11)
    r = np.abs(np.exp(1j * sim.phases).mean(axis=1))           # (replica, time)
    r_stat = r[:, sim.time >= 60.0].mean(axis=1)
    below = K < Kc
    assert np.all(r_stat[below] < chk["below_threshold_max_r"])
    np.testing.assert_allclose(r_stat[~below], expected[~below], atol=chk["tolerance_abs"])


# --------------------------------------------------------------------- Roessler (recalled)
def test_rossler_mean_frequency_near_one():
    # Recalled from memory (see the JSON source): mean angular frequency ~1 rad/unit.
    chk = CHECKS["rossler_mean_frequency"]
    omega = TWO_PI / natural_period("rossler", a=chk["a"], b=chk["b"], c=chk["c"])
    assert omega == pytest.approx(chk["expected_omega"], abs=chk["tolerance_abs"])


# --------------------------------------------------------------------- Uhlenbeck & Ornstein 1930
def test_damped_oscillator_stationary_variance_and_autocorrelation():
    chk = CHECKS["damped_oscillator_stationary_moments"]
    w0, z, s = TWO_PI * chk["f0_hz"], chk["zeta"], chk["sigma"]
    var = s * s / (4.0 * z * w0 ** 3)
    assert var == pytest.approx(chk["expected_variance"], rel=1e-8)
    wd = w0 * math.sqrt(1 - z * z)
    tau = chk["lag_s"]
    rho = math.exp(-z * w0 * tau) * (math.cos(wd * tau) + z / math.sqrt(1 - z * z)
                                     * math.sin(wd * tau))
    assert rho == pytest.approx(chk["expected_autocorrelation"], abs=1e-8)
    fs = 20.0
    sim = damped_noise_oscillator(1, 200.0, fs, freqs=chk["f0_hz"], damping=z, noise=s,
                                  n_replicas=40, rng=5)
    x = sim.signals[:, 0, :]
    assert x.var() == pytest.approx(var, rel=chk["tolerance_rel_variance"])
    lag = int(round(tau * fs))
    got = np.mean(x[:, lag:] * x[:, :-lag]) / np.mean(x * x)
    assert got == pytest.approx(rho, abs=chk["tolerance_abs_autocorrelation"])
