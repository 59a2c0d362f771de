"""cluster-batch: the season batch through a Dask LocalCluster of 2 workers vs the process pool.

Both runs are `rrkit.batch.run_daily` in this process on the same season of morning files
(the season-batch case's inputs), each into a new output folder: once with the process pool
(``jobs=2``), once with a `rrkit.batch.DaskExecutor` on a `distributed.LocalCluster` of 2
single-threaded worker processes, interleaved. The cluster is started once before the timings
(a cluster is long-lived; its start-up time is reported apart), the pool starts inside each run.

Checks before timing: the daily table, ``recordings.csv`` and ``errors.csv`` of the two runs are
byte-identical, and so is the resume cache.

Reported: the ratio of wall times (target: Dask within 1.3x the pool), the cluster's overhead
per file in ms (``(t_dask - t_pool) * workers / files``), the CPU cost per morning file
(``t_pool * workers / files``) and per 8-hour night (``rrkit.analyze`` with ``slide:5m`` in this
process), the figures behind the estimate in docs/cluster.md.
"""

from __future__ import annotations

import shutil
import tempfile
import time
from pathlib import Path

from .._data import make_season
from .._harness import CaseResult, Check, Target, Timing, ratio

NAME = "cluster-batch"
DESCRIPTION = "season batch: Dask LocalCluster(2 workers) vs process pool --jobs 2"
TARGET_X = 1.3
WORKERS = 2


def _same_outputs(a: Path, b: Path) -> list[str]:
    differ = [n for n in ("daily.csv", "recordings.csv", "errors.csv", "weekly.csv")
              if (a / n).read_bytes() != (b / n).read_bytes()]
    ca = {p.name: p.read_bytes() for p in (a / ".rrkit-cache").iterdir()}
    cb = {p.name: p.read_bytes() for p in (b / ".rrkit-cache").iterdir()}
    if ca != cb:
        differ.append("resume cache")
    return differ


def run(cfg) -> CaseResult:
    from rrkit import analyze, read
    from rrkit.batch import DaskExecutor, run_daily
    from rrkit.batch._run import _PRELOAD
    from rrkit.batch._work import broken_result
    from rrkit.daily import DailySettings

    res = CaseResult(NAME, DESCRIPTION)
    t_case = time.perf_counter()
    if cfg.quick:
        n_subj, n_days, n_nights, night_s = 2, 4, 2, 1800.0
    else:
        n_subj, n_days, n_nights, night_s = 12, 180, 30, 8 * 3600.0
    root = cfg.cache_dir / ("season-quick" if cfg.quick else "season")
    idx = make_season(root, n_subjects=n_subj, n_days=n_days, seconds=360.0,
                      artifact_rate=0.01, n_nights=n_nights, night_s=night_s, seed=5)
    settings = DailySettings()
    work = Path(tempfile.mkdtemp(prefix="rrkit-bench-cluster-"))
    t0 = time.perf_counter()
    ex = DaskExecutor(n_workers=WORKERS, preload=_PRELOAD, on_broken=broken_result)
    try:
        ex.start()
        ex._ensure()
        start_s = time.perf_counter() - t0
        times = {"pool": [], "dask": []}
        n_files = 0
        for rep in range(cfg.reps(3, 1)):
            for kind in ("pool", "dask"):
                out = work / f"{kind}{rep}"
                t = time.perf_counter()
                s = run_daily(root / "files", out, manifest=idx["manifest"], settings=settings,
                              jobs=WORKERS if kind == "pool" else None,
                              executor=ex if kind == "dask" else None, progress=False)
                times[kind].append(time.perf_counter() - t)
                n_files = s.n_files
        differ = _same_outputs(work / "pool0", work / "dask0")
        res.checks.append(Check("pool and Dask outputs identical (tables, errors, cache)",
                                not differ, "differing: " + ", ".join(differ) if differ
                                else f"{n_files} files, byte-identical outputs"))
        nights = idx["nights"][:2]
        night_times = []
        for p in nights:
            rec = read(p)
            t = time.perf_counter()
            analyze(rec, windows="slide:5m")
            night_times.append(time.perf_counter() - t)
    finally:
        ex.close()
        shutil.rmtree(work, ignore_errors=True)

    tp, td = Timing(times["pool"]), Timing(times["dask"])
    res.params = {"files": n_files, "workers": WORKERS, "file_s": 360}
    res.timings = {"process pool --jobs 2": tp, "Dask LocalCluster(2)": td,
                   "cluster start-up (once)": Timing([start_s])}
    x = ratio(td.median_s, tp.median_s)
    res.ratios = {"Dask / pool (wall time)": x,
                  "Dask / pool (min of runs)": ratio(td.min_s, tp.min_s)}
    overhead_ms = (td.median_s - tp.median_s) * WORKERS / max(n_files, 1) * 1000.0
    per_file_ms = tp.median_s * WORKERS / max(n_files, 1) * 1000.0
    night_s_each = sum(night_times) / max(len(night_times), 1)
    res.metrics = {"dask_overhead_ms_per_file": overhead_ms,
                   "dask_overhead_ms_per_file_min_of_runs":
                       (td.min_s - tp.min_s) * WORKERS / max(n_files, 1) * 1000.0,
                   "cpu_ms_per_morning_file": per_file_ms,
                   "s_per_night_in_process": night_s_each,
                   "cluster_start_s": start_s}
    res.notes.append(f"Dask overhead {overhead_ms:.2f} ms per file (worker time), morning file "
                     f"{per_file_ms:.1f} ms of worker time with the pool, a night of "
                     f"{night_s / 3600:g} h {night_s_each:.2f} s (slide:5m, in "
                     f"process); cluster start-up {start_s:.1f} s, paid once")
    res.targets.append(Target("Dask within 1.3x the process pool", x, "<=", TARGET_X))
    res.elapsed_s = time.perf_counter() - t_case
    return res
