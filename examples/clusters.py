"""Experimenter: which rhythms of a group beat together?

An invented recording: six slow rhythms (about 1 Hz and 1.3 Hz) from a tissue preparation,
two minutes at 20 Hz. In the simulation rhythms 1-3 are coupled to one another, 4-6 to one
another, and the two groups not at all; within each group the recording gets noisier from
the first rhythm to the third. The cluster analysis splits the group into its synchronization
clusters, gives each rhythm's participation in its cluster, tests each cluster's strength
against time-shift surrogates and shows the group's order parameter over time with its
null band (clusters.csv, cluster_components.csv, order_parameter.csv and the report).

Usage:  python examples/clusters.py [OUT_DIR]
"""
import os
import sys
import tempfile
from pathlib import Path

import numpy as np

import syncstats
from syncstats.simulate import phase_oscillators

N_SURROGATES = int(os.environ.get("SYNCSTATS_EXAMPLE_SURROGATES", "499"))


def main(out=None):
    out = Path(out or tempfile.mkdtemp(prefix="syncstats-clusters-")) / "report"
    k = np.zeros((6, 6))
    k[:3, :3] = k[3:, 3:] = 3.0  # rad/s, inside each group only
    np.fill_diagonal(k, 0.0)
    sim = phase_oscillators(6, 120.0, 20.0, freqs=[1.0, 1.03, 0.97, 1.31, 1.27, 1.35], coupling=k, noise=0.6,
                            measurement_noise=[0.2, 0.8, 1.5, 0.2, 0.8, 1.5], rng=21)
    rhythms = {f"unit_{i + 1}": sim.signals[i] for i in range(6)}
    res = syncstats.analyze(rhythms, fs=20.0, surrogate="time_shift", n_surrogates=N_SURROGATES, rng=8,
                            clusters=True, n_bootstrap=199)
    cl = res.clusters
    print("clusters:", cl.clusters)
    mine = cl.participation[cl.participation["assigned"]]
    print(mine[["signal", "component", "participation"]].to_string(index=False))
    res.save(out, overwrite=True)
    print(f"wrote {out}")
    return res


if __name__ == "__main__":
    main(*sys.argv[1:])
