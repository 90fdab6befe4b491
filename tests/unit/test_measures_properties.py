"""Property-based checks of the locking measures (hypothesis)."""
import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from syncstats import measures as M

angles = arrays(np.float64, st.integers(2, 200), elements=st.floats(-50, 50, allow_nan=False))


@settings(max_examples=60, deadline=None)
@given(angles, st.floats(-10, 10, allow_nan=False))
def test_plv_bounds_and_rotation_invariance(psi, c):
    v = M.plv(psi)
    assert -1e-12 <= v <= 1 + 1e-12
    assert np.isclose(M.plv(psi + c), v, atol=1e-9)
    d = M.preferred_phase(psi + c) - M.preferred_phase(psi)
    if v > 1e-6:
        assert np.isclose(np.angle(np.exp(1j * (d - c))), 0.0, atol=1e-6)


@settings(max_examples=60, deadline=None)
@given(angles)
def test_ppc_equals_mean_pairwise_cosine(psi):
    # Vinck et al. 2010 pair-sum identity
    i, j = np.triu_indices(psi.size, 1)
    assert np.isclose(M.ppc(psi), np.mean(np.cos(psi[i] - psi[j])), atol=1e-9)


@settings(max_examples=40, deadline=None)
@given(angles)
def test_entropy_index_bounds(psi):
    v = M.entropy_index(psi)
    assert -1e-12 <= v <= 1 + 1e-12


@settings(max_examples=40, deadline=None)
@given(st.integers(1, 6), st.integers(1, 6), st.floats(0.1, 3.0))
def test_locked_phases_give_unit_indices_at_their_ratio(p, q, f):
    t = np.linspace(0, 20 * q / f, 40001)  # 20 whole p:q patterns
    phi_b = 2 * np.pi * f * t
    phi_a = (p / q) * phi_b + 0.7  # A makes p cycles while B makes q
    psi = M.phase_difference(phi_a, phi_b, p, q)
    assert np.isclose(M.plv(psi), 1.0)
    # within a bin, phi_b/q sweeps an arc of width 2 pi / n_bins, so each bin's mean
    # resultant length is sin(pi/n)/(pi/n) (closed form); -> 1 as bins narrow
    nb = 8
    assert np.isclose(M.conditional_index(phi_a, phi_b, p, q, n_bins=nb), np.sinc(1 / nb), atol=2e-3)


def test_batch_axis_equals_loop():
    rng = np.random.default_rng(0)
    pa = np.cumsum(rng.normal(0.3, 0.2, (5, 3000)), axis=-1)
    pb = np.cumsum(rng.normal(0.3, 0.2, (5, 3000)), axis=-1)
    psi = M.phase_difference(pa, pb, 2, 1)
    for fn in (M.plv, M.ppc, M.entropy_index):
        assert np.allclose(fn(psi), [fn(x) for x in psi])
    assert np.allclose(M.conditional_index(pa, pb, 2, 1), [M.conditional_index(a, b, 2, 1) for a, b in zip(pa, pb)])
    assert np.allclose(M.order_parameter(np.stack([pa, pb], axis=1)), [M.order_parameter(np.stack([a, b])) for a, b in zip(pa, pb)])


def test_order_parameter_uniform_expectation():
    # independent uniform phases: E[R^2] = 1/N (REFERENCES.md, closed form), computed
    # through syncstats' order parameter (one time sample each, so its time mean is R)
    rng = np.random.default_rng(1)
    th = rng.uniform(0, 2 * np.pi, (20000, 5, 1))
    r = M.order_parameter(th)
    assert r.shape == (20000,)
    # N R^2 is about Exp(1): the mean of 20000 has relative SE 0.7 %, so rtol 3 % is > 4 SE
    assert np.isclose(np.mean(r**2), 1 / 5, rtol=0.03)
    assert np.isclose(M.order_parameter(np.zeros((4, 10))), 1.0)


def test_auto_ratios():
    assert M.auto_ratios(1.2, 0.3)[0] == (4, 1)
    assert (9, 2) in M.auto_ratios(1.12, 0.25) and all(np.gcd(p, q) == 1 for p, q in M.auto_ratios(1.12, 0.25))
    assert M.auto_ratios(1.0, 1.0)[0] == (1, 1)


def test_cycle_ppc_reduces_to_vinck_ppc_and_has_no_stroboscopic_artefact():
    rng = np.random.default_rng(4)
    psi = rng.vonmises(0.3, 2.0, 500)
    assert np.isclose(M.cycle_ppc(psi, 1), M.ppc(psi), atol=1e-12)  # unit phasors: Vinck 2010
    # B at 0.25 Hz, A locked 4:1 at 1 Hz; sampled at 20 Hz, 80 samples per B cycle.
    t = np.arange(0, 400, 0.05)
    phi_b = 2 * np.pi * 0.25 * t + np.cumsum(rng.normal(0, 0.01, t.size))
    phi_a = 4 * phi_b + 0.5 + rng.normal(0, 0.3, t.size)
    s = 80
    assert M.cycle_ppc(M.phase_difference(phi_a, phi_b, 4, 1), s) > 0.8
    # the wrong ratio 5:1: psi turns once per B cycle -> no consistency
    assert abs(M.cycle_ppc(M.phase_difference(phi_a, phi_b, 5, 1), s)) < 0.02
    # whereas one sample per B cycle would have called 5:1 locked (the artefact avoided)
    assert M.ppc(M.phase_difference(phi_a, phi_b, 5, 1)[::s]) > 0.5
