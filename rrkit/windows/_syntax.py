"""The command-line window syntax: text -> window spec (`parse_window`)."""

from __future__ import annotations

import re

from ..errors import InputError
from ._model import WindowSpec
from ._specs import MORNING, BeforeEnd, ClockTime, Events, FromStart, Sliding, Whole

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


