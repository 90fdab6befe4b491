"""check_claim and the Rayleigh power against sources outside the project.

Sources are named beside each value (here or in reference_values/*.json)."""
import json
from pathlib import Path

import numpy as np
import pingouin
import pytest
from scipy import stats

from syncstats.claims import chance_plv, check_claim, plv_standard_error, rayleigh_log_p
from syncstats.inference import rayleigh_test
from syncstats.power import rayleigh_power

REF = Path(__file__).resolve().parents[2] / "reference_values"
CIRC = json.loads((REF / "circular.json").read_text())
CHK = json.loads((REF / "claims_checks.json").read_text())


def test_zar_example_27_1_through_check_claim():
    # Zar, Biostatistical Analysis (4th ed. 1999), Example 27.1 (reference_values/circular.json)
    z = CIRC["zar_example_27_1"]
    chk = check_claim(value=z["mean_resultant_length"], n_cycles=len(z["angles_deg"]))
    assert chk.value("p_cycles") == pytest.approx(z["zar_approx_p"], abs=z["tol"])
    assert chk.value("rayleigh_z_cycles") == pytest.approx(z["rayleigh_z"], abs=1e-5)


def test_fisher_example_4_11_through_check_claim():
    # Fisher, Statistical Analysis of Circular Data (1993), Example 4.11 (circular.json)
    f = CIRC["fisher_example_4_11"]
    chk = check_claim(value=f["mean_resultant_length"], n_cycles=f["n"])
    assert chk.value("p_cycles") == pytest.approx(f["zar_approx_p"], abs=f["tol"])
    assert chk.value("p_cycles") == pytest.approx(f["book_p"], abs=0.001)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_rayleigh_matches_pingouin_and_package(seed):
    # pingouin.circ_rayleigh (reference library) and syncstats.inference.rayleigh_test
    rng = np.random.default_rng(seed)
    ang = stats.vonmises.rvs(0.8, size=25, random_state=rng)
    z_pg, p_pg = pingouin.circ_rayleigh(ang)
    z_pk, p_pk = rayleigh_test(ang)
    plv = np.abs(np.mean(np.exp(1j * ang)))
    assert np.exp(rayleigh_log_p(25, plv)) == pytest.approx(p_pg, rel=1e-9)
    assert np.exp(rayleigh_log_p(25, plv)) == pytest.approx(float(p_pk), rel=1e-9)
    assert 25 * plv**2 == pytest.approx(z_pg, rel=1e-9)


def test_rayleigh_p_against_direct_monte_carlo():
    c = CHK["rayleigh_mc_n30"]
    rng = np.random.default_rng(5)
    ang = rng.uniform(0, 2 * np.pi, size=(c["mc_replicas"], c["n"]))
    null = np.abs(np.mean(np.exp(1j * ang), axis=1))
    for g in c["plv"]:
        assert np.exp(rayleigh_log_p(c["n"], g)) == pytest.approx(np.mean(null >= g), abs=c["abs_tol"])


def test_chance_level_against_monte_carlo():
    c = CHK["chance_plv_n50"]
    m, s = chance_plv(c["n"])
    assert m == pytest.approx(c["expected_mean"], rel=1e-6)
    ang = stats.uniform.rvs(0, 2 * np.pi, size=(c["mc_replicas"], c["n"]), random_state=np.random.default_rng(6))
    r = np.abs(np.mean(np.exp(1j * ang), axis=1))
    assert r.mean() == pytest.approx(m, rel=c["rel_tol"])
    assert r.std() == pytest.approx(s, rel=0.05)
    assert np.mean(r**2) == pytest.approx(1 / c["n"], rel=0.03)  # E[PLV^2] = 1/N (METHODS, common practice)


def test_plv_standard_error_against_monte_carlo():
    c = CHK["plv_se_wrapped_normal"]
    rng = np.random.default_rng(7)
    for rho in c["rho"]:
        sd = np.sqrt(-2 * np.log(rho))  # wrapped normal: rho = exp(-sd^2/2)
        ang = rng.normal(0, sd, size=(c["mc_replicas"], c["n"]))
        r = np.abs(np.mean(np.exp(1j * ang), axis=1))
        assert plv_standard_error(rho, c["n"]) == pytest.approx(r.std(), rel=c["rel_tol"])


def test_rayleigh_power_against_von_mises_monte_carlo():
    c = CHK["rayleigh_power_von_mises"]
    rng = np.random.default_rng(8)
    for n, rho in c["cases"]:
        from syncstats.power import _vm_kappa

        kappa = _vm_kappa(rho)
        ang = stats.vonmises.rvs(kappa, size=(c["mc_replicas"], n), random_state=rng)
        _, p = rayleigh_test(ang)
        mc = np.mean(p <= c["alpha"])
        assert rayleigh_power(n, plv=rho, alpha=c["alpha"]) == pytest.approx(mc, abs=c["abs_tol"])
