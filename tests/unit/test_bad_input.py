"""Every bad input named in the foundation issue: one table-driven test.

Each case must raise SyncstatsInputError (a ValueError) whose single sentence names the
culprit; the inputs must come back unmodified.
"""
import numpy as np
import pytest

import syncstats
from syncstats import SyncstatsInputError

FS = 50.0
T = np.arange(0, 120, 1 / FS)
A = np.sin(2 * np.pi * 1.0 * T)
B = np.sin(2 * np.pi * 1.1 * T + 1)


def _nan():
    a = A.copy()
    a[100] = np.nan
    return {"a": a, "b": B}


def _inf():
    b = B.copy()
    b[7] = np.inf
    return {"a": A, "b": b}


CASES = [
    # (id, signals, kwargs, words the message must contain)
    ("nan", _nan(), {}, ["'a'", "NaN"]),
    ("inf", _inf(), {}, ["'b'", "infinite"]),
    ("unequal-lengths", {"a": A, "b": B[:-10]}, {}, ["equal lengths", "a:", "b:"]),
    ("fs-missing", {"a": A, "b": B}, {"fs": None}, ["fs", "missing"]),
    ("fs-zero", {"a": A, "b": B}, {"fs": 0}, ["fs", "positive"]),
    ("fs-negative", {"a": A, "b": B}, {"fs": -5}, ["fs", "positive"]),
    ("band-above-nyquist", {"a": A, "b": B}, {"bands": (0.5, 30.0)}, ["band", "fs/2"]),
    ("band-negative", {"a": A, "b": B}, {"bands": {"a": (-1, 2)}}, ["band of signal 'a'"]),
    ("band-reversed", {"a": A, "b": B}, {"bands": (2.0, 1.0)}, ["band", "low < high"]),
    ("too-few-cycles", {"a": A[:300], "b": B[:300]}, {}, ["cycles", "at least 10"]),
    ("constant", {"a": np.ones_like(A), "b": B}, {}, ["'a'", "constant"]),
    ("one-signal", {"a": A}, {}, ["at least two"]),
    ("no-signal", {}, {}, ["at least two"]),
    ("events-unsorted", {"a": A}, {"events": {"beats": np.array([1.0, 3.0, 2.0, 4.0])}}, ["'beats'", "not sorted"]),
    ("events-duplicate", {"a": A}, {"events": {"beats": np.array([1.0, 2.0, 2.0, 4.0])}}, ["'beats'", "duplicate"]),
    ("ratio-noninteger", {"a": A, "b": B}, {"ratios": [(1.5, 1)]}, ["ratio", "integers"]),
    ("ratio-zero", {"a": A, "b": B}, {"ratios": [(0, 1)]}, ["ratio", "positive integers"]),
    ("ratio-string", {"a": A, "b": B}, {"ratios": ["4-1"]}, ["ratio", "p:q"]),
    ("ratio-not-reduced", {"a": A, "b": B}, {"ratios": [(2, 2)]}, ["lowest terms", "1:1"]),
    ("unknown-measure", {"a": A, "b": B}, {"measures": ("coherence",)}, ["measures", "plv"]),
    ("unknown-surrogate", {"a": A, "b": B}, {"surrogate": "bootstrap"}, ["surrogate", "iaaft"]),
    ("unknown-correction", {"a": A, "b": B}, {"correction": "sidak"}, ["correction", "fdr_bh"]),
    ("pair-unknown-name", {"a": A, "b": B}, {"pairs": [("a", "c")]}, ["'c'", "not among"]),
    ("pair-self", {"a": A, "b": B}, {"pairs": [("a", "a")]}, ["itself"]),
    ("alpha", {"a": A, "b": B}, {"alpha": 1.5}, ["alpha"]),
    ("negative-surrogates", {"a": A, "b": B}, {"n_surrogates": -1}, ["n_surrogates"]),
    ("array-3d", np.zeros((2, 2, 10)), {}, ["2-D"]),
    ("non-numeric", {"a": ["x"] * 10, "b": B[:10]}, {}, ["'a'", "numeric"]),
    ("interval-shuffle-without-events", {"a": A, "b": B}, {"surrogate": "interval_shuffle"}, ["interval_shuffle", "event"]),
    ("trial-shuffle-single-trial", {"a": A, "b": B}, {"surrogate": "trial_shuffle"}, ["trial_shuffle", "trials"]),
    ("window-outside", {"a": A, "b": B}, {"windows": [(0.0, 500.0)]}, ["window", "outside"]),
    ("window-too-few-cycles", {"a": A, "b": B}, {"windows": 5.0}, ["5 s", "at least 10 cycles", "windows of at least"]),
    ("negative-seed", {"a": A, "b": B}, {"rng": -3}, ["seed", "non-negative"]),
    ("epochs-not-a-flag", {"a": A, "b": B}, {"epochs": "yes"}, ["epochs", "True, False or a mapping"]),
    ("epochs-tolerance", {"a": A, "b": B}, {"epochs": {"tolerance": -0.1}}, ["epoch tolerance", "radians"]),
    ("epochs-unknown-setting", {"a": A, "b": B}, {"epochs": {"minimum": 3}}, ["minimum", "accepted"]),
    ("epochs-window-too-long", {"a": A, "b": B}, {"epochs": {"window_cycles": 1000}}, ["epoch window", "cycles"]),
]


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_bad_input_raises_one_clear_sentence(case):
    _, signals, kwargs, words = case
    kw = {"fs": FS, "n_surrogates": 19, "n_bootstrap": 0} | kwargs
    before = {k: np.array(v, copy=True) for k, v in signals.items()} if isinstance(signals, dict) else None
    with pytest.raises(SyncstatsInputError) as err:
        syncstats.analyze(signals, **kw)
    msg = str(err.value)
    for w in words:
        assert w in msg, (w, msg)
    assert "\n" not in msg and msg.endswith(".")
    assert isinstance(err.value, ValueError)
    if before is not None:
        for k, v in before.items():
            assert np.array_equal(np.asarray(signals[k]), v, equal_nan=v.dtype.kind == "f")
