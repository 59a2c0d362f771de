"""Atomic output files: write to a temporary file in the same folder, then `os.replace`.

A reader (or a re-run after the process was killed) sees either the previous complete file or
the new complete file, never a partial one. Temporary files are hidden (``.<name>.``) and carry
the suffix `TMP_SUFFIX`; `remove_stale_temporaries` deletes those a killed run left behind. The
final file gets the usual mode (0666 minus the umask), not the 0600 of a temporary file.

The one implementation of this in rrkit (used by the HDF5 store, `write_rr`, the batch outputs,
the files of ``rrkit clean``, ``rrkit agree`` and ``rrkit pair``, the Bland-Altman and the
paired-recordings figures); it sits at the lowest stage so that any stage may import it.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path

__all__ = ["TMP_SUFFIX", "atomic_path", "atomic_write_bytes", "atomic_write_text",
           "remove_stale_temporaries"]

TMP_SUFFIX = ".rrkit-tmp"


def _file_mode() -> int:
    # mkstemp creates 0600 files; give the final file the usual mode (0666 minus the umask)
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


_MODE = _file_mode()


@contextlib.contextmanager
def atomic_path(path: str | os.PathLike[str], *, fsync: bool = True) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; on success it replaces ``path`` atomically.

    Use it for writers that want a file name (h5py, pyarrow). On an exception the temporary
    file is removed and ``path`` is left as it was.

    Parameters
    ----------
    path : path-like
        The final file.
    fsync : bool
        Flush the temporary file to disk before the rename (default True; protects against a
        power loss as well as a killed process).
    """
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=TMP_SUFFIX, dir=path.parent)
    os.close(fd)
    tmp_path = Path(tmp)
    os.chmod(tmp_path, _MODE)
    try:
        yield tmp_path
        if fsync:
            with open(tmp_path, "rb+") as fh:
                os.fsync(fh.fileno())
        os.replace(tmp_path, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            tmp_path.unlink()
        raise


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes, *, fsync: bool = True) -> None:
    """Write ``data`` to ``path`` atomically (temporary file + `os.replace`)."""
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=TMP_SUFFIX, dir=path.parent)
    try:
        os.chmod(tmp, _MODE)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            if fsync:
                fh.flush()
                os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise


def atomic_write_text(path: str | os.PathLike[str], text: str, *, fsync: bool = True) -> None:
    """Write ``text`` (UTF-8, ``\\n`` line ends) to ``path`` atomically."""
    atomic_write_bytes(path, text.encode("utf-8"), fsync=fsync)


def remove_stale_temporaries(folder: str | os.PathLike[str]) -> int:
    """Delete temporary files a killed run left in ``folder`` (not recursive); return how many."""
    n = 0
    folder = Path(folder)
    if not folder.is_dir():
        return 0
    for p in folder.iterdir():
        if p.name.startswith(".") and p.name.endswith(TMP_SUFFIX) and p.is_file():
            with contextlib.suppress(FileNotFoundError):
                p.unlink()
                n += 1
    return n
