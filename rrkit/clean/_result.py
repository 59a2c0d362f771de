"""The result of cleaning: labels for every input interval, the corrected recording, the audit.

This module defines the containers and the audit arithmetic (`summarize`), which
`CleanResult.window` reuses to give every analysis window its own verdict.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from ..recording import Recording

__all__ = ["CAUTION_TEXT", "LABELS", "CleanResult", "CleanSummary", "summarize"]

#: Beat classes, in the order tables list them. ``implausible`` is rrkit's own class for values
#: outside the physiological range; the others are the published classes of Lipponen & Tarvainen
#: (2019).
LABELS = ("normal", "ectopic", "missed", "extra", "long", "short", "implausible")

#: The caution attached to a summary when premature beats are frequent.
CAUTION_TEXT = (
    "{n} premature beats ({rate:.0f} per hour, above {limit:g} per hour). rrkit is not a "
    "medical device and does not diagnose: frequent premature beats are a matter for a "
    "clinician; please have such recordings reviewed by qualified staff."
)


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
    n_premature : int
        Premature (or misplaced) beats behind the ``ectopic`` intervals (each such beat labels
        two intervals); ``ectopic_per_hour`` counts these.
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
    n_premature: int = 0

    def __post_init__(self) -> None:
        object.__setattr__(self, "counts", MappingProxyType(dict(self.counts)))

    def to_dict(self) -> dict[str, Any]:
        """Flat dict: ``n_<label>`` counts plus the scalar fields."""
        out: dict[str, Any] = {"n_intervals": self.n_intervals}
        out.update({f"n_{k}": int(v) for k, v in self.counts.items()})
        out.update(artifact_pct=self.artifact_pct, corrected_pct=self.corrected_pct,
                   longest_artifact_run=self.longest_artifact_run,
                   ectopic_per_hour=self.ectopic_per_hour, n_premature=self.n_premature,
                   quality=self.quality,
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
    extra : Mapping
        Anything else the run records: ``passes`` (classification passes run),
        ``converged`` (the last pass found nothing more), ``duration_change_s`` (corrected minus
        input duration, s).
    ectopic_beats : numpy.ndarray of int
        Input beats judged premature (or misplaced); each ends one ``ectopic`` interval and
        starts the next. ``summary.ectopic_per_hour`` counts these.
    """

    input: Recording
    labels: np.ndarray
    recording: Recording
    origin: np.ndarray
    changed: np.ndarray
    summary: CleanSummary
    settings: Any = None
    extra: Mapping[str, Any] = field(default_factory=dict)
    ectopic_beats: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))

    def __post_init__(self) -> None:
        object.__setattr__(self, "extra", MappingProxyType(dict(self.extra)))
        for name in ("labels", "origin", "changed", "ectopic_beats"):
            arr = np.array(getattr(self, name), copy=True)
            arr.flags.writeable = False
            object.__setattr__(self, name, arr)

    def artifact_beats(self) -> np.ndarray:
        """How many artifact beats each input interval stands for (float, one per interval).

        The one counting rule in beats: a premature beat labels two intervals (the early one
        and the pause after it) and an extra beat splits one true interval in two, so each of
        those intervals counts one half; a missed-beat interval counts the beats put back into
        it (split into k parts: k - 1); a long, short or implausible interval counts one; a
        normal interval none.
        """
        labels = np.asarray(self.labels)
        out = np.zeros(labels.size)
        out[(labels == "ectopic") | (labels == "extra")] = 0.5
        out[(labels == "long") | (labels == "short") | (labels == "implausible")] = 1.0
        missed = labels == "missed"
        if missed.any():
            origin = np.asarray(self.origin)
            parts = (np.bincount(origin, minlength=labels.size) if origin.size
                     else np.ones(labels.size))
            out[missed] = np.maximum(parts[missed] - 1, 1)
        return out

    def window(self, start_s: float | None, end_s: float | None) -> CleanResult:
        """The part of this result whose input beats lie in ``[start_s, end_s]`` (seconds).

        Times are on the input recording's clock, as in `Recording.slice`. Labels and
        ``changed`` are those of the input intervals in the window; the corrected recording holds
        the corrected intervals that come from them (found through ``origin``, so it lines up
        with the input even where a correction moved later beats); the summary is recomputed with
        the same settings, so ``artifact_pct``, ``corrected_pct``, ``quality`` and the caution
        are those of the window.

        Parameters
        ----------
        start_s, end_s : float or None
            Window edges in seconds (None = from the start / to the end).

        Returns
        -------
        CleanResult
        """
        t = self.input.beat_times_s
        lo = 0 if start_s is None else int(np.searchsorted(t, start_s - 1e-9, side="left"))
        hi = t.size if end_s is None else int(np.searchsorted(t, end_s + 1e-9, side="right"))
        if hi - lo < 2:
            lo = hi = 0
        # parts of already validated recordings are valid: no second round of checks
        inp = self.input._take(lo, hi)
        i_lo, i_hi = lo, max(hi - 1, lo)  # input intervals [i_lo, i_hi)
        c_lo = int(np.searchsorted(self.origin, i_lo, side="left"))
        c_hi = int(np.searchsorted(self.origin, i_hi, side="left"))
        rec = self.recording._take(c_lo, c_hi + 1) if c_hi > c_lo else \
            self.recording._take(0, 0)
        origin = self.origin[c_lo:c_hi] - i_lo
        labels = self.labels[i_lo:i_hi]
        changed = self.changed[i_lo:i_hi]
        eb = self.ectopic_beats
        eb = eb[(eb >= lo) & (eb < max(hi, lo))] - lo
        summary = summarize(labels, changed, inp.gaps, inp.rr_ms, eb.size, self.settings)
        extra = dict(self.extra)
        extra["duration_change_s"] = rec.duration_s - inp.duration_s
        return CleanResult(inp, labels, rec, origin, changed, summary, self.settings, extra, eb)

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


def summarize(labels: np.ndarray, changed: np.ndarray, gaps: np.ndarray, rr_ms: np.ndarray,
              n_ectopic_beats: int, settings: Any) -> CleanSummary:
    """The audit of a set of labelled input intervals.

    Parameters
    ----------
    labels : numpy.ndarray of str
        One label per input interval.
    changed : numpy.ndarray of bool
        Which input intervals were changed or excluded.
    gaps : numpy.ndarray of bool
        Input gaps (not counted anywhere).
    rr_ms : numpy.ndarray
        Input intervals (ms), for the recording time behind ``ectopic_per_hour``.
    n_ectopic_beats : int
        Premature beats in these intervals.
    settings : CleanSettings
        Supplies ``max_corrected_pct``, ``caution_ectopic_per_hour`` and ``caution_min_ectopic``.

    Notes
    -----
    ``artifact_pct = 100 * (non-normal intervals) / n`` and ``corrected_pct = 100 * (changed
    intervals) / n``, with ``n`` the input intervals that are not gaps;
    ``ectopic_per_hour = n_ectopic_beats / (sum of those intervals in hours)``. The window is
    ``flagged`` when ``corrected_pct > max_corrected_pct`` or when it has no usable interval.
    """
    labels = np.asarray(labels)
    gaps = np.asarray(gaps, bool)
    changed = np.asarray(changed, bool)
    rr_ms = np.asarray(rr_ms)
    any_gap = bool(gaps.any())
    usable = ~gaps
    # non-normal usable intervals; gaps break a run and are counted nowhere
    bad = labels != "normal"
    if any_gap:
        bad &= usable
    n = int(np.count_nonzero(usable))
    n_bad = int(np.count_nonzero(bad))
    # every count from the (few) non-normal labels; the rest are normal
    odd = Counter(labels[bad].tolist()) if n_bad else {}
    counts = {name: int(odd.get(name, 0)) for name in LABELS}
    counts["normal"] = n - n_bad
    n_changed = int(np.count_nonzero(changed[usable] if any_gap else changed))
    artifact_pct = 100.0 * n_bad / n if n else float("nan")
    corrected_pct = 100.0 * n_changed / n if n else float("nan")
    # longest run of consecutive non-normal intervals
    if n_bad:
        padded = np.zeros(bad.size + 2, dtype=bool)
        padded[1:-1] = bad
        edges = np.flatnonzero(padded[1:] != padded[:-1])  # run starts and ends, alternating
        longest = int((edges[1::2] - edges[::2]).max())
    else:
        longest = 0
    hours = float(np.sum(rr_ms[usable] if any_gap else rr_ms)) / 3.6e6
    per_hour = n_ectopic_beats / hours if hours > 0 else 0.0
    max_pct = getattr(settings, "max_corrected_pct", 5.0)
    if n == 0:
        quality, reason = "flagged", "no usable intervals"
    elif corrected_pct > max_pct:
        quality = "flagged"
        reason = f"{corrected_pct:.1f}% of intervals corrected (more than {max_pct:g}%)"
    else:
        quality, reason = "ok", ""
    caution = None
    limit = getattr(settings, "caution_ectopic_per_hour", 30.0)
    if per_hour > limit and n_ectopic_beats >= getattr(settings, "caution_min_ectopic", 1):
        caution = CAUTION_TEXT.format(n=n_ectopic_beats, rate=per_hour, limit=limit)
    return CleanSummary(n, counts, artifact_pct, corrected_pct, longest, per_hour, quality,
                        reason, caution, int(n_ectopic_beats))
