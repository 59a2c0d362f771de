"""One recording -> its window rows (`measure_recording`); recordings -> the daily table."""

from __future__ import annotations

import datetime as dt
import os
from collections.abc import Iterable
from typing import Any

from ..analysis import window_rows
from ..errors import InputError
from ..metrics import ALL_KEYS
from ..recording import Recording
from ._baselines import add_baselines
from ._days import select_days
from ._settings import DailySettings

__all__ = ["daily_table", "measure_recording"]

#: The fields of a daily window row, in order (a selection of the window table's fields).
_ROW_FIELDS = ("window", "start_s", "end_s", "n_beats", "artifact_pct", "corrected_pct",
               "quality", "quality_reason", "caution", "notes")


def measure_recording(recording: Recording, *, settings: DailySettings | None = None):
    """Clean a recording, resolve the analysis windows and compute the metrics of each.

    The rows are those of the window table (`rrkit.analysis.window_rows`) with the settings'
    cleaning, metrics and quality rules, as they are.

    Parameters
    ----------
    recording : Recording
    settings : DailySettings, optional

    Returns
    -------
    rows : list of dict
        One per window: ``window, start_s, end_s, n_beats, artifact_pct, corrected_pct,
        quality, quality_reason, caution, notes`` and every metric key. When no window can be
        formed (recording too short), one row with quality ``rejected`` and NaN metrics.
    clean_result : CleanResult
        The cleaning of the whole recording (for the HDF5 store).
    """
    from ..clean import clean

    s = settings or DailySettings()
    cr = clean(recording, settings=s.cleaning)
    rows = window_rows(cr, windows=s.window_spec(), settings=s.metrics, quality=s.quality)
    keys = [k for k in ALL_KEYS if k in rows[0]]
    out: list[dict[str, Any]] = []
    for r in rows:
        row = {k: r[k] for k in _ROW_FIELDS}
        row.update({k: float(r[k]) for k in keys})
        row["quality_reason"] = row["quality_reason"] or ""
        out.append(row)
    return out, cr


def daily_table(
    recordings,
    *,
    settings: DailySettings | None = None,
    first_date: dt.date | str | None = None,
    last_date: dt.date | str | None = None,
):
    """One row per subject per local calendar day, with baselines and flags.

    Parameters
    ----------
    recordings : iterable of Recording, or pandas.DataFrame
        Either recordings with ``subject`` and ``start`` set (each is measured here with
        `measure_recording`), or a table with one row per recording as `rrkit.batch` builds it:
        ``subject``, ``start`` (datetime; naive = local in ``settings.tz``), ``source``,
        ``window``, ``n_beats``, ``artifact_pct``, ``quality``, ``quality_reason`` and the
        metrics; optional ``marked`` (for ``pick="marked"``), ``failed`` (bool) and extra text
        columns (``position``, ``protocol``), which are carried over.
    settings : DailySettings, optional
    first_date, last_date : date or ISO string, optional
        The span of the table (default: the first and last date of any subject). Every subject
        gets every date of the span; days without a usable recording have quality ``missing``.

    Returns
    -------
    pandas.DataFrame
        Columns ``subject, date, source, start_time, window, n_beats, artifact_pct,
        corrected_pct, quality, quality_reason``, the metrics of `DAILY_METRICS`, the baseline
        columns of `add_baselines`, then ``n_recordings`` and any extra columns.

    Examples
    --------
    >>> import datetime as dt, rrkit
    >>> from rrkit.simulate import simulate_rr
    >>> day = dt.datetime(2026, 3, 2, 7, 0, tzinfo=dt.timezone.utc)
    >>> rec = simulate_rr(duration_s=400, seed=1).replace(subject="A", start=day)
    >>> rrkit.daily_table([rec])[["subject", "date", "quality"]].iloc[0].tolist()
    ['A', datetime.date(2026, 3, 2), 'ok']
    """
    import pandas as pd

    s = settings or DailySettings()
    if isinstance(recordings, (str, os.PathLike)):
        raise InputError(f"daily_table takes recordings or a per-recording table; got the path "
                         f"{str(recordings)!r}",
                         hint="for a folder of files use rrkit.run_daily(folder, outdir) or "
                              "`rrkit daily FOLDER -o OUTDIR`")
    if isinstance(recordings, pd.DataFrame):
        per_rec = recordings.copy()
    else:
        per_rec = _measure_all(recordings, s)
    days = select_days(per_rec, settings=s, first_date=first_date, last_date=last_date)
    return add_baselines(days, settings=s.baselines)


def _measure_all(recordings: Iterable[Recording], s: DailySettings):
    import pandas as pd

    rows = []
    for i, rec in enumerate(recordings):
        if not isinstance(rec, Recording):
            raise InputError(f"recordings[{i}] must be a Recording; got {type(rec).__name__}")
        if rec.subject is None or rec.start is None:
            raise InputError(f"recordings[{i}] ({rec.source or 'no source'}) needs subject and "
                             "start to be placed on a day",
                             hint="rec.replace(subject=..., start=...)")
        win_rows, _ = measure_recording(rec, settings=s)
        row = dict(win_rows[0])
        row.update(subject=rec.subject, start=rec.start, source=rec.source or f"recording {i}")
        rows.append(row)
    return pd.DataFrame(rows)
