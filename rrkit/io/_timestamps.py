"""Timestamp columns: ISO 8601 text or Unix epoch numbers -> seconds from the first, and a start.

ISO 8601 strings keep their UTC offset (``Z``, ``+01:00``): the start is then time-zone aware,
in the offset the file states; without an offset it is naive (local time of the device, unknown
zone). Unix epoch numbers count from 1970-01-01 UTC, so their start is aware (UTC). Epoch
numbers are recognised by their size: seconds in [1e9, 1e10) (2001-2286), milliseconds in
[1e12, 1e13), microseconds in [1e15, 1e16).
"""

from __future__ import annotations

from datetime import datetime, timezone

import numpy as np

from ..errors import InputError
from ._text import TextTable, parse_numbers

__all__ = ["epoch_scale", "parse_timestamps"]

_EPOCH_SCALES = ((1e9, 1e10, 1.0, "s"), (1e12, 1e13, 1e-3, "ms"), (1e15, 1e16, 1e-6, "us"))


def _has_offset(tok: str) -> bool:
    """True when an ISO 8601 time states its UTC offset (``Z``, ``+01:00``, ``-0500``)."""
    clock = tok[10:]  # after YYYY-MM-DD, a sign can only start an offset
    return clock.endswith("Z") or "+" in clock or "-" in clock


def epoch_scale(values: np.ndarray) -> tuple[float, str] | None:
    """(factor to seconds, unit name) when every value looks like a Unix epoch time, else None."""
    if values.size == 0:
        return None
    lo, hi = float(np.min(values)), float(np.max(values))
    for a, b, factor, name in _EPOCH_SCALES:
        if a <= lo and hi < b:
            return factor, name
    return None


def parse_timestamps(table: TextTable, col: int, *,
                     numeric: bool) -> tuple[np.ndarray, datetime, str]:
    """Seconds of each row after the first row's time, the first row's datetime, and how.

    Raises
    ------
    InputError
        A token that is not a timestamp, aware and naive times mixed, or numbers that are not
        epoch times.
    """
    name = table.names[col]
    if numeric:
        values = parse_numbers(table, col, what="a Unix epoch time")
        scale = epoch_scale(values)
        if scale is None:
            j = int(np.argmin(values))
            raise InputError(
                f"timestamp column {name!r} holds {values[j]:g}, expected Unix epoch seconds, "
                "milliseconds or microseconds (since 1970-01-01 UTC)",
                path=table.path, line=table.line_of(j))
        factor, unit = scale
        sec = (values - values[0]) * factor
        start = datetime.fromtimestamp(values[0] * factor, tz=timezone.utc)
        return sec, start, f"Unix epoch {unit} in column {name!r} (UTC)"

    import pandas as pd

    tokens = table.columns[col]
    aware = np.fromiter((_has_offset(t) for t in tokens), dtype=bool, count=len(tokens))
    if aware.any() and not aware.all():
        j = int(np.flatnonzero(aware != aware[0])[0])
        raise InputError(
            f"timestamp {tokens[j]!r} in column {name!r} "
            f"{'has' if aware[j] else 'lacks'} a UTC offset unlike line {table.line_of(0)}, "
            "expected all times with an offset or all without",
            path=table.path, line=table.line_of(j))
    try:
        parsed = pd.to_datetime(pd.Series(tokens), format="ISO8601", utc=bool(aware[0]))
    except (ValueError, TypeError):
        for j, tok in enumerate(tokens):
            try:
                pd.Timestamp(tok)
            except (ValueError, TypeError):
                raise InputError(
                    f"found {tok!r} in timestamp column {name!r}, expected an ISO 8601 time "
                    "such as 2026-03-01T07:15:00.250+01:00",
                    path=table.path, line=table.line_of(j)) from None
        raise InputError(f"cannot read the times in column {name!r} as ISO 8601",
                         path=table.path) from None
    if parsed.isna().any():
        j = int(np.flatnonzero(parsed.isna().to_numpy())[0])
        raise InputError(f"found {tokens[j]!r} in timestamp column {name!r}, expected a time",
                         path=table.path, line=table.line_of(j))
    sec = ((parsed - parsed.iloc[0]) / pd.Timedelta(seconds=1)).to_numpy(dtype=np.float64)
    start = pd.Timestamp(tokens[0]).to_pydatetime(warn=False)
    how = f"ISO 8601 times in column {name!r}" + (" with UTC offset" if aware[0] else
                                                  " without offset (zone unknown)")
    return sec, start, how
