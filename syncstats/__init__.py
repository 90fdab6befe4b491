"""syncstats: are recorded rhythms really phase-synchronized?

Research software, not a medical device.

>>> import syncstats
>>> result = syncstats.analyze(signals, fs=250.0, ratios=[(1, 1)], n_surrogates=999, rng=1)  # doctest: +SKIP
>>> result.table  # doctest: +SKIP
"""
from ._errors import SyncstatsInputError, SyncstatsWarning
from . import claims, power
from .api import AnalysisResult, analyze
from .claims import check_claim, retest
from .power import power_curve, required_length
from .results import COLUMNS

try:
    from importlib.metadata import version as _v

    __version__ = _v("syncstats")
except Exception:  # pragma: no cover
    __version__ = "0+unknown"

__all__ = [
    "analyze",
    "AnalysisResult",
    "COLUMNS",
    "SyncstatsInputError",
    "SyncstatsWarning",
    "__version__",
    "check_claim",
    "retest",
    "power_curve",
    "required_length",
    "claims",
    "power",
]
