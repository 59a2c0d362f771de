"""Artifact detection and correction.

Public entry point: `rrkit.clean`, configured by `CleanSettings`. Containers: `CleanResult`,
`CleanSummary`; the beat classes are listed in `LABELS`.
"""

from ._clean import clean
from ._result import LABELS, CleanResult, CleanSummary
from ._settings import METHODS, STRATEGIES, CleanSettings

__all__ = ["LABELS", "METHODS", "STRATEGIES", "CleanResult", "CleanSettings", "CleanSummary",
           "clean"]
