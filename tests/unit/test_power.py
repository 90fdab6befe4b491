"""syncstats.power: simulated power curves, calibration, monotonicity, reproducibility."""
import importlib.util
import os
from pathlib import Path

import numpy as np
import pytest
from matplotlib.figure import Figure
from scipy import stats

from syncstats._errors import SyncstatsInputError
from syncstats.power import power_curve, rayleigh_cycles_needed, rayleigh_power, required_length

EX = Path(__file__).resolve().parents[2] / "examples"
FULL = os.environ.get("SYNCSTATS_FULL", "") == "1"
# phase oscillators 10 % apart; time shift; locking range 2 x 0.63 rad/s
DESIGN = dict(kind="phase", fs=10.0, surrogate="time_shift", n_surrogates=39, scenario_options=dict(detuning=0.1))


@pytest.fixture(scope="module")
def curve():
    return power_curve(lengths=[30, 90], couplings=[0.0, 0.3, 0.9], n_replicas=80 if FULL else 16, rng=21,
                       **DESIGN)


def _band(r, alpha=0.05):
    lo, hi = stats.binom.ppf([0.005, 0.995], r, alpha)  # binomial 99 % band (common practice)
    return lo / r, hi / r


@pytest.mark.slow
def test_calibration_with_zero_coupling(curve):
    t = curve.table[curve.table.coupling == 0]
    r = int(t.n_replicas.sum())
    fpr = t.n_rejections.sum() / r
    lo, hi = _band(r)
    assert lo <= fpr <= hi


def _not_lower(a, b):
    """Cell b's power is not significantly below a's (one-sided Fisher exact, 1 %)."""
    table = [[a.n_rejections, a.n_replicas - a.n_rejections], [b.n_rejections, b.n_replicas - b.n_rejections]]
    return stats.fisher_exact(table, alternative="greater").pvalue >= 0.01


@pytest.mark.slow
def test_monotone_in_coupling_and_length(curve):
    t = curve.table.set_index(["length", "coupling"])
    for L in (30.0, 90.0):
        assert _not_lower(t.loc[(L, 0.0)], t.loc[(L, 0.3)]) and _not_lower(t.loc[(L, 0.3)], t.loc[(L, 0.9)])
    for k in (0.3, 0.9):
        assert _not_lower(t.loc[(30.0, k)], t.loc[(90.0, k)])
    assert t.loc[(90.0, 0.9)].power >= 0.8  # power check: well inside the locking range


def test_table_schema_and_intervals(curve):
    t = curve.table
    assert {"length", "coupling", "n_replicas", "power", "ci_low", "ci_high"} <= set(t.columns)
    assert ((t.ci_low <= t.power) & (t.power <= t.ci_high)).all()
    assert curve.p_values.shape == (len(t), int(t.n_replicas.iloc[0]))
    # never 0: p = (1 + k)/(1 + S); with time_shift S is every circular shift (exact test)
    assert np.all(curve.p_values > 0) and np.all(curve.p_values <= 1)


def test_reproducible_and_independent_of_jobs():
    kw = dict(lengths=[20], couplings=[0.9], n_replicas=4, rng=3, **DESIGN)
    a = power_curve(replicas_per_job=1, **kw)
    b = power_curve(replicas_per_job=4, **kw)
    c = power_curve(replicas_per_job=2, executor="processes", n_jobs=2, **kw)
    np.testing.assert_array_equal(a.p_values, b.p_values)
    np.testing.assert_array_equal(a.p_values, c.p_values)


def test_cycles_unit_and_required_length():
    pc = power_curve(lengths=[20, 60], couplings=[0.9], length_unit="cycles", n_replicas=4, rng=2, **DESIGN)
    assert pc.table.duration_s.tolist() == pytest.approx([20 / 1.0, 60 / 1.0])  # slower unit at 1 Hz
    res = required_length(coupling=0.9, curve=pc, target_power=0.5)
    assert res["length"] in (20.0, 60.0)
    with pytest.raises(SyncstatsInputError):
        required_length(coupling=0.1, curve=pc)


def test_figure(curve, tmp_path):
    fig = curve.figure(target_power=0.8)
    assert isinstance(fig, Figure)
    fig.savefig(tmp_path / "p.png")
    assert (tmp_path / "p.png").stat().st_size > 1000


def test_rayleigh_power_closed_form():
    assert rayleigh_power(50, plv=0.0) == pytest.approx(0.05, abs=0.002)
    assert rayleigh_power(40, plv=0.3) < rayleigh_power(80, plv=0.3) < rayleigh_power(80, plv=0.4)
    assert rayleigh_power(80, plv=0.3, search=10) < rayleigh_power(80, plv=0.3)
    n = rayleigh_cycles_needed(plv=0.3, power=0.8)
    assert rayleigh_power(n, plv=0.3) >= 0.8 > rayleigh_power(n - 1, plv=0.3)


@pytest.mark.parametrize("kw", [dict(lengths=[], couplings=[0.1]), dict(lengths=[10], couplings=[-1]),
                                dict(lengths=[10], couplings=[0.1], kind="nope"),
                                dict(lengths=[10], couplings=[0.1], length_unit="min"),
                                dict(lengths=[10], couplings=[0.1], n_replicas=0),
                                dict(lengths=[10], couplings=[0.1], scenario_options={"coupling": 1})])
def test_bad_input(kw):
    with pytest.raises(SyncstatsInputError) as e:
        power_curve(**kw)
    assert "\n" not in str(e.value)


def test_planner_example(monkeypatch, tmp_path):
    monkeypatch.setenv("SYNCSTATS_EXAMPLE_SURROGATES", "19")
    spec = importlib.util.spec_from_file_location("planner", EX / "planner.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    curve, plan = mod.main(str(tmp_path))
    assert (tmp_path / "power_curve.png").is_file() and len(curve.table) == 6
