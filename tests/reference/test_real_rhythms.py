"""A real-data positive control: two real rhythms that share the annual cycle.

Data: statsmodels' bundled datasets `co2` (weekly atmospheric CO2, Mauna Loa,
1958-2001) and `elnino` (monthly sea-surface temperatures, 1950-2010); their provenance
is in the statsmodels dataset documentation. Both carry an annual cycle (a fact of the
trade: seasonal cycles are annual), so over the common years they are locked 1:1 to
the seasons and hence to each other.

What each null concludes, and why:
* fourier / iaaft: the surrogates keep each series' spectrum but scramble the timing
  of its seasonal cycle from year to year, so the observed, calendar-locked alignment
  (PLV ~0.99) is far above the null (~0.7): locking is detected, with a large effect.
* time_shift: each series keeps its own annual cycle, so any shift still leaves two
  annual rhythms nearly aligned (null mean ~0.98): a common strictly periodic drive
  survives the shift. The observed PLV still sits a little above the tight null, but
  the effect is tiny; analyze warns that the rhythm is so regular that time_shift has
  little power. Read the effect, not only the p-value.
"""
import warnings

import pytest
import statsmodels.api as sm

import syncstats


@pytest.fixture(scope="module")
def seasons():
    co2 = sm.datasets.co2.load_pandas().data["co2"]
    monthly = co2.resample("MS").mean().loc["1959-01-01":"2001-12-01"]
    # 3 of the 516 months have no weekly value; they are filled here by linear
    # interpolation, explicitly, for this test only (syncstats never fills gaps itself)
    assert int(monthly.isna().sum()) == 3
    el = sm.datasets.elnino.load_pandas().data
    el = el[(el.YEAR >= 1959) & (el.YEAR <= 2001)]
    sst = el.drop(columns="YEAR").to_numpy().ravel()
    assert sst.size == monthly.size == 516
    return {"co2": monthly.interpolate().to_numpy(), "sst": sst}


def _run(sig, method):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        # fs = 12 samples per year: frequencies are in cycles per year
        return syncstats.analyze(sig, fs=12.0, bands=(0.6, 1.4), surrogate=method, n_surrogates=199, n_bootstrap=199,
                                 rng=1)


@pytest.mark.parametrize("method", ["fourier", "iaaft"])
def test_fourier_type_nulls_detect_the_shared_annual_cycle(seasons, method):
    row = _run(seasons, method).table.iloc[0]
    assert row.value > 0.95 and row.n_cycles > 35
    assert row.significant and row.p_value == pytest.approx(1 / 200)
    assert row.effect > 0.2 and row.ci_low > row.null_mean


def test_time_shift_null_keeps_the_common_drive(seasons):
    res = _run(seasons, "time_shift")
    row = res.table.iloc[0]
    assert row.null_mean > 0.95  # shifted annual rhythms stay aligned
    assert row.effect < 0.02  # almost all of the locking is the shared season
    assert "little power" in row.warnings


def test_dominant_frequency_is_one_cycle_per_year(seasons):
    diag = _run(seasons, "fourier").diagnostics.set_index("signal")
    assert diag.loc["co2", "dominant_freq_hz"] == pytest.approx(1.0, abs=0.05)
    assert diag.loc["sst", "dominant_freq_hz"] == pytest.approx(1.0, abs=0.05)
