"""Study planner: how long must we record to detect a chosen coupling with 80 % power?

An invented plan: two pacemaker-like rhythms near 1 Hz, 10 % apart, coupled with
strength 0.6 rad/s (simulated noisy phase oscillators; the locking range is 2 x 0.63 rad/s). First a quick closed-form
guess from the cycle-level Rayleigh test, then the simulation that includes the
whole pipeline (band-pass, Hilbert phase, surrogate test): power against recording
length, with a binomial interval for each point, and the shortest length reaching
80 % power. Writes the power curve figure to WORK_DIR (default: a temporary folder).

Research software, not a medical device: a power calculation for a model is a
planning aid; study design decisions rest with qualified people and local regulations.
Usage:  python examples/planner.py [WORK_DIR]
"""
import os
import sys
import tempfile
from pathlib import Path

from syncstats.power import power_curve, rayleigh_cycles_needed, required_length

N_SURROGATES = int(os.environ.get("SYNCSTATS_EXAMPLE_SURROGATES", "39"))
# replicas per point: small for a quick look; use 200 or more for a real plan
N_REPLICAS = 8 if N_SURROGATES < 39 else 40
COUPLING = 0.6  # rad/s
PLAN = dict(kind="phase", fs=10.0, n_surrogates=N_SURROGATES, n_replicas=N_REPLICAS, surrogate="time_shift",
            scenario_options=dict(detuning=0.1), rng=11)


def main(work=None):
    work = Path(work or tempfile.mkdtemp(prefix="syncstats-planner-"))
    work.mkdir(parents=True, exist_ok=True)
    guess = rayleigh_cycles_needed(plv=0.3, power=0.8)
    print(f"Closed-form first guess: a locking of PLV 0.3 needs about {guess} independent cycles "
          f"for 80 % power in a cycle-level Rayleigh test.")
    curve = power_curve(lengths=[20, 40, 80], couplings=[0.0, COUPLING], **PLAN)
    print(curve.table[["length", "n_cycles", "coupling", "power", "ci_low", "ci_high"]].to_string(index=False))
    plan = required_length(coupling=COUPLING, curve=curve, target_power=0.8)
    if plan["length"] is None:
        print("None of the lengths reaches 80 % power: extend the grid.")
    else:
        print(f"Shortest length with power >= 0.8: {plan['length']:g} s "
              f"(with its whole 95 % interval above 0.8: {plan['length_conservative']} s).")
    fig = curve.figure(target_power=0.8)
    fig.savefig(work / "power_curve.png", dpi=100)
    print(f"Figure: {work / 'power_curve.png'}")
    return curve, plan


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else None)
