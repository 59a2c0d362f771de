"""night-pipeline: one night end to end, from an RR file to a table of five-minute windows.

rrkit: ``rrkit.read(path)`` then ``rrkit.analyze(rec, windows=<sliding 300 s>, clean="drr",
psd="welch")``. neurokit2 equivalent: the file read with numpy (neurokit2 has no RR reader), the
beats turned into peak samples (1 kHz), ``signal_fixpeaks`` (defaults), then the per-window
metric set of the windows-night case on the corrected intervals, over the same window bounds.

Checks before timing: the two corrections differ (the clean-night case scores them), so the
windows are compared with each other loosely (the same windows, mean RR within 1% in every
window) and with the artifact-free truth: rrkit's per-window RMSSD must be closer to the truth's
over the same time span (median over windows).
"""

from __future__ import annotations

import time

import numpy as np

from .._harness import CaseResult, Check, Target, speed_ratios, time_pair
from .._nk import FS_HZ, nk_fixpeaks, nk_read_rr, nk_windows
from . import _rrkit

NAME = "night-pipeline"
DESCRIPTION = "read + clean + 5-min windows of one night, end to end, vs neurokit2"
TARGET_X = 200.0
WINDOW_S = 300.0


def _nk_pipeline(path, bounds):
    rr = nk_read_rr(path)
    peaks = np.round(np.concatenate(([0.0], np.cumsum(rr))) * (FS_HZ / 1000.0)).astype(np.int64)
    clean = nk_fixpeaks(peaks)
    t = clean / FS_HZ
    return nk_windows(t, np.diff(t) * 1000.0, bounds)


def run(cfg) -> CaseResult:
    import rrkit

    res = CaseResult(NAME, DESCRIPTION)
    t_case = time.perf_counter()
    night = cfg.night()
    path = cfg.night_file()
    spec = _rrkit.sliding(WINDOW_S, WINDOW_S)

    def rr_side():
        return _rrkit.analyze(rrkit.read(path), spec, clean="drr")

    table = rr_side()
    rows = _rrkit.metric_rows(table)
    bounds = [(float(r["start_s"]), float(r["end_s"])) for r in rows]

    def nk_side():
        return _nk_pipeline(path, bounds)

    nk_rows = nk_side()
    res.params = {"file_beats": int(night.recording.n_beats), "windows": len(rows),
                  "file_kb": round(path.stat().st_size / 1024, 1)}
    same = len(rows) == len(nk_rows) and len(rows) > 0
    res.checks.append(Check("same windows", same, f"rrkit {len(rows)}, neurokit2 {len(nk_rows)}"))
    if same:
        a = np.array([r["mean_rr_ms"] for r in rows], float)
        b = np.array([r["mean_rr_ms"] for r in nk_rows], float)
        rel_mean = np.abs(a - b) / b
        res.checks.append(Check("mean RR within 1% in every window",
                                bool(np.nanmax(rel_mean) < 0.01),
                                f"largest difference {100 * np.nanmax(rel_mean):.3f}%"))
        # RMSSD of each window against the artifact-free truth over the same time span
        truth = night.truth
        tb = np.asarray(truth.beat_times_s)
        ref = []
        for lo_s, hi_s in bounds:
            seg = truth.rr_ms[(tb[:-1] >= lo_s - 1e-9) & (tb[1:] <= hi_s + 1e-9)]
            ref.append(np.sqrt(np.mean(np.diff(seg) ** 2)))
        ref = np.array(ref)
        err_rr = np.abs(np.array([r["rmssd_ms"] for r in rows], float) - ref) / ref
        err_nk = np.abs(np.array([r["rmssd_ms"] for r in nk_rows], float) - ref) / ref
        res.metrics["window_rmssd_error_vs_truth_pct"] = {
            "rrkit_median": 100 * float(np.nanmedian(err_rr)),
            "neurokit2_median": 100 * float(np.nanmedian(err_nk))}
        res.checks.append(Check(
            "window RMSSD closer to the truth with rrkit",
            bool(np.nanmedian(err_rr) < np.nanmedian(err_nk)),
            f"median error per window rrkit {100 * np.nanmedian(err_rr):.2f}%, neurokit2 "
            f"{100 * np.nanmedian(err_nk):.2f}% (the corrections differ: see clean-night)"))

    t_rr, t_nk = time_pair(rr_side, nk_side, repeat=cfg.reps(3, 2))
    res.timings = {"rrkit read+analyze(clean=drr)": t_rr, "neurokit2 numpy+fixpeaks+hrv_*": t_nk}
    r = speed_ratios(t_rr, t_nk)
    res.ratios = {"speed-up (median)": r["median"], "speed-up (min)": r["min"]}
    res.targets.append(Target("speed-up vs neurokit2", r["median"], ">=", TARGET_X))
    res.elapsed_s = time.perf_counter() - t_case
    return res
