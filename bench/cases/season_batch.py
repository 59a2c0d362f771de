"""season-batch: a squad's season of morning files through the daily batch, end to end.

rrkit: ``rrkit daily FILES --manifest manifest.csv --jobs N -o OUT`` (discovery, read, clean,
morning window, metrics, baselines, CSV + HDF5 outputs), run as a fresh process per run and
timed from the outside (process start included), with ``--jobs 1`` and ``--jobs 2`` interleaved,
each into a new output folder (so nothing is skipped as already done).

neurokit2, in one process, the same work for each file: read with numpy, ``signal_fixpeaks``
(defaults), the morning window (skip 60 s, analyse 300 s), the metric set of the windows-night
case, then the table with a 7-day rolling ln-RMSSD per subject in pandas. Because that costs
about a tenth of a second per file, it runs on an evenly spaced subset of the files and its
throughput (files per second) is what is compared; the report says so.

Optionally also 30 eight-hour nights through ``rrkit analyze`` in one process (sliding 5-minute
windows) against the neurokit2 time per night measured by the night-pipeline case's method on
two of them (extrapolated, stated).

Checks before timing: the ``--jobs 1`` and ``--jobs 2`` tables are identical; every subject-day
has a row; on the neurokit2 subset, the morning RMSSD of each side is compared with the
artifact-free truth over the same window and rrkit's must be closer (median over files; the two
corrections differ on the artifacts, as the clean-night case shows).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
import time
from datetime import datetime
from pathlib import Path

import numpy as np

from .._data import make_season
from .._harness import CaseResult, Check, Target, Timing, ratio
from .._nk import FS_HZ, nk_fixpeaks, nk_read_rr, nk_window_metrics

NAME = "season-batch"
DESCRIPTION = "12 subjects x 180 days of 6-min mornings: rrkit daily --jobs 1 / 2 vs neurokit2"
JOBS_TARGET_X = 1.6
NK_TARGET_X = 20.0
SKIP_S, WINDOW_S = 60.0, 300.0


# --------------------------------------------------------------------------- rrkit side
def run_daily(files_dir: Path, manifest: Path, out_dir: Path, *, jobs: int) -> float:
    """One ``rrkit daily`` run in a fresh process; returns its wall time in s."""
    if out_dir.exists():
        shutil.rmtree(out_dir)
    cmd = [sys.executable, "-m", "rrkit", "daily", str(files_dir), "--manifest", str(manifest),
           "--jobs", str(jobs), "-o", str(out_dir)]
    env = dict(os.environ, PYTHONWARNINGS="ignore")
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, capture_output=True, text=True, env=env, check=False,
                          stdin=subprocess.DEVNULL, timeout=1800)
    wall = time.perf_counter() - t0
    if proc.returncode != 0:
        raise RuntimeError(f"rrkit daily --jobs {jobs} exited {proc.returncode}: "
                           f"{(proc.stderr or proc.stdout).strip()[-1500:]}")
    return wall


def read_daily_table(out_dir: Path):
    """The daily table a run wrote (its CSV)."""
    import pandas as pd

    cands = sorted(out_dir.glob("daily*.csv")) or sorted(out_dir.rglob("daily*.csv"))
    if not cands:
        found = sorted(p.name for p in out_dir.iterdir())
        raise RuntimeError(f"no daily*.csv in {out_dir}: {found}")
    return pd.read_csv(cands[0])


# --------------------------------------------------------------------------- neurokit2 side
def nk_season(paths: list[Path], subjects: list[str], starts: list[str]):
    """The neurokit2 equivalent for the given files; returns the table (pandas)."""
    import pandas as pd

    rows = []
    for path, subject, start in zip(paths, subjects, starts, strict=True):
        rr = nk_read_rr(path)
        peaks = np.round(np.concatenate(([0.0], np.cumsum(rr))) * (FS_HZ / 1000.0)).astype(np.int64)
        t = nk_fixpeaks(peaks) / FS_HZ
        lo = int(np.searchsorted(t, t[0] + SKIP_S - 1e-9, side="left"))
        hi = int(np.searchsorted(t, t[0] + SKIP_S + WINDOW_S + 1e-9, side="right"))
        tw = t[lo:hi]
        m = nk_window_metrics(np.diff(tw) * 1000.0, tw[1:])
        rows.append({"subject": subject, "date": datetime.fromisoformat(start).date(),
                     "source": str(path), "rmssd_ms": m["rmssd_ms"],
                     "ln_rmssd": float(np.log(m["rmssd_ms"])), **m})
    df = pd.DataFrame(rows).sort_values(["subject", "date"])
    df["date"] = pd.to_datetime(df["date"])
    df["ln_rmssd_7d"] = (df.set_index("date").groupby("subject")["ln_rmssd"]
                         .transform(lambda s: s.rolling("7D", min_periods=3).mean()).to_numpy())
    return df


def _manifest(path: Path):
    import pandas as pd

    return pd.read_csv(path)


# --------------------------------------------------------------------------- case
def run(cfg) -> CaseResult:
    import pandas as pd

    res = CaseResult(NAME, DESCRIPTION)
    t_case = time.perf_counter()
    if cfg.quick:
        n_subj, n_days, every = 2, 4, 2
    else:
        n_subj, n_days, every = 12, 180, 10
    root = cfg.cache_dir / ("season-quick" if cfg.quick else "season")
    t_gen = time.perf_counter()
    idx = make_season(root, n_subjects=n_subj, n_days=n_days, seconds=360.0,
                      artifact_rate=0.01, seed=5)
    gen_s = time.perf_counter() - t_gen
    man = _manifest(idx["manifest"])
    n_files = len(man)
    res.params = {"subjects": n_subj, "days": n_days, "files": n_files, "file_s": 360,
                  "neurokit2_subset": f"every {every}th file ({len(man.iloc[::every])} files)"}
    if gen_s > 1:
        res.notes.append(f"input files generated in {gen_s:.0f} s (cached for later runs)")

    work = Path(tempfile.mkdtemp(prefix="rrkit-bench-season-"))
    try:
        reps = cfg.reps(1, 1)
        times = {1: [], 2: []}
        for rep in range(reps):
            for jobs in (1, 2):
                out = work / f"r{rep}_j{jobs}"
                times[jobs].append(run_daily(root / "files", idx["manifest"], out, jobs=jobs))
        t1, t2 = read_daily_table(work / "r0_j1"), read_daily_table(work / "r0_j2")
        key = ["subject", "date"]
        a = t1.sort_values(key).reset_index(drop=True)
        b = t2.sort_values(key).reset_index(drop=True)
        differ = ([c for c in a.columns if not a[c].equals(b[c])]
                  if a.shape == b.shape and list(a.columns) == list(b.columns) else ["shape"])
        res.checks.append(Check("--jobs 1 and --jobs 2 tables identical", not differ,
                                f"{a.shape[0]} rows x {a.shape[1]} columns"
                                + (f"; differing: {', '.join(differ)}" if differ else "")))
        n_days_rows = int(a.drop_duplicates(key).shape[0])
        res.checks.append(Check("a row for every subject-day", n_days_rows >= n_subj * n_days,
                                f"{n_days_rows} subject-days (expected {n_subj * n_days})"))

        sub = man.iloc[::every]
        paths = [root / p for p in sub["path"]]
        nk_season(paths[:1], list(sub["subject"])[:1], list(sub["start"])[:1])  # warm-up
        t0 = time.perf_counter()
        nk_tab = nk_season(paths, list(sub["subject"]), list(sub["start"]))
        nk_s = time.perf_counter() - t0
        truth = pd.read_csv(idx["truth"])
        rr_tab = a.copy()
        rr_tab["date"] = pd.to_datetime(rr_tab["date"])
        merged = (nk_tab.merge(rr_tab[["subject", "date", "rmssd_ms"]], on=["subject", "date"],
                               suffixes=("_nk", "_rr"))
                  .assign(path=lambda d: [Path(p).relative_to(root).as_posix()
                                          for p in d["source"]])
                  .merge(truth, on="path"))
        err_rr = np.abs(merged["rmssd_ms_rr"] / merged["rmssd_true_ms"] - 1)
        err_nk = np.abs(merged["rmssd_ms_nk"] / merged["rmssd_true_ms"] - 1)
        med_rr, med_nk = float(np.nanmedian(err_rr)), float(np.nanmedian(err_nk))
        res.metrics["rmssd_error_vs_truth_pct"] = {"rrkit_median": 100 * med_rr,
                                                   "neurokit2_median": 100 * med_nk,
                                                   "files": len(merged)}
        res.checks.append(Check(
            "morning RMSSD closer to the truth with rrkit",
            len(merged) == len(sub) and med_rr < med_nk,
            f"{len(merged)} of {len(sub)} files compared; median error rrkit {100 * med_rr:.2f}%,"
            f" neurokit2 {100 * med_nk:.2f}% (artifact-free truth over the same window)"))
    finally:
        shutil.rmtree(work, ignore_errors=True)

    tj1, tj2, tnk = Timing(times[1]), Timing(times[2]), Timing([nk_s])
    res.timings = {"rrkit daily --jobs 1": tj1, "rrkit daily --jobs 2": tj2,
                   f"neurokit2 ({len(sub)} files)": tnk}
    fps1 = n_files / tj1.median_s
    fps2 = n_files / tj2.median_s
    fps_nk = len(sub) / tnk.median_s
    res.metrics["files_per_s"] = {"rrkit_jobs1": fps1, "rrkit_jobs2": fps2, "neurokit2": fps_nk}
    res.ratios = {"--jobs 2 / --jobs 1": ratio(tj1.median_s, tj2.median_s),
                  "rrkit --jobs 1 / neurokit2 (files/s)": fps1 / fps_nk,
                  "rrkit --jobs 2 / neurokit2 (files/s)": fps2 / fps_nk}
    res.notes.append(f"throughput: rrkit --jobs 1 {fps1:.1f} files/s, --jobs 2 {fps2:.1f} "
                     f"files/s, neurokit2 {fps_nk:.1f} files/s (measured on {len(sub)} of "
                     f"{n_files} files; its season time is extrapolated: "
                     f"{n_files / fps_nk:.0f} s)")
    res.targets.append(Target("--jobs 2 vs --jobs 1", res.ratios["--jobs 2 / --jobs 1"], ">=",
                              JOBS_TARGET_X))
    res.targets.append(Target("throughput vs neurokit2 (--jobs 2)",
                              res.ratios["rrkit --jobs 2 / neurokit2 (files/s)"], ">=",
                              NK_TARGET_X))
    res.elapsed_s = time.perf_counter() - t_case
    return res
