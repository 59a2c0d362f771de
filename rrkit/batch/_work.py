"""The per-file work done in a worker process, and the resume cache of its results.

A worker reads one file, cleans it, resolves the windows and computes the metrics
(`rrkit.daily.measure_recording`) and returns a plain dict of numbers, strings and numpy
arrays. Any exception becomes a result with ``ok=False``, the error type and a one-line
message; warnings are recorded as notes (so a warnings-as-errors setting in the parent cannot
turn a usable file into a failed one).

One cache entry per input is kept in ``<outdir>/.rrkit-cache/``, named by the input's SHA-256
and the hash of the per-file settings, written atomically: by the pool's worker processes
(which share this machine's disk; in parallel, off the parent), or by the client as each
result arrives when the workers are elsewhere (a Dask cluster: its workers never write into
the output folder). The bytes are the same either way. A re-run loads the entry instead of
recomputing when both hashes are unchanged.
"""

from __future__ import annotations

import contextlib
import json
import os
import signal
import threading
import warnings
from pathlib import Path
from typing import Any

import numpy as np

from .._atomic import atomic_path
from .._plain import digest, to_plain
from ..daily import DailySettings, measure_recording

__all__ = ["ARRAY_NAMES", "TIME_LIMIT", "TRANSIENT_ERRORS", "WORKER_DIED", "ResultCache",
           "process_and_cache", "process_file", "settings_hash", "time_limit"]

#: Arrays a successful result carries (for the HDF5 store).
ARRAY_NAMES = ("raw_beat_times_s", "raw_rr_ms", "raw_gaps", "label_codes", "changed",
               "corrected_beat_times_s", "corrected_rr_ms", "corrected_gaps", "origin")
CACHE_DIR = ".rrkit-cache"
_CACHE_FORMAT = 4
_META = "meta"
_ARRAY_PREFIX = "a_"


def settings_hash(settings: DailySettings) -> str:
    """The resume-cache key of the settings: `rrkit._plain.digest` of the part that decides a
    single file's result (`DailySettings.file_part`, with the rrkit version)."""
    return digest(settings.file_part())


def _one_line(text: str) -> str:
    return " ".join(str(text).split())


def label_codes(labels) -> np.ndarray:
    """Labels as uint8 indices into `rrkit.clean.LABELS` (compact to send, cache and store)."""
    from ..clean import LABELS

    names = np.asarray(LABELS)
    order = np.argsort(names)
    lab = np.asarray(labels, dtype=str)
    pos = np.clip(np.searchsorted(names[order], lab), 0, names.size - 1)
    codes = order[pos].astype(np.uint8)
    bad = names[codes] != lab
    if bad.any():
        raise ValueError(f"unknown interval label {lab[bad][0]!r}")
    return codes


class FileTimeLimit(BaseException):
    """Raised inside the per-file work when it passes the per-file time limit.

    A `BaseException`, so that no ``except Exception`` inside a reader can swallow it.
    """


#: ``error_type`` of a file stopped by the per-file time limit (never cached: a re-run with a
#: longer limit tries it again)
TIME_LIMIT = "TimeLimitExceeded"
#: ``error_type`` of a file whose worker process died (never cached)
WORKER_DIED = "WorkerDied"
#: results never cached
TRANSIENT_ERRORS = (TIME_LIMIT, WORKER_DIED)
#: a test-only hook: a worker whose file's relative path contains this text ends its own
#: process at once (simulating a file that kills its worker every time)
CRASH_HOOK_ENV = "RRKIT_TEST_CRASH_ON"


@contextlib.contextmanager
def time_limit(seconds: float | None):
    """Raise `FileTimeLimit` in this thread when the block runs longer than ``seconds``.

    In a process's main thread (pool workers) a real-time interval timer (``SIGALRM``) is
    used, which also interrupts a blocking system call; in other threads (Dask workers run
    tasks in threads) a timer thread raises the exception asynchronously in the working
    thread, which takes effect at its next Python instruction. None or 0: no limit.
    """
    if not seconds:
        yield
        return
    if threading.current_thread() is threading.main_thread() and hasattr(signal, "setitimer"):
        def on_alarm(signum, frame):
            raise FileTimeLimit

        old = signal.signal(signal.SIGALRM, on_alarm)
        signal.setitimer(signal.ITIMER_REAL, float(seconds))
        try:
            yield
        finally:
            signal.setitimer(signal.ITIMER_REAL, 0)
            signal.signal(signal.SIGALRM, old)
        return
    import ctypes

    tid = threading.get_ident()
    gate = threading.Lock()
    state = {"done": False, "fired": False}

    def fire():
        with gate:
            if not state["done"]:
                state["fired"] = True
                ctypes.pythonapi.PyThreadState_SetAsyncExc(ctypes.c_ulong(tid),
                                                           ctypes.py_object(FileTimeLimit))

    timer = threading.Timer(float(seconds), fire)
    timer.daemon = True
    timer.start()
    try:
        yield
    finally:
        with gate:
            state["done"] = True
            timer.cancel()
            if state["fired"]:  # an exception not yet delivered must not escape later
                ctypes.pythonapi.PyThreadState_SetAsyncExc(ctypes.c_ulong(tid), None)


def process_file(task: tuple[str, str, str], *, settings: DailySettings,
                 time_limit_s: float | None = None) -> dict[str, Any]:
    """Read, clean, window and measure one file; never raises for a bad file.

    Parameters
    ----------
    task : (path, relpath, sha256)
    settings : DailySettings
    time_limit_s : float, optional
        Per-file time limit in seconds (None: none); a file that takes longer gets the
        ``error_type`` `TIME_LIMIT`.

    Returns
    -------
    dict
        ``relpath, sha256, ok`` and, when ok: ``file_subject, file_start`` (ISO or None),
        ``read_info``, ``clean_summary``, ``rows`` (one dict per window), ``warnings`` and
        ``arrays`` (see `ARRAY_NAMES`); when not ok: ``error_type, message``.
    """
    path, relpath, sha = task
    out: dict[str, Any] = {"relpath": relpath, "sha256": sha}
    hook = os.environ.get(CRASH_HOOK_ENV)
    if hook and hook in relpath:
        os._exit(70)
    try:
        with time_limit(time_limit_s):
            _measure(path, settings, out)
    except FileTimeLimit:
        out.clear()
        out.update(relpath=relpath, sha256=sha, ok=False, error_type=TIME_LIMIT,
                   message=f"stopped after {time_limit_s:g} s: reading and measuring this file "
                           "took longer than the per-file time limit (rrkit daily --time-limit)")
    except Exception as exc:  # one bad file must never stop the run: report it instead
        out.clear()
        out.update(relpath=relpath, sha256=sha, ok=False, error_type=_error_type(exc),
                   message=_one_line(str(exc)) or type(exc).__name__)
    return out


def _error_type(exc: BaseException) -> str:
    from ._discover import NOT_REGULAR

    if isinstance(exc, OSError) and "not a regular file" in str(exc):
        return NOT_REGULAR
    return type(exc).__name__


def _measure(path: str, settings: DailySettings, out: dict[str, Any]) -> None:
    from ..io import read
    from ._discover import not_regular_message, special_kind

    kind = special_kind(os.stat(path).st_mode)
    if kind is not None:  # checked again here: the file may have changed since discovery
        raise OSError(not_regular_message(kind))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        rec = read(path, kind=settings.kind, unit=settings.unit)
        if rec.n_intervals == 0:
            raise ValueError("the file holds no intervals")
        rows, cr = measure_recording(rec, settings=settings)
    notes = [f"{w.category.__name__}: {_one_line(w.message)}" for w in caught]
    out.update(
        ok=True,
        file_subject=rec.subject,
        file_start=None if rec.start is None else rec.start.isoformat(),
        read_info=to_plain(rec.info.to_dict()),
        clean_summary=to_plain(cr.summary.to_dict()),
        rows=rows,
        warnings=notes,
        arrays={
            "raw_beat_times_s": np.asarray(rec.beat_times_s),
            "raw_rr_ms": np.asarray(rec.rr_ms),
            "raw_gaps": np.asarray(rec.gaps),
            "label_codes": label_codes(cr.labels),
            "changed": np.asarray(cr.changed, dtype=bool),
            "corrected_beat_times_s": np.asarray(cr.recording.beat_times_s),
            "corrected_rr_ms": np.asarray(cr.recording.rr_ms),
            "corrected_gaps": np.asarray(cr.recording.gaps),
            "origin": np.asarray(cr.origin, dtype=np.int64),
        },
    )


def process_and_cache(task: tuple[str, str, str], *, settings: DailySettings,
                      time_limit_s: float | None, cache_folder: str,
                      digest: str) -> dict[str, Any]:
    """`process_file`, then its resume-cache entry written by the worker itself.

    Used by executors whose workers share this machine's file system (the process pool), so
    that the entries are written in parallel and not by the parent; the result says
    ``cached=True`` when its entry was written. A failure to write only costs a recomputation.
    """
    result = process_file(task, settings=settings, time_limit_s=time_limit_s)
    if result.get("error_type") not in TRANSIENT_ERRORS:
        try:
            write_entry(Path(cache_folder), digest, result)
            result["cached"] = True
        except Exception:  # the parent tries again
            pass
    return result


def write_entry(folder: Path, digest: str, result: dict[str, Any]) -> None:
    """Write one cache entry atomically (see `ResultCache` for the format)."""
    arrays = result.get("arrays") if result.get("ok") else None
    groups: dict[str, list[np.ndarray]] = {}
    specs = []
    for name, arr in sorted((arrays or {}).items()):
        a = np.ascontiguousarray(arr)
        if a.dtype.kind not in "biuf":
            raise TypeError(f"cache: array {name!r} has dtype {a.dtype}, not a plain one")
        key = _ARRAY_PREFIX + a.dtype.str.replace("<", "le").replace(">", "be").replace("|", "")
        parts = groups.setdefault(key, [])
        at = sum(p.size for p in parts)
        parts.append(a.ravel())
        specs.append({"name": name, "member": key, "shape": list(a.shape), "start": at,
                      "stop": at + a.size})
    meta = {"format": _CACHE_FORMAT, "settings": digest, "sha256": result["sha256"],
            "result": {k: v for k, v in result.items() if k not in ("arrays", "cached")},
            "arrays": specs}
    payload = {key: np.concatenate(parts) for key, parts in groups.items()}
    payload[_META] = np.frombuffer(json.dumps(meta).encode("utf-8"), dtype=np.uint8)
    with atomic_path(entry_path(folder, digest, result["sha256"]), fsync=False) as tmp, \
            open(tmp, "wb") as fh:
        np.savez(fh, **payload)


def _read_entry(path: Path) -> dict[str, Any]:
    # numpy checks each member's CRC-32 as it reads it, so a damaged entry raises here
    with open(path, "rb") as fh, np.load(fh, allow_pickle=False) as z:
        meta = json.loads(z[_META].tobytes().decode("utf-8"))
        members = {key: z[key] for key in z.files if key.startswith(_ARRAY_PREFIX)}
    arrays = {}
    for spec in meta["arrays"]:
        flat = members[spec["member"]]
        if not 0 <= spec["start"] <= spec["stop"] <= flat.size:
            raise ValueError("cache entry: an array lies outside its member")
        arrays[spec["name"]] = flat[spec["start"]:spec["stop"]].reshape(spec["shape"]).copy()
    meta["arrays"] = arrays
    return meta


def entry_path(folder: Path, digest: str, sha: str) -> Path:
    """``<folder>/<input sha256>-<settings hash, 16 hex>.npz`` (hex digits only)."""
    return folder / f"{sha}-{digest[:16]}.npz"


def broken_result(task, exc: BaseException) -> dict[str, Any]:
    """The result for a file whose worker process died every time it was tried."""
    return {"relpath": task[1], "sha256": task[2], "ok": False, "error_type": WORKER_DIED,
            "message": _one_line("the worker process died every time it read this file (tried "
                                 f"alone, on fresh workers): {exc}")}


class ResultCache:
    """Per-input results on disk, keyed by input SHA-256 and settings hash.

    Each entry is one numpy ``.npz`` archive written atomically: the member ``meta`` holds the
    UTF-8 JSON of the result's scalar fields (with the cache format, settings hash and input
    SHA-256) and where each array lies; the arrays of one dtype are stored end to end in one
    member (``a_f8``, ``a_b1``...), so an entry has a handful of members to open, not one per
    array. Entries are loaded with
    ``numpy.load(allow_pickle=False)``, so an entry cannot run code when loaded, and the zip
    format's CRC-32 of every member catches a damaged file. A missing, unreadable or foreign
    entry counts as absent, so the worst a damaged cache can cause is a recomputation.
    """

    def __init__(self, outdir: str | os.PathLike[str], settings_digest: str) -> None:
        self.folder = Path(outdir) / CACHE_DIR
        self.folder.mkdir(parents=True, exist_ok=True)
        self.digest = settings_digest

    def _path(self, sha: str) -> Path:
        return entry_path(self.folder, self.digest, sha)

    def load(self, sha: str, relpath: str) -> dict[str, Any] | None:
        p = self._path(sha)
        if not p.is_file():
            return None
        try:
            meta = _read_entry(p)
            if meta.get("format") != _CACHE_FORMAT or meta.get("settings") != self.digest \
                    or meta.get("sha256") != sha:
                return None
            result = meta["result"]
            if result.get("ok"):
                if set(meta["arrays"]) != set(ARRAY_NAMES):
                    return None
                result["arrays"] = meta["arrays"]
        except Exception:  # a damaged entry is recomputed, never trusted
            with contextlib.suppress(OSError):
                p.unlink()
            return None
        result["relpath"] = relpath
        return result

    def store(self, result: dict[str, Any]) -> None:
        """Write the entry of one result atomically."""
        write_entry(self.folder, self.digest, result)
