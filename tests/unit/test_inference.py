"""Max-statistic correction, bootstrap intervals: calibration on closed-form nulls."""
import numpy as np
import pytest
from scipy import stats
from scipy.special import i0e, i1e

from syncstats import measures as M
from syncstats.inference import adjust, block_ci, max_stat_adjust, min_surrogates, surrogate_pvalue


def test_max_stat_controls_fwer_under_the_complete_null():
    # F = 10 exchangeable correlated statistics; observed drawn from the same law as the
    # surrogates: the chance of any rejection at 0.05 must stay near 0.05 (FWER).
    rng = np.random.default_rng(1)
    reps, b, f = 400, 199, 10
    cov = 0.5 * np.ones((f, f)) + 0.5 * np.eye(f)
    hits = 0
    for _ in range(reps):
        z = rng.multivariate_normal(np.zeros(f), cov, size=b + 1)
        p = max_stat_adjust(z[0], z[1:])
        hits += np.any(p <= 0.05)
    # binomial 99% band around 0.05 for 400 runs: [0.0275, 0.0775]
    lo, hi = stats.binom.ppf([0.005, 0.995], reps, 0.05) / reps
    assert lo <= hits / reps <= hi


def test_max_stat_detects_and_step_down_is_at_least_as_powerful():
    rng = np.random.default_rng(2)
    null = rng.standard_normal((999, 6))
    obs = np.array([4.0, 3.0, 0.1, -0.5, 0.0, 2.9])
    sd = max_stat_adjust(obs, null, step_down=True)
    ss = max_stat_adjust(obs, null, step_down=False)
    assert np.all(sd <= ss + 1e-12)
    assert sd[0] < 0.01 and sd[1] < 0.05 and sd[2] > 0.5
    # adjusted p-values never below the unadjusted ones
    raw = surrogate_pvalue(obs, null)
    assert np.all(sd >= raw - 1e-12)
    # monotone in the observed ordering
    order = np.argsort(-obs)
    assert np.all(np.diff(sd[order]) >= -1e-12)


def test_adjust_none_and_unknown():
    p = np.array([0.01, 0.2])
    assert np.array_equal(adjust(p, "none"), p)
    with pytest.raises(ValueError, match="fdr_bh"):
        adjust(p, "sidak")


def test_min_surrogates_rule():
    # B >= m/q - 1 for FDR (METHODS.md, common practice); B >= 1/alpha - 1 for one test
    assert min_surrogates(1, 0.05, "max_stat") == 19
    assert min_surrogates(20, 0.05, "fdr_bh") == 399


def test_block_bootstrap_ci_covers_the_von_mises_plv():
    # Independent von Mises angles, one per "cycle": the PLV's 90% CI should cover the
    # large-sample value A(kappa) = I1/I0 about 90% of the time (Efron & Tibshirani 1993).
    # Judged against the binomial 99% band of the coverage at 200 replicas, [0.84, 0.95]
    # (scipy.stats.binom; measured 0.865 with this seed).
    rng = np.random.default_rng(3)
    kappa = 2.0
    truth = i1e(kappa) / i0e(kappa)
    cover = 0
    reps = 200
    for _ in range(reps):
        psi = stats.vonmises.rvs(kappa, size=200, random_state=rng)
        st = np.column_stack([np.cos(psi), np.sin(psi), np.ones_like(psi)])
        lo, hi = block_ci(st, lambda z: np.hypot(z[..., 0], z[..., 1]) / z[..., 2], n_resamples=499, level=0.9,
                          method="percentile", rng=rng)
        cover += lo <= truth <= hi
    lo, hi = stats.binom.ppf([0.005, 0.995], reps, 0.9) / reps
    assert lo <= cover / reps <= hi, f"coverage {cover / reps:.3f} outside [{lo:.3f}, {hi:.3f}]"
    assert M.plv(psi) == pytest.approx(truth, abs=0.1)


def test_locked_needs_more_than_chance_concentration_over_the_cycles():
    """A significant row whose PLV independent cycle phases reach by chance (below the
    Rayleigh critical value for its cycles, Zar 1999 Eq. 27.4 inverted) is dependent, not
    locked; above it, it is locked. One ratio per pair, so no resampling is involved."""
    from types import SimpleNamespace

    from syncstats.inference import choose_ratios, critical_plv, lock_floor
    from syncstats.inference._family import Row

    rows = (Row("pair", "a", "b", 3, 1, 0, 100, "plv", ("a", "b")),
            Row("pair", "c", "d", 3, 1, 0, 100, "plv", ("c", "d")))
    design = SimpleNamespace(rows=rows)
    test = SimpleNamespace(p_adjusted=np.array([0.001, 0.001]), null_mean=np.array([0.015, 0.015]))
    floor = critical_plv(75, 0.05)
    assert lock_floor("plv", 75, 0.05) == floor and 0.19 < floor < 0.21  # sqrt(-ln 0.05 / 75) to first order
    observed = np.array([0.083, floor + 0.05])
    still = {k: np.zeros((1, 100)) for k in "abcd"}  # psi makes no net turn: entrained
    ch = choose_ratios(design, still, observed, test, alpha=0.05, n_resamples=0, seed=np.random.SeedSequence(1),
                       n_cycles=np.array([75.0, 75.0]))
    assert list(ch.locked) == [False, True]
    # PPC: the floor is the PPC of the critical PLV; other measures have none
    assert lock_floor("ppc", 75, 0.05) == pytest.approx((75 * floor**2 - 1) / 74)
    assert lock_floor("entropy_index", 75, 0.05) == -np.inf


def test_locked_needs_frequency_entrainment():
    """A concentrated, significant row whose psi keeps turning (more than
    MAX_DRIFT_PER_CYCLE net turns per cycle of the slower rhythm) is not locked: locking
    means q·f_A = p·f_B (frequency entrainment; Pikovsky, Rosenblum & Kurths 2001, ch. 3
    and 7, chapters recalled from memory: a fact of the trade). Built: psi turns 0.5 per cycle over 40 cycles (drift 0.5)
    but dwells near 0 (non-uniform rotation: PLV about 0.6), next to a pair that dwells
    without net turns. The drift is computed exactly: 20 turns / 40 cycles."""
    from types import SimpleNamespace

    from syncstats.inference import choose_ratios
    from syncstats.inference._family import Row
    from syncstats.inference._ratios import MAX_DRIFT_PER_CYCLE, drift_per_cycle

    n = 4000
    u = np.linspace(0, 2 * np.pi * 20, n)  # 20 net turns
    dwelling = u - 0.9 * np.sin(u)  # slow near psi = 0 (mod 2 pi), fast through pi
    data = {"a": dwelling[None, :], "b": np.zeros((1, n)), "c": 0.3 * np.sin(u)[None, :], "d": np.zeros((1, n))}
    rows = (Row("pair", "a", "b", 1, 1, 0, n, "plv", ("a", "b")), Row("pair", "c", "d", 1, 1, 0, n, "plv", ("c", "d")))
    design = SimpleNamespace(rows=rows)
    observed = np.array([np.abs(np.exp(1j * dwelling).mean()), np.abs(np.exp(0.3j * np.sin(u)).mean())])
    assert observed[0] > 0.3 and observed[1] > 0.9
    drift = drift_per_cycle(design, data, np.array([40.0, 40.0]))
    assert drift[0] == pytest.approx(0.5) and drift[1] == pytest.approx(0.0, abs=1e-9)
    assert drift[0] > MAX_DRIFT_PER_CYCLE
    test = SimpleNamespace(p_adjusted=np.array([0.001, 0.001]), null_mean=np.array([0.02, 0.02]))
    ch = choose_ratios(design, data, observed, test, alpha=0.05, n_resamples=0, seed=np.random.SeedSequence(1),
                       n_cycles=np.array([40.0, 40.0]))
    assert list(ch.locked) == [False, True]


def test_two_states_half_a_turn_apart_are_flagged_and_one_peak_is_not():
    """two_state_warning: the second circular moment of psi above the first and above the
    Rayleigh level. Closed forms: for a von Mises psi the moments are I1(k)/I0(k) and
    I2(k)/I0(k), and I2 < I1 for every k > 0 (Mardia & Jupp 2000, Directional Statistics,
    section 3.5, recalled from memory; checked here with scipy.special), so one peak never
    warns; two equal von Mises peaks half a turn apart have first moment 0 and second
    moment I2(k)/I0(k)."""
    from scipy.special import ive

    from syncstats.inference import critical_plv, two_state_warning
    from syncstats.inference._ratios import TWO_STATE_LEVEL

    n = 200  # cycles
    for k in (0.5, 2.0, 8.0, 50.0):
        r1, r2 = ive(1, k) / ive(0, k), ive(2, k) / ive(0, k)
        assert r2 < r1
        assert two_state_warning(r1, r2, n) == ""  # one peak
        msg = two_state_warning(0.0, r2, n)  # two peaks half a turn apart: r1 = 0
        assert (msg != "") == (r2 > critical_plv(n, TWO_STATE_LEVEL)), (k, r2)  # 0.185 at n = 200
    rng = np.random.default_rng(4)
    psi = np.where(rng.random(n) < 0.5, 0.4, 0.4 + np.pi) + rng.vonmises(0.0, 20.0, n)
    msg = two_state_warning(M.plv(psi), M.plv(2 * psi), n)
    assert "half a turn apart" in msg and M.plv(psi) < 0.2
    # independent angles: no warning in 1000 draws of 200 (level 0.001, r2 > r1 half the time)
    u = rng.uniform(-np.pi, np.pi, (1000, n))
    assert sum(two_state_warning(M.plv(x), M.plv(2 * x), n) != "" for x in u) <= 3
