"""Local wall-clock time: the one time-zone lookup and the one daylight-saving policy of rrkit.

Used by the start times of files (`localize`: the daily table, the batch's file placing) and by
clock-time windows (`wall_time`: `rrkit.windows.ClockTime`), so both read a local time the
same way:

* a wall time that **does not exist** in the zone (skipped by a spring-forward change, such as
  02:30 in Europe/Paris on 29 March 2026) raises `InputError` naming the time, the zone and the
  skipped hour: no start time and no window edge is moved silently;
* an **ambiguous** wall time (the hour repeated by an autumn change) is taken as its first
  occurrence (PEP 495 ``fold=0``, the summer-time reading).

Aware values (with an offset) are never ambiguous and are only converted.
"""

from __future__ import annotations

import datetime as dt

from .errors import InputError

__all__ = ["as_date", "localize", "wall_time", "zone_of"]


def zone_of(tz) -> dt.tzinfo:
    """The `zoneinfo.ZoneInfo` for an IANA name (a tzinfo passes through), or `InputError`."""
    if isinstance(tz, dt.tzinfo):
        return tz
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    try:
        return ZoneInfo(str(tz))
    except (ZoneInfoNotFoundError, ValueError, TypeError):
        raise InputError(f"unknown time zone {tz!r}",
                         hint="use an IANA name such as 'Europe/Berlin' or 'UTC'") from None


def _exists(local: dt.datetime) -> bool:
    back = local.astimezone(dt.timezone.utc).astimezone(local.tzinfo)
    return back.replace(tzinfo=None) == local.replace(tzinfo=None)


def wall_time(value: dt.datetime, zone: dt.tzinfo, *, what: str = "time") -> dt.datetime:
    """A naive local wall time as an aware datetime in ``zone`` (the policy above).

    Raises
    ------
    InputError
        When the wall time does not exist in ``zone``.

    Examples
    --------
    >>> import datetime as dt
    >>> from zoneinfo import ZoneInfo
    >>> wall_time(dt.datetime(2026, 10, 25, 2, 30), ZoneInfo("Europe/Paris")).isoformat()
    '2026-10-25T02:30:00+02:00'
    """
    local = value.replace(tzinfo=zone, fold=0)
    if not _exists(local):
        raise InputError(f"{what} {value.isoformat()} does not exist in time zone {zone} "
                         "(the clocks skipped it at a daylight-saving change)",
                         hint="check the clock of the device, give the time with its offset, "
                              "or choose clock times outside the skipped hour")
    return local


def localize(value: dt.datetime, tz, *, what: str = "time") -> dt.datetime:
    """A start time as an aware datetime in ``tz``.

    Aware values are converted; naive values are local wall-clock times in ``tz``, read with
    the policy of this module (`wall_time`): a time skipped by a daylight-saving change raises
    `InputError`, an ambiguous one is its first occurrence (``fold=0``).
    """
    zone = zone_of(tz)
    if value.tzinfo is not None and value.utcoffset() is not None:
        return value.astimezone(zone)
    return wall_time(value, zone, what=what)


def as_date(name: str, v) -> dt.date:
    """A date, a datetime (its date) or ISO text ``YYYY-MM-DD`` -> `datetime.date`."""
    if isinstance(v, dt.datetime):
        return v.date()
    if isinstance(v, dt.date):
        return v
    try:
        return dt.date.fromisoformat(str(v))
    except ValueError:
        raise InputError(f"{name} must be a date 'YYYY-MM-DD'; got {v!r}") from None
