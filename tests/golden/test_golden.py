"""The refactoring guard: every frozen analysis (tests/golden/cases.py) reproduces its
stored table exactly. Internal consistency, not an outside check: it shows that a change
of structure did not change a number. When a change deliberately alters results, rewrite
the tables (``python -m tests.golden.cases``) and say why in the commit and in
``DELIBERATE`` below."""
import warnings

import pandas as pd
import pytest

from .cases import TABLES, cases, run_case

#: cases whose stored table was rewritten on purpose, and why
DELIBERATE = {
    "events_protophase": "the protophase correction of event phases is now applied to the surrogates' event phases "
    "too (it was applied to the data only); null_mean moved from 0.405389 to 0.405390 on this nearly periodic "
    "train, p-values unchanged",
    "*": "every table, ci_* columns only: the cycle blocks of the bootstrap now include each trial's last, "
    "incomplete cycle, so the resampled statistic is the value itself (all other columns bit-identical; "
    "checked column by column when rewritten)",
    "group_max_stat": "p_adjusted only: the max-statistic floors each null spread at the measure's chance spread "
    "for the row's cycles (PLV, PPC), so a collapsed null spread no longer inflates z",
    "pair_time_shift, phases_time_shift, windows_time_shift": "inference columns only: time_shift now runs "
    "over the whole circular group of shifts (minimum shift one sample; excluding the observed alignment's "
    "neighbourhood inflated the false-positive rate), exactly over every shift for two rhythms and "
    "whole-record PLV rows",
    "* (second)": "ci_* columns only: bootstrap blocks of 3 integrated autocorrelation times of the cycle-mean "
    "phasor, and PLV intervals shifted by the finite-sample bias (an interval for the long-record PLV)",
    "* (third)": "warnings only: a row whose ratio is more than 20 % from the measured frequency ratio says so",
    "* (fourth)": "ci_low, ci_high, ci_method only, PLV rows of single records: the interval is widened to contain "
    "the parametric bootstrap interval of the fitted noisy phase-difference model (other columns bit-identical, "
    "checked column by column; trial data unchanged)",
    "* (fifth)": "ci_low, ci_high only, PLV rows of single records: the phase-difference model's basic interval "
    "is formed on the scale log(1 - PLV), where a record's own concentration does not shrink its spread (beats "
    "against breathing: coverage 0.84 -> 0.925); other columns bit-identical, checked column by column",
    "phases_time_shift (second)": "warnings only: the little-power warning of time_shift no longer advises iaaft "
    "(on short regular records IAAFT rejects independent steady rhythms too often)",
}


@pytest.mark.parametrize("name", sorted(cases()))
def test_table_is_unchanged(name):
    stored = pd.read_pickle(TABLES / f"{name}.pkl")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        now = run_case(name)
    pd.testing.assert_frame_equal(now[stored.columns], stored, check_exact=True)
