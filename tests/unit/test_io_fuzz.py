"""Property-based tests of syncstats.io (hypothesis, derandomized so every run is the same).

What must hold for any input:

* the common-grid step (``_grid._finish``) returns gap-free Recordings whose signals start
  and end at the same instant, are pieces of the input (never interpolated), cover every
  complete time step of the input once, never cross a break in the data, and are at least
  ``min_segment_s`` long when the file was split;
* a table with missing rows or empty cells splits into exactly the runs of complete rows;
* any text or damaged binary file either reads into well-formed Recordings or raises
  ``SyncstatsInputError`` with one sentence naming the file, and is never modified.

Inputs are invented (random numbers); the expected segments are worked out here from
the definition in DEVELOPERS.md (cells of width 1/g, g = gcd of the rates), not from the
code under test.
"""
from __future__ import annotations

import math
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from syncstats._errors import SyncstatsInputError
from syncstats.io._common import _Block, _Source
from syncstats.io._grid import _finish

FUZZ = settings(derandomize=True, database=None, deadline=None, max_examples=150,
                suppress_health_check=[HealthCheck.too_slow])


# ----------------------------------------------------------------------------- common grid

@st.composite
def sources(draw):
    """A loaded source: 1-3 signals at rates g*m_i, NaN runs, optional breaks and events.

    Signal lengths may end inside a grid cell (a format loader that does not cut records
    to a common end could hand over such data).
    """
    g = Fraction(draw(st.sampled_from([1, 2, 5, 10, 25])), draw(st.sampled_from([1, 2, 3])))
    per_cell = draw(st.lists(st.sampled_from([1, 2, 3, 4, 10]), min_size=1, max_size=3))
    n_cells = draw(st.integers(1, 40))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    signals, rates = {}, {}
    for j, m in enumerate(per_cell):
        x = rng.standard_normal(n_cells * m - draw(st.integers(0, m - 1)))
        for _ in range(draw(st.integers(0, 2))):
            a = draw(st.integers(0, len(x) - 1))
            x[a:a + draw(st.integers(1, 3))] = np.nan
        signals[f"s{j}"], rates[f"s{j}"] = x, g * m
    blocks = None
    if n_cells > 1 and draw(st.booleans()):
        cuts = draw(st.lists(st.integers(1, n_cells - 1), min_size=1, max_size=3, unique=True))
        edges = [0, *sorted(cuts), n_cells]
        onset, blocks = 0.0, []
        for a, b in zip(edges[:-1], edges[1:]):
            blocks.append(_Block(Fraction(a) / g, Fraction(b) / g, onset))
            onset += float(Fraction(b - a) / g) + draw(st.sampled_from([0.5, 3.0]))
    events = {}
    if draw(st.booleans()):
        events["beats"] = np.unique(rng.uniform(0, 2 * n_cells / float(g), draw(st.integers(1, 8))))
    return _Source(path=Path("/data/rec.edf"), name="rec", kind="EDF", signals=signals,
                   rates=rates, events=events, blocks=blocks)


def _expected_cells(src):
    """Good cells by the definition: every sample of every signal in the cell is finite;
    only cells that every signal fills completely; runs do not cross a block break."""
    den = math.lcm(*(r.denominator for r in src.rates.values()))
    g = Fraction(math.gcd(*(int(r * den) for r in src.rates.values())), den)
    per_cell = {n: int(r / g) for n, r in src.rates.items()}
    n_cells = min(len(x) // per_cell[n] for n, x in src.signals.items())
    good = [all(np.isfinite(x[c * per_cell[n]:(c + 1) * per_cell[n]]).all()
                for n, x in src.signals.items()) for c in range(n_cells)]
    breaks = {0, n_cells}
    for b in src.blocks or []:
        breaks.add(min(int(b.data_start * g), n_cells))
    runs, start = [], None
    for c in range(n_cells + 1):
        inside = c < n_cells and good[c] and not (c in breaks and start is not None)
        if start is not None and not inside:
            runs.append((start, c))
            start = None
        if c < n_cells and good[c] and start is None:
            start = c
    return g, per_cell, runs


@FUZZ
@given(src=sources(), min_segment_s=st.sampled_from([0.0, 0.4, 2.0]))
@example(  # a signal ending inside the last cell once gave a segment shorter than min_segment_s
    src=_Source(path=Path("/data/rec.edf"), name="rec", kind="EDF",
                signals={"a": np.arange(21.0), "b": np.r_[0.0, 1.0, np.nan, np.arange(9.0)]},
                rates={"a": Fraction(2), "b": Fraction(1)}),
    min_segment_s=7.5,
)
def test_grid_segments_are_the_complete_good_cells(src, min_segment_s):
    g, per_cell, runs = _expected_cells(src)
    kept = [r for r in runs if float(Fraction(r[1] - r[0]) / g) >= min_segment_s]
    whole = runs == [(0, min(len(x) // per_cell[n] for n, x in src.signals.items()))]
    target = None if len(set(src.rates.values())) == 1 else float(g)
    try:
        recs = _finish(src, name=None, resample_to=target, gaps="split",
                       min_segment_s=min_segment_s, extra_events={})
    except SyncstatsInputError as err:
        assert not (kept or whole), err
        assert "rec.edf" in str(err) and "\n" not in str(err)
        return
    expected = runs if whole else kept
    assert len(recs) == len(expected)
    for rec, (a, b) in zip(recs, expected):
        assert rec.name == ("rec" if whole else f"rec#{expected.index((a, b)) + 1}")
        for n, x in src.signals.items():
            m = per_cell[n]
            y = rec.signals[n]
            if target is None:  # one rate: the samples themselves, in place
                np.testing.assert_array_equal(y, x[a * m:b * m])
            assert len(y) == (b - a) * (m if target is None else 1)
            assert np.isfinite(y).all()
        dur = len(next(iter(rec.signals.values()))) / rec.fs
        assert dur == pytest.approx(float(Fraction(b - a) / g))
        if not whole:
            assert dur >= min_segment_s - 1e-12
            for et in rec.events.values():
                assert np.all((et >= 0) & (et < dur))
