"""Discovery: which files of a folder are recordings, and whose and when each one is.

Subject and start come, field by field, from (in this order) a manifest row, a file-name
pattern, and the file itself (`Recording.subject`, `Recording.start` as the reader found them).
Whatever is still unknown after the file was read is *reported* (a row in ``errors.csv``),
never guessed.
"""

from __future__ import annotations

import csv
import datetime as dt
import hashlib
import os
import stat
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..daily import localize
from ..errors import InputError
from ._pattern import DEFAULT_PATTERN, FilenamePattern

__all__ = [
    "DEFAULT_EXTENSIONS",
    "Candidate",
    "Discovery",
    "assign",
    "discover",
    "read_manifest",
    "sha256_file",
]

#: File endings looked at by default (also with ``.gz``). WFDB records are found by their
#: ``.hea`` header; ``.dat`` / ``.atr`` beside it belong to that record.
DEFAULT_EXTENSIONS = (".txt", ".csv", ".tsv", ".rr", ".edf", ".hea")
_MANIFEST_REQUIRED = ("path", "subject")
_MANIFEST_KNOWN = {"path", "subject", "start", "date", "time", "start_time", "morning"}


@dataclass(frozen=True)
class Candidate:
    """One file to process, with what is known of it before it is read.

    Attributes
    ----------
    path : Path
        Absolute path.
    relpath : str
        Path relative to the scanned folder, ``/``-separated (how it is shown everywhere).
    subject : str or None
        From the manifest or the pattern.
    start : datetime, date or None
        A full start (naive = local time in the run's zone, or aware), a date alone, or None.
    marked : bool or None
        The manifest's ``morning`` column (None when absent).
    extra : dict
        Other manifest columns or pattern fields (``position``, ``protocol``, ...), as text.
    assigned_by : str
        ``"manifest"``, ``"pattern"`` or ``"file"`` (to be read from the file).
    """

    path: Path
    relpath: str
    subject: str | None = None
    start: Any = None
    marked: bool | None = None
    extra: dict = field(default_factory=dict)
    assigned_by: str = "file"


@dataclass
class Discovery:
    """What `discover` found: candidates, problems (relpath, error type, message), counts."""

    candidates: list[Candidate]
    problems: list[tuple[str, str, str]]
    n_ignored: int = 0
    pattern: str | None = None
    manifest: str | None = None


NOT_REGULAR = "NotARegularFile"


def special_kind(mode: int) -> str | None:
    """What a non-regular file is (``"a named pipe (FIFO)"``...), or None for a regular file."""
    if stat.S_ISREG(mode):
        return None
    for test, name in ((stat.S_ISFIFO, "a named pipe (FIFO)"), (stat.S_ISSOCK, "a socket"),
                       (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
                       (stat.S_ISDIR, "a folder")):
        if test(mode):
            return name
    return "not a regular file"


def not_regular_message(kind: str) -> str:
    """The ``errors.csv`` message for a special file."""
    return f"{kind}, not a regular file: only regular files are read (it was left alone)"


def sha256_file(path: str | os.PathLike[str], *, block: int = 1 << 20) -> str:
    """SHA-256 hex digest of a regular file's bytes.

    The file is opened without blocking and checked to be a regular file before it is read,
    so a named pipe never makes the run wait (an `OSError` says what it is instead).
    """
    h = hashlib.sha256()
    fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0))
    with os.fdopen(fd, "rb") as fh:
        kind = special_kind(os.fstat(fd).st_mode)
        if kind is not None:
            raise OSError(not_regular_message(kind))
        while chunk := fh.read(block):
            h.update(chunk)
    return h.hexdigest()


def _rel(path: Path, root: Path) -> str:
    try:
        return path.relative_to(root).as_posix()
    except ValueError:
        return path.as_posix()


def _is_recording_name(name: str, extensions: tuple[str, ...]) -> bool:
    low = name.lower()
    if low.endswith(".gz"):
        low = low[:-3]
    return any(low.endswith(e) for e in extensions)


def _walk(root: Path, exclude: list[Path], extensions: tuple[str, ...],
          special: list[tuple[str, str, str]]) -> tuple[list[Path], int]:
    # root is resolved by the caller; paths below it are built from it (no per-file resolve).
    # Special files with a recording's name (FIFOs, sockets, devices) go to ``special``.
    files: list[Path] = []
    ignored = 0
    excl = {p.resolve() for p in exclude}
    excl_names = {p.name for p in excl}
    for dirpath, dirnames, filenames in os.walk(root):
        here = Path(dirpath)
        dirnames[:] = sorted(d for d in dirnames
                             if not d.startswith(".") and (here / d).resolve() not in excl)
        for name in sorted(filenames):
            p = here / name
            if name.startswith(".") or (name in excl_names and p.resolve() in excl):
                continue
            if _is_recording_name(name, extensions):
                try:
                    kind = special_kind(os.stat(p).st_mode)
                except OSError:
                    kind = None  # a dangling link: reported when it is read
                if kind is not None:
                    special.append((_rel(p, root), NOT_REGULAR, not_regular_message(kind)))
                    continue
                files.append(p)
            else:
                ignored += 1
    return files, ignored


def read_manifest(path: str | os.PathLike[str], *, root: str | os.PathLike[str] | None = None):
    """Read a manifest CSV: one row per recording, ``path, subject`` and a start.

    Parameters
    ----------
    path : path-like
        CSV (UTF-8, comma-separated, header row). Required columns ``path`` and ``subject``;
        the start as ``start`` (ISO date-time, with or without an offset; naive = local time
        in the run's zone) or as ``date`` (``YYYY-MM-DD``) plus optional ``time`` /
        ``start_time`` (``HH:MM[:SS]``). Optional ``morning`` (true/1/yes marks the day's
        morning recording) and any other columns (``position``, ``protocol``), kept as text.
    root : path-like, optional
        A second folder to resolve relative paths against: a relative path is looked up beside
        the manifest first, then under ``root`` (the scanned folder).

    Returns
    -------
    entries : dict
        Resolved absolute path -> (line number, row dict with ``subject``, ``start``,
        ``marked``, ``extra``).
    problems : list of (relpath, error type, message)
        Rows that could not be used (bad start, duplicate path, empty subject); the run goes
        on without them.

    Raises
    ------
    InputError
        When the file has no header or lacks a required column.
    """
    path = Path(path)
    base = path.parent
    second = Path(root) if root is not None else base
    with open(path, newline="", encoding="utf-8-sig") as fh:
        reader = csv.DictReader(fh)
        header = [h.strip() for h in (reader.fieldnames or [])]
        missing = [c for c in _MANIFEST_REQUIRED if c not in header]
        if not header or missing:
            raise InputError(f"manifest needs the columns {', '.join(_MANIFEST_REQUIRED)} "
                             f"and a start ('start', or 'date' with optional 'time'); found "
                             f"{header!r}", path=path, line=1)
        if "start" not in header and "date" not in header:
            raise InputError(f"manifest needs a 'start' or a 'date' column; found {header!r}",
                             path=path, line=1)
        reader.fieldnames = header
        entries: dict[Path, tuple[int, dict]] = {}
        problems: list[tuple[str, str, str]] = []
        for lineno, row in enumerate(reader, start=2):
            row = {k: (v or "").strip() for k, v in row.items() if k is not None}
            raw_path = row.get("path", "")
            if not raw_path:
                problems.append((f"{path.name}:{lineno}", "InputError",
                                 f"{path}, line {lineno}: empty path"))
                continue
            p = Path(raw_path)
            if p.is_absolute():
                full = p.resolve()
            else:
                full = (base / p).resolve()
                if not full.exists() and (second / p).exists():
                    full = (second / p).resolve()
            shown = _rel(full, second.resolve())
            try:
                subject = row.get("subject", "")
                if not subject:
                    raise InputError("empty subject", path=path, line=lineno)
                start = _manifest_start(row, path, lineno)
                if full in entries:
                    raise InputError(f"{raw_path!r} is listed again (first on line "
                                     f"{entries[full][0]})", path=path, line=lineno)
            except InputError as exc:
                problems.append((shown, "InputError", str(exc)))
                continue
            marked = None
            if "morning" in row and row["morning"] != "":
                marked = row["morning"].lower() in {"1", "true", "yes", "y", "x"}
            extra = {k: v for k, v in row.items() if k not in _MANIFEST_KNOWN}
            entries[full] = (lineno, {"subject": subject, "start": start, "marked": marked,
                                      "extra": extra})
    return entries, problems


def _manifest_start(row: dict, path: Path, lineno: int):
    text = row.get("start", "")
    if text:
        try:
            if len(text) == 10:
                return dt.date.fromisoformat(text)
            return dt.datetime.fromisoformat(text.replace("Z", "+00:00"))
        except ValueError:
            raise InputError(f"start {text!r} is not an ISO date-time (2026-03-01T07:10:00, "
                             "optionally with an offset such as +01:00)",
                             path=path, line=lineno) from None
    dtext = row.get("date", "")
    if not dtext:
        return None  # the file's own timestamps will be used
    try:
        day = dt.date.fromisoformat(dtext)
    except ValueError:
        raise InputError(f"date {dtext!r} is not YYYY-MM-DD", path=path, line=lineno) from None
    ttext = row.get("time") or row.get("start_time") or ""
    if not ttext:
        return day
    try:
        return dt.datetime.combine(day, dt.time.fromisoformat(ttext))
    except ValueError:
        raise InputError(f"time {ttext!r} is not HH:MM[:SS]", path=path, line=lineno) from None


def discover(
    root: str | os.PathLike[str],
    *,
    manifest: str | os.PathLike[str] | None = None,
    pattern: str | FilenamePattern | None = None,
    extensions: tuple[str, ...] = DEFAULT_EXTENSIONS,
    exclude: tuple[str | os.PathLike[str], ...] = (),
) -> Discovery:
    """Find the recordings under ``root`` (recursively) and what is known of each.

    Parameters
    ----------
    root : path-like
        The folder to scan. Hidden files and folders (``.name``) are skipped.
    manifest : path-like, optional
        A manifest CSV (see `read_manifest`); its rows win over the pattern. With a manifest
        and no pattern, only the files it lists are processed (others are counted in
        ``n_ignored``).
    pattern : str or FilenamePattern, optional
        A file-name pattern (see `rrkit.batch.FilenamePattern`); default `DEFAULT_PATTERN`
        when there is no manifest. Files it does not match are still read: their subject and
        start must then come from the file, else they are reported.
    extensions : tuple of str
        File endings to consider (``.gz`` variants included).
    exclude : tuple of path-like
        Folders or files to leave out (the output folder, the manifest).

    Returns
    -------
    Discovery
    """
    root = Path(root)
    if not root.is_dir():
        raise InputError(f"{root} is not a folder", hint="give the folder of recordings")
    excl = [Path(e) for e in exclude]
    if manifest is not None:
        excl.append(Path(manifest))
    root_res = root.resolve()
    special: list[tuple[str, str, str]] = []
    files, ignored = _walk(root_res, excl, extensions, special)
    problems: list[tuple[str, str, str]] = []
    entries: dict[Path, tuple[int, dict]] = {}
    if manifest is not None:
        entries, problems = read_manifest(manifest, root=root)
    problems += special
    pat = None
    if pattern is not None:
        pat = pattern if isinstance(pattern, FilenamePattern) else FilenamePattern(pattern)
    elif manifest is None:
        pat = FilenamePattern(DEFAULT_PATTERN)
    candidates: list[Candidate] = []
    seen: set[Path] = set()
    for p in files:
        full = p
        if entries and full not in entries:
            full = p.resolve()  # a symbolic link inside the folder
        seen.add(full)
        rel = _rel(full, root_res)
        if full in entries:
            e = entries[full][1]
            candidates.append(Candidate(full, rel, e["subject"], e["start"], e["marked"],
                                        dict(e["extra"]), "manifest"))
            continue
        if pat is None:
            ignored += 1
            continue
        try:
            m = pat.match(rel)
        except InputError as exc:
            problems.append((rel, "InputError", str(exc)))
            continue
        if m is None:
            candidates.append(Candidate(full, rel, assigned_by="file"))
            continue
        start = None
        if "date" in m:
            start = dt.datetime.combine(m["date"], m["time"]) if "time" in m else m["date"]
        extra = {k: v for k, v in m.items() if k not in ("subject", "date", "time")}
        candidates.append(Candidate(full, rel, m.get("subject"), start, None, extra, "pattern"))
    for full, (lineno, _) in entries.items():
        if full not in seen:
            shown = _rel(full, root_res)
            kind = special_kind(full.stat().st_mode) if full.exists() else None
            if kind is not None:
                problems.append((shown, NOT_REGULAR, not_regular_message(kind)))
            elif full.is_file():
                # listed in the manifest but outside the scanned folder or with another ending
                e = entries[full][1]
                candidates.append(Candidate(full, shown, e["subject"], e["start"], e["marked"],
                                            dict(e["extra"]), "manifest"))
            else:
                problems.append((shown, "FileNotFoundError",
                                 f"{manifest}, line {lineno}: listed file {shown} not found"))
    candidates.sort(key=lambda c: c.relpath)
    return Discovery(candidates, problems, ignored,
                     None if pat is None else pat.text,
                     None if manifest is None else str(manifest))


def assign(cand: Candidate, file_subject: str | None, file_start: dt.datetime | None, tz: str,
           *, pattern: str | None = None):
    """Subject and start of a file after reading it (precedence: manifest, pattern, file).

    Returns
    -------
    subject : str
    start : datetime (aware, in ``tz``) or date (when only the date is known)

    Raises
    ------
    InputError
        When the subject or the date is still unknown (the message says where rrkit looked),
        or a naive time does not exist in ``tz``.
    """
    where = ("not in the manifest" if cand.assigned_by != "manifest" else "empty in the manifest")
    if pattern is not None and cand.assigned_by == "file":
        where += f", the name does not match the pattern {pattern!r}"
    subject = cand.subject or file_subject
    if not subject:
        raise InputError(f"no subject for this file: {where}, and the file names none",
                         path=cand.relpath, hint="add it to a manifest or rename it to fit "
                         "the pattern")
    start = cand.start
    if isinstance(start, dt.datetime):
        return subject, localize(start, tz, what=f"start of {cand.relpath}")
    if isinstance(start, dt.date):
        if file_start is not None:
            local = localize(file_start, tz, what=f"time stamp in {cand.relpath}")
            if local.date() == start:
                return subject, local
        return subject, start
    if file_start is not None:
        return subject, localize(file_start, tz, what=f"time stamp in {cand.relpath}")
    raise InputError(f"no date for this file: {where}, and the file holds no time stamps",
                     path=cand.relpath, hint="add it to a manifest or rename it to fit the "
                     "pattern")
