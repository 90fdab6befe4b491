"""syncstats: are recorded rhythms really phase-synchronized?

Research software, not a medical device.

>>> import syncstats
>>> result = syncstats.analyze(signals, fs=250.0, ratios=[(1, 1)], n_surrogates=999, rng=1)  # doctest: +SKIP
>>> result.table  # doctest: +SKIP

The public names load their modules on first use (PEP 562), so ``import syncstats`` and
the command's start are light: the command sets its Ctrl-C handler before numpy, scipy
and pandas load.
"""
import importlib

from ._errors import SyncstatsInputError, SyncstatsWarning

#: public name -> module that holds it (None: the name is a submodule)
_LAZY = {
    "analyze": ".api",
    "AnalysisResult": ".api",
    "check_claim": ".claims",
    "compare_nulls": ".compare",
    "retest": ".claims",
    "power_curve": ".power",
    "required_length": ".power",
    "COLUMNS": ".results",
    "analyze_study": ".study",
    "StudyResult": ".study",
    "make_demo_study": ".study",
    "locking_epochs": ".epochs",
    "EpochResult": ".epochs",
    "claims": None,
    "power": None,
    "study": None,
}


def __getattr__(name):
    if name == "__version__":
        try:
            from importlib.metadata import version

            value = version("syncstats")
        except Exception:  # pragma: no cover
            value = "0+unknown"
    elif name in _LAZY:
        where = _LAZY[name]
        module = importlib.import_module(where or "." + name, __name__)
        value = module if where is None else getattr(module, name)
    else:
        raise AttributeError(f"module 'syncstats' has no attribute {name!r}")
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(_LAZY) | {"__version__"})


__all__ = [
    "analyze",
    "AnalysisResult",
    "COLUMNS",
    "SyncstatsInputError",
    "SyncstatsWarning",
    "__version__",
    "check_claim",
    "compare_nulls",
    "retest",
    "power_curve",
    "required_length",
    "analyze_study",
    "StudyResult",
    "make_demo_study",
    "locking_epochs",
    "EpochResult",
    "claims",
    "power",
    "study",
]
