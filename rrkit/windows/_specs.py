"""The window specs: whole, from the start, before the end, sliding, clock time, events."""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from datetime import date, datetime, time, timedelta, timezone, tzinfo
from typing import Any

from .._time import wall_time, zone_of
from .._validation import check_range
from ..errors import InputError
from ..recording import Recording
from ._model import EPS as _EPS
from ._model import Window, WindowSpec, _clip, _fmt, _span
from ._stable import most_stable


@dataclass(frozen=True, slots=True)
class Whole(WindowSpec):
    """The whole recording, from the first to the last beat."""

    label: str = "whole"

    def resolve(self, recording: Recording, *, clean_result=None) -> list[Window]:
        span = _span(recording)
        return [] if span is None else [Window(self.label, *span)]


@dataclass(frozen=True, slots=True)
class FromStart(WindowSpec):
    """``length_s`` seconds starting ``offset_s`` after the first beat (to the end if no length).

    Examples
    --------
    >>> from rrkit import Recording
    >>> FromStart(60, 300).resolve(Recording.from_rr([1000] * 400))[0].start_s
    60.0
    """

    offset_s: float = 0.0
    length_s: float | None = None
    label: str | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "offset_s",
                           check_range("offset_s", self.offset_s, low=0.0, unit="s"))
        if self.length_s is not None:
            object.__setattr__(self, "length_s", check_range(
                "length_s", self.length_s, low=0.0, low_inclusive=False, unit="s"))

    def resolve(self, recording: Recording, *, clean_result=None) -> list[Window]:
        span = _span(recording)
        if span is None:
            return []
        start = span[0] + float(self.offset_s)
        end = span[1] if self.length_s is None else start + float(self.length_s)
        # '60-360 s' (seconds from the first beat): '/' means a step in slide:5m/1m
        a = float(self.offset_s)
        label = self.label or (f"from {a:g} s" if self.length_s is None else
                               f"{a:g}-{a + float(self.length_s):g} s")
        return [_clip(label, start, end, span)]


#: The morning protocol: skip 60 s of stabilisation, analyse the next 300 s.
MORNING = FromStart(60.0, 300.0, label="morning")


@dataclass(frozen=True, slots=True)
class BeforeEnd(WindowSpec):
    """The last ``length_s`` seconds before the last beat."""

    length_s: float
    label: str | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "length_s", check_range(
            "length_s", self.length_s, low=0.0, low_inclusive=False, unit="s"))

    def resolve(self, recording: Recording, *, clean_result=None) -> list[Window]:
        span = _span(recording)
        if span is None:
            return []
        return [_clip(self.label or f"last {_fmt(self.length_s)}", span[1] - float(self.length_s),
                      span[1], span)]


@dataclass(frozen=True, slots=True)
class Sliding(WindowSpec):
    """Windows of ``length_s`` starting every ``step_s`` (default: ``length_s``, contiguous).

    The first window starts at the first beat; windows are made while they fit inside the
    recording. With ``partial=True`` the windows that would run past the last beat are kept,
    clipped (marked in ``extra``).
    """

    length_s: float
    step_s: float | None = None
    partial: bool = False
    label: str = "slide"

    def __post_init__(self) -> None:
        object.__setattr__(self, "length_s", check_range(
            "length_s", self.length_s, low=0.0, low_inclusive=False, unit="s"))
        if self.step_s is not None:
            object.__setattr__(self, "step_s", check_range(
                "step_s", self.step_s, low=0.0, low_inclusive=False, unit="s"))
        object.__setattr__(self, "partial", bool(self.partial))

    def resolve(self, recording: Recording, *, clean_result=None) -> list[Window]:
        span = _span(recording)
        if span is None:
            return []
        length = float(self.length_s)
        step = length if self.step_s is None else float(self.step_s)
        total = span[1] - span[0]
        if self.partial:
            n = math.floor(total / step + _EPS) + 1
            if n > 1 and (n - 1) * step >= total - _EPS:
                n -= 1
        else:
            n = math.floor((total - length) / step + _EPS) + 1 if total + _EPS >= length else 0
        width = max(len(str(math.floor(total / step + _EPS) + 1)), 3)  # same as partial
        out = []
        for k in range(n):
            start = span[0] + k * step
            out.append(_clip(f"{self.label}-{k + 1:0{width}d}", start, start + length, span))
        return out


@dataclass(frozen=True, slots=True)
class ClockTime(WindowSpec):
    """A wall-clock window, every day the recording covers, in a time zone.

    Parameters
    ----------
    start, end : str or datetime.time
        Wall-clock times (``"04:00"``); ``end`` before ``start`` means the next day (a night).
    tz : str or tzinfo, optional
        IANA zone (``"Europe/Paris"``). Default: the zone of ``recording.start``; a naive start
        is then read as wall-clock time with no daylight-saving information.
    stable_s : float, optional
        Instead of the whole clock window, its most stable stretch of this length (needs a
        `CleanResult`).
    stable_step_s : float
        Step between candidate stretches, 30 s.
    label : str, optional

    Notes
    -----
    Each day's window is built in the zone (so 22:00-06:00 lasts 7 h or 9 h across a
    daylight-saving change) and converted to the recording clock through UTC, with rrkit's one
    daylight-saving policy (`rrkit._time`, the same as for the start times of files): an edge
    that does not exist on a day the recording covers (02:30 in Europe/Paris on 29 March 2026,
    skipped by the spring-forward change) raises `InputError` naming the time and the zone,
    instead of giving a window of the wrong length; an ambiguous edge (the hour repeated in
    autumn) is its first occurrence (PEP 495 ``fold=0``). Windows are clipped to the
    recording; days whose window misses the recording give no window.

    The *most stable* stretch is, among the candidates of ``stable_s`` seconds starting every
    ``stable_step_s`` inside the clock window: the one with the fewest corrected beats (input
    intervals the cleaning changed or excluded, ``CleanResult.changed``), then the least
    heart-rate drift (absolute least-squares slope of the beat-to-beat heart rate 60000/RR
    against time, bpm/min, on the corrected NN intervals), then the earliest.
    """

    start: Any = "04:00"
    end: Any = "07:00"
    tz: Any = None
    stable_s: float | None = None
    stable_step_s: float = 30.0
    label: str | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "start", _clock("start", self.start))
        object.__setattr__(self, "end", _clock("end", self.end))
        if self.start == self.end:
            raise InputError(f"clock window start and end must differ; got {self.start} twice")
        if self.tz is not None and not isinstance(self.tz, tzinfo):
            object.__setattr__(self, "tz", zone_of(self.tz))
        if self.stable_s is not None:
            object.__setattr__(self, "stable_s", check_range(
                "stable_s", self.stable_s, low=0.0, low_inclusive=False, unit="s"))
        object.__setattr__(self, "stable_step_s", check_range(
            "stable_step_s", self.stable_step_s, low=0.0, low_inclusive=False, unit="s"))

    def resolve(self, recording: Recording, *, clean_result=None) -> list[Window]:
        if recording.start is None:
            raise InputError("a clock-time window needs the recording's absolute start time; "
                             f"{recording!r} has none",
                             hint="read a file with a timestamp column, build the Recording with "
                                  "start=..., or on the command line pass --start")
        if self.stable_s is not None and clean_result is None:
            raise InputError("a clock window with stable_s needs the cleaning result "
                             "(fewest corrected beats decides)", hint="pass clean_result=")
        span = _span(recording)
        if span is None:
            return []
        out = []
        for day, ws, we, error in self._occurrences(recording, span):
            label = self.label or f"{day.isoformat()} {self.start:%H:%M}-{self.end:%H:%M}"
            if we <= span[0] + _EPS or ws >= span[1] - _EPS:
                continue
            if error is not None:
                raise error
            win = _clip(label, ws, we, span)
            if self.stable_s is not None:
                win = most_stable(win, float(self.stable_s), float(self.stable_step_s),
                                   clean_result)
            out.append(win)
        return out

    def _occurrences(self, rec: Recording, span):
        """(day, start s, end s, error) of the window on each day around the recording."""
        zone = self.tz if self.tz is not None else rec.start.tzinfo
        start = rec.start
        if zone is not None and start.tzinfo is None:   # naive start read as wall time
            start = wall_time(start, zone, what="recording start")
        first = start + timedelta(seconds=span[0])
        last = start + timedelta(seconds=span[1])
        if zone is not None:
            first, last = first.astimezone(zone), last.astimezone(zone)
        day: date = first.date() - timedelta(days=1)
        while day <= last.date():
            end_day = day if self.end > self.start else day + timedelta(days=1)
            edges, error = [], None
            for d, clock, what in ((day, self.start, "start"), (end_day, self.end, "end")):
                naive = datetime.combine(d, clock)
                if zone is None:
                    edges.append(naive)
                    continue
                try:
                    edges.append(wall_time(naive, zone, what=f"clock window {what}"))
                except InputError as exc:   # raised only if this day's window is used
                    error = error or exc
                    edges.append(naive.replace(tzinfo=zone))
            yield (day, _seconds_between(start, edges[0]), _seconds_between(start, edges[1]),
                   error)
            day += timedelta(days=1)


def _seconds_between(a: datetime, b: datetime) -> float:
    """``b - a`` in seconds, through UTC when aware (aware subtraction with one shared tzinfo
    ignores daylight-saving changes)."""
    if a.tzinfo is not None:
        a = a.astimezone(timezone.utc)
        b = b.astimezone(timezone.utc)
    return (b - a).total_seconds()



@dataclass(frozen=True, slots=True)
class Events(WindowSpec):
    """Labelled segments of a protocol (times in s on the recording clock).

    Parameters
    ----------
    rows : sequence of Window
        The segments. Build from a CSV file with `Events.from_csv`.
    source : str, optional
        Where the rows came from (for messages).
    """

    rows: tuple[Window, ...]
    source: str | None = None

    def __post_init__(self) -> None:
        rows = tuple(self.rows)
        for r in rows:
            if not isinstance(r, Window):
                raise InputError(f"Events rows must be Window objects; got {type(r).__name__}")
        object.__setattr__(self, "rows", rows)

    @classmethod
    def from_csv(cls, path) -> Events:
        """Read ``label,start_s,end_s[,breathing_hz | breaths_per_min]`` (header required).

        Raises
        ------
        InputError
            Naming the file and line of a missing column, a bad number or ``end_s <= start_s``.
        """
        from ..io import read_events_table

        rows = [Window(r["label"], r["start_s"], r["end_s"], breathing_hz=r["breathing_hz"],
                       extra={"events_line": r["line"]}) for r in read_events_table(path)]
        return cls(tuple(rows), source=str(path))

    def resolve(self, recording: Recording, *, clean_result=None) -> list[Window]:
        span = _span(recording)
        if span is None:
            return []
        return [_clip(r.label, r.start_s, r.end_s, span, breathing_hz=r.breathing_hz, extra=r.extra)
                for r in self.rows]


def _clock(name: str, value: Any) -> time:
    if isinstance(value, time):
        return value.replace(tzinfo=None)
    m = re.fullmatch(r"\s*(\d{1,2}):(\d{2})(?::(\d{2}))?\s*", str(value))
    if not m or int(m.group(1)) > 23 or int(m.group(2)) > 59 or int(m.group(3) or 0) > 59:
        raise InputError(f"clock window {name} must be a time HH:MM (00:00-23:59); got {value!r}")
    return time(int(m.group(1)), int(m.group(2)), int(m.group(3) or 0))


