"""fresh-process: what a user of the command line waits for, one process per job.

rrkit: ``rrkit --version`` and ``rrkit analyze NIGHT --window slide:5m --format csv -o OUT``
(read, "drr" cleaning, 96 five-minute windows, every domain), each in a new interpreter.
neurokit2: a new interpreter running the night-pipeline case's neurokit2 side as a script
(`bench._fresh_nk`: numpy read, ``signal_fixpeaks``, ``hrv_time`` / ``hrv_frequency`` /
``entropy_sample`` / ``fractal_dfa`` per window, CSV written with pandas) over the same window
bounds. Start-up, imports and writing are part of both times. Runs are interleaved.

Checks before timing: both commands succeed, give the same windows, and the mean RR of every
window agrees within 1% (the two corrections differ; see clean-night).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

from .._harness import CaseResult, Check, Target, Timing, ratio

NAME = "fresh-process"
DESCRIPTION = "new process per job: rrkit --version, rrkit analyze night vs a neurokit2 script"
VERSION_MAX_S = 0.3
ANALYZE_MAX_S = 0.6
TARGET_X = 10.0
ROOT = Path(__file__).resolve().parents[2]


def _env() -> dict[str, str]:
    env = dict(os.environ, PYTHONWARNINGS="ignore")
    env["PYTHONPATH"] = os.pathsep.join([str(ROOT), env.get("PYTHONPATH", "")]).rstrip(os.pathsep)
    return env


def _run(argv: list[str]) -> float:
    t0 = time.perf_counter()
    proc = subprocess.run(argv, cwd=ROOT, env=_env(), capture_output=True, text=True,
                          timeout=900, check=False)
    elapsed = time.perf_counter() - t0
    if proc.returncode != 0:
        raise RuntimeError(f"{' '.join(argv[:4])} ... failed (exit {proc.returncode}): "
                           f"{proc.stderr.strip()[-1500:]}")
    return elapsed


def run(cfg) -> CaseResult:
    import pandas as pd

    res = CaseResult(NAME, DESCRIPTION)
    t_case = time.perf_counter()
    night = cfg.night()
    path = cfg.night_file()
    out_rr = cfg.cache_dir / "fresh-rrkit.csv"
    out_nk = cfg.cache_dir / "fresh-neurokit2.csv"
    bounds_path = cfg.cache_dir / "fresh-bounds.json"
    py = sys.executable
    version = [py, "-m", "rrkit", "--version"]
    analyze = [py, "-m", "rrkit", "analyze", str(path), "--window", "slide:5m", "--format",
               "csv", "-o", str(out_rr)]
    nk = [py, "-m", "bench._fresh_nk", str(path), str(bounds_path), str(out_nk)]

    _run(analyze)  # the bounds the neurokit2 script uses come from rrkit's table
    table = pd.read_csv(out_rr)
    bounds = [[float(a), float(b)] for a, b in zip(table["start_s"], table["end_s"], strict=True)]
    bounds_path.write_text(json.dumps(bounds), encoding="utf-8")
    _run(nk)
    other = pd.read_csv(out_nk)
    same = len(table) == len(other) and len(table) > 0
    res.checks.append(Check("same windows", same, f"rrkit {len(table)}, neurokit2 {len(other)}"))
    if same:
        a = table["mean_rr_ms"].to_numpy(float)
        b = other["mean_rr_ms"].to_numpy(float)
        rel = float(np.nanmax(np.abs(a - b) / b))
        res.checks.append(Check("mean RR within 1% in every window", rel < 0.01,
                                f"largest difference {100 * rel:.3f}%"))
    res.params = {"windows": len(table), "file_beats": int(night.recording.n_beats)}

    reps = cfg.reps(5, 1)
    t_ver, t_an, t_nk = [], [], []
    for i in range(reps):  # interleaved; neurokit2 (slow) in the first rounds only
        t_ver.append(_run(version))
        t_an.append(_run(analyze))
        if i < max(1, min(reps, 3)):
            t_nk.append(_run(nk))
    tv, ta, tn = Timing(t_ver), Timing(t_an), Timing(t_nk)
    res.timings = {"rrkit --version": tv, "rrkit analyze (fresh process)": ta,
                   "neurokit2 script (fresh process)": tn}
    res.ratios = {"speed-up (median)": ratio(tn.median_s, ta.median_s),
                  "speed-up (min)": ratio(tn.min_s, ta.min_s)}
    res.targets.append(Target("rrkit --version, fresh", tv.median_s, "<=", VERSION_MAX_S,
                              unit="s"))
    res.targets.append(Target("rrkit analyze night, fresh", ta.median_s, "<=", ANALYZE_MAX_S,
                              unit="s"))
    res.targets.append(Target("fresh analyze vs fresh neurokit2 script",
                              res.ratios["speed-up (median)"], ">=", TARGET_X))
    res.notes.append("wall-clock times of whole processes (interpreter start, imports, reading, "
                     "work, writing); the machine's other load falls on both sides alike")
    res.elapsed_s = time.perf_counter() - t_case
    return res
