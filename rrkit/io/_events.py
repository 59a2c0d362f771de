"""The events table of a lab protocol: ``label,start_s,end_s[,breathing_hz | breaths_per_min]``.

A CSV file with a header row; ``#`` lines and blank lines are skipped. `rrkit.windows.Events`
turns its rows into analysis windows.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from ..errors import InputError
from ._csvrows import csv_rows, read_table_text

__all__ = ["read_events_table"]


def _check_header(header: list[str], cells: list[str], *, path: Path, line: int) -> None:
    missing = [c for c in ("label", "start_s", "end_s") if c not in header]
    if missing:
        raise InputError(f"events table header must name label, start_s, end_s; "
                         f"found {cells!r} (missing {missing!r})", path=path, line=line)


def read_events_table(path) -> list[dict[str, Any]]:
    """Rows of an events table: ``label, start_s, end_s, breathing_hz`` (Hz or None), ``line``.

    Raises
    ------
    InputError
        Naming the file and line of a missing column, a bad number or ``end_s <= start_s``.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError("events table not found", path=path)
    text = read_table_text(path, what="events table")
    header: list[str] = []
    rows: list[dict[str, Any]] = []
    for lineno, row in csv_rows(text, path=path, check_header=_check_header, header_out=header):
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
        rows.append({"label": row["label"], "start_s": start, "end_s": end,
                     "breathing_hz": breathing, "line": lineno})
    if not header:
        raise InputError("events table is empty; expected a header label,start_s,end_s",
                         path=path)
    return rows
