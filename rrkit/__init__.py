"""rrkit: beat-to-beat interval processing done right.

Read RR-interval, R-peak, ECG and annotation files; correct artifacts with an audit of every
beat; compute HRV metrics per analysis window; build daily tables with baselines; measure the
agreement of device-reported values with recomputed ones.

rrkit is not a medical device and makes no diagnosis.
"""

from . import covariates, model, windows
from ._version import __version__
from .agreement import (
    AgreementResult,
    DefinitionSearch,
    ReferenceDefinition,
    agreement,
    reference_table,
    search_definitions,
)
from .analysis import analyze
from .batch import run_daily
from .clean import CleanResult, CleanSettings, CleanSummary, clean
from .daily import BaselineSettings, DailySettings, daily_table
from .errors import InputError, QualityWarning, RrkitWarning
from .io import read, write_rr
from .metrics import Bands, MetricsResult, MetricsSettings, Spectrum, metrics, spectrum
from .recording import ReadInfo, Recording
from .windows import MORNING, Window, parse_window, resolve_windows

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
    "analyze",
    "metrics",
    "parse_window",
    "resolve_windows",
    "spectrum",
    "windows",
    # daily tables and batch runs
    "BaselineSettings",
    "DailySettings",
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
]
