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

from ._model import Window, WindowSpec
from ._resolve import resolve_windows
from ._specs import MORNING, BeforeEnd, ClockTime, Events, FromStart, Sliding, Whole
from ._syntax import SYNTAX_HELP, parse_duration, parse_window

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
