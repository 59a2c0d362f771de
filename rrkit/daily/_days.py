"""Day selection: one recording per subject per local calendar day, ``missing`` rows for the rest.

Local dates and clock times follow rrkit's one time-zone policy (`rrkit._time.localize`).
"""

from __future__ import annotations

import datetime as dt
from typing import Any

import numpy as np

from .._time import as_date, localize
from ..errors import InputError
from ._settings import DAILY_METRICS, DailySettings
from ._settings import clock as parse_clock

__all__ = ["select_days"]

_TRUE = {"1", "true", "yes", "y", "x"}


def select_days(
    per_recording,
    *,
    settings: DailySettings | None = None,
    first_date: dt.date | str | None = None,
    last_date: dt.date | str | None = None,
):
    """Pick one recording per subject per local day and add ``missing`` rows for empty days.

    See `daily_table` for the input table and `DailySettings.pick` for the rule. Recordings
    whose file failed (``failed`` True) are never picked; a day with only such files is
    ``missing`` with the reason.

    Returns
    -------
    pandas.DataFrame
        One row per subject and date (no baseline columns yet), sorted by subject and date.
    """
    import pandas as pd

    s = settings or DailySettings()
    df = per_recording
    for col in ("subject", "start"):
        if col not in df.columns:
            raise InputError(f"the per-recording table needs a {col!r} column; got "
                             f"{list(df.columns)!r}")
    extra_cols = [str(c) for c in df.columns if c not in _KNOWN_INPUT]
    records = df.to_dict("records")
    d = s.days
    wake0 = parse_clock("wake_start", d.wake_start)
    wake1 = parse_clock("wake_end", d.wake_end)
    groups: dict[tuple[str, dt.date], list[dict]] = {}
    for i, r in enumerate(records):
        src = r.get("source")
        r["source"] = f"row {i}" if _isna(src) else src
        r["failed"] = _truthy(r.get("failed"))
        if _isna(r.get("quality")):
            r["quality"] = "ok"
        day, clock = _local_start(r["start"], d.tz, r["source"])
        r["_clock"] = clock
        r["start_time"] = None if clock is None else _start_stamp(r["start"], d.tz)
        r["subject"] = str(r["subject"])
        groups.setdefault((r["subject"], day), []).append(r)
    if groups:
        lo = (min(d for _, d in groups) if first_date is None
              else as_date("first_date", first_date))
        hi = (max(d for _, d in groups) if last_date is None
              else as_date("last_date", last_date))
        if hi < lo:
            raise InputError(f"first_date {lo} is after last_date {hi}")
        n_days = (hi - lo).days + 1
    else:
        lo, n_days = None, 0
    subjects = sorted({subj for subj, _ in groups})
    out_rows = []
    for subj in subjects:
        for k in range(n_days):
            day = lo + dt.timedelta(days=k)
            out_rows.append(_pick(subj, day, groups.get((subj, day)), s, wake0, wake1,
                                  extra_cols))
    cols = ["subject", "date", "source", "start_time", "window", "n_beats", "artifact_pct",
            "corrected_pct", "quality", "quality_reason", *DAILY_METRICS, "n_recordings",
            "caution", *extra_cols]
    table = pd.DataFrame(out_rows, columns=cols)
    table["n_beats"] = pd.array([None if _isna(v) else int(v) for v in table["n_beats"]],
                                dtype="Int64")
    table["n_recordings"] = table["n_recordings"].astype("int64")
    for k in ("artifact_pct", "corrected_pct", *DAILY_METRICS):
        table[k] = pd.to_numeric(table[k]).astype("float64")
    return table


_KNOWN_INPUT = {"subject", "start", "source", "window", "n_beats", "artifact_pct",
                "corrected_pct", "quality", "quality_reason", "marked", "failed", "notes",
                "start_s", "end_s", "start_time", "error", "date", "n_recordings", "caution",
                *DAILY_METRICS}
_COPY = ("source", "start_time", "window", "n_beats", "artifact_pct", "corrected_pct",
         "quality", "quality_reason", *DAILY_METRICS, "caution")


def _isna(v) -> bool:
    if v is None:
        return True
    try:
        return bool(v != v)  # NaN, pandas.NA raise or give NA
    except TypeError:
        return True


def _pick(subj, day, group, s: DailySettings, wake0, wake1, extra_cols):
    base: dict[str, Any] = {"subject": subj, "date": day, "source": None, "start_time": None,
                            "window": None, "n_beats": None, "artifact_pct": np.nan,
                            "corrected_pct": np.nan, "quality": "missing",
                            "quality_reason": "no recording", "n_recordings": 0,
                            "caution": ""}
    base.update(dict.fromkeys(DAILY_METRICS, np.nan))
    base.update(dict.fromkeys(extra_cols))
    if not group:
        return base
    base["n_recordings"] = len(group)
    if s.days.pick == "marked":
        cand = [r for r in group if _truthy(r.get("marked"))]
        if not cand:
            base["quality_reason"] = (f"no recording marked as the morning one ({len(group)} "
                                      "that day)")
            return base
    else:
        cand = [r for r in group if r["_clock"] is None or wake0 <= r["_clock"] < wake1]
        if not cand:
            base["quality_reason"] = (f"no recording starts between {s.days.wake_start} and "
                                      f"{s.days.wake_end} ({len(group)} outside)")
            return base

    def rank(r) -> tuple:
        usable = 2 if r["failed"] else (1 if r["quality"] == "rejected" else 0)
        clock = r["_clock"]
        return (usable, clock is None, clock or dt.time(0), str(r["source"]))

    best = min(cand, key=rank)
    if best["failed"]:
        n = len(cand)
        base["quality_reason"] = (f"the day's recording could not be used ({n} file"
                                  f"{'s' if n > 1 else ''} failed, see errors.csv)")
        base["source"] = str(best["source"])
        return base
    for k in (*_COPY, *extra_cols):
        if k in best:
            base[k] = best[k]
    for k in ("quality_reason", "caution"):
        base[k] = "" if _isna(base.get(k)) else str(base[k])
    return base


def _truthy(v) -> bool:
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if v is None or (isinstance(v, float) and np.isnan(v)):
        return False
    return str(v).strip().lower() in _TRUE


def _local_start(v, tz: str, source) -> tuple[dt.date, dt.time | None]:
    """(local date, local clock time or None when only the date is known)."""
    import pandas as pd

    if isinstance(v, dt.date) and not isinstance(v, dt.datetime):
        return v, None
    if isinstance(v, str):
        text = v.strip()
        if len(text) == 10:
            return as_date(f"start of {source}", text), None
        try:
            v = dt.datetime.fromisoformat(text)
        except ValueError:
            raise InputError(f"start {v!r} of {source} is not an ISO date or time") from None
    if isinstance(v, pd.Timestamp):
        v = v.to_pydatetime()
    if not isinstance(v, dt.datetime):
        raise InputError(f"start of {source} must be a datetime; got {v!r}")
    local = localize(v, tz, what=f"start of {source}")
    return local.date(), local.time().replace(tzinfo=None)


def _start_stamp(v, tz):
    import pandas as pd

    if isinstance(v, str):
        v = dt.datetime.fromisoformat(v.strip())
    if isinstance(v, pd.Timestamp):
        v = v.to_pydatetime()
    return localize(v, tz).isoformat()
