"""The window table: windows x (cleaning audit, quality verdict, metrics) -> one row per window.

This module is the table boundary: `rrkit.metrics` stays free of pandas. `window_rows` is the
one place where a recording (or its `CleanResult`) and a window spec become rows; `analyze`
turns them into a `pandas.DataFrame`, the daily table (`rrkit.daily.measure_recording`) picks
its morning row from them, and the agreement search (`rrkit.reference_table`) aggregates them
into nightly reference values.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from datetime import timedelta
from typing import Any

import numpy as np

from ._breathing import window_breathing_hz
from ._plain import fields_plain
from ._validation import check_option, check_range
from .clean import CleanResult, CleanSettings
from .errors import InputError
from .metrics import (
    ALL_KEYS,
    FREQUENCY_KEYS,
    NONLINEAR_KEYS,
    TIME_KEYS,
    MetricsSettings,
    merge_settings,
    metrics_many,
)
from .recording import Recording
from .windows import Whole, Window, parse_window, resolve_windows

__all__ = ["NOTE_SEPARATOR", "ROW_FIELDS", "WINDOW_COLUMNS", "QualityRules", "analyze",
           "window_rows"]

log = logging.getLogger("rrkit")

#: Joins the notes of a window in the ``notes`` column (every table of rrkit).
NOTE_SEPARATOR = " | "

#: The columns of `analyze` before the metric keys, in order.
WINDOW_COLUMNS = (
    "source", "subject", "window", "start_s", "end_s", "start_time", "end_time",
    "artifact_pct", "corrected_pct", "quality", "quality_reason", "notes",
)

#: Every field of a `window_rows` row before the metric keys (`WINDOW_COLUMNS`, the number of
#: beats in the window and the cleaning's caution on its own).
ROW_FIELDS = (*WINDOW_COLUMNS[:7], "n_beats", *WINDOW_COLUMNS[7:], "caution")

_DOMAIN_KEYS = {"time": TIME_KEYS, "frequency": FREQUENCY_KEYS, "nonlinear": NONLINEAR_KEYS}


@dataclass(frozen=True, slots=True)
class QualityRules:
    """When a window is ``rejected`` on top of the cleaning's ``ok`` / ``flagged`` verdict.

    The cleaning flags a window from ``CleanSettings.max_corrected_pct`` (5 %); these rules
    decide that a window is not usable at all. `rrkit.analyze` applies none by default (its
    rows carry the cleaning verdict); the daily table applies these defaults.

    Parameters
    ----------
    reject_corrected_pct : float
        A window with more corrected intervals than this share (%) is ``rejected`` (default
        20 %, rrkit's choice; the cleaning flags from 5 %).
    min_coverage : float
        Share of the requested window the recording must cover, else ``rejected`` (default
        0.9, rrkit's choice).
    require_finite : tuple of str
        Metric keys that must be finite, else ``rejected`` (default ``("ln_rmssd",)``: the
        daily baselines are built on it).
    """

    reject_corrected_pct: float = 20.0
    min_coverage: float = 0.9
    require_finite: tuple[str, ...] = ("ln_rmssd",)

    def __post_init__(self) -> None:
        check_range("reject_corrected_pct", self.reject_corrected_pct, low=0.0, high=100.0,
                    unit="%")
        check_range("min_coverage", self.min_coverage, low=0.0, high=1.0)
        keys = ((self.require_finite,) if isinstance(self.require_finite, str)
                else tuple(self.require_finite))
        for k in keys:
            check_option("require_finite", k, ALL_KEYS)
        object.__setattr__(self, "require_finite", keys)

    def to_plain(self) -> dict[str, Any]:
        """Plain dict (JSON, provenance)."""
        return fields_plain(self)


def window_rows(
    recording,
    *,
    windows=None,
    clean: str | CleanSettings | None = "drr",
    settings: MetricsSettings | None = None,
    quality: QualityRules | None = None,
    progress: bool = False,
) -> list[dict[str, Any]]:
    """The rows of the window table: one dict per window, the one path from windows to rows.

    Parameters
    ----------
    recording : Recording or CleanResult
        A recording, or a result of `rrkit.clean` (used as it is; ``clean`` is then ignored).
    windows : window spec, str, Window or a list of these, optional
        Default: the whole recording. Each item of a list is resolved on its own, so that an
        item without a window inside the recording still gets its row (window ``"none"``).
    clean : {"drr", "median", "mad", "none"}, CleanSettings or None
        As in `analyze`.
    settings : MetricsSettings, optional
        Every metric setting (default `MetricsSettings()`).
    quality : QualityRules, optional
        Rejection rules on top of the cleaning verdict (default None: none). With rules, a spec
        that cannot be resolved (a clock window on a recording without a start time, a wall time
        skipped by a daylight-saving change) gives a ``rejected`` row with the reason instead of
        raising.
    progress : bool
        Progress bar over the windows.

    Returns
    -------
    list of dict
        Keys `ROW_FIELDS` then every metric key of ``settings.domains``. ``notes`` joins the
        window's notes (clipping, stable stretch, the cleaning's caution, the metrics' notes)
        with `NOTE_SEPARATOR`.

    Notes
    -----
    The breathing rate of a window (for ``resp_hz`` and the breathing note) is the one given
    with it (an events table's ``breathing_hz`` or ``breaths_per_min``), else, for a recording
    read from an ECG, the one measured from its R-wave amplitude at read time
    (``ReadInfo.extra["breathing_series"]``, `rrkit._breathing`); else none, and the spectrum
    alone claims no breathing.
    """
    s = settings if settings is not None else MetricsSettings()
    if not isinstance(s, MetricsSettings):
        raise InputError(f"settings must be a MetricsSettings; got {type(s).__name__}")
    cr, rec = _cleaned(recording, clean)
    spec = Whole() if windows is None else windows
    if isinstance(spec, str):
        spec = parse_window(spec)
    items = list(spec) if isinstance(spec, (list, tuple)) else [spec]
    plan: list[Window | _NoWindow] = []
    for item in items:
        try:
            wins = resolve_windows(item, rec, clean_result=cr)
        except InputError as exc:
            if quality is None:
                raise
            plan.append(_NoWindow(item, str(exc)))
            continue
        plan += wins if wins else [_NoWindow(item)]
    keys = [k for d in s.domains for k in _DOMAIN_KEYS[d]]
    iterator = plan
    if progress and len(plan) > 1:
        from tqdm.auto import tqdm

        iterator = tqdm(plan, desc=f"analyze {rec.source or ''}".strip(), unit="window",
                        leave=False)
    audits = [None if isinstance(w, _NoWindow) else _audit(rec, cr, w) for w in iterator]
    found = [i for i, a in enumerate(audits) if a is not None]
    results = _measure([audits[i][0] for i in found], s,
                       [_breathing_hz(rec, plan[i]) for i in found])
    by_index = dict(zip(found, results, strict=True))
    rows = []
    for i, w in enumerate(plan):
        if isinstance(w, _NoWindow):
            rows.append(_empty_row(rec, w, keys, clean_checked=cr is not None,
                                   quality=quality))
        else:
            rows.append(_row(rec, w, audits[i][1], by_index[i], keys, quality))
    return rows


def _breathing_hz(rec: Recording, w: Window) -> float | None:
    """The window's breathing rate: the one given with the window (an events table) always
    wins; else the one measured from the ECG at read time (`rrkit._breathing`), if any."""
    if w.breathing_hz is not None:
        return w.breathing_hz
    return window_breathing_hz(rec.info.extra, w.start_s, w.end_s)


def _measure(parts, s: MetricsSettings, breathing_hz):
    """The metrics of many windows: the one call into the many-window engine."""
    return metrics_many(parts, s, breathing_hz=breathing_hz)


def analyze(
    recording,
    *,
    windows=None,
    clean: str | CleanSettings | None = "drr",
    psd: str | None = None,
    bands=None,
    domains=None,
    settings: MetricsSettings | None = None,
    progress: bool = False,
):
    """HRV metrics per analysis window, one table row per window.

    The recording is cleaned once as a whole (`rrkit.clean`), then each window takes the audit
    and the corrected intervals of its own beats (`CleanResult.window`), so corrections near a
    window edge use the beats on both sides. The rows are those of `window_rows`.

    Parameters
    ----------
    recording : Recording or CleanResult
        A recording, or a result of `rrkit.clean` (used as it is; ``clean`` is then ignored).
    windows : window spec, str, Window or a list of these, optional
        Which stretches to analyse (see `rrkit.windows`): ``rrkit.windows.MORNING``,
        ``"slide:5m"``, ``ClockTime("04:00", "07:00", tz="Europe/Paris")``... Default: the whole
        recording.
    clean : {"drr", "median", "mad", "none"}, CleanSettings or None
        Cleaning method (default ``"drr"``, Lipponen & Tarvainen 2019) or full settings. None
        analyses the intervals as they are (``quality`` is then ``"unchecked"``).
    psd : {"welch", "lomb", "ar"}, optional
        Spectral estimator (default ``"welch"``).
    bands : Bands or mapping, optional
        Band edges in Hz (Task Force 1996 by default).
    domains : sequence of str, optional
        Metric domains (default all three).
    settings : MetricsSettings, optional
        Every other metric setting.
    progress : bool
        Show a progress bar over the windows (tqdm; off by default in the library).

    Returns
    -------
    pandas.DataFrame
        One row per window with the columns `WINDOW_COLUMNS` (``start_time``/``end_time`` are
        absolute when the recording has a start time, else missing; ``notes`` joins every
        note with ``" | "``, `NOTE_SEPARATOR`), then every metric key of the requested
        domains. ``df.attrs`` holds
        ``metrics_settings`` and ``clean_settings`` (plain dicts), ``rrkit_version`` and
        ``interval_name`` (``"RR"``, or ``"pulse-to-pulse"`` for pulse-derived input). A spec
        (or an item of a list of specs) that yields no window inside the recording gives one row
        of NaN, window ``"none"``, saying so.

    Examples
    --------
    >>> import rrkit
    >>> from rrkit.simulate import simulate_rr
    >>> df = rrkit.analyze(simulate_rr(duration_s=630, seed=1), windows="slide:5m")
    >>> df["window"].tolist()
    ['slide-001', 'slide-002']
    """
    import pandas as pd

    s = merge_settings(settings, domains, psd, bands)
    cr, rec = _cleaned(recording, clean)
    rows = window_rows(cr if cr is not None else rec, windows=windows, clean=None, settings=s,
                       progress=progress)
    keys = [k for d in s.domains for k in _DOMAIN_KEYS[d]]
    for r in rows:
        if r["window"] == "none" and not np.isfinite(r["start_s"]):
            log.warning("analyze %s: %s", rec.source or "recording", r["notes"])
    df = pd.DataFrame(rows, columns=list(WINDOW_COLUMNS) + keys)
    for col in ("start_time", "end_time"):
        if rec.start is not None:
            df[col] = pd.to_datetime(df[col])
    df.attrs["metrics_settings"] = s.to_dict()
    df.attrs["clean_settings"] = None if cr is None else dict(cr.settings.to_dict())
    df.attrs["rrkit_version"] = s.version
    df.attrs["interval_name"] = rec.info.interval_name
    return df


class _NoWindow:
    """Marks a window spec that yields no window inside the recording (or cannot be resolved)."""

    __slots__ = ("error", "spec")

    def __init__(self, spec, error: str | None = None) -> None:
        self.spec = spec
        self.error = error


def _cleaned(recording, clean) -> tuple[CleanResult | None, Recording]:
    if isinstance(recording, CleanResult):
        return recording, recording.input
    if not isinstance(recording, Recording):
        raise InputError(f"recording must be a Recording or a CleanResult; got "
                         f"{type(recording).__name__}")
    if clean is None:
        return None, recording
    from .clean import clean as _clean

    if isinstance(clean, CleanSettings):
        return _clean(recording, settings=clean), recording
    if isinstance(clean, str):
        return _clean(recording, method=clean), recording
    raise InputError(f"clean must be a method name ('drr', 'median', 'mad', 'none'), a "
                     f"CleanSettings or None; got {clean!r}")


def _abs_time(rec: Recording, t_s: float):
    if rec.start is None:
        return None
    return rec.start + timedelta(seconds=float(t_s))


def _audit(rec: Recording, cr: CleanResult | None, w: Window):
    """The window's corrected recording and its audit fields."""
    notes: list[str] = []
    if w.clipped:
        a, b = w.extra["requested_s"]
        notes.append(f"window clipped to the recording: asked {a:.1f}-{b:.1f} s, "
                     f"got {w.start_s:.1f}-{w.end_s:.1f} s")
    if "stable" in w.extra:
        notes.append(str(w.extra["stable"]))
    if cr is not None:
        sub = cr.window(w.start_s, w.end_s)
        summ = sub.summary
        if summ.caution:
            notes.append(f"caution: {summ.caution}")
        return sub.recording, (summ.artifact_pct, summ.corrected_pct, summ.quality,
                               summ.quality_reason, notes, int(sub.input.n_beats),
                               summ.caution or "")
    nan = float("nan")
    view = rec.slice(w.start_s, w.end_s)
    return view, (nan, nan, "unchecked", "not cleaned", notes, view.n_beats, "")


_SHOWN = {"ln_rmssd": "ln-RMSSD"}


def _verdict(rec: Recording, w: Window, quality: str, reason, corrected_pct: float, m,
             rules: QualityRules) -> tuple[str, str]:
    """The cleaning verdict with the rejection rules applied (the daily table's rules)."""
    reason = reason or ""
    t0 = float(rec.beat_times_s[0]) if rec.n_beats else 0.0
    t1 = float(rec.beat_times_s[-1]) if rec.n_beats else 0.0
    req = w.extra.get("requested_s")
    req_start, req_end = (float(req[0]), float(req[1])) if req else (w.start_s, w.end_s)
    length = float(req_end - req_start)
    covered = max(0.0, min(t1, req_end) - max(t0, req_start))
    if length <= 0 or covered < rules.min_coverage * length:
        return "rejected", (f"the recording lasts {t1 - t0:.0f} s and covers {covered:.0f} s "
                            f"of the {length:.0f}-s window from {req_start:g} to {req_end:g} s "
                            f"(needs {100 * rules.min_coverage:.0f} %)")
    if corrected_pct > rules.reject_corrected_pct:
        return "rejected", (f"{corrected_pct:.1f} % of intervals corrected "
                            f"(limit {rules.reject_corrected_pct:g} %)")
    for k in rules.require_finite:
        if not np.isfinite(m.get(k, np.nan)):
            return "rejected", f"{_SHOWN.get(k, k)} is undefined in this window"
    return quality, reason


def _row(rec: Recording, w: Window, audit, m, keys: list[str],
         rules: QualityRules | None) -> dict[str, Any]:
    artifact, corrected, quality, reason, notes, n_beats, caution = audit
    if rules is not None:
        quality, reason = _verdict(rec, w, quality, reason, corrected, m, rules)
    row = {
        "source": rec.source, "subject": rec.subject, "window": str(w.label),
        "start_s": float(w.start_s), "end_s": float(w.end_s),
        "start_time": _abs_time(rec, w.start_s), "end_time": _abs_time(rec, w.end_s),
        "n_beats": n_beats, "artifact_pct": artifact, "corrected_pct": corrected,
        "quality": quality, "quality_reason": reason,
        "notes": NOTE_SEPARATOR.join(notes + m.notes), "caution": caution,
    }
    for k in keys:
        row[k] = m[k]
    return row


def _empty_row(rec: Recording, nw: _NoWindow, keys: list[str], *, clean_checked: bool,
               quality: QualityRules | None) -> dict[str, Any]:
    spec = nw.spec
    desc = spec if isinstance(spec, str) else repr(spec)
    if nw.error is not None:
        why = nw.error
    elif rec.n_beats < 2:
        why = "the recording has fewer than two beats"
    else:
        why = (f"no window of {desc!s} falls inside the recording "
               f"({rec.beat_times_s[0]:.1f}-{rec.beat_times_s[-1]:.1f} s)")
    row = {
        "source": rec.source, "subject": rec.subject, "window": "none",
        "start_s": np.nan, "end_s": np.nan, "start_time": None, "end_time": None,
        "n_beats": 0, "artifact_pct": np.nan, "corrected_pct": np.nan,
        "quality": "flagged" if clean_checked else "unchecked",
        "quality_reason": "no window", "notes": why, "caution": "",
    }
    if quality is not None:
        row.update(window=str(getattr(spec, "label", None) or "window"), quality="rejected",
                   quality_reason=nw.error or "the recording holds no analysis window")
    row.update(dict.fromkeys(keys, np.nan))
    return row
