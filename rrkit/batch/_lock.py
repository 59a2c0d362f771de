"""One run at a time per output folder: an operating-system lock on ``<outdir>/.rrkit-lock``.

The lock is the kernel's advisory whole-file lock (``fcntl.flock`` on POSIX, ``msvcrt.locking``
on Windows), so it is released by the operating system when the holding process ends, however
it ends. A lock file left behind by a killed run is therefore not a held lock: the next run
takes it over at once (and says so in the log). While a run holds the lock, the file holds
its process id, host name and start time, which a second run prints in its error line.

The lock is advisory and local: on network file systems whose ``flock`` is not shared
between machines (some NFS set-ups), two runs on two machines are not kept apart.
"""

from __future__ import annotations

import datetime as dt
import json
import logging
import os
import socket
import time
from pathlib import Path

from ..errors import InputError

__all__ = ["LOCK_NAME", "FolderLock"]

LOCK_NAME = ".rrkit-lock"
log = logging.getLogger("rrkit")


def _try_lock(fd: int) -> bool:
    try:
        import fcntl
    except ImportError:  # pragma: no cover - Windows
        import msvcrt

        try:
            msvcrt.locking(fd, msvcrt.LK_NBLCK, 1)
        except OSError:
            return False
        return True
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except BlockingIOError:
        return False
    return True


def _unlock(fd: int) -> None:
    try:
        import fcntl
    except ImportError:  # pragma: no cover - Windows
        import msvcrt

        os.lseek(fd, 0, os.SEEK_SET)
        msvcrt.locking(fd, msvcrt.LK_UNLCK, 1)
        return
    fcntl.flock(fd, fcntl.LOCK_UN)


def _holder_text(fd: int) -> dict:
    try:
        os.lseek(fd, 0, os.SEEK_SET)
        return json.loads(os.read(fd, 4096).decode("utf-8") or "{}")
    except (OSError, ValueError):
        return {}


class FolderLock:
    """Exclusive lock on an output folder for the length of a run (a context manager).

    Parameters
    ----------
    folder : path-like
        The output folder (must exist).
    wait_s : float
        How long to wait for another run to release the folder before giving up
        (0: give up at once).
    poll_s : float
        How often to try again while waiting.

    Raises
    ------
    InputError
        On entry, when another process still holds the folder after ``wait_s``; the message
        names its process id, host and start time.
    """

    def __init__(self, folder: str | os.PathLike[str], *, wait_s: float = 0.0,
                 poll_s: float = 0.2) -> None:
        self.path = Path(folder) / LOCK_NAME
        self.wait_s = max(0.0, float(wait_s))
        self.poll_s = poll_s
        self._fd: int | None = None
        self.took_over: dict | None = None

    def acquire(self) -> None:
        fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
        deadline = time.monotonic() + self.wait_s
        try:
            while not _try_lock(fd):
                if time.monotonic() >= deadline:
                    who = _holder_text(fd)
                    pid = who.get("pid", "?")
                    host = who.get("host", "?")
                    since = who.get("since", "?")
                    raise InputError(
                        f"output folder {self.path.parent} is in use by another rrkit run "
                        f"(process {pid} on {host}, since {since})",
                        hint="wait for that run to finish (or pass --wait SECONDS), or choose "
                             "another output folder")
                time.sleep(self.poll_s)
        except BaseException:
            os.close(fd)
            raise
        previous = _holder_text(fd)
        if previous.get("pid"):
            # the kernel released the lock of a process that ended without unlocking
            self.took_over = previous
            log.info("took over the lock of %s left by an ended run (process %s on %s)",
                     self.path.parent, previous.get("pid"), previous.get("host"))
        me = {"pid": os.getpid(), "host": socket.gethostname(),
              "since": dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds")}
        os.lseek(fd, 0, os.SEEK_SET)
        os.ftruncate(fd, 0)
        os.write(fd, json.dumps(me).encode("utf-8"))
        self._fd = fd

    def release(self) -> None:
        if self._fd is None:
            return
        fd, self._fd = self._fd, None
        try:
            os.ftruncate(fd, 0)  # an empty file: released cleanly, nothing to take over
            _unlock(fd)
        finally:
            os.close(fd)

    def __enter__(self) -> FolderLock:
        self.acquire()
        return self

    def __exit__(self, *exc) -> None:
        self.release()
