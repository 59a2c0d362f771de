"""Checks shared by every reader: positive intervals, increasing peaks, enough beats.

Each failure is an `InputError` naming the file and the line (when the values came from a text
file) with what was found and what was expected.
"""

from __future__ import annotations

import os
import stat

import numpy as np

from ..errors import InputError

__all__ = ["MIN_INTERVALS", "check_enough", "check_regular_file", "check_signal",
           "peaks_to_seconds", "rr_to_ms"]

#: fewest intervals a reader accepts: with fewer there is not even one successive difference
#: pair to analyse (RMSSD needs two intervals, a spectrum far more)
MIN_INTERVALS = 3

_TO_S = {"s": 1.0, "ms": 1e-3}


def _line(lines: np.ndarray | None, j: int) -> int | None:
    return None if lines is None else int(lines[j])


def rr_to_ms(values: np.ndarray, *, unit: str, fs_hz: float | None, path: str,
             lines: np.ndarray | None, column: str | None) -> np.ndarray:
    """RR values in ``unit`` -> milliseconds; InputError for zero or negative intervals."""
    bad = np.flatnonzero(values <= 0)
    if bad.size:
        j = int(bad[0])
        more = f" ({bad.size} such values)" if bad.size > 1 else ""
        where = f" in column {column!r}" if column else ""
        raise InputError(
            f"found an RR interval of {values[j]:g}{where}{more}, expected intervals > 0",
            path=path, line=_line(lines, j),
            hint="zero or negative intervals cannot come from a heartbeat; check the export")
    if unit == "samples":
        if fs_hz is None:
            raise InputError("RR intervals in samples need the sampling rate", path=path,
                             hint="pass fs= in Hz")
        return values * (1000.0 / fs_hz)
    return values * (1000.0 if unit == "s" else 1.0)


def peaks_to_seconds(values: np.ndarray, *, unit: str, fs_hz: float | None, path: str,
                     lines: np.ndarray | None, column: str | None) -> np.ndarray:
    """Peak times in ``unit`` -> seconds; InputError when a peak does not follow its predecessor."""
    d = np.diff(values)
    bad = np.flatnonzero(d <= 0)
    if bad.size:
        j = int(bad[0]) + 1
        verb = "repeats" if d[j - 1] == 0 else "goes backwards from"
        prev = f" (line {_line(lines, j - 1)})" if lines is not None else f" (value {j - 1})"
        where = f" in column {column!r}" if column else ""
        raise InputError(
            f"peak time {values[j]:g}{where} {verb} {values[j - 1]:g}{prev}, expected peak times "
            "that increase" + (f" ({bad.size} such steps)" if bad.size > 1 else ""),
            path=path, line=_line(lines, j),
            hint="sort the file, or pass kind='rr' if the values are intervals")
    if unit == "samples":
        if fs_hz is None:
            raise InputError(
                "peak positions in samples need the sampling rate to become times",
                path=path, hint="pass fs=, the sampling rate in Hz")
        return values / fs_hz
    return values * _TO_S[unit]


def check_enough(n_intervals: int, *, path: str, what: str) -> None:
    """InputError when fewer than `MIN_INTERVALS` intervals were found."""
    if n_intervals < MIN_INTERVALS:
        n_intervals = max(n_intervals, 0)  # no beat at all is zero intervals
        raise InputError(
            f"found {n_intervals} interval{'s' if n_intervals != 1 else ''} ({what}), expected "
            f"at least {MIN_INTERVALS} for any analysis (too few beats)", path=path)


_SPECIAL_KINDS = ((stat.S_ISFIFO, "a named pipe (FIFO)"), (stat.S_ISSOCK, "a socket"),
                  (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"))


def check_regular_file(path: str | os.PathLike[str]) -> None:
    """InputError unless ``path`` is a regular file (or a link to one).

    Only `os.stat` is used, which never opens the file: opening a named pipe blocks until some
    other process writes to it, and a device can stream without end, so these are refused
    before any read.
    """
    try:
        mode = os.stat(path).st_mode
    except FileNotFoundError:
        raise InputError("file not found", path=path, hint="check the path") from None
    except OSError as exc:
        raise InputError(f"cannot read the file ({exc.strerror or exc})", path=path) from None
    if stat.S_ISREG(mode):
        return
    if stat.S_ISDIR(mode):
        raise InputError("is a directory, expected a file", path=path)
    what = next((name for test, name in _SPECIAL_KINDS if test(mode)), "a special file")
    raise InputError(f"is {what}, not a regular file; rrkit reads only regular files",
                     path=path, hint="save the data to a file first")


def check_signal(signal, *, fs_hz: float | None, detector: str, detectors: tuple[str, ...],
                 min_fs_hz: float, min_s: float, what: str, path: str | None,
                 fs_example: int) -> tuple[np.ndarray, float, str]:
    """The rules every raw signal (ECG, PPG) meets before detection: ``(samples, fs, detector)``.

    The sampling rate has no default (an error says so), it must reach ``min_fs_hz``, the
    detector must be one of ``detectors``, and the signal must last ``min_s`` seconds.
    """
    from .._validation import check_option, check_range

    if fs_hz is None:
        raise InputError(f"reading {what} needs its sampling rate; there is no default",
                         path=path, hint=f"pass fs= in Hz, for example fs={fs_example}")
    try:
        fs = check_range("fs", fs_hz, low=min_fs_hz, unit="Hz")
    except InputError:  # the rate may come from the file's header: name the file
        raise InputError(
            f"sampling rate {fs_hz!r} Hz, expected at least {min_fs_hz:g} Hz for peak "
            f"detection in {what} (a beat spans only a few samples below it)", path=path,
            hint="check the rate in the file header or fs=") from None
    detector = check_option("detector", detector, detectors)
    sig = np.asarray(signal, dtype=np.float64).ravel()
    if sig.size < min_s * fs:
        raise InputError(f"the {what} lasts {sig.size / fs:.2f} s, expected at least "
                         f"{min_s:g} s of signal", path=path)
    return sig, fs, detector
