"""Checking a published synchronization claim: from its numbers, or on shared data.

Two entry points for a reviewer:

* :func:`check_claim` takes only the numbers a paper reports (index and value, record
  length and rhythm frequencies or the cycle count, sampling rate, ratio, how much was
  searched, the test and the p-value) and says what they can and cannot support.
* :func:`retest` runs the claimed test on shared data next to the package's
  calibrated surrogate test (``syncstats.analyze``) and explains the difference.

The numeric core works on plain floats and numpy; pandas appears only in the returned
tables. Research software, not a medical device: the verdicts are statistical
statements about numbers, not clinical judgements, which stay with qualified people
under the regulations that apply where they work.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, NamedTuple

import numpy as np
import pandas as pd

from . import _checks
from ._errors import SyncstatsInputError
from .inference._circular import critical_plv

__all__ = [
    "CLAIMED_TESTS",
    "CORRECTIONS",
    "RETEST_TESTS",
    "ClaimCheck",
    "RetestResult",
    "chance_plv",
    "check_claim",
    "critical_plv",
    "plv_standard_error",
    "rayleigh_log_p",
    "retest",
]

#: tests a claim may name: every-sample Rayleigh, one-angle-per-cycle Rayleigh, a
#: surrogate test, "rayleigh" when the paper does not say what N was, None when no test
CLAIMED_TESTS = ("rayleigh", "rayleigh_samples", "rayleigh_cycles", "surrogate")
#: tests :func:`retest` can re-run as claimed
RETEST_TESTS = ("rayleigh_samples", "rayleigh_cycles", "surrogate")
#: corrections for the declared search size
CORRECTIONS = ("bonferroni", "sidak")
_INDEXES = ("plv", "ppc")
_LN10 = math.log(10.0)

_DISCLAIMER = (
    "This is a statistical check of reported numbers by research software, not a medical "
    "device; interpretation of any physiological finding rests with qualified clinical "
    "judgement and local regulations."
)


# ============================================================================ core math
def rayleigh_log_p(n, plv):
    """Natural log of the Rayleigh-test p-value (Zar's approximation) for ``n`` angles.

    Parameters
    ----------
    n : float or array
        Number of independent angles (cycles or trials; samples only for the naive test).
    plv : float or array
        Mean resultant length gamma in [0, 1]; ``R_n = n * gamma``.

    Returns
    -------
    float or ndarray
        ``ln p`` with ``p ≈ exp(sqrt(1 + 4n + 4(n² − R_n²)) − (1 + 2n))``, computed in
        the cancellation-free form ``−4 R_n² / (sqrt(1 + 4n + 4(n² − R_n²)) + 1 + 2n)``
        so that every-sample p-values far below the smallest double stay finite in log.

    Notes
    -----
    The same formula as :func:`syncstats.inference.rayleigh_test` (a unit test checks
    they agree), taking summary numbers instead of angles.

    References
    ----------
    Zar JH, Biostatistical Analysis (4th ed. 1999), Eq. 27.4.

    Examples
    --------
    >>> round(float(np.exp(rayleigh_log_p(8, 0.825218))), 5)   # Zar, Example 27.1
    0.00185
    """
    n = np.asarray(n, dtype=float)
    rn = n * np.asarray(plv, dtype=float)
    root = np.sqrt(1.0 + 4.0 * n + 4.0 * (n * n - rn * rn))
    out = -4.0 * rn * rn / (root + 1.0 + 2.0 * n)
    return out if out.ndim else float(out)


def chance_plv(n):
    """Mean and SD of the PLV of ``n`` independent uniform angles (large-n Rayleigh law).

    Notes
    -----
    ``cos θ`` and ``sin θ`` of a uniform angle have mean 0, variance 1/2 and are
    uncorrelated, so by the central limit theorem the resultant ``(Σ cos, Σ sin)`` is
    near a 2-D normal with variance ``n/2`` per axis and its length ``R_n`` follows a
    Rayleigh law with ``σ² = n/2``: ``E[R_n] = σ sqrt(π/2)``, ``E[R_n²] = 2σ² = n``.
    Hence ``E[γ] ≈ sqrt(π / (4n))`` and ``E[γ²] = 1/n`` (exact), ``SD[γ] ≈
    sqrt((1 − π/4)/n)``. Common practice; see also Mardia & Jupp, Directional
    Statistics (2000), §6.3 (recalled).

    Examples
    --------
    >>> m, s = chance_plv(100)
    >>> round(m, 4), round(s, 4)
    (0.0886, 0.0463)
    """
    n = float(n)
    return math.sqrt(math.pi / (4.0 * n)), math.sqrt((1.0 - math.pi / 4.0) / n)


def plv_standard_error(plv, n):
    """Standard error of a PLV estimated from ``n`` independent angles.

    Delta method on ``γ ≈ mean cos(θ − μ)``: ``Var γ ≈ ((1 + ρ₂)/2 − ρ²)/n`` with
    ``ρ₂ = E cos 2(θ − μ)``; for a wrapped normal ``ρ₂ = ρ⁴`` so
    ``SE ≈ (1 − γ²) / sqrt(2n)``. Near independence the delta method fails; the SE is
    then floored at the chance SD ``sqrt((1 − π/4)/n)`` (see :func:`chance_plv`).
    Mardia & Jupp (2000), §4.8 (asymptotics of the mean resultant length, recalled);
    a unit test checks it against a direct Monte Carlo.

    Examples
    --------
    >>> round(plv_standard_error(0.5, 50), 4)
    0.075
    """
    n = float(n)
    return max((1.0 - plv * plv) / math.sqrt(2.0 * n), chance_plv(n)[1])


def _plv_from_ppc(ppc, n):
    """PLV that gives this PPC over ``n`` angles: PPC = (nγ² − 1)/(n − 1) (Vinck 2010)."""
    g2 = (ppc * (n - 1.0) + 1.0) / n
    return math.sqrt(min(max(g2, 0.0), 1.0))


def _ppc_from_plv(plv, n):
    return (n * plv * plv - 1.0) / (n - 1.0)


def _family_level(alpha, m, correction):
    """Per-test level that keeps the family-wise error at alpha over m tests."""
    if correction == "sidak":
        return -math.expm1(math.log1p(-alpha) / m)
    return alpha / m


def _family_p(p, m, correction):
    """Corrected p-value for the smallest of m tests."""
    if correction == "sidak":
        return -math.expm1(m * math.log1p(-p)) if p < 1 else 1.0
    return min(1.0, m * p)


def _fmt_p(log_p):
    """A p-value given as its natural log, in words that survive underflow."""
    if log_p > math.log(1e-4):
        return f"{math.exp(log_p):.4f}" if log_p > math.log(0.01) else f"{math.exp(log_p):.2g}"
    e = log_p / _LN10
    return f"about 1e{math.floor(e):d}" if e < -300 else f"{math.exp(log_p):.1e}"


# ============================================================================ results
@dataclass(frozen=True)
class ClaimCheck:
    """What reported numbers can support.

    Attributes
    ----------
    table : pandas.DataFrame
        One row per quantity: ``name``, ``value`` (float, NaN where it does not apply),
        ``meaning`` (one sentence).
    verdicts : tuple of str
        Plain-language findings, most important first; inconsistencies included.
    flags : tuple of str
        Short codes of the inconsistencies found (empty when none):
        ``"p_below_surrogate_floor"``, ``"every_sample_rayleigh"``,
        ``"below_chance_called_significant"``, ``"precision_beyond_cycles"``,
        ``"ci_narrower_than_cycles_allow"``, ``"ratio_mismatch"``,
        ``"not_significant_after_search"``.
    assumptions : tuple of str
        What the check took for granted.
    significant : bool
        The index rejects independence in a cycle-level Rayleigh test at ``alpha``
        after the correction for the declared search.
    """

    table: pd.DataFrame
    verdicts: tuple[str, ...]
    flags: tuple[str, ...]
    assumptions: tuple[str, ...]
    significant: bool
    params: dict[str, Any] = field(default_factory=dict)

    def value(self, name: str) -> float:
        """The value of one quantity of :attr:`table` by name."""
        row = self.table.loc[self.table["name"] == name, "value"]
        if row.empty:
            raise SyncstatsInputError(
                f"ClaimCheck has no quantity {name!r}; use one of: {', '.join(self.table['name'])}."
            )
        return float(row.iloc[0])

    def __str__(self) -> str:
        lines = ["Claim check (research software, not a medical device)", ""]
        lines += [f"- {v}" for v in self.verdicts]
        lines += ["", "Assumptions:"] + [f"- {a}" for a in self.assumptions]
        return "\n".join(lines)


@dataclass(frozen=True)
class RetestResult:
    """The claimed test and the calibrated surrogate test on the same data.

    Attributes
    ----------
    table : pandas.DataFrame
        One row per test: ``role`` ("claimed", "calibrated"), ``test``, ``n`` (angles or
        surrogates the p-value rests on), ``n_kind``, ``value`` (PLV), ``null_mean``,
        ``p_value``, ``log10_p``, ``significant`` (p <= alpha), ``explanation``.
    sentences : tuple of str
        One sentence per row, then one sentence on the difference.
    analysis : syncstats.AnalysisResult
        The full calibrated analysis (its ``table`` and ``save``).
    """

    table: pd.DataFrame
    sentences: tuple[str, ...]
    analysis: Any

    def __str__(self) -> str:
        return "\n".join(self.sentences)


# ============================================================================ check_claim
def _check_claim_iv(index, value, p_claimed, p_is_bound, test, n_cycles, duration_s, freq_a, freq_b,
                    fs, ratio, n_ratios, n_pairs, n_windows, n_surrogates, alpha, correction,
                    decimals, ci, ci_level):
    """Validate and normalise every option of :func:`check_claim` (one place)."""
    if not isinstance(index, str) or index.lower() not in _INDEXES:
        raise SyncstatsInputError(
            f"check_claim: index must be one of {', '.join(_INDEXES)}; got {index!r}; pass the index the claim reports."
        )
    index = index.lower()
    inferred_decimals = None
    if isinstance(value, str):
        s = value.strip()
        if "." in s and s.replace(".", "", 1).lstrip("+-").isdigit():
            inferred_decimals = len(s.split(".", 1)[1])
        elif s.lstrip("+-").isdigit():
            inferred_decimals = 0
    low = 0.0 if index == "plv" else -1.0
    value = _checks.check_float(value, "check_claim: value", low=low, high=1.0,
                                hint=f"Give the reported {index.upper()} as a number, e.g. value=0.31.")
    if decimals is None:
        decimals = inferred_decimals
    elif decimals is not None:
        decimals = _checks.check_int(decimals, "check_claim: decimals", low=0, high=15,
                                     hint="Give the number of decimals the claim reports, or leave it out.")
    if test is not None and test not in CLAIMED_TESTS:
        raise SyncstatsInputError(
            f"check_claim: test must be one of {', '.join(CLAIMED_TESTS)} or None; got {test!r}; "
            "use 'rayleigh' when the paper does not say whether samples or cycles were counted."
        )
    if p_claimed is not None:
        p_claimed = _checks.check_float(p_claimed, "check_claim: p_claimed", low=0.0, high=1.0, open_low=True,
                                        hint="Give the reported p-value (for 'p < 0.001' pass 0.001 and p_is_bound=True).")
    p_is_bound = _checks.check_bool(p_is_bound, "check_claim: p_is_bound")
    if n_cycles is not None:
        n_cycles = _checks.check_float(n_cycles, "check_claim: n_cycles", low=2.0,
                                       hint="Give the cycles of the slower rhythm in the analysed span.")
    if duration_s is not None:
        duration_s = _checks.check_float(duration_s, "check_claim: duration_s", low=0.0, open_low=True,
                                         hint="Give the analysed record length in seconds.")
    freqs = []
    for nm, f in (("freq_a", freq_a), ("freq_b", freq_b)):
        freqs.append(None if f is None else _checks.check_float(
            f, f"check_claim: {nm}", low=0.0, open_low=True, hint="Give the rhythm's mean frequency in Hz."))
    freq_a, freq_b = freqs
    if n_cycles is None and (duration_s is None or freq_a is None or freq_b is None):
        raise SyncstatsInputError(
            "check_claim: the number of cycles is unknown; pass n_cycles=, or duration_s= together with "
            "freq_a= and freq_b= (Hz)."
        )
    if fs is not None:
        fs = _checks.check_fs(fs, where="check_claim: fs", hint="pass the sampling rate of the analysed phases in Hz")
    p, q = _checks.parse_ratio(ratio)
    m = 1
    for nm, k in (("n_ratios", n_ratios), ("n_pairs", n_pairs), ("n_windows", n_windows)):
        m *= _checks.check_int(k, f"check_claim: {nm}", low=1,
                               hint="Count every ratio, pair and window the authors looked at (1 if none).")
    if n_surrogates is not None:
        n_surrogates = _checks.check_int(n_surrogates, "check_claim: n_surrogates", low=1,
                                         hint="Give the number of surrogates the claim used, or leave it out.")
    alpha = _checks.check_float(alpha, "check_claim: alpha", low=0.0, high=1.0, open_low=True, open_high=True)
    if correction not in CORRECTIONS:
        raise SyncstatsInputError(
            f"check_claim: correction must be one of {', '.join(CORRECTIONS)}; got {correction!r}; "
            "bonferroni is the default."
        )
    ci_level = _checks.check_float(ci_level, "check_claim: ci_level", low=0.0, high=1.0, open_low=True,
                                   open_high=True)
    if ci is not None:
        try:
            lo, hi = (float(x) for x in ci)
        except (TypeError, ValueError):
            raise SyncstatsInputError(
                f"check_claim: ci must be a pair (low, high) of numbers; got {ci!r}; pass the reported interval."
            ) from None
        if not (math.isfinite(lo) and math.isfinite(hi) and lo <= hi):
            raise SyncstatsInputError(
                f"check_claim: ci must be a pair (low, high) with low <= high; got {ci!r}; pass the reported interval."
            )
        ci = (lo, hi)
    return dict(index=index, value=value, p_claimed=p_claimed, p_is_bound=p_is_bound, test=test,
                n_cycles=n_cycles, duration_s=duration_s, freq_a=freq_a, freq_b=freq_b, fs=fs, ratio=(p, q),
                search=m, n_surrogates=n_surrogates, alpha=alpha, correction=correction, decimals=decimals,
                ci=ci, ci_level=ci_level)


def check_claim(*, index="plv", value, p_claimed=None, p_is_bound=False, test=None, n_cycles=None,
                duration_s=None, freq_a=None, freq_b=None, fs=None, ratio=(1, 1), n_ratios=1, n_pairs=1,
                n_windows=1, n_surrogates=None, alpha=0.05, correction="bonferroni", decimals=None,
                ci=None, ci_level=0.95) -> ClaimCheck:
    """Check what reported synchronization numbers can support.

    Parameters
    ----------
    index : {"plv", "ppc"}
        The reported index: phase-locking value or pairwise phase consistency.
    value : float or str
        The reported index. A string (``"0.31"``) also fixes the decimals reported.
    p_claimed : float, optional
        The reported p-value; for "p < 0.001" pass 0.001 with ``p_is_bound=True``.
    p_is_bound : bool
        ``p_claimed`` is an upper bound ("p <") rather than a value.
    test : {"rayleigh", "rayleigh_samples", "rayleigh_cycles", "surrogate"} or None
        The test the claim used; "rayleigh" when it does not say what N was.
    n_cycles : float, optional
        Cycles of the slower rhythm in the analysed span (the effective N). Default:
        ``duration_s * min(freq_a, freq_b)``.
    duration_s, freq_a, freq_b : float, optional
        Analysed length (s) and the mean frequencies (Hz) of rhythm A and B.
    fs : float, optional
        Sampling rate (Hz) of the analysed phases; with ``duration_s`` it gives the
        sample count for the every-sample Rayleigh comparison.
    ratio : (p, q) or "p:q"
        A makes p cycles while B makes q (the project's ratio convention).
    n_ratios, n_pairs, n_windows : int
        How many ratios, pairs and windows were searched (the search size is their
        product; count what the authors looked at, not only what they report).
    n_surrogates : int, optional
        Surrogates behind a surrogate p-value.
    alpha : float
        Family-wise level (default 0.05).
    correction : {"bonferroni", "sidak"}
        Correction for the search size.
    decimals : int, optional
        Decimals of the reported value (inferred when ``value`` is a string).
    ci : (low, high), optional
        The reported confidence interval of the index, at ``ci_level``.

    Returns
    -------
    ClaimCheck

    Notes
    -----
    The effective N is the number of cycles of the slower rhythm, not the number of
    samples: samples of a phase difference are strongly autocorrelated, and under
    independence ``E[γ²] = 1/N_eff`` with ``N_eff`` close to the cycle count (common
    practice). With N independent angles the PLV of independent rhythms is about
    ``sqrt(π/(4N))`` (see :func:`chance_plv`); the Rayleigh p-value uses Zar's
    approximation (Zar 1999, Eq. 27.4; :func:`rayleigh_log_p`); the smallest
    significant index inverts it (:func:`critical_plv`). A PPC is turned into the PLV
    that gives it over the same N, PPC = (Nγ² − 1)/(N − 1) (Vinck et al. 2010).

    Examples
    --------
    >>> chk = check_claim(value=0.2, n_cycles=75, p_claimed=0.001, test="rayleigh_cycles")
    >>> round(chk.value("p_cycles"), 3), chk.significant
    (0.049, True)
    """
    o = _check_claim_iv(index, value, p_claimed, p_is_bound, test, n_cycles, duration_s, freq_a, freq_b, fs,
                        ratio, n_ratios, n_pairs, n_windows, n_surrogates, alpha, correction, decimals, ci,
                        ci_level)
    nb = _Notes()
    c = _claim_basics(nb, o)
    significant = _cycle_rayleigh(nb, o, c)
    lp_s = _sample_rayleigh(nb, o, c)
    _claimed_p(nb, o, c, lp_s)
    _surrogate_floor(nb, o)
    if o["p_claimed"] is not None and o["p_claimed"] <= o["alpha"] and o["value"] <= c.chance_mean:
        nb.flags.append("below_chance_called_significant")
        nb.verdicts.append(
            f"The {c.label} of {o['value']:g} is at or below the level independent rhythms reach by chance over "
            f"{c.n:.0f} cycles ({c.chance_mean:.3f}), yet it is called significant; the claim cannot be right as "
            "stated."
        )
    _precision(nb, o, c)
    _ratio_mismatch(nb, o)
    nb.verdicts.append(
        "Numbers alone cannot reveal filter-made locking or non-stationarity: ask for the data and re-test "
        "with surrogates pushed through the same pipeline (syncstats.claims.retest)."
    )
    nb.verdicts.append(_DISCLAIMER)
    table = pd.DataFrame(nb.rows, columns=["name", "value", "meaning"])
    table["value"] = table["value"].astype(float)
    params = {k: o[k] for k in o}
    return ClaimCheck(table=table, verdicts=tuple(nb.verdicts), flags=tuple(dict.fromkeys(nb.flags)),
                      assumptions=tuple(nb.assumptions), significant=bool(significant), params=params)


class _Notes:
    """What a claim check writes down: table rows, verdict sentences, flags, assumptions."""

    def __init__(self):
        self.rows: list[tuple[str, float, str]] = []
        self.verdicts: list[str] = []
        self.flags: list[str] = []
        self.assumptions: list[str] = []

    def add(self, name, val, meaning):
        self.rows.append((name, float(val) if val is not None else math.nan, meaning))


class _Basics(NamedTuple):
    n: float  # effective cycles
    n_samples: float | None
    g: float  # PLV equivalent over n cycles
    label: str
    chance_mean: float
    corr_name: str


def _claim_basics(nb, o) -> _Basics:
    """Effective cycles and samples, the PLV equivalent, and the chance level."""
    idx, v, m = o["index"], o["value"], o["search"]
    label = idx.upper()
    corr_name = "Bonferroni" if o["correction"] == "bonferroni" else "Šidák"
    if o["n_cycles"] is not None:
        n = o["n_cycles"]
        how_n = "given directly"
    else:
        n = o["duration_s"] * min(o["freq_a"], o["freq_b"])
        how_n = f"{o['duration_s']:g} s x {min(o['freq_a'], o['freq_b']):g} Hz (slower rhythm)"
        nb.assumptions.append("freq_a and freq_b are the mean frequencies over the analysed span.")
    nb.assumptions.append(
        f"One angle per cycle of the slower rhythm is independent: N_eff = {n:g} cycles ({how_n}); samples "
        "within a cycle are not independent (E[PLV^2] = 1/N_eff under independence, common practice)."
    )
    nb.add("n_cycles", n, "effective number of independent angles: cycles of the slower rhythm")
    n_samples = None
    if o["fs"] is not None and o["duration_s"] is not None:
        n_samples = o["duration_s"] * o["fs"]
    nb.add("n_samples", n_samples, "samples in the analysed span (the N a naive every-sample test uses)")
    nb.add("search_size", m, "tests searched: ratios x pairs x windows")
    nb.add("index_value", v, f"the reported {label}")
    g = v if idx == "plv" else _plv_from_ppc(v, n)
    if idx == "ppc":
        nb.assumptions.append(
            f"The PPC was computed from one angle per cycle; it equals a PLV of {g:.3f} over N_eff angles "
            "(PPC = (N PLV^2 - 1)/(N - 1), Vinck et al. 2010)."
        )
        nb.add("plv_equivalent", g, "PLV over N_eff angles that gives the reported PPC")
    cm, cs = chance_plv(n)
    if idx == "plv":
        chance_mean, chance_sd = cm, cs
        nb.add("chance_mean", cm, "mean PLV of independent rhythms over N_eff cycles, sqrt(pi/(4 N))")
        nb.add("chance_sd", cs, "SD of that PLV, sqrt((1 - pi/4)/N)")
    else:
        chance_mean, chance_sd = 0.0, 1.0 / (n - 1.0)
        nb.add("chance_mean", 0.0, "mean PPC of independent rhythms (PPC is unbiased)")
        nb.add("chance_sd", chance_sd, "SD of the PPC of independent rhythms, 1/(N - 1)")
    nb.verdicts.append(
        f"With about {n:.0f} independent cycles, independent rhythms give a {label} of about {chance_mean:.3f} "
        f"on average (SD {chance_sd:.3f}); the reported {v:g} is "
        + (f"{v / chance_mean:.1f} times that." if idx == "plv" and chance_mean > 0 else
           f"{(v - chance_mean) / chance_sd:.1f} SD above it.")
    )
    return _Basics(n, n_samples, g, label, chance_mean, corr_name)


def _cycle_rayleigh(nb, o, c: _Basics) -> bool:
    """The Rayleigh test with one angle per cycle, corrected for the search; returns
    whether it is significant."""
    idx, alpha, m, corr = o["index"], o["alpha"], o["search"], o["correction"]
    n, g, label, corr_name = c.n, c.g, c.label, c.corr_name
    lp_c = rayleigh_log_p(n, g)
    p_c = math.exp(lp_c)
    p_c_corr = _family_p(p_c, m, corr)
    level = _family_level(alpha, m, corr)
    significant = p_c_corr <= alpha
    nb.add("rayleigh_z_cycles", n * g * g, "Rayleigh z = N PLV^2 with N = cycles")
    nb.add("p_cycles", p_c, "Rayleigh p-value with N = cycles (Zar's approximation)")
    nb.add("p_cycles_corrected", p_c_corr, f"the same after a {corr_name} correction for the search size")
    g_crit1 = critical_plv(n, alpha)
    g_crit = critical_plv(n, level)
    if idx == "plv":
        nb.add("critical_index", g_crit1, f"smallest PLV significant at alpha = {alpha:g} with N cycles, one test")
        nb.add("critical_index_searched", g_crit,
               f"smallest PLV significant at alpha = {alpha:g} after the search correction")
    else:
        nb.add("critical_index", _ppc_from_plv(g_crit1, n) if math.isfinite(g_crit1) else math.inf,
               f"smallest PPC significant at alpha = {alpha:g} with N cycles, one test")
        nb.add("critical_index_searched", _ppc_from_plv(g_crit, n) if math.isfinite(g_crit) else math.inf,
               f"smallest PPC significant at alpha = {alpha:g} after the search correction")
    crit_show = g_crit if idx == "plv" else (_ppc_from_plv(g_crit, n) if math.isfinite(g_crit) else math.inf)
    search_words = "" if m == 1 else f" and {corr_name}-corrected for the {m} tests searched"
    head = (f"A Rayleigh test with one angle per cycle gives p = {_fmt_p(lp_c)}"
            + (f" ({_fmt_p(math.log(p_c_corr))} corrected for {m} tests)" if m > 1 else ""))
    if significant:
        nb.verdicts.append(
            head + f": the {label} does reject independence at alpha = {alpha:g}, provided the cycles are independent."
        )
        nb.verdicts.append(f"The smallest significant {label} for {n:.0f} cycles is {crit_show:.3f}{search_words}.")
    else:
        nb.verdicts.append(
            head + f": NOT significant at alpha = {alpha:g}; with {n:.0f} cycles the {label} must reach at least "
            + (f"{crit_show:.3f}" if math.isfinite(crit_show) else "an unattainable value")
            + search_words + "."
        )
        if o["p_claimed"] is not None and o["p_claimed"] <= alpha:
            nb.flags.append("not_significant_after_search")
    nb.assumptions.append("Rayleigh p-values use Zar's approximation (Zar 1999, Eq. 27.4).")
    nb.assumptions.append(
        f"The search of {m} test(s) is corrected by {corr_name} as if the tests were independent; "
        "that is conservative when ratios or windows overlap."
    )
    return bool(significant)


def _sample_rayleigh(nb, o, c: _Basics):
    """The naive every-sample Rayleigh test, for comparison; returns its log p (or None)."""
    if c.n_samples is None:
        nb.add("p_samples", None, "Rayleigh p-value if every sample counted (needs fs and duration_s)")
        nb.add("log10_p_samples", None, "log10 of that p-value")
        return None
    g_s = o["value"] if o["index"] == "plv" else _plv_from_ppc(o["value"], c.n_samples)
    lp_s = rayleigh_log_p(c.n_samples, g_s)
    nb.add("p_samples", math.exp(lp_s), "Rayleigh p-value if every sample counted as independent (naive test)")
    nb.add("log10_p_samples", lp_s / _LN10, "log10 of that p-value (it can be below the smallest double)")
    return lp_s


def _claimed_p(nb, o, c: _Basics, lp_s):
    """Which Rayleigh test the claimed p-value matches."""
    pc = o["p_claimed"]
    nb.add("p_claimed", pc, "the p-value the claim reports" + (" (an upper bound)" if o["p_is_bound"] else ""))
    if pc is None or o["test"] not in ("rayleigh", "rayleigh_samples", "rayleigh_cycles"):
        return
    lp_c = rayleigh_log_p(c.n, c.g)
    lpc = math.log(pc)
    if o["p_is_bound"]:
        cyc_ok = lp_c <= lpc + 1e-12
        smp_ok = lp_s is not None and lp_s <= lpc + 1e-12
    else:
        cyc_ok = abs(lp_c - lpc) <= abs(lp_s - lpc) if lp_s is not None else True
        smp_ok = lp_s is not None and not cyc_ok
    nb.add("log10_distance_cycles", abs(lp_c - lpc) / _LN10,
           "distance of the cycle-level p from the claimed p, in decades")
    if lp_s is not None:
        nb.add("log10_distance_samples", abs(lp_s - lpc) / _LN10,
               "distance of the every-sample p from the claimed p, in decades")
    rel = "<" if o["p_is_bound"] else "="
    if smp_ok and not cyc_ok:
        nb.flags.append("every_sample_rayleigh")
        nb.verdicts.append(
            f"The claimed p {rel} {pc:g} is what a Rayleigh test over all "
            f"{c.n_samples:.0f} samples gives (p = {_fmt_p(lp_s)}), not one over the {c.n:.0f} cycles "
            f"(p = {_fmt_p(lp_c)}): the claim most likely treated autocorrelated samples as independent, "
            "which makes the p-value far too small."
        )
    elif o["test"] == "rayleigh_samples":
        nb.verdicts.append(
            "The claim used an every-sample Rayleigh test; samples of a phase difference are autocorrelated, "
            "so its p-value is not valid whatever its size; the cycle-level p above is the relevant one."
        )
    elif not cyc_ok:
        nb.verdicts.append(
            f"The claimed p {rel} {pc:g} is smaller than a cycle-level Rayleigh test "
            f"gives (p = {_fmt_p(lp_c)}); ask how it was computed."
        )


def _surrogate_floor(nb, o):
    """A claimed surrogate p-value against the floor 1/(S + 1)."""
    S, pc = o["n_surrogates"], o["p_claimed"]
    if S is not None:
        floor = 1.0 / (S + 1.0)
        nb.add("p_floor_surrogates", floor, "smallest p-value S surrogates can give, 1/(S + 1)")
        if pc is not None and (pc < floor or (o["p_is_bound"] and pc <= floor)):
            nb.flags.append("p_below_surrogate_floor")
            nb.verdicts.append(
                f"The claimed p {'<' if o['p_is_bound'] else '='} {pc:g} is impossible with {S} surrogates: the "
                f"smallest surrogate p-value is 1/(S + 1) = {floor:.2g} (Phipson & Smyth 2010); it needs at least "
                f"{math.ceil(1.0 / pc - 1.0)} surrogates, or p was counted as k/S (which can reach 0)."
            )
    elif pc is not None and o["test"] == "surrogate":
        need = math.ceil(1.0 / pc - 1.0) + (1 if o["p_is_bound"] else 0)
        nb.add("surrogates_needed", need, "fewest surrogates that can give the claimed p, 1/p - 1")
        nb.verdicts.append(f"A surrogate p-value of {pc:g} needs at least {need} surrogates; check the count used.")


def _precision(nb, o, c: _Basics):
    """Decimals and interval width against what N_eff cycles support."""
    n, g, label = c.n, c.g, c.label
    if o["index"] == "plv":
        se = plv_standard_error(g, n)
    else:
        se = max(2.0 * g * (1.0 - g * g) / math.sqrt(2.0 * n), 1.0 / (n - 1.0))
    nb.add("standard_error", se, f"standard error of the {label} for N_eff cycles")
    if o["decimals"] is not None:
        nb.add("decimals_reported", o["decimals"], "decimals of the reported value")
        supported = max(0, math.floor(-math.log10(se)))
        nb.add("decimals_supported", supported, "decimals the standard error supports (last digit >= SE/10 kept)")
        if 10.0 ** (-o["decimals"]) < se / 10.0:
            nb.flags.append("precision_beyond_cycles")
            nb.verdicts.append(
                f"The value is reported to {o['decimals']} decimals, but with {n:.0f} cycles its standard error is "
                f"about {se:.2g}: at most {supported + 1} decimal(s) carry information."
            )
    if o["ci"] is not None:
        zq = float(_norm_ppf(0.5 + o["ci_level"] / 2.0))
        width = o["ci"][1] - o["ci"][0]
        expected = 2.0 * zq * se
        nb.add("ci_width_reported", width, "width of the reported confidence interval")
        nb.add("ci_width_expected", expected, f"width a {o['ci_level']:.0%} interval has with N_eff cycles, 2 z SE")
        if width < 0.5 * expected:
            nb.flags.append("ci_narrower_than_cycles_allow")
            implied = n * (expected / max(width, 1e-12)) ** 2
            nb.add("n_implied_by_ci", implied, "number of independent angles that interval width implies")
            nb.verdicts.append(
                f"The reported interval is {width:.3g} wide; {n:.0f} cycles allow no less than about {expected:.2g}. "
                f"It implies about {implied:.0f} independent angles, as if samples rather than cycles were resampled "
                "(a bootstrap must resample whole cycles)."
            )


def _ratio_mismatch(nb, o):
    """Whether the stated mean frequencies are in the claimed ratio."""
    if o["freq_a"] is None or o["freq_b"] is None or o["duration_s"] is None:
        return
    p, q = o["ratio"]
    det = q * o["freq_a"] - p * o["freq_b"]
    turns = abs(det) * o["duration_s"]
    nb.add("ratio_detuning_hz", det, f"q f_A - p f_B: drift rate of psi for the claimed {p}:{q} ratio")
    nb.add("ratio_drift_turns", turns, "full turns psi drifts over the record at these mean frequencies")
    if turns >= 1.0:
        nb.flags.append("ratio_mismatch")
        nb.verdicts.append(
            f"The stated frequencies ({o['freq_a']:g} Hz and {o['freq_b']:g} Hz, ratio "
            f"{o['freq_a'] / o['freq_b']:.2f}) are not in the claimed {p}:{q} ratio: if they are the mean "
            f"frequencies, psi drifts through about {turns:.0f} full turns over the record, which rules out "
            f"{p}:{q} locking over the whole record (locking can at most hold in epochs)."
        )
        nb.assumptions.append("The frequencies are not rounded so coarsely that the mismatch disappears.")


def _norm_ppf(x):
    from scipy.stats import norm

    return norm.ppf(x)


# ============================================================================ retest
def _retest_iv(signals, fs, pair, ratio, claimed_test, window, n_surrogates, claimed_n_surrogates, surrogate,
               claimed_surrogate, alpha, options):
    if claimed_test not in RETEST_TESTS:
        raise SyncstatsInputError(
            f"retest: claimed_test must be one of {', '.join(RETEST_TESTS)}; got {claimed_test!r}; "
            "name the test the claim used."
        )
    try:
        a, b = pair
    except (TypeError, ValueError):
        raise SyncstatsInputError(
            f"retest: pair must be two rhythm names (name_a, name_b); got {pair!r}; pass e.g. pair=('heart', 'breath')."
        ) from None
    pq = _checks.parse_ratio(ratio)
    if window is not None:
        try:
            w0, w1 = (float(x) for x in window)
        except (TypeError, ValueError):
            raise SyncstatsInputError(
                f"retest: window must be (start_s, end_s) in seconds; got {window!r}; pass e.g. window=(0, 300)."
            ) from None
        if not (math.isfinite(w0) and math.isfinite(w1) and 0 <= w0 < w1):
            raise SyncstatsInputError(
                f"retest: window must be (start_s, end_s) with 0 <= start_s < end_s; got {window!r}; fix the span."
            )
        window = (w0, w1)
    n_surrogates = _checks.check_int(n_surrogates, "retest: n_surrogates", low=1,
                                     hint="Use e.g. 199 or 999 (S + 1 a multiple of 1/alpha).")
    if claimed_n_surrogates is not None:
        claimed_n_surrogates = _checks.check_int(claimed_n_surrogates, "retest: claimed_n_surrogates", low=1)
    alpha = _checks.check_float(alpha, "retest: alpha", low=0.0, high=1.0, open_low=True, open_high=True)
    if options is not None and not isinstance(options, dict):
        raise SyncstatsInputError(
            f"retest: options must be a dict of further syncstats.analyze keywords; got {type(options).__name__}."
        )
    options = dict(options or {})
    reserved = {"pairs", "ratios", "measures", "surrogate", "n_surrogates", "correction", "alpha", "rng", "windows"}
    clash = sorted(reserved & set(options))
    if clash:
        raise SyncstatsInputError(
            f"retest: options may not set {', '.join(clash)}; use retest's own parameters for them."
        )
    return (str(a), str(b)), pq, window, n_surrogates, claimed_n_surrogates, alpha, options


def retest(signals, fs=None, *, pair, ratio, claimed_test, window=None, n_surrogates=199,
           surrogate="iaaft", claimed_surrogate=None, claimed_n_surrogates=None, alpha=0.05, rng=None,
           events=None, options=None) -> RetestResult:
    """Run the claimed test and the calibrated surrogate test on the same data.

    Parameters
    ----------
    signals, fs
        As for :func:`syncstats.analyze` (mapping name -> array, DataFrame, ...).
    pair : (name_a, name_b)
        The pair the claim is about.
    ratio : (p, q) or "p:q"
        The claimed ratio (A makes p cycles while B makes q).
    claimed_test : {"rayleigh_samples", "rayleigh_cycles", "surrogate"}
        The test as the claim ran it: a Rayleigh test over every sample (naive), over
        one angle per cycle of the slower rhythm, or a surrogate test with
        ``claimed_surrogate`` and ``claimed_n_surrogates``.
    window : (start_s, end_s), optional
        The analysed span; default the whole record.
    n_surrogates : int
        Surrogates for the calibrated test (default 199).
    surrogate : str
        Null method for the calibrated test (default "iaaft", pipeline-faithful).
    claimed_surrogate, claimed_n_surrogates
        For ``claimed_test="surrogate"``: the method and count the claim used
        (defaults: ``surrogate`` and ``n_surrogates``).
    alpha : float
        Level for the ``significant`` column (p <= alpha).
    rng : int or numpy.random.Generator
        Seeds both surrogate runs.
    events : mapping, optional
        Event times (s), passed to ``analyze``.
    options : dict, optional
        Further ``analyze`` keywords (bands, phase_method, executor, ...).

    Returns
    -------
    RetestResult

    Notes
    -----
    The Rayleigh rows use the PLV that ``analyze`` computes over the analysed span and
    Zar's approximation (:func:`rayleigh_log_p`) with N = samples in that span
    (naive) or N = the ``n_cycles`` column (cycles of the slower rhythm).
    """
    from .api import analyze  # the api layer sits above this module's numeric core

    (a, b), (p, q), window, S, S_claim, alpha, options = _retest_iv(
        signals, fs, pair, ratio, claimed_test, window, n_surrogates, claimed_n_surrogates, surrogate,
        claimed_surrogate, alpha, options)
    seeds = _retest_seeds(rng)  # calibrated run, claimed surrogate run
    options.setdefault("n_bootstrap", 0)
    common = dict(pairs=[(a, b)], ratios=[(p, q)], measures=("plv",), correction="none", alpha=alpha,
                  windows=[window] if window is not None else None, events=events, **options)
    res = analyze(signals, fs, surrogate=surrogate, n_surrogates=S, rng=np.random.default_rng(seeds[0]), **common)
    row = _pair_row(res.table, a, b)
    value, n_cyc, n_samp = _row_counts(res, row)

    if claimed_test in ("rayleigh_samples", "rayleigh_cycles"):
        claimed = _claimed_rayleigh_row(claimed_test, n_samp, n_cyc, value, alpha)
    else:
        meth = claimed_surrogate or surrogate
        Sc = S_claim or S
        if meth == surrogate and Sc == S:
            resc = res
        else:
            resc = analyze(signals, fs, surrogate=meth, n_surrogates=Sc, rng=np.random.default_rng(seeds[1]),
                           **common)
        claimed = _claimed_surrogate_row(_pair_row(resc.table, a, b), meth, Sc, alpha)
    rows = [claimed, _calibrated_row(row, value, surrogate, S, alpha)]
    table = pd.DataFrame(rows)
    sentences = tuple(r["explanation"] + f" p = {r['p_value']:.3g}." for r in rows) + (_verdict(rows, value, alpha),)
    return RetestResult(table=table, sentences=sentences, analysis=res)


def _retest_seeds(rng):
    """Two independent seed sequences from ``rng``: the calibrated run's and the claimed surrogate run's."""
    if isinstance(rng, np.random.Generator):
        seq = np.random.SeedSequence(int(rng.integers(0, 2**63 - 1)))
    else:
        seq = np.random.SeedSequence(rng)
    return seq.spawn(2)


def _row_counts(res, row):
    """The row's PLV, its cycles of the slower rhythm and the samples of its window."""
    value, n_cyc = float(row["value"]), float(row["n_cycles"])
    t = np.asarray(res.time_s, dtype=float)
    w0, w1 = float(row["window_start_s"]), float(row["window_end_s"])
    n_samp = float(np.count_nonzero((t >= w0 - 1e-9) & (t <= w1 + 1e-9)))
    return value, n_cyc, n_samp


def _claimed_rayleigh_row(claimed_test, n_samp, n_cyc, value, alpha):
    """The claimed row for a Rayleigh test over every sample or over one angle per cycle."""
    nn = n_samp if claimed_test == "rayleigh_samples" else n_cyc
    lp = rayleigh_log_p(nn, value)
    kind = "samples" if claimed_test == "rayleigh_samples" else "cycles"
    expl = (
        f"Rayleigh test over {nn:.0f} samples: it treats autocorrelated samples as independent, so "
        "its p-value is far too small (a false positive is almost guaranteed for similar rhythms)."
        if kind == "samples" else
        f"Rayleigh test over {nn:.0f} cycles: one angle per cycle is roughly independent, but it ignores "
        "what the filter and each rhythm's own regularity contribute."
    )
    return dict(role="claimed", test=f"rayleigh_{kind}", n=nn, n_kind=kind, value=value,
                null_mean=chance_plv(nn)[0], p_value=math.exp(lp), log10_p=lp / _LN10,
                significant=bool(lp <= math.log(alpha)), explanation=expl)


def _claimed_surrogate_row(rc, meth, Sc, alpha):
    """The claimed row for a surrogate test with the claim's method and count."""
    pv = float(rc["p_value"])
    return dict(role="claimed", test=f"surrogate_{meth}", n=float(Sc), n_kind="surrogates",
                value=float(rc["value"]), null_mean=float(rc["null_mean"]), p_value=pv,
                log10_p=math.log10(pv), significant=bool(pv <= alpha + 1e-12),
                explanation=(f"Surrogate test as claimed ({meth}, {Sc} surrogates): its smallest possible "
                             f"p-value is {1 / (Sc + 1):.2g}."))


def _calibrated_row(row, value, surrogate, S, alpha):
    """The calibrated row: the surrogate test through the same filter and phase pipeline."""
    pv = float(row["p_value"])
    return dict(role="calibrated", test=f"surrogate_{surrogate}", n=float(S), n_kind="surrogates",
                value=value, null_mean=float(row["null_mean"]), p_value=pv, log10_p=math.log10(pv),
                significant=bool(pv <= alpha + 1e-12),
                explanation=(f"Surrogate test ({surrogate}, {S} surrogates through the same filter and phase "
                             f"pipeline): independent rhythms with the same spectra give PLV about "
                             f"{float(row['null_mean']):.3f}, and p = (1 + k)/(1 + S)."))


def _verdict(rows, value, alpha):
    """One sentence on whether the claimed and the calibrated test agree, and why not."""
    c, k = rows[0], rows[1]
    if c["significant"] == k["significant"]:
        return (f"Both tests {'reject' if k['significant'] else 'do not reject'} independence at alpha = {alpha:g}; "
                f"the p-values differ by {abs(c['log10_p'] - k['log10_p']):.1f} decades.")
    if c["significant"]:
        return (f"The claimed test rejects independence but the calibrated one does not: the PLV of {value:.3f} is "
                f"within what independent rhythms reach (null mean {k['null_mean']:.3f}).")
    return ("The calibrated test rejects independence but the claimed one does not: the claimed test is less "
            "powerful here (fewer effective angles or fewer surrogates).")

def _pair_row(table, a, b):
    sel = table[(table["signal_a"] == a) & (table["signal_b"] == b) & (table["measure"] == "plv")]
    if sel.empty:
        raise SyncstatsInputError(
            f"retest: the analysis has no row for the pair ({a}, {b}); check the names in pair= against the signals."
        )
    return sel.iloc[0]
