"""`run_daily`: a folder of recordings -> the daily table and the run's output files."""

from __future__ import annotations

import datetime as dt
import functools
import hashlib
import io
import json
import logging
import os
import platform
import sys
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .._atomic import atomic_path, atomic_write_text, remove_stale_temporaries
from .._version import __version__
from ..daily import DAILY_METRICS, DailySettings, daily_table, weekly_summary
from ..errors import InputError
from ._choose import make_executor
from ._discover import NOT_REGULAR, Candidate, assign, discover, sha256_file
from ._executor import Executor
from ._lock import FolderLock
from ._pattern import FilenamePattern
from ._safe import neutralize_cells
from ._work import (
    CACHE_DIR,
    TRANSIENT_ERRORS,
    ResultCache,
    broken_result,
    process_and_cache,
    process_file,
    settings_hash,
)

__all__ = ["OUTPUT_NAMES", "RunSummary", "run_daily"]

log = logging.getLogger("rrkit")

#: Output files of a run (inside the output folder).
OUTPUT_NAMES = {"daily_csv": "daily.csv", "daily_parquet": "daily.parquet",
                "weekly_csv": "weekly.csv", "recordings_csv": "recordings.csv",
                "errors_csv": "errors.csv", "store": "store.h5",
                "provenance": "provenance.json"}
_ERROR_COLUMNS = ["path", "error_type", "message"]
_DAY_KEYS = ("window", "n_beats", "artifact_pct", "corrected_pct", "quality", "quality_reason",
             *DAILY_METRICS, "caution")
_PRELOAD = ("rrkit.io", "rrkit.clean", "rrkit.metrics", "rrkit.windows", "rrkit.daily")


@dataclass
class RunSummary:
    """What a `run_daily` call did.

    Attributes
    ----------
    table : pandas.DataFrame
        The daily table (as written to ``daily.csv``, before neutralisation of text cells).
    recordings : pandas.DataFrame
        One row per recording and window.
    errors : pandas.DataFrame
        ``path, error_type, message`` of every file that failed or could not be placed.
    n_files : int
        Files considered (discovered, plus manifest rows that point nowhere).
    n_done, n_skipped, n_failed : int
        Files processed now, files whose cached result was reused (input SHA-256 and settings
        unchanged), files that failed (``errors.csv``). They add up to ``n_files``.
    n_computed : int
        Files actually read in this run (``n_done`` plus the failures that were not cached).
    n_ignored : int
        Files left out (not a recording ending, or not in the manifest).
    outputs : dict
        Output name -> path.
    last_date : date or None
        The last date of the table.
    below_swc : list of str
        Subjects whose 7-day ln-RMSSD is below their band on ``last_date``.
    """

    table: Any
    recordings: Any
    errors: Any
    n_files: int = 0
    n_done: int = 0
    n_skipped: int = 0
    n_failed: int = 0
    n_computed: int = 0
    n_ignored: int = 0
    outputs: dict = field(default_factory=dict)
    last_date: dt.date | None = None
    below_swc: list = field(default_factory=list)

    @property
    def exit_code(self) -> int:
        """0 when every file succeeded, 1 when some failed (the rest were written)."""
        return 0 if self.n_failed == 0 else 1

    def counts_line(self) -> str:
        """``"12 done, 3 skipped (unchanged), 1 failed"``."""
        return (f"{self.n_done} done, {self.n_skipped} skipped (unchanged), "
                f"{self.n_failed} failed")


def run_daily(
    root: str | os.PathLike[str],
    outdir: str | os.PathLike[str],
    *,
    manifest: str | os.PathLike[str] | None = None,
    pattern: str | FilenamePattern | None = None,
    settings: DailySettings | None = None,
    jobs: int | None = None,
    executor: Executor | None = None,
    progress: bool | None = None,
    first_date: dt.date | str | None = None,
    last_date: dt.date | str | None = None,
    command: list[str] | None = None,
    wait_s: float = 0.0,
    time_limit_s: float | None = 300.0,
    cluster: str | None = None,
) -> RunSummary:
    """Process a folder of recordings into a daily table and write every output atomically.

    Parameters
    ----------
    root : path-like
        Folder of recordings (scanned recursively; see `rrkit.batch.discover`).
    outdir : path-like
        Output folder (created). Holds ``daily.csv`` (+ ``daily.parquet`` with pyarrow),
        ``weekly.csv``, ``recordings.csv``, ``errors.csv``, ``store.h5``,
        ``provenance.json`` and the resume cache ``.rrkit-cache/``.
    manifest : path-like, optional
        Manifest CSV (see `rrkit.batch.read_manifest`).
    pattern : str or FilenamePattern, optional
        File-name pattern (see `rrkit.batch.FilenamePattern`); default
        ``{subject}_{date}[_{time}]*`` when no manifest is given.
    settings : DailySettings, optional
    jobs : int, optional
        Worker processes (default all cores); with ``cluster="local-dask"`` the workers of the
        local Dask cluster. Ignored when ``executor`` is given.
    executor : Executor, optional
        Where the per-file work runs (default a `LocalExecutor` with ``jobs`` workers, or a
        `DaskExecutor` when ``cluster`` is given).
    progress : bool, optional
        Show a progress bar (tqdm) on standard error; default: when it is a terminal and more
        than 20 files need work.
    first_date, last_date : date or ISO string, optional
        Span of the daily table (default: the dates found).
    command : list of str, optional
        The command line, recorded in the provenance.
    wait_s : float
        How long to wait when another run holds the output folder (default 0: stop at once
        with an `InputError` naming that run's process); see `rrkit.batch.FolderLock`.
    time_limit_s : float or None
        Per-file time limit in seconds (default 300; None or 0: none). A file that takes
        longer is stopped and listed in ``errors.csv`` as ``TimeLimitExceeded`` (not cached,
        so a re-run tries it again).
    cluster : str, optional
        A Dask scheduler address (``tcp://host:8786``) or ``"local-dask"`` (a
        `distributed.LocalCluster` on this machine): the per-file work runs there (see
        `rrkit.batch.DaskExecutor` and docs/cluster.md). The outputs are the same.

    Returns
    -------
    RunSummary
        ``exit_code`` is 0 when every file succeeded and 1 when some failed.

    Notes
    -----
    Re-running with the same output folder reuses each input's cached result when the input's
    SHA-256 and the hash of the per-file settings are unchanged, so an interrupted run resumes
    where it stopped and an unchanged re-run recomputes nothing; the table is the same.
    """

    out = Path(outdir)
    out.mkdir(parents=True, exist_ok=True)
    with FolderLock(out, wait_s=wait_s):
        return _run_locked(Path(root), out, manifest=manifest, pattern=pattern,
                           settings=settings or DailySettings(), jobs=jobs, executor=executor,
                           progress=progress, first_date=first_date, last_date=last_date,
                           command=command, time_limit_s=time_limit_s, cluster=cluster)


def _run_locked(root: Path, out: Path, *, manifest, pattern, settings: DailySettings, jobs,
                executor, progress, first_date, last_date, command,
                time_limit_s, cluster) -> RunSummary:
    import pandas as pd

    s = settings
    n_stale = remove_stale_temporaries(out) + remove_stale_temporaries(out / CACHE_DIR)
    if n_stale:
        log.info("removed %d temporary files left by an interrupted run", n_stale)
    own = executor is None
    ex = executor if executor is not None else make_executor(
        jobs, cluster, preload=_PRELOAD, on_broken=broken_result)
    results: dict[str, dict] = {}
    status: dict[str, str] = {}
    hashed: list[tuple[Candidate, str]] = []
    try:
        start = getattr(ex, "start", None)
        if callable(start):
            start()  # the workers start (and import) while discovery and hashing run here
        disc = discover(root, manifest=manifest, pattern=pattern, exclude=(out,))
        errors: list[tuple[str, str, str]] = list(disc.problems)
        digest = settings_hash(s)
        cache = ResultCache(out, digest)

        def work():
            # hashed and looked up in the cache one by one, so the first files are already
            # being measured while the rest are hashed
            for cand in disc.candidates:
                try:
                    sha = sha256_file(cand.path)
                except OSError as exc:
                    message = exc.strerror or str(exc)
                    errors.append((cand.relpath, NOT_REGULAR if "not a regular file" in message
                                   else type(exc).__name__, message))
                    continue
                hashed.append((cand, sha))
                cached = cache.load(sha, cand.relpath)
                if cached is not None:
                    results[cand.relpath] = cached
                    status[cand.relpath] = "skipped"
                else:
                    yield (str(cand.path), cand.relpath, sha)

        n_computed = _compute(work(), len(disc.candidates), results, status, cache, s, ex,
                              progress, time_limit_s)
        retried = {item[1]: n for item, n in dict(getattr(ex, "lost", {}) or {}).items()
                   if isinstance(item, tuple) and len(item) == 3}
    finally:
        if own:
            ex.close()
    # a worker killed while writing its cache entry leaves a temporary file: all work is done
    # now, so whatever temporary file is left in the cache belongs to nobody
    remove_stale_temporaries(out / CACHE_DIR)
    if retried:
        log.warning("%d files were in flight on a worker that died and were retried: %s",
                    len(retried), ", ".join(sorted(retried)[:5])
                    + (" ..." if len(retried) > 5 else ""))

    # placement (manifest > pattern > file) and the per-recording table
    per_rec: list[dict] = []
    window_rows: list[dict] = []
    store_recs: list[dict] = []
    for cand, sha in hashed:
        res = results.get(cand.relpath)
        if res is None:  # pragma: no cover - every todo item yields a result
            continue
        if not res.get("ok"):
            errors.append((cand.relpath, res["error_type"], res["message"]))
            status[cand.relpath] = "failed"
            if cand.subject and cand.start is not None:
                per_rec.append(_failed_row(cand, s))
            continue
        try:
            file_start = (None if res.get("file_start") is None
                          else dt.datetime.fromisoformat(res["file_start"]))
            subject, start = assign(cand, res.get("file_subject"), file_start, s.tz,
                                    pattern=disc.pattern)
        except InputError as exc:
            errors.append((cand.relpath, "UnplacedFile", " ".join(str(exc).split())))
            status[cand.relpath] = "failed"
            continue
        start_iso = start.isoformat()
        first = res["rows"][0]
        row = {**cand.extra, "subject": subject, "start": start, "source": cand.relpath,
               "marked": cand.marked, "failed": False,
               **{k: first.get(k) for k in _DAY_KEYS}}
        per_rec.append(row)
        for w in res["rows"]:
            window_rows.append({**cand.extra, **w, "subject": subject,
                                "date": _date_of(start),
                                "start_time": start_iso if isinstance(start, dt.datetime)
                                else None, "source": cand.relpath})
        store_recs.append({"subject": subject, "source": cand.relpath, "sha256": sha,
                           "start": start_iso, "date": _date_of(start).isoformat(),
                           "read_info": res.get("read_info"),
                           "clean_summary": res.get("clean_summary"),
                           "rows": res["rows"],
                           "arrays": res["arrays"], "warnings": res.get("warnings", [])})

    per_rec_df = pd.DataFrame(per_rec)
    if not len(per_rec_df):
        per_rec_df = pd.DataFrame(columns=["subject", "start", "source", "failed"])
    table = daily_table(per_rec_df, settings=s, first_date=first_date, last_date=last_date)
    used = set(table["source"].dropna()) - {r["source"] for r in per_rec if r.get("failed")}
    for r in store_recs:
        r["used_in_daily"] = r["source"] in used
    weekly = weekly_summary(table, settings=s.baselines)
    recordings = pd.DataFrame(window_rows)
    err_df = pd.DataFrame(sorted(set(errors)), columns=_ERROR_COLUMNS)

    n_failed = len({e[0] for e in errors})
    n_skipped = sum(1 for v in status.values() if v == "skipped")
    n_done = sum(1 for v in status.values() if v == "done")
    summary = RunSummary(table=table, recordings=recordings, errors=err_df,
                         n_files=n_done + n_skipped + n_failed, n_done=n_done,
                         n_skipped=n_skipped, n_failed=n_failed,
                         n_computed=n_computed, n_ignored=disc.n_ignored)
    if len(table):
        summary.last_date = max(table["date"])
        last = table[(table["date"] == summary.last_date) & table["below_swc"].fillna(False)]
        summary.below_swc = sorted(last["subject"].astype(str).unique())

    outputs = _write_outputs(out, table, weekly, recordings, err_df, store_recs, s)
    prov = _provenance(root, disc, s, digest, hashed, status, results, outputs, summary, command,
                       retried)
    atomic_write_text(out / OUTPUT_NAMES["provenance"], prov)
    outputs["provenance"] = out / OUTPUT_NAMES["provenance"]
    summary.outputs = outputs
    log.info("rrkit daily: %s", summary.counts_line())
    return summary


def _compute(todo, n_total, results, status, cache, s, ex, progress, time_limit_s) -> int:
    if getattr(ex, "local_disk", False):  # the workers write the cache entries themselves
        fn = functools.partial(process_and_cache, settings=s, time_limit_s=time_limit_s,
                               cache_folder=str(cache.folder), digest=cache.digest)
    else:
        fn = functools.partial(process_file, settings=s, time_limit_s=time_limit_s)
    n_workers = max(1, int(getattr(ex, "n_workers", 1)))
    chunksize = max(1, min(16, n_total // (4 * n_workers)))
    show = progress if progress is not None else (sys.stderr.isatty() and n_total > 20)
    bar = None
    n = 0
    try:
        for res in ex.imap_unordered(fn, todo, chunksize=chunksize):
            results[res["relpath"]] = res
            status[res["relpath"]] = "done" if res.get("ok") else "failed"
            n += 1
            if not res.pop("cached", False) and res.get("error_type") not in TRANSIENT_ERRORS:
                # written here when the workers did not (they may not reach the output folder)
                try:
                    cache.store(res)
                except Exception as exc:  # a cache that cannot be written costs a recomputation
                    log.warning("resume cache not written for %s: %s", res["relpath"], exc)
            if show and bar is None:
                # created once the workers run, so its monitor thread never precedes a fork
                from tqdm import tqdm

                bar = tqdm(total=n_total, unit="file", desc="rrkit daily", file=sys.stderr,
                           leave=False, dynamic_ncols=True)
            if bar is not None:
                bar.update(len(status) - bar.n)
    finally:
        if bar is not None:
            bar.close()
    return n


def _date_of(start) -> dt.date:
    return start.date() if isinstance(start, dt.datetime) else start


def _failed_row(cand: Candidate, s: DailySettings) -> dict:
    from ..daily import localize

    start = cand.start
    if isinstance(start, dt.datetime):
        try:
            start = localize(start, s.tz)
        except InputError:
            start = start.date()
    return {"subject": cand.subject, "start": start, "source": cand.relpath,
            "marked": cand.marked, "failed": True, "quality": "missing", **cand.extra}


def _csv_text(df) -> str:
    buf = io.StringIO()
    neutralize_cells(df).to_csv(buf, index=False, lineterminator="\n")
    return buf.getvalue()


def _write_outputs(out: Path, table, weekly, recordings, err_df, store_recs, s) -> dict:
    from ..io.store import write_store

    paths = {k: out / v for k, v in OUTPUT_NAMES.items() if k != "provenance"}
    atomic_write_text(paths["daily_csv"], _csv_text(table))
    atomic_write_text(paths["weekly_csv"], _csv_text(weekly))
    atomic_write_text(paths["recordings_csv"], _csv_text(recordings))
    atomic_write_text(paths["errors_csv"], _csv_text(err_df))
    try:
        import pyarrow  # noqa: F401
    except ImportError:
        paths.pop("daily_parquet")
        log.info("pyarrow is not installed: daily.parquet not written")
    else:
        with atomic_path(paths["daily_parquet"]) as tmp:
            table.to_parquet(tmp, index=False)
    write_store(paths["store"], store_recs, daily=table, settings=s.to_dict())
    return paths


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _provenance(root, disc, s, digest, hashed, status, results, outputs, summary,
                command, retried) -> str:
    import h5py
    import numpy
    import pandas
    import scipy

    inputs = []
    for cand, sha in hashed:
        res = results.get(cand.relpath, {})
        inputs.append({"path": cand.relpath, "sha256": sha,
                       "bytes": cand.path.stat().st_size if cand.path.exists() else None,
                       "status": status.get(cand.relpath, "failed"),
                       "placed_by": cand.assigned_by,
                       "warnings": res.get("warnings", [])})
    doc = {
        "rrkit_version": __version__,
        "python": platform.python_version(),
        "packages": {"numpy": numpy.__version__, "scipy": scipy.__version__,
                     "pandas": pandas.__version__, "h5py": h5py.__version__},
        "command": command,
        "input_folder": str(root),
        "manifest": disc.manifest,
        "pattern": disc.pattern,
        "settings": s.to_dict(),
        # the digest of the whole settings tree (the store's settings_sha256), and the resume
        # cache's key: the digest of the part that decides one file's result
        "settings_sha256": s.digest(),
        "cache_key_sha256": digest,
        "counts": {"files": summary.n_files, "done": summary.n_done,
                   "skipped": summary.n_skipped, "failed": summary.n_failed,
                   "ignored": summary.n_ignored},
        "inputs": inputs,
        "retried_after_worker_loss": dict(sorted(retried.items())),
        "outputs": {k: {"path": p.name, "sha256": _sha(p)} for k, p in outputs.items()},
        "caution": "rrkit is not a medical device and makes no diagnosis; training decisions "
                   "rest with qualified staff.",
    }
    return json.dumps(doc, indent=1, sort_keys=False, default=str) + "\n"
