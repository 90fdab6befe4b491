"""Unit tests for syncstats.simulate (fast, deterministic)."""
from __future__ import annotations

import ast
import doctest
import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy.signal import welch

import syncstats.simulate as sim_pkg
from syncstats._errors import SyncstatsInputError
from syncstats.simulate import (SCENARIO_KINDS, Scenario, ScenarioBatch, Simulation,
                                adler_prediction, beat_train, damped_noise_oscillator,
                                fitzhugh_nagumo, load_demo, make_demo_dataset,
                                natural_period, phase_oscillators, phase_slips,
                                quasi_periodic, rossler, scenario, scenario_batch,
                                stuart_landau, van_der_pol)
from syncstats.simulate import _phase_models, _runner
from syncstats.simulate import _scenario as scen_mod
from syncstats.simulate._integrate import Recorder, compile_heun, heun_fixed_step

TWO_PI = 2.0 * math.pi
PAIR = dict(freqs=[1.0, 1.05], coupling=[[0.0, 0.3], [0.3, 0.0]])

# (simulator, extra kwargs) for pairs; noise > 0 so the stochastic path is exercised
SIMULATORS = [
    (phase_oscillators, dict(noise=0.1)),
    (stuart_landau, dict(noise=0.1)),
    (quasi_periodic, dict(noise=0.1)),
    (van_der_pol, dict(noise=0.02, coupling=[[0, 0.1], [0.1, 0]])),
    (fitzhugh_nagumo, dict(noise=0.005, coupling=[[0, 0.01], [0.01, 0]])),
    (rossler, dict(noise=0.02, coupling=[[0, 0.05], [0.05, 0]])),
    (damped_noise_oscillator, dict()),
]
IDS = [f.__name__ for f, _ in SIMULATORS]


def _run(func, extra, **kw):
    args = {**PAIR, **extra, **kw}
    return func(2, args.pop("duration", 10.0), args.pop("fs", 50.0), **args)


def _freq(phases, fs):
    """Mean frequency (Hz) from the times the phase passes multiples of 2 pi.

    Whole cycles only: a protophase is not uniform within a cycle, so its end points
    would bias a (last - first) / duration estimate."""
    out = []
    for ph in np.atleast_2d(phases):
        rm = np.maximum.accumulate(ph)
        lev = TWO_PI * np.arange(math.ceil(rm[0] / TWO_PI), math.floor(rm[-1] / TWO_PI) + 1)
        tk = np.interp(lev, rm, np.arange(rm.size) / fs)
        out.append((lev.size - 1) / (tk[-1] - tk[0]))
    return np.array(out)


# =========================================================================== shapes, seeds
@pytest.mark.parametrize("func,extra", SIMULATORS, ids=IDS)
def test_shapes_time_axis_and_params(func, extra):
    sim = _run(func, extra, rng=1)
    assert isinstance(sim, Simulation)
    assert sim.signals.shape == sim.phases.shape == (2, 500)
    assert sim.fs == 50.0 and sim.n_samples == 500
    np.testing.assert_allclose(sim.time, np.arange(500) / 50.0)
    assert np.all(np.isfinite(sim.signals)) and np.all(np.isfinite(sim.phases))
    assert sim.params["dt_s"] > 0
    many = _run(func, extra, rng=1, n_replicas=3)
    assert many.signals.shape == many.phases.shape == (3, 2, 500)


@pytest.mark.parametrize("func,extra", SIMULATORS, ids=IDS)
def test_seeding_and_replica_independence(func, extra):
    a = _run(func, extra, rng=7)
    b = _run(func, extra, rng=7)
    c = _run(func, extra, rng=8)
    np.testing.assert_array_equal(a.signals, b.signals)
    assert not np.allclose(a.signals, c.signals)
    batch = _run(func, extra, rng=7, n_replicas=4)
    # replica 0 of a batch is the single run (scalar vs array arithmetic: rounding only)
    np.testing.assert_allclose(batch.signals[0], a.signals, rtol=0, atol=1e-8)
    bigger = _run(func, extra, rng=7, n_replicas=6)
    np.testing.assert_allclose(bigger.signals[:4], batch.signals, rtol=0, atol=1e-12)
    assert not np.allclose(batch.signals[0], batch.signals[1])
    gen = _run(func, extra, rng=np.random.default_rng(3))
    assert np.all(np.isfinite(gen.signals))


def test_generator_rng_is_consumed_so_two_calls_differ():
    g = np.random.default_rng(5)
    a = phase_oscillators(2, 5.0, 50.0, freqs=[1, 1.1], noise=0.1, rng=g)
    b = phase_oscillators(2, 5.0, 50.0, freqs=[1, 1.1], noise=0.1, rng=g)
    assert not np.allclose(a.signals, b.signals)


def test_chunk_size_does_not_change_the_path():
    spec = _phase_models._phase_spec(2, TWO_PI * np.array([1.0, 1.2]),
                                     np.array([[[0.0, 0.4], [0.4, 0.0]]]), None,
                                     np.array([0.2, 0.2]), np.array([1, 1]))
    from syncstats.simulate._common import replica_streams
    out = []
    for chunk in (7, 2048):
        out.append(_runner.run_model(spec, n_samples=300, fs=50.0, n_rep=1,
                                     streams=replica_streams(3, 1),
                                     coupling=np.array([[[0.0, 0.4], [0.4, 0.0]]]),
                                     integrator="fixed", dt=None,
                                     measurement_noise=np.zeros(2), func="t", chunk=chunk))
    np.testing.assert_array_equal(out[0][0], out[1][0])
    np.testing.assert_array_equal(out[0][1], out[1][1])


def test_inputs_are_not_modified():
    freqs = np.array([1.0, 1.1])
    coup = np.array([[0.0, 0.2], [0.1, 0.0]])
    ratio = [1, 1]
    f0, c0 = freqs.copy(), coup.copy()
    phase_oscillators(2, 5.0, 50.0, freqs=freqs, coupling=coup, ratio=ratio, noise=0.1,
                      rng=1)
    van_der_pol(2, 5.0, 50.0, freqs=freqs, coupling=coup, noise=0.01, rng=1)
    damped_noise_oscillator(2, 5.0, 50.0, freqs=freqs, coupling=coup, rng=1)
    np.testing.assert_array_equal(freqs, f0)
    np.testing.assert_array_equal(coup, c0)
    assert ratio == [1, 1]
    seq = np.random.SeedSequence(4)
    before = seq.n_children_spawned
    make = sim_pkg._demo._child(seq, 0)
    assert seq.n_children_spawned == before and make is not None


def test_measurement_noise_is_relative_to_signal_sd():
    kw = dict(freqs=[1.0, 1.3], rng=2)
    clean = phase_oscillators(2, 100.0, 50.0, **kw)
    noisy = phase_oscillators(2, 100.0, 50.0, measurement_noise=[0.5, 0.0], **kw)
    resid = noisy.signals - clean.signals
    assert resid[0].std() / clean.signals[0].std() == pytest.approx(0.5, rel=0.05)
    np.testing.assert_array_equal(resid[1], 0.0)
    np.testing.assert_array_equal(noisy.phases, clean.phases)


# =========================================================================== bad input
BAD = [
    (phase_oscillators, dict(n_units=0), "n_units"),
    (phase_oscillators, dict(n_units=2.5), "n_units"),
    (phase_oscillators, dict(duration=-1.0), "duration"),
    (phase_oscillators, dict(fs=0.0), "fs"),
    (phase_oscillators, dict(duration=0.01), "samples"),
    (phase_oscillators, dict(freqs=[1.0, 2.0, 3.0]), "freqs"),
    (phase_oscillators, dict(freqs=[1.0, np.nan]), "freqs"),
    (phase_oscillators, dict(coupling=[[1.0, 0.1], [0.1, 0.0]]), "diagonal"),
    (phase_oscillators, dict(coupling=np.zeros((3, 3))), "coupling"),
    (phase_oscillators, dict(coupling=[0.1, 0.2, 0.3]), "coupling"),
    (phase_oscillators, dict(coupling="strong"), "coupling"),
    (phase_oscillators, dict(ratio=(1.5, 1)), "ratio"),
    (phase_oscillators, dict(ratio=(0, 1)), "ratio"),
    (phase_oscillators, dict(ratio=(1, 1, 1)), "ratio"),
    (phase_oscillators, dict(noise=-0.1), "noise"),
    (phase_oscillators, dict(measurement_noise=-1), "measurement_noise"),
    (phase_oscillators, dict(n_replicas=0), "n_replicas"),
    (phase_oscillators, dict(dt=-0.01), "dt"),
    (phase_oscillators, dict(integrator="euler"), "integrator"),
    (phase_oscillators, dict(integrator="solve_ivp", noise=0.1), "solve_ivp"),
    (phase_oscillators, dict(rng=-3), "rng"),
    (phase_oscillators, dict(rng="seed"), "rng"),
    (stuart_landau, dict(freqs=[-1.0, 1.0]), "freqs"),
    (stuart_landau, dict(amplitude_relaxation=0.0), "amplitude_relaxation"),
    (stuart_landau, dict(n_units=65, freqs=1.0, coupling=0.0), "n_units"),
    (van_der_pol, dict(mu=0.0), "mu"),
    (fitzhugh_nagumo, dict(current=0.0), "oscillate"),
    (fitzhugh_nagumo, dict(epsilon=-1.0), "epsilon"),
    (quasi_periodic, dict(second_freq_ratio=0.0), "second_freq_ratio"),
    (damped_noise_oscillator, dict(damping=0.0), "damping"),
    (damped_noise_oscillator, dict(coupling=[[0.0, -5.0], [-5.0, 0.0]]), "unstable"),
]


@pytest.mark.parametrize("func,kw,word", BAD,
                         ids=[f"{f.__name__}-{w}-{i}" for i, (f, _, w) in enumerate(BAD)])
def test_bad_input_raises_one_clear_error(func, kw, word):
    args = dict(n_units=2, duration=5.0, fs=50.0, freqs=[1.0, 1.1])
    args.update(kw)
    n, d, f = args.pop("n_units"), args.pop("duration"), args.pop("fs")
    with pytest.raises(SyncstatsInputError) as err:
        func(n, d, f, **args)
    msg = str(err.value)
    assert word in msg and func.__name__ in msg
    assert isinstance(err.value, ValueError)


@pytest.mark.parametrize("kw,word", [
    (dict(kind="nope", coupled=True), "kind"),
    (dict(kind="phase", coupled="yes"), "coupled"),
    (dict(kind="phase", coupled=False, coupling=0.3), "coupled=False"),
    (dict(kind="beats", coupled=True, direction="mutual"), "b_to_a"),
    (dict(kind="phase", coupled=True, direction="sideways"), "direction"),
    (dict(kind="phase", coupled=True, detuning=0.9), "detuning"),
    (dict(kind="phase", coupled=True, options={"mu": 3}), "mu"),
    (dict(kind="van_der_pol", coupled=True, options={"c": 3}), "c"),
    (dict(kind="phase", coupled=True, ratio=(2, 0)), "ratio"),
])
def test_scenario_bad_input(kw, word):
    with pytest.raises(SyncstatsInputError) as err:
        scenario(duration=10.0, rng=1, **kw)
    assert word in str(err.value)


def test_scenario_unreachable_ratio_is_reported():
    # Diffusively coupled chaotic Roessler units do not lock 2:1 on the ladder.
    with pytest.raises(SyncstatsInputError, match="no coupling strength"):
        scenario("rossler", coupled=True, ratio=(2, 1), duration=10.0, rng=1)


def test_other_bad_inputs():
    with pytest.raises(SyncstatsInputError):
        scenario_batch("phase", n_replicas=None, coupled=True)
    with pytest.raises(SyncstatsInputError):
        natural_period("lorenz")
    with pytest.raises(SyncstatsInputError):
        natural_period("van_der_pol", nu=3)
    with pytest.raises(SyncstatsInputError):
        adler_prediction((1.0, 1.0), [[0, 1]])
    with pytest.raises(SyncstatsInputError):
        phase_slips([0.0, 1.0], [0.0])
    with pytest.raises(SyncstatsInputError):
        beat_train(10.0, 50.0, heart_freq=([0, 5], [1.0]))
    with pytest.raises(SyncstatsInputError):
        beat_train(10.0, 50.0, measurement_noise=[0.1, 0.2, 0.3])
    b = scenario_batch("phase", n_replicas=2, coupled=False, duration=5.0, rng=1)
    with pytest.raises(SyncstatsInputError):
        b.replica(2)


# =========================================================================== numerics
@pytest.mark.parametrize("func,extra,tol", [
    (van_der_pol, {}, 0.003), (fitzhugh_nagumo, {}, 0.003), (rossler, {}, 0.01),
])
def test_waveform_models_run_at_the_requested_frequency(func, extra, tol):
    f = np.array([0.8, 1.3])
    sim = func(2, 60.0, 100.0, freqs=f, integrator="fixed", rng=4, **extra)
    np.testing.assert_allclose(_freq(sim.phases, 100.0), f, rtol=tol)
    # phases of the noise-free model are monotone (a valid protophase)
    assert np.all(np.diff(sim.phases, axis=-1) > 0)


@pytest.mark.parametrize("func,kw,atol", [
    (phase_oscillators, dict(coupling=[[0, 0.5], [0.2, 0]]), 2e-3),
    (quasi_periodic, dict(coupling=[[0, 0.5], [0.2, 0]]), 2e-3),
    # Heun advances a rotation z' = i w z with relative frequency error ~(w dt)^2 / 6
    # (here ~3e-4), which over 20 s shifts the phase by a few hundredths of a radian
    (stuart_landau, dict(coupling=[[0, 0.5], [0.2, 0]]), 0.06),
])
def test_fixed_step_agrees_with_solve_ivp(func, kw, atol):
    a = func(2, 20.0, 50.0, freqs=[1.0, 1.1], integrator="fixed", rng=9, **kw)
    b = func(2, 20.0, 50.0, freqs=[1.0, 1.1], integrator="solve_ivp", rng=9, **kw)
    assert a.params["integrator"] == "fixed" and b.params["integrator"] == "solve_ivp"
    np.testing.assert_allclose(a.signals, b.signals, atol=atol)
    np.testing.assert_allclose(_freq(a.phases, 50.0), _freq(b.phases, 50.0), rtol=1e-3)


def test_fixed_step_van_der_pol_agrees_with_solve_ivp_in_frequency():
    a = van_der_pol(1, 30.0, 100.0, freqs=1.0, integrator="fixed", rng=1)
    b = van_der_pol(1, 30.0, 100.0, freqs=1.0, integrator="solve_ivp", rng=1)
    assert _freq(a.phases, 100.0)[0] == pytest.approx(_freq(b.phases, 100.0)[0], rel=2e-3)
    # the short overshoot after each jump (max 2.014 at mu = 10) is slightly clipped
    assert a.signals.max() == pytest.approx(b.signals.max(), rel=0.02)


def test_phase_model_nm_locking_follows_the_adler_criterion():
    p, q, K = 3, 1, 0.2
    S = q * K + p * K
    for nu, locked in ((0.6, True), (1.6, False)):
        fb = 0.5
        fa = (p * TWO_PI * fb + nu * S) / (q * TWO_PI)
        pred = adler_prediction((fa, fb), [[0, K], [K, 0]], ratio=(p, q))
        assert pred["locked"] is locked and pred["nu"] == pytest.approx(nu)
        sim = phase_oscillators(2, 120.0, 25.0, freqs=[fa, fb], coupling=[[0, K], [K, 0]],
                                ratio=(p, q), integrator="fixed", rng=2)
        psi = q * sim.phases[0] - p * sim.phases[1]
        span = np.ptp(psi[sim.time > 60.0])
        assert (span < 0.01) if locked else (span > 4 * TWO_PI)


def test_adler_prediction_values():
    out = adler_prediction((1.0 + 1.25 / TWO_PI, 1.0), [[0, 0.5], [0.5, 0]])
    assert not out["locked"] and out["nu"] == pytest.approx(1.25)
    assert out["beat_frequency_hz"] * TWO_PI == pytest.approx(0.75)
    assert out["mean_plv"] == pytest.approx(0.5)
    lk = adler_prediction((1.0 + 0.5 / TWO_PI, 1.0), [[0, 0.5], [0.5, 0]])
    assert lk["locked"] and lk["locked_psi"] == pytest.approx(math.asin(0.5))
    one_way = adler_prediction((4.0 * 0.25 + 0.1 / TWO_PI, 0.25), [[0, 0.4], [0, 0]],
                               ratio=(4, 1))
    assert one_way["coupling_sum_rad_s"] == pytest.approx(0.4)
    assert one_way["nu"] == pytest.approx(0.25)
    none = adler_prediction((1.1, 1.0), [[0, 0], [0, 0]])
    assert not none["locked"] and math.isinf(none["nu"])


def test_phase_slips_counts_turns_of_psi():
    t = np.linspace(0.0, 10.0, 2001)
    assert phase_slips(TWO_PI * 1.3 * t, TWO_PI * t) == 3
    assert phase_slips(TWO_PI * t, TWO_PI * 1.3 * t) == 3
    wobble = 0.8 * np.sin(TWO_PI * 0.2 * t)
    assert phase_slips(TWO_PI * t + wobble, TWO_PI * t) == 0
    # 3:1 ratio, locked
    assert phase_slips(3 * TWO_PI * t + 0.3, TWO_PI * t, ratio=(3, 1)) == 0
    # a non-uniform (protophase-like) phase does not create spurious slips per cycle
    proto = TWO_PI * t + 1.2 * np.sin(TWO_PI * t)
    assert phase_slips(proto, TWO_PI * t + 0.2) == 0


def test_stuart_landau_amplitude_and_nm_locking():
    sim = stuart_landau(2, 30.0, 50.0, freqs=[1.0, 1.7], rng=3)
    assert np.abs(sim.signals).max() == pytest.approx(1.0, abs=1e-3)
    lk = stuart_landau(2, 120.0, 25.0, freqs=[2.0 * 1.02, 1.0],
                       coupling=[[0, 0.6], [0.6, 0]], ratio=(2, 1), integrator="fixed", rng=3)
    psi = lk.phases[0] - 2 * lk.phases[1]
    assert np.ptp(psi[lk.time > 60]) < 0.5


def test_fitzhugh_nagumo_spikes_are_events_at_the_upstroke():
    sim = fitzhugh_nagumo(2, 30.0, 200.0, freqs=[1.0, 1.5], integrator="fixed", rng=2)
    ev = sim.events
    assert len(ev) == 2
    for u, f in enumerate((1.0, 1.5)):
        assert abs(len(ev[u]) - 30.0 * f) <= 1
        np.testing.assert_allclose(np.diff(ev[u]), 1.0 / f, rtol=3e-3)
        v_at = np.interp(ev[u], sim.time, sim.signals[u])
        assert np.all(np.abs(v_at) < 0.15)          # upstroke of v through 0
    # spike-like: the waveform spends most of the cycle recovering below 0
    assert np.mean(sim.signals > 0) < 0.45 and sim.signals.max() > 1.5


def test_beat_train_beats_ecg_and_locking():
    fb, ratio = 0.25, (4, 1)
    locked = beat_train(240.0, 100.0, heart_freq=1.02, breath_freq=fb, ratio=ratio,
                        coupling=0.6, rsa=0.0, heart_noise=0.05, breath_noise=0.05,
                        rng=4)
    free = beat_train(240.0, 100.0, heart_freq=1.02, breath_freq=fb, ratio=ratio,
                      coupling=0.0, rsa=0.3, heart_noise=0.05, breath_noise=0.05, rng=4)
    for s in (locked, free):
        hb, br = s.events
        assert abs(len(hb) - 240 * 1.02) < 12 and abs(len(br) - 240 * fb) < 3
        assert np.all(np.diff(hb) > 0)
        # the ECG-like R peak sits on the beat time
        idx = np.round(hb[5:-5] * 100).astype(int)
        win = np.array([s.signals[0, i - 5:i + 6].argmax() - 5 for i in idx])
        assert np.all(np.abs(win) <= 1)
    # beats fall at preferred breathing phases only when coupled (RSA alone does not)
    def conc(s):
        ph_r_at_beats = np.interp(s.events[0], s.time, s.phases[1])
        return abs(np.mean(np.exp(1j * 4 * ph_r_at_beats)))
    assert conc(locked) > 0.8 and conc(free) < 0.3
    assert phase_slips(locked.phases[0], locked.phases[1], ratio=ratio) == 0


def test_beat_train_schedule_changes_the_rate():
    s = beat_train(120.0, 50.0, heart_freq=([0, 59, 61, 120], [1.0, 1.0, 1.5, 1.5]),
                   heart_noise=0.0, breath_noise=0.0, amplitude_noise=0.0,
                   integrator="fixed", rng=1)
    hb = s.events[0]
    assert np.mean(np.diff(hb[hb < 55])) == pytest.approx(1.0, rel=1e-3)
    assert np.mean(np.diff(hb[hb > 65])) == pytest.approx(1 / 1.5, rel=1e-3)
    assert s.params["heart_freq"][1][-1] == 1.5


def test_quasi_periodic_has_two_incommensurate_peaks():
    sim = quasi_periodic(1, 400.0, 20.0, freqs=1.0, rng=5)
    f, pxx = welch(sim.signals[0], fs=20.0, nperseg=4096)
    top = f[np.argsort(pxx)[-2:]]
    np.testing.assert_allclose(np.sort(top), [(math.sqrt(5) - 1) / 2, 1.0], atol=0.01)


def test_damped_oscillator_default_noise_gives_unit_sd_and_coupling_correlates():
    s = damped_noise_oscillator(2, 600.0, 20.0, freqs=[1.0, 1.03], n_replicas=4, rng=6)
    np.testing.assert_allclose(s.signals.std(axis=-1).mean(axis=0), 1.0, rtol=0.06)
    c = damped_noise_oscillator(2, 600.0, 20.0, freqs=[1.0, 1.03], coupling=0.4, rng=6)
    u = damped_noise_oscillator(2, 600.0, 20.0, freqs=[1.0, 1.03], rng=6)
    assert abs(np.corrcoef(c.signals)[0, 1]) > 0.1 > abs(np.corrcoef(u.signals)[0, 1])


def test_large_population_paths_agree(monkeypatch):
    # mean-field (scalar K) and explicit K/N matrix give the same trajectories
    N = 12
    f = np.linspace(0.9, 1.1, N)
    a = phase_oscillators(N, 10.0, 20.0, freqs=f, coupling=1.5, noise=0.1, rng=3)
    M = np.full((N, N), 1.5 / N)
    np.fill_diagonal(M, 0.0)
    b = phase_oscillators(N, 10.0, 20.0, freqs=f, coupling=M, noise=0.1, rng=3)
    np.testing.assert_allclose(a.phases, b.phases, atol=1e-9)
    # unit-by-unit code and the (replica, unit) array code give the same path
    c = phase_oscillators(3, 10.0, 20.0, freqs=f[:3], coupling=0.9, noise=0.1, rng=3)
    monkeypatch.setattr(_phase_models, "_MATRIX_MODE_UNITS", 1)
    d = phase_oscillators(3, 10.0, 20.0, freqs=f[:3], coupling=0.9, noise=0.1, rng=3)
    np.testing.assert_allclose(c.phases, d.phases, atol=1e-9)
    # non-uniform ratios in the array code
    e = phase_oscillators(10, 5.0, 20.0, freqs=np.r_[2.0, np.ones(9)], coupling=0.5,
                          ratio=[2] + [1] * 9, rng=3)
    assert e.signals.shape == (10, 100)


def test_recorder_events_ignore_backward_steps():
    class Spec:
        event_level, event_units = 0.0, None
        fullres_angle, angle_unwrapped = True, True

        @staticmethod
        def observe_signal(st):
            return st[:, 0:1, :, 0].transpose(0, 2, 1)

        observe_angle = observe_signal
    ph = np.array([-0.5, -0.1, 0.1, -0.05, 0.2, TWO_PI - 0.1, TWO_PI + 0.1, TWO_PI - 0.2,
                   TWO_PI + 0.3])
    rec = Recorder(Spec, n_rep=1, n_units=1, n_out=9, every=1, dt=1.0)
    rec(ph.reshape(-1, 1, 1, 1)[:4], 0)
    rec(ph.reshape(-1, 1, 1, 1)[4:], 4)
    ev = rec.events()[0][0]
    np.testing.assert_allclose(ev, [1.5, 5.5])


def test_heun_is_second_order_without_noise():
    # dx/dt = -x: global error of Heun scales like dt^2
    def emit(x, u, tmp):
        return [], [f"-{x[0]}"]
    step = compile_heun(emit, 1, 0, False, {})
    errs = []
    for n in (50, 100):
        last = []
        heun_fixed_step(step, [1.0], dt=1.0 / n, n_steps=n, sigma=np.zeros((1, 1, 1)),
                        noise_gens=None, sink=lambda st, s0: last.append(st[-1, 0, 0, 0]))
        errs.append(abs(last[-1] - math.exp(-1.0)))
    assert errs[0] / errs[1] == pytest.approx(4.0, rel=0.05)


# =========================================================================== scenarios
@pytest.mark.parametrize("kind", SCENARIO_KINDS)
@pytest.mark.parametrize("coupled", [False, True])
def test_scenario_every_kind(kind, coupled):
    sc = scenario(kind, coupled=coupled, duration=40.0, fs=50.0, rng=11)
    assert isinstance(sc, Scenario)
    names = ("heart", "breath") if kind == "beats" else ("A", "B")
    assert sc.names == names
    for n in names:
        x = sc.signals[n]
        assert isinstance(x, np.ndarray) and x.ndim == 1 and x.shape == (2000,)
        assert x.dtype == float and np.all(np.isfinite(x))
        assert sc.phases[n].shape == (2000,)
    assert sc.fs == 50.0
    assert sc.coupling.shape == (2, 2)
    assert (np.any(sc.coupling != 0)) == coupled
    t = sc.truth
    for key in ("locked", "ratio", "coupled", "dependent", "method", "detail",
                "coupling_units", "tested_ratio"):
        assert key in t
    if kind == "damped_noise":
        assert t["locked"] is False and t["method"] == "linear_not_self_sustained"
        assert t["dependent"] is coupled
    elif coupled:
        assert t["locked"] is True and t["ratio"] == t["tested_ratio"]
    else:
        assert t["locked"] is False and t["ratio"] is None and t["method"] == "uncoupled"
    if kind in ("spiking", "beats"):
        assert set(sc.events) == set(names) and all(len(e) > 5 for e in sc.events.values())
    else:
        assert sc.events is None
    assert isinstance(sc.description, str) and ("LOCKED" in sc.description) == t["locked"]
    json.dumps(dict(t))            # the truth is plain data (for validation tables)
    json.dumps(dict(sc.params))


@pytest.mark.parametrize("kind", ["phase", "stuart_landau", "van_der_pol", "spiking",
                                  "beats", "quasi_periodic", "rossler"])
def test_scenario_truth_matches_the_realisation(kind):
    lk = scenario(kind, coupled=True, duration=150.0, fs=20.0, rng=21)
    fr = scenario(kind, coupled=False, duration=150.0, fs=20.0, rng=21)
    p, q = lk.truth["tested_ratio"]
    a, b = lk.names

    keep = lk.time > 20.0  # the first seconds are the approach to the locked state

    def plv(sc):
        return abs(np.mean(np.exp(1j * (q * sc.phases[a] - p * sc.phases[b])[keep])))
    assert phase_slips(lk.phases[a][keep], lk.phases[b][keep], ratio=(p, q)) == 0
    assert plv(lk) > 0.75
    assert plv(fr) < 0.45
    assert phase_slips(fr.phases[a][keep], fr.phases[b][keep], ratio=(p, q)) >= 2


@pytest.mark.parametrize("kind,ratio", [("phase", (4, 1)), ("phase", (2, 3)),
                                        ("quasi_periodic", (3, 1)),
                                        ("stuart_landau", (2, 1)), ("spiking", (2, 1)),
                                        ("van_der_pol", (3, 1)), ("beats", (3, 1))])
def test_scenario_n_to_m(kind, ratio):
    sc = scenario(kind, coupled=True, ratio=ratio, duration=60.0, fs=50.0, rng=2)
    assert sc.truth["locked"] and sc.truth["ratio"] == ratio
    fa, fb = sc.params["freqs_hz"]
    assert fa / fb == pytest.approx(ratio[0] / ratio[1] * 1.03)
    assert max(fa, fb) == pytest.approx(1.03 if ratio[0] >= ratio[1] else 1.0)


def test_scenario_given_coupling_and_direction():
    sc = scenario("phase", coupled=True, coupling=0.01, direction="a_to_b", duration=20.0,
                  rng=3)
    assert sc.coupling[0, 1] == 0.0 and sc.coupling[1, 0] == 0.01
    assert sc.truth["locked"] is False and sc.truth["method"] == "adler"
    assert sc.truth["detail"]["adler"]["nu"] > 1
    vdp = scenario("van_der_pol", coupled=True, coupling=0.01, duration=20.0, rng=3)
    assert vdp.truth["locked"] is False and vdp.truth["method"] == "noise_free_run"
    beats = scenario("beats", coupled=True, duration=20.0, rng=3)
    assert beats.coupling[0, 1] > 0 and beats.coupling[1, 0] == 0


def test_scenario_batch_shapes_and_replica_zero():
    b = scenario_batch("spiking", n_replicas=3, coupled=True, duration=30.0, fs=50.0,
                       rng=5)
    assert isinstance(b, ScenarioBatch) and b.n_replicas == 3
    assert b.signals.shape == b.phases.shape == (3, 2, 1500)
    assert len(b.events) == 3 and set(b.events[0]) == {"A", "B"}
    one = scenario("spiking", coupled=True, duration=30.0, fs=50.0, rng=5)
    r0 = b.replica(0)
    for n in one.names:
        np.testing.assert_allclose(r0.signals[n], one.signals[n], atol=1e-8)
        np.testing.assert_allclose(r0.events[n], one.events[n], atol=1e-8)
    assert r0.truth == one.truth and r0.description == one.description
    assert not np.allclose(b.signals[0], b.signals[1])


def test_scenario_ladder_presets_are_what_the_ladder_finds():
    from syncstats.simulate._waveform_models import _model_params
    for key in [("spiking", 1, 1, "mutual", 0.03), ("spiking", 1, 2, "mutual", 0.03)]:
        kind, p, q, direction, det = key
        mp = tuple(sorted(_model_params("fitzhugh_nagumo", "t").items()))
        fb = q / p if p >= q else 1.0
        K, _ = scen_mod._calibrate(kind, mp, fb * p / q * (1 + det), fb, p, q, direction, ())
        assert round(2 * math.log2(K / scen_mod._KINDS[kind]["k0"])) == scen_mod._PRESETS[key]


def test_scenario_signals_feed_a_dict_of_1d_arrays_api():
    # the contract of syncstats.analyze: mapping name -> 1-D numpy array
    sc = scenario("beats", coupled=False, duration=20.0, rng=1)
    assert all(isinstance(k, str) and isinstance(v, np.ndarray) and v.ndim == 1
               for k, v in sc.signals.items())
    assert len({v.shape for v in sc.signals.values()}) == 1


# =========================================================================== natural periods
def test_natural_period_near_harmonic_limit():
    assert natural_period("van_der_pol", mu=0.01) == pytest.approx(TWO_PI, rel=1e-4)
    assert natural_period("fitzhugh_nagumo") > natural_period("van_der_pol", mu=1.0)


# =========================================================================== demo data
DATA = Path(sim_pkg.__file__).resolve().parents[1] / "data"


def test_demo_files_exist_and_are_small():
    files = [DATA / n for n in ("demo_recording.csv", "demo_beats.csv", "demo_truth.json")]
    assert all(f.is_file() for f in files)
    assert sum(f.stat().st_size for f in files) < 2_000_000


def test_load_demo_content_and_truth():
    d = load_demo()
    assert d.fs == 100.0 and d.time.shape == (60000,) and d.phases is None
    assert set(d.signals) == {"ecg", "breath", "slow_wave"}
    assert all(v.shape == (60000,) for v in d.signals.values())
    np.testing.assert_allclose(np.diff(d.time), 0.01, atol=1e-9)
    hb = d.events["heart"]
    assert np.all(np.diff(hb) > 0) and 500 < hb.size < 800
    ep = d.truth["epochs"]
    assert [e["locked"] for e in ep] == [True, False, True, False]
    assert [e["ratio"] for e in ep] == ["4:1", None, "3:1", None]
    for e in ep:
        assert e["end_s"] > e["start_s"]
        if e["locked"]:
            assert e["noise_free_slips"] == 0 and e["realised_slips"] == 0
            assert e["true_plv"] > 0.8 and e["adler_nu"] < 1
        else:
            assert e["noise_free_slips"] > 0
    assert d.truth["never_coupled"] and "story" in d.truth


def _assert_same_truth(a, b, where="truth"):
    """Equal structure and text; floats equal to 1e-9 relative (the last bit of a mean
    differs between BLAS builds)."""
    if isinstance(a, dict):
        assert isinstance(b, dict) and set(a) == set(b), where
        for k in a:
            _assert_same_truth(a[k], b[k], f"{where}.{k}")
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), where
        for i, (x, y) in enumerate(zip(a, b)):
            _assert_same_truth(x, y, f"{where}[{i}]")
    elif isinstance(a, float) and not isinstance(b, bool):
        assert b == pytest.approx(a, rel=1e-9, abs=1e-12), where
    else:
        assert a == b, where


def test_demo_files_match_a_fresh_simulation():
    fresh = make_demo_dataset()
    stored = load_demo()
    for name in stored.signals:
        np.testing.assert_allclose(stored.signals[name], fresh.signals[name], atol=6e-4)
    np.testing.assert_allclose(stored.events["heart"], fresh.events["heart"], atol=6e-5)
    _assert_same_truth(json.loads(json.dumps(dict(fresh.truth))), dict(stored.truth))
    # beats within the locked 4:1 epoch fall at preferred breathing phases
    ep = stored.truth["epochs"][0]
    hb = fresh.events["heart"]
    sel = (hb > ep["start_s"]) & (hb < ep["end_s"])
    phr = np.interp(hb[sel], fresh.time, fresh.phases["breath"])
    assert abs(np.mean(np.exp(4j * phr))) > 0.8


def test_demo_other_seed_differs():
    a = make_demo_dataset(rng=1)
    assert not np.allclose(a.signals["breath"], load_demo().signals["breath"], atol=0.01)


# =========================================================================== package hygiene
def test_simulate_imports_only_numpy_scipy_and_base_modules():
    allowed_root = {"numpy", "scipy", "math", "json", "dataclasses", "functools", "types",
                    "typing", "importlib", "pathlib", "sys", "__future__"}
    for path in Path(sim_pkg.__file__).parent.glob("*.py"):
        tree = ast.parse(path.read_text())
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                for a in node.names:
                    assert a.name.split(".")[0] in allowed_root, (path.name, a.name)
            elif isinstance(node, ast.ImportFrom):
                if node.level == 0:
                    assert node.module.split(".")[0] in allowed_root, (path.name, node.module)
                elif node.level == 2:  # from .. import -> only the base helpers
                    assert node.module in ("_errors", "_rng"), (path.name, node.module)


def test_public_api_is_explicit():
    for name in sim_pkg.__all__:
        assert hasattr(sim_pkg, name)
    assert set(SCENARIO_KINDS) == {"phase", "stuart_landau", "van_der_pol", "spiking",
                                   "beats", "quasi_periodic", "rossler", "damped_noise"}


@pytest.mark.parametrize("module", ["_phase_models", "_waveform_models", "_truth",
                                    "_scenario", "_demo"])
def test_docstring_examples(module):
    import importlib
    mod = importlib.import_module(f"syncstats.simulate.{module}")
    res = doctest.testmod(mod, optionflags=doctest.ELLIPSIS)
    assert res.failed == 0 and res.attempted > 0
