"""Progress: it moves even when every surrogate fits in one batch, the command line shows an
estimate of the time left, and results never depend on it."""
from __future__ import annotations

import io
import warnings

import numpy as np
import pandas as pd

import syncstats
from syncstats.cli import _progress
from syncstats.inference import null_distribution
from syncstats.inference._nulls import PROGRESS_STEPS
from tests.conftest import diffusing_pair


def _run(**kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return syncstats.analyze(diffusing_pair(duration=60.0, coupled=False, seed=2), fs=50.0, n_surrogates=39,
                                 surrogate="iaaft", n_bootstrap=0, rng=4, **kw)


def test_progress_moves_within_what_would_be_one_batch_and_changes_nothing():
    calls = []
    with_bar = _run(progress=calls.append, memory_mb=1e6)  # all 39 would fit in one batch
    assert len(calls) >= PROGRESS_STEPS - 1 and sum(calls) == 39
    assert max(calls) <= 2
    plain = _run(memory_mb=1e6)
    pd.testing.assert_frame_equal(with_bar.table, plain.table)
    np.testing.assert_array_equal(with_bar.null_distribution, plain.null_distribution)


def test_fewer_surrogates_than_steps_tick_one_by_one():
    calls = []
    from syncstats._inputs import collect_inputs
    from syncstats.inference import make_design
    from syncstats.pipeline import Pipeline

    inp = collect_inputs(diffusing_pair(duration=30.0, coupled=False, seed=1), 50.0, None, None, None)
    pipe = Pipeline.fix(inp)
    design = make_design(pipe)
    seed = np.random.SeedSequence(3)
    out = null_distribution(pipe, design.family, "fourier", 7, seed, progress=calls.append, batch_size=64)
    assert calls == [1] * 7
    np.testing.assert_array_equal(out, null_distribution(pipe, design.family, "fourier", 7, seed, batch_size=64))


def test_exact_time_shift_completes_the_bar_in_one_step():
    calls = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        syncstats.analyze(diffusing_pair(duration=60.0, coupled=False, seed=2), fs=50.0, n_surrogates=39,
                          surrogate="time_shift", n_bootstrap=0, rng=4, progress=calls.append)
    assert calls == [39]


class _Terminal(io.StringIO):
    def isatty(self):
        return True


def test_command_line_bar_shows_count_and_time_left():
    term = _Terminal()
    tick, close = _progress(40, False, stream=term, mininterval=0)
    for _ in range(10):
        tick(2)
    close()
    text = term.getvalue()
    assert "surrogates 20/40" in text and "left" in text and "50%" in text
    # not a terminal, or --quiet: no bar at all
    assert _progress(40, False, stream=io.StringIO())[0] is None
    assert _progress(40, True, stream=term)[0] is None
