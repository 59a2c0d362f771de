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

Also 30 eight-hour nights through ``rrkit analyze NIGHT... --window slide:5m`` in one process
(one core), against the neurokit2 time per night of the night-pipeline method measured on two of
them (extrapolated to 30, stated in the output).

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
JOBS_TARGET_X = 1.7
NK_TARGET_X = 20.0
SKIP_S, WINDOW_S = 60.0, 300.0


# --------------------------------------------------------------------------- rrkit side
def run_daily(files_dir: Path, manifest: Path, out_dir: Path, *, jobs: int) -> float:
    """One ``rrkit daily`` run in a fresh process; returns its wall time in s."""
    if out_dir.exists():
        shutil.rmtree(out_dir)
    return _timed_rrkit(["daily", str(files_dir), "--manifest", str(manifest),
                         "--jobs", str(jobs), "-o", str(out_dir)], f"rrkit daily --jobs {jobs}")


def run_analyze_nights(nights: list[Path], out_csv: Path) -> float:
    """``rrkit analyze NIGHT... --window slide:5m -o OUT.csv`` in one fresh process (one core);
    returns its wall time in s."""
    return _timed_rrkit(["analyze", *map(str, nights), "--window", "slide:5m", "--clean", "drr",
                         "--psd", "welch", "--format", "csv", "-o", str(out_csv), "--no-progress"],
                        "rrkit analyze (nights)")


def _timed_rrkit(args: list[str], what: str) -> float:
    """Run ``python -m rrkit ARGS`` in a fresh process; its wall time in s (raises on failure)."""
    env = dict(os.environ, PYTHONWARNINGS="ignore")
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "rrkit", *args], capture_output=True, text=True,
                          env=env, check=False, stdin=subprocess.DEVNULL, timeout=1800)
    wall = time.perf_counter() - t0
    if proc.returncode != 0:
        raise RuntimeError(f"{what} exited {proc.returncode}: "
                           f"{(proc.stderr or proc.stdout).strip()[-1500:]}")
    return wall


def nk_night(path: Path) -> list[dict]:
    """The neurokit2 equivalent for one night: numpy read, ``signal_fixpeaks``, 5-minute
    windows from the first beat (the windows rrkit's ``slide:5m`` makes) with the metric set."""
    from .._nk import nk_windows

    rr = nk_read_rr(path)
    peaks = np.round(np.concatenate(([0.0], np.cumsum(rr))) * (FS_HZ / 1000.0)).astype(np.int64)
    t = nk_fixpeaks(peaks) / FS_HZ
    n = int((t[-1] - t[0]) // WINDOW_S)
    bounds = [(t[0] + k * WINDOW_S, t[0] + (k + 1) * WINDOW_S) for k in range(n)]
    return nk_windows(t, np.diff(t) * 1000.0, bounds)


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
        n_subj, n_days, every, n_nights, night_s, nk_nights = 2, 4, 2, 2, 1800.0, 1
    else:
        n_subj, n_days, every, n_nights, night_s, nk_nights = 12, 180, 10, 30, 8 * 3600.0, 2
    root = cfg.cache_dir / ("season-quick" if cfg.quick else "season")
    t_gen = time.perf_counter()
    idx = make_season(root, n_subjects=n_subj, n_days=n_days, seconds=360.0,
                      artifact_rate=0.01, n_nights=n_nights, night_s=night_s, seed=5)
    gen_s = time.perf_counter() - t_gen
    man = _manifest(idx["manifest"])
    n_files = len(man)
    res.params = {"subjects": n_subj, "days": n_days, "files": n_files, "file_s": 360,
                  "neurokit2_subset": f"every {every}th file ({len(man.iloc[::every])} files)"}
    if gen_s > 1:
        res.notes.append(f"input files generated in {gen_s:.0f} s (cached for later runs)")

    work = Path(tempfile.mkdtemp(prefix="rrkit-bench-season-"))
    try:
        reps = cfg.reps(3, 1)
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

        # ---- nights: rrkit analyze over every night in one process vs neurokit2 on a few
        nights = idx["nights"]
        night_csv = work / "nights.csv"
        t_nights = run_analyze_nights(nights, night_csv)
        ntab = pd.read_csv(night_csv)
        nk_nights_rows = [nk_night(p) for p in nights[:1]]  # warm-up, and the check
        t0 = time.perf_counter()
        for p in nights[:nk_nights]:
            nk_night(p)
        nk_night_s = time.perf_counter() - t0
        first = ntab[ntab["source"].astype(str).str.endswith(nights[0].name)]
        a_mean = first["mean_rr_ms"].to_numpy(float)
        b_mean = np.array([r["mean_rr_ms"] for r in nk_nights_rows[0]], float)
        ok_n = a_mean.size == b_mean.size and a_mean.size > 0
        worst = float(np.max(np.abs(a_mean / b_mean - 1))) if ok_n else float("nan")
        res.checks.append(Check(
            "nights: same windows and mean RR within 1% (first night vs neurokit2)",
            ok_n and worst < 0.01,
            f"{a_mean.size} vs {b_mean.size} windows; largest mean-RR difference "
            f"{100 * worst:.3f}%; {len(ntab)} windows over {len(nights)} nights"))
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
                  "--jobs 2 / --jobs 1 (min of runs)": ratio(tj1.min_s, tj2.min_s),
                  "rrkit --jobs 1 / neurokit2 (files/s)": fps1 / fps_nk,
                  "rrkit --jobs 2 / neurokit2 (files/s)": fps2 / fps_nk}
    res.notes.append(f"throughput: rrkit --jobs 1 {fps1:.1f} files/s, --jobs 2 {fps2:.1f} "
                     f"files/s, neurokit2 {fps_nk:.1f} files/s (measured on {len(sub)} of "
                     f"{n_files} files; its season time is extrapolated: "
                     f"{n_files / fps_nk:.0f} s)")
    tn, tnk_n = Timing([t_nights]), Timing([nk_night_s])
    res.timings[f"rrkit analyze {len(nights)} nights"] = tn
    res.timings[f"neurokit2 {nk_nights} nights"] = tnk_n
    nps = len(nights) / tn.median_s
    nps_nk = nk_nights / tnk_n.median_s
    res.metrics["nights_per_s"] = {"rrkit": nps, "neurokit2": nps_nk}
    res.ratios["nights: rrkit / neurokit2 (nights/s, one process each)"] = nps / nps_nk
    res.notes.append(f"nights: rrkit {len(nights)} nights in {tn.median_s:.1f} s (one process, "
                     f"start-up included), neurokit2 {tnk_n.median_s / nk_nights:.1f} s per night "
                     f"(measured on {nk_nights}; {len(nights)} nights extrapolated: "
                     f"{len(nights) / nps_nk:.0f} s)")
    res.targets.append(Target("--jobs 2 vs --jobs 1", res.ratios["--jobs 2 / --jobs 1"], ">=",
                              JOBS_TARGET_X))
    res.targets.append(Target("throughput vs neurokit2 (--jobs 2)",
                              res.ratios["rrkit --jobs 2 / neurokit2 (files/s)"], ">=",
                              NK_TARGET_X))
    res.targets.append(Target("nights throughput vs neurokit2 (one process each)",
                              res.ratios["nights: rrkit / neurokit2 (nights/s, one process each)"],
                              ">=", NK_TARGET_X))
    res.elapsed_s = time.perf_counter() - t_case
    return res
