"""The week at a glance: one line per athlete for a calendar week (Monday to Sunday)."""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass

from ..daily import QUALITY_STATES
from ..errors import InputError

__all__ = ["AthleteWeek", "Week", "pick_week", "week_rows"]

#: position of a 7-day value against its band -> (symbol, words); symbol and words both carry
#: the meaning, colour only repeats it
STATUS_TEXT = {
    "below": ("\u25bc", "below band"),
    "inside": ("\u25cf", "in band"),
    "above": ("\u25b2", "above band"),
    "no-band": ("\u2013", "no band yet"),
    "no-value": ("\u2013", "no 7-day value"),
}


@dataclass(frozen=True, slots=True)
class Week:
    """The calendar week shown: its Monday and Sunday, and the last date the table has in it."""

    monday: dt.date
    sunday: dt.date
    as_of: dt.date
    first_date: dt.date
    last_date: dt.date

    @property
    def n_days(self) -> int:
        """Days of the week the table covers (7 unless the table starts or ends inside it)."""
        start = max(self.monday, self.first_date)
        return (self.as_of - start).days + 1


@dataclass(frozen=True, slots=True)
class AthleteWeek:
    """One athlete's line in the week at a glance (values on ``as_of``, counts over the week)."""

    subject: str
    ln_7d: float
    ln_low: float
    ln_high: float
    ln_status: str
    ln_days_below: int
    n_ok_7d: float
    hr_7d: float
    hr_low: float
    hr_high: float
    hr_status: str
    hr_days_above: int
    days: int
    ok_days: int
    counts: dict
    cautions: tuple
    min_ok_days: int = 3

    @property
    def compliance_pct(self) -> float:
        """``ok`` mornings as a share of the week's days in the table, %."""
        return 100.0 * self.ok_days / self.days if self.days else math.nan

    @property
    def prompts(self) -> tuple[str, ...]:
        """Short reasons to look at this athlete this week (empty when none)."""
        out = []
        if self.ln_status == "below":
            out.append("7-day ln-RMSSD below band")
        if self.hr_status == "above":
            out.append("resting HR above band")
        if self.cautions:
            out.append("premature-beat caution: recordings for a clinician")
        if self.days and self.ok_days < self.min_ok_days:
            out.append("few valid mornings")
        return tuple(out)


def pick_week(dates, week: dt.date | str | None = None) -> Week:
    """The Monday-to-Sunday week holding ``week`` (default: the table's last date).

    Parameters
    ----------
    dates : iterable of datetime.date
        The table's dates.
    week : date or ISO string, optional
        Any day of the week to show.

    Raises
    ------
    InputError
        When ``week`` is not a date or the table has no date in that week.
    """
    days = sorted(set(dates))
    if not days:
        raise InputError("the daily table has no rows")
    if week is None:
        anchor = days[-1]
    elif isinstance(week, dt.datetime):
        anchor = week.date()
    elif isinstance(week, dt.date):
        anchor = week
    else:
        try:
            anchor = dt.date.fromisoformat(str(week).strip())
        except ValueError:
            raise InputError(f"week must be a date YYYY-MM-DD; got {week!r}") from None
    monday = anchor - dt.timedelta(days=anchor.weekday())
    sunday = monday + dt.timedelta(days=6)
    inside = [d for d in days if monday <= d <= sunday]
    if not inside:
        raise InputError(f"the week of {monday} to {sunday} is outside the daily table "
                         f"({days[0]} to {days[-1]})",
                         hint=f"choose a date from {days[0]} to {days[-1]}")
    return Week(monday=monday, sunday=sunday, as_of=inside[-1], first_date=days[0],
                last_date=days[-1])


def _num(v) -> float:
    try:
        x = float(v)
    except (TypeError, ValueError):
        return math.nan
    return x


def _flag(v) -> bool:
    """A nullable flag read as a plain bool (missing = not set)."""
    import pandas as pd

    if v is None or v is pd.NA:
        return False
    return bool(v == v and v)


def _status(value: float, low: float, high: float, below, above) -> str:
    if not math.isfinite(value):
        return "no-value"
    if not (math.isfinite(low) and math.isfinite(high)):
        return "no-band"
    if _flag(below):
        return "below"
    if _flag(above):
        return "above"
    return "inside"


def _get(row, cols: dict, key: str):
    """The value of a report quantity in a row; NaN where the table lacks the column."""
    return row[cols[key]] if cols.get(key) else math.nan


def _count(row, cols: dict, key: str, fallback: int) -> int:
    """A day count from the table, or ``fallback`` where the column is absent or empty."""
    x = _num(_get(row, cols, key))
    return int(x) if math.isfinite(x) else fallback


def week_rows(table, cols: dict, week: Week, *, min_ok_days: int = 3) -> list[AthleteWeek]:
    """One `AthleteWeek` per subject, sorted by subject.

    The 7-day values, bands and flags are those of the daily table on ``week.as_of`` (the
    table decides what is below or above a band; nothing is recomputed here). Counts run over
    the week's days up to ``as_of``. ``min_ok_days`` is the number of valid mornings a 7-day
    value needs (the run's ``rolling_min_days``); fewer in the week is listed as a prompt.
    """
    c = cols
    d = table[(table[c["date"]] >= week.monday) & (table[c["date"]] <= week.as_of)]
    out = []
    for subject, g in d.groupby(c["subject"], sort=True):
        g = g.sort_values(c["date"])
        last = g.iloc[-1]
        if last[c["date"]] != week.as_of:
            raise InputError(f"subject {subject!r} has no row for {week.as_of}",
                             hint="the daily table gives every subject every date")
        q = g[c["quality"]].astype(str)
        counts = {state: int((q == state).sum()) for state in QUALITY_STATES}
        cautions = ()
        if c.get("caution"):
            cautions = tuple((r[c["date"]], str(r[c["caution"]]), str(r[c["quality"]]))
                             for _, r in g.iterrows() if str(r[c["caution"]]).strip())
        hr_above = g[c["hr_above"]] if c.get("hr_above") else []
        ln_7d, ln_low, ln_high = (_num(_get(last, c, k)) for k in ("ln_7d", "ln_low", "ln_high"))
        hr_7d, hr_low, hr_high = (_num(_get(last, c, k)) for k in ("hr_7d", "hr_low", "hr_high"))
        out.append(AthleteWeek(
            subject=str(subject),
            ln_7d=ln_7d, ln_low=ln_low, ln_high=ln_high,
            ln_status=_status(ln_7d, ln_low, ln_high, _get(last, c, "ln_below"),
                              _get(last, c, "ln_above")),
            ln_days_below=sum(_flag(v) for v in g[c["ln_below"]]),
            n_ok_7d=_num(_get(last, c, "n_ok_7d")),
            hr_7d=hr_7d, hr_low=hr_low, hr_high=hr_high,
            hr_status=_status(hr_7d, hr_low, hr_high, _get(last, c, "hr_below"),
                              _get(last, c, "hr_above")),
            hr_days_above=sum(_flag(v) for v in hr_above),
            days=_count(last, c, "week_days", len(g)),
            ok_days=_count(last, c, "week_ok_days", counts["ok"]),
            counts=counts, cautions=cautions, min_ok_days=int(min_ok_days),
        ))
    return out
