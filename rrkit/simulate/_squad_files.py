"""Text exports of the invented squad's recordings, in the shapes phone apps and straps give.

Every writer here is deterministic: fixed decimals, ``\\n`` line ends, and gzip members with a
zero time stamp and no stored file name, so the same data always give the same bytes.
"""

from __future__ import annotations

import gzip
import io
from datetime import datetime, timedelta

import numpy as np

__all__ = ["FORMATS", "gz_bytes", "render", "suffix"]

#: format name -> (file suffix, description)
FORMATS: dict[str, tuple[str, str]] = {
    "ms": (".txt", "RR in ms, one integer per line"),
    "ms_header": (".txt", "RR in ms, one per line under a 'rr_ms' header"),
    "s": (".txt", "RR in seconds, one per line, three decimals"),
    "table_time": (".csv", "comma table: ISO time stamp of each beat, RR in ms"),
    "table_time_gz": (".csv.gz", "the same table, gzip-compressed"),
    "semicolon_comma": (".csv", "semicolon table with decimal commas: elapsed s, RR in s"),
    "ms_gz": (".txt.gz", "RR in ms one per line, gzip-compressed"),
}


def suffix(file_format: str) -> str:
    """File-name ending for a format."""
    return FORMATS[file_format][0]


def gz_bytes(data: bytes) -> bytes:
    """Gzip ``data`` reproducibly (mtime 0, no file name in the header)."""
    buf = io.BytesIO()
    with gzip.GzipFile(filename="", mode="wb", fileobj=buf, mtime=0, compresslevel=9) as fh:
        fh.write(data)
    return buf.getvalue()


def render(rr_ms: np.ndarray, start: datetime, file_format: str) -> bytes:
    """The bytes of one recording file.

    Parameters
    ----------
    rr_ms : numpy.ndarray
        Intervals in ms, already rounded to whole ms (strap resolution).
    start : datetime
        Wall-clock time of the first beat (naive local time).
    file_format : str
        One of `FORMATS`.
    """
    rr = np.asarray(rr_ms, dtype=np.int64)
    if file_format in ("ms", "ms_gz"):
        text = "".join(f"{v}\n" for v in rr)
    elif file_format == "ms_header":
        text = "rr_ms\n" + "".join(f"{v}\n" for v in rr)
    elif file_format == "s":
        text = "".join(f"{v / 1000:.3f}\n" for v in rr)
    elif file_format in ("table_time", "table_time_gz"):
        t_ms = np.cumsum(rr)
        lines = ["timestamp,rr_ms\n"]
        for tm, v in zip(t_ms, rr, strict=True):
            stamp = start + timedelta(milliseconds=int(tm))
            lines.append(f"{stamp.isoformat(timespec='milliseconds')},{v}\n")
        text = "".join(lines)
    elif file_format == "semicolon_comma":
        t_ms = np.cumsum(rr)
        lines = ["time_s;rr_s\n"]
        for tm, v in zip(t_ms, rr, strict=True):
            lines.append(f"{tm / 1000:.3f};{v / 1000:.3f}\n".replace(".", ","))
        text = "".join(lines)
    else:  # pragma: no cover - guarded by the athlete table
        raise KeyError(file_format)
    data = text.encode("ascii")
    if file_format.endswith("_gz"):
        data = gz_bytes(data)
    return data
