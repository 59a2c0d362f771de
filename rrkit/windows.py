"""Analysis windows: which stretch of a recording a metric is computed on.

A *spec* says how to choose windows (in Python, or as a short text on the command line, see
`parse_window`); `resolve_windows` turns a spec into concrete `Window` objects for one recording.
Window times are seconds on the recording's clock (the clock of ``Recording.beat_times_s``).
Windows never exceed the recording: a window asked for beyond the data is clipped to it (and says
so in ``extra["requested_s"]``).

Specs
-----
`Whole`            the whole recording
`FromStart`        an offset and a length counted from the first beat (`MORNING`: skip 60 s,
                   analyse 300 s)
`BeforeEnd`        the last N seconds before the last beat
`ClockTime`        a wall-clock window (04:00-07:00) in a time zone, every day the recording
                   covers, optionally only its most stable N-minute stretch
`Sliding`          windows of a length every step (nights, 24-hour recordings)
`Events`           labelled segments from a table (``label,start_s,end_s`` CSV, optional
                   breathing rate) for lab protocols

Text syntax (`parse_window`)
----------------------------
``whole`` · ``morning`` · ``start:60+300`` (offset+length; ``start:60`` to the end) ·
``last:5m`` · ``clock:04:00-07:00[@Europe/Paris][,stable=5m]`` · ``slide:5m[/1m][,partial]`` ·
``events:protocol.csv``. Durations take ``s`` (default), ``m``/``min`` or ``h``; several specs
may be joined with ``;``.
"""

from __future__ import annotations

import csv
import math
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from datetime import date, datetime, time, timedelta, timezone, tzinfo
from pathlib import Path
from types import MappingProxyType
from typing import Any

import numpy as np

from ._validation import check_range
from .errors import InputError
from .recording import Recording

__all__ = [
    "MORNING",
    "SYNTAX_HELP",
    "BeforeEnd",
    "ClockTime",
    "Events",
    "FromStart",
    "Sliding",
    "Whole",
    "Window",
    "WindowSpec",
    "parse_duration",
    "parse_window",
    "resolve_windows",
]

_EPS = 1e-9


@dataclass(frozen=True, slots=True)
class Window:
    """One analysis window.

    Attributes
    ----------
    label : str
        Name shown in tables (``"morning"``, ``"tilt"``, ``"2026-03-29 04:00-07:00"``).
    start_s, end_s : float
        Window bounds in s on the recording's clock; beats with ``start_s <= t <= end_s`` belong
        to it.
    breathing_hz : float or None
        Breathing rate stated for the window (events table), in Hz.
    extra : Mapping
        What else resolution recorded (``requested_s`` when clipped, the stable-segment search).
    """

    label: str
    start_s: float
    end_s: float
    breathing_hz: float | None = None
    extra: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        start = check_range("start_s", self.start_s, unit="s")
        end = check_range("end_s", self.end_s, unit="s")
        if end < start:
            raise InputError(
                f"window {self.label!r}: end_s ({end!r}) is before start_s ({start!r})")
        object.__setattr__(self, "start_s", start)
        object.__setattr__(self, "end_s", end)
        object.__setattr__(self, "label", str(self.label))
        if self.breathing_hz is not None:
            object.__setattr__(self, "breathing_hz", check_range(
                "breathing_hz", self.breathing_hz, low=0.0, low_inclusive=False, unit="Hz"))
        object.__setattr__(self, "extra", MappingProxyType(dict(self.extra)))

    @property
    def duration_s(self) -> float:
        """``end_s - start_s`` in s."""
        return self.end_s - self.start_s

    @property
    def clipped(self) -> bool:
        """True when the window was cut to fit the recording."""
        return "requested_s" in self.extra


class WindowSpec:
    """Base of the window specs: ``resolve(recording, clean_result=None) -> list[Window]``."""

    def resolve(self, recording: Recording, *, clean_result=None) -> list[Window]:
        raise NotImplementedError


def _span(rec: Recording) -> tuple[float, float] | None:
    if rec.n_beats < 2:
        return None
    return float(rec.beat_times_s[0]), float(rec.beat_times_s[-1])


def _clip(label: str, start: float, end: float, span: tuple[float, float], *,
          breathing_hz: float | None = None, extra: Mapping[str, Any] | None = None) -> Window:
    lo, hi = span
    s = min(max(start, lo), hi)
    e = min(max(end, s), hi)
    info = dict(extra or {})
    if s > start + _EPS or e < end - _EPS:
        info["requested_s"] = (start, end)
    return Window(label, s, e, breathing_hz=breathing_hz, extra=info)


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
    daylight-saving change) and converted to the recording clock through UTC. A wall time that
    does not exist (skipped by a spring-forward change) is read with the offset in force before
    the change, an ambiguous one as its first occurrence (PEP 495 ``fold=0``). Windows are
    clipped to the recording; days whose window misses the recording give no window.

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
            object.__setattr__(self, "tz", _zone(self.tz))
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
        for day, ws, we in self._occurrences(recording, span):
            label = self.label or f"{day.isoformat()} {self.start:%H:%M}-{self.end:%H:%M}"
            if we <= span[0] + _EPS or ws >= span[1] - _EPS:
                continue
            win = _clip(label, ws, we, span)
            if self.stable_s is not None:
                win = _most_stable(win, float(self.stable_s), float(self.stable_step_s),
                                   clean_result)
            out.append(win)
        return out

    def _occurrences(self, rec: Recording, span):
        zone = self.tz if self.tz is not None else rec.start.tzinfo
        start = rec.start
        if zone is not None and start.tzinfo is None:
            start = start.replace(tzinfo=zone)   # naive start read as wall time in the zone
        first = start + timedelta(seconds=span[0])
        last = start + timedelta(seconds=span[1])
        if zone is not None:
            first, last = first.astimezone(zone), last.astimezone(zone)
        day: date = first.date() - timedelta(days=1)
        while day <= last.date():
            ws = datetime.combine(day, self.start, tzinfo=zone)
            end_day = day if self.end > self.start else day + timedelta(days=1)
            we = datetime.combine(end_day, self.end, tzinfo=zone)
            yield day, _seconds_between(start, ws), _seconds_between(start, we)
            day += timedelta(days=1)


def _seconds_between(a: datetime, b: datetime) -> float:
    """``b - a`` in seconds, through UTC when aware (aware subtraction with one shared tzinfo
    ignores daylight-saving changes)."""
    if a.tzinfo is not None:
        a = a.astimezone(timezone.utc)
        b = b.astimezone(timezone.utc)
    return (b - a).total_seconds()


def _most_stable(win: Window, length: float, step: float, cr) -> Window:
    inp = cr.input
    info = dict(win.extra)
    info["clock_window_s"] = (win.start_s, win.end_s)
    if win.duration_s < length - _EPS:
        info["stable"] = (f"clock window ({win.duration_s:.0f} s) shorter than {length:.0f} s; "
                          "used whole")
        return Window(win.label, win.start_s, win.end_s, extra=info)
    n = math.floor((win.duration_s - length) / step + _EPS) + 1
    starts = win.start_s + np.arange(n) * step
    ends = starts + length
    # corrected beats: input intervals changed or excluded, by the time of their end beat
    t_in = inp.interval_times_s
    cum = np.concatenate(([0], np.cumsum(np.asarray(cr.changed, dtype=np.int64))))
    lo = np.searchsorted(t_in, starts - _EPS, side="left")
    hi = np.searchsorted(t_in, ends + _EPS, side="right")
    corrected = cum[hi] - cum[lo]
    # heart-rate drift: least-squares slope of 60000/RR on time over corrected NN intervals
    rec = cr.recording
    ok = ~rec.gaps
    t = rec.interval_times_s[ok]
    hr = 60000.0 / rec.rr_ms[ok]
    tc = t - win.start_s
    c = [np.concatenate(([0.0], np.cumsum(v)))
         for v in (np.ones_like(tc), tc, hr, tc * tc, tc * hr)]
    a = np.searchsorted(t, starts - _EPS, side="left")
    b = np.searchsorted(t, ends + _EPS, side="right")
    s0, st, sh, stt, sth = (v[b] - v[a] for v in c)
    with np.errstate(invalid="ignore", divide="ignore"):
        slope = (s0 * sth - st * sh) / (s0 * stt - st * st) * 60.0  # bpm per minute
    drift = np.where(np.isfinite(slope) & (s0 >= 3), np.abs(slope), np.inf)
    best = int(np.lexsort((np.arange(n), drift, corrected))[0])
    info.update(stable_corrected_beats=int(corrected[best]),
                stable_hr_drift_bpm_per_min=float(drift[best]), stable_candidates=n)
    return Window(f"{win.label} stable {_fmt(length)}", float(starts[best]), float(ends[best]),
                  extra=info)


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
        path = Path(path)
        try:
            text = path.read_text(encoding="utf-8-sig")
        except FileNotFoundError:
            raise InputError("events table not found", path=path) from None
        lines = list(text.splitlines())
        reader = csv.reader(lines)
        header = None
        rows: list[Window] = []
        for lineno, cells in enumerate(reader, start=1):
            if not cells or all(not c.strip() for c in cells) or cells[0].lstrip().startswith("#"):
                continue
            cells = [c.strip() for c in cells]
            if header is None:
                header = [c.lower() for c in cells]
                missing = [c for c in ("label", "start_s", "end_s") if c not in header]
                if missing:
                    raise InputError(f"events table header must name label, start_s, end_s; "
                                     f"found {cells!r} (missing {missing!r})",
                                     path=path, line=lineno)
                continue
            if len(cells) != len(header):
                raise InputError(f"expected {len(header)} columns ({','.join(header)}); found "
                                 f"{len(cells)}: {cells!r}", path=path, line=lineno)
            row = dict(zip(header, cells, strict=True))
            try:
                start = float(row["start_s"])
                end = float(row["end_s"])
            except ValueError:
                raise InputError(f"start_s and end_s must be numbers (s); found "
                                 f"{row['start_s']!r}, {row['end_s']!r}",
                                 path=path, line=lineno) from None
            if not (math.isfinite(start) and math.isfinite(end)) or end <= start:
                raise InputError(f"end_s must be after start_s (s); found {start!r} to {end!r}",
                                 path=path, line=lineno)
            breathing = None
            for col, scale in (("breathing_hz", 1.0), ("breaths_per_min", 1.0 / 60.0)):
                if col in row and row[col] != "":
                    try:
                        breathing = float(row[col]) * scale
                    except ValueError:
                        raise InputError(f"{col} must be a number; found {row[col]!r}",
                                         path=path, line=lineno) from None
                    if not (math.isfinite(breathing) and breathing > 0):
                        raise InputError(f"{col} must be > 0; found {row[col]!r}",
                                         path=path, line=lineno)
            if not row["label"]:
                raise InputError("label is empty", path=path, line=lineno)
            rows.append(Window(row["label"], start, end, breathing_hz=breathing,
                               extra={"events_line": lineno}))
        if header is None:
            raise InputError("events table is empty; expected a header label,start_s,end_s",
                             path=path)
        return cls(tuple(rows), source=str(path))

    def resolve(self, recording: Recording, *, clean_result=None) -> list[Window]:
        span = _span(recording)
        if span is None:
            return []
        return [_clip(r.label, r.start_s, r.end_s, span, breathing_hz=r.breathing_hz, extra=r.extra)
                for r in self.rows]


# ---------------------------------------------------------------------------- text syntax
_DURATION = re.compile(r"^\s*(\d+(?:\.\d*)?|\.\d+)\s*(s|sec|m|min|h)?\s*$", re.IGNORECASE)
_UNITS = {None: 1.0, "s": 1.0, "sec": 1.0, "m": 60.0, "min": 60.0, "h": 3600.0}

SYNTAX_HELP = (
    "whole | morning (skip 60 s, analyse 300 s) | start:OFFSET[+LENGTH] | last:LENGTH | "
    "clock:HH:MM-HH:MM[@ZONE][,stable=LENGTH] | slide:LENGTH[/STEP][,partial] | events:FILE.csv; "
    "durations in s (default), m or h; join several with ';'"
)


def parse_duration(text: str, *, name: str = "duration") -> float:
    """``"300"``, ``"300s"``, ``"5m"``, ``"1.5h"`` -> seconds."""
    m = _DURATION.match(str(text))
    if not m:
        raise InputError(f"{name} must be a number with an optional unit s, m or h; got {text!r}",
                         hint="for example 300, 5m or 1h")
    return float(m.group(1)) * _UNITS[m.group(2).lower() if m.group(2) else None]


def parse_window(text: str) -> WindowSpec | list[WindowSpec]:
    """Parse the command-line window syntax into a spec (a list when joined with ``;``).

    Parameters
    ----------
    text : str
        One spec (``whole``, ``morning``, ``start:60+300``, ``last:5m``, ``slide:5m/1m``,
        ``clock:04:00-07:00@Europe/Paris,stable=5m``, ``events:FILE.csv``) or several joined
        with ``;``. Durations take ``s`` (default), ``m`` or ``h``. See ``docs/windows.md``.

    Returns
    -------
    WindowSpec or list of WindowSpec

    Raises
    ------
    InputError
        When the text is not in this syntax (the message shows what was expected).

    Examples
    --------
    >>> parse_window("start:60+300")
    FromStart(offset_s=60.0, length_s=300.0, label=None)
    >>> parse_window("slide:5m/1m")
    Sliding(length_s=300.0, step_s=60.0, partial=False, label='slide')
    >>> parse_window("clock:04:00-07:00@Europe/Paris,stable=5m").stable_s
    300.0
    """
    if not isinstance(text, str) or not text.strip():
        raise InputError(f"window must be a non-empty text; got {text!r}", hint=SYNTAX_HELP)
    parts = [p.strip() for p in text.split(";") if p.strip()]
    if len(parts) > 1:
        return [_parse_one(p) for p in parts]
    return _parse_one(parts[0])


def _parse_one(text: str) -> WindowSpec:
    kind, _, arg = text.partition(":")
    kind = kind.strip().lower()
    arg = arg.strip()
    if kind == "whole" and not arg:
        return Whole()
    if kind == "morning" and not arg:
        return MORNING
    if kind == "start" and arg:
        off, plus, length = arg.partition("+")
        return FromStart(parse_duration(off or "0", name="start offset"),
                         parse_duration(length, name="start length") if plus else None)
    if kind == "last" and arg:
        return BeforeEnd(parse_duration(arg, name="last length"))
    if kind == "slide" and arg:
        main, _, opt = arg.partition(",")
        length, slash, step = main.partition("/")
        if opt.strip().lower() not in ("", "partial"):
            raise InputError(f"slide options: only 'partial'; got {opt!r} in {text!r}",
                             hint=SYNTAX_HELP)
        return Sliding(parse_duration(length, name="slide length"),
                       parse_duration(step, name="slide step") if slash else None,
                       partial=opt.strip().lower() == "partial")
    if kind == "clock" and arg:
        main, _, opts = arg.partition(",")
        span, _, zone = main.partition("@")
        m = re.fullmatch(r"\s*(\d{1,2}:\d{2})\s*-\s*(\d{1,2}:\d{2})\s*", span)
        if not m:
            raise InputError(f"clock window must read HH:MM-HH:MM; got {span!r} in {text!r}",
                             hint=SYNTAX_HELP)
        stable = None
        for opt in filter(None, (o.strip() for o in opts.split(","))):
            key, eq, value = opt.partition("=")
            if key.strip().lower() != "stable" or not eq:
                raise InputError(f"clock options: only stable=LENGTH; got {opt!r} in {text!r}",
                                 hint=SYNTAX_HELP)
            stable = parse_duration(value, name="stable length")
        return ClockTime(m.group(1), m.group(2), tz=zone.strip() or None, stable_s=stable)
    if kind == "events" and arg:
        return Events.from_csv(arg)
    import difflib

    close = difflib.get_close_matches(kind, ["whole", "morning", "start", "last", "clock",
                                             "slide", "events"], n=1)
    raise InputError(f"unknown window {text!r}; expected {SYNTAX_HELP}",
                     hint=f"did you mean {close[0]!r}?" if close else None)


def resolve_windows(spec, recording: Recording, *, clean_result=None) -> list[Window]:
    """Concrete windows of ``spec`` for ``recording``.

    Parameters
    ----------
    spec : WindowSpec, str, Window, or a sequence of these
        A spec object, the text syntax (`parse_window`), ready windows (clipped to the
        recording), or several of them (windows in the order given).
    recording : Recording
    clean_result : CleanResult, optional
        Needed by ``ClockTime(stable_s=...)``.

    Returns
    -------
    list of Window
        Every window lies inside ``[first beat, last beat]``.
    """
    if isinstance(spec, str):
        spec = parse_window(spec)
    if isinstance(spec, Window):
        span = _span(recording)
        return [] if span is None else [_clip(spec.label, spec.start_s, spec.end_s, span,
                                              breathing_hz=spec.breathing_hz, extra=spec.extra)]
    if isinstance(spec, WindowSpec):
        return spec.resolve(recording, clean_result=clean_result)
    if isinstance(spec, Iterable) and not isinstance(spec, (bytes, Mapping)):
        out: list[Window] = []
        for item in spec:
            out += resolve_windows(item, recording, clean_result=clean_result)
        return out
    raise InputError(f"windows must be a window spec, a text such as 'morning', a Window or a "
                     f"list of these; got {type(spec).__name__}", hint=SYNTAX_HELP)


# ---------------------------------------------------------------------------- helpers
def _clock(name: str, value: Any) -> time:
    if isinstance(value, time):
        return value.replace(tzinfo=None)
    m = re.fullmatch(r"\s*(\d{1,2}):(\d{2})(?::(\d{2}))?\s*", str(value))
    if not m or int(m.group(1)) > 23 or int(m.group(2)) > 59 or int(m.group(3) or 0) > 59:
        raise InputError(f"clock window {name} must be a time HH:MM (00:00-23:59); got {value!r}")
    return time(int(m.group(1)), int(m.group(2)), int(m.group(3) or 0))


def _zone(name: Any) -> tzinfo:
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    try:
        return ZoneInfo(str(name))
    except (ZoneInfoNotFoundError, ValueError):
        raise InputError(f"unknown time zone {name!r}; expected an IANA name such as "
                         f"'Europe/Paris' or 'UTC'") from None


def _fmt(seconds: float) -> str:
    s = float(seconds)
    if s >= 60 and s % 60 == 0:
        return f"{s / 60:g}m"
    return f"{s:g}s"

