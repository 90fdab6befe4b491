"""Synchronization epochs (syncstats.epochs) against sources outside the project.

Values live in reference_values/epochs_checks.json with their sources."""
import numpy as np
import pytest
from scipy import stats

from syncstats.epochs import EpochOptions, detect_epochs, locking_index

from ..conftest import load_ref


def test_the_tolerance_rule_is_scipy_circular_standard_deviation_of_psi_in_the_window():
    # Reference library: scipy.stats.circstd (sqrt(-2 ln R), Mardia & Jupp 2000). A window
    # is steady exactly when the circular SD of the psi samples of its cycles is at most
    # the tolerance (equal-sized cycle blocks: the windowed PLV of cycle means is the PLV
    # of all samples of the window).
    rng = np.random.default_rng(7)
    stride, w, tol = 8, 6, 0.9
    psi = np.cumsum(rng.normal(0, 0.25, 80 * stride))  # a wandering phase difference
    idx = locking_index(psi, stride, w)
    sd = np.array([stats.circstd(psi[j * stride:(j + w) * stride]) for j in range(idx.size)])
    np.testing.assert_allclose(idx, np.exp(-sd**2 / 2), rtol=1e-9)
    steady = idx >= EpochOptions(tolerance=tol).threshold
    np.testing.assert_array_equal(steady, sd <= tol)
    assert 0 < steady.sum() < steady.size  # both kinds of window occur
    lk = detect_epochs(idx, EpochOptions(tolerance=tol).threshold, w)
    for k in range(lk.size):  # a cycle is locked iff some window covering it is steady
        assert lk[k] == any(steady[j] for j in range(max(0, k - w + 1), min(k, steady.size - 1) + 1))


def test_windowed_index_of_psi_spread_evenly_over_an_arc_is_sin_a_over_a():
    ref = load_ref("epochs_checks.json")["uniform_arc_resultant"]
    for a, r in zip(ref["half_width_rad"], ref["resultant"]):
        n = 100_000  # psi sweeps [-a, a] evenly within every cycle (midpoint rule)
        psi = np.tile(-a + 2 * a * (np.arange(n) + 0.5) / n, 5)
        assert locking_index(psi, n, 5)[0] == pytest.approx(r, abs=ref["tol"])


def test_chance_rate_of_steady_windows_for_independent_cycles_matches_the_rayleigh_tail():
    # Independent uniform cycle phases: the share of windows of n cycles whose PLV reaches
    # r is the Rayleigh tail probability (Zar's approximation, reference_values).
    ref = load_ref("epochs_checks.json")["rayleigh_exceedance_zar"]
    n, r = ref["n"], ref["mean_resultant_length"]
    rng = np.random.default_rng(11)
    psi = rng.uniform(-np.pi, np.pi, (4000, 10 * n))  # one sample per cycle, stride 1
    idx = locking_index(psi, 1, n)[:, ::n]  # non-overlapping windows: independent
    assert np.mean(idx >= r) == pytest.approx(ref["p"], abs=ref["tol_monte_carlo"])
