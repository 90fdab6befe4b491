"""Direct tests of analyze's stages: the one pipeline, the design, the measure registry."""
import numpy as np
import pytest

import syncstats
from syncstats import inference as inf
from syncstats._inputs import collect_inputs
from syncstats.measures import MEASURE_METHODS
from syncstats.nulls import SURROGATE_METHODS
from syncstats.phase import event_phase, protophase_to_phase
from syncstats.pipeline import Pipeline

from ..golden.cases import _events, _wander


def _pipe(kind, protophase=False):
    if kind == "signals":
        inp = collect_inputs(_wander(seed=1), 20.0)
    elif kind == "trials":
        inp = collect_inputs(_wander(n=400, seed=5, trials=6), 20.0)
    elif kind == "events":
        cont, evs = _events(seed=3)
        inp = collect_inputs(cont, 20.0, events=evs)
    else:
        rng = np.random.default_rng(4)
        pa = np.cumsum(rng.normal(2 * np.pi / 20, 0.05, 3000))
        inp = collect_inputs(None, 20.0, phases={"a": pa, "b": pa + rng.normal(0, 0.6, 3000)})
    return Pipeline.fix(inp, protophase_correction=protophase)


@pytest.mark.parametrize("protophase", [False, True])
@pytest.mark.parametrize("kind", ["signals", "trials", "events", "phases"])
def test_surrogate_path_reproduces_the_data_when_the_surrogate_is_the_data(kind, protophase):
    """Data and surrogates go through one pipeline: feeding the data's own inputs through
    the surrogate path gives the data's phases exactly (protophase correction included)."""
    pl = _pipe(kind, protophase)
    inp = pl.inputs
    raw = {n: inp.raw[n][None] for n in inp.raw}
    events = {n: [inp.events[n]] for n in inp.events}
    phases = {n: pl.data[n][None] for n in inp.user_phases}
    got = pl.phases(raw=raw, events=events, phases=phases)
    for n in inp.names:
        np.testing.assert_array_equal(got[n][0], pl.data[n])


def test_surrogate_event_phases_get_the_protophase_correction_too():
    pl = _pipe("events", protophase=True)
    ev = pl.inputs.events["heart"]
    shuffled = SURROGATE_METHODS["interval_shuffle"].make(ev, [np.random.default_rng(0)])
    corrected = pl.phases(events={"heart": shuffled})["heart"][0, 0]
    full = event_phase(shuffled[0], pl.inputs.t)
    ok = np.isfinite(full)
    expected = full.copy()
    expected[ok] = protophase_to_phase(full[ok])
    np.testing.assert_array_equal(corrected, pl.span(expected))
    assert np.max(np.abs(corrected - pl.span(full))) > 1e-5  # the correction did act


@pytest.mark.parametrize("measure", sorted(MEASURE_METHODS))
def test_cycle_block_statistics_sum_to_the_measure(measure):
    """The bootstrap resamples cycle blocks: the sum over all blocks must give the
    measure itself (for PPC: whole cycles, the identity of Vinck et al. 2010)."""
    pl = _pipe("signals")
    design = inf.make_design(pl, ratios=[(1, 1), (2, 1)], measures=(measure,))
    values = design.family.evaluate(pl.data)
    for i, r in enumerate(design.rows):
        st, fn = design.family.block_stats(pl.data, r)
        assert fn(st.sum(axis=0)) == pytest.approx(values[i], rel=1e-9, abs=1e-12)


def test_design_counts_rows_and_refuses_short_windows():
    pl = _pipe("signals")
    d = inf.make_design(pl, ratios="1:1,2:1", measures=("plv", "ppc"), windows=40.0)
    assert len(d.rows) == 2 * 3 * 2 and d.describe("plv").startswith("6 tests of plv: 1 pair(s) x 2 ratio(s)")
    with pytest.raises(syncstats.SyncstatsInputError, match="cycles"):
        inf.make_design(pl, windows=5.0)


def test_every_registry_entry_is_complete():
    for e in SURROGATE_METHODS.values():
        assert e.level in ("signal", "phase", "event") and e.acts_on in ("signal", "signals", "phase", "events")
        assert e.label and e.description and e.null_hypothesis.endswith(".") and e.citations
    for m in MEASURE_METHODS.values():
        assert m.kind in ("pair", "group") and m.label and m.description and m.citations
    for c in inf.CORRECTION_METHODS.values():
        assert c.controls in ("FDR", "FWER", "none") and c.label


def test_readme_column_list_is_the_column_spec():
    """The README's column list is written from results.COLUMN_SPEC (one description)."""
    from pathlib import Path

    from syncstats.results import COLUMN_SPEC, COLUMNS, columns_markdown

    text = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    block = text.split("<!-- columns:start")[1].split("-->", 1)[1].split("<!-- columns:end -->")[0]
    assert block.strip() == columns_markdown()
    assert tuple(c.name for c in COLUMN_SPEC[: len(COLUMNS)]) == COLUMNS


def test_a_new_surrogate_needs_only_its_registry_entry(monkeypatch, tmp_path):
    """DEVELOPERS.md's worked example: one registry entry makes a new method usable by
    analyze, the report, the methods text and the command line."""
    from syncstats.nulls import SurrogateMethod
    from syncstats.nulls._validation import _as_channels, _check_rngs

    def random_rotation(x, rngs):
        x2, _ = _as_channels(x, "random_rotation")
        rngs = _check_rngs(rngs, "random_rotation")
        n = x2.shape[-1]
        lags = [g.integers(n // 4, 3 * n // 4 + 1) for g in rngs]
        return np.stack([np.roll(x2, k, axis=-1) for k in lags])

    entry = SurrogateMethod(
        "random_rotation", random_rotation, level="signal", acts_on="signal", targets="all_but_first",
        make=random_rotation, label="randomly rotated",
        description="randomly rotated copies of the raw signals, each passed through the phase pipeline",
        null_hypothesis="Each signal keeps its own dynamics and the alignment between them is arbitrary.",
        failure_cases="Very regular rhythms look alike at every lag, so the null is weak.",
        citations=("Test entry (2026). Not a paper.",),
    )
    monkeypatch.setitem(SURROGATE_METHODS, "random_rotation", entry)
    res = syncstats.analyze(_wander(seed=1), fs=20.0, surrogate="random_rotation", n_surrogates=19, n_bootstrap=0,
                            rng=1)
    row = res.table.iloc[0]
    assert row.surrogate == "random_rotation" and row.null_level == "signal" and row.p_value == pytest.approx(0.05)
    out = res.save(tmp_path / "out")
    methods = (out / "methods.md").read_text(encoding="utf-8")
    assert "randomly rotated copies" in methods and "Test entry (2026)" in methods
    assert "randomly rotated" in (out / "report.html").read_text(encoding="utf-8")
    from syncstats.cli import _build_parser

    assert "random_rotation" in _build_parser()._subparsers._group_actions[0].choices["analyze"].format_help()


@pytest.mark.parametrize("order", ["a_first", "b_first"])
def test_exact_shift_null_equals_the_sampled_shifts(order):
    """The all-shift null (one FFT per pair and ratio) gives, at each shift, exactly the
    value the sampled time-shift surrogate with that shift gives, whichever rhythm of the
    pair stays fixed (the first in the input order)."""
    from syncstats.nulls._shift import shift_phase

    sig = _wander(seed=8)
    if order == "b_first":
        sig = {"s1": sig["s1"], "s0": sig["s0"]}
    pl = Pipeline.fix(collect_inputs(sig, 20.0))
    design = inf.make_design(pl, pairs=[("s0", "s1")], ratios=[(1, 1), (2, 1), (1, 2)])
    plan, _ = inf.shift_plan(pl, design)
    null = inf.exact_shift_null(plan, design, pl.span_n)
    moved = pl.names[1]
    for k, s in enumerate([plan.min_shift, pl.span_n // 2, pl.span_n - plan.min_shift]):
        ph = dict(pl.data)
        ph[moved] = shift_phase(pl.data[moved], np.array([s]))[0]
        row = s - plan.min_shift
        np.testing.assert_allclose(null[row], design.family.evaluate(ph), rtol=1e-9, atol=1e-12)


def test_diagnostics_look_for_the_rhythm_inside_a_band_the_user_gave():
    """A strong slow wave outside the chosen 4-8 Hz band must not make the diagnostics
    report its frequency and call the in-band rhythm 'broad'."""
    rng = np.random.default_rng(0)
    t = np.arange(0, 120, 0.01)
    slow = 3 * np.sin(2 * np.pi * 0.9 * t)
    sig = {k: slow + np.sin(2 * np.pi * 6 * t + k + np.cumsum(rng.normal(0, 0.02, t.size)))
           + 0.3 * rng.standard_normal(t.size) for k in (0, 1)}
    d = syncstats.analyze({"a": sig[0], "b": sig[1]}, fs=100, bands={"a": (4, 8), "b": (4, 8)}, n_surrogates=0,
                          n_bootstrap=0).diagnostics
    assert np.allclose(d.dominant_freq_hz, 6.0, atol=0.1) and (d.peak_sharpness > 0.8).all()
    assert not d.warnings.str.contains("broad").any()


def test_methods_count_signals_not_the_group_row():
    from syncstats.report._methods import methods_text

    rng = np.random.default_rng(0)
    t = np.arange(0, 60, 0.05)
    sig = {f"c{k}": np.sin(2 * np.pi * t + k) + 0.3 * rng.standard_normal(t.size) for k in range(4)}
    r = syncstats.analyze(sig, fs=20, measures=("plv", "order_parameter"), n_surrogates=0, n_bootstrap=0)
    assert "on 4 signals" in methods_text(r)
