"""rrkit: beat-to-beat interval processing done right.

Read RR-interval, R-peak, ECG and annotation files; correct artifacts with an audit of every
beat; compute HRV metrics per analysis window; build daily tables with baselines; measure the
agreement of device-reported values with recomputed ones.

rrkit is not a medical device and makes no diagnosis.
"""

import sys as _sys
import types as _types

from ._version import __version__
from .errors import InputError, QualityWarning, RrkitWarning

# Every other public name is imported on first use (PEP 562 module __getattr__), so that
# `import rrkit` and `rrkit --version` do not load scipy, pandas or the pipeline.
_LAZY = {
    "windows": ("windows", None),
    "covariates": ("covariates", None),
    "model": ("model", None),
    "AgreementResult": ("agreement", "AgreementResult"),
    "DefinitionSearch": ("agreement", "DefinitionSearch"),
    "ReferenceDefinition": ("agreement", "ReferenceDefinition"),
    "agreement": ("agreement", "agreement"),
    "reference_table": ("agreement", "reference_table"),
    "search_definitions": ("agreement", "search_definitions"),
    "analyze": ("analysis", "analyze"),
    "QualityRules": ("analysis", "QualityRules"),
    "window_rows": ("analysis", "window_rows"),
    "run_daily": ("batch", "run_daily"),
    "CleanResult": ("clean", "CleanResult"),
    "CleanSettings": ("clean", "CleanSettings"),
    "CleanSummary": ("clean", "CleanSummary"),
    "clean": ("clean", "clean"),
    "BaselineSettings": ("daily", "BaselineSettings"),
    "DailySettings": ("daily", "DailySettings"),
    "daily_table": ("daily", "daily_table"),
    "DaySelection": ("daily", "DaySelection"),
    "read": ("io", "read"),
    "write_rr": ("io", "write_rr"),
    "Bands": ("metrics", "Bands"),
    "MetricsResult": ("metrics", "MetricsResult"),
    "MetricsSettings": ("metrics", "MetricsSettings"),
    "Spectrum": ("metrics", "Spectrum"),
    "metrics": ("metrics", "metrics"),
    "spectrum": ("metrics", "spectrum"),
    "Alignment": ("pairing", "Alignment"),
    "BeatPairs": ("pairing", "BeatPairs"),
    "DeviceComparison": ("pairing", "DeviceComparison"),
    "align": ("pairing", "align"),
    "compare_devices": ("pairing", "compare_devices"),
    "pair_beats": ("pairing", "pair_beats"),
    "ReadInfo": ("recording", "ReadInfo"),
    "Recording": ("recording", "Recording"),
    "MORNING": ("windows", "MORNING"),
    "Window": ("windows", "Window"),
    "parse_window": ("windows", "parse_window"),
    "resolve_windows": ("windows", "resolve_windows"),
}


def __getattr__(name: str):
    spec = _LAZY.get(name)
    if spec is None:
        raise AttributeError(f"module 'rrkit' has no attribute {name!r}")
    import importlib

    module = importlib.import_module(f".{spec[0]}", __name__)
    value = module if spec[1] is None else getattr(module, spec[1])
    # a submodule import may already have bound the name (rrkit.metrics, rrkit.clean...) to the
    # submodule itself: the public name is the function or class
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))


#: Public functions named like the subpackage that holds them: ``rrkit.metrics`` is the
#: function, as it was when every name was imported up front.
_SHADOWED = frozenset({"agreement", "clean", "metrics"})


class _Package(_types.ModuleType):
    """The rrkit module: when the import system binds a submodule named like a public
    function (``import rrkit.metrics``), the attribute stays the function."""

    def __setattr__(self, name, value):
        if name in _SHADOWED and isinstance(value, _types.ModuleType):
            value = getattr(value, name)
        super().__setattr__(name, value)


_sys.modules[__name__].__class__ = _Package


__all__ = [
    # model and errors
    "InputError",
    "QualityWarning",
    "ReadInfo",
    "Recording",
    "RrkitWarning",
    "__version__",
    # reading
    "read",
    "write_rr",
    # cleaning
    "CleanResult",
    "CleanSettings",
    "CleanSummary",
    "clean",
    # windows and metrics
    "MORNING",
    "Bands",
    "MetricsResult",
    "MetricsSettings",
    "Spectrum",
    "Window",
    "QualityRules",
    "analyze",
    "metrics",
    "parse_window",
    "resolve_windows",
    "spectrum",
    "window_rows",
    "windows",
    # daily tables and batch runs
    "BaselineSettings",
    "DailySettings",
    "DaySelection",
    "daily_table",
    "run_daily",
    # covariates and models of the daily table
    "covariates",
    "model",
    # agreement
    "AgreementResult",
    "DefinitionSearch",
    "ReferenceDefinition",
    "agreement",
    "reference_table",
    "search_definitions",
    # simultaneous recordings
    "Alignment",
    "BeatPairs",
    "DeviceComparison",
    "align",
    "compare_devices",
    "pair_beats",
]
