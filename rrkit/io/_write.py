"""Writing RR intervals as a plain text file, one value a line, atomically."""

from __future__ import annotations

import gzip
import logging
import os
from pathlib import Path

import numpy as np

from .._atomic import atomic_write_bytes
from .._validation import as_float_array, check_option
from ..errors import InputError
from ..recording import Recording

__all__ = ["write_rr"]

logger = logging.getLogger("rrkit")


def write_rr(
    path: str | os.PathLike[str],
    rr,
    *,
    unit: str = "ms",
    header: str | None = None,
) -> Path:
    """Write RR intervals to a text file, one value a line (gzip when ``path`` ends in .gz).

    The file is written to a temporary file beside ``path`` and moved into place with
    ``os.replace``, so a reader never sees a half-written file.

    Parameters
    ----------
    path : str or path-like
        Destination; parent folders must exist. A ``.gz`` name is gzip-compressed (with a fixed
        time stamp, so equal data give equal bytes).
    rr : Recording or array_like
        The intervals; an array is taken as milliseconds.
    unit : {"ms", "s"}
        Unit written (default ms).
    header : str, optional
        A first line naming the column (for example ``"rr_ms"``); None writes no header.

    Returns
    -------
    pathlib.Path
        The path written.

    Notes
    -----
    Values are written with 15 significant digits (``%.15g``), so they read back equal to
    float rounding. A plain list cannot mark gaps: gap intervals of a `Recording` are written as
    values and a ``#`` comment line at the top says how many there are (readers skip it).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = write_rr(pathlib.Path(tempfile.mkdtemp()) / "rr.txt", [812.0, 790.5])
    >>> p.read_text()
    '812\\n790.5\\n'
    """
    unit = check_option("unit", unit, ("ms", "s"))
    comments = []
    if isinstance(rr, Recording):
        rr_ms = np.asarray(rr.rr_ms, dtype=np.float64)
        n_gaps = int(rr.gaps.sum())
        if n_gaps:
            comments.append(f"# {n_gaps} of these intervals are gaps (recording breaks or "
                            "excluded artifacts), not usable NN intervals")
            logger.info("rrkit: %s: wrote %d gap intervals as plain values", path, n_gaps)
    else:
        rr_ms = as_float_array("rr", rr, positive=True)
    if header is not None and ("\n" in header or "\r" in header):
        raise InputError(f"header must be one line; got {header!r}")
    values = rr_ms / 1000.0 if unit == "s" else rr_ms
    lines = comments + ([header] if header else [])
    body = "\n".join(lines + [f"{v:.15g}" for v in values.tolist()]) + "\n"
    data = body.encode("utf-8")
    dest = Path(os.fspath(path))
    if dest.suffix.lower() == ".gz":
        data = gzip.compress(data, mtime=0)
    if not dest.parent.is_dir():
        raise InputError("the folder to write into does not exist", path=dest.parent)
    atomic_write_bytes(dest, data, fsync=False)
    return dest
