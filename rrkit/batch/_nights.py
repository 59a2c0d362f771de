"""Reading a folder of whole-night recordings, each placed on a subject and a start time."""

from __future__ import annotations

import os
from pathlib import Path

from ..errors import InputError
from ..recording import Recording
from ._discover import assign, discover

__all__ = ["read_nights"]


def read_nights(folder: str | os.PathLike[str], *, manifest=None, pattern: str | None = None,
                tz: str = "UTC", exclude=()) -> tuple[list[Recording], list[tuple[str, str, str]]]:
    """Read every recording under ``folder`` with its subject and start time.

    Files are found and placed as `run_daily` does (`discover`: manifest, then file-name
    pattern, then time stamps in the file); ``manifest.csv`` in the folder is used when no
    manifest is given. A file that cannot be read or placed is reported, never fatal.

    Parameters
    ----------
    folder : path-like
    manifest : path-like, optional
    pattern : str, optional
        File-name pattern (see `rrkit.batch.FilenamePattern`).
    tz : str
        IANA zone of naive start times.
    exclude : sequence of path-like
        Files to leave out (the table of reported values when it sits in the folder).

    Returns
    -------
    nights : list of Recording
        With ``subject``, ``start`` and ``source`` (the path relative to ``folder``) set.
    errors : list of (path, error_type, message)
        One per unusable file, the rows of ``errors.csv`` (`rrkit.errors.ERROR_COLUMNS`).
    """
    from ..io import read

    folder = Path(folder)
    if manifest is None and (folder / "manifest.csv").is_file():
        manifest = folder / "manifest.csv"
    disc = discover(folder, manifest=manifest, pattern=pattern,
                    exclude=tuple(Path(p).resolve() for p in exclude))
    errors = [tuple(p) for p in disc.problems]
    nights = []
    for cand in disc.candidates:
        try:
            rec = read(cand.path)
            subject, start = assign(cand, rec.subject, rec.start, tz, pattern=disc.pattern)
            if not hasattr(start, "hour"):
                raise InputError("only the date of this night is known; a night needs its start "
                                 "time", path=cand.relpath, hint="give start in the manifest")
            nights.append(rec.replace(subject=subject, start=start, source=cand.relpath))
        except (InputError, OSError) as exc:
            errors.append((cand.relpath, type(exc).__name__, " ".join(str(exc).split())))
    return nights, errors
