"""rrkit: beat-to-beat interval processing done right.

Read RR-interval, R-peak, ECG and annotation files; correct artifacts with an audit of every
beat; compute HRV metrics per analysis window; build daily tables with baselines; measure the
agreement of device-reported values with recomputed ones.

rrkit is not a medical device and makes no diagnosis.
"""

from ._version import __version__
from .analysis import analyze
from .agreement import (
    AgreementResult,
    DefinitionSearch,
    ReferenceDefinition,
    agreement,
    reference_table,
    search_definitions,
)
from .clean import CleanResult, CleanSettings, CleanSummary, clean
from .daily import BaselineSettings, DailySettings, daily_table
from .batch import run_daily
from .errors import InputError, QualityWarning, RrkitWarning
from .io import read, write_rr
from . import windows
from .metrics import Bands, MetricsResult, MetricsSettings, Spectrum, metrics, spectrum
from .recording import ReadInfo, Recording
from .windows import MORNING, Window, parse_window, resolve_windows

__all__ = [
    "AgreementResult",
    "DefinitionSearch",
    "ReferenceDefinition",
    "Bands",
    "BaselineSettings",
    "CleanResult",
    "CleanSettings",
    "CleanSummary",
    "DailySettings",
    "InputError",
    "MORNING",
    "MetricsResult",
    "MetricsSettings",
    "QualityWarning",
    "ReadInfo",
    "Recording",
    "RrkitWarning",
    "Spectrum",
    "Window",
    "__version__",
    "agreement",
    "analyze",
    "reference_table",
    "search_definitions",
    "clean",
    "daily_table",
    "metrics",
    "parse_window",
    "read",
    "resolve_windows",
    "run_daily",
    "spectrum",
    "windows",
    "write_rr",
]
