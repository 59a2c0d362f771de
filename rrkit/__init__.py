"""rrkit: beat-to-beat interval processing done right.

Read RR-interval, R-peak, ECG and annotation files; correct artifacts with an audit of every
beat; compute HRV metrics per analysis window; build daily tables with baselines; measure the
agreement of device-reported values with recomputed ones.

rrkit is not a medical device and makes no diagnosis.
"""

from ._version import __version__
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
from .recording import ReadInfo, Recording

__all__ = [
    "AgreementResult",
    "DefinitionSearch",
    "ReferenceDefinition",
    "BaselineSettings",
    "CleanResult",
    "CleanSettings",
    "CleanSummary",
    "DailySettings",
    "InputError",
    "QualityWarning",
    "ReadInfo",
    "Recording",
    "RrkitWarning",
    "__version__",
    "agreement",
    "reference_table",
    "search_definitions",
    "clean",
    "daily_table",
    "read",
    "run_daily",
    "write_rr",
]
