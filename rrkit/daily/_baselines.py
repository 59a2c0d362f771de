"""Rolling values, the long baseline, the band, flags and weekly compliance (Plews et al.).

Baselines use only days whose quality is ``ok``; flagged, rejected and missing days are shown
but never enter a mean, and a gap is never filled with zero or carried forward. See the
references in `rrkit.daily`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .._plain import fields_plain
from .._time import as_date
from .._validation import check_int, check_range
from ..errors import InputError

__all__ = ["BaselineSettings", "add_baselines", "weekly_summary"]


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
        """Plain dict (JSON, provenance): `rrkit._plain.to_plain`."""
        return fields_plain(self)



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
    dates = pd.to_datetime(pd.Series([as_date("date", d) for d in out["date"]], dtype=object))
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
