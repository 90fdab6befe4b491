"""Coupled self-sustained rhythms with known truth: validation, demos and power.

``syncstats.simulate`` depends on numpy and scipy only (plus the package's own error and
random-stream helpers). It never imports a higher syncstats layer.

Simulators (each returns a :class:`Simulation`; time on the last axis)
----------------------------------------------------------------------
* :func:`phase_oscillators` -- noisy phase oscillators, Kuramoto/Adler sine coupling,
  1:1 or n:m (term K sin(p phi_j - q phi_i)); mean-field path for large N.
* :func:`stuart_landau` -- weakly nonlinear limit cycles, resonant n:m coupling.
* :func:`van_der_pol` -- relaxation oscillators (mu = 10 by default).
* :func:`fitzhugh_nagumo` -- excitable units driven into periodic, spike-like firing;
  spike times as events.
* :func:`beat_train` -- heartbeat-like event times of a pacemaker whose phase is
  coupled to a breathing-like rhythm, plus the continuous breathing signal and an
  ECG-like trace; parameters may follow a schedule in time.
* :func:`quasi_periodic` -- units with two incommensurate internal frequencies.
* :func:`rossler` -- phase-coherent chaos (a = b = 0.2, c = 5.7).
* :func:`damped_noise_oscillator` -- noise-driven damped linear oscillators: a null
  that is rhythmic but not self-sustained.
* :func:`stimulus_locked_trials` -- repeated trials of two rhythms that lock only in a
  stretch after a stimulus (event-related locking over trials).

Ground truth, scenarios and demo data
-------------------------------------
* :func:`scenario` / :func:`scenario_batch` -- a coupled or independent pair of any kind
  in ``SCENARIO_KINDS`` with its truth label (locked at p:q or not), ready for
  ``syncstats.analyze(sc.signals, fs=sc.fs)``; the batch form returns
  (n_replicas, 2, n_samples) arrays.
* :func:`adler_prediction`, :func:`phase_slips`, :func:`natural_period` -- closed-form
  locking prediction, slip counting on true phases, model periods.
* :func:`make_demo_dataset`, :func:`load_demo` -- the bundled 10-minute demo recording.

Conventions
-----------
* Ratio p:q: unit A (index 0) completes p cycles while B (index 1) completes q;
  psi = q phi_A - p phi_B. For N units, ``ratio`` lists one cycle number
  per unit.
* ``coupling[i, j]`` is the strength with which unit j acts on unit i (rows receive,
  columns drive); a scalar means global coupling K/N.
* ``rng`` (int seed or ``numpy.random.Generator``) seeds everything. Replica i uses the
  seed sequence ``spawn_key + (0, i)`` and three children of it (initial state,
  intrinsic noise, measurement noise), so replica i is the same for any number of
  replicas and results do not depend on the internal chunk size.
* Noisy models use a fixed-step stochastic Heun scheme at an internal step ``dt``
  (recorded in ``Simulation.params["dt_s"]``; default about 1/100 of the fastest
  period, at least two steps per output sample) and keep every k-th step. Noise-free
  runs use ``scipy.integrate.solve_ivp`` unless ``integrator="fixed"``. The linear null
  model is discretised exactly.
"""
from ._beats import beat_train
from ._common import Simulation
from ._demo import DemoRecording, load_demo, make_demo_dataset, write_demo
from ._linear import damped_noise_oscillator
from ._phase_models import phase_oscillators, quasi_periodic, stuart_landau
from ._scenario import SCENARIO_KINDS, Scenario, ScenarioBatch, scenario, scenario_batch
from ._trials import stimulus_locked_trials
from ._truth import adler_prediction, phase_slips
from ._waveform_models import fitzhugh_nagumo, natural_period, rossler, van_der_pol

__all__ = [
    "Simulation",
    "phase_oscillators",
    "stuart_landau",
    "van_der_pol",
    "fitzhugh_nagumo",
    "beat_train",
    "quasi_periodic",
    "rossler",
    "damped_noise_oscillator",
    "stimulus_locked_trials",
    "natural_period",
    "adler_prediction",
    "phase_slips",
    "SCENARIO_KINDS",
    "Scenario",
    "ScenarioBatch",
    "scenario",
    "scenario_batch",
    "DemoRecording",
    "make_demo_dataset",
    "load_demo",
    "write_demo",
]
