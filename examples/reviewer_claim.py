"""Reviewer: a manuscript states "PLV = 0.31, p < 0.001 (Rayleigh test), 5 min of
recording, heart 1.1 Hz and breathing 0.25 Hz, 4:1 synchronization". What can these
numbers support?

Step 1 checks the claim from its numbers alone (no data needed): chance level for the
number of breathing cycles, a cycle-level Rayleigh test with and without a correction
for the ratios the authors may have scanned, the smallest PLV that would be
significant, and whether the numbers agree with each other.
Step 2 pretends the authors shared their data (an invented, simulated recording of
independent heart and breathing rhythms) and re-runs the test the way the claim ran it
(a Rayleigh test over every sample) next to the calibrated surrogate test.

The claim and the recording are invented for this example. Research software, not a
medical device: clinical conclusions rest with qualified people and local regulations.
Usage:  python examples/reviewer_claim.py
"""
import os

from syncstats.claims import check_claim, retest
from syncstats.simulate import scenario

N_SURROGATES = int(os.environ.get("SYNCSTATS_EXAMPLE_SURROGATES", "199"))


def main():
    claim = dict(index="plv", value="0.31", p_claimed=0.001, p_is_bound=True, test="rayleigh",
                 duration_s=300.0, freq_a=1.1, freq_b=0.25, fs=250.0, ratio="4:1")
    as_stated = check_claim(**claim)
    print(as_stated)
    print()
    # the paper scanned ratios 3:1 to 6:1 before reporting 4:1: the search counts
    scanned = check_claim(**claim, n_ratios=4)
    print(f"With the 4 scanned ratios counted: cycle-level p = {scanned.value('p_cycles_corrected'):.4f}, "
          f"smallest significant PLV = {scanned.value('critical_index_searched'):.3f}.")
    print()
    # step 2: shared data (invented: independent heart beats and breathing, 5 minutes)
    sc = scenario("beats", coupled=False, duration=300.0, fs=10.0, rng=2024)
    re = retest({"breath": sc.signals["breath"]}, sc.fs, events={"heart": sc.events["heart"]},
                pair=("heart", "breath"), ratio="4:1", claimed_test="rayleigh_samples",
                surrogate="time_shift", n_surrogates=N_SURROGATES, rng=7)
    print(re.table[["role", "test", "n", "value", "null_mean", "p_value", "significant"]].to_string(index=False))
    print(re)
    return as_stated, scanned, re


if __name__ == "__main__":
    main()
