"""Synchronization epochs: recovery of known epochs, calibration of the total-locked-time
test, power, and coverage of the locked-share interval (``syncstats.epochs``).

Scenarios (simulated with ``syncstats.simulate``, every replica seeded):

* **Known epochs** — a pacemaker ("heart", events) and a breathing-like rhythm
  (``beat_train``), 600 s at 10 Hz, coupled 4:1 (epsilon 0.5 rad/s, detuning 0.13 rad/s
  inside the Adler range) during 100–250 s and 400–520 s; in between the coupling is off
  and the heart runs faster (1.25 Hz), so psi turns about once every 6 s. The true epochs
  are the coupled stretches of the schedule.
* **Near-integer null** — the same pair uncoupled at 1.1 Hz and 0.27 Hz (ratio 4.07, psi
  drifts by one turn in about 50 s): long chance plateaus of psi near 4:1, the case in
  which epochs occur by chance (Toledo et al. 2002).
* **Phase-oscillator null** — independent noisy phase oscillators at 1:1
  (``scenario("phase", coupled=False)``).

Band: the binomial 99 % band of the rejection share at alpha (``study.band``; common
practice). S + 1 is a multiple of 1/alpha and a test rejects at p <= alpha, so the
discrete test has size alpha. A reduced size runs by default; ``SYNCSTATS_FULL=1`` runs
the full size.
"""
import warnings

import numpy as np
import pytest

from syncstats.epochs import locking_epochs
from syncstats.simulate import beat_train, scenario_batch

from ..conftest import FULL
from .study import ALPHA, band, fpr_upper

pytestmark = pytest.mark.slow

FS = 10.0
T_KNOWN = 600.0
ON = ((100.0, 250.0), (400.0, 520.0))  # the coupled stretches (true epochs), s
BREATH_HZ = 0.27
R_RECOVERY = 100 if FULL else 20
R_NULL = 300 if FULL else 60
R_NULL_IAAFT = 100 if FULL else 15
R_POWER = 50 if FULL else 10
S = 99 if FULL else 39


def _schedule(v_on, v_off, ramp=1.0):
    t, v = [0.0], [v_off]
    for a, b in ON:
        t += [a - ramp, a + ramp, b - ramp, b + ramp]
        v += [v_off, v_on, v_on, v_off]
    return np.array(t + [T_KNOWN]), np.array(v + [v_off])


def _known_epochs(seed):
    sim = beat_train(T_KNOWN, FS, heart_freq=_schedule(1.1, 1.25), breath_freq=BREATH_HZ, ratio=(4, 1),
                     coupling=_schedule(0.5, 0.0), rsa=0.3, ecg=False, rng=seed)
    return {"breath": sim.signals[1]}, {"heart": sim.events[0]}


def _near_integer_null(seed, duration=300.0):
    sim = beat_train(duration, FS, heart_freq=1.1, breath_freq=BREATH_HZ, ratio=(4, 1), coupling=0.0, rsa=0.0,
                     ecg=False, rng=seed)
    return {"breath": sim.signals[1]}, {"heart": sim.events[0]}


def _run(signals, events, *, surrogate="time_shift", n_surrogates=S, rng=0, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return locking_epochs(signals, fs=FS, events=events, pairs=[("heart", "breath")] if events else None,
                              ratios=[(4, 1)] if events else [(1, 1)], surrogate=surrogate,
                              n_surrogates=n_surrogates, n_bootstrap=kw.pop("n_bootstrap", 0), rng=rng, **kw)


def _recovered(epochs, tol_s):
    """Every true epoch has one detected epoch whose start and end lie within tol_s, and
    no detected epoch lies outside the true ones by more than tol_s."""
    got = list(zip(epochs.start_s, epochs.end_s))
    for a, b in ON:
        if not any(abs(s - a) <= tol_s and abs(e - b) <= tol_s for s, e in got):
            return False
    return all(any(s >= a - tol_s and e <= b + tol_s for a, b in ON) for s, e in got)


def test_known_epochs_are_recovered_within_half_a_window():
    # Tolerance: half a window of the locking index (5 cycles of the slower rhythm,
    # 18.5 s at 0.27 Hz) at each boundary — the resolution of a window-based rule.
    # Measured (R = 30, seeds 0-29): 28/30 recovered (seeds 9 and 27 miss: one epoch split
    # in two, one chance plateau merged into an epoch); median boundary errors 4.2 s (start)
    # and 5.3 s (end).
    tol_s = 5 / BREATH_HZ
    hits = [_recovered(_run(*_known_epochs(seed), n_surrogates=0).epochs, tol_s) for seed in range(R_RECOVERY)]
    assert np.mean(hits) >= 0.9, f"recovered in {np.mean(hits):.2f} of {R_RECOVERY} runs"


def _rejections(make, surrogate, replicas, seed0, **kw):
    p, any_epoch = [], []
    for i in range(replicas):
        res = _run(*make(seed0 + i), surrogate=surrogate, rng=seed0 + i, **kw)
        p.append(float(res.summary.p_value.iloc[0]))
        any_epoch.append(len(res.epochs) > 0)
    return np.mean(np.array(p) <= ALPHA), np.mean(any_epoch)


def test_chance_plateaus_near_an_integer_ratio_are_not_epochs_under_the_time_shift_null():
    # Uncoupled pair near 4:1: plateaus of psi pass the detection rule in most records
    # (any-epoch share far above alpha), but the total-locked-time test keeps its level.
    # Measured (R = 60, seeds 10000-10059): chance epochs in 0.92 of records, FPR 0.017.
    fpr, naive = _rejections(_near_integer_null, "time_shift", R_NULL, 10_000)
    lo, hi = band(R_NULL)
    assert naive > 0.3, f"chance epochs in only {naive:.2f} of the null records: the scenario lost its plateaus"
    assert fpr <= hi, f"FPR {fpr:.3f} above the binomial 99% upper bound {hi:.3f} at R = {R_NULL}"


def test_total_locked_time_keeps_its_level_on_independent_phase_oscillators():
    batch = scenario_batch("phase", n_replicas=R_NULL, coupled=False, duration=300.0, fs=FS, rng=20_000)
    p = []
    for i in range(R_NULL):
        sc = batch.replica(i)
        res = _run(sc.signals, None, surrogate="time_shift", rng=i)
        p.append(float(res.summary.p_value.iloc[0]))
    fpr = np.mean(np.array(p) <= ALPHA)
    assert fpr <= fpr_upper(R_NULL), f"FPR {fpr:.3f} above {fpr_upper(R_NULL):.3f} at R = {R_NULL}"


def test_an_iaaft_request_is_run_as_time_shift_and_keeps_the_level():
    # IAAFT itself (epochs_from_pipeline with surrogate="iaaft"), measured at R = 400 (seeds
    # 50000-50399): FPR 0.135 (band upper 0.078), null mean 76 s against 97 s observed:
    # IAAFT phases wander more than the self-sustained rhythm's, so chance plateaus are rarer
    # under it. The time shift on the same records: FPR 0.025, null mean 96 s. So
    # locking_epochs / analyze(epochs=...) run fourier, aaft and iaaft as time_shift.
    fpr, _ = _rejections(_near_integer_null, "iaaft", R_NULL_IAAFT, 30_000)
    assert fpr <= fpr_upper(R_NULL_IAAFT), f"FPR {fpr:.3f} above {fpr_upper(R_NULL_IAAFT):.3f}"
    res = _run(*_near_integer_null(30_000), surrogate="iaaft", rng=30_000)
    assert set(res.summary.surrogate) == {"time_shift"} and "instead of iaaft" in res.notes[0]


def test_known_epochs_are_detected_as_significant():
    # Measured (R = 10): p <= 0.05 in 10/10 with time_shift.
    sig = [bool(_run(*_known_epochs(40_000 + i), rng=i).summary.p_value.iloc[0] <= ALPHA) for i in range(R_POWER)]
    assert np.mean(sig) >= 0.8, f"power {np.mean(sig):.2f} at R = {R_POWER}"


R_COVER = 200 if FULL else 40


def _alternating(seed, duration=900.0):
    """Locked and free stretches of random lengths (uniform 60-160 s, alternating, random
    first state): the same pair as the known-epochs scenario, with the schedule drawn per
    record so that the locked share is a property of the process, not of one design."""
    g = np.random.default_rng(seed)
    t, hf, eps, now, locked = [0.0], [], [], 0.0, bool(g.integers(2))
    while now < duration:
        hf.append(1.1 if locked else 1.25)
        eps.append(0.5 if locked else 0.0)
        now = now + g.uniform(60, 160)
        now = duration if now > duration - 5.0 else now  # no stretch shorter than the ramps at the end
        t.append(now)
        locked = not locked
    tt, h, e = [0.0], [hf[0]], [eps[0]]
    for k in range(1, len(hf)):
        tt += [t[k] - 1.0, t[k] + 1.0]
        h += [hf[k - 1], hf[k]]
        e += [eps[k - 1], eps[k]]
    tt, h, e = np.array(tt + [duration]), np.array(h + [hf[-1]]), np.array(e + [eps[-1]])
    sim = beat_train(duration, FS, heart_freq=(tt, h), breath_freq=BREATH_HZ, ratio=(4, 1), coupling=(tt, e),
                     rsa=0.3, ecg=False, rng=seed)
    return {"breath": sim.signals[1]}, {"heart": sim.events[0]}


def test_locked_share_interval_covers_the_expected_share():
    # Estimand: the share of a record the rule finds locked, in expectation over records
    # of a process whose locked and free stretches have random lengths and positions
    # (slips and wandering psi inside epochs, chance plateaus outside). For record i the
    # truth is the mean share of the other R_COVER - 1 records (leave-one-out, so it does
    # not depend on record i). Measured: 0.943 at R = 300 (mean share 0.540, SD across
    # records 0.058, mean width 0.241; the truth above the interval in 4.3 % of records,
    # below in 1.3 %; 0.937 against 0.531, 0.940 against 0.547); 0.975 at R = 40. An earlier
    # 0.88 was the first 60 of these records alone: the five sets of 60 give 0.90-0.97.
    out = [_run(*_alternating(60_000 + i), n_surrogates=0, n_bootstrap=299, rng=i).summary.iloc[0]
           for i in range(R_COVER)]
    share = np.array([sm.locked_share for sm in out])
    truth = (share.sum() - share) / (share.size - 1)
    hits = [sm.share_ci_low <= t <= sm.share_ci_high for sm, t in zip(out, truth)]
    assert np.mean(hits) >= (0.85 if FULL else 0.8), f"coverage {np.mean(hits):.2f} of the 95% interval at R = {R_COVER}"
