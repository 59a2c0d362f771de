"""windows-night: 96 five-minute windows of a cleaned 8-hour night, every metric domain.

rrkit: ``rrkit.analyze(cleaned, windows=<sliding 300 s, step 300 s>, clean=None, psd="welch")``
(time, frequency and nonlinear domains: more metrics than the neurokit2 side computes).
neurokit2, per window: ``hrv_time``, ``hrv_frequency`` (Welch, ``interpolation_rate=4``,
``normalize=False``), ``entropy_sample`` (m = 2, r = 0.2 SD), ``fractal_dfa`` over 4-16 and
16-64 beats. Both sides get the same cleaned intervals (rrkit's "drr" correction of the shared
night) and the same windows (the bounds rrkit reports, sliced as `rrkit.Recording.slice` does).
"""

from __future__ import annotations

import time

from .._harness import CaseResult, Target, speed_ratios, time_pair
from .._nk import nk_windows
from . import _rrkit
from ._compare import compare_windows

NAME = "windows-night"
DESCRIPTION = "96 x 5-min windows, all domains (Welch): rrkit.analyze vs neurokit2 hrv_*"
TARGET_X = 200.0
WINDOW_S = 300.0


def run(cfg) -> CaseResult:
    res = CaseResult(NAME, DESCRIPTION)
    t_case = time.perf_counter()
    rec = cfg.cleaned_night().recording
    spec = _rrkit.sliding(WINDOW_S, WINDOW_S)

    def rr_side():
        return _rrkit.analyze(rec, spec, clean=None)

    table = rr_side()
    rows = _rrkit.metric_rows(table)
    bounds = [(float(r["start_s"]), float(r["end_s"])) for r in rows]
    bt, rr = rec.beat_times_s, rec.rr_ms

    def nk_side():
        return nk_windows(bt, rr, bounds)

    nk_rows = nk_side()
    res.params = {"windows": len(rows), "window_s": WINDOW_S, "beats": int(rec.n_beats)}
    checks, report = compare_windows(rows, nk_rows)
    res.checks.extend(checks)
    res.metrics["differences"] = report

    t_rr, t_nk = time_pair(rr_side, nk_side, repeat=cfg.reps(3, 2))
    res.timings = {"rrkit analyze": t_rr, "neurokit2 per window": t_nk}
    r = speed_ratios(t_rr, t_nk)
    res.ratios = {"speed-up (median)": r["median"], "speed-up (min)": r["min"]}
    if rows:
        res.metrics["per_window_ms"] = {"rrkit": 1e3 * t_rr.median_s / len(rows),
                                        "neurokit2": 1e3 * t_nk.median_s / len(rows)}
    res.targets.append(Target("speed-up vs neurokit2", r["median"], ">=", TARGET_X))
    res.elapsed_s = time.perf_counter() - t_case
    return res
