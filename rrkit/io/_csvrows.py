"""The rows of a small CSV table with a header: the one loop behind rrkit's side tables.

The events table of a lab protocol (`rrkit.io.read_events_table`) and the load table of an
exercise test (`rrkit.io.read_loads`) share one layout: comma-separated fields split by the
standard library's `csv.reader` (double quotes, ``""`` escapes), blank lines and lines starting
with ``#`` skipped, a header row first (names compared in lower case, spaces stripped), and every
later row with as many fields as the header. This module reads that layout once; each table
checks its own header and values, naming the file and line.
"""

from __future__ import annotations

import csv
from collections.abc import Callable, Iterator
from pathlib import Path

from ..errors import InputError

__all__ = ["csv_rows", "read_table_text"]


def read_table_text(path: Path, *, what: str) -> str:
    """The text of a side table (UTF-8, a byte-order mark removed).

    Raises
    ------
    InputError
        ``"<what> is not UTF-8 text"``, naming the file. A missing file is the caller's to
        report (each table words it its own way).
    """
    try:
        return path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise InputError(f"{what} is not UTF-8 text", path=path) from None


def csv_rows(text: str, *, path: Path,
             check_header: Callable[..., None],
             header_out: list[str] | None = None) -> Iterator[tuple[int, dict[str, str]]]:
    """Yield ``(line_number, row)`` for every data row of a CSV table with a header.

    Parameters
    ----------
    text : str
        The whole table.
    path : Path
        The file, for messages.
    check_header : callable
        Called once as ``check_header(header, cells, path=path, line=line_number)`` with the
        lower-cased header names and the header cells as written; raises `InputError` when the
        header lacks what the table needs.
    header_out : list, optional
        Filled with the header names when the header is found (so that a caller can tell an
        empty file from a table without data rows).

    Yields
    ------
    line_number : int
        1-based line of the row in the file.
    row : dict
        Header name -> the stripped cell.

    Raises
    ------
    InputError
        From ``check_header``, or ``"expected N columns (...); found M: [...]"`` naming the
        file and line of a row whose field count differs from the header's.
    """
    header: list[str] | None = None
    for lineno, cells in enumerate(csv.reader(text.splitlines()), start=1):
        if not cells or all(not c.strip() for c in cells) or cells[0].lstrip().startswith("#"):
            continue
        cells = [c.strip() for c in cells]
        if header is None:
            header = [c.lower() for c in cells]
            check_header(header, cells, path=path, line=lineno)
            if header_out is not None:
                header_out[:] = header
            continue
        if len(cells) != len(header):
            raise InputError(f"expected {len(header)} columns ({','.join(header)}); found "
                             f"{len(cells)}: {cells!r}", path=path, line=lineno)
        yield lineno, dict(zip(header, cells, strict=True))
