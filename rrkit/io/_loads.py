"""The load table of an exercise test: power or speed against time on the recording's clock.

One CSV layout (header required, comma-separated, ``#`` comment lines allowed)::

    time_s,power_w          # or speed_kmh
    0,80
    240,80
    300,95

``time_s`` is seconds from the first beat of the recording; a column ``time`` may give the same
as ``mm:ss`` or ``h:mm:ss``. Each row is the load from that time until the next row (a stage
table, or a power log sampled every second: both read the same way). Rows must be in time
order; the last load holds to the end of the recording.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError
from ._csvrows import csv_rows, read_table_text

__all__ = ["LOAD_COLUMNS", "Loads", "read_loads"]

#: load column -> (quantity, unit)
LOAD_COLUMNS = {"power_w": ("power", "W"), "speed_kmh": ("speed", "km/h")}


@dataclass(frozen=True, slots=True)
class Loads:
    """Stepwise load against time.

    Attributes
    ----------
    time_s : numpy.ndarray
        Start of each step (s on the recording clock), increasing.
    value : numpy.ndarray
        The load from that time until the next (in ``unit``).
    column : str
        ``"power_w"`` or ``"speed_kmh"``.
    source : str, optional
        The file it came from.
    """

    time_s: np.ndarray
    value: np.ndarray
    column: str
    source: str | None = None

    def __post_init__(self) -> None:
        t = np.array(self.time_s, dtype=float)
        v = np.array(self.value, dtype=float)
        if t.ndim != 1 or t.shape != v.shape or t.size == 0:
            raise InputError("a load table needs equal, non-empty time_s and value arrays")
        if np.any(np.diff(t) <= 0):
            raise InputError("load table times must increase")
        if self.column not in LOAD_COLUMNS:
            raise InputError(f"load column must be one of {sorted(LOAD_COLUMNS)}; "
                             f"got {self.column!r}")
        for a in (t, v):
            a.flags.writeable = False
        object.__setattr__(self, "time_s", t)
        object.__setattr__(self, "value", v)

    @property
    def unit(self) -> str:
        """The load's unit (``W`` or ``km/h``)."""
        return LOAD_COLUMNS[self.column][1]

    @property
    def quantity(self) -> str:
        """``power`` or ``speed``."""
        return LOAD_COLUMNS[self.column][0]

    def mean_between(self, start_s, end_s) -> np.ndarray:
        """Time-weighted mean load over each ``[start_s, end_s)`` (arrays of equal shape).

        Before the first row the first load is assumed (and after the last row the last one),
        so a window that starts before the table's first time uses that first load.
        """
        start = np.asarray(start_s, dtype=float)
        end = np.asarray(end_s, dtype=float)
        t, v = self.time_s, self.value
        # integral of the step function from t[0]: piecewise linear through the knots
        knots = np.concatenate([t, [np.inf]])
        area = np.concatenate([[0.0], np.cumsum(v[:-1] * np.diff(t))])

        def integral(x):
            i = np.clip(np.searchsorted(knots, x, side="right") - 1, 0, t.size - 1)
            return area[i] + v[i] * (x - t[i])

        with np.errstate(invalid="ignore", divide="ignore"):
            return (integral(end) - integral(start)) / (end - start)


def _seconds(text: str) -> float:
    parts = text.split(":")
    if not 2 <= len(parts) <= 3:
        raise ValueError(text)
    vals = [float(p) for p in parts]
    if any(x < 0 for x in vals) or any(x >= 60 for x in vals[1:]):
        raise ValueError(text)
    out = 0.0
    for x in vals:
        out = out * 60.0 + x
    return out


def _columns(header: list[str]) -> tuple[str, str]:
    """(time column, load column) named by a header; empty strings when it lacks one."""
    tcol = next((c for c in ("time_s", "time") if c in header), "")
    found = [c for c in LOAD_COLUMNS if c in header]
    return tcol, (found[0] if len(found) == 1 else "")


def _check_header(header: list[str], cells: list[str], *, path: Path, line: int) -> None:
    tcol, lcol = _columns(header)
    if not tcol or not lcol:
        raise InputError(
            f"load table header must name a time column (time_s, or time as mm:ss) and "
            f"exactly one load column ({' or '.join(LOAD_COLUMNS)}); found {cells!r}",
            path=path, line=line)


def read_loads(path) -> Loads:
    """Read an exercise test's load table (``time_s`` or ``time``, and ``power_w`` or
    ``speed_kmh``).

    Parameters
    ----------
    path : str or path-like
        The CSV file.

    Returns
    -------
    Loads

    Raises
    ------
    InputError
        Naming the file and line of a missing column, a bad number, a negative load or a time
        that does not increase.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "stages.csv"
    >>> _ = p.write_text("time_s,power_w\\n0,100\\n60,125\\n")
    >>> read_loads(p).mean_between([0.0], [120.0]).tolist()
    [112.5]
    """
    path = Path(path)
    if not path.is_file():
        raise InputError("load table not found (expected a CSV file)", path=path)
    text = read_table_text(path, what="load table")
    header: list[str] = []
    times: list[float] = []
    values: list[float] = []
    for lineno, row in csv_rows(text, path=path, check_header=_check_header, header_out=header):
        tcol, lcol = _columns(header)
        try:
            t = float(row[tcol]) if tcol == "time_s" else _seconds(row[tcol])
        except ValueError:
            want = "a number of seconds" if tcol == "time_s" else "mm:ss or h:mm:ss"
            raise InputError(f"{tcol} must be {want}; found {row[tcol]!r}",
                             path=path, line=lineno) from None
        try:
            v = float(row[lcol])
        except ValueError:
            raise InputError(f"{lcol} must be a number; found {row[lcol]!r}",
                             path=path, line=lineno) from None
        if not (math.isfinite(t) and t >= 0):
            raise InputError(f"{tcol} must be >= 0 s; found {row[tcol]!r}", path=path, line=lineno)
        if not (math.isfinite(v) and v >= 0):
            raise InputError(f"{lcol} must be a finite number >= 0; found {row[lcol]!r}",
                             path=path, line=lineno)
        if times and t <= times[-1]:
            raise InputError(f"times must increase; {t:g} s follows {times[-1]:g} s",
                             path=path, line=lineno)
        times.append(t)
        values.append(v)
    if not times:
        raise InputError("load table has no rows; expected a header (time_s,power_w) and one "
                         "row per stage", path=path)
    return Loads(np.array(times), np.array(values), _columns(header)[1], source=str(path))
