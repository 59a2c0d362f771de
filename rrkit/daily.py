"""One row per subject per day: the morning recording, its metrics, rolling baselines and flags.

The pipeline for each recording is read -> clean -> window -> metrics (`measure_recording`);
`daily_table` then picks each subject's morning recording per local calendar day, lists the
days without a usable one as ``missing``, and adds the baseline columns (`add_baselines`).

Baselines use only days whose quality is ``ok``; flagged, rejected and missing days are shown
but never enter a mean, and a gap is never filled with zero or carried forward.

rrkit is not a medical device and makes no diagnosis. A day outside an athlete's SWC band is a
prompt to look at the data and the context; training decisions rest with qualified staff.

References
----------
Plews DJ, Laursen PB, Kilding AE, Buchheit M (2012). Heart rate variability and training
intensity distribution in elite rowers. Eur J Appl Physiol 112(11):3729-3741.
https://doi.org/10.1007/s00421-012-2354-4 (7-day rolling mean of ln-RMSSD).

Plews DJ, Laursen PB, Stanley J, Kilding AE, Buchheit M (2013). Training adaptation and heart
rate variability in elite endurance athletes: opening the door to effective monitoring.
Sports Med 43(9):773-781. https://doi.org/10.1007/s40279-013-0071-8 (7-day CV of ln-RMSSD).

Plews DJ, Laursen PB, Le Meur Y, Hausswirth C, Kilding AE, Buchheit M (2014). Monitoring
training with heart-rate variability: how much compliance is needed for valid assessment?
Int J Sports Physiol Perform 9(5):783-790. https://doi.org/10.1123/ijspp.2013-0455
(about 3 valid days a week suffice).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import logging
import os
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ._validation import check_int, check_option, check_range
from ._version import __version__
from .errors import InputError
from .recording import Recording

__all__ = [
    "DAILY_METRICS",
    "QUALITY_STATES",
    "BaselineSettings",
    "DailySettings",
    "add_baselines",
    "daily_table",
    "localize",
    "measure_recording",
    "select_days",
    "weekly_summary",
]

log = logging.getLogger("rrkit")

#: Metric columns of the daily table, in order.
DAILY_METRICS = ("mean_hr_bpm", "rmssd_ms", "ln_rmssd", "sdnn_ms", "pnn50_pct", "hf_ms2",
                 "lf_ms2", "lf_hf", "sd1_ms", "dfa_alpha1")
#: Values of the ``quality`` column.
QUALITY_STATES = ("ok", "flagged", "rejected", "missing")
PICK_RULES = ("first", "marked")
_TRUE = {"1", "true", "yes", "y", "x"}


# ---------------------------------------------------------------------------------- settings
@dataclass(frozen=True, slots=True)
class BaselineSettings:
    """How the rolling values, the long baseline, the band and the weekly values are formed.

    Every window is counted in calendar days. The rolling window ends on (includes) the row's
    own date; the long baseline ends ``baseline_lag_days`` days earlier.

    Parameters
    ----------
    rolling_days : int
        Length of the rolling window: the day itself and the ``rolling_days - 1`` calendar days
        before it (default 7, Plews et al. 2012).
    rolling_min_days : int
        ``ok`` days needed inside the rolling window before a rolling mean and CV are given
        (default 3; Plews et al. 2014 found about 3 valid days a week enough).
    baseline_days : int
        Length of the long baseline in calendar days (default 60, rrkit's choice of a training
        block of about two months).
    baseline_min_days : int
        ``ok`` days needed in the long baseline before its mean, SD and band are defined
        (default 14, rrkit's choice: two weeks of daily recordings).
    baseline_lag_days : int
        The long baseline ends this many days before the row's date (default 7: it ends on
        the day before the current 7-day window starts). With the baseline ending on the date
        itself (0), a sustained fall of ln-RMSSD enters the baseline as it happens and drags
        the band down with it, so the 7-day mean it is compared with seldom leaves the band;
        leaving the current week out keeps the two apart (rrkit's choice, matching the
        default ``rolling_days``).
    swc_sd : float
        Half-width of the smallest-worthwhile-change (SWC) band in baseline SDs: band = mean
        ± swc_sd × SD (default 0.5, the sports-science SWC convention; common practice).
    week_min_days : int
        ``ok`` days needed in a calendar week (Monday to Sunday) before a weekly mean is given
        (default 3, Plews et al. 2014).
    """

    rolling_days: int = 7
    rolling_min_days: int = 3
    baseline_days: int = 60
    baseline_min_days: int = 14
    baseline_lag_days: int = 7
    swc_sd: float = 0.5
    week_min_days: int = 3

    def __post_init__(self) -> None:
        check_int("rolling_days", self.rolling_days, low=1)
        check_int("rolling_min_days", self.rolling_min_days, low=1, high=self.rolling_days)
        check_int("baseline_days", self.baseline_days, low=2)
        check_int("baseline_min_days", self.baseline_min_days, low=2, high=self.baseline_days)
        check_int("baseline_lag_days", self.baseline_lag_days, low=0)
        check_range("swc_sd", self.swc_sd, low=0.0)
        check_int("week_min_days", self.week_min_days, low=1, high=7)

    def to_dict(self) -> dict[str, Any]:
        """Plain dict (JSON, provenance)."""
        return dataclasses.asdict(self)


@dataclass(frozen=True, slots=True)
class DailySettings:
    """Everything that decides a daily table: reading, cleaning, window, day rules, baselines.

    Parameters
    ----------
    window : str or window spec, optional
        The analysis window inside each recording, in the syntax of `rrkit.windows.parse_window`
        or a spec object; None (default) is `rrkit.windows.MORNING` (skip 60 s, analyse 300 s,
        after Bourdillon et al. 2017: a 1-minute stabilisation, then a 5-minute window).
    tz : str
        IANA time zone of the athletes' clocks (default ``"UTC"``). Dates are local calendar
        dates in this zone; naive times (file names, manifests, files) are local times in it.
    wake_start, wake_end : str
        ``"HH:MM"`` local clock times of the wake-time window in which a morning recording
        starts (default 04:00 to 12:00, rrkit's choice); ``wake_start <= t < wake_end``.
    pick : {"first", "marked"}
        ``"first"``: the first recording of the day starting inside the wake window whose
        window is usable (ok or flagged); when none is usable, the first one. ``"marked"``: the
        recording a manifest marks (column ``morning`` true).
    clean : str
        Artifact method of `rrkit.clean` (default ``"drr"``, Lipponen & Tarvainen 2019).
    strategy : str
        Correction strategy of `rrkit.clean` (default ``"interpolate"``).
    clean_settings : CleanSettings, optional
        Explicit thresholds for `rrkit.clean`.
    psd : str
        Spectral method of `rrkit.metrics` (default ``"welch"``).
    kind, unit : str
        Passed to `rrkit.read` (default ``"auto"``).
    reject_corrected_pct : float
        A window with more corrected intervals than this share (%) is ``rejected`` (default
        20 %, rrkit's choice; the artifact stage flags from 5 %).
    min_coverage : float
        Share of the requested window the recording must cover, else ``rejected`` (default
        0.9).
    baselines : BaselineSettings
        Rolling, baseline, band and weekly rules.
    """

    window: Any = None
    tz: str = "UTC"
    wake_start: str = "04:00"
    wake_end: str = "12:00"
    pick: str = "first"
    clean: str = "drr"
    strategy: str = "interpolate"
    clean_settings: Any = None
    psd: str = "welch"
    kind: str = "auto"
    unit: str = "auto"
    reject_corrected_pct: float = 20.0
    min_coverage: float = 0.9
    baselines: BaselineSettings = field(default_factory=BaselineSettings)

    def __post_init__(self) -> None:
        zone_of(self.tz)
        start = _clock("wake_start", self.wake_start)
        end = _clock("wake_end", self.wake_end)
        if not start < end:
            raise InputError(f"wake_start must be before wake_end; got {self.wake_start!r} and "
                             f"{self.wake_end!r}")
        check_option("pick", self.pick, PICK_RULES)
        from .clean._settings import METHODS, STRATEGIES
        from .metrics._settings import PSD_METHODS

        check_option("clean", self.clean, METHODS)
        check_option("strategy", self.strategy, STRATEGIES)
        check_option("psd", self.psd, PSD_METHODS)
        self.window_spec()  # a bad window text is a usage error, before any file is read
        check_range("reject_corrected_pct", self.reject_corrected_pct, low=0.0, high=100.0,
                    unit="%")
        check_range("min_coverage", self.min_coverage, low=0.0, high=1.0)
        if not isinstance(self.baselines, BaselineSettings):
            raise InputError(f"baselines must be a BaselineSettings; got {self.baselines!r}")

    def window_spec(self):
        """The window spec object (parsed from text when given as text)."""
        from . import windows

        if self.window is None:
            return windows.MORNING
        if isinstance(self.window, str):
            return windows.parse_window(self.window)
        return self.window

    def effective_clean_settings(self):
        """The `CleanSettings` every file is cleaned with (method and strategy applied)."""
        from .clean import CleanSettings

        base = self.clean_settings if self.clean_settings is not None else CleanSettings()
        return dataclasses.replace(base, method=self.clean, strategy=self.strategy)

    def effective_metrics_settings(self):
        """The `MetricsSettings` every window is measured with."""
        from .metrics import MetricsSettings

        return MetricsSettings(psd=self.psd)

    def per_file_dict(self) -> dict[str, Any]:
        """The settings that change a single file's result (hashed for resume)."""
        return {
            "rrkit_version": __version__,
            "window": repr(self.window_spec()),
            "clean": self.clean, "strategy": self.strategy,
            "clean_settings": _plain(self.effective_clean_settings()),
            "psd": self.psd,
            "metrics_settings": _plain(self.effective_metrics_settings()),
            "kind": self.kind, "unit": self.unit,
            "reject_corrected_pct": float(self.reject_corrected_pct),
            "min_coverage": float(self.min_coverage),
        }

    def to_dict(self) -> dict[str, Any]:
        """Every setting as a plain dict (JSON, provenance)."""
        out = self.per_file_dict()
        out.update(tz=self.tz, wake_start=self.wake_start, wake_end=self.wake_end,
                   pick=self.pick, baselines=self.baselines.to_dict())
        return out


def _plain(obj: Any) -> Any:
    if obj is None or isinstance(obj, (str, int, float, bool)):
        return obj
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: _plain(getattr(obj, f.name)) for f in dataclasses.fields(obj)}
    if isinstance(obj, Mapping):
        return {str(k): _plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain(v) for v in obj]
    return repr(obj)


def _clock(name: str, text: str) -> dt.time:
    try:
        return dt.time.fromisoformat(str(text))
    except ValueError:
        raise InputError(f"{name} must be a clock time 'HH:MM'; got {text!r}") from None


# ---------------------------------------------------------------------------------- time zones
def zone_of(tz: str):
    """The `zoneinfo.ZoneInfo` for an IANA name, or `InputError` naming the bad value."""
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    try:
        return ZoneInfo(str(tz))
    except (ZoneInfoNotFoundError, ValueError, TypeError):
        raise InputError(f"unknown time zone {tz!r}",
                         hint="use an IANA name such as 'Europe/Berlin' or 'UTC'") from None


def localize(value: dt.datetime, tz: str, *, what: str = "time") -> dt.datetime:
    """A start time as an aware datetime in ``tz``.

    Aware values are converted; naive values are local wall-clock times in ``tz``. A wall time
    that does not exist there (skipped by a daylight-saving change) raises `InputError`; an
    ambiguous one (repeated hour in autumn) is taken as its first occurrence (``fold=0``).
    """
    zone = zone_of(tz)
    if value.tzinfo is not None and value.utcoffset() is not None:
        return value.astimezone(zone)
    local = value.replace(tzinfo=zone, fold=0)
    back = local.astimezone(dt.timezone.utc).astimezone(zone)
    if back.replace(tzinfo=None) != value.replace(tzinfo=None):
        raise InputError(f"{what} {value.isoformat()} does not exist in time zone {tz} "
                         "(the clocks skipped it at a daylight-saving change)",
                         hint="check the clock of the device or give the time with its offset")
    return local


# ---------------------------------------------------------------------------------- one recording
def measure_recording(recording: Recording, *, settings: DailySettings | None = None):
    """Clean a recording, resolve the analysis windows and compute the metrics of each.

    Parameters
    ----------
    recording : Recording
    settings : DailySettings, optional

    Returns
    -------
    rows : list of dict
        One per window: ``window, start_s, end_s, n_beats, artifact_pct, corrected_pct,
        quality, quality_reason, notes`` and every metric key. When no window can be formed
        (recording too short), one row with quality ``rejected`` and NaN metrics.
    clean_result : CleanResult
        The cleaning of the whole recording (for the HDF5 store).
    """
    from .clean import clean
    from .metrics import metrics
    from .windows import resolve_windows

    s = settings or DailySettings()
    cr = clean(recording, method=s.clean, strategy=s.strategy, settings=s.clean_settings)
    spec = s.window_spec()
    try:
        wins = resolve_windows(spec, recording, clean_result=cr)
    except InputError as exc:
        return [_rejected_row(getattr(spec, "label", "window"), str(exc))], cr
    if not wins:
        return [_rejected_row(getattr(spec, "label", "window"),
                              "the recording holds no analysis window")], cr
    rows = []
    t0 = float(recording.beat_times_s[0]) if recording.n_beats else 0.0
    t1 = float(recording.beat_times_s[-1]) if recording.n_beats else 0.0
    for w in wins:
        wcr = cr.window(w.start_s, w.end_s)
        summ = wcr.summary
        row: dict[str, Any] = {
            "window": str(w.label), "start_s": float(w.start_s), "end_s": float(w.end_s),
            "n_beats": int(wcr.input.n_beats),
            "artifact_pct": float(summ.artifact_pct), "corrected_pct": float(summ.corrected_pct),
        }
        quality, reason = summ.quality, summ.quality_reason or ""
        req = w.extra.get("requested_s") if hasattr(w, "extra") else None
        req_start, req_end = (float(req[0]), float(req[1])) if req else (w.start_s, w.end_s)
        length = float(req_end - req_start)
        covered = max(0.0, min(t1, req_end) - max(t0, req_start))
        if length <= 0 or covered < s.min_coverage * length:
            quality = "rejected"
            reason = (f"the recording lasts {t1 - t0:.0f} s and covers {covered:.0f} s of the "
                      f"{length:.0f}-s window from {req_start:g} to {req_end:g} s "
                      f"(needs {100 * s.min_coverage:.0f} %)")
        elif summ.corrected_pct > s.reject_corrected_pct:
            quality = "rejected"
            reason = (f"{summ.corrected_pct:.1f} % of intervals corrected "
                      f"(limit {s.reject_corrected_pct:g} %)")
        try:
            m = metrics(wcr, psd=s.psd, breathing_hz=getattr(w, "breathing_hz", None))
            values = {k: float(v) for k, v in m.items()
                      if isinstance(v, (int, float, np.integer, np.floating))}
            notes = list(getattr(m, "notes", []))
        except InputError as exc:
            values, notes = {}, [str(exc)]
            if quality != "rejected":
                quality, reason = "rejected", f"metrics could not be computed: {exc}"
        for k in DAILY_METRICS:
            values.setdefault(k, float("nan"))
        if quality != "rejected" and not np.isfinite(values["ln_rmssd"]):
            quality, reason = "rejected", "ln-RMSSD is undefined in this window"
        row.update(quality=quality, quality_reason=reason, caution=summ.caution or "",
                   notes="; ".join(notes))
        row.update(values)
        rows.append(row)
    return rows, cr


def _rejected_row(label: str, reason: str) -> dict[str, Any]:
    row: dict[str, Any] = {"window": str(label), "start_s": float("nan"), "end_s": float("nan"),
                           "n_beats": 0, "artifact_pct": float("nan"),
                           "corrected_pct": float("nan"), "quality": "rejected",
                           "quality_reason": reason, "caution": "", "notes": ""}
    row.update({k: float("nan") for k in DAILY_METRICS})
    return row


# ---------------------------------------------------------------------------------- the table
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
    wake0, wake1 = _clock("wake_start", s.wake_start), _clock("wake_end", s.wake_end)
    groups: dict[tuple[str, dt.date], list[dict]] = {}
    for i, r in enumerate(records):
        src = r.get("source")
        r["source"] = f"row {i}" if _isna(src) else src
        r["failed"] = _truthy(r.get("failed"))
        if _isna(r.get("quality")):
            r["quality"] = "ok"
        day, clock = _local_start(r["start"], s.tz, r["source"])
        r["_clock"] = clock
        r["start_time"] = None if clock is None else _start_stamp(r["start"], s.tz)
        r["subject"] = str(r["subject"])
        groups.setdefault((r["subject"], day), []).append(r)
    if groups:
        lo = (min(d for _, d in groups) if first_date is None
              else _as_date("first_date", first_date))
        hi = (max(d for _, d in groups) if last_date is None
              else _as_date("last_date", last_date))
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
    if s.pick == "marked":
        cand = [r for r in group if _truthy(r.get("marked"))]
        if not cand:
            base["quality_reason"] = (f"no recording marked as the morning one ({len(group)} "
                                      "that day)")
            return base
    else:
        cand = [r for r in group if r["_clock"] is None or wake0 <= r["_clock"] < wake1]
        if not cand:
            base["quality_reason"] = (f"no recording starts between {s.wake_start} and "
                                      f"{s.wake_end} ({len(group)} outside)")
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


def _as_date(name: str, v) -> dt.date:
    if isinstance(v, dt.datetime):
        return v.date()
    if isinstance(v, dt.date):
        return v
    try:
        return dt.date.fromisoformat(str(v))
    except ValueError:
        raise InputError(f"{name} must be a date 'YYYY-MM-DD'; got {v!r}") from None


def _local_start(v, tz: str, source) -> tuple[dt.date, dt.time | None]:
    """(local date, local clock time or None when only the date is known)."""
    import pandas as pd

    if isinstance(v, dt.date) and not isinstance(v, dt.datetime):
        return v, None
    if isinstance(v, str):
        text = v.strip()
        if len(text) == 10:
            return _as_date(f"start of {source}", text), None
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


# ---------------------------------------------------------------------------------- baselines
def add_baselines(table, *, settings: BaselineSettings | None = None):
    """Add rolling values, the long baseline, the band, flags and weekly compliance.

    Parameters
    ----------
    table : pandas.DataFrame
        One row per subject per calendar date (``subject``, ``date``, ``quality``,
        ``ln_rmssd``, ``mean_hr_bpm``), as `select_days` gives. Days absent from the table
        count as missing.
    settings : BaselineSettings, optional

    Returns
    -------
    pandas.DataFrame
        A copy with these columns added (values from ``ok`` days only; NaN / <NA> where the
        needed number of ``ok`` days is not reached):

        ``n_ok_7d``
            ``ok`` days in the rolling window (the date and the 6 calendar days before).
        ``ln_rmssd_7d``
            Mean ln-RMSSD of those days (Plews et al. 2012), given from ``rolling_min_days``.
        ``ln_rmssd_cv_7d``
            100 × SD (ddof=1) / mean of those ln-RMSSD values, in % (Plews et al. 2013).
        ``mean_hr_bpm_7d``
            Mean resting heart rate of those days, bpm.
        ``n_ok_baseline``, ``ln_rmssd_base_mean``, ``ln_rmssd_base_sd``
            ``ok`` days, mean and SD (ddof=1) of ln-RMSSD over the long baseline (the
            ``baseline_days`` calendar days ending ``baseline_lag_days`` before the date),
            given from ``baseline_min_days`` ``ok`` days.
        ``ln_rmssd_swc_low``, ``ln_rmssd_swc_high``
            mean ∓ ``swc_sd`` × SD.
        ``below_swc``, ``above_swc``
            ``ln_rmssd_7d`` below / above the band (nullable boolean).
        ``hr_base_mean_bpm``, ``hr_base_sd_bpm``, ``hr_swc_low_bpm``, ``hr_swc_high_bpm``,
        ``hr_below_swc``, ``hr_above_swc``
            The same for ``mean_hr_bpm`` (``mean_hr_bpm_7d`` against its band).
        ``week``, ``week_days``, ``week_ok_days``, ``week_compliance_pct``,
        ``ln_rmssd_week``, ``mean_hr_bpm_week``
            Calendar week (its Monday), days of that week in the table, ``ok`` days among
            them, their share in %, and the weekly means, given only from ``week_min_days``
            ``ok`` days (Plews et al. 2014).

    Notes
    -----
    Rolling windows are counted in calendar days on a complete daily index per subject, so a
    missing day shortens the count of ``ok`` days, never the span.
    """
    import pandas as pd

    b = settings or BaselineSettings()
    for col in ("subject", "date", "quality", "ln_rmssd", "mean_hr_bpm"):
        if col not in table.columns:
            raise InputError(f"add_baselines needs a {col!r} column; got {list(table.columns)!r}")
    out = table.copy()
    n = len(out)
    res = {k: np.full(n, np.nan) for k in (
        "n_ok_7d", "ln_rmssd_7d", "ln_rmssd_cv_7d", "mean_hr_bpm_7d", "n_ok_baseline",
        "ln_rmssd_base_mean", "ln_rmssd_base_sd", "hr_base_mean_bpm", "hr_base_sd_bpm",
        "week_days", "week_ok_days", "ln_rmssd_week", "mean_hr_bpm_week")}
    dates = pd.to_datetime(pd.Series([_as_date("date", d) for d in out["date"]], dtype=object))
    ok = (out["quality"].astype(str) == "ok").to_numpy()
    ln = np.where(ok, pd.to_numeric(out["ln_rmssd"]).to_numpy(dtype=float), np.nan)
    hr = np.where(ok, pd.to_numeric(out["mean_hr_bpm"]).to_numpy(dtype=float), np.nan)
    week = (dates - pd.to_timedelta(dates.dt.day_of_week, unit="D")).dt.date.to_numpy()
    positions = np.arange(n)
    for _, idx in pd.Series(positions).groupby(out["subject"].astype(str).to_numpy()):
        pos = idx.to_numpy()
        d = pd.DatetimeIndex(dates.iloc[pos])
        if d.has_duplicates:
            dup = d[d.duplicated()][0].date()
            raise InputError(f"subject {out['subject'].iloc[pos[0]]!r} has two rows for {dup}",
                             hint="give one row per subject per date (select_days)")
        full = pd.date_range(d.min(), d.max(), freq="D")
        f = pd.DataFrame({"ln": ln[pos], "hr": hr[pos]}, index=d).reindex(full)
        roll = f.rolling(b.rolling_days, min_periods=b.rolling_min_days)
        cnt = f["ln"].notna().astype(float).rolling(b.rolling_days, min_periods=1).sum()
        mean7 = roll["ln"].mean()
        sd7 = roll["ln"].std(ddof=1)
        hr7 = f["hr"].rolling(b.rolling_days, min_periods=b.rolling_min_days).mean()
        lagged = f.shift(b.baseline_lag_days)
        lroll = lagged.rolling(b.baseline_days, min_periods=b.baseline_min_days)
        lcnt = lagged["ln"].notna().astype(float).rolling(b.baseline_days, min_periods=1).sum()
        pick = full.get_indexer(d)
        res["n_ok_7d"][pos] = cnt.to_numpy()[pick]
        res["ln_rmssd_7d"][pos] = mean7.to_numpy()[pick]
        res["ln_rmssd_cv_7d"][pos] = (100.0 * sd7 / mean7).to_numpy()[pick]
        res["mean_hr_bpm_7d"][pos] = hr7.to_numpy()[pick]
        res["n_ok_baseline"][pos] = lcnt.to_numpy()[pick]
        res["ln_rmssd_base_mean"][pos] = lroll["ln"].mean().to_numpy()[pick]
        res["ln_rmssd_base_sd"][pos] = lroll["ln"].std(ddof=1).to_numpy()[pick]
        res["hr_base_mean_bpm"][pos] = lroll["hr"].mean().to_numpy()[pick]
        res["hr_base_sd_bpm"][pos] = lroll["hr"].std(ddof=1).to_numpy()[pick]
        wk = pd.DataFrame({"week": week[pos], "ln": ln[pos], "hr": hr[pos]})
        grp = wk.groupby("week")
        days_in = grp["ln"].transform("size").to_numpy(dtype=float)
        ok_in = grp["ln"].transform("count").to_numpy(dtype=float)
        enough = ok_in >= b.week_min_days
        res["week_days"][pos] = days_in
        res["week_ok_days"][pos] = ok_in
        res["ln_rmssd_week"][pos] = np.where(enough, grp["ln"].transform("mean"), np.nan)
        res["mean_hr_bpm_week"][pos] = np.where(enough, grp["hr"].transform("mean"), np.nan)

    half_ln = b.swc_sd * res["ln_rmssd_base_sd"]
    half_hr = b.swc_sd * res["hr_base_sd_bpm"]
    cols: dict[str, Any] = {
        "n_ok_7d": pd.array(res["n_ok_7d"], dtype="Int64"),
        "ln_rmssd_7d": res["ln_rmssd_7d"],
        "ln_rmssd_cv_7d": res["ln_rmssd_cv_7d"],
        "mean_hr_bpm_7d": res["mean_hr_bpm_7d"],
        "n_ok_baseline": pd.array(res["n_ok_baseline"], dtype="Int64"),
        "ln_rmssd_base_mean": res["ln_rmssd_base_mean"],
        "ln_rmssd_base_sd": res["ln_rmssd_base_sd"],
        "ln_rmssd_swc_low": res["ln_rmssd_base_mean"] - half_ln,
        "ln_rmssd_swc_high": res["ln_rmssd_base_mean"] + half_ln,
    }
    cols["below_swc"] = _flag(res["ln_rmssd_7d"], cols["ln_rmssd_swc_low"], np.less)
    cols["above_swc"] = _flag(res["ln_rmssd_7d"], cols["ln_rmssd_swc_high"], np.greater)
    cols.update({
        "hr_base_mean_bpm": res["hr_base_mean_bpm"],
        "hr_base_sd_bpm": res["hr_base_sd_bpm"],
        "hr_swc_low_bpm": res["hr_base_mean_bpm"] - half_hr,
        "hr_swc_high_bpm": res["hr_base_mean_bpm"] + half_hr,
    })
    cols["hr_below_swc"] = _flag(res["mean_hr_bpm_7d"], cols["hr_swc_low_bpm"], np.less)
    cols["hr_above_swc"] = _flag(res["mean_hr_bpm_7d"], cols["hr_swc_high_bpm"], np.greater)
    with np.errstate(invalid="ignore", divide="ignore"):
        compliance = 100.0 * res["week_ok_days"] / res["week_days"]
    cols.update({
        "week": week,
        "week_days": pd.array(res["week_days"], dtype="Int64"),
        "week_ok_days": pd.array(res["week_ok_days"], dtype="Int64"),
        "week_compliance_pct": compliance,
        "ln_rmssd_week": res["ln_rmssd_week"],
        "mean_hr_bpm_week": res["mean_hr_bpm_week"],
    })
    # the new columns go before n_recordings and the extra columns, when present
    out = out.drop(columns=[k for k in cols if k in out.columns])
    anchor = (list(out.columns).index("n_recordings") if "n_recordings" in out.columns
              else len(out.columns))
    for offset, (k, v) in enumerate(cols.items()):
        out.insert(anchor + offset, k, v)
    return out


def _flag(value: np.ndarray, limit: np.ndarray, op):
    import pandas as pd

    known = np.isfinite(value) & np.isfinite(limit)
    flag = op(np.where(known, value, 0.0), np.where(known, limit, 0.0))
    return pd.arrays.BooleanArray(np.asarray(flag, dtype=bool), ~known)


def weekly_summary(table, *, settings: BaselineSettings | None = None):
    """One row per subject and calendar week: days, ``ok`` days, compliance, weekly means.

    Parameters
    ----------
    table : pandas.DataFrame
        A daily table (with or without the baseline columns).
    settings : BaselineSettings, optional
        ``week_min_days`` decides where a weekly mean is given (Plews et al. 2014).

    Returns
    -------
    pandas.DataFrame
        ``subject, week, week_days, week_ok_days, week_compliance_pct, ln_rmssd_week,
        mean_hr_bpm_week``.
    """
    if "week_ok_days" not in table.columns:
        table = add_baselines(table, settings=settings)
    cols = ["subject", "week", "week_days", "week_ok_days", "week_compliance_pct",
            "ln_rmssd_week", "mean_hr_bpm_week"]
    return table[cols].drop_duplicates(["subject", "week"]).reset_index(drop=True)


def settings_json(settings: DailySettings) -> str:
    """Canonical JSON of the settings (sorted keys), as hashed and stored."""
    return json.dumps(settings.to_dict(), sort_keys=True, separators=(",", ":"))
