"""Artifact detection and correction (issue: artifact stage).

Public entry point: `rrkit.clean`. Containers: `CleanResult`, `CleanSummary`.
"""

from ._result import LABELS, CleanResult, CleanSummary

__all__ = ["LABELS", "CleanResult", "CleanSummary"]
