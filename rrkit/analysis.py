"""Windows x (cleaning audit, metrics) -> one table row per window.

This module is the table boundary: `rrkit.metrics` stays free of pandas, and `analyze` turns its
results into a `pandas.DataFrame` with the window, the cleaning summary of that window and
every metric key.
"""

from __future__ import annotations

import dataclasses
import logging
from datetime import timedelta
from typing import Any

import numpy as np

from .clean import CleanResult, CleanSettings
from .errors import InputError
from .metrics import (
    FREQUENCY_KEYS,
    NONLINEAR_KEYS,
    TIME_KEYS,
    MetricsSettings,
    merge_settings,
    metrics_many,
)
from .recording import Recording
from .windows import Whole, Window, parse_window, resolve_windows

__all__ = ["NOTE_SEPARATOR", "WINDOW_COLUMNS", "analyze"]

log = logging.getLogger("rrkit")

#: Joins the notes of a window in the ``notes`` column.
NOTE_SEPARATOR = " | "

#: The columns before the metric keys, in order.
WINDOW_COLUMNS = (
    "source", "subject", "window", "start_s", "end_s", "start_time", "end_time",
    "artifact_pct", "corrected_pct", "quality", "quality_reason", "notes",
)

_DOMAIN_KEYS = {"time": TIME_KEYS, "frequency": FREQUENCY_KEYS, "nonlinear": NONLINEAR_KEYS}


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
    window edge use the beats on both sides.

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
        ``metrics_settings`` and ``clean_settings`` (plain dicts) and ``rrkit_version``. A spec
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
    spec = Whole() if windows is None else windows
    if isinstance(spec, str):
        spec = parse_window(spec)
    items = list(spec) if isinstance(spec, (list, tuple)) else [spec]
    # each item resolved on its own, so that an item without a window still gets its row
    plan: list[Window | Any] = []
    for item in items:
        wins = resolve_windows(item, rec, clean_result=cr)
        plan += wins if wins else [_NoWindow(item)]
    keys = [k for d in s.domains for k in _DOMAIN_KEYS[d]]
    rows = []
    iterator = plan
    if progress and len(plan) > 1:
        from tqdm.auto import tqdm

        iterator = tqdm(plan, desc=f"analyze {rec.source or ''}".strip(), unit="window",
                        leave=False)
    audits = [None if isinstance(w, _NoWindow) else _audit(rec, cr, w) for w in iterator]
    found = [i for i, a in enumerate(audits) if a is not None]
    results = metrics_many([audits[i][0] for i in found], s,
                           breathing_hz=[plan[i].breathing_hz for i in found])
    by_index = dict(zip(found, results, strict=True))
    for i, w in enumerate(plan):
        if isinstance(w, _NoWindow):
            rows.append(_empty_row(rec, w.spec, keys, clean_checked=cr is not None))
        else:
            rows.append(_row(rec, w, audits[i][1], by_index[i], keys))
    df = pd.DataFrame(rows, columns=list(WINDOW_COLUMNS) + keys)
    for col in ("start_time", "end_time"):
        if rec.start is not None:
            df[col] = pd.to_datetime(df[col])
    df.attrs["metrics_settings"] = s.to_dict()
    df.attrs["clean_settings"] = _settings_dict(None if cr is None else cr.settings)
    df.attrs["rrkit_version"] = s.version
    return df


class _NoWindow:
    """Marks a window spec that yields no window inside the recording."""

    __slots__ = ("spec",)

    def __init__(self, spec) -> None:
        self.spec = spec


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
                               summ.quality_reason, notes)
    nan = float("nan")
    return rec.slice(w.start_s, w.end_s), (nan, nan, "unchecked", "not cleaned", notes)


def _row(rec: Recording, w: Window, audit, m, keys: list[str]) -> dict[str, Any]:
    artifact, corrected, quality, reason, notes = audit
    row = {
        "source": rec.source, "subject": rec.subject, "window": w.label,
        "start_s": w.start_s, "end_s": w.end_s,
        "start_time": _abs_time(rec, w.start_s), "end_time": _abs_time(rec, w.end_s),
        "artifact_pct": artifact, "corrected_pct": corrected, "quality": quality,
        "quality_reason": reason, "notes": NOTE_SEPARATOR.join(notes + m.notes),
    }
    for k in keys:
        row[k] = m[k]
    return row


def _empty_row(rec: Recording, spec, keys: list[str], *, clean_checked: bool) -> dict[str, Any]:
    desc = spec if isinstance(spec, str) else repr(spec)
    if rec.n_beats < 2:
        why = "the recording has fewer than two beats"
    else:
        why = (f"no window of {desc!s} falls inside the recording "
               f"({rec.beat_times_s[0]:.1f}-{rec.beat_times_s[-1]:.1f} s)")
    log.warning("analyze %s: %s", rec.source or "recording", why)
    row = {
        "source": rec.source, "subject": rec.subject, "window": "none",
        "start_s": np.nan, "end_s": np.nan, "start_time": None, "end_time": None,
        "artifact_pct": np.nan, "corrected_pct": np.nan,
        "quality": "flagged" if clean_checked else "unchecked",
        "quality_reason": "no window", "notes": why,
    }
    row.update(dict.fromkeys(keys, np.nan))
    return row


def _settings_dict(settings) -> dict[str, Any] | None:
    if settings is None:
        return None
    if hasattr(settings, "to_dict"):
        return dict(settings.to_dict())
    if dataclasses.is_dataclass(settings):
        return dataclasses.asdict(settings)
    return {"settings": repr(settings)}

