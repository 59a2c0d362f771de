"""rrkit's file-name patterns: named fields for subject, date and time in a path.

Syntax
------
A pattern is matched against the whole path of a file relative to the folder being scanned,
written with ``/`` separators. A pattern without any ``/`` is matched against the file name
alone (so ``{subject}_{date}*`` finds files at any depth).

``{name}``
    A named field. ``subject``, ``date``, ``time`` and ``datetime`` have a meaning; any other
    name (``{position}``, ``{protocol}``) is kept as an extra text column. A field never spans
    a ``/``. Text fields match as few characters as possible, so ``{subject}_{date}`` splits
    ``A_01_2026-03-01`` into ``A_01`` and ``2026-03-01``.
``{name:FORMAT}``
    A date or time field with an explicit format made of ``%Y`` (4-digit year), ``%y``
    (2-digit year), ``%m``, ``%d``, ``%H``, ``%M``, ``%S`` (2 digits each) and literal
    characters, e.g. ``{date:%d.%m.%Y}`` or ``{time:%Hh%M}``.
Default formats
    ``{date}``: ``2026-03-01`` or ``20260301`` (years 1900-2099). ``{time}``: ``0712``,
    ``071230``, ``07-12``, ``07-12-30``, ``07.12``, ``07h12``. ``{datetime}``: a date and a
    time joined by ``T``, ``_``, ``-`` or a space (``20260301T071230``, ``2026-03-01_07-12``).
``*``
    Any run of characters except ``/`` (possibly empty). ``**`` any run including ``/``
    (``**/`` at the start: at any depth). ``?`` exactly one character except ``/``.
``[...]``
    An optional part, e.g. ``{subject}_{date}[_{time}]*``.

Everything else matches itself (case-sensitive). Dates and times read from a name are local
clock times in the run's time zone.

Examples
--------
>>> p = FilenamePattern("{subject}_{date}[_{time}]*")
>>> p.match("squad/A01_2026-03-01_0712.txt")
{'subject': 'A01', 'date': datetime.date(2026, 3, 1), 'time': datetime.time(7, 12)}
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass, field

from ..errors import InputError

__all__ = ["DEFAULT_PATTERN", "FilenamePattern"]

#: Used when neither a manifest nor a pattern is given.
DEFAULT_PATTERN = "{subject}_{date}[_{time}]*"

_CODES = {"%Y": r"\d{4}", "%y": r"\d{2}", "%m": r"\d{2}", "%d": r"\d{2}",
          "%H": r"\d{2}", "%M": r"\d{2}", "%S": r"\d{2}", "%%": "%"}
# plausible calendar values only (years 1900-2099, months 01-12, days 01-31, hours 00-23,
# minutes and seconds 00-59), so that a subject id with digits in it splits at the right place
_Y, _MO, _D = r"(?:19|20)\d{2}", r"(?:0[1-9]|1[0-2])", r"(?:0[1-9]|[12]\d|3[01])"
_DATE_RE = rf"{_Y}-{_MO}-{_D}|{_Y}{_MO}{_D}"
_TIME_RE = r"(?:[01]\d|2[0-3])(?:[-.h:]?[0-5]\d){1,2}"
_DT_RE = rf"(?:{_DATE_RE})[T_ -](?:{_TIME_RE})"
_SPECIAL = ("date", "time", "datetime")
_NAME_RE = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")


@dataclass(frozen=True)
class FilenamePattern:
    """A compiled file-name pattern (see the module notes for the syntax).

    Parameters
    ----------
    text : str
        The pattern, for example ``"{subject}/{date}_{time}.txt"``.

    Raises
    ------
    InputError
        For unbalanced ``{`` / ``[``, an unknown format code, a field used twice, or a bad
        field name; the message shows the position in the pattern.
    """

    text: str
    fields: tuple[str, ...] = field(init=False)
    formats: dict = field(init=False, repr=False, compare=False)
    _regex: re.Pattern = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        if not isinstance(self.text, str) or not self.text:
            raise InputError(f"pattern must be a non-empty string; got {self.text!r}")
        regex, fields, formats = _compile(self.text)
        object.__setattr__(self, "fields", tuple(fields))
        object.__setattr__(self, "formats", formats)
        object.__setattr__(self, "_regex", re.compile(regex))

    @property
    def on_name_only(self) -> bool:
        """True when the pattern has no ``/`` and is matched against the file name alone."""
        return "/" not in self.text

    def match(self, relpath: str) -> dict | None:
        """Fields found in ``relpath`` (``/``-separated), or None when it does not match.

        Returns
        -------
        dict or None
            ``subject`` and other text fields as str; ``date`` as `datetime.date`; ``time``
            as `datetime.time`; ``datetime`` is split into ``date`` and ``time``. Optional
            fields that were absent are left out.

        Raises
        ------
        InputError
            When the name matches the shape but holds an impossible date (``2026-02-30``).
        """
        target = relpath.rsplit("/", 1)[-1] if self.on_name_only else relpath
        m = self._regex.fullmatch(target)
        if m is None:
            return None
        out: dict = {}
        for name in self.fields:
            value = m.group(name)
            if value is None:
                continue
            fmt = self.formats.get(name)
            try:
                if name == "date":
                    out["date"] = _parse_date(value, fmt)
                elif name == "time":
                    out["time"] = _parse_time(value, fmt)
                elif name == "datetime":
                    stamp = _parse_datetime(value, fmt)
                    out["date"], out["time"] = stamp.date(), stamp.time()
                else:
                    out[name] = value
            except ValueError as exc:
                raise InputError(f"{name} {value!r} in {relpath!r} is not a valid {name}: {exc}",
                                 path=relpath) from None
        return out


def _compile(text: str) -> tuple[str, list[str], dict]:
    out: list[str] = []
    fields: list[str] = []
    formats: dict[str, str] = {}
    claimed: set[str] = set()
    depth = 0
    i = 0
    n = len(text)
    while i < n:
        c = text[i]
        if c == "{":
            j = text.find("}", i)
            if j < 0:
                raise InputError(f"pattern {text!r}: '{{' at position {i + 1} is never closed",
                                 hint="fields are written {subject}, {date}, {time}")
            body = text[i + 1:j]
            name, _, fmt = body.partition(":")
            if not _NAME_RE.match(name):
                raise InputError(f"pattern {text!r}: bad field name {name!r} at position {i + 1}",
                                 hint="use letters, digits and _ (for example {subject})")
            claims = {"datetime": {"date", "time"}, "date": {"date"}, "time": {"time"}}.get(
                name, {name})
            if claims & claimed:
                raise InputError(f"pattern {text!r}: field {name!r} appears twice "
                                 "(datetime already holds a date and a time)")
            claimed |= claims
            fields.append(name)
            if fmt:
                if name not in _SPECIAL:
                    raise InputError(f"pattern {text!r}: a format is allowed only for date, "
                                     f"time and datetime; got {{{body}}}")
                formats[name] = fmt
                inner = _format_regex(fmt, text)
            elif name == "date":
                inner = _DATE_RE
            elif name == "time":
                inner = _TIME_RE
            elif name == "datetime":
                inner = _DT_RE
            else:
                inner = r"[^/]+?"
            out.append(f"(?P<{name}>{inner})")
            i = j + 1
        elif c == "}":
            raise InputError(f"pattern {text!r}: '}}' at position {i + 1} has no opening '{{'")
        elif c == "[":
            depth += 1
            out.append("(?:")
            i += 1
        elif c == "]":
            if depth == 0:
                raise InputError(f"pattern {text!r}: ']' at position {i + 1} has no opening '['")
            depth -= 1
            out.append(")?")
            i += 1
        elif c == "*":
            if text.startswith("**/", i):
                out.append(r"(?:.*/)?")
                i += 3
            elif text.startswith("**", i):
                out.append(r".*")
                i += 2
            else:
                out.append(r"[^/]*")
                i += 1
        elif c == "?":
            out.append(r"[^/]")
            i += 1
        else:
            out.append(re.escape(c))
            i += 1
    if depth:
        raise InputError(f"pattern {text!r}: an optional part '[' is never closed with ']'")
    return "".join(out), fields, formats


def _format_regex(fmt: str, text: str) -> str:
    parts: list[str] = []
    i = 0
    while i < len(fmt):
        if fmt[i] == "%":
            code = fmt[i:i + 2]
            if code not in _CODES:
                allowed = ", ".join(k for k in _CODES if k != "%%")
                raise InputError(f"pattern {text!r}: unknown format code {code!r}",
                                 hint=f"use {allowed}")
            parts.append(_CODES[code])
            i += 2
        elif fmt[i] == "/":
            raise InputError(f"pattern {text!r}: a date or time format cannot contain '/'")
        else:
            parts.append(re.escape(fmt[i]))
            i += 1
    return "".join(parts)


def _parse_date(value: str, fmt: str | None) -> dt.date:
    if fmt:
        return dt.datetime.strptime(value, fmt).date()
    digits = value.replace("-", "")
    return dt.date(int(digits[:4]), int(digits[4:6]), int(digits[6:8]))


def _parse_time(value: str, fmt: str | None) -> dt.time:
    if fmt:
        return dt.datetime.strptime(value, fmt).time()
    digits = re.sub(r"[-.h:]", "", value)
    sec = int(digits[4:6]) if len(digits) >= 6 else 0
    return dt.time(int(digits[:2]), int(digits[2:4]), sec)


def _parse_datetime(value: str, fmt: str | None) -> dt.datetime:
    if fmt:
        return dt.datetime.strptime(value, fmt)
    m = re.fullmatch(rf"({_DATE_RE})[T_ -]({_TIME_RE})", value)
    assert m is not None  # the field regex guarantees this shape
    return dt.datetime.combine(_parse_date(m.group(1), None), _parse_time(m.group(2), None))
