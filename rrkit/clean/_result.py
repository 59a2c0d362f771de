"""The result of cleaning: labels for every input interval, the corrected recording, the audit.

This module only defines the containers; the methods that fill them live beside it.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from ..recording import Recording

__all__ = ["LABELS", "CleanSummary", "CleanResult"]

#: Beat classes, in the order tables list them. ``implausible`` is rrkit's own class for values
#: outside the physiological range; the others are the published classes of Lipponen & Tarvainen
#: (2019).
LABELS = ("normal", "ectopic", "missed", "extra", "long", "short", "implausible")


@dataclass(frozen=True, slots=True)
class CleanSummary:
    """The audit of one cleaning run.

    Attributes
    ----------
    n_intervals : int
        Input intervals (gaps excluded).
    counts : Mapping[str, int]
        Input intervals per label (every label in `LABELS` present, zeros included).
    artifact_pct : float
        Share of input intervals not labelled ``normal``, in %.
    corrected_pct : float
        Share of input intervals whose value was changed or excluded by the correction, in %
        (an ectopic beat changes the interval before it and the compensatory one after it; both
        count).
    longest_artifact_run : int
        Longest run of consecutive non-normal input intervals.
    ectopic_per_hour : float
        Ectopic beats per hour of recording.
    quality : str
        ``"ok"`` or ``"flagged"``.
    quality_reason : str
        Why the verdict was reached (empty when ``ok``).
    caution : str or None
        Text shown when premature beats are frequent (rrkit does not diagnose).
    """

    n_intervals: int
    counts: Mapping[str, int]
    artifact_pct: float
    corrected_pct: float
    longest_artifact_run: int
    ectopic_per_hour: float
    quality: str
    quality_reason: str = ""
    caution: str | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "counts", MappingProxyType(dict(self.counts)))

    def to_dict(self) -> dict[str, Any]:
        """Flat dict: ``n_<label>`` counts plus the scalar fields."""
        out: dict[str, Any] = {"n_intervals": self.n_intervals}
        out.update({f"n_{k}": int(v) for k, v in self.counts.items()})
        out.update(artifact_pct=self.artifact_pct, corrected_pct=self.corrected_pct,
                   longest_artifact_run=self.longest_artifact_run,
                   ectopic_per_hour=self.ectopic_per_hour, quality=self.quality,
                   quality_reason=self.quality_reason, caution=self.caution)
        return out


@dataclass(frozen=True, slots=True, eq=False)
class CleanResult:
    """What `rrkit.clean` returns.

    Attributes
    ----------
    input : Recording
        The recording as given.
    labels : numpy.ndarray of str, shape (input.n_intervals,)
        One label per input interval, from `LABELS` (gap intervals are labelled ``normal`` and
        stay gaps).
    recording : Recording
        The corrected recording. Beat times agree with its intervals; its total duration equals
        the input's within one interval. With ``strategy="drop"`` the excluded intervals are
        kept as gaps, so no successive difference is formed across them.
    origin : numpy.ndarray of int, shape (recording.n_intervals,)
        For every corrected interval, the index of the input interval it comes from (a split
        missed beat gives several corrected intervals with the same origin; a merged extra beat
        gives one corrected interval whose origin is the first of the merged pair).
    changed : numpy.ndarray of bool, shape (input.n_intervals,)
        True for input intervals whose value was changed or excluded.
    summary : CleanSummary
        Counts, shares and the quality verdict.
    settings : Any
        The frozen settings object that produced this result (method, thresholds, strategy).
    """

    input: Recording
    labels: np.ndarray
    recording: Recording
    origin: np.ndarray
    changed: np.ndarray
    summary: CleanSummary
    settings: Any = None
    extra: Mapping[str, Any] = field(default_factory=dict)

    def to_frame(self):
        """One row per input interval: ``index, time_s, rr_ms, label, rr_corrected_ms``.

        ``rr_corrected_ms`` is the corrected value of that interval; where a missed beat was
        split it is the mean of the parts, where an extra beat was merged the merged interval
        stands on the first of the pair and NaN on the second, and where an interval was dropped
        it is NaN.
        """
        import pandas as pd

        n = self.input.n_intervals
        corrected = np.full(n, np.nan)
        rec = self.recording
        usable = ~rec.gaps
        if self.origin.size:
            sums = np.bincount(self.origin[usable], weights=rec.rr_ms[usable], minlength=n)
            cnt = np.bincount(self.origin[usable], minlength=n)
            with np.errstate(invalid="ignore", divide="ignore"):
                corrected = np.where(cnt > 0, sums / np.maximum(cnt, 1), np.nan)
        return pd.DataFrame({
            "index": np.arange(n),
            "time_s": self.input.interval_times_s,
            "rr_ms": self.input.rr_ms,
            "label": self.labels,
            "rr_corrected_ms": corrected,
        })
