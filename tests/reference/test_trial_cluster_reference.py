"""Locking over trials and synchronization clusters against outside sources.

Each check names its source; values live in reference_values/ (circular.json, von_mises_plv.csv,
cluster_matrices.json).
"""
import numpy as np
import pingouin as pg
import pytest
from scipy import stats

from syncstats.clusters import cluster_decomposition, rotated_participation
from syncstats.trial_locking import across_trial_plv, across_trial_ppc

from ..conftest import load_ref


def _trials_from(angles, n_times=6):
    """K trials x T time points: the same angles at every time point, rotated by a
    different constant per time point (a rotation leaves the mean resultant length unchanged)."""
    a = np.asarray(angles, dtype=float)
    return a[:, None] + np.linspace(0, 5, n_times)[None, :]


def test_across_trial_plv_on_zar_example():
    # Zar, Biostatistical Analysis (4th ed.), Example 26.2 directions as 8 trials; the mean
    # resultant length 0.825218 of Example 27.1 (circular.json); pingouin.circ_r as reference library.
    ref = load_ref("circular.json")["zar_example_27_1"]
    psi = _trials_from(np.deg2rad(ref["angles_deg"]))
    got = across_trial_plv(psi)
    np.testing.assert_allclose(got, ref["mean_resultant_length"], atol=ref["tol"])
    np.testing.assert_allclose(got, pg.circ_r(np.mod(psi, 2 * np.pi), axis=0), atol=1e-12)


def test_across_trial_ppc_on_the_pair_sum_definition():
    # Vinck et al. 2010 (NeuroImage 51:112-122): PPC = mean over pairs j < k of cos(theta_j - theta_k);
    # the 12 angles of circular.json["vinck_ppc_angles"] give 0.216918 (computed, REFERENCES.md).
    ref = load_ref("circular.json")["vinck_ppc_angles"]
    a = np.deg2rad(ref["angles_deg"])
    psi = _trials_from(a)
    pairs = [np.cos(a[j] - a[k]) for j in range(a.size) for k in range(j + 1, a.size)]
    np.testing.assert_allclose(across_trial_ppc(psi), np.mean(pairs), atol=1e-12)
    np.testing.assert_allclose(across_trial_ppc(psi), ref["ppc"], atol=ref["tol"])


@pytest.mark.parametrize("row", load_ref("von_mises_plv.csv").to_dict("records"))
def test_across_trial_ppc_is_unbiased_for_few_trials(row):
    # Vinck et al. 2010: with K independent von Mises(kappa) trials E[PPC] = A(kappa)^2 for any K,
    # A(kappa) = I1/I0 (von_mises_plv.csv: A&S Table 9.8); the across-trial PLV is biased upwards.
    k = row["kappa"]
    psi = stats.vonmises.rvs(k, size=(5, 40_000), random_state=np.random.default_rng(int(10 * k)))
    ppc = across_trial_ppc(psi)
    se = ppc.std(ddof=1) / np.sqrt(ppc.size)
    assert abs(ppc.mean() - row["expected_plv"] ** 2) < 4 * se
    assert across_trial_plv(psi).mean() > row["expected_plv"]


def test_decomposition_of_two_blocks_matches_the_closed_form():
    ref = load_ref("cluster_matrices.json")["two_blocks"]
    lam, vec, part = cluster_decomposition(np.array(ref["matrix"]))
    np.testing.assert_allclose(lam, ref["eigenvalues"], atol=ref["tol"])
    own = [part[0, 0], part[1, 0], part[2, 0], part[3, 1], part[4, 1]]
    np.testing.assert_allclose(own, ref["participation_in_own_cluster"], atol=ref["tol"])
    assert int(np.sum(lam > 1)) == 2  # two cluster candidates (eigenvalues above 1)


def test_decomposition_matches_numpy_eig_on_a_hand_made_matrix():
    ref = load_ref("cluster_matrices.json")["hand_made_4"]
    r = np.array(ref["matrix"])
    lam, vec, part = cluster_decomposition(r)
    w, v = np.linalg.eig(r)
    order = np.argsort(-w.real)
    w, v = w.real[order], v.real[:, order]
    np.testing.assert_allclose(lam, w, atol=ref["tol"])
    np.testing.assert_allclose(part, w[None, :] * v**2, atol=ref["tol"])
    np.testing.assert_allclose(np.abs(vec), np.abs(v), atol=ref["tol"])
    np.testing.assert_allclose(part.sum(axis=1), np.diag(r), atol=ref["tol"])  # sum_k lambda_k v_ik^2 = R_ii
    rot = rotated_participation(lam, vec, int(np.sum(lam > 1)))
    np.testing.assert_allclose(rot.sum(axis=1), 1.0, atol=ref["tol"])
    assert np.argmax(rot[:2, :2], axis=1).tolist() == [0, 0] and np.argmax(rot[2:, :2], axis=1).tolist() == [1, 1]
