"""The events table of a lab protocol: ``label,start_s,end_s[,breathing_hz | breaths_per_min]``.

A CSV file with a header row; ``#`` lines and blank lines are skipped. `rrkit.windows.Events`
turns its rows into analysis windows.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path
from typing import Any

from ..errors import InputError

__all__ = ["read_events_table"]


def read_events_table(path) -> list[dict[str, Any]]:
    """Rows of an events table: ``label, start_s, end_s, breathing_hz`` (Hz or None), ``line``.

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
    header = None
    rows: list[dict[str, Any]] = []
    for lineno, cells in enumerate(csv.reader(text.splitlines()), start=1):
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
        rows.append({"label": row["label"], "start_s": start, "end_s": end,
                     "breathing_hz": breathing, "line": lineno})
    if header is None:
        raise InputError("events table is empty; expected a header label,start_s,end_s",
                         path=path)
    return rows
